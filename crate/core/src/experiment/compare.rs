//! Scores per variant and comparisons between variants.
//!
//! From each seed's number (on the scored measure: the final evaluation
//! return or the final training return, the area under the curve) this
//! module makes the score table ([`score`] → [`Score`]: mean with its
//! Student-t interval, IQM with its percentile-bootstrap interval, median,
//! SD, and a normal tolerance interval for where one more seed lands) and
//! the comparisons ([`compare_all`] → [`Comparison`]): every pair of
//! variants, or every variant against a reference. A comparison carries the
//! difference of means with Welch's t-test and its 95% interval (the one
//! interval of the difference, used by the table and the verdict alike),
//! the p value adjusted for the number of comparisons by Holm's step-down
//! method (Holm 1979), the probability of improvement P(B > A) (Agarwal et
//! al. 2021, Section 4) with Newcombe's (2006) Method 5 interval, seeds
//! advice stated as the power of the Welch test, and a verdict in plain
//! words that never claims more than the corrected test shows. A variant
//! with failed seeds is judged on its other seeds and every verdict about
//! it says so first. Bootstrap draws (the IQM's interval) come from streams
//! derived from the master seed, so the numbers are reproducible.

use serde::Serialize;

use crate::report::{pair, Num, Pair};
use crate::rng::{Purpose, Stream};
use crate::stats;

/// Resamples used by every bootstrap interval here.
pub const RESAMPLES: usize = 2000;

/// Significance level of the verdicts (two-sided, family-wise after Holm).
pub const ALPHA: f64 = 0.05;

/// A score over seeds: location and spread with their intervals.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Score {
    /// Seeds with a value.
    pub n: usize,
    /// Mean over seeds.
    pub mean: Num,
    /// Student-t 95% interval of the mean (null with fewer than 2 seeds).
    pub ci95: Pair,
    /// Interquartile mean (Agarwal et al. 2021).
    pub iqm: Num,
    /// Percentile-bootstrap 95% interval of the IQM (seeds resampled).
    pub iqm_ci95: Pair,
    /// Median.
    pub median: Num,
    /// Sample standard deviation.
    pub sd: Num,
    /// Normal-theory tolerance interval of the per-seed values: the range
    /// that holds 90% of seeds with 95% confidence (Howe 1969 factor), where
    /// one more seed should be expected to land (null with fewer than 2 seeds).
    pub tolerance90: Pair,
    /// Seeds (indices) that have no value and did not fail: a run still
    /// going, or no episode ended in the final share of the budget.
    pub missing: Vec<usize>,
}

/// Scores `xs` (finite values) with bootstrap streams keyed by `(master, key, index)`;
/// `missing` lists the seeds without a value that did not fail.
pub fn score(xs: &[f64], missing: Vec<usize>, master: u64, key: u64, index: u64) -> Score {
    let s = stats::summarize(xs);
    let mut rng = Stream::derive(master, Purpose::Stats, key, index);
    let iqm_ci =
        if xs.len() >= 2 { stats::bootstrap_ci(xs, 0.95, RESAMPLES, &mut rng, stats::iqm) } else { None };
    Score {
        n: xs.len(),
        mean: Num(if xs.is_empty() { f64::NAN } else { s.mean }),
        ci95: pair(s.ci95),
        iqm: Num(stats::iqm(xs)),
        iqm_ci95: pair(iqm_ci),
        median: Num(stats::median(xs)),
        sd: Num(s.sd),
        tolerance90: pair(stats::tolerance_interval90(xs)),
        missing,
    }
}

/// What the comparisons need of one variant.
#[derive(Clone, Debug)]
pub struct Entry<'a> {
    /// Its label.
    pub label: &'a str,
    /// Per-seed values of the scored measure (failed and missing seeds left out).
    pub values: Vec<f64>,
    /// Seeds in the variant.
    pub seeds: usize,
    /// Failed seeds: (seed index, reason).
    pub failed: Vec<(usize, String)>,
    /// The learner explores with another policy than the one it learns
    /// (off-policy or deterministic): its training return is the explorer's.
    pub explores: bool,
}

/// Welch's test of a comparison (`welch` in the summary).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct WelchReport {
    /// The t statistic of mean(b) − mean(a).
    pub t: Num,
    /// Welch–Satterthwaite degrees of freedom.
    pub df: Num,
    /// Two-sided p value of this comparison alone.
    pub p: Num,
    /// The p value adjusted by Holm's method over the experiment's family of
    /// comparisons (null when `p` is undefined; such comparisons are left out
    /// of the family).
    pub p_holm: Num,
    /// 95% interval of mean(b) − mean(a) (Welch; not adjusted).
    pub ci95: Pair,
}

