//! A finite task written as a table of transitions.
//!
//! A [`TableTaskConfig`] (task kind `"table"`) names the states and actions
//! and lists rows `{from, action, to, probability, reward}`; the
//! probabilities of each non-terminal (state, action) pair sum to 1. It
//! becomes a [`FiniteModel`] run by [`FiniteTask`], so tabular features,
//! exact values, the exact shaping audit and Inspect all work on it. Without
//! `observe` the learner sees the state's index (one variable, `state`) and
//! reward formulas may use the state names as numbers (`state == worn`);
//! with `observe` each state shows its own vector (variables `o1`, `o2`, …)
//! and states with equal vectors look alike. [`rows_from_csv`] reads the
//! rows from CSV text with those column names.

use std::collections::{BTreeMap, HashMap};

use serde::{Deserialize, Serialize};

use crate::problem::Problem;
use crate::reward::compile::{closest, is_identifier};
use crate::task::finite::FiniteTask;
use crate::task::{ActionSpace, FiniteModel, Outcome, StateVar, TaskError, TaskSpec};

/// Most states of a table task.
pub const MAX_STATES: usize = 1000;
/// Most actions.
pub const MAX_ACTIONS: usize = 50;
/// Most rows.
pub const MAX_ROWS: usize = 20_000;
/// Most numbers per observation vector.
pub const MAX_OBSERVE: usize = 32;
/// How far the probabilities of a pair (and the start) may be from 1.
pub const SUM_TOLERANCE: f64 = 1e-9;

/// One row of the table: a possible outcome of taking `action` in `from`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RowConfig {
    /// The state the step starts in.
    pub from: String,
    /// The action taken.
    pub action: String,
    /// The state it leads to.
    pub to: String,
    /// Probability of this outcome, in [0, 1].
    pub probability: f64,
    /// Reward received.
    pub reward: f64,
}

/// Settings of a table task (the `task` object with `"kind": "table"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TableTaskConfig {
    /// State names (1 to 1000, unique).
    pub states: Vec<String>,
    /// Action names (1 to 50, unique).
    pub actions: Vec<String>,
    /// The transitions.
    pub rows: Vec<RowConfig>,
    /// States that end the episode (no rows leave them). Default none.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub terminal_states: Vec<String>,
    /// Start distribution: state name → probability, summing to 1.
    pub start: BTreeMap<String, f64>,
    /// The task never ends (no terminal states); curves show the mean
    /// reward per step over windows of `max_steps`. Default false.
    #[serde(default)]
    pub continuing: bool,
    /// Each state's feature vector (all the same length); states with equal
    /// vectors look the same to the learner. Default: the state index.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub observe: Option<BTreeMap<String, Vec<f64>>>,
    /// The discount learners use unless they set one, in [0, 1]. Default 0.9.
    #[serde(default = "default_discount")]
    pub discount: f64,
    /// Episode length limit, or the report window of a continuing task.
    /// Default 100.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

fn default_discount() -> f64 {
    0.9
}
fn default_max_steps() -> u32 {
    100
}

fn unknown(kind: &str, name: &str, known: &[String]) -> String {
    let near = closest(name, known.iter().map(String::as_str));
    let hint = if near.is_empty() {
        format!("; {kind}s: {}", shorten(known))
    } else {
        format!(" (did you mean {}?)", near.join(", "))
    };
    format!("unknown {kind} `{name}`{hint}")
}

fn shorten(names: &[String]) -> String {
    let mut s = names.iter().take(12).cloned().collect::<Vec<_>>().join(", ");
    if names.len() > 12 {
        s.push_str(&format!(", … ({} in all)", names.len()));
    }
    s
}

fn index_names(
    problems: &mut Vec<Problem>,
    field: &str,
    kind: &str,
    names: &[String],
    max: usize,
) -> HashMap<String, usize> {
    let mut out = HashMap::new();
    if names.is_empty() || names.len() > max {
        problems.push(Problem::new(field, format!("needs 1 to {max} {kind}s, got {}", names.len())));
    }
    for (i, n) in names.iter().enumerate() {
        let path = format!("{field}[{i}]");
        if !is_identifier(n) || n.len() > 40 {
            problems.push(Problem::new(
                path,
                format!(
                    "`{n}` is no valid name: use 1 to 40 letters, digits or `_`, not starting with a digit"
                ),
            ));
        } else if super::formula::RESERVED.contains(&n.as_str()) {
            problems.push(Problem::new(
                path,
                format!("`{n}` is reserved (it already means something in formulas)"),
            ));
        } else if out.insert(n.clone(), i).is_some() {
            problems.push(Problem::new(path, format!("`{n}` is listed twice")));
        }
    }
    out
}

