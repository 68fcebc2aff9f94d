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
/// `None` when there are fewer than 2 values or `level` is not strictly
/// between 0 and 1. NaN values must be rejected by the caller (checked by a
/// debug assertion only).
pub fn mean_ci_t(xs: &[f64], level: f64) -> Option<(f64, f64)> {
    debug_assert!(
        xs.iter().all(|x| !x.is_nan()),
        "stats::mean_ci_t: NaN in the sample; the caller must reject NaN values first"
    );
    if xs.len() < 2 || !level_ok(level) {
        return None;
    }
    let n = xs.len() as f64;
    let m = mean(xs);
    let half = t_quantile(0.5 * (1.0 + level), n - 1.0) * sd(xs) / n.sqrt();
    Some((m - half, m + half))
}

/// Summarises a sample: size, mean, sample standard deviation and Student-t
/// 95% interval of the mean (see [`Summary`] for the values given when the
/// sample is empty or has one value).
///
/// NaN values must be rejected by the caller before this is called (a debug
/// assertion checks it; in release builds a NaN makes the summary NaN).
pub fn summarize(xs: &[f64]) -> Summary {
    debug_assert!(
        xs.iter().all(|x| !x.is_nan()),
        "stats::summarize: NaN in the sample; the caller must reject NaN values first"
    );
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
    fn two_values_use_the_cauchy_quantile() {
        // n = 2: df = 1, t_{0.975,1} = tan(0.475π) = 12.7062…; sd of (0, 2)
        // is √2, so the half-width is 12.7062·√2/√2. Exact closed form.
        let (lo, hi) = mean_ci_t(&[0.0, 2.0], 0.95).unwrap();
        let t = libm::tan(0.475 * core::f64::consts::PI);
        assert!((hi - 1.0 - t).abs() < 1e-12 && (1.0 - lo - t).abs() < 1e-12);
    }
}
