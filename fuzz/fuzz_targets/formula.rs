//! Fuzz target: the reward formula language. Any text (up to the parser's
//! length limit, and a little past it) must parse or give an error with a
//! span inside the text; a formula that parses prints back to text that
//! re-parses to the same tree and prints the same again; a formula the
//! compiler accepts (as a replacement reward on the grid task) evaluates, on
//! step inputs drawn from the input's own bytes, to exactly what the
//! reference semantics give (bit for bit, NaN equal to NaN). Properties:
//! common practice for checking a parser and a compiler, no source.

#![no_main]

use std::collections::BTreeMap;

use critbox_core::reward::parse::{parse, MAX_FORMULA_BYTES};
use critbox_core::reward::print::pretty;
use critbox_core::reward::{Mode, RewardConfig, Shaper};
use critbox_core::rng::Stream;
use libfuzzer_sys::fuzz_target;

#[path = "../../crate/core/tests/common/formula_ref.rs"]
mod formula_ref;
use formula_ref::{reference, same, spec, Env, GAMMA, K};

fuzz_target!(|data: &[u8]| {
    if data.len() > MAX_FORMULA_BYTES + 64 {
        return;
    }
    let text = String::from_utf8_lossy(data);
    let tree = match parse(&text) {
        Ok(tree) => tree,
        Err(e) => {
            let (s, t) = (e.start, e.end);
            assert!(s <= t && t <= text.len(), "{text:?}: span {s}..{t} of {} bytes", text.len());
            assert!(
                text.is_char_boundary(s) && text.is_char_boundary(t),
                "{text:?}: span {s}..{t} splits a character"
            );
            assert!(e.column >= 1 && !e.message.trim().is_empty(), "{text:?}: {e:?}");
            let (a, b) = e.utf16_span(&text);
            assert!(a <= b && b <= text.encode_utf16().count(), "{text:?}: UTF-16 span {a}..{b}");
            return;
        }
    };
    let printed = pretty(&tree);
    if printed.len() <= MAX_FORMULA_BYTES {
        let back = parse(&printed)
            .unwrap_or_else(|e| panic!("{text:?} printed as {printed:?}, which does not parse: {e}"));
        assert_eq!(back, tree, "{text:?} printed as {printed:?}, which parses to another tree");
        assert_eq!(pretty(&back), printed, "{text:?}: printing is not stable");
    }
    let cfg = RewardConfig {
        mode: Mode::Replace,
        formula: text.to_string(),
        constants: BTreeMap::from([("k".to_string(), K)]),
    };
    let Ok(mut shaper) = Shaper::new(&cfg, &spec(), GAMMA) else { return };
    // Step inputs from the input's bytes (the same input, the same steps).
    let seed =
        data.iter().fold(0xcbf2_9ce4_8422_2325u64, |h, &b| (h ^ b as u64).wrapping_mul(0x100_0000_01b3));
    let mut rng = Stream::from_seed(seed);
    for _ in 0..3 {
        let env = Env::random(&mut rng);
        let got = env.reward_of(&mut shaper);
        let want = reference(&tree, &env);
        assert!(same(got, want), "{text:?}: compiled {got}, reference {want}");
    }
});