impl TableTaskConfig {
    /// Every problem of the definition, each naming its field.
    pub fn check(&self) -> Vec<Problem> {
        self.build_model().err().unwrap_or_default()
    }

    /// The exact model, or every problem found.
    pub fn build_model(&self) -> Result<FiniteModel, Vec<Problem>> {
        let mut problems = Vec::new();
        let states = index_names(&mut problems, "states", "state", &self.states, MAX_STATES);
        let actions = index_names(&mut problems, "actions", "action", &self.actions, MAX_ACTIONS);
        for a in &self.actions {
            if states.contains_key(a) {
                problems.push(Problem::new("actions", format!("`{a}` names both a state and an action")));
            }
        }
        if !problems.is_empty() {
            return Err(problems);
        }
        let n = self.states.len();
        let k = self.actions.len();
        let mut terminal = vec![false; n];
        for (i, t) in self.terminal_states.iter().enumerate() {
            match states.get(t) {
                Some(&s) => terminal[s] = true,
                None => problems
                    .push(Problem::new(format!("terminal_states[{i}]"), unknown("state", t, &self.states))),
            }
        }
        if self.continuing && !self.terminal_states.is_empty() {
            problems.push(Problem::new(
                "terminal_states",
                "a continuing task has no terminal states; remove them or set continuing to false",
            ));
        }
        if self.rows.len() > MAX_ROWS {
            problems.push(Problem::new("rows", format!("has {} rows; at most {MAX_ROWS}", self.rows.len())));
            return Err(problems);
        }
        let mut outcomes: Vec<Vec<Vec<Outcome>>> = vec![vec![Vec::new(); k]; n];
        for (i, r) in self.rows.iter().enumerate() {
            let path = format!("rows[{i}]");
            let from = states.get(&r.from);
            let action = actions.get(&r.action);
            let to = states.get(&r.to);
            if from.is_none() {
                problems.push(Problem::new(format!("{path}.from"), unknown("state", &r.from, &self.states)));
            }
            if action.is_none() {
                problems.push(Problem::new(
                    format!("{path}.action"),
                    unknown("action", &r.action, &self.actions),
                ));
            }
            if to.is_none() {
                problems.push(Problem::new(format!("{path}.to"), unknown("state", &r.to, &self.states)));
            }
            if !(r.probability.is_finite() && (0.0..=1.0).contains(&r.probability)) {
                problems.push(Problem::new(
                    format!("{path}.probability"),
                    format!("must be in [0, 1], got {}", r.probability),
                ));
            }
            if !r.reward.is_finite() {
                problems.push(Problem::new(
                    format!("{path}.reward"),
                    format!("must be finite, got {}", r.reward),
                ));
            }
            let (Some(&f), Some(&a), Some(&t)) = (from, action, to) else { continue };
            if terminal[f] {
                problems.push(Problem::new(
                    format!("{path}.from"),
                    format!("`{}` is a terminal state: the episode ends there, so no row leaves it", r.from),
                ));
                continue;
            }
            outcomes[f][a].push(Outcome {
                next: t,
                prob: r.probability,
                reward: r.reward,
                terminal: terminal[t],
            });
        }
        if !problems.is_empty() {
            return Err(problems);
        }
        for s in 0..n {
            if terminal[s] {
                continue;
            }
            for a in 0..k {
                let list = &outcomes[s][a];
                if list.is_empty() {
                    problems.push(Problem::new(
                        "rows",
                        format!(
                            "state `{}`, action `{}`: no rows (every action needs rows in every state that is not terminal)",
                            self.states[s], self.actions[a]
                        ),
                    ));
                    continue;
                }
                let sum: f64 = list.iter().map(|o| o.prob).sum();
                if (sum - 1.0).abs() > SUM_TOLERANCE {
                    problems.push(Problem::new(
                        "rows",
                        format!(
                            "state `{}`, action `{}`: probabilities sum to {sum}, not 1",
                            self.states[s], self.actions[a]
                        ),
                    ));
                }
            }
        }
        let mut start = vec![0.0; n];
        for (name, &p) in &self.start {
            let path = format!("start.{name}");
            match states.get(name) {
                None => problems.push(Problem::new(path, unknown("state", name, &self.states))),
                Some(_) if !(p.is_finite() && (0.0..=1.0).contains(&p)) => {
                    problems.push(Problem::new(path, format!("must be in [0, 1], got {p}")))
                }
                Some(&s) if terminal[s] && p > 0.0 => problems.push(Problem::new(
                    path,
                    format!("`{name}` is a terminal state: an episode cannot start there"),
                )),
                Some(&s) => start[s] = p,
            }
        }
        let total: f64 = self.start.values().sum();
        if self.start.is_empty() {
            problems.push(Problem::new("start", "give the start probabilities, as {\"STATE\": 1}"));
        } else if (total - 1.0).abs() > SUM_TOLERANCE {
            problems.push(Problem::new("start", format!("probabilities sum to {total}, not 1")));
        }
        if let Some(obs) = &self.observe {
            let mut len = None;
            for s in &self.states {
                match obs.get(s) {
                    None => problems.push(Problem::new(
                        format!("observe.{s}"),
                        "missing: with `observe`, every state needs its vector",
                    )),
                    Some(v) if v.is_empty() || v.len() > MAX_OBSERVE => problems.push(Problem::new(
                        format!("observe.{s}"),
                        format!("needs 1 to {MAX_OBSERVE} numbers, got {}", v.len()),
                    )),
                    Some(v) if v.iter().any(|x| !x.is_finite()) => {
                        problems.push(Problem::new(format!("observe.{s}"), "every number must be finite"))
                    }
                    Some(v) if len.is_some_and(|l| l != v.len()) => problems.push(Problem::new(
                        format!("observe.{s}"),
                        format!("has {} numbers; the first state's has {}", v.len(), len.unwrap_or(0)),
                    )),
                    Some(v) => len = Some(v.len()),
                }
            }
            for s in obs.keys() {
                if !states.contains_key(s) {
                    problems.push(Problem::new(format!("observe.{s}"), unknown("state", s, &self.states)));
                }
            }
        }
        if let Some(m) = crate::settings::check("task.table.discount", self.discount) {
            problems.push(Problem::new("discount", m));
        }
        if let Some(m) = crate::settings::check_int("task.table.max_steps", u64::from(self.max_steps)) {
            problems.push(Problem::new("max_steps", m));
        }
        if !problems.is_empty() {
            return Err(problems);
        }
        // Every listed terminal state must be reachable from the start.
        let mut seen = vec![false; n];
        let mut todo: Vec<usize> = (0..n).filter(|&s| start[s] > 0.0).collect();
        for &s in &todo {
            seen[s] = true;
        }
        while let Some(s) = todo.pop() {
            for o in outcomes[s].iter().flatten() {
                if o.prob > 0.0 && !seen[o.next] {
                    seen[o.next] = true;
                    todo.push(o.next);
                }
            }
        }
        for (i, t) in self.terminal_states.iter().enumerate() {
            if !seen[states[t]] {
                problems.push(Problem::new(
                    format!("terminal_states[{i}]"),
                    format!("`{t}` is never reached from the start: no chain of rows with probability above 0 leads there"),
                ));
            }
        }
        if !problems.is_empty() {
            return Err(problems);
        }
        for s in 0..n {
            if terminal[s] {
                outcomes[s].clear();
            }
        }
        Ok(FiniteModel { n_states: n, n_actions: k, start, terminal, outcomes })
    }

