//! Fuzz target: experiment configs. Any text must give a plan or an error
//! with at least one problem, each naming a non-empty message. An accepted
//! plan must round-trip: its filled-in config, written as JSON and parsed
//! again, gives the same plan (the results file and the share link rely on
//! it). Its first and last jobs (a study's fresh jobs after a tuning choice)
//! are built and stepped a few steps: a hostile but valid setting must fail
//! its job, not the process. Properties: common practice for a decoder of
//! untrusted text, no source. Bounds (set by scripts/fuzz): 2 GB of memory
//! and 10 s per input.

#![no_main]

use critbox_core::experiment::{parse, Job};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let plan = match parse(text) {
        Ok(plan) => plan,
        Err(e) => {
            assert!(!e.problems.is_empty(), "an error with no problems");
            assert!(e.problems.iter().all(|p| !p.message.trim().is_empty()), "an empty message: {e:?}");
            return;
        }
    };
    let canonical = serde_json::to_string(&plan.config).expect("a plan's config serialises");
    let mut again = parse(&canonical)
        .unwrap_or_else(|e| panic!("the canonical config of an accepted plan is refused: {e}\n{canonical}"));
    // Notes are about the words the input used (old key names), not the plan.
    again.notes.clone_from(&plan.notes);
    assert!(again == plan, "the plan changed through its canonical JSON:\n{canonical}");
    let n = plan.job_count();
    assert!(n >= 1, "a valid plan with no jobs");
    let plan = match &plan.study {
        Some(s) => {
            let last: Vec<usize> = s.grids.iter().map(|g| g.points.len() - 1).collect();
            plan.with_choice(&last).expect("every grid has a point")
        }
        None => plan,
    };
    for id in [0, n - 1] {
        let mut job = Job::new(&plan, id);
        job.advance(8);
    }
});
