//! Gridworlds defined by a text map.
//!
//! Map characters: `#` wall, `.` floor, `S` start (exactly one), `D` dock (the
//! goal; entering it ends the episode), `~` spill (a hazard cell: entering it
//! adds `hazard_reward`, and with `hazard_restart` sends the agent back to the
//! start), `>` `<` `^` `v` one-way conveyors (entered only by a move in the
//! arrow's direction; every action on one moves on in that direction).
//! Every move costs `step_reward`; reaching a dock adds `goal_reward`.
//! Actions are north, east, south, west; a move into a wall or off the map
//! leaves the agent in place. With probability `slip` the move goes to one of
//! the two perpendicular directions instead (half each). The exact model
//! ([`FiniteModel`]) follows from the same rules, in [`GridWorld::model`].
//! Instead of a `map`, a config may name a built-in `layout`
//! ([`super::layouts`]), which also sets the reward settings it needs;
//! settings given explicitly override the layout's.

use serde::{Deserialize, Serialize};

use super::{layouts, Action, ActionSpace, FiniteModel, Outcome, StateVar, Step, Task, TaskError, TaskSpec};
use crate::rng::Stream;

/// Largest map side accepted.
pub const MAX_SIDE: usize = 64;

/// Settings of a gridworld (the `task` object of a config with `"kind": "grid"`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(from = "RawGridConfig")]
pub struct GridConfig {
    /// The map, one string per row (see the module documentation). Required
    /// unless `layout` is given.
    pub map: Vec<String>,
    /// A built-in layout by name (`rover`, `ledge`, `maze`), instead of `map`;
    /// it also sets the defaults of the settings below. Default none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub layout: Option<String>,
    /// Probability in [0, 0.5] that a move slips sideways. Default 0.
    #[serde(default)]
    pub slip: f64,
    /// Reward for every move, in [-1000, 1000]. Default -1.
    #[serde(default = "default_step_reward")]
    pub step_reward: f64,
    /// Extra reward for entering a spill cell, in [-1000, 1000]. Default -10.
    #[serde(default = "default_hazard_reward")]
    pub hazard_reward: f64,
    /// Whether entering a spill sends the agent back to the start. Default false.
    #[serde(default)]
    pub hazard_restart: bool,
    /// Extra reward for reaching a dock, in [-1000, 1000]. Default 0.
    #[serde(default)]
    pub goal_reward: f64,
    /// Episode length limit (truncation), in [1, 100000]. Default 200.
    #[serde(default = "default_max_steps")]
    pub max_steps: u32,
}

/// A grid config as written: unset settings come from the layout, if any.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawGridConfig {
    map: Option<Vec<String>>,
    layout: Option<String>,
    slip: Option<f64>,
    step_reward: Option<f64>,
    hazard_reward: Option<f64>,
    hazard_restart: Option<bool>,
    goal_reward: Option<f64>,
    max_steps: Option<u32>,
}

impl From<RawGridConfig> for GridConfig {
    fn from(r: RawGridConfig) -> Self {
        let base = GridConfig::default();
        let l = r.layout.as_deref().and_then(layouts::find);
        GridConfig {
            map: r.map.unwrap_or_else(|| match l {
                Some(l) => l.map.iter().map(|s| s.to_string()).collect(),
                None => Vec::new(),
            }),
            layout: r.layout,
            slip: r.slip.or(l.map(|l| l.slip)).unwrap_or(base.slip),
            step_reward: r.step_reward.or(l.map(|l| l.step_reward)).unwrap_or(base.step_reward),
            hazard_reward: r.hazard_reward.or(l.map(|l| l.hazard_reward)).unwrap_or(base.hazard_reward),
            hazard_restart: r.hazard_restart.or(l.map(|l| l.hazard_restart)).unwrap_or(base.hazard_restart),
            goal_reward: r.goal_reward.or(l.map(|l| l.goal_reward)).unwrap_or(base.goal_reward),
            max_steps: r.max_steps.or(l.map(|l| l.max_steps)).unwrap_or(base.max_steps),
        }
    }
}

