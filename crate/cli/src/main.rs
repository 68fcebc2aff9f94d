//! The native `critbox` command.
//!
//! `critbox run CONFIG.json` runs an experiment config with the same core
//! the page uses and prints one JSON summary on stdout; `critbox validate`
//! only checks a config; `critbox audit` prints the shaping audit of a
//! config's rewards; `critbox inspect` re-trains one job to a step and
//! prints what it learned; `critbox serve` serves the page on 127.0.0.1.
//! The commands and their options are one table in [`args`], which parses
//! the command line and writes the usage text. Exit codes: 0 success, 2 bad
//! input (config or usage), 1 other failures.

mod args;
mod bench;
mod serve;
mod table;

use args::{Args, Parsed};
use critbox_core::experiment::inspect;

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
