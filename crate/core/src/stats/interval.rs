//! One-sample summaries: the [`Summary`] of a sample (size, mean, standard
//! deviation, Student-t 95% interval of the mean) made by [`summarize`], and
//! the t interval at any level, [`mean_ci_t`].

use super::descriptive::{mean, sd};
use super::dist::t_quantile;

/// Size, mean, sample standard deviation and 95% interval of the mean of a
/// sample, as [`summarize`] makes it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Summary {
    /// Number of values.
    pub n: usize,
    /// Arithmetic mean; NaN when `n == 0`.
    pub mean: f64,
    /// Sample standard deviation (n − 1 divisor); NaN when `n < 2`.
    pub sd: f64,
    /// Student-t 95% interval of the mean, `(lo, hi)`; `None` when `n < 2`.
    pub ci95: Option<(f64, f64)>,
}

/// True when `level` is a usable confidence level, strictly between 0 and 1.
pub(crate) fn level_ok(level: f64) -> bool {
    level > 0.0 && level < 1.0
}

/// Student-t interval of the mean at confidence `level` (e.g. 0.95):
/// mean ± t_{(1+level)/2, n−1} · sd/√n. With zero spread it is the point
/// (mean, mean).
///
/// `None` when there are fewer than 2 values, any value is NaN or
/// infinite, or `level` is not strictly between 0 and 1.
pub fn mean_ci_t(xs: &[f64], level: f64) -> Option<(f64, f64)> {
    if xs.len() < 2 || !level_ok(level) || xs.iter().any(|x| !x.is_finite()) {
        return None;
    }
    let n = xs.len() as f64;
    let m = mean(xs);
    let half = t_quantile(0.5 * (1.0 + level), n - 1.0) * (sd(xs) / n.sqrt());
    if !(m.is_finite() && half.is_finite()) {
        return None;
    }
    Some((m - half, m + half))
}

/// Summarises a sample: size, mean, sample standard deviation and Student-t
/// 95% interval of the mean (see [`Summary`] for the values given when the
/// sample is empty or has one value).
///
/// When any value is NaN or infinite the summary is undefined: `mean` and
/// `sd` are NaN and `ci95` is `None` (`n` still counts every value).
pub fn summarize(xs: &[f64]) -> Summary {
    if xs.iter().any(|x| !x.is_finite()) {
        return Summary { n: xs.len(), mean: f64::NAN, sd: f64::NAN, ci95: None };
    }
    Summary { n: xs.len(), mean: mean(xs), sd: sd(xs), ci95: mean_ci_t(xs, 0.95) }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn degenerate_samples() {
        // The documented contract for empty, single and constant samples.
        let s = summarize(&[]);
        assert_eq!(s.n, 0);
        assert!(s.mean.is_nan() && s.sd.is_nan() && s.ci95.is_none());
        let s = summarize(&[3.0]);
        assert_eq!((s.n, s.mean), (1, 3.0));
        assert!(s.sd.is_nan() && s.ci95.is_none());
        let s = summarize(&[2.0, 2.0, 2.0]);
        assert_eq!(s.sd, 0.0);
        assert_eq!(s.ci95, Some((2.0, 2.0)));
        assert!(mean_ci_t(&[1.0, 2.0], 1.0).is_none());
        assert!(mean_ci_t(&[1.0, 2.0], 0.0).is_none());
        assert!(mean_ci_t(&[1.0, 2.0], f64::NAN).is_none());
    }

    #[test]
    fn non_finite_values_make_the_summary_undefined() {
        // Issue 12: NaN or infinite input gives NaN / None, never a number.
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            let s = summarize(&[1.0, bad, 2.0]);
            assert_eq!(s.n, 3);
            assert!(s.mean.is_nan() && s.sd.is_nan() && s.ci95.is_none(), "{bad}: {s:?}");
            assert!(mean_ci_t(&[bad, 1.0, 2.0], 0.9).is_none());
        }
    }

    #[test]
    fn two_values_use_the_cauchy_quantile() {
        // n = 2: df = 1, t_{0.975,1} = tan(0.475π) = 12.7062…; sd of (0, 2)
        // is √2, so the half-width is 12.7062·√2/√2. Exact closed form.
        let (lo, hi) = mean_ci_t(&[0.0, 2.0], 0.95).unwrap();
        let t = libm::tan(0.475 * core::f64::consts::PI);
        assert!((hi - 1.0 - t).abs() < 1e-12 && (1.0 - lo - t).abs() < 1e-12);
    }
}
