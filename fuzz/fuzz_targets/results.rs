//! Fuzz target: results files. Any text must give results or an error with
//! a non-empty message. Results that load are summarised, saved again and
//! re-loaded: the second load must succeed and give the same summary (a file
//! saved from the page reopens in the CLI with the same numbers). Property:
//! common practice for a decoder of untrusted text, no source.

#![no_main]

use critbox_core::experiment::export;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let (plan, results) = match export::load(text) {
        Ok(x) => x,
        Err(e) => {
            assert!(!e.to_string().trim().is_empty(), "an empty message");
            return;
        }
    };
    let summary = results.summary();
    let saved = export::save(&plan, &results).to_string();
    let (_, back) =
        export::load(&saved).unwrap_or_else(|e| panic!("a re-saved results file does not load: {e}"));
    assert_eq!(back.summary(), summary, "the summary changed through save and load");
});
