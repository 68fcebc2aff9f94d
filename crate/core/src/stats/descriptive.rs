//! Descriptive statistics of one sample: [`mean`], sample [`variance`] and
//! [`sd`], the type-7 [`quantile`] (R's default), [`median`] and the
//! interquartile mean [`iqm`].
//!
//! Empty or too-short samples give NaN (documented per function); nothing
//! here panics. NaN values inside a sample are the caller's to reject: the
//! results are then meaningless (sorting places NaN by `f64::total_cmp`).

/// Arithmetic mean, with one refinement pass (the mean of the residuals is
/// added back, as R's `mean` does) so that large offsets lose little
/// precision. NaN for an empty slice.
pub fn mean(xs: &[f64]) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    let n = xs.len() as f64;
    let m = xs.iter().sum::<f64>() / n;
    if !m.is_finite() {
        return m;
    }
    m + xs.iter().map(|x| x - m).sum::<f64>() / n
}

/// Sample variance with the n − 1 divisor (corrected two-pass algorithm,
/// Chan, Golub & LeVeque 1983). NaN when fewer than 2 values.
pub fn variance(xs: &[f64]) -> f64 {
    if xs.len() < 2 {
        return f64::NAN;
    }
    let n = xs.len() as f64;
    let m = mean(xs);
    let (mut ss, mut s) = (0.0, 0.0);
    for x in xs {
        let d = x - m;
        ss += d * d;
        s += d;
    }
    ((ss - s * s / n) / (n - 1.0)).max(0.0)
}

/// Sample standard deviation, √[`variance`]. NaN when fewer than 2 values.
pub fn sd(xs: &[f64]) -> f64 {
    variance(xs).sqrt()
}

/// A sorted copy of `xs` (NaN, if any, ordered by `f64::total_cmp`).
pub(crate) fn sorted_copy(xs: &[f64]) -> Vec<f64> {
    let mut v = xs.to_vec();
    v.sort_by(f64::total_cmp);
    v
}

/// Quantile of an already sorted (ascending) sample, type 7 of Hyndman &
/// Fan (1996), R's default: with h = (n − 1)p, linear interpolation between
/// the order statistics ⌊h⌋ and ⌊h⌋ + 1 (0-based). NaN when the slice is
/// empty or `p` is NaN or outside [0, 1]. The order is not checked.
pub fn quantile_sorted(sorted: &[f64], p: f64) -> f64 {
    let n = sorted.len();
    if n == 0 || p.is_nan() || !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    let h = (n - 1) as f64 * p;
    let lo = h.floor();
    let i = lo as usize;
    if i + 1 >= n {
        return sorted[n - 1];
    }
    let frac = h - lo;
    if frac == 0.0 {
        sorted[i]
    } else {
        sorted[i] + frac * (sorted[i + 1] - sorted[i])
    }
}

/// Type-7 quantile (R's default, see [`quantile_sorted`]) of an unsorted
/// sample; sorts a copy. NaN when empty or `p` is NaN or outside [0, 1].
pub fn quantile(xs: &[f64], p: f64) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    quantile_sorted(&sorted_copy(xs), p)
}

/// Median (the type-7 quantile at ½). NaN for an empty slice.
pub fn median(xs: &[f64]) -> f64 {
    quantile(xs, 0.5)
}

/// Interquartile mean of a sorted sample: drop ⌊n/4⌋ values from each end,
/// average the rest. NaN when empty.
pub(crate) fn iqm_sorted(sorted: &[f64]) -> f64 {
    let n = sorted.len();
    let k = n / 4;
    mean(&sorted[k..n - k])
}

/// Interquartile mean: the 25% trimmed mean that drops ⌊n/4⌋ values from
/// each end and averages the rest (Agarwal et al. 2021, NeurIPS, Sec. 4).
/// With fewer than 4 values nothing is trimmed, so it is the mean. NaN for
/// an empty slice.
pub fn iqm(xs: &[f64]) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    iqm_sorted(&sorted_copy(xs))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_and_short_inputs_give_nan() {
        // The documented NaN contract.
        assert!(mean(&[]).is_nan());
        assert!(variance(&[1.0]).is_nan());
        assert!(sd(&[]).is_nan());
        assert!(quantile(&[], 0.5).is_nan());
        assert!(quantile(&[1.0, 2.0], 1.5).is_nan());
        assert!(quantile(&[1.0, 2.0], f64::NAN).is_nan());
        assert!(median(&[]).is_nan());
        assert!(iqm(&[]).is_nan());
    }

    #[test]
    fn small_exact_cases() {
        // Exact by hand from the definitions.
        assert_eq!(mean(&[1.0, 2.0, 3.0, 4.0]), 2.5);
        assert_eq!(variance(&[1.0, 2.0, 3.0, 4.0]), 5.0 / 3.0);
        assert_eq!(variance(&[7.0, 7.0, 7.0]), 0.0);
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&[4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(quantile(&[5.0], 0.3), 5.0);
        assert_eq!(quantile(&[1.0, 2.0, 3.0, 4.0, 5.0], 0.0), 1.0);
        assert_eq!(quantile(&[1.0, 2.0, 3.0, 4.0, 5.0], 1.0), 5.0);
        // h = 4·0.1 = 0.4: 1 + 0.4·(2 − 1)
        assert!((quantile(&[5.0, 4.0, 3.0, 2.0, 1.0], 0.1) - 1.4).abs() < 1e-15);
        // Fewer than four values: nothing trimmed.
        assert_eq!(iqm(&[1.0, 2.0, 6.0]), 3.0);
        // n = 5 trims one from each end.
        assert_eq!(iqm(&[100.0, 1.0, 2.0, 3.0, -50.0]), 2.0);
    }

    #[test]
    fn mean_and_variance_survive_a_large_offset() {
        // Shift invariance of the variance; common practice, no source.
        let base = [0.5, 1.5, 2.0, 4.0];
        let shifted: Vec<f64> = base.iter().map(|x| x + 1e9).collect();
        assert!((variance(&shifted) - variance(&base)).abs() < 1e-6);
        assert!((mean(&shifted) - 1e9 - mean(&base)).abs() < 1e-6);
    }
}
