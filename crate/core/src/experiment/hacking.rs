//! The reward-hacking signal of a run.
//!
//! A reward change can teach the learner to collect reward the task does not
//! pay (a progress bonus ridden in circles, Randløv & Alstrøm 1998, as
//! retold by Ng, Harada & Russell 1999). Without an exact model the run
//! itself is the evidence: per seed, [`trend`] compares the mean base and
//! shaped *training* returns of the episodes in the first and the last
//! `final_fraction` of the budget, and flags the seed when the shaped return
//! rose while the base return fell or rose by less than half as much. The
//! variant's [`Hacking`] report flags it when more than half of its seeds
//! are flagged. Evaluation episodes have no shaped return, so this signal
//! always reads the training measure, and the report says so.

use serde::Serialize;

use crate::experiment::runner::EpisodeRecord;
use crate::report::Num;

/// How returns moved over one run.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Trend {
    /// Mean base return at the end minus at the start.
    pub base_change: f64,
    /// Mean shaped return at the end minus at the start.
    pub shaped_change: f64,
    /// The shaped return rose (by more than 5% of its size, at least 0.05)
    /// while the base return fell, or rose by less than half as much: most
    /// of the gain is reward the task does not pay, a reward-hacking signal.
    pub flagged: bool,
}

/// The trend of one run: the mean returns of the episodes that ended in the
/// first `fraction` of the `steps` budget (or the first episode) against
/// those that ended in the last `fraction` (or the last episode). `None`
/// with fewer than two episodes.
pub fn trend(episodes: &[EpisodeRecord], steps: u64, fraction: f64) -> Option<Trend> {
    if episodes.len() < 2 {
        return None;
    }
    let early_to = steps as f64 * fraction;
    let late_from = steps as f64 * (1.0 - fraction);
    let mean = |eps: &[&EpisodeRecord]| -> (f64, f64) {
        let n = eps.len() as f64;
        (
            eps.iter().map(|e| e.base_return).sum::<f64>() / n,
            eps.iter().map(|e| e.shaped_return).sum::<f64>() / n,
        )
    };
    let mut early: Vec<&EpisodeRecord> = episodes.iter().filter(|e| e.end_step as f64 <= early_to).collect();
    if early.is_empty() {
        early.push(&episodes[0]);
    }
    let mut late: Vec<&EpisodeRecord> = episodes.iter().filter(|e| e.end_step as f64 > late_from).collect();
    if late.is_empty() {
        late.push(episodes.last().expect("two or more episodes"));
    }
    let (b0, s0) = mean(&early);
    let (b1, s1) = mean(&late);
    let (db, ds) = (b1 - b0, s1 - s0);
    let rose = ds > 0.05 * s0.abs().max(s1.abs()).max(1.0);
    Some(Trend { base_change: db, shaped_change: ds, flagged: rose && db < 0.5 * ds })
}

/// The hacking report of a variant (`variants[].hacking` in the summary).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Hacking {
    /// More than half of the seeds with a trend are flagged.
    pub flag: bool,
    /// Seeds flagged.
    pub seeds_flagged: usize,
    /// Seeds with a trend (two or more episodes; failed seeds left out).
    pub seeds: usize,
    /// Mean change of the base training return, end minus start.
    pub base_change: Num,
    /// Mean change of the shaped training return, end minus start.
    pub shaped_change: Num,
    /// Always `"training"`: evaluation episodes have no shaped return.
    pub measure: &'static str,
}

impl Hacking {
    /// The report over the seeds' trends.
    pub fn of(trends: &[Option<Trend>]) -> Self {
        let ts: Vec<&Trend> = trends.iter().flatten().collect();
        let flagged = ts.iter().filter(|t| t.flagged).count();
        let n = ts.len();
        let mean = |f: fn(&Trend) -> f64| {
            Num(if n == 0 { f64::NAN } else { ts.iter().map(|t| f(t)).sum::<f64>() / n as f64 })
        };
        Hacking {
            flag: n > 0 && 2 * flagged > n,
            seeds_flagged: flagged,
            seeds: n,
            base_change: mean(|t| t.base_change),
            shaped_change: mean(|t| t.shaped_change),
            measure: "training",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ep(end_step: u64, base: f64, shaped: f64) -> EpisodeRecord {
        EpisodeRecord { end_step, base_return: base, shaped_return: shaped, length: 10, truncated: false }
    }

    #[test]
    fn a_shaped_gain_the_task_does_not_pay_is_flagged() {
        // Common practice, no source: the rule as documented above.
        let looping = [ep(5, -20.0, -20.0), ep(95, -25.0, 40.0)];
        let t = trend(&looping, 100, 0.1).unwrap();
        assert!(t.flagged && t.base_change == -5.0 && t.shaped_change == 60.0);
        let honest = [ep(5, -20.0, -18.0), ep(95, -10.0, -8.0)];
        assert!(!trend(&honest, 100, 0.1).unwrap().flagged);
        assert!(trend(&honest[..1], 100, 0.1).is_none());
        let h = Hacking::of(&[trend(&looping, 100, 0.1), trend(&honest, 100, 0.1), None]);
        assert_eq!((h.flag, h.seeds_flagged, h.seeds), (false, 1, 2));
        assert_eq!(h.measure, "training");
    }
}
