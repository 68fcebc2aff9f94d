//! The command line: one table of the commands, their operand and their
//! options ([`COMMANDS`]), from which both the parser (over `lexopt`) and the
//! usage text ([`usage`]) are made, so what is documented is what is parsed.
//!
//! Each option declares the kind of its value ([`Kind`]); values are checked
//! while parsing, so a bad number is reported with the option's name before
//! any work starts. [`Args`] hands the parsed values to the command; asking
//! it for an option its command does not declare is a programming error and
//! panics with the name.

use std::ffi::OsString;

/// What an option's value is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// No value: present or not.
    Switch,
    /// A file or folder name.
    Path,
    /// A whole number ≥ 0.
    Whole,
    /// A TCP port, 0 to 65535.
    Port,
    /// Whole numbers separated by commas (repeating the option adds more).
    Wholes,
    /// A shard `K/N`: whole numbers with K < N.
    Shard,
    /// One word of a fixed list.
    Word(&'static [&'static str]),
}

/// One option of a command.
#[derive(Clone, Copy, Debug)]
pub struct Opt {
    /// The long name, without the dashes.
    pub name: &'static str,
    /// The placeholder of its value in the usage text (empty for a switch).
    pub value: &'static str,
    /// The kind of its value.
    pub kind: Kind,
}

/// One command.
#[derive(Clone, Copy, Debug)]
pub struct Command {
    /// Its name, the first argument.
    pub name: &'static str,
    /// The placeholder of its one operand, or `None` when it takes none; a
    /// placeholder ending in `...` takes one or more.
    pub operand: Option<&'static str>,
    /// Its options.
    pub opts: &'static [Opt],
    /// Lines of explanation for the usage text.
    pub help: &'static [&'static str],
}

const fn opt(name: &'static str, value: &'static str, kind: Kind) -> Opt {
    Opt { name, value, kind }
}

/// Every command, in the order the usage text lists them.
pub const COMMANDS: &[Command] = &[
    Command {
        name: "run",
        operand: Some("CONFIG.json"),
        opts: &[
            opt("csv", "FILE", Kind::Path),
            opt("save", "FILE", Kind::Path),
            opt("shard", "K/N", Kind::Shard),
            opt("stage", "tuning|fresh", Kind::Word(&["tuning", "fresh"])),
            opt("from", "TUNING.json", Kind::Path),
        ],
        help: &[
            "run every (variant, seed) job and print the summary JSON;",
            "--csv writes the tidy CSV (variant,label,seed,step,metric,value,settings),",
            "--save a results file that `critbox open` and the page reopen;",
            "--shard K/N runs only the jobs with id mod N = K and --save writes a part",
            "for `critbox merge`; a study runs --stage tuning (the default), then",
            "--stage fresh --from TUNING.json (the merge of the tuning parts)",
        ],
    },
    Command {
        name: "merge",
        operand: Some("PART.json..."),
        opts: &[opt("save", "FILE", Kind::Path)],
        help: &[
            "join the parts of `run --shard` (same config, no job missing or doubled):",
            "print the summary as `critbox run` does and --save the results file; of a",
            "study's tuning parts alone, print the chosen points and --save the tuning",
            "file for `run --stage fresh --from`; the final merge takes the tuning file",
            "and the fresh parts",
        ],
    },
    Command {
        name: "probe",
        operand: Some("CONFIG.json"),
        opts: &[
            opt("variant", "I", Kind::Whole),
            opt("seed", "S", Kind::Whole),
            opt("checkpoints", "A,B,..", Kind::Wholes),
            opt("estimates", "K", Kind::Whole),
            opt("episodes", "M", Kind::Whole),
        ],
        help: &[
            "gradient-variance probe of one job: per baseline option, the trace of",
            "the covariance and the mean norm of K REINFORCE gradient estimates of M",
            "episodes each (defaults: variant 0, seed 0, checkpoints 0,budget/2,budget,",
            "K 30, M 5)",
        ],
    },
    Command {
        name: "inspect",
        operand: Some("CONFIG.json"),
        opts: &[
            opt("variant", "I", Kind::Whole),
            opt("seed", "S", Kind::Whole),
            opt("at", "STEP", Kind::Whole),
            opt("table", "", Kind::Switch),
        ],
        help: &[
            "re-train one job to STEP (the same learner as in the run) and print what",
            "it learned as JSON: per state the policy, the critic's value and the exact",
            "value of the policy where the task has an exact model; otherwise the",
            "actor's weights and a slice over the first one or two state variables;",
            "on the regulator the learned gain beside the Riccati gain. --table prints",
            "it as readable tables (defaults: variant 0, seed 0, STEP the budget)",
        ],
    },
    Command {
        name: "open",
        operand: Some("RESULTS.json"),
        opts: &[],
        help: &["print the summary of a saved results file without re-running"],
    },
    Command {
        name: "validate",
        operand: Some("CONFIG.json"),
        opts: &[],
        help: &["check a config; print its plan or the problems"],
    },
    Command {
        name: "settings",
        operand: None,
        opts: &[opt("markdown", "", Kind::Switch)],
        help: &[
            "every numeric and on/off setting with its default, range and help, as JSON;",
            "--markdown prints the README's table",
        ],
    },
    Command {
        name: "audit",
        operand: Some("CONFIG.json"),
        opts: &[],
        help: &[
            "shaping audit of the config's rewards as JSON: on a finite task,",
            "whether each reward changes the optimal policy (potential_based,",
            "policy_changed, differing_states, base_value_loss)",
        ],
    },
    Command {
        name: "serve",
        operand: None,
        opts: &[opt("root", "DIR", Kind::Path), opt("port", "N", Kind::Port)],
        help: &["serve the page on 127.0.0.1 (default root web, port 8000)"],
    },
    Command {
        name: "bench",
        operand: Some("CONFIG.json"),
        opts: &[
            opt("job", "J", Kind::Whole),
            opt("steps", "N", Kind::Whole),
            opt("rss-at", "A,B,..", Kind::Wholes),
        ],
        help: &[
            "time job J (default 0) for N steps (default the config's budget) and",
            "print steps per second as JSON; --rss-at records resident memory",
        ],
    },
    Command { name: "help", operand: None, opts: &[], help: &["this text"] },
];