/// P(B > A) and its interval (`prob_improvement`).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ProbImprovement {
    /// The chance that a random seed of `b` beats a random seed of `a`, ties ½.
    pub value: Num,
    /// Its 95% interval.
    pub ci95: Pair,
    /// How the interval is made.
    pub method: &'static str,
}

/// How many seeds a clear answer needs (`seeds_advice`): the power of the
/// two-sided Welch test from the noncentral t distribution with
/// Welch–Satterthwaite degrees of freedom (the standard approximation;
/// `stats::welch_power`), at the spreads seen in this comparison.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct SeedsAdvice {
    /// The true difference it is sized for.
    pub difference: Num,
    /// `"detect_difference"` (the config's) or `"observed"` (this pair's).
    pub sized_to: &'static str,
    /// The per-comparison significance level: 0.05 shared over the family
    /// of comparisons, 0.05/m (the strictest step of Holm's method).
    pub alpha: Num,
    /// The power it is sized for.
    pub power: Num,
    /// Seeds per variant that reach that power (null: more than can be run).
    pub seeds_per_variant: Option<usize>,
    /// The power the seeds run here have for that difference, when it is the
    /// config's `detect_difference` (null when sized to the observed
    /// difference: the "observed power" is only a restatement of the p value).
    pub power_now: Num,
    /// Seeds per variant the spreads come from (the smaller group).
    pub spread_from: usize,
    /// A caution when the spreads come from fewer than 5 seeds.
    pub caution: Option<String>,
    /// The advice in words.
    pub text: String,
}

/// Power the seeds advice is sized for.
pub const ADVICE_POWER: f64 = 0.8;

fn seeds_advice(ya: &[f64], yb: &[f64], detect: Option<f64>, family: usize) -> Option<SeedsAdvice> {
    let (sized_to, d) = match detect {
        Some(d) => ("detect_difference", d),
        None => ("observed", (stats::mean(yb) - stats::mean(ya)).abs()),
    };
    if ya.len() < 2 || yb.len() < 2 || !(d > 0.0 && d.is_finite()) {
        return None;
    }
    let (sa, sb) = (stats::sd(ya), stats::sd(yb));
    let alpha = ALPHA / family.max(1) as f64;
    let needed = match stats::seeds_for_power(d, sa, sb, alpha, ADVICE_POWER) {
        Ok(n) => Some(n),
        Err(stats::SeedsError::TooMany { .. }) => None,
        Err(_) => return None,
    };
    let n_now = ya.len().min(yb.len());
    let power_now = if detect.is_some() { stats::welch_power(d, sa, sb, n_now, alpha) } else { f64::NAN };
    let spread_from = n_now;
    let caution = (spread_from < 5).then(|| {
        format!(
            "the spreads come from {spread_from} seeds, so this figure is itself uncertain; run 5 or more \
             pilot seeds before trusting it"
        )
    });
    let level = if family > 1 {
        format!("a two-sided Welch test at {} (0.05 shared over {family} comparisons)", fmt(alpha))
    } else {
        "a two-sided Welch test at 0.05".into()
    };
    let n_text = match needed {
        Some(n) => format!("{n} seeds per variant give"),
        None => format!("more than {} seeds per variant would be needed for", stats::MAX_SEEDS),
    };
    let mut text = format!(
        "if the true difference were {} and the spread as seen here, {n_text} an 80% chance of detecting it \
         with {level}",
        fmt(d)
    );
    if power_now.is_finite() {
        text.push_str(&format!("; the {n_now} seeds run here have a {:.0}% chance", 100.0 * power_now));
    }
    Some(SeedsAdvice {
        difference: Num(d),
        sized_to,
        alpha: Num(alpha),
        power: Num(ADVICE_POWER),
        seeds_per_variant: needed,
        power_now: Num(power_now),
        spread_from,
        caution,
        text,
    })
}

/// A comparison of variant `b` against variant `a` on per-seed values.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Comparison {
    /// Label of the first variant.
    pub a: String,
    /// Label of the second variant.
    pub b: String,
    /// The measure compared (`"evaluation"` or `"training"`).
    pub measure: &'static str,
    /// mean(b) − mean(a).
    pub diff: Num,
    /// Welch's t-test (null with fewer than 2 seeds in a variant or no spread at all).
    pub welch: Option<WelchReport>,
    /// P(B > A).
    pub prob_improvement: ProbImprovement,
    /// Seeds advice (null when it cannot be given).
    pub seeds_advice: Option<SeedsAdvice>,
    /// Warnings that qualify the verdict (failed seeds, the measure).
    pub warnings: Vec<String>,
    /// The verdict in plain words.
    pub verdict: String,
}

