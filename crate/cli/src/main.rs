//! The native `critbox` command.
//!
//! `critbox run CONFIG.json` runs an experiment config with the same core
//! the page uses and prints one JSON summary on stdout; `critbox validate`
//! only checks a config; `critbox audit` prints the shaping audit of a
//! config's rewards; `critbox inspect` re-trains one job to a step and
//! prints what it learned; `critbox run --shard K/N` runs a share of the
//! jobs into a part file and `critbox merge` joins the parts; `critbox serve` serves the page on 127.0.0.1.
//! The commands and their options are one table in [`args`], which parses
//! the command line and writes the usage text. Exit codes: 0 success, 2 bad
//! input (config or usage), 1 other failures.

mod args;
mod bench;
mod serve;
mod table;

use args::{Args, Parsed};
use critbox_core::experiment::{inspect, shard};

use std::path::{Path, PathBuf};
use std::process::ExitCode;

enum Failure {
    Usage(String),
    BadInput(String),
    Other(String),
}

fn read_config(arg: &str) -> Result<String, Failure> {
    if arg == "-" {
        let mut s = String::new();
        std::io::Read::read_to_string(&mut std::io::stdin(), &mut s)
            .map_err(|e| Failure::Other(format!("cannot read standard input: {e}")))?;
        Ok(s)
    } else {
        std::fs::read_to_string(arg).map_err(|e| Failure::BadInput(format!("cannot read config {arg}: {e}")))
    }
}

fn plan_of(arg: &str) -> Result<critbox_core::experiment::Plan, Failure> {
    let text = read_config(arg)?;
    let plan = critbox_core::experiment::parse(&text).map_err(|e| {
        let lines: Vec<String> = e.problems.iter().map(|p| format!("  {p}")).collect();
        Failure::BadInput(format!("{arg}: the config has {} problem(s):\n{}", lines.len(), lines.join("\n")))
    })?;
    for note in &plan.notes {
        eprintln!("critbox: note: {arg}: {note}");
    }
    Ok(plan)
}

fn write_file(path: &str, text: &str) -> Result<(), Failure> {
    std::fs::write(path, text).map_err(|e| Failure::Other(format!("cannot write {path}: {e}")))
}

/// Writes text and a newline to standard output; a closed pipe (say, into
/// `head`) ends the output quietly.
fn print_text(text: &str) -> Result<(), Failure> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match writeln!(out, "{text}").and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(Failure::Other(format!("cannot write to standard output: {e}"))),
    }
}

fn print_json(v: &serde_json::Value) -> Result<(), Failure> {
    print_text(&serde_json::to_string_pretty(v).map_err(|e| Failure::Other(e.to_string()))?)
}

fn whole_u32(a: &Args, name: &str, default: u32) -> Result<u32, Failure> {
    match a.whole(name) {
        None => Ok(default),
        Some(n) => u32::try_from(n)
            .map_err(|_| Failure::Usage(format!("--{name}: {n} is too large (at most {})", u32::MAX))),
    }
}

fn run(a: &Args) -> Result<(), Failure> {
    match a.command.name {
        "run" if a.shard("shard").is_some() || a.path("stage").is_some() || a.path("from").is_some() => {
            run_shard(a)
        }
        "merge" => merge(a),
        "run" => {
            let plan = plan_of(a.operand())?;
            let results = critbox_core::experiment::run_all(&plan);
            if let Some(path) = a.path("csv") {
                write_file(path, &critbox_core::experiment::export::tidy_csv(&results))?;
            }
            if let Some(path) = a.path("save") {
                write_file(path, &critbox_core::experiment::export::save(&plan, &results).to_string())?;
            }
            print_json(&results.summary())
        }
        "probe" => {
            let config = a.operand();
            let plan = plan_of(config)?;
            let steps = plan.config.steps;
            let settings = critbox_core::experiment::probe::ProbeSettings {
                checkpoints: a.wholes("checkpoints").unwrap_or_else(|| vec![0, steps / 2, steps]),
                estimates: whole_u32(a, "estimates", 30)?,
                episodes: whole_u32(a, "episodes", 5)?,
            };
            let (variant, seed) = (a.whole("variant").unwrap_or(0), a.whole("seed").unwrap_or(0));
            let v = critbox_core::experiment::probe::probe(&plan, variant as usize, seed as usize, &settings)
                .map_err(|e| Failure::BadInput(format!("{config}: {e}")))?;
            print_json(&v)
        }
        "inspect" => {
            let config = a.operand();
            let plan = plan_of(config)?;
            let (variant, seed) = (a.whole("variant").unwrap_or(0), a.whole("seed").unwrap_or(0));
            let at = a.whole("at").unwrap_or(plan.config.steps);
            let report = inspect::inspect(&plan, variant as usize, seed as usize, at)
                .map_err(|e| Failure::BadInput(format!("{config}: {e}")))?;
            if a.switch("table") {
                print_text(table::render(&report).trim_end())
            } else {
                // Straight from the struct, so the fields keep its order.
                print_text(&serde_json::to_string_pretty(&report).map_err(|e| Failure::Other(e.to_string()))?)
            }
        }
        "open" => {
            let path = a.operand();
            let text = std::fs::read_to_string(path)
                .map_err(|e| Failure::BadInput(format!("cannot read {path}: {e}")))?;
            let (_, results) = critbox_core::experiment::export::load(&text)
                .map_err(|e| Failure::BadInput(format!("{path}: {e}")))?;
            print_json(&results.summary())
        }
        "audit" => {
            let plan = plan_of(a.operand())?;
            print_json(&critbox_core::experiment::audit::audit_plan(&plan))
        }
        "settings" => {
            if a.switch("markdown") {
                print!("{}", critbox_core::settings::markdown());
                Ok(())
            } else {
                print_json(
                    &serde_json::to_value(critbox_core::settings::SETTINGS).expect("the table serialises"),
                )
            }
        }
        "validate" => {
            let plan = plan_of(a.operand())?;
            print_json(&serde_json::json!({
                "ok": true,
                "variants": plan.variants.iter().map(|v| v.label.clone()).collect::<Vec<_>>(),
                "seeds": plan.config.seeds,
                "steps": plan.config.steps,
                "jobs": plan.job_count(),
            }))
        }
        "serve" => {
            let root = PathBuf::from(a.path("root").unwrap_or("web"));
            serve_root(&root, a.port("port").unwrap_or(8000))
        }
        "bench" => {
            let plan = plan_of(a.operand())?;
            let steps = a.whole("steps").unwrap_or(plan.config.steps);
            let job = a.whole("job").unwrap_or(0) as usize;
            let rss_at = a.wholes("rss-at").unwrap_or_default();
            print_json(&bench::bench(&plan, job, steps, &rss_at).map_err(Failure::Usage)?)
        }
        other => panic!("the command table lists `{other}` but main.rs does not run it"),
    }
}

