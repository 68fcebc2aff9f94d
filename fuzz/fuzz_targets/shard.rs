//! Fuzz target: partial results files (the parts `critbox run --shard`
//! writes and `critbox merge` joins). Any text must give a part or an error
//! with a non-empty message. A part that reads is written again and read
//! back with the same jobs, stage, shard and config hash; merging it alone
//! answers (a merge or a message naming what is missing); merging it with
//! itself is refused as a doubled shard whenever it holds a job.
//! Properties: common practice for a decoder of untrusted text, no source.

#![no_main]

use critbox_core::experiment::shard::{merge, read_part, save_part};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let part = match read_part(text) {
        Ok(p) => p,
        Err(e) => {
            assert!(!e.to_string().trim().is_empty(), "an empty message");
            return;
        }
    };
    let again =
        save_part(&part.plan, &part.results, part.stage, part.shard, &part.jobs, part.chosen.as_deref())
            .to_string();
    let back = read_part(&again).unwrap_or_else(|e| panic!("a re-written part does not read: {e}"));
    assert_eq!(back.jobs, part.jobs);
    assert_eq!(back.stage, part.stage);
    assert_eq!(back.shard, part.shard);
    assert_eq!(back.config_sha256, part.config_sha256);
    if let Err(m) = merge(&[("a.json".to_string(), part.clone())]) {
        assert!(!m.trim().is_empty(), "an empty merge message");
    }
    if !part.jobs.is_empty() {
        let twice = merge(&[("a.json".to_string(), part.clone()), ("b.json".to_string(), part)]);
        let Err(m) = twice else { panic!("a part merged with itself is a doubled shard") };
        assert!(m.contains("both"), "the doubled shard is named: {m}");
    }
});