/// A number for a verdict: three decimals, or scientific notation.
pub fn fmt(x: f64) -> String {
    if !x.is_finite() {
        return "undefined".into();
    }
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

/// A p value for a verdict, with its relation: "= 0.032", or "< 1e-4".
fn fmt_p(p: f64) -> String {
    if p < 1e-4 {
        "< 1e-4".into()
    } else {
        format!("= {}", fmt(p))
    }
}

/// The pairs to compare: every pair `(a, b)` with `a < b`, or with a
/// reference variant `r`, `(r, v)` for every other `v`.
pub fn pairs(k: usize, reference: Option<usize>) -> Vec<(usize, usize)> {
    match reference {
        Some(r) => (0..k).filter(|&v| v != r).map(|v| (r, v)).collect(),
        None => (0..k).flat_map(|a| (a + 1..k).map(move |b| (a, b))).collect(),
    }
}

/// "k of n seeds of X failed (reason)" for a variant with failed seeds.
fn failure_note(e: &Entry<'_>) -> Option<String> {
    let (_, first) = e.failed.first()?;
    let more = if e.failed.len() > 1 { format!("; the first: {first}") } else { format!(": {first}") };
    Some(format!("{} of {} seeds of {} failed and are left out{more}", e.failed.len(), e.seeds, e.label))
}

/// Compares the variants of `entries` over `pairs` on the measure named
/// `measure`. `detect` is the difference the seeds advice is sized for
/// (default: each pair's observed one).
pub fn compare_all(
    entries: &[Entry<'_>],
    pairs: &[(usize, usize)],
    measure: &'static str,
    detect: Option<f64>,
) -> Vec<Comparison> {
    let tests: Vec<Option<stats::Welch>> = pairs
        .iter()
        .map(|&(a, b)| {
            let (ya, yb) = (&entries[a].values, &entries[b].values);
            if ya.len() >= 2 && yb.len() >= 2 {
                stats::welch(yb, ya)
            } else {
                None
            }
        })
        .collect();
    let raw: Vec<f64> = tests.iter().map(|w| w.as_ref().map_or(f64::NAN, |w| w.p)).collect();
    let adjusted = stats::holm(&raw);
    let family = raw.iter().filter(|p| p.is_finite()).count();
    pairs
        .iter()
        .zip(&tests)
        .zip(&adjusted)
        .map(|((&(a, b), welch), &p_holm)| {
            let (ea, eb) = (&entries[a], &entries[b]);
            let (ya, yb) = (&ea.values, &eb.values);
            let enough = ya.len() >= 2 && yb.len() >= 2;
            let diff = if ya.is_empty() || yb.is_empty() { f64::NAN } else { stats::mean(yb) - stats::mean(ya) };
            let pi = if ya.is_empty() || yb.is_empty() { f64::NAN } else { stats::prob_improvement(yb, ya) };
            let pi_ci = stats::prob_improvement_interval(yb, ya, 0.95);
            let seeds_advice = seeds_advice(ya, yb, detect, pairs.len());
            let mut warnings: Vec<String> = [failure_note(ea), failure_note(eb)].into_iter().flatten().collect();
            if measure == "training" && (ea.explores || eb.explores) {
                let who = match (ea.explores, eb.explores) {
                    (true, true) => "both are such learners".to_string(),
                    (true, false) => format!("{} is one", ea.label),
                    _ => format!("{} is one", eb.label),
                };
                warnings.push(format!(
                    "measured on training returns, which for an off-policy or deterministic learner are its \
                     exploring behaviour's, not its learned policy's ({who}); turn on evaluation episodes to judge \
                     the learned policies"
                ));
            }
            let (na, nb) = (ya.len(), yb.len());
            let seeds = if na == nb { format!("{na} seeds each") } else { format!("{na} and {nb} seeds") };
            let (la, lb) = (ea.label, eb.label);
            let tests = |p: f64, q: f64| {
                if family > 1 {
                    format!("Welch p {}, Holm-adjusted over {family} comparisons p {}", fmt_p(p), fmt_p(q))
                } else {
                    format!("Welch p {}", fmt_p(p))
                }
            };
            let main = if !enough {
                format!("not enough seeds to compare {lb} with {la}: each needs at least 2 seeds with a value")
            } else if let Some(w) = welch {
                let ci = w.ci95;
                if p_holm < ALPHA {
                    let (hi, lo) = if diff > 0.0 { (lb, la) } else { (la, lb) };
                    format!(
                        "{hi} ends higher than {lo} by {} (95% CI of {lb} − {la}: {} to {}; {}; {seeds})",
                        fmt(diff.abs()),
                        fmt(ci.0),
                        fmt(ci.1),
                        tests(w.p, p_holm)
                    )
                } else if w.p < ALPHA {
                    format!(
                        "no difference that survives the correction for {family} comparisons ({lb} − {la} = {}, \
                         95% CI {} to {} for this comparison alone; {}; {seeds})",
                        fmt(diff),
                        fmt(ci.0),
                        fmt(ci.1),
                        tests(w.p, p_holm)
                    )
                } else {
                    format!(
                        "no detectable difference at {seeds} ({lb} − {la} = {}, 95% CI {} to {}; {})",
                        fmt(diff),
                        fmt(ci.0),
                        fmt(ci.1),
                        tests(w.p, p_holm)
                    )
                }
            } else if diff == 0.0 {
                format!("{lb} and {la} gave the same value in every seed ({seeds})")
            } else {
                format!("{lb} − {la} = {} with no spread across seeds ({seeds}): no test applies", fmt(diff))
            };
            let verdict = if warnings.is_empty() { main } else { format!("{}. {main}", warnings.join(". ")) };
            Comparison {
                a: la.to_string(),
                b: lb.to_string(),
                measure,
                diff: Num(diff),
                welch: welch.as_ref().map(|w| WelchReport {
                    t: Num(w.t),
                    df: Num(w.df),
                    p: Num(w.p),
                    p_holm: Num(p_holm),
                    ci95: pair(Some(w.ci95)),
                }),
                prob_improvement: ProbImprovement {
                    value: Num(pi),
                    ci95: pair(pi_ci),
                    method: "Newcombe (2006) method 5",
                },
                seeds_advice,
                warnings,
                verdict,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn entry<'a>(label: &'a str, values: &[f64]) -> Entry<'a> {
        Entry { label, values: values.to_vec(), seeds: values.len(), failed: Vec::new(), explores: false }
    }

    #[test]
    fn clear_difference_is_called_and_noise_is_not() {
        let a = entry("A", &[10.0, 11.0, 9.5, 10.2, 10.8, 9.9]);
        let b = entry("B", &[14.0, 15.1, 13.7, 14.4, 15.0, 14.2]);
        let c = &compare_all(&[a, b], &[(0, 1)], "training", None)[0];
        assert!(c.verdict.starts_with("B ends higher than A by 4.167"), "{}", c.verdict);
        assert_eq!(c.prob_improvement.value, Num(1.0));
        let n = entry("A", &[10.0, 12.0, 9.0, 11.0]);
        let m = entry("B", &[11.0, 10.0, 12.5, 9.5]);
        let c = &compare_all(&[n, m.clone()], &[(0, 1)], "training", None)[0];
        assert!(c.verdict.starts_with("no detectable difference at 4 seeds each"), "{}", c.verdict);
        let one = entry("A", &[1.0]);
        let c = &compare_all(&[one, m], &[(0, 1)], "training", None)[0];
        assert!(c.verdict.starts_with("not enough seeds"));
        assert!(c.welch.is_none());
    }

    #[test]
    fn welch_numbers_pass_through() {
        // R's t.test(extra ~ group, data = sleep) (Student 1908 data): t = −1.8608,
        // df = 17.776, p = 0.07939 for group 1 minus group 2; here B = group 1.
        let g1 = entry("g1", &[0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0]);
        let g2 = entry("g2", &[1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4]);
        let c = &compare_all(&[g2, g1], &[(0, 1)], "training", None)[0];
        let w = c.welch.as_ref().unwrap();
        assert!(
            (w.t.0 + 1.8608).abs() < 5e-5 && (w.df.0 - 17.776).abs() < 5e-4 && (w.p.0 - 0.07939).abs() < 5e-6
        );
        assert_eq!(w.p_holm, w.p);
        assert!(
            c.verdict.starts_with("no detectable difference at 10 seeds each (g1 − g2 = -1.58"),
            "{}",
            c.verdict
        );
    }
}