impl GridConfig {
    /// The config of a built-in layout with its own settings.
    pub fn layout(name: &str) -> Option<GridConfig> {
        let l = layouts::find(name)?;
        Some(GridConfig {
            map: l.map.iter().map(|s| s.to_string()).collect(),
            layout: Some(name.to_string()),
            slip: l.slip,
            step_reward: l.step_reward,
            hazard_reward: l.hazard_reward,
            hazard_restart: l.hazard_restart,
            goal_reward: l.goal_reward,
            max_steps: l.max_steps,
        })
    }
}

fn default_step_reward() -> f64 {
    -1.0
}
fn default_hazard_reward() -> f64 {
    -10.0
}
fn default_max_steps() -> u32 {
    200
}

pub use super::layouts::ROVER_MAP;

impl Default for GridConfig {
    fn default() -> Self {
        GridConfig {
            map: ROVER_MAP.iter().map(|s| s.to_string()).collect(),
            layout: None,
            slip: 0.0,
            step_reward: default_step_reward(),
            hazard_reward: default_hazard_reward(),
            hazard_restart: false,
            goal_reward: 0.0,
            max_steps: default_max_steps(),
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Cell {
    Wall,
    Floor,
    Dock,
    Spill,
    /// A one-way conveyor moving in direction 0..4 (north, east, south, west).
    OneWay(usize),
}

/// Row and column moves for north, east, south, west.
const MOVES: [(i32, i32); 4] = [(-1, 0), (0, 1), (1, 0), (0, -1)];

/// A gridworld built from a [`GridConfig`].
#[derive(Clone, Debug)]
pub struct GridWorld {
    cfg: GridConfig,
    spec: TaskSpec,
    rows: usize,
    cols: usize,
    cells: Vec<Cell>,
    /// Cell index (row * cols + col) of each state.
    state_cell: Vec<usize>,
    /// State index of each cell (`usize::MAX` for walls).
    cell_state: Vec<usize>,
    start: usize,
    pos: usize,
}

fn check_reward(field: &str, v: f64) -> Result<(), TaskError> {
    if v.is_finite() && crate::settings::range(&format!("task.grid.{field}")).contains(v) {
        Ok(())
    } else {
        Err(TaskError::Invalid(field.into(), format!("must be a number in [-1000, 1000], got {v}")))
    }
}

impl GridWorld {
    /// Builds the world, or says which setting (or which map cell) is wrong.
    pub fn new(cfg: GridConfig) -> Result<Self, TaskError> {
        let bad = |f: &str, m: String| Err(TaskError::Invalid(f.into(), m));
        if let Some(name) = &cfg.layout {
            match layouts::find(name) {
                None => {
                    return bad(
                        "layout",
                        format!("unknown layout {name:?}; the layouts are {}", layouts::names()),
                    )
                }
                Some(l) if !cfg.map.iter().map(String::as_str).eq(l.map.iter().copied()) => {
                    return bad(
                        "layout",
                        format!("the config gives both a `map` and the layout {name:?}; give one of them"),
                    )
                }
                Some(_) => {}
            }
        }
        if cfg.map.is_empty() {
            return bad(
                "map",
                format!("is empty: give the rows of a map, or a `layout` ({})", layouts::names()),
            );
        }
        if cfg.map.len() > MAX_SIDE {
            return bad("map", format!("has {} rows; at most {MAX_SIDE} are allowed", cfg.map.len()));
        }
        let cols = cfg.map[0].chars().count();
        let rows = cfg.map.len();
        let mut cells = Vec::with_capacity(rows * cols);
        let mut start = None;
        for (r, line) in cfg.map.iter().enumerate() {
            let n = line.chars().count();
            if n != cols {
                return bad(
                    &format!("map[{r}]"),
                    format!("has {n} characters but row 0 has {cols}; all rows must have the same length"),
                );
            }
            if n == 0 || n > MAX_SIDE {
                return bad(&format!("map[{r}]"), format!("has {n} characters; a row needs 1 to {MAX_SIDE}"));
            }
            for (c, ch) in line.chars().enumerate() {
                let cell = match ch {
                    '#' => Cell::Wall,
                    '.' => Cell::Floor,
                    'D' => Cell::Dock,
                    '~' => Cell::Spill,
                    '^' => Cell::OneWay(0),
                    '>' => Cell::OneWay(1),
                    'v' => Cell::OneWay(2),
                    '<' => Cell::OneWay(3),
                    'S' => {
                        if start.is_some() {
                            return bad(
                                &format!("map[{r}]"),
                                format!("column {c}: a second start 'S'; the map needs exactly one"),
                            );
                        }
                        start = Some(r * cols + c);
                        Cell::Floor
                    }
                    other => {
                        return bad(
                            &format!("map[{r}]"),
                            format!(
                                "column {c}: unknown character {other:?}; use '#' wall, '.' floor, 'S' start, 'D' dock, '~' spill, '>' '<' '^' 'v' one-way"
                            ),
                        )
                    }
                };
                cells.push(cell);
            }
        }
        let Some(start) = start else {
            return bad("map", "has no start 'S'".into());
        };
        if !cells.contains(&Cell::Dock) {
            return bad("map", "has no dock 'D': the episode could never end at a goal".into());
        }
        if let Some(m) = crate::settings::check("task.grid.slip", cfg.slip) {
            return bad("slip", m);
        }
        check_reward("step_reward", cfg.step_reward)?;
        check_reward("hazard_reward", cfg.hazard_reward)?;
        check_reward("goal_reward", cfg.goal_reward)?;
        if let Some(m) = crate::settings::check_int("task.grid.max_steps", u64::from(cfg.max_steps)) {
            return Err(TaskError::Invalid("max_steps".into(), m));
        }
        let mut state_cell = Vec::new();
        let mut cell_state = vec![usize::MAX; cells.len()];
        for (i, cell) in cells.iter().enumerate() {
            if *cell != Cell::Wall {
                cell_state[i] = state_cell.len();
                state_cell.push(i);
            }
        }
        let spec = TaskSpec {
            kind: "grid",
            state_vars: vec![
                StateVar { name: "row".into(), low: 0.0, high: (rows - 1) as f64 },
                StateVar { name: "col".into(), low: 0.0, high: (cols - 1) as f64 },
            ],
            actions: ActionSpace::Discrete(
                ["north", "east", "south", "west"].iter().map(|s| s.to_string()).collect(),
            ),
            n_states: Some(state_cell.len()),
            default_discount: 0.99,
            max_steps: cfg.max_steps,
            continuing: false,
            state_names: Vec::new(),
            action_numbers: Vec::new(),
        };
        Ok(GridWorld { cfg, spec, rows, cols, cells, state_cell, cell_state, start, pos: start })
    }

    /// Map size as (rows, columns).
    pub fn size(&self) -> (usize, usize) {
        (self.rows, self.cols)
    }

    /// The cell index (row * cols + col) of state `s`.
    pub fn cell_of_state(&self, s: usize) -> usize {
        self.state_cell[s]
    }

    /// The cell reached by moving from `cell` in direction `dir` (walls,
    /// edges and conveyors facing another way block; on a conveyor every
    /// move goes its way).
    fn target(&self, cell: usize, dir: usize) -> usize {
        let dir = match self.cells[cell] {
            Cell::OneWay(d) => d,
            _ => dir,
        };
        let (dr, dc) = MOVES[dir];
        let r = (cell / self.cols) as i32 + dr;
        let c = (cell % self.cols) as i32 + dc;
        if r < 0 || c < 0 || r >= self.rows as i32 || c >= self.cols as i32 {
            return cell;
        }
        let t = r as usize * self.cols + c as usize;
        match self.cells[t] {
            Cell::Wall => cell,
            Cell::OneWay(d) if d != dir => cell,
            _ => t,
        }
    }

    /// Reward, resulting cell and termination of a move from `from` that
    /// ends at `cell` (a spill counts only when entered, not when the agent
    /// stays on it by bumping into a wall).
    fn arrive(&self, from: usize, cell: usize) -> (f64, usize, bool) {
        let mut reward = self.cfg.step_reward;
        match self.cells[cell] {
            Cell::Dock => (reward + self.cfg.goal_reward, cell, true),
            Cell::Spill if cell != from => {
                reward += self.cfg.hazard_reward;
                let to = if self.cfg.hazard_restart { self.start } else { cell };
                (reward, to, false)
            }
            _ => (reward, cell, false),
        }
    }

    /// The direction actually taken for action `a` with a uniform draw `u`.
    fn direction(&self, a: usize, u: f64) -> usize {
        let slip = self.cfg.slip;
        if u < slip * 0.5 {
            (a + 1) % 4
        } else if u < slip {
            (a + 3) % 4
        } else {
            a
        }
    }

    fn write_obs(&self, obs: &mut [f64]) {
        obs[0] = (self.pos / self.cols) as f64;
        obs[1] = (self.pos % self.cols) as f64;
    }
}

impl Task for GridWorld {
    fn spec(&self) -> &TaskSpec {
        &self.spec
    }

    fn reset(&mut self, _rng: &mut Stream, obs: &mut [f64]) {
        self.pos = self.start;
        self.write_obs(obs);
    }

    fn step(&mut self, action: Action<'_>, rng: &mut Stream, obs: &mut [f64]) -> Step {
        let a = match action {
            Action::Index(a) if a < 4 => a,
            other => panic!("grid task given an invalid action {other:?}"),
        };
        let dir = if self.cfg.slip > 0.0 { self.direction(a, rng.uniform()) } else { a };
        let (reward, to, terminated) = self.arrive(self.pos, self.target(self.pos, dir));
        self.pos = to;
        self.write_obs(obs);
        Step { reward, terminated }
    }

    fn state_id(&self) -> Option<usize> {
        Some(self.cell_state[self.pos])
    }

    fn id_of(&self, obs: &[f64]) -> Option<usize> {
        let (r, c) = (*obs.first()?, *obs.get(1)?);
        if r < 0.0 || c < 0.0 || r.fract() != 0.0 || c.fract() != 0.0 {
            return None;
        }
        let (r, c) = (r as usize, c as usize);
        if r >= self.rows || c >= self.cols {
            return None;
        }
        let s = self.cell_state[r * self.cols + c];
        (s != usize::MAX).then_some(s)
    }

    fn state_obs(&self, s: usize, obs: &mut [f64]) -> bool {
        let Some(&cell) = self.state_cell.get(s) else { return false };
        if obs.len() < 2 {
            return false;
        }
        obs[0] = (cell / self.cols) as f64;
        obs[1] = (cell % self.cols) as f64;
        true
    }

    fn model(&self) -> Option<FiniteModel> {
        let n = self.state_cell.len();
        let mut start = vec![0.0; n];
        start[self.cell_state[self.start]] = 1.0;
        let terminal: Vec<bool> = self.state_cell.iter().map(|&c| self.cells[c] == Cell::Dock).collect();
        let mut outcomes = Vec::with_capacity(n);
        for s in 0..n {
            let cell = self.state_cell[s];
            let mut per_action = Vec::with_capacity(4);
            for a in 0..4 {
                let mut list: Vec<Outcome> = Vec::new();
                if !terminal[s] {
                    let slip = self.cfg.slip;
                    for (dir, prob) in [(a, 1.0 - slip), ((a + 1) % 4, slip * 0.5), ((a + 3) % 4, slip * 0.5)]
                    {
                        if prob <= 0.0 {
                            continue;
                        }
                        let (reward, to, term) = self.arrive(cell, self.target(cell, dir));
                        let next = self.cell_state[to];
                        match list.iter_mut().find(|o| o.next == next && o.reward == reward) {
                            Some(o) => o.prob += prob,
                            None => list.push(Outcome { next, prob, reward, terminal: term }),
                        }
                    }
                }
                per_action.push(list);
            }
            outcomes.push(per_action);
        }
        Some(FiniteModel { n_states: n, n_actions: 4, start, terminal, outcomes })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn world(map: &[&str], slip: f64) -> GridWorld {
        GridWorld::new(GridConfig {
            map: map.iter().map(|s| s.to_string()).collect(),
            slip,
            ..GridConfig::default()
        })
        .unwrap()
    }

    #[test]
    fn moves_walls_spills_and_dock() {
        // Rules of this module (common practice for gridworlds, no source).
        let mut w = world(&["#####", "#S~D#", "#.#.#", "#####"], 0.0);
        let mut rng = Stream::from_seed(1);
        let mut obs = [0.0; 2];
        w.reset(&mut rng, &mut obs);
        assert_eq!(obs, [1.0, 1.0]);
        // North is a wall: stay, pay the step cost.
        let s = w.step(Action::Index(0), &mut rng, &mut obs);
        assert_eq!((s.reward, s.terminated, obs), (-1.0, false, [1.0, 1.0]));
        // East onto the spill: step cost plus the hazard.
        let s = w.step(Action::Index(1), &mut rng, &mut obs);
        assert_eq!((s.reward, s.terminated, obs), (-11.0, false, [1.0, 2.0]));
        // South from the spill is a wall.
        let s = w.step(Action::Index(2), &mut rng, &mut obs);
        assert_eq!(obs, [1.0, 2.0]);
        assert_eq!(s.reward, -1.0);
        // East onto the dock ends the episode.
        let s = w.step(Action::Index(1), &mut rng, &mut obs);
        assert_eq!((s.reward, s.terminated, obs), (-1.0, true, [1.0, 3.0]));
    }

    #[test]
    fn hazard_restart_returns_to_start() {
        let mut w = GridWorld::new(GridConfig {
            map: vec!["#####".into(), "#S~D#".into(), "#####".into()],
            hazard_restart: true,
            hazard_reward: -100.0,
            ..GridConfig::default()
        })
        .unwrap();
        let mut rng = Stream::from_seed(1);
        let mut obs = [0.0; 2];
        w.reset(&mut rng, &mut obs);
        let s = w.step(Action::Index(1), &mut rng, &mut obs);
        assert_eq!((s.reward, obs), (-101.0, [1.0, 1.0]));
    }

    #[test]
    fn model_rows_sum_to_one_and_match_sampling() {
        let w = world(&ROVER_MAP, 0.2);
        let m = w.model().unwrap();
        assert_eq!(m.n_states, w.spec().n_states.unwrap());
        for s in 0..m.n_states {
            for a in 0..4 {
                let total: f64 = m.outcomes[s][a].iter().map(|o| o.prob).sum();
                if m.terminal[s] {
                    assert!(m.outcomes[s][a].is_empty());
                } else {
                    assert!((total - 1.0).abs() < 1e-12, "state {s} action {a}: {total}");
                }
            }
        }
        // Sampled next-state frequencies agree with the model (common practice, no source).
        let mut w2 = w.clone();
        let mut rng = Stream::from_seed(5);
        let mut obs = [0.0; 2];
        let n = 40_000;
        let mut counts = vec![0usize; m.n_states];
        for _ in 0..n {
            w2.reset(&mut rng, &mut obs);
            w2.step(Action::Index(1), &mut rng, &mut obs);
            counts[w2.state_id().unwrap()] += 1;
        }
        let s0 = m.start.iter().position(|&p| p == 1.0).unwrap();
        for o in &m.outcomes[s0][1] {
            let f = counts[o.next] as f64 / n as f64;
            assert!((f - o.prob).abs() < 0.01, "next {} freq {f} prob {}", o.next, o.prob);
        }
    }

    #[test]
    fn bad_maps_are_named() {
        let e = |map: &[&str]| {
            GridWorld::new(GridConfig {
                map: map.iter().map(|s| s.to_string()).collect(),
                ..GridConfig::default()
            })
            .unwrap_err()
            .to_string()
        };
        assert!(e(&["#S.#", "#.D"]).starts_with("map[1]: has 3 characters"));
        assert!(e(&["#S.x"]).contains("column 3: unknown character 'x'"));
        assert!(e(&["#..D"]).contains("no start"));
        assert!(e(&["#S.."]).contains("no dock"));
        assert!(e(&["SSD"]).contains("second start"));
    }
}
