//! The native `critbox` command.
//!
//! `critbox run CONFIG.json` runs an experiment config with the same core
//! the page uses and prints one JSON summary on stdout; `critbox validate`
//! only checks a config; `critbox audit` prints the shaping audit of a
//! config's rewards; `critbox serve` serves the page on 127.0.0.1.
//! Exit codes: 0 success, 2 bad input (config or usage), 1 other failures.

mod bench;
mod serve;

use std::path::{Path, PathBuf};
use std::process::ExitCode;

const USAGE: &str = "\
usage:
  critbox run CONFIG.json [--csv FILE] [--save FILE]
                                   run every (variant, seed) job and print the summary JSON;
                                   --csv writes the tidy CSV (variant,label,seed,step,metric,value),
                                   --save a results file that `critbox open` and the page reopen
  critbox probe CONFIG.json [--variant I] [--seed S] [--checkpoints A,B,..] [--estimates K] [--episodes M]
                                   gradient-variance probe of one job: per baseline option, the trace of
                                   the covariance and the mean norm of K REINFORCE gradient estimates of M
                                   episodes each (defaults: variant 0, seed 0, checkpoints 0,budget/2,budget,
                                   K 30, M 5)
  critbox open RESULTS.json        print the summary of a saved results file without re-running
  critbox validate CONFIG.json     check a config; print its plan or the problems
  critbox audit CONFIG.json        shaping audit of the config's rewards as JSON: on a finite task,
                                   whether each reward changes the optimal policy (potential_based,
                                   policy_changed, differing_states, base_value_loss)
  critbox serve [--root DIR] [--port N]
                                   serve the page on 127.0.0.1 (default root web, port 8000)
  critbox bench CONFIG.json [--job J] [--steps N] [--rss-at A,B,..]
                                   time job J (default 0) for N steps (default the config's budget) and
                                   print steps per second as JSON; --rss-at records resident memory
  critbox help                     this text

A CONFIG of '-' reads standard input. Exit codes: 0 ok, 2 bad config or usage, 1 other errors.";

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
    critbox_core::experiment::parse(&text).map_err(|e| {
        let lines: Vec<String> = e.problems.iter().map(|p| format!("  {p}")).collect();
        Failure::BadInput(format!("{arg}: the config has {} problem(s):\n{}", lines.len(), lines.join("\n")))
    })
}

fn one_arg(args: &[String], cmd: &str) -> Result<String, Failure> {
    match args {
        [one] => Ok(one.clone()),
        _ => Err(Failure::Usage(format!("`critbox {cmd}` takes exactly one CONFIG argument"))),
    }
}

fn write_file(path: &str, text: &str) -> Result<(), Failure> {
    std::fs::write(path, text).map_err(|e| Failure::Other(format!("cannot write {path}: {e}")))
}

fn print_json(v: &serde_json::Value) -> Result<(), Failure> {
    let text = serde_json::to_string_pretty(v).map_err(|e| Failure::Other(e.to_string()))?;
    println!("{text}");
    Ok(())
}

