//! Descriptive statistics of one sample: [`mean`], sample [`variance`] and
//! [`sd`], the type-7 [`quantile`] (R's default), [`median`] and the
//! interquartile mean [`iqm`].
//!
//! Empty or too-short samples give NaN (documented per function); nothing
//! here panics. [`variance`] and [`sd`] give NaN when any value is NaN or
//! infinite; [`mean`] propagates them as arithmetic does (NaN, or ±∞). The
//! order statistics sort NaN by `f64::total_cmp`, so NaN values must be
//! rejected by the caller before [`quantile`], [`median`] or [`iqm`].
//! Sums that would overflow for finite data are rescaled by a power of two.

/// 2^e with 2^e ≤ max|x| < 2^(e+1), for rescaling finite data whose sums
/// overflow (returns 1 when every value is 0).
fn pow2_scale(xs: &[f64]) -> f64 {
    let big = xs.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
    if big == 0.0 {
        return 1.0;
    }
    libm::exp2(libm::floor(libm::log2(big)))
}

/// Mean of `x·inv` with one refinement pass.
fn mean_scaled(xs: &[f64], inv: f64) -> f64 {
    let n = xs.len() as f64;
    let m = xs.iter().map(|x| x * inv).sum::<f64>() / n;
    if !m.is_finite() {
        return m;
    }
    m + xs.iter().map(|x| x * inv - m).sum::<f64>() / n
}

/// Arithmetic mean, with one refinement pass (the mean of the residuals is
/// added back, as R's `mean` does) so that large offsets lose little
/// precision. NaN for an empty slice; NaN or ±∞ values propagate. Finite
/// values whose sum would overflow are rescaled, so the mean of finite data
/// is finite.
pub fn mean(xs: &[f64]) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    let m = mean_scaled(xs, 1.0);
    if m.is_finite() || xs.iter().any(|x| !x.is_finite()) {
        return m;
    }
    let scale = pow2_scale(xs);
    mean_scaled(xs, 1.0 / scale) * scale
}

/// Corrected two-pass variance of `x·inv` (n − 1 divisor); `None` when a
/// sum overflowed (where `max(0.0)` would otherwise turn the NaN into 0).
fn variance_scaled(xs: &[f64], inv: f64) -> Option<f64> {
    let n = xs.len() as f64;
    let m = mean_scaled(xs, inv);
    let (mut ss, mut s) = (0.0, 0.0);
    for x in xs {
        let d = x * inv - m;
        ss += d * d;
        s += d;
    }
    if !(m.is_finite() && ss.is_finite()) {
        return None;
    }
    Some(((ss - s * s / n) / (n - 1.0)).max(0.0))
}

/// (variance of xs / scale², scale) for finite data with at least 2 values;
/// scale is 1 unless the plain sums overflow.
fn variance_parts(xs: &[f64]) -> (f64, f64) {
    if let Some(v) = variance_scaled(xs, 1.0) {
        return (v, 1.0);
    }
    let scale = pow2_scale(xs);
    // Scaled values lie in (−2, 2): the sums cannot overflow.
    (variance_scaled(xs, 1.0 / scale).unwrap_or(f64::NAN), scale)
}

/// Sample variance with the n − 1 divisor (corrected two-pass algorithm,
/// Chan, Golub & LeVeque 1983). NaN when fewer than 2 values or when any
/// value is NaN or infinite. Finite data whose squares overflow are
/// rescaled (the variance itself may still be +∞ if it exceeds `f64::MAX`).
pub fn variance(xs: &[f64]) -> f64 {
    if xs.len() < 2 || xs.iter().any(|x| !x.is_finite()) {
        return f64::NAN;
    }
    let (v, scale) = variance_parts(xs);
    v * scale * scale
}

/// Sample standard deviation, √[`variance`], computed on rescaled data when
/// the squares would overflow, so it is finite for any finite data. NaN
/// when fewer than 2 values or when any value is NaN or infinite.
pub fn sd(xs: &[f64]) -> f64 {
    if xs.len() < 2 || xs.iter().any(|x| !x.is_finite()) {
        return f64::NAN;
    }
    let (v, scale) = variance_parts(xs);
    v.sqrt() * scale
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
    fn non_finite_values_make_the_spread_nan() {
        // Issue 12: a NaN variance must not become 0.
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            assert!(variance(&[1.0, bad, 3.0]).is_nan(), "{bad}");
            assert!(sd(&[bad, 2.0]).is_nan(), "{bad}");
        }
        assert!(sd(&[f64::INFINITY, f64::INFINITY]).is_nan());
        assert!(mean(&[1.0, f64::NAN]).is_nan());
        assert_eq!(mean(&[1.0, f64::INFINITY]), f64::INFINITY);
    }

    #[test]
    fn huge_finite_values_do_not_overflow() {
        // Exact by hand: the data (a, −a) have mean 0 and sd a√2; scaling by a
        // power of two is exact, so the rescaled path loses nothing.
        let a = 1e308;
        assert_eq!(mean(&[a, a]), a);
        assert_eq!(mean(&[a, -a]), 0.0);
        let s = sd(&[a, -a]);
        assert!((s / a - core::f64::consts::SQRT_2).abs() < 1e-15, "{s}");
        assert_eq!(variance(&[a, -a]), f64::INFINITY);
        let s = sd(&[1.5e200, 1.5e200, 1.5e200]);
        assert_eq!(s, 0.0);
        assert!((sd(&[1e160, 3e160]) / 1e160 - core::f64::consts::SQRT_2).abs() < 1e-15);
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
