//! `critbox inspect --table`: an [`InspectReport`] as text tables for a
//! person at a terminal (the JSON form is for programs). A missing number
//! (no critic, no exact solution, not finite) shows as `-`.

use std::fmt::Write;

use critbox_core::experiment::inspect::{ActorReport, InspectReport, RegulatorReport, Slice, StateRow};

/// Weights shown one by one up to this many; more are summarised.
const WEIGHTS_SHOWN: usize = 16;

fn num(x: Option<f64>) -> String {
    match x {
        Some(v) => format!("{v:.4}"),
        None => "-".into(),
    }
}

/// Right-aligned columns: every cell padded to its column's widest.
fn columns(header: &[String], rows: &[Vec<String>]) -> String {
    let mut width: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (w, c) in width.iter_mut().zip(r) {
            *w = (*w).max(c.chars().count());
        }
    }
    let mut out = String::new();
    for r in std::iter::once(header).chain(rows.iter().map(|r| r.as_slice())) {
        let cells: Vec<String> = r.iter().zip(&width).map(|(c, &w)| format!("{c:>w$}")).collect();
        let _ = writeln!(out, "  {}", cells.join("  "));
    }
    out
}

fn states(r: &InspectReport, rows: &[StateRow], out: &mut String) {
    let mut header = vec!["state".to_string()];
    header.extend(r.state_names.iter().cloned());
    header.extend(r.action_names.iter().map(|a| format!("π({a})")));
    header.extend(["preferred", "critic", "exact"].map(String::from));
    let body: Vec<Vec<String>> = rows
        .iter()
        .map(|s| {
            let mut row = vec![s.state.to_string()];
            row.extend(s.values.iter().map(|v| format!("{v}")));
            if s.terminal {
                row.extend(s.policy.iter().map(|_| "-".to_string()));
                row.push("terminal".into());
            } else {
                row.extend(s.policy.iter().map(|p| format!("{p:.3}")));
                row.push(s.preferred.clone());
            }
            row.push(num(s.critic));
            row.push(num(s.exact));
            row
        })
        .collect();
    out.push_str(&columns(&header, &body));
    if let Some(map) = arrow_map(r, rows) {
        out.push_str("\n  preferred moves (^ > v <; D terminal, # not a state):\n");
        for line in map {
            let _ = writeln!(out, "    {line}");
        }
    }
}

/// On a grid (state variables `row`, `col`; actions north, east, south,
/// west), the preferred move of every cell as a map.
fn arrow_map(r: &InspectReport, rows: &[StateRow]) -> Option<Vec<String>> {
    let grid = r.state_names == ["row", "col"] && r.action_names == ["north", "east", "south", "west"];
    if !grid || rows.is_empty() {
        return None;
    }
    let height = rows.iter().map(|s| s.values[0] as usize).max()? + 1;
    let width = rows.iter().map(|s| s.values[1] as usize).max()? + 1;
    let mut cells = vec![vec!['#'; width]; height];
    for s in rows {
        let arrow = match (s.terminal, s.preferred.as_str()) {
            (true, _) => 'D',
            (_, "north") => '^',
            (_, "east") => '>',
            (_, "south") => 'v',
            _ => '<',
        };
        cells[s.values[0] as usize][s.values[1] as usize] = arrow;
    }
    Some(cells.into_iter().map(|row| row.into_iter().collect()).collect())
}

