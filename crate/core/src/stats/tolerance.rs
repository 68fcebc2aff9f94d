//! Normal-theory tolerance intervals: where a given share of the population
//! (here: of the seeds one could run) lies, rather than where the mean lies.
//! [`tolerance_factor`] is the two-sided factor k of x̄ ± k·s and
//! [`tolerance_interval90`] the interval that holds 90% of seeds with 95%
//! confidence (Patterson, Neumann, White & White 2024, JMLR 25, §2, advise
//! reporting the spread of runs this way).

use super::descriptive::{mean, sd};
use super::dist::normal_quantile;
use super::gamma::chi2_quantile;

/// Two-sided normal tolerance factor k by Howe's (1969) approximation
/// ("Two-sided tolerance limits for normal populations — some
/// improvements", JASA 64, 610–620): the interval x̄ ± k·s from a sample of
/// `n` covers at least the fraction `coverage` (β) of a normal population
/// with probability `confidence` (1 − α), where
///
/// k = √((n − 1)(1 + 1/n) z²_{(1+β)/2} / χ²_{α; n−1}),
///
/// χ²_{α; n−1} being the lower α quantile of the chi-square distribution
/// with n − 1 degrees of freedom. Howe's k is within about 0.5% of the
/// exact factor (Odeh & Owen 1980) for n ≥ 5 at the usual levels and
/// slightly below it (checked in `tests/stats_verdicts.rs`).
///
/// NaN when `n < 2` or `coverage` or `confidence` is not strictly between 0
/// and 1.
pub fn tolerance_factor(n: usize, coverage: f64, confidence: f64) -> f64 {
    let ok = |v: f64| v > 0.0 && v < 1.0;
    if n < 2 || !ok(coverage) || !ok(confidence) {
        return f64::NAN;
    }
    let nf = n as f64;
    let df = nf - 1.0;
    let z = normal_quantile(0.5 * (1.0 + coverage));
    let chi = chi2_quantile(1.0 - confidence, df);
    z * (df * (1.0 + 1.0 / nf) / chi).sqrt()
}

/// The two-sided normal tolerance interval mean ± k·sd that holds 90% of
/// the population with 95% confidence, k = [`tolerance_factor`]`(n, 0.90,
/// 0.95)`: where one more seed's result should be expected to land. With
/// zero spread it is the point (mean, mean).
///
/// `None` when there are fewer than 2 values or any value is NaN or
/// infinite.
pub fn tolerance_interval90(xs: &[f64]) -> Option<(f64, f64)> {
    if xs.len() < 2 || xs.iter().any(|x| !x.is_finite()) {
        return None;
    }
    let m = mean(xs);
    let half = tolerance_factor(xs.len(), 0.90, 0.95) * sd(xs);
    if !(m.is_finite() && half.is_finite()) {
        return None;
    }
    Some((m - half, m + half))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn degenerate_inputs() {
        // The documented contract.
        assert!(tolerance_factor(1, 0.9, 0.95).is_nan());
        assert!(tolerance_factor(10, 1.0, 0.95).is_nan());
        assert!(tolerance_factor(10, 0.9, 0.0).is_nan());
        assert!(tolerance_interval90(&[1.0]).is_none());
        assert!(tolerance_interval90(&[1.0, f64::NAN]).is_none());
        assert!(tolerance_interval90(&[1.0, f64::INFINITY]).is_none());
        assert_eq!(tolerance_interval90(&[2.0, 2.0, 2.0]), Some((2.0, 2.0)));
    }

    #[test]
    fn factor_falls_with_n_towards_the_normal_quantile() {
        // Definition: as n → ∞, χ²_{α;n−1}/(n − 1) → 1 and k → z_{(1+β)/2}.
        let z = normal_quantile(0.95);
        let mut last = f64::INFINITY;
        for n in [2, 3, 5, 10, 30, 100, 1000, 100_000] {
            let k = tolerance_factor(n, 0.9, 0.95);
            assert!(k < last && k > z, "n = {n}: {k}");
            last = k;
        }
        assert!((last - z) / z < 0.01, "{last}");
    }

    #[test]
    fn interval_is_mean_plus_minus_k_sd() {
        // Definition, with the n = 4 factor.
        let xs = [1.0, 2.0, 4.0, 7.0];
        let (lo, hi) = tolerance_interval90(&xs).unwrap();
        let k = tolerance_factor(4, 0.9, 0.95);
        assert!((hi - lo - 2.0 * k * sd(&xs)).abs() < 1e-12);
        assert!((0.5 * (hi + lo) - 3.5).abs() < 1e-12);
    }
}