fn run(args: &[String]) -> Result<(), Failure> {
    let Some((cmd, rest)) = args.split_first() else {
        return Err(Failure::Usage("no command given".into()));
    };
    match cmd.as_str() {
        "run" => {
            let mut config = None;
            let (mut csv, mut save) = (None, None);
            let mut it = rest.iter();
            while let Some(a) = it.next() {
                match a.as_str() {
                    "--csv" | "--save" => {
                        let f = it.next().ok_or_else(|| Failure::Usage(format!("{a} needs a file name")))?;
                        if a == "--csv" {
                            csv = Some(f.clone())
                        } else {
                            save = Some(f.clone())
                        }
                    }
                    other if other.starts_with("--") => {
                        return Err(Failure::Usage(format!("run: unknown option {other:?}")))
                    }
                    other if config.is_none() => config = Some(other.to_string()),
                    _ => {
                        return Err(Failure::Usage("`critbox run` takes exactly one CONFIG argument".into()))
                    }
                }
            }
            let config =
                config.ok_or_else(|| Failure::Usage("`critbox run` needs a CONFIG argument".into()))?;
            let plan = plan_of(&config)?;
            let results = critbox_core::experiment::run_all(&plan);
            if let Some(path) = csv {
                write_file(&path, &critbox_core::experiment::export::tidy_csv(&results))?;
            }
            if let Some(path) = save {
                write_file(&path, &critbox_core::experiment::export::save(&plan, &results).to_string())?;
            }
            print_json(&results.summary())
        }
        "probe" => {
            let mut config = None;
            let (mut variant, mut seed, mut estimates, mut episodes) = (0usize, 0usize, 30u32, 5u32);
            let mut checkpoints: Option<Vec<u64>> = None;
            let mut it = rest.iter();
            fn number<T: std::str::FromStr>(flag: &str, v: Option<&String>) -> Result<T, Failure> {
                let v = v.ok_or_else(|| Failure::Usage(format!("{flag} needs a value")))?;
                v.parse().map_err(|_| Failure::Usage(format!("{flag}: {v:?} is not a whole number")))
            }
            while let Some(a) = it.next() {
                match a.as_str() {
                    "--variant" => variant = number(a, it.next())?,
                    "--seed" => seed = number(a, it.next())?,
                    "--estimates" => estimates = number(a, it.next())?,
                    "--episodes" => episodes = number(a, it.next())?,
                    "--checkpoints" => {
                        let v =
                            it.next().ok_or_else(|| Failure::Usage("--checkpoints needs a list".into()))?;
                        let list: Result<Vec<u64>, _> =
                            v.split(',').map(|x| x.trim().parse::<u64>()).collect();
                        checkpoints = Some(list.map_err(|_| {
                            Failure::Usage(format!(
                                "--checkpoints: {v:?} is not a comma-separated list of steps"
                            ))
                        })?);
                    }
                    other if other.starts_with("--") => {
                        return Err(Failure::Usage(format!("probe: unknown option {other:?}")))
                    }
                    other if config.is_none() => config = Some(other.to_string()),
                    _ => {
                        return Err(Failure::Usage(
                            "`critbox probe` takes exactly one CONFIG argument".into(),
                        ))
                    }
                }
            }
            let config =
                config.ok_or_else(|| Failure::Usage("`critbox probe` needs a CONFIG argument".into()))?;
            let plan = plan_of(&config)?;
            let steps = plan.config.steps;
            let settings = critbox_core::experiment::probe::ProbeSettings {
                checkpoints: checkpoints.unwrap_or_else(|| vec![0, steps / 2, steps]),
                estimates,
                episodes,
            };
            let v = critbox_core::experiment::probe::probe(&plan, variant, seed, &settings)
                .map_err(|e| Failure::BadInput(format!("{config}: {e}")))?;
            print_json(&v)
        }
        "open" => {
            let path = one_arg(rest, "open")?;
            let text = std::fs::read_to_string(&path)
                .map_err(|e| Failure::BadInput(format!("cannot read {path}: {e}")))?;
            let (_, results) = critbox_core::experiment::export::load(&text)
                .map_err(|e| Failure::BadInput(format!("{path}: {e}")))?;
            print_json(&results.summary())
        }
        "audit" => {
            let plan = plan_of(&one_arg(rest, "audit")?)?;
            print_json(&critbox_core::reward::audit::audit_plan(&plan))
        }
        "validate" => {
            let plan = plan_of(&one_arg(rest, "validate")?)?;
            print_json(&serde_json::json!({
                "ok": true,
                "variants": plan.variants.iter().map(|v| v.label.clone()).collect::<Vec<_>>(),
                "seeds": plan.config.seeds,
                "steps": plan.config.steps,
                "jobs": plan.job_count(),
            }))
        }
        "serve" => {
            let mut root = PathBuf::from("web");
            let mut port: u16 = 8000;
            let mut it = rest.iter();
            while let Some(a) = it.next() {
                match a.as_str() {
                    "--root" => {
                        root = PathBuf::from(
                            it.next().ok_or_else(|| Failure::Usage("--root needs a folder".into()))?,
                        )
                    }
                    "--port" => {
                        let v = it.next().ok_or_else(|| Failure::Usage("--port needs a number".into()))?;
                        port = v.parse().map_err(|_| {
                            Failure::Usage(format!("--port: {v:?} is not a port number (0 to 65535)"))
                        })?;
                    }
                    other => return Err(Failure::Usage(format!("serve: unknown option {other:?}"))),
                }
            }
            serve_root(&root, port)
        }
        "bench" => {
            let (mut config, mut job, mut steps, mut rss_at) = (None, 0usize, None, Vec::new());
            let mut it = rest.iter();
            while let Some(a) = it.next() {
                let mut value = || it.next().ok_or_else(|| Failure::Usage(format!("{a} needs a value")));
                match a.as_str() {
                    "--job" | "--steps" => {
                        let v = value()?;
                        let n: u64 = v
                            .parse()
                            .map_err(|_| Failure::Usage(format!("{a}: {v:?} is not a whole number")))?;
                        if a == "--job" {
                            job = n as usize
                        } else {
                            steps = Some(n)
                        }
                    }
                    "--rss-at" => {
                        for part in value()?.split(',') {
                            rss_at.push(part.trim().parse().map_err(|_| {
                                Failure::Usage(format!("--rss-at: {part:?} is not a whole number"))
                            })?);
                        }
                    }
                    other if other.starts_with("--") => {
                        return Err(Failure::Usage(format!("bench: unknown option {other:?}")))
                    }
                    other if config.is_none() => config = Some(other.to_string()),
                    _ => {
                        return Err(Failure::Usage(
                            "`critbox bench` takes exactly one CONFIG argument".into(),
                        ))
                    }
                }
            }
            let config =
                config.ok_or_else(|| Failure::Usage("`critbox bench` needs a CONFIG argument".into()))?;
            let plan = plan_of(&config)?;
            let steps = steps.unwrap_or(plan.config.steps);
            print_json(&bench::bench(&plan, job, steps, &rss_at).map_err(Failure::Usage)?)
        }
        "help" | "--help" | "-h" => {
            println!("{USAGE}");
            Ok(())
        }
        other => Err(Failure::Usage(format!("unknown command {other:?}"))),
    }
}

fn serve_root(root: &Path, port: u16) -> Result<(), Failure> {
    serve::serve(root, port, |addr| {
        println!("critbox page at {addr}  (Ctrl-C stops)");
    })
    .map_err(|e| Failure::Other(e.to_string()))
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Usage(m)) => {
            eprintln!("critbox: {m}\n\n{USAGE}");
            ExitCode::from(2)
        }
        Err(Failure::BadInput(m)) => {
            eprintln!("critbox: {m}");
            ExitCode::from(2)
        }
        Err(Failure::Other(m)) => {
            eprintln!("critbox: {m}");
            ExitCode::from(1)
        }
    }
}
