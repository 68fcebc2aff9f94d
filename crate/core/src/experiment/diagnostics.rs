//! The learners' step diagnostics as curves over seeds, and the warnings
//! they give.
//!
//! A job keeps per curve bin the sums of its step diagnostics
//! ([`DiagSums`]). A seed's value of a diagnostic in a bin is:
//! - `td_abs`: mean |TD error| per step (not for REINFORCE, which has no
//!   TD error);
//! - `entropy` (discrete actions): mean policy entropy per step, nats;
//! - `sd` (continuous actions): the Gaussian's standard deviation per
//!   action component, `exp(H̄ / d − ½ log(2πe))` from the bin's mean
//!   pre-squash entropy `H̄` over `d` components (a geometric mean of σ over
//!   the bin's steps; for the deterministic learner, its exploration noise);
//! - `actor_norm`, `critic_norm`: mean norm of the update direction per
//!   step (steps without an update count as 0; REINFORCE's critic only
//!   with a learned baseline);
//! - `ess_fraction` (off-policy): `(Σρ)² / (n Σρ²)` over the bin's `n`
//!   weighted steps (Kish's effective sample size as a fraction; Kong 1992);
//! - `capped_share` (off-policy): the share of the bin's weights cut at the
//!   cap.
//!
//! Across seeds each bin gives the mean and a pointwise Student-t 95%
//! interval, like the return curves (failed seeds count up to where they
//! failed: the diagnostics are there to show why).
//!
//! Warnings ([`warnings`]), each with its numbers: the entropy (or σ) of
//! the mean curve falls below 5% of its first-bin value within the first
//! tenth of the budget; the off-policy ESS fraction stays under 0.1 in
//! every bin of the final share; an update norm's mean over the final
//! share exceeds 100× its median over the first tenth. Thresholds are
//! common practice, no source.

use serde::Serialize;

use crate::experiment::runner::DiagSums;
use crate::learn::Family;
use crate::report::{nums, Num};

/// One diagnostic.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Metric {
    /// Mean |TD error| per step.
    TdAbs,
    /// Mean entropy of a softmax policy.
    Entropy,
    /// The Gaussian's standard deviation.
    Sd,
    /// Mean actor update norm.
    ActorNorm,
    /// Mean critic update norm.
    CriticNorm,
    /// Effective sample size fraction of the importance weights.
    EssFraction,
    /// Share of importance weights cut at the cap.
    CappedShare,
}

impl Metric {
    /// Every diagnostic, in report order.
    pub const ALL: [Metric; 7] = [
        Metric::TdAbs,
        Metric::Entropy,
        Metric::Sd,
        Metric::ActorNorm,
        Metric::CriticNorm,
        Metric::EssFraction,
        Metric::CappedShare,
    ];

    /// The name in summaries and the tidy CSV.
    pub fn name(self) -> &'static str {
        match self {
            Metric::TdAbs => "td_abs",
            Metric::Entropy => "entropy",
            Metric::Sd => "sd",
            Metric::ActorNorm => "actor_norm",
            Metric::CriticNorm => "critic_norm",
            Metric::EssFraction => "ess_fraction",
            Metric::CappedShare => "capped_share",
        }
    }

    /// The seed's value in a bin (NaN when the bin has no step of it).
    /// `dims` is the number of continuous action components (0: discrete).
    pub fn value(self, d: &DiagSums, dims: usize) -> f64 {
        let per_step = |x: f64| if d.count == 0 { f64::NAN } else { x / d.count as f64 };
        match self {
            Metric::TdAbs => per_step(d.abs_td),
            Metric::Entropy => per_step(d.entropy),
            Metric::Sd => {
                let h = per_step(d.entropy) / dims.max(1) as f64;
                libm::exp(h - 0.5 * libm::log(2.0 * core::f64::consts::PI * core::f64::consts::E))
            }
            Metric::ActorNorm => per_step(d.actor_norm),
            Metric::CriticNorm => per_step(d.critic_norm),
            Metric::EssFraction => d.ess_fraction().unwrap_or(f64::NAN),
            Metric::CappedShare => {
                if d.weights == 0 {
                    f64::NAN
                } else {
                    d.weight_cut as f64 / d.weights as f64
                }
            }
        }
    }

    /// Whether a variant of `family` has this diagnostic; `dims` as in
    /// [`Metric::value`]; `critic` whether any of its bins has a critic
    /// update (REINFORCE with a learned baseline).
    pub fn applies(self, family: Family, dims: usize, critic: bool) -> bool {
        match self {
            Metric::TdAbs => family != Family::Reinforce,
            Metric::Entropy => dims == 0,
            Metric::Sd => dims > 0,
            Metric::ActorNorm => true,
            Metric::CriticNorm => family != Family::Reinforce || critic,
            Metric::EssFraction | Metric::CappedShare => family == Family::OffPolicy,
        }
    }
}