    /// Builds the task, or names the first problem ([`TableTaskConfig::check`] gives all).
    pub fn build(&self) -> Result<FiniteTask, TaskError> {
        let model = self.build_model().map_err(|mut p| {
            let p = p.swap_remove(0);
            TaskError::Invalid(p.path, p.message)
        })?;
        let n = model.n_states;
        let (state_vars, observe, state_names) = match &self.observe {
            None => (
                vec![StateVar { name: "state".into(), low: 0.0, high: (n - 1).max(1) as f64 }],
                None,
                self.states.clone(),
            ),
            Some(obs) => {
                let table: Vec<Vec<f64>> = self.states.iter().map(|s| obs[s].clone()).collect();
                let vars = (0..table[0].len())
                    .map(|j| {
                        let low = table.iter().map(|v| v[j]).fold(f64::INFINITY, f64::min);
                        let high = table.iter().map(|v| v[j]).fold(f64::NEG_INFINITY, f64::max);
                        StateVar {
                            name: format!("o{}", j + 1),
                            low,
                            high: if high > low { high } else { low + 1.0 },
                        }
                    })
                    .collect();
                (vars, Some(table), Vec::new())
            }
        };
        let spec = TaskSpec {
            kind: "table",
            state_vars,
            actions: ActionSpace::Discrete(self.actions.clone()),
            n_states: observe.is_none().then_some(n),
            default_discount: self.discount,
            max_steps: self.max_steps,
            continuing: self.continuing,
            state_names,
            action_numbers: Vec::new(),
        };
        Ok(FiniteTask::with_spec(model, spec, observe))
    }
}

