//! An interval for the Mann–Whitney effect size θ = P(X > Y) + ½ P(X = Y)
//! (the [`prob_improvement`] of two samples) that stays honest at small
//! samples and at θ̂ = 0 or 1: [`prob_improvement_interval`].

use super::bootstrap::prob_improvement;
use super::dist::normal_quantile;
use super::interval::level_ok;

/// Newcombe's (2006) Method 5 interval for θ = P(X > Y) + ½ P(X = Y), the
/// Mann–Whitney effect size estimated by θ̂ = [`prob_improvement`]`(x, y)`
/// (R. G. Newcombe, "Confidence intervals for an effect size measure based
/// on the Mann–Whitney statistic. Part 2: asymptotic methods and
/// evaluation", Statistics in Medicine 25(4), 559–573, 2006).
///
/// Method 5 is a score-type interval built on the Hanley–McNeil variance
/// with both sample sizes replaced by N* = (m + n)/2 − 1 (m = |x|, n = |y|):
///
/// V(θ) = θ(1 − θ)/(mn) · [1 + N* ((1 − θ)/(2 − θ) + θ/(1 + θ))],
///
/// and the limits are the two solutions θ of (θ̂ − θ)² = z² V(θ), z the
/// normal quantile of (1 + level)/2; multiplied out this is the quartic
/// mn (θ̂ − θ)² (2 − θ)(1 + θ) = z² θ(1 − θ)(2 + N* + (1 + 2N*) θ(1 − θ)),
/// solved here by bisection on [0, θ̂] and [θ̂, 1]. Because V vanishes only at
/// 0 and 1, the interval never has zero width: θ̂ = 1 gives (L, 1) with
/// L < 1, θ̂ = 0 gives (0, U) with U > 0. Coverage of the nominal 95%
/// interval, measured by simulation with normal data
/// (`tests/stats_verdicts.rs`): 0.936–0.984 with 3, 5 or 10 seeds per group
/// and θ from ½ to 0.998, except 3 against 3 seeds at θ = ½, where it is
/// 0.897: complete separation then has probability 0.1 and gives (0.501, 1)
/// or (0, 0.499). With 3 + 3 values nothing can claim 95% there (the exact
/// permutation test's smallest two-sided p is 0.1).
///
/// `None` when either sample is empty, any value is NaN or infinite, or
/// `level` is not strictly between 0 and 1.
pub fn prob_improvement_interval(x: &[f64], y: &[f64], level: f64) -> Option<(f64, f64)> {
    if x.is_empty() || y.is_empty() || !level_ok(level) || x.iter().chain(y).any(|v| !v.is_finite()) {
        return None;
    }
    let theta = prob_improvement(x, y);
    let (m, n) = (x.len() as f64, y.len() as f64);
    let h = 0.5 * (m + n) - 1.0;
    let z = normal_quantile(0.5 * (1.0 + level));
    let z2 = z * z;
    // f > 0 outside the interval, f ≤ 0 inside (f(θ̂) ≤ 0).
    let f = |t: f64| {
        let d = theta - t;
        m * n * d * d * (2.0 - t) * (1.0 + t)
            - z2 * t * (1.0 - t) * (2.0 + h + (1.0 + 2.0 * h) * t * (1.0 - t))
    };
    // Bisection between a point outside (`out`) and one inside (`inside`).
    let solve = |mut out: f64, mut inside: f64| {
        for _ in 0..200 {
            let mid = 0.5 * (out + inside);
            if mid == out || mid == inside {
                break;
            }
            if f(mid) > 0.0 {
                out = mid;
            } else {
                inside = mid;
            }
        }
        0.5 * (out + inside)
    };
    let lo = if theta > 0.0 { solve(0.0, theta) } else { 0.0 };
    let hi = if theta < 1.0 { solve(1.0, theta) } else { 1.0 };
    Some((lo, hi))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn contract() {
        // The documented None cases.
        assert!(prob_improvement_interval(&[], &[1.0], 0.95).is_none());
        assert!(prob_improvement_interval(&[1.0], &[f64::NAN], 0.95).is_none());
        assert!(prob_improvement_interval(&[1.0], &[2.0], 1.0).is_none());
    }

    #[test]
    fn never_zero_width_at_the_ends() {
        // Method 5's V(θ) > 0 inside (0, 1): complete separation still gives
        // a proper interval (Newcombe 2006, Method 5, by construction).
        let (lo, hi) = prob_improvement_interval(&[5.0, 6.0, 7.0], &[1.0, 2.0, 3.0], 0.95).unwrap();
        assert_eq!(hi, 1.0);
        assert!(lo > 0.0 && lo < 0.9, "{lo}");
        let (lo2, hi2) = prob_improvement_interval(&[1.0, 2.0, 3.0], &[5.0, 6.0, 7.0], 0.95).unwrap();
        assert_eq!(lo2, 0.0);
        assert!((hi2 - (1.0 - lo)).abs() < 1e-12, "mirror image: {hi2} vs {lo}");
    }

    #[test]
    fn limits_solve_the_score_equation() {
        // Restates the definition: each interior limit satisfies
        // (θ̂ − θ)² = z² V(θ).
        let x = [0.3, 1.2, 2.5, 0.8, 1.9];
        let y = [0.1, 0.9, 0.2, 1.4];
        let theta = prob_improvement(&x, &y);
        let (lo, hi) = prob_improvement_interval(&x, &y, 0.9).unwrap();
        let (m, n) = (5.0, 4.0);
        let h = 0.5 * (m + n) - 1.0;
        let z = normal_quantile(0.95);
        for t in [lo, hi] {
            let v = t * (1.0 - t) / (m * n) * (1.0 + h * ((1.0 - t) / (2.0 - t) + t / (1.0 + t)));
            assert!(((theta - t) * (theta - t) - z * z * v).abs() < 1e-14, "{t}");
        }
        assert!(lo < theta && theta < hi);
    }
}