/// A diagnostic's curve over seeds: per bin its upper step edge, the mean
/// and a pointwise Student-t 95% interval (null under 3 seeds).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct DiagCurve {
    /// Upper step edge of each bin.
    pub step: Vec<u64>,
    /// Mean over the seeds with a value.
    pub mean: Vec<Num>,
    /// Lower end of the interval.
    pub lo: Vec<Num>,
    /// Upper end of the interval.
    pub hi: Vec<Num>,
}

impl DiagCurve {
    /// The curve of per-bin `step`, `mean`, `lo` and `hi` (equal lengths).
    pub fn of(step: Vec<u64>, mean: &[f64], lo: &[f64], hi: &[f64]) -> Self {
        DiagCurve { step, mean: nums(mean), lo: nums(lo), hi: nums(hi) }
    }
}

/// A variant's diagnostics (a field is absent where the learner has no
/// such quantity).
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct Diagnostics {
    /// Mean |TD error|.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub td_abs: Option<DiagCurve>,
    /// Softmax policy entropy.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub entropy: Option<DiagCurve>,
    /// Gaussian standard deviation.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sd: Option<DiagCurve>,
    /// Actor update norm.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub actor_norm: Option<DiagCurve>,
    /// Critic update norm.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub critic_norm: Option<DiagCurve>,
    /// Effective sample size fraction.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ess_fraction: Option<DiagCurve>,
    /// Share of capped weights.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub capped_share: Option<DiagCurve>,
}

impl Diagnostics {
    /// Sets the curve of a metric.
    pub fn set(&mut self, m: Metric, c: DiagCurve) {
        let slot = match m {
            Metric::TdAbs => &mut self.td_abs,
            Metric::Entropy => &mut self.entropy,
            Metric::Sd => &mut self.sd,
            Metric::ActorNorm => &mut self.actor_norm,
            Metric::CriticNorm => &mut self.critic_norm,
            Metric::EssFraction => &mut self.ess_fraction,
            Metric::CappedShare => &mut self.capped_share,
        };
        *slot = Some(c);
    }
}

/// Where the budget's shares fall on the bins: `early` the bins that start
/// within the first tenth of the budget, `late` those that end in the final
/// share (`final_fraction`).
pub fn shares(edges: &[u64], steps: u64, final_fraction: f64) -> (Vec<usize>, Vec<usize>) {
    let tenth = steps as f64 / 10.0;
    let late_from = steps as f64 * (1.0 - final_fraction);
    let early = (0..edges.len()).filter(|&b| b == 0 || (edges[b - 1] as f64) < tenth).collect();
    let late = (0..edges.len()).filter(|&b| edges[b] as f64 > late_from).collect();
    (early, late)
}

