//! The compiled reward evaluates without allocating (design rule: the
//! per-step hot path allocates nothing). A counting global allocator in this
//! test binary only (common practice, no source).

mod common;

use common::allocations_so_far;

use critbox_core::reward::{Mode, RewardConfig, Shaper, StepInput};
use critbox_core::task::grid::{GridConfig, GridWorld};
use critbox_core::task::{Action, Task};

#[global_allocator]
static GLOBAL: common::Counting = common::Counting;

#[test]
fn shaped_rewards_allocate_nothing_per_step() {
    let task = GridWorld::new(GridConfig::default()).unwrap();
    let spec = task.spec().clone();
    let formulas = [
        (Mode::Bonus, "if abs(row' - 5) + abs(col' - 10) < abs(row - 5) + abs(col - 10) then 3 else 0"),
        (Mode::Replace, "max(base, -2, -t / 100) * clamp(gamma, 0, 1) + (if terminal then 10 else 0)"),
        (Mode::Potential, "-(abs(row - 5) + abs(col - 10)) + 0.1 * sin(row) * exp(-col)"),
        (Mode::Base, ""),
    ];
    for (mode, f) in formulas {
        let cfg = RewardConfig { mode, formula: f.into(), ..Default::default() };
        let mut shaper = Shaper::new(&cfg, &spec, 0.99).unwrap();
        let before = allocations_so_far();
        let mut total = 0.0;
        for i in 0..10_000u64 {
            let (r, c) = ((i % 6) as f64, (i % 11) as f64);
            total += shaper.reward(&StepInput {
                obs: &[r, c],
                action: Action::Index((i % 4) as usize),
                next: &[(r + 1.0) % 6.0, c],
                base: -1.0,
                terminal: i % 17 == 0,
                t: i,
            });
        }
        let after = allocations_so_far();
        assert!(total.is_finite());
        assert_eq!(after - before, 0, "{mode:?} {f}: {} allocations in 10 000 steps", after - before);
    }
}
