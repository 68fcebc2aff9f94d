//! How many seeds to run: the per-group sample size for a two-sided Welch
//! t-test to detect a difference of means ε with given α and power, from the
//! standard deviations of two pilot groups ([`seeds_needed`],
//! [`seeds_needed_at`], result [`SeedsAdvice`]), after Colas, Sigaud &
//! Oudeyer (2018), "How many random seeds?", arXiv 1806.08295.
//!
//! Two answers are given. The normal approximation
//! N = (z_{1−α/2} + z_{power})² (s²_a + s²_b) / ε², which at α = 0.05 and
//! power 0.8 is ≈ 15.7 s̄²/ε² with s̄² the mean of the two variances; and the
//! t-based answer, the smallest N with
//! N ≥ (t_{1−α/2, ν(N)} + t_{power, ν(N)})² (s²_a + s²_b) / ε², where ν(N) is
//! the Welch–Satterthwaite df of two groups of N,
//! ν = (N − 1)(s²_a + s²_b)² / (s⁴_a + s⁴_b). That is the fixed point of the
//! iteration N ← (t + t)²(s²_a + s²_b)/ε²; the requirement falls as N grows,
//! so the smallest such N is found by bisection and is always at least the
//! normal answer.

use core::fmt;

use super::dist::{normal_quantile, t_quantile};

/// Why the advisor cannot answer; the message names the parameter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum SeedsError {
    /// A parameter is NaN, infinite or out of its range.
    BadParameter {
        /// Parameter name as the caller knows it (`sd_a`, `sd_b`, `epsilon`,
        /// `alpha`, `power`).
        name: &'static str,
        /// The rule it breaks, e.g. "must be > 0".
        rule: &'static str,
        /// The value given.
        value: f64,
    },
    /// Both standard deviations are zero: the t-test is undefined.
    NoSpread,
    /// More than [`MAX_SEEDS`] seeds per group would be needed.
    TooMany {
        /// The normal-approximation estimate of N per group.
        estimate: f64,
    },
}

impl fmt::Display for SeedsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SeedsError::BadParameter { name, rule, value } => write!(f, "{name}: {rule}, got {value}"),
            SeedsError::NoSpread => write!(
                f,
                "sd_a and sd_b: both standard deviations are 0, so a t-test is undefined; run pilot seeds that show some spread"
            ),
            SeedsError::TooMany { estimate } => write!(
                f,
                "epsilon: too small for the spread, about {estimate:.3e} seeds per group would be needed (limit {MAX_SEEDS})"
            ),
        }
    }
}

impl std::error::Error for SeedsError {}

/// Largest per-group size the advisor will report.
pub const MAX_SEEDS: usize = 1 << 30;

/// Significance level used by [`seeds_needed`] (two-sided).
pub const DEFAULT_ALPHA: f64 = 0.05;

/// Power used by [`seeds_needed`].
pub const DEFAULT_POWER: f64 = 0.8;

/// Seeds per group to detect a difference; see the module documentation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SeedsAdvice {
    /// Normal approximation before rounding,
    /// (z_{1−α/2} + z_{power})² (s²_a + s²_b) / ε².
    pub normal_raw: f64,
    /// Normal approximation rounded up, at least 2.
    pub normal: usize,
    /// Smallest N ≥ 2 meeting the t-based requirement with Welch df.
    pub welch: usize,
    /// Welch–Satterthwaite df of two groups of `welch` seeds.
    pub welch_df: f64,
}

/// Seeds per group at α = 0.05 (two-sided) and power 0.8; see
/// [`seeds_needed_at`].
pub fn seeds_needed(sd_a: f64, sd_b: f64, epsilon: f64) -> Result<SeedsAdvice, SeedsError> {
    seeds_needed_at(sd_a, sd_b, epsilon, DEFAULT_ALPHA, DEFAULT_POWER)
}

fn check(name: &'static str, value: f64, ok: bool, rule: &'static str) -> Result<(), SeedsError> {
    if ok && value.is_finite() {
        Ok(())
    } else {
        Err(SeedsError::BadParameter { name, rule, value })
    }
}

