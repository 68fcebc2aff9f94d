//! Scores per variant and comparisons between variants.
//!
//! From each seed's numbers (final return, area under its curve, steps to
//! reach a threshold) this module makes the score table and, for every pair
//! of variants, the comparison: difference of means with Welch's t-test and
//! a percentile-bootstrap interval, the probability of improvement
//! P(B > A) with its bootstrap interval (Agarwal et al. 2021, Section 4), a
//! seeds advice (Colas, Sigaud & Oudeyer 2018) and a verdict in plain words
//! that never claims more than the data show. Bootstrap draws come from
//! streams derived from the master seed, so the numbers are reproducible.

use serde_json::{json, Value};

use crate::rng::{Purpose, Stream};
use crate::stats;

/// Resamples used by every bootstrap interval here.
pub const RESAMPLES: usize = 2000;

/// A score over seeds: location and spread with their intervals.
#[derive(Clone, Debug, PartialEq)]
pub struct Score {
    /// Seeds with a value.
    pub n: usize,
    /// Mean over seeds.
    pub mean: f64,
    /// Student-t 95% interval of the mean (None with fewer than 2 seeds).
    pub ci95: Option<(f64, f64)>,
    /// Percentile-bootstrap 95% interval of the mean.
    pub bootstrap_ci95: Option<(f64, f64)>,
    /// Interquartile mean (Agarwal et al. 2021).
    pub iqm: f64,
    /// Percentile-bootstrap 95% interval of the IQM.
    pub iqm_ci95: Option<(f64, f64)>,
    /// Median.
    pub median: f64,
    /// Sample standard deviation.
    pub sd: f64,
}

/// Scores `xs` (NaN-free) with bootstrap streams keyed by `(master, key, index)`.
pub fn score(xs: &[f64], master: u64, key: u64, index: u64) -> Score {
    let s = stats::summarize(xs);
    let mut rng = Stream::derive(master, Purpose::Stats, key, index);
    let boot = if xs.len() >= 2 { stats::bootstrap_mean_ci(xs, 0.95, RESAMPLES, &mut rng) } else { None };
    let iqm_ci =
        if xs.len() >= 2 { stats::bootstrap_ci(xs, 0.95, RESAMPLES, &mut rng, stats::iqm) } else { None };
    Score {
        n: xs.len(),
        mean: if xs.is_empty() { f64::NAN } else { s.mean },
        ci95: s.ci95,
        bootstrap_ci95: boot,
        iqm: stats::iqm(xs),
        iqm_ci95: iqm_ci,
        median: stats::median(xs),
        sd: s.sd,
    }
}

