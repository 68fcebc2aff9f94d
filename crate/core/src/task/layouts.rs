//! Built-in gridworld layouts, chosen by name with `"layout"` in a grid config.
//!
//! A [`Layout`] is a map and the reward settings that go with it; settings
//! given explicitly in the config override the layout's. Three layouts:
//!
//! - `rover`: the warehouse floor (our own): a rover heads for its charging
//!   dock past spill cells.
//! - `ledge`: cliff walking reproduced exactly (Sutton & Barto 2018,
//!   Example 6.6): 4 × 12, start bottom-left, dock bottom-right, the ten
//!   cells between them are the ledge; −1 per move, and a move onto the
//!   ledge gives −100 in total (−1 for the move, −99 hazard) and sends the
//!   agent back to the start; no discount in the book (the optimal return
//!   is −13).
//! - `maze`: a one-way maze of our own. Arrow cells (`>` `<` `^` `v`) are
//!   one-way conveyors: they can be entered only by a move in the arrow's
//!   direction, and every action taken on one moves on in that direction.
//!   The short route to the dock (20 moves) passes a conveyor that cannot be
//!   walked back; a conveyor next to the start drops the agent into the
//!   bottom corridor, a long way round.

/// The built-in warehouse floor: a rover starts at `S` and must reach its
/// charging dock `D`, past spill cells `~` (our own layout).
pub const ROVER_MAP: [&str; 7] = [
    "############",
    "#S...#.....#",
    "#.~~.#.~~..#",
    "#....~...#.#",
    "#.##.#.~.#.#",
    "#......~..D#",
    "############",
];

/// A named map with its reward settings.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct Layout {
    /// The name used in configs.
    pub name: &'static str,
    /// One line saying what it is.
    pub title: &'static str,
    /// The map rows.
    pub map: &'static [&'static str],
    /// Probability that a move slips sideways.
    pub slip: f64,
    /// Reward per move.
    pub step_reward: f64,
    /// Extra reward for entering a spill / ledge cell.
    pub hazard_reward: f64,
    /// Whether a hazard sends the agent back to the start.
    pub hazard_restart: bool,
    /// Extra reward at the dock.
    pub goal_reward: f64,
    /// Episode length limit.
    pub max_steps: u32,
}

/// The ledge walk: cliff walking as in Sutton & Barto (2018), Example 6.6.
pub const LEDGE_MAP: [&str; 4] = ["............", "............", "............", "S~~~~~~~~~~D"];

/// The one-way maze (our own).
pub const MAZE_MAP: [&str; 9] = [
    "#############",
    "#S....#.....#",
    "#.###.#.###.#",
    "#.#...>...#.#",
    "#v#.#####.#.#",
    "#.#.....#.#.#",
    "#.#####.#.#.#",
    "#.........#D#",
    "#############",
];

/// Every built-in layout.
pub const LAYOUTS: [Layout; 3] = [
    Layout {
        name: "rover",
        title: "warehouse floor: the rover heads for its charging dock past spills",
        map: &ROVER_MAP,
        slip: 0.0,
        step_reward: -1.0,
        hazard_reward: -10.0,
        hazard_restart: false,
        goal_reward: 0.0,
        max_steps: 200,
    },
    Layout {
        name: "ledge",
        title: "ledge walk (cliff walking, Sutton & Barto 2018, Example 6.6)",
        map: &LEDGE_MAP,
        slip: 0.0,
        step_reward: -1.0,
        hazard_reward: -99.0,
        hazard_restart: true,
        goal_reward: 0.0,
        max_steps: 200,
    },
    Layout {
        name: "maze",
        title: "one-way maze: conveyors that cannot be walked back",
        map: &MAZE_MAP,
        slip: 0.0,
        step_reward: -1.0,
        hazard_reward: -10.0,
        hazard_restart: false,
        goal_reward: 0.0,
        max_steps: 300,
    },
];

/// The layout of a name.
pub fn find(name: &str) -> Option<&'static Layout> {
    LAYOUTS.iter().find(|l| l.name == name)
}

/// The layout names, comma-separated (for messages).
pub fn names() -> String {
    LAYOUTS.iter().map(|l| l.name).collect::<Vec<_>>().join(", ")
}

/// Every layout as JSON, for a page that offers them: `[{name, title, map,
/// slip, step_reward, hazard_reward, hazard_restart, goal_reward,
/// max_steps}]` ([`Layout`]'s fields; its numbers are finite constants).
pub fn to_json() -> serde_json::Value {
    crate::report::to_value(&LAYOUTS)
}
