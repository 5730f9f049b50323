//! The settings of a placement run, their one set of defaults, and their checks.

use serde::{Deserialize, Serialize};

use super::layout::{LayoutError, Weights};
use super::schedule::{Schedule, ScheduleError};

/// Settings of a placement run. One set of defaults, [`AnnealOptions::default`].
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct AnnealOptions {
    pub seed: u64,
    /// The cooling schedule and any parameters set explicitly (the others follow from
    /// the budget); in settings files `"Geometric"` or `{"Geometric": {"alpha": 0.95}}`.
    pub schedule: Schedule,
    /// The move budget: all moves of the run, every replica and start together. Every
    /// schedule plans its cooling to use it up exactly. `None`: [`default_budget`] times
    /// `effort`.
    pub max_moves: Option<u64>,
    /// Multiple of the default move budget ([`default_budget`]) when `max_moves` is not
    /// given.
    pub effort: f64,
    /// Fraction of sampled uphill moves the Metropolis test accepts at the start
    /// temperature, measured (the temperature is solved for, see
    /// [`super::anneal::temperature_for_acceptance`]).
    pub start_acceptance: f64,
    /// Start temperature; `None` derives it from sampled moves and `start_acceptance`.
    pub start_temperature: Option<f64>,
    /// Energy weights; `None` uses [`Weights::for_design`].
    pub weights: Option<Weights>,
    /// Fraction of moves that turn a part instead of displacing or swapping it.
    pub rotate_fraction: f64,
    /// Fraction of moves aimed at the centroid of the part's net neighbours (a window of
    /// two grid steps around it) instead of a random spot in the window: a directed move
    /// (common practice in annealing placers). Directed moves are not symmetric, so
    /// Metropolis sampling is exact only with zero.
    pub directed_fraction: f64,
    /// Fraction of moves that turn the contents of a run of grid cells along a row or a
    /// column by one cell (symmetric).
    pub shift_fraction: f64,
    /// Fraction of moves that mirror the contents of a window of grid cells (symmetric).
    pub mirror_fraction: f64,
    /// Place every unlocked part at a random spot before starting, ignoring the file's
    /// positions.
    pub scatter: bool,
    /// Displacement window at the start, mm (`None`: the whole board). A smaller one
    /// also lowers the start temperature derived from sampled moves: a warm start that
    /// repairs local order without undoing the global one.
    pub start_window: Option<f64>,
    /// Place clusters of strongly connected parts first, then the parts
    /// ([`super::multilevel`]); used by [`super::place`], not by a bare annealer.
    pub multilevel: bool,
    /// Where the parts start: the file's positions (and random spots for unplaced
    /// parts), the analytical start of [`super::spectral`], or both (the default, the
    /// better result kept); used by [`super::place`], not by a bare annealer.
    pub start: Start,
    /// Annealing chains per start, exchanging temperatures (replica exchange). The
    /// result depends on the seed and this number, never on `threads`.
    pub replicas: u32,
    /// Threads to run the chains on; 0: one per core. Changes the time a run takes,
    /// never its result.
    pub threads: usize,
    /// Temperature stages per cooling leg.
    pub stages: u32,
}

/// Where a placement run starts ([`AnnealOptions::start`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum Start {
    /// The file's positions; unplaced parts (all unlocked parts with `scatter`) at
    /// random spots; annealing from the start temperature.
    Given,
    /// Spectral placement spread by recursive bisection and improved by anchored
    /// quadratic placement, then annealing from a cool start in a small window
    /// ([`super::spectral`]).
    Spectral,
    /// `Given` and `Spectral`, each with half of the move budget (side by side when
    /// there are threads for both); the better result is kept (legal before not legal,
    /// then the lower energy; `Given` on a tie). Neither start wins everywhere: the
    /// analytical one has no folds on dense, regular boards, annealing from a scatter
    /// does better on some small mixed boards (docs/performance.md).
    #[default]
    Both,
}

impl Start {
    pub fn name(self) -> &'static str {
        match self {
            Start::Given => "given",
            Start::Spectral => "spectral",
            Start::Both => "both",
        }
    }
}

impl std::str::FromStr for Start {
    type Err = String;
    fn from_str(s: &str) -> Result<Start, String> {
        match s {
            "given" => Ok(Start::Given),
            "spectral" => Ok(Start::Spectral),
            "both" => Ok(Start::Both),
            _ => Err(format!("unknown start {s:?} (given, spectral or both)")),
        }
    }
}

