//! Studies: sensitivity sweeps and two-stage tuning.
//!
//! A variant may carry a `sweep` over one or two of its settings: a list of
//! values, or `{"log2": [from, to], "count": n}` for n values evenly spaced
//! in the exponent from 2^from to 2^to. A setting is a learner setting named
//! as in `base` (nested ones dotted: `optimizer.beta1`) or
//! `reward.constants.NAME`. The grid of a variant is every combination of
//! its axes' values (the first axis varies slowest); a variant without a
//! sweep has one point, its own settings.
//!
//! Careful comparisons across settings tune each variant and report it on
//! fresh runs (Patterson, Neumann, White & White 2024, JMLR 25, Section 3;
//! Jordan et al. 2020): the best of H noisy means overestimates the true
//! best (maximization bias), more so as H grows. So a study runs in two
//! stages. Seed indices `0 … tuning_seeds − 1` run every grid point of
//! every variant; each variant's point with the best tuning criterion
//! (`choose_by`: the area under the scored measure's curve, or its final
//! value) is chosen ([`choose`]); then the chosen point of every variant
//! runs on the fresh seed indices `tuning_seeds … tuning_seeds + seeds − 1`,
//! and only those runs enter the scores, comparisons and verdicts. Beside
//! each chosen point the summary gives its tuning score, its fresh score and
//! a bootstrap of the maximum ([`max_bootstrap`]: resample every point's
//! tuning seeds, take the best mean, repeat), and warns when the best point
//! sits on the edge of its grid or when variants got grids of different
//! sizes.

use serde::{Deserialize, Serialize};
use serde_json::Value;

use crate::rng::Stream;
use crate::stats;

/// Most swept settings per variant.
pub const MAX_AXES: usize = 2;
/// Most values per swept setting.
pub const MAX_VALUES: usize = 64;
/// Most grid points per variant.
pub const MAX_POINTS: usize = 256;
/// Most jobs (tuning and fresh) in one study.
pub const MAX_STUDY_JOBS: usize = 20_000;
/// Resamples of the bootstrap of the maximum.
pub const MAX_RESAMPLES: usize = 2000;

/// What a study chooses each variant's point by.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ChooseBy {
    /// The area under the scored measure's curve (rewards learning early).
    #[default]
    Auc,
    /// The scored measure's final value.
    Final,
}

impl ChooseBy {
    /// The config name.
    pub fn name(self) -> &'static str {
        match self {
            ChooseBy::Auc => "auc",
            ChooseBy::Final => "final",
        }
    }
}

/// One swept setting of a variant.
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    /// The setting's path (`actor_step`, `optimizer.beta1`, `reward.constants.k`).
    pub path: String,
    /// Its values, in the order given (or increasing, for a log2 range).
    pub values: Vec<f64>,
    /// The values were given as a log2 range (plot on a log axis).
    pub log: bool,
}

/// A problem in a sweep: the path below `variants[i].sweep` (`actor_step`,
/// `actor_step.count`) and what is wrong.
pub type SweepProblem = crate::problem::Problem;

/// The values `2^(from + k (to − from)/(n − 1))`, k = 0 … n − 1 (integer
/// exponents give exact powers of two).
pub fn log2_values(from: f64, to: f64, count: usize) -> Vec<f64> {
    if count == 1 {
        return vec![libm::exp2(from)];
    }
    (0..count)
        .map(|k| {
            let e = from + (to - from) * k as f64 / (count - 1) as f64;
            libm::exp2(e)
        })
        .collect()
}