/// The columns a CSV table needs.
pub const CSV_COLUMNS: [&str; 5] = ["from", "action", "to", "probability", "reward"];

/// Reads rows from CSV text: a header naming the five columns (any order,
/// other columns ignored), then one row per line; commas separate fields,
/// a field may be quoted with `"` (a doubled `""` inside is one quote);
/// blank lines are skipped. Errors name the line and column.
pub fn rows_from_csv(text: &str) -> Result<Vec<RowConfig>, Problem> {
    let mut lines = text.lines().enumerate().filter(|(_, l)| !l.trim().is_empty());
    let Some((h, header)) = lines.next() else {
        return Err(Problem::new(
            "csv",
            "is empty; the first line names the columns from,action,to,probability,reward",
        ));
    };
    let head = split_csv(header).map_err(|m| Problem::new(format!("csv line {}", h + 1), m))?;
    let mut col = [0usize; 5];
    for (c, name) in CSV_COLUMNS.iter().enumerate() {
        match head.iter().position(|x| x.trim().eq_ignore_ascii_case(name)) {
            Some(i) => col[c] = i,
            None => {
                return Err(Problem::new(
                    format!("csv line {}", h + 1),
                    format!("no column `{name}`; the header must name from, action, to, probability, reward"),
                ))
            }
        }
    }
    let mut rows = Vec::new();
    for (i, line) in lines {
        let at = format!("csv line {}", i + 1);
        let fields = split_csv(line).map_err(|m| Problem::new(at.clone(), m))?;
        let get = |c: usize| fields.get(col[c]).map(|s| s.trim().to_string());
        let num = |c: usize| -> Result<f64, Problem> {
            let s = get(c).unwrap_or_default();
            s.parse::<f64>().map_err(|_| {
                Problem::new(at.clone(), format!("column `{}`: `{s}` is not a number", CSV_COLUMNS[c]))
            })
        };
        let probability = num(3)?;
        let reward = num(4)?;
        if fields.len() < head.len() {
            return Err(Problem::new(
                at,
                format!("has {} fields; the header has {}", fields.len(), head.len()),
            ));
        }
        rows.push(RowConfig {
            from: get(0).unwrap_or_default(),
            action: get(1).unwrap_or_default(),
            to: get(2).unwrap_or_default(),
            probability,
            reward,
        });
        if rows.len() > MAX_ROWS {
            return Err(Problem::new(at, format!("more than {MAX_ROWS} rows")));
        }
    }
    Ok(rows)
}

fn split_csv(line: &str) -> Result<Vec<String>, String> {
    let mut out = Vec::new();
    let mut field = String::new();
    let mut chars = line.chars().peekable();
    let mut quoted = false;
    let mut column = 1;
    while let Some(c) = chars.next() {
        if quoted {
            if c == '"' {
                if chars.peek() == Some(&'"') {
                    chars.next();
                    field.push('"');
                } else {
                    quoted = false;
                }
            } else {
                field.push(c);
            }
        } else if c == '"' && field.trim().is_empty() {
            field.clear();
            quoted = true;
        } else if c == ',' {
            out.push(std::mem::take(&mut field));
            column += 1;
        } else {
            field.push(c);
        }
    }
    if quoted {
        return Err(format!("field {column}: a quote `\"` is not closed"));
    }
    out.push(field);
    Ok(out.into_iter().map(|f| f.trim_end_matches('\r').to_string()).collect())
}