fn actor(a: &ActorReport, out: &mut String) {
    let what = match (&a.features, serde_json::to_value(&a.approximator)) {
        (Some(f), _) => format!("linear over {}", serde_json::to_string(f).unwrap_or_default()),
        (None, Ok(v)) => v.to_string(),
        (None, Err(_)) => "?".into(),
    };
    let _ = writeln!(out, "actor: {what}, {} weights", a.weights.len());
    if a.weights.len() <= WEIGHTS_SHOWN {
        let list: Vec<String> = a.weights.iter().map(|w| num(*w)).collect();
        let _ = writeln!(out, "  weights: {}", list.join(" "));
    } else {
        let finite: Vec<f64> = a.weights.iter().flatten().copied().collect();
        let (lo, hi) =
            finite.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &w| (l.min(w), h.max(w)));
        let norm = finite.iter().map(|w| w * w).sum::<f64>().sqrt();
        let _ = writeln!(
            out,
            "  weights: smallest {}, largest {}, norm {}, {} zero (the JSON lists them all)",
            num(Some(lo).filter(|v| v.is_finite())),
            num(Some(hi).filter(|v| v.is_finite())),
            num(Some(norm)),
            finite.iter().filter(|w| **w == 0.0).count()
        );
    }
    if !a.log_std.is_empty() {
        let list: Vec<String> = a.log_std.iter().map(|w| num(*w)).collect();
        let _ = writeln!(out, "  log standard deviations: {}", list.join(" "));
    }
}

fn slice(r: &InspectReport, s: &Slice, out: &mut String) {
    let held: Vec<String> = s.held.iter().map(|h| format!("{} = {}", h.name, h.value)).collect();
    let _ = write!(out, "slice over {}", s.vars.join(" and "));
    if !held.is_empty() {
        let _ = write!(out, " (held at the middle of their range: {})", held.join(", "));
    }
    out.push_str(":\n");
    let mut header: Vec<String> = s.vars.clone();
    if r.continuous {
        header.extend(r.action_names.iter().cloned());
    } else {
        header.extend(r.action_names.iter().map(|a| format!("π({a})")));
        header.push("preferred".into());
    }
    header.push("value".into());
    let body: Vec<Vec<String>> = s
        .points
        .iter()
        .map(|p| {
            let mut row: Vec<String> = p.at.iter().map(|v| format!("{v:.4}")).collect();
            if r.continuous {
                row.extend(p.policy.iter().map(|a| num(*a)));
            } else {
                row.extend(p.policy.iter().map(|a| a.map_or("-".into(), |v| format!("{v:.3}"))));
                row.push(p.preferred.clone().unwrap_or_default());
            }
            row.push(num(p.value));
            row
        })
        .collect();
    out.push_str(&columns(&header, &body));
}

fn regulator(g: &RegulatorReport, out: &mut String) {
    let _ = writeln!(
        out,
        "regulator: learned gain K = {} (dμ/dx at x = 0 is {}, difference over ±{})",
        num(g.gain),
        num(g.slope),
        g.step
    );
    if let Some(w) = g.weights_gain {
        let _ = writeln!(out, "  from the linear actor's weights: K = {}", num(Some(w)));
    }
    let _ = writeln!(
        out,
        "  Riccati: K* = {} (V*(x) = -P x² with P = {})",
        num(Some(g.riccati_gain)),
        num(Some(g.riccati_p))
    );
}

/// The report as text.
pub fn render(r: &InspectReport) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "variant {} ({}), seed {}, after {} steps: {}",
        r.variant, r.label, r.seed, r.steps, r.status
    );
    let _ = writeln!(out, "task {}, discount {}", r.task, r.discount);
    if let Some(g) = &r.regulator {
        out.push('\n');
        regulator(g, &mut out);
    }
    if !r.states.is_empty() {
        out.push('\n');
        states(r, &r.states, &mut out);
    }
    if let Some(e) = &r.exact {
        out.push('\n');
        let _ = write!(out, "exact start value of the policy {}", num(e.start_value));
        if let Some(o) = e.optimal_start_value {
            let _ = write!(out, " (optimal {})", num(Some(o)));
        }
        if let Some(g) = e.average_reward {
            let _ = write!(out, "; average reward per step {}", num(Some(g)));
        }
        out.push('\n');
    }
    if let Some(a) = &r.actor {
        out.push('\n');
        actor(a, &mut out);
    }
    if let Some(s) = &r.slice {
        out.push('\n');
        slice(r, s, &mut out);
    }
    out
}