/// Reads a `sweep` object into its axes (values expanded), or the problems
/// found, each naming its field within the sweep.
pub fn parse_sweep(sweep: &Value) -> Result<Vec<Axis>, Vec<SweepProblem>> {
    let mut problems = Vec::new();
    let mut bad = |field: &str, message: String| problems.push(SweepProblem { path: field.into(), message });
    let Some(obj) = sweep.as_object() else {
        return Err(vec![SweepProblem {
            path: String::new(),
            message:
                "must be an object {SETTING: [values…]} or {SETTING: {\"log2\": [from, to], \"count\": n}}"
                    .into(),
        }]);
    };
    if obj.is_empty() || obj.len() > MAX_AXES {
        bad("", format!("sweeps 1 or {MAX_AXES} settings, got {}", obj.len()));
    }
    let mut axes = Vec::new();
    for (path, spec) in obj {
        let valid_path = !path.is_empty()
            && path
                .split('.')
                .all(|p| !p.is_empty() && p.chars().all(|c| c.is_ascii_alphanumeric() || c == '_'));
        if !valid_path {
            bad(path, "is not a setting path (names of letters, digits and _, joined by dots)".into());
            continue;
        }
        let axis = match spec {
            Value::Array(list) => {
                let values: Vec<Option<f64>> = list.iter().map(Value::as_f64).collect();
                if list.is_empty() || list.len() > MAX_VALUES {
                    bad(path, format!("needs 1 to {MAX_VALUES} values, got {}", list.len()));
                    continue;
                }
                if let Some(k) = values.iter().position(|v| v.is_none_or(|x| !x.is_finite())) {
                    bad(&format!("{path}[{k}]"), format!("must be a finite number, got {}", list[k]));
                    continue;
                }
                let values: Vec<f64> = values.into_iter().flatten().collect();
                if let Some(k) = (1..values.len()).find(|&k| values[..k].contains(&values[k])) {
                    bad(&format!("{path}[{k}]"), format!("{} is listed twice", values[k]));
                    continue;
                }
                Axis { path: path.clone(), values, log: false }
            }
            Value::Object(range) => {
                let unknown: Vec<&String> = range.keys().filter(|k| *k != "log2" && *k != "count").collect();
                if let Some(k) = unknown.first() {
                    bad(&format!("{path}.{k}"), "unknown field; a range has `log2` and `count`".into());
                    continue;
                }
                let ends = range.get("log2").and_then(Value::as_array).and_then(|a| {
                    (a.len() == 2).then(|| (a[0].as_f64(), a[1].as_f64())).and_then(|(x, y)| Some((x?, y?)))
                });
                let Some((from, to)) = ends
                    .filter(|(x, y)| x.is_finite() && y.is_finite() && x.abs() <= 64.0 && y.abs() <= 64.0)
                else {
                    bad(&format!("{path}.log2"), "must be [from, to], two exponents in [−64, 64]".into());
                    continue;
                };
                let count = range.get("count").and_then(Value::as_u64);
                let Some(count) = count.filter(|&n| (1..=MAX_VALUES as u64).contains(&n)) else {
                    bad(&format!("{path}.count"), format!("must be a whole number in [1, {MAX_VALUES}]"));
                    continue;
                };
                if count == 1 && from != to {
                    bad(&format!("{path}.count"), "1 value needs from = to".into());
                    continue;
                }
                if count > 1 && from == to {
                    bad(&format!("{path}.log2"), format!("from = to gives one value, not {count}"));
                    continue;
                }
                Axis { path: path.clone(), values: log2_values(from, to, count as usize), log: true }
            }
            other => {
                bad(path, format!("must be a list of values or a log2 range, got {other}"));
                continue;
            }
        };
        axes.push(axis);
    }
    let points: usize = axes.iter().map(|a| a.values.len()).product();
    if points > MAX_POINTS {
        bad("", format!("makes {points} grid points; at most {MAX_POINTS} per variant"));
    }
    if problems.is_empty() {
        Ok(axes)
    } else {
        Err(problems)
    }
}

/// The grid points of some axes: each point's value index along every axis,
/// the first axis varying slowest. No axes give one point with no values.
pub fn grid_indices(axes: &[Axis]) -> Vec<Vec<usize>> {
    let mut out = vec![Vec::new()];
    for a in axes {
        out = out
            .into_iter()
            .flat_map(|p| (0..a.values.len()).map(move |k| [p.clone(), vec![k]].concat()))
            .collect();
    }
    out
}

/// A point's criterion over its tuning seeds, as the choice sees it.
#[derive(Clone, Debug, PartialEq)]
pub struct PointScores {
    /// The criterion of each tuning seed that has one (finite).
    pub values: Vec<f64>,
    /// Tuning seeds that failed or have no value.
    pub lost: usize,
}

/// The chosen point: among the points whose every tuning seed has a value
/// (when none has, the points that lost fewest seeds), the one with the
/// highest mean criterion; ties go to the earlier point. `None` when no
/// point has a value yet.
pub fn choose(points: &[PointScores]) -> Option<usize> {
    let fewest = points.iter().filter(|p| !p.values.is_empty()).map(|p| p.lost).min()?;
    let mut best: Option<(usize, f64)> = None;
    for (i, p) in points.iter().enumerate() {
        if p.values.is_empty() || p.lost != fewest {
            continue;
        }
        let m = stats::mean(&p.values);
        if best.is_none_or(|(_, b)| m > b) {
            best = Some((i, m));
        }
    }
    best.map(|(i, _)| i)
}

/// The bootstrap of the maximum: resample each point's tuning values with
/// replacement, take the best of the points' means, `resamples` times;
/// returns the mean of those maxima and their 2.5% and 97.5% quantiles. It
/// estimates what tuning on these seeds is worth, with its own upward bias
/// shown rather than hidden. `None` when no point has values.
pub fn max_bootstrap(points: &[Vec<f64>], resamples: usize, rng: &mut Stream) -> Option<(f64, (f64, f64))> {
    if points.iter().all(|p| p.is_empty()) || resamples == 0 {
        return None;
    }
    let mut maxima = Vec::with_capacity(resamples);
    for _ in 0..resamples {
        let mut best = f64::NEG_INFINITY;
        for p in points.iter().filter(|p| !p.is_empty()) {
            let mut sum = 0.0;
            for _ in 0..p.len() {
                sum += p[rng.below(p.len())];
            }
            best = best.max(sum / p.len() as f64);
        }
        maxima.push(best);
    }
    let mean = stats::mean(&maxima);
    maxima.sort_by(f64::total_cmp);
    Some((mean, (stats::quantile_sorted(&maxima, 0.025), stats::quantile_sorted(&maxima, 0.975))))
}