/// Seeds per group for a two-sided test at level `alpha` with the given
/// `power` to detect a difference of means `epsilon`, from the pilot
/// standard deviations `sd_a` and `sd_b` (see the module documentation for
/// both formulas).
///
/// Errors: `sd_a`, `sd_b` must be finite and ≥ 0 and not both 0; `epsilon`
/// finite and > 0; `alpha` and `power` strictly between 0 and 1; the answer
/// at most [`MAX_SEEDS`].
pub fn seeds_needed_at(
    sd_a: f64,
    sd_b: f64,
    epsilon: f64,
    alpha: f64,
    power: f64,
) -> Result<SeedsAdvice, SeedsError> {
    check("sd_a", sd_a, sd_a >= 0.0, "must be a finite number >= 0")?;
    check("sd_b", sd_b, sd_b >= 0.0, "must be a finite number >= 0")?;
    check("epsilon", epsilon, epsilon > 0.0, "must be a finite number > 0")?;
    check("alpha", alpha, alpha > 0.0 && alpha < 1.0, "must be > 0 and < 1")?;
    check("power", power, power > 0.0 && power < 1.0, "must be > 0 and < 1")?;
    let (va, vb) = (sd_a * sd_a, sd_b * sd_b);
    let vsum = va + vb;
    if vsum == 0.0 {
        return Err(SeedsError::NoSpread);
    }
    let scale = vsum / (epsilon * epsilon);
    let za = normal_quantile(1.0 - 0.5 * alpha);
    let zb = normal_quantile(power);
    let normal_raw = (za + zb) * (za + zb) * scale;
    if !normal_raw.is_finite() || normal_raw > MAX_SEEDS as f64 {
        return Err(SeedsError::TooMany { estimate: normal_raw });
    }
    let normal = (normal_raw.ceil() as usize).max(2);
    // Welch df of two groups of n: (n − 1)·dfac.
    let dfac = vsum * vsum / (va * va + vb * vb);
    let requirement = |n: usize| {
        let df = (n as f64 - 1.0) * dfac;
        let s = t_quantile(1.0 - 0.5 * alpha, df) + t_quantile(power, df);
        s * s * scale
    };
    let meets = |n: usize| n as f64 >= requirement(n);
    // Bracket: `lo` fails (or is 1, below the minimum), `hi` meets.
    let mut lo = 1usize;
    let mut hi = normal;
    while !meets(hi) {
        lo = hi;
        hi = hi.saturating_mul(2);
        if hi > MAX_SEEDS {
            return Err(SeedsError::TooMany { estimate: normal_raw });
        }
    }
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if meets(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Ok(SeedsAdvice { normal_raw, normal, welch: hi, welch_df: (hi as f64 - 1.0) * dfac })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bad_parameters_are_named() {
        // The documented error contract.
        let e = seeds_needed(1.0, 1.0, 0.0).unwrap_err();
        assert_eq!(e.to_string(), "epsilon: must be a finite number > 0, got 0");
        let e = seeds_needed(-1.0, 1.0, 0.5).unwrap_err();
        assert!(e.to_string().starts_with("sd_a:"), "{e}");
        let e = seeds_needed(1.0, f64::NAN, 0.5).unwrap_err();
        assert!(e.to_string().starts_with("sd_b:"), "{e}");
        let e = seeds_needed_at(1.0, 1.0, 0.5, 1.0, 0.8).unwrap_err();
        assert!(e.to_string().starts_with("alpha:"), "{e}");
        let e = seeds_needed_at(1.0, 1.0, 0.5, 0.05, 0.0).unwrap_err();
        assert!(e.to_string().starts_with("power:"), "{e}");
        assert_eq!(seeds_needed(0.0, 0.0, 1.0), Err(SeedsError::NoSpread));
        assert!(matches!(seeds_needed(1.0, 1.0, 1e-12), Err(SeedsError::TooMany { .. })));
    }

    #[test]
    fn answer_is_the_smallest_meeting_the_requirement() {
        // Restates the definition: N meets the t requirement and N − 1 does
        // not (or N = 2).
        for &(sa, sb, eps) in &[(1.0, 1.0, 0.5), (1.0, 3.0, 1.0), (2.0, 0.0, 1.5), (1.0, 1.0, 5.0)] {
            let adv = seeds_needed(sa, sb, eps).unwrap();
            let req = |n: usize| {
                let dfac = (sa * sa + sb * sb) * (sa * sa + sb * sb) / (sa.powi(4) + sb.powi(4));
                let df = (n as f64 - 1.0) * dfac;
                let s = t_quantile(0.975, df) + t_quantile(0.8, df);
                s * s * (sa * sa + sb * sb) / (eps * eps)
            };
            assert!(adv.welch as f64 >= req(adv.welch));
            assert!(adv.welch == 2 || ((adv.welch - 1) as f64) < req(adv.welch - 1));
            assert!(adv.welch >= adv.normal);
        }
    }
}
