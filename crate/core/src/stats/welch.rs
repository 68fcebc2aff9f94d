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
/// `None` when the test is undefined: either sample has fewer than 2
/// values (no variance estimate), any value is NaN or infinite, both sample
/// variances are zero, or the statistic, its degrees of freedom, the
/// p-value or the interval would not be finite (a NaN p is never turned
/// into 1).
pub fn welch(a: &[f64], b: &[f64]) -> Option<Welch> {
    if a.len() < 2 || b.len() < 2 || a.iter().chain(b).any(|x| !x.is_finite()) {
        return None;
    }
    let (na, nb) = (a.len() as f64, b.len() as f64);
    let va = variance(a) / na;
    let vb = variance(b) / nb;
    let v = va + vb;
    if !(v > 0.0 && v.is_finite()) {
        return None;
    }
    let se = v.sqrt();
    let diff = mean(a) - mean(b);
    let t = diff / se;
    // Written as ratios so that the squares of tiny or huge variances do not
    // underflow or overflow.
    let df = 1.0 / ((va / v) * (va / v) / (na - 1.0) + (vb / v) * (vb / v) / (nb - 1.0));
    let p = 2.0 * t_sf(t.abs(), df);
    let half = t_quantile(0.975, df) * se;
    let ci95 = (diff - half, diff + half);
    if !(t.is_finite() && df.is_finite() && p.is_finite() && ci95.0.is_finite() && ci95.1.is_finite()) {
        return None;
    }
    Some(Welch { t, df, p: p.min(1.0), diff, ci95 })
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
    fn non_finite_input_gives_none() {
        // Issue 12: Welch is undefined for non-finite input, never p = 1.
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            assert!(welch(&[1.0, bad, 2.0], &[0.5, 0.7]).is_none(), "{bad}");
            assert!(welch(&[1.0, 2.0], &[bad, 0.7, 0.1]).is_none(), "{bad}");
        }
        // Finite but huge: the variance overflows, so the test is undefined.
        assert!(welch(&[1e308, -1e308], &[0.0, 1.0]).is_none());
    }

    #[test]
    fn tiny_and_huge_scales_keep_the_df() {
        // Welch's statistic and df are invariant under rescaling both samples
        // (definition); the ratio form keeps them exact far from 1.
        let a = [0.3, 1.9, 2.2, 0.8];
        let b = [1.0, 1.4, 3.3, 2.9, 2.5];
        let w = welch(&a, &b).unwrap();
        for c in [1e-150, 1e150] {
            let sa: Vec<f64> = a.iter().map(|x| x * c).collect();
            let sb: Vec<f64> = b.iter().map(|x| x * c).collect();
            let ws = welch(&sa, &sb).unwrap();
            assert!((ws.df - w.df).abs() < 1e-12 * w.df, "{c}");
            assert!((ws.t - w.t).abs() < 1e-12 * w.t.abs(), "{c}");
            assert!((ws.p - w.p).abs() < 1e-12, "{c}");
        }
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