fn read_part(path: &str) -> Result<shard::Part, Failure> {
    let text = std::fs::read_to_string(path)
        .map_err(|e| Failure::BadInput(format!("cannot read part {path}: {e}")))?;
    shard::read_part(&text).map_err(|e| Failure::BadInput(format!("{path}: {e}")))
}

/// `critbox run CONFIG --shard K/N [--stage tuning|fresh --from TUNING.json] --save PART.json`.
fn run_shard(a: &Args) -> Result<(), Failure> {
    let config = a.operand();
    let plan = plan_of(config)?;
    let (k, n) = a.shard("shard").unwrap_or((0, 1));
    let save =
        a.path("save").ok_or_else(|| Failure::Usage("--shard writes a part: give --save FILE".into()))?;
    if a.path("csv").is_some() {
        return Err(Failure::Usage(
            "--csv needs every job: write it from the merged results, not a shard".into(),
        ));
    }
    let stage = match (plan.study.is_some(), a.path("stage")) {
        (false, None) => shard::Stage::All,
        (false, Some(s)) => {
            return Err(Failure::BadInput(format!(
                "{config}: --stage {s}: this config is not a study (no variant sweeps), so it has no stages"
            )))
        }
        (true, None | Some("tuning")) => shard::Stage::Tuning,
        (true, Some(_)) => shard::Stage::Fresh,
    };
    let tuning = match (stage, a.path("from")) {
        (shard::Stage::Fresh, Some(from)) => Some(read_part(from)?),
        (shard::Stage::Fresh, None) => {
            return Err(Failure::Usage(
                "--stage fresh needs --from TUNING.json (the merged tuning parts)".into(),
            ))
        }
        (_, Some(_)) => return Err(Failure::Usage("--from is for --stage fresh only".into())),
        (_, None) => None,
    };
    let part = shard::run_shard(&plan, stage, k as usize, n as usize, tuning.as_ref())
        .map_err(|m| Failure::BadInput(format!("{}: {m}", a.path("from").unwrap_or(config))))?;
    write_file(save, &part.to_string())?;
    print_json(&serde_json::json!({
        "stage": stage.name(),
        "shard": format!("{k}/{n}"),
        "jobs": part["jobs"],
        "saved": save,
    }))
}

/// `critbox merge PART.json... [--save FILE]`.
fn merge(a: &Args) -> Result<(), Failure> {
    let mut parts = Vec::new();
    for path in a.operands() {
        parts.push((path.to_string(), read_part(path)?));
    }
    match shard::merge(&parts).map_err(Failure::BadInput)? {
        shard::Merged::Whole(whole) => {
            let (plan, results) = *whole;
            if let Some(path) = a.path("save") {
                write_file(path, &critbox_core::experiment::export::save(&plan, &results).to_string())?;
            }
            print_json(&results.summary())
        }
        shard::Merged::Tuning(file, chosen) => {
            if let Some(path) = a.path("save") {
                write_file(path, &file.to_string())?;
            }
            let (_, first) = &parts[0];
            let settings: Vec<_> = (0..chosen.len()).map(|v| first.results.point_settings(v)).collect();
            print_json(&serde_json::json!({
                "stage": "tuning",
                "jobs": file["jobs"].as_array().map_or(0, Vec::len),
                "chosen": chosen.iter().enumerate().map(|(v, &p)| serde_json::json!({
                    "label": first.results.labels()[v],
                    "point": p,
                    "settings": settings[v][p],
                })).collect::<Vec<_>>(),
            }))
        }
    }
}

fn serve_root(root: &Path, port: u16) -> Result<(), Failure> {
    serve::serve(root, port, |addr| {
        println!("critbox page at {addr}  (Ctrl-C stops)");
    })
    .map_err(|e| Failure::Other(e.to_string()))
}

/// Writes a message to standard error (nothing more can be done if that fails).
fn complain(message: &str) {
    use std::io::Write;
    let _ = writeln!(std::io::stderr(), "critbox: {message}");
}

fn main() -> ExitCode {
    let result = match args::parse(std::env::args_os().skip(1).collect()) {
        Ok(Parsed::Help) => print_text(&args::usage()),
        Ok(Parsed::Run(a)) => run(&a),
        Err(e) => Err(Failure::Usage(e.0)),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Usage(m)) => {
            complain(&format!("{m}\n\n{}", args::usage()));
            ExitCode::from(2)
        }
        Err(Failure::BadInput(m)) => {
            complain(&m);
            ExitCode::from(2)
        }
        Err(Failure::Other(m)) => {
            complain(&m);
            ExitCode::from(1)
        }
    }
}