/// The edge warning of a chosen point: on every axis with at least 2 values
/// where the chosen value is the smallest or the largest tried, "widen the
/// range" (the best may lie beyond it).
pub fn edge_warning(axes: &[Axis], chosen: &[usize]) -> Option<String> {
    let edges: Vec<String> = axes
        .iter()
        .zip(chosen)
        .filter_map(|(a, &k)| {
            let v = *a.values.get(k)?;
            let lo = a.values.iter().copied().fold(f64::INFINITY, f64::min);
            let hi = a.values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let end = if a.values.len() < 2 {
                return None;
            } else if v == lo {
                "smallest"
            } else if v == hi {
                "largest"
            } else {
                return None;
            };
            Some(format!("{} = {} is the {end} value tried", a.path, crate::experiment::compare::fmt(v)))
        })
        .collect();
    (!edges.is_empty()).then(|| {
        format!(
            "the best point is on the edge of the grid ({}): widen the range to see whether it is a peak",
            edges.join(", ")
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn sweeps_parse_lists_and_log2_ranges() {
        let axes = parse_sweep(&json!({"actor_step": {"log2": [-6, -1], "count": 6}, "lambda": [0.5, 0.9]}))
            .unwrap();
        assert_eq!(axes[0].values, vec![1.0 / 64.0, 1.0 / 32.0, 1.0 / 16.0, 0.125, 0.25, 0.5]);
        assert!(axes[0].log && !axes[1].log);
        assert_eq!(
            grid_indices(&axes),
            vec![
                vec![0, 0],
                vec![0, 1],
                vec![1, 0],
                vec![1, 1],
                vec![2, 0],
                vec![2, 1],
                vec![3, 0],
                vec![3, 1],
                vec![4, 0],
                vec![4, 1],
                vec![5, 0],
                vec![5, 1]
            ]
        );
        assert_eq!(log2_values(-1.0, 1.0, 3), vec![0.5, 1.0, 2.0]);
        assert!((log2_values(0.0, 1.0, 3)[1] - std::f64::consts::SQRT_2).abs() < 1e-15);
        let e = |v: Value| {
            parse_sweep(&v)
                .unwrap_err()
                .iter()
                .map(|p| format!("{}: {}", p.path, p.message))
                .collect::<Vec<_>>()
                .join("; ")
        };
        assert_eq!(e(json!({"actor_step": []})), "actor_step: needs 1 to 64 values, got 0");
        assert_eq!(e(json!({"actor_step": [0.1, "x"]})), "actor_step[1]: must be a finite number, got \"x\"");
        assert_eq!(
            e(json!({"actor_step": {"log2": [-3], "count": 2}})),
            "actor_step.log2: must be [from, to], two exponents in [−64, 64]"
        );
        assert_eq!(
            e(json!({"actor_step": {"log2": [-3, 0], "count": 0}})),
            "actor_step.count: must be a whole number in [1, 64]"
        );
        assert_eq!(
            e(json!({"actor_step": {"log2": [-3, 0], "n": 4}})),
            "actor_step.n: unknown field; a range has `log2` and `count`"
        );
        assert_eq!(e(json!({"a": [1], "b": [1], "c": [1]})), ": sweeps 1 or 2 settings, got 3");
        assert_eq!(
            e(json!({"a b": [1]})),
            "a b: is not a setting path (names of letters, digits and _, joined by dots)"
        );
        assert_eq!(e(json!({"actor_step": [0.1, 0.1]})), "actor_step[1]: 0.1 is listed twice");
    }

    #[test]
    fn the_choice_takes_the_best_mean_among_points_that_kept_their_seeds() {
        // Common practice, no source: argmax of the tuning means; a point whose
        // seeds failed is not preferred over complete points.
        let p = |v: &[f64], lost| PointScores { values: v.to_vec(), lost };
        assert_eq!(choose(&[p(&[1.0, 2.0], 0), p(&[3.0, 4.0], 0), p(&[9.0], 1)]), Some(1));
        assert_eq!(choose(&[p(&[1.0, 2.0], 1), p(&[0.0], 1), p(&[], 2)]), Some(0));
        assert_eq!(choose(&[p(&[1.0], 0), p(&[1.0], 0)]), Some(0), "ties go to the earlier point");
        assert_eq!(choose(&[p(&[], 2)]), None);
    }

    #[test]
    fn edge_warnings_name_the_setting_and_the_end() {
        let axes = parse_sweep(&json!({"actor_step": {"log2": [-4, -1], "count": 4}})).unwrap();
        assert_eq!(
            edge_warning(&axes, &[3]).unwrap(),
            "the best point is on the edge of the grid (actor_step = 0.5 is the largest value tried): widen the range to see whether it is a peak"
        );
        assert!(edge_warning(&axes, &[1]).is_none());
        let one = parse_sweep(&json!({"actor_step": [0.1]})).unwrap();
        assert!(edge_warning(&one, &[0]).is_none(), "a single value has no edge to widen");
    }
}