fn num(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

fn pair(p: Option<(f64, f64)>) -> Value {
    p.map_or(Value::Null, |(a, b)| json!([num(a), num(b)]))
}

impl Score {
    /// The JSON form used in summaries.
    pub fn to_json(&self) -> Value {
        json!({
            "n": self.n,
            "mean": num(self.mean),
            "ci95": pair(self.ci95),
            "bootstrap_ci95": pair(self.bootstrap_ci95),
            "iqm": num(self.iqm),
            "iqm_ci95": pair(self.iqm_ci95),
            "median": num(self.median),
            "sd": num(self.sd),
        })
    }
}

/// A comparison of variant `b` against variant `a` on per-seed values.
#[derive(Clone, Debug, PartialEq)]
pub struct Comparison {
    /// Index of the first variant.
    pub a: usize,
    /// Index of the second variant.
    pub b: usize,
    /// mean(b) − mean(a).
    pub diff: f64,
    /// Percentile-bootstrap 95% interval of the difference (seeds resampled
    /// within each variant).
    pub diff_ci95: Option<(f64, f64)>,
    /// P(B > A): the chance a random seed of `b` beats a random seed of `a`,
    /// ties counting ½.
    pub prob_improvement: f64,
    /// Percentile-bootstrap 95% interval of P(B > A).
    pub prob_improvement_ci95: Option<(f64, f64)>,
    /// Welch's t-test of equal means (None with fewer than 2 seeds in a
    /// variant or no spread at all).
    pub welch: Option<stats::Welch>,
    /// The difference the seeds advice is for.
    pub advice_for: f64,
    /// Seeds per variant needed to detect `advice_for` at α = 0.05, power 0.8.
    pub seeds_advice: Option<stats::SeedsAdvice>,
    /// The verdict in plain words.
    pub verdict: String,
}

fn fmt(x: f64) -> String {
    if x == 0.0 || (x.abs() >= 0.01 && x.abs() < 1e5) {
        let s = format!("{x:.3}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        if s == "-0" {
            "0".into()
        } else {
            s.into()
        }
    } else {
        format!("{x:.3e}")
    }
}

/// Compares per-seed values `ya` (variant `a`, labelled `la`) and `yb`.
/// `detect` is the difference the seeds advice is sized for (default: the
/// observed one).
#[allow(clippy::too_many_arguments)]
pub fn compare(
    a: usize,
    b: usize,
    la: &str,
    lb: &str,
    ya: &[f64],
    yb: &[f64],
    master: u64,
    detect: Option<f64>,
) -> Comparison {
    let key = 1000 + (a as u64) * 64 + b as u64;
    let mut rng = Stream::derive(master, Purpose::Stats, key, 0);
    let enough = ya.len() >= 2 && yb.len() >= 2;
    let diff = stats::mean(yb) - stats::mean(ya);
    let diff_ci95 = if enough { stats::bootstrap_diff_ci(yb, ya, 0.95, RESAMPLES, &mut rng) } else { None };
    let prob_improvement = stats::prob_improvement(yb, ya);
    let prob_improvement_ci95 =
        if enough { stats::prob_improvement_ci(yb, ya, 0.95, RESAMPLES, &mut rng) } else { None };
    let welch = if enough { stats::welch(yb, ya) } else { None };
    let advice_for = detect.unwrap_or(diff.abs());
    let seeds_advice = if enough && advice_for > 0.0 {
        stats::seeds_needed(stats::sd(ya), stats::sd(yb), advice_for).ok()
    } else {
        None
    };
    let (na, nb) = (ya.len(), yb.len());
    let seeds = if na == nb { format!("{na} seeds each") } else { format!("{na} and {nb} seeds") };
    let verdict = if !enough {
        format!("not enough seeds to compare {lb} with {la}: each needs at least 2 seeds with a final return")
    } else if let Some(w) = &welch {
        let ci = w.ci95;
        if w.p < 0.05 {
            let (hi, lo) = if diff > 0.0 { (lb, la) } else { (la, lb) };
            format!(
                "{hi} ends higher than {lo} by {} (95% CI of {lb} − {la}: {} to {}; Welch p = {}; {seeds})",
                fmt(diff.abs()),
                fmt(ci.0),
                fmt(ci.1),
                fmt(w.p)
            )
        } else {
            let mut s = format!(
                "no detectable difference at {seeds} ({lb} − {la} = {}, 95% CI {} to {}; Welch p = {})",
                fmt(diff),
                fmt(ci.0),
                fmt(ci.1),
                fmt(w.p)
            );
            if let Some(adv) = &seeds_advice {
                s.push_str(&format!(
                    "; about {} seeds per variant would detect a difference of {}",
                    adv.welch,
                    fmt(advice_for)
                ));
            }
            s
        }
    } else if diff == 0.0 {
        format!("{lb} and {la} gave the same final return in every seed ({seeds})")
    } else {
        format!("{lb} − {la} = {} with no spread across seeds ({seeds})", fmt(diff))
    };
    Comparison {
        a,
        b,
        diff,
        diff_ci95,
        prob_improvement,
        prob_improvement_ci95,
        welch,
        advice_for,
        seeds_advice,
        verdict,
    }
}

impl Comparison {
    /// The JSON form used in summaries (`a`, `b` are labels).
    pub fn to_json(&self, la: &str, lb: &str) -> Value {
        json!({
            "a": la,
            "b": lb,
            "diff": num(self.diff),
            "diff_ci95": pair(self.diff_ci95),
            "prob_improvement": {
                "value": num(self.prob_improvement),
                "ci95": pair(self.prob_improvement_ci95),
            },
            "welch": self.welch.as_ref().map_or(Value::Null, |w| json!({
                "t": num(w.t), "df": num(w.df), "p": num(w.p), "ci95": pair(Some(w.ci95)),
            })),
            "seeds_advice": self.seeds_advice.as_ref().map_or(Value::Null, |s| json!({
                "difference": num(self.advice_for),
                "seeds_per_variant": s.welch,
                "normal_approximation": s.normal,
            })),
            "verdict": self.verdict,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clear_difference_is_called_and_noise_is_not() {
        let a = [10.0, 11.0, 9.5, 10.2, 10.8, 9.9];
        let b = [14.0, 15.1, 13.7, 14.4, 15.0, 14.2];
        let c = compare(0, 1, "A", "B", &a, &b, 1, None);
        assert!(c.verdict.starts_with("B ends higher than A by 4.167"), "{}", c.verdict);
        assert_eq!(c.prob_improvement, 1.0);
        let (lo, hi) = c.diff_ci95.unwrap();
        assert!(lo > 3.0 && hi < 5.5);
        let n = [10.0, 12.0, 9.0, 11.0];
        let m = [11.0, 10.0, 12.5, 9.5];
        let c = compare(0, 1, "A", "B", &n, &m, 1, None);
        assert!(c.verdict.starts_with("no detectable difference at 4 seeds each"), "{}", c.verdict);
        assert!(c.verdict.contains("seeds per variant would detect"), "{}", c.verdict);
        let c = compare(0, 1, "A", "B", &[1.0], &m, 1, None);
        assert!(c.verdict.starts_with("not enough seeds"));
        assert!(c.welch.is_none());
    }

    #[test]
    fn welch_numbers_pass_through() {
        // R's t.test(extra ~ group, data = sleep) (Student 1908 data): t = −1.8608,
        // df = 17.776, p = 0.07939 for group 1 minus group 2; here B = group 1.
        let g1 = [0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0];
        let g2 = [1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4];
        let c = compare(0, 1, "g2", "g1", &g2, &g1, 1, None);
        let w = c.welch.unwrap();
        assert!((w.t + 1.8608).abs() < 5e-5 && (w.df - 17.776).abs() < 5e-4 && (w.p - 0.07939).abs() < 5e-6);
        assert!(
            c.verdict.starts_with("no detectable difference at 10 seeds each (g1 − g2 = -1.58"),
            "{}",
            c.verdict
        );
    }
}