/// The column where explanations start.
const HELP_COLUMN: usize = 35;

/// The usage text, made from [`COMMANDS`].
pub fn usage() -> String {
    let mut out = String::from("usage:\n");
    for c in COMMANDS {
        let mut line = format!("  critbox {}", c.name);
        if let Some(o) = c.operand {
            line.push(' ');
            line.push_str(o);
        }
        for o in c.opts {
            match o.kind {
                Kind::Switch => line.push_str(&format!(" [--{}]", o.name)),
                _ => line.push_str(&format!(" [--{} {}]", o.name, o.value)),
            }
        }
        let mut help = c.help.iter();
        if line.len() < HELP_COLUMN - 1 {
            if let Some(first) = help.next() {
                line = format!("{line:<HELP_COLUMN$}{first}");
            }
        }
        out.push_str(&line);
        out.push('\n');
        for h in help {
            out.push_str(&format!("{:HELP_COLUMN$}{h}\n", ""));
        }
    }
    out.push_str(
        "\nA CONFIG of '-' reads standard input. Exit codes: 0 ok, 2 bad config or usage, 1 other errors.",
    );
    out
}

/// A parsed option value.
#[derive(Clone, Debug, PartialEq)]
enum Value {
    Switch,
    Text(String),
    Whole(u64),
    Port(u16),
    Wholes(Vec<u64>),
    Shard(u64, u64),
}

/// A command line that could not be parsed, as the message to show.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct UsageError(pub String);

impl std::fmt::Display for UsageError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

/// What the command line asks for.
#[derive(Debug)]
pub enum Parsed {
    /// Print the usage text.
    Help,
    /// Run a command.
    Run(Args),
}

/// A command with its operand and option values, checked against its [`Command`].
#[derive(Debug)]
pub struct Args {
    /// The command.
    pub command: &'static Command,
    operand: Option<String>,
    more: Vec<String>,
    values: Vec<(&'static str, Value)>,
}

impl Args {
    /// The operand (present whenever the command declares one).
    pub fn operand(&self) -> &str {
        self.operand.as_deref().unwrap_or_default()
    }

    /// Every operand of a command that takes one or more, in order.
    pub fn operands(&self) -> Vec<&str> {
        self.operand.iter().chain(&self.more).map(String::as_str).collect()
    }

    /// A shard option's value (K, N).
    pub fn shard(&self, name: &str) -> Option<(u64, u64)> {
        match self.get(name) {
            Some(Value::Shard(k, n)) => Some((*k, *n)),
            _ => None,
        }
    }

    fn get(&self, name: &str) -> Option<&Value> {
        assert!(
            self.command.opts.iter().any(|o| o.name == name),
            "`critbox {}` declares no option --{name}",
            self.command.name
        );
        self.values.iter().rev().find(|(n, _)| *n == name).map(|(_, v)| v)
    }