impl Default for AnnealOptions {
    fn default() -> Self {
        AnnealOptions {
            seed: 1,
            schedule: Schedule::default(),
            max_moves: None,
            effort: 1.0,
            start_acceptance: 0.3,
            start_temperature: None,
            weights: None,
            rotate_fraction: 0.1,
            directed_fraction: 0.3,
            shift_fraction: 0.0,
            mirror_fraction: 0.0,
            scatter: false,
            start_window: None,
            multilevel: false,
            start: Start::Both,
            replicas: 2,
            threads: 0,
            stages: 200,
        }
    }
}

/// Moves per movable part^(4/3) in the default budget (the N^(4/3) growth of moves with
/// board size is common practice in annealing placers).
pub const BUDGET_PER_PART: f64 = 25_000.0;
/// The default budget's floor and ceiling.
pub const BUDGET_MIN: u64 = 1_000_000;
pub const BUDGET_MAX: u64 = 150_000_000;

/// The default move budget for a board of `movable` parts: 25,000 N^(4/3), at least one
/// million and at most 150 million moves (10,000 parts take about a minute and a half on
/// two cores), times `effort`.
pub fn default_budget(movable: usize, effort: f64) -> u64 {
    let n = movable.max(1) as f64;
    let b = (BUDGET_PER_PART * n.powf(4.0 / 3.0)).clamp(BUDGET_MIN as f64, BUDGET_MAX as f64);
    (b * effort).round().clamp(1.0, 1e15) as u64
}

/// Why a run cannot start.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum PlaceError {
    #[error(transparent)]
    Layout(#[from] LayoutError),
    #[error("part {0} is locked but has no position")]
    LockedUnplaced(String),
    #[error("the placement grid must be positive, got {0} mm")]
    BadGrid(f64),
    #[error(transparent)]
    Schedule(#[from] ScheduleError),
    #[error("{what} must be {range}, got {value}")]
    BadOption {
        what: &'static str,
        range: &'static str,
        value: f64,
    },
}

/// Checks every option's range.
pub fn check_options(o: &AnnealOptions) -> Result<(), PlaceError> {
    let bad = |what, range, value: f64| Err(PlaceError::BadOption { what, range, value });
    o.schedule.check()?;
    if !(o.effort.is_finite() && o.effort > 0.0 && o.effort <= 1e4) {
        return bad("effort", "between 0 and 10000", o.effort);
    }
    if o.max_moves == Some(0) {
        return bad("move budget", "at least 1", 0.0);
    }
    if !(o.start_acceptance > 0.0 && o.start_acceptance < 1.0) {
        return bad(
            "start acceptance",
            "strictly between 0 and 1",
            o.start_acceptance,
        );
    }
    if let Some(t) = o.start_temperature
        && !(t.is_finite() && t >= 0.0)
    {
        return bad("start temperature", "a finite number >= 0", t);
    }
    if let Some(w) = o.start_window
        && !(w.is_finite() && w > 0.0)
    {
        return bad("start window", "a positive number of mm", w);
    }
    for (what, v) in [
        ("rotate fraction", o.rotate_fraction),
        ("directed fraction", o.directed_fraction),
        ("shift fraction", o.shift_fraction),
        ("mirror fraction", o.mirror_fraction),
    ] {
        if !(0.0..=1.0).contains(&v) {
            return bad(what, "between 0 and 1", v);
        }
    }
    if o.directed_fraction + o.shift_fraction + o.mirror_fraction > 1.0 {
        return bad(
            "directed, shift and mirror fractions together",
            "at most 1",
            o.directed_fraction + o.shift_fraction + o.mirror_fraction,
        );
    }
    if !(1..=64).contains(&o.replicas) {
        return bad("replicas", "between 1 and 64", f64::from(o.replicas));
    }
    if o.threads > 1024 {
        return bad(
            "threads",
            "between 0 (all cores) and 1024",
            o.threads as f64,
        );
    }
    if !(1..=100_000).contains(&o.stages) {
        return bad("stages", "between 1 and 100000", f64::from(o.stages));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_budget_grows_as_n_to_the_four_thirds_between_its_bounds() {
        assert_eq!(default_budget(1, 1.0), BUDGET_MIN);
        // 625^(4/3) = 5343.70 (computed).
        let b = default_budget(625, 1.0) as f64;
        assert!((b / (BUDGET_PER_PART * 5343.70) - 1.0).abs() < 1e-5, "{b}");
        assert_eq!(default_budget(100_000, 1.0), BUDGET_MAX);
        assert_eq!(default_budget(625, 2.0), 2 * default_budget(625, 1.0));
    }

    #[test]
    fn defaults_pass_their_own_checks() {
        check_options(&AnnealOptions::default()).unwrap();
    }
}
