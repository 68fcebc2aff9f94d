//! Welch's unequal-variance t-test of two independent samples ([`welch`],
//! result [`Welch`]): the statistic, the Welch–Satterthwaite degrees of
//! freedom, the two-sided p-value and the 95% interval of the difference of
//! means.

use super::descriptive::{mean, variance};
use super::dist::{t_quantile, t_sf};

/// Result of [`welch`]; the difference is always `mean(a) − mean(b)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Welch {
    /// t statistic, diff / √(s²_a/n_a + s²_b/n_b).
    pub t: f64,
    /// Welch–Satterthwaite degrees of freedom (not an integer in general).
    pub df: f64,
    /// Two-sided p-value, 2 P(T_df > |t|).
    pub p: f64,
    /// Difference of means, mean(a) − mean(b).
    pub diff: f64,
    /// 95% interval of the difference of means, `(lo, hi)`.
    pub ci95: (f64, f64),
}

/// Welch's two-sample t-test (Welch 1947) of `a` against `b`, as R's
/// `t.test(a, b)` computes it by default.
///
/// `None` when either sample has fewer than 2 values (no variance estimate)
/// or when both sample variances are zero (the statistic is undefined).
/// NaN values must be rejected by the caller (checked by a debug assertion
/// only).
pub fn welch(a: &[f64], b: &[f64]) -> Option<Welch> {
    debug_assert!(
        a.iter().chain(b).all(|x| !x.is_nan()),
        "stats::welch: NaN in a sample; the caller must reject NaN values first"
    );
    if a.len() < 2 || b.len() < 2 {
        return None;
    }
    let (na, nb) = (a.len() as f64, b.len() as f64);
    let va = variance(a) / na;
    let vb = variance(b) / nb;
    let v = va + vb;
    // NaN only from NaN input, which the caller should have rejected.
    if v.is_nan() || v <= 0.0 {
        return None;
    }
    let se = v.sqrt();
    let diff = mean(a) - mean(b);
    let t = diff / se;
    let df = v * v / (va * va / (na - 1.0) + vb * vb / (nb - 1.0));
    let p = (2.0 * t_sf(t.abs(), df)).min(1.0);
    let half = t_quantile(0.975, df) * se;
    Some(Welch { t, df, p, diff, ci95: (diff - half, diff + half) })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn degenerate_inputs_give_none() {
        // The documented contract.
        assert!(welch(&[1.0], &[1.0, 2.0]).is_none());
        assert!(welch(&[1.0, 2.0], &[]).is_none());
        assert!(welch(&[1.0, 1.0], &[3.0, 3.0, 3.0]).is_none());
    }

    #[test]
    fn one_constant_sample_leaves_the_other_df() {
        // With s²_b = 0 the Welch–Satterthwaite df reduces to n_a − 1 and the
        // test to a one-sample t-test of a against mean(b) (algebra of the
        // definition).
        let a = [1.0, 2.0, 4.0, 7.0];
        let w = welch(&a, &[0.0, 0.0, 0.0]).unwrap();
        assert!((w.df - 3.0).abs() < 1e-12);
        let expect_t = mean(&a) / (variance(&a) / 4.0).sqrt();
        assert!((w.t - expect_t).abs() < 1e-12);
    }

    #[test]
    fn swapping_samples_flips_the_sign() {
        // Symmetry of the definition.
        let a = [0.3, 1.9, 2.2, 0.8];
        let b = [1.0, 1.4, 3.3, 2.9, 2.5];
        let ab = welch(&a, &b).unwrap();
        let ba = welch(&b, &a).unwrap();
        assert_eq!(ab.t, -ba.t);
        assert_eq!(ab.df, ba.df);
        assert_eq!(ab.p, ba.p);
        assert!((ab.ci95.0 + ba.ci95.1).abs() < 1e-15);
    }
}