    /// Whether a switch was given.
    pub fn switch(&self, name: &str) -> bool {
        self.get(name).is_some()
    }

    /// A path option's value.
    pub fn path(&self, name: &str) -> Option<&str> {
        match self.get(name) {
            Some(Value::Text(t)) => Some(t),
            _ => None,
        }
    }

    /// A whole-number option's value.
    pub fn whole(&self, name: &str) -> Option<u64> {
        match self.get(name) {
            Some(Value::Whole(n)) => Some(*n),
            _ => None,
        }
    }

    /// A port option's value.
    pub fn port(&self, name: &str) -> Option<u16> {
        match self.get(name) {
            Some(Value::Port(p)) => Some(*p),
            _ => None,
        }
    }

    /// A list option's values, in order over every time it was given.
    pub fn wholes(&self, name: &str) -> Option<Vec<u64>> {
        let _ = self.get(name);
        let mut all: Option<Vec<u64>> = None;
        for (n, v) in &self.values {
            if let (true, Value::Wholes(list)) = (*n == name, v) {
                all.get_or_insert_with(Vec::new).extend(list);
            }
        }
        all
    }
}

fn check_value(flag: &str, kind: Kind, text: &str) -> Result<Value, UsageError> {
    let bad = |what: &str| Err(UsageError(format!("{flag}: {text:?} is not {what}")));
    match kind {
        Kind::Switch => Ok(Value::Switch),
        Kind::Path => Ok(Value::Text(text.to_string())),
        Kind::Word(words) => match words.contains(&text) {
            true => Ok(Value::Text(text.to_string())),
            false => bad(&format!("one of {}", words.join(", "))),
        },
        Kind::Shard => {
            match text.split_once('/').map(|(k, n)| (k.trim().parse::<u64>(), n.trim().parse::<u64>())) {
                Some((Ok(k), Ok(n))) if n >= 1 && k < n => Ok(Value::Shard(k, n)),
                Some((Ok(_), Ok(_))) => bad("a shard K/N with N ≥ 1 and K < N (K counts from 0)"),
                _ => bad("a shard K/N (two whole numbers, K counts from 0)"),
            }
        }
        Kind::Whole => text.parse().map(Value::Whole).or_else(|_| bad("a whole number")),
        Kind::Port => text.parse().map(Value::Port).or_else(|_| bad("a port number (0 to 65535)")),
        Kind::Wholes => match text.split(',').map(|x| x.trim().parse::<u64>()).collect() {
            Ok(list) => Ok(Value::Wholes(list)),
            Err(_) => bad("a comma-separated list of whole numbers"),
        },
    }
}

/// Parses the arguments after the program's name.
pub fn parse(args: Vec<OsString>) -> Result<Parsed, UsageError> {
    use lexopt::Arg;
    let mut p = lexopt::Parser::from_args(args);
    let first = match p.next() {
        Ok(Some(Arg::Value(v))) => v.to_string_lossy().into_owned(),
        Ok(Some(Arg::Long("help") | Arg::Short('h'))) => return Ok(Parsed::Help),
        Ok(Some(Arg::Long(o))) => return Err(UsageError(format!("unknown command \"--{o}\""))),
        Ok(Some(Arg::Short(o))) => return Err(UsageError(format!("unknown command \"-{o}\""))),
        Ok(None) => return Err(UsageError("no command given".into())),
        Err(e) => return Err(UsageError(e.to_string())),
    };
    let Some(command) = COMMANDS.iter().find(|c| c.name == first) else {
        return Err(UsageError(format!("unknown command {first:?}")));
    };
    if command.name == "help" {
        return Ok(Parsed::Help);
    }
    let name = command.name;
    let mut operand = None;
    let mut more = Vec::new();
    let mut values = Vec::new();
    loop {
        let arg = match p.next() {
            Ok(Some(a)) => a,
            Ok(None) => break,
            Err(e) => return Err(UsageError(format!("{name}: {e}"))),
        };
        let flag = match arg {
            Arg::Value(v) => {
                let v = v.to_string_lossy().into_owned();
                match command.operand {
                    Some(_) if operand.is_none() => operand = Some(v),
                    Some(what) if what.ends_with("...") => more.push(v),
                    Some(what) => {
                        let what = what.trim_end_matches(".json");
                        return Err(UsageError(format!(
                            "`critbox {name}` takes exactly one {what} argument"
                        )));
                    }
                    None => return Err(UsageError(format!("`critbox {name}` takes no argument, got {v:?}"))),
                }
                continue;
            }
            Arg::Long("help") | Arg::Short('h') => return Ok(Parsed::Help),
            Arg::Long(l) => format!("--{l}"),
            Arg::Short(s) => format!("-{s}"),
        };
        let Some(o) = command.opts.iter().find(|o| flag.strip_prefix("--") == Some(o.name)) else {
            return Err(UsageError(format!("{name}: unknown option {flag:?}")));
        };
        let value = if o.kind == Kind::Switch {
            if let Some(v) = p.optional_value() {
                return Err(UsageError(format!("{flag} takes no value, got {:?}", v.to_string_lossy())));
            }
            Value::Switch
        } else {
            let text = match p.value() {
                Ok(v) => v.to_string_lossy().into_owned(),
                Err(_) => return Err(UsageError(format!("{flag} needs a value ({})", o.value))),
            };
            check_value(&flag, o.kind, &text)?
        };
        values.push((o.name, value));
    }
    if let (Some(what), None) = (command.operand, &operand) {
        let what = what.trim_end_matches("...").trim_end_matches(".json");
        return Err(UsageError(format!("`critbox {name}` needs a {what} argument")));
    }
    Ok(Parsed::Run(Args { command, operand, more, values }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse_str(line: &str) -> Result<Parsed, UsageError> {
        parse(line.split_whitespace().map(OsString::from).collect())
    }

    #[test]
    fn every_option_in_the_usage_text_parses() {
        // The usage text is made from the table; each option it shows, with a
        // value of its kind, must parse (common practice, no source).
        let text = usage();
        for c in COMMANDS {
            assert!(text.contains(&format!("critbox {}", c.name)), "{}", c.name);
            for o in c.opts {
                let value = match o.kind {
                    Kind::Switch => String::new(),
                    Kind::Path => "x".into(),
                    Kind::Whole | Kind::Port => "7".into(),
                    Kind::Wholes => "1,2".into(),
                    Kind::Shard => "1/4".into(),
                    Kind::Word(w) => w[0].into(),
                };
                assert!(text.contains(&format!("--{}", o.name)));
                let operand = c.operand.map(|_| "c.json").unwrap_or_default();
                let line = format!("{} {operand} --{} {value}", c.name, o.name);
                match parse_str(&line) {
                    Ok(Parsed::Run(a)) => assert_eq!(a.command.name, c.name),
                    other => panic!("{line}: {other:?}"),
                }
            }
        }
    }

    #[test]
    fn values_are_checked_and_read_back() {
        let Ok(Parsed::Run(a)) =
            parse_str("probe c.json --seed 3 --checkpoints 0,5 --checkpoints 9 --seed 4")
        else {
            panic!()
        };
        assert_eq!((a.operand(), a.whole("seed"), a.whole("variant")), ("c.json", Some(4), None));
        assert_eq!(a.wholes("checkpoints"), Some(vec![0, 5, 9]));
        let Ok(Parsed::Run(a)) =
            parse(vec!["inspect".into(), "--at=12".into(), "-".into(), "--table".into()])
        else {
            panic!()
        };
        assert_eq!((a.operand(), a.whole("at"), a.switch("table")), ("-", Some(12), true));
        let e = |l: &str| parse_str(l).unwrap_err().0;
        assert_eq!(e("inspect c.json --at -1"), "--at: \"-1\" is not a whole number");
        assert_eq!(e("inspect c.json --at"), "--at needs a value (STEP)");
        assert_eq!(e("inspect c.json --at x"), "--at: \"x\" is not a whole number");
        assert_eq!(e("serve --port 70000"), "--port: \"70000\" is not a port number (0 to 65535)");
        assert_eq!(
            e("bench c.json --rss-at 1,b"),
            "--rss-at: \"1,b\" is not a comma-separated list of whole numbers"
        );
        assert_eq!(e("run c.json --bogus"), "run: unknown option \"--bogus\"");
        assert_eq!(e("run c.json -x"), "run: unknown option \"-x\"");
        assert_eq!(e("run"), "`critbox run` needs a CONFIG argument");
        assert_eq!(e("open a b"), "`critbox open` takes exactly one RESULTS argument");
        assert_eq!(e("serve web"), "`critbox serve` takes no argument, got \"web\"");
        assert_eq!(e("frobnicate"), "unknown command \"frobnicate\"");
        assert_eq!(e(""), "no command given");
        assert!(matches!(parse_str("run c.json --help"), Ok(Parsed::Help)));
    }

    #[test]
    #[should_panic(expected = "declares no option --seed")]
    fn asking_for_an_undeclared_option_is_a_programming_error() {
        let Ok(Parsed::Run(a)) = parse_str("run c.json") else { panic!() };
        a.whole("seed");
    }
}