fn fmt(x: f64) -> String {
    if x != 0.0 && (x.abs() < 1e-3 || x.abs() >= 1e5) {
        format!("{x:.3e}")
    } else {
        format!("{:.4}", x).trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// The warnings of one variant's mean diagnostic curves `(metric, mean per
/// bin)`; `edges` the bins' upper steps.
pub fn warnings(
    label: &str,
    curves: &[(Metric, Vec<f64>)],
    edges: &[u64],
    steps: u64,
    final_fraction: f64,
) -> Vec<String> {
    let (early, late) = shares(edges, steps, final_fraction);
    let mut out = Vec::new();
    for (m, mean) in curves {
        let at = |bins: &[usize]| -> Vec<(usize, f64)> {
            bins.iter().map(|&b| (b, mean[b])).filter(|(_, x)| x.is_finite()).collect()
        };
        match m {
            Metric::Entropy | Metric::Sd => {
                let first = mean.first().copied().unwrap_or(f64::NAN);
                if !(first.is_finite() && first > 0.0) {
                    continue;
                }
                let what = if *m == Metric::Entropy { "policy entropy" } else { "Gaussian σ" };
                if let Some((b, x)) = at(&early).into_iter().find(|&(_, x)| x < 0.05 * first) {
                    out.push(format!(
                        "{label}: {what} fell to {} by step {} ({}% of its first-bin value {}) within the first tenth of the budget: the policy stopped exploring early",
                        fmt(x),
                        edges[b],
                        fmt(100.0 * x / first),
                        fmt(first)
                    ));
                }
            }
            Metric::EssFraction => {
                let xs = at(&late);
                if !xs.is_empty() && xs.len() == late.len() && xs.iter().all(|&(_, x)| x < 0.1) {
                    let max = xs.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
                    let avg = xs.iter().map(|p| p.1).sum::<f64>() / xs.len() as f64;
                    out.push(format!(
                        "{label}: the importance weights' effective sample size fraction stayed under 0.1 over the final share (mean {}, at most {}): each update rests on a few samples",
                        fmt(avg),
                        fmt(max)
                    ));
                }
            }
            Metric::ActorNorm | Metric::CriticNorm => {
                let mut first: Vec<f64> = at(&early).into_iter().map(|p| p.1).collect();
                let last: Vec<f64> = at(&late).into_iter().map(|p| p.1).collect();
                if first.is_empty() || last.is_empty() {
                    continue;
                }
                first.sort_by(f64::total_cmp);
                let med = crate::stats::median(&first);
                let avg = last.iter().sum::<f64>() / last.len() as f64;
                if med > 0.0 && avg > 100.0 * med {
                    let who = if *m == Metric::ActorNorm { "actor" } else { "critic" };
                    out.push(format!(
                        "{label}: the {who} update norm's mean over the final share, {}, is {}× its median over the first tenth, {}: the updates grew on the way (divergence?)",
                        fmt(avg),
                        fmt(avg / med),
                        fmt(med)
                    ));
                }
            }
            _ => {}
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ess_fraction_is_kish_and_sd_inverts_the_gaussian_entropy() {
        // Kish (1965) effective sample size (Σw)²/Σw²: weights 1, 1, 2, 4 give
        // 64/22 of 4 samples.
        let mut d =
            DiagSums { count: 4, weights: 4, weight_sum: 8.0, weight_sq: 22.0, ..DiagSums::default() };
        d.weight_cut = 1;
        assert!((Metric::EssFraction.value(&d, 0) - 64.0 / 22.0 / 4.0).abs() < 1e-15);
        assert_eq!(Metric::CappedShare.value(&d, 0), 0.25);
        // Gaussian entropy ½ log(2πe σ²) per component (Cover & Thomas 2006, §8.1):
        // two components with σ = 0.3 each.
        let h = 2.0 * 0.5 * (2.0 * std::f64::consts::PI * std::f64::consts::E * 0.09).ln();
        let d = DiagSums { count: 2, entropy: 2.0 * h, ..DiagSums::default() };
        assert!((Metric::Sd.value(&d, 2) - 0.3).abs() < 1e-12);
    }

    #[test]
    fn each_warning_fires_on_its_pattern_and_not_on_a_flat_curve() {
        let edges: Vec<u64> = (1..=20).map(|b| b * 50).collect();
        let flat = vec![1.0; 20];
        let quiet = warnings(
            "v",
            &[
                (Metric::Entropy, flat.clone()),
                (Metric::ActorNorm, flat.clone()),
                (Metric::EssFraction, vec![0.5; 20]),
            ],
            &edges,
            1000,
            0.1,
        );
        assert!(quiet.is_empty(), "{quiet:?}");
        let mut collapse = flat.clone();
        collapse[1] = 0.04;
        let w = warnings("v", &[(Metric::Entropy, collapse.clone())], &edges, 1000, 0.1);
        assert!(w.len() == 1 && w[0].contains("fell to 0.04 by step 100"), "{w:?}");
        // The same fall after the first tenth is not premature.
        let mut late = flat.clone();
        late[5] = 0.04;
        assert!(warnings("v", &[(Metric::Entropy, late)], &edges, 1000, 0.1).is_empty());
        let mut ess = vec![0.5; 20];
        ess[18] = 0.05;
        ess[19] = 0.08;
        let w = warnings("v", &[(Metric::EssFraction, ess.clone())], &edges, 1000, 0.1);
        assert!(w.len() == 1 && w[0].contains("mean 0.065, at most 0.08"), "{w:?}");
        ess[18] = 0.2;
        assert!(warnings("v", &[(Metric::EssFraction, ess)], &edges, 1000, 0.1).is_empty());
        let mut grow = flat;
        grow[18] = 150.0;
        grow[19] = 250.0;
        let w = warnings("v", &[(Metric::CriticNorm, grow)], &edges, 1000, 0.1);
        assert!(w.len() == 1 && w[0].contains("200, is 200× its median over the first tenth, 1"), "{w:?}");
    }
}
