//! The annealer: Metropolis acceptance and the stage loop that the cooling schedule
//! drives over the move budget (the moves themselves are in [`moves`]).
//!
//! One [`Annealer`] owns a [`Layout`] and a seeded [`Rng`]. The caller advances it in
//! batches ([`Annealer::run_moves`], [`Annealer::run_stage`]) so that a worker thread can
//! interleave commands and snapshots, or runs it to the end with [`Annealer::run`]. The
//! run ends when its move budget is spent (every schedule plans to spend it exactly).
//! Nothing here reads a clock, and the same design, options and seed give the same
//! placement bit for bit.

mod moves;

use serde::{Deserialize, Serialize};

use self::moves::{Ahead, Proposal};
use super::layout::{Layout, PartMove, Terms, Weights};
use super::options::{AnnealOptions, PlaceError, check_options, default_budget};
use super::rng::Rng;
use super::schedule::{Cooling, Leg, Schedule, StageStats};
use crate::model::{Design, Point, Quarter};

/// What happened during one stage (one temperature).
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct StageReport {
    pub stage: u32,
    /// Total moves so far, at the end of the stage.
    pub moves: u64,
    pub temperature: f64,
    pub energy: f64,
    pub best_energy: f64,
    pub terms: Terms,
    pub acceptance: f64,
    /// Displacement window, mm.
    pub window: f64,
    /// The run the stage belongs to: its start (set by the placer; `Given` for a lone
    /// annealer) ...
    #[serde(default)]
    pub start: super::options::Start,
    /// ... and its chain: the replica whose state was at the coldest temperature when
    /// the row was taken (0 for a lone annealer).
    #[serde(default)]
    pub chain: u32,
}

#[derive(Clone, Copy, Debug, Default)]
struct StageAccum {
    moves: u64,
    accepted: u64,
    // Welford's running mean and sum of squares of the energy.
    mean: f64,
    m2: f64,
}

impl StageAccum {
    #[inline]
    fn push(&mut self, e: f64, accepted: bool) {
        self.moves += 1;
        self.accepted += u64::from(accepted);
        let d = e - self.mean;
        self.mean += d / self.moves as f64;
        self.m2 += d * (e - self.mean);
    }

    fn sigma(&self) -> f64 {
        if self.moves > 1 {
            (self.m2 / (self.moves - 1) as f64).sqrt()
        } else {
            0.0
        }
    }
}

/// A simulated-annealing placement run in progress.
pub struct Annealer {
    pub(super) layout: Layout,
    weights: Weights,
    /// The weights without the legality ramp of the run's last stretch.
    base_weights: Weights,
    pub(super) rng: Rng,
    pub(super) opts: AnnealOptions,
    pub(super) movable: Vec<u32>,
    /// The parts of the next three moves, drawn ahead so that their data can be fetched
    /// into the cache while the moves before them run.
    ahead: [Ahead; 3],
    /// Grid cells (x0, x1, y0, y1) whose points lie on the board's box.
    pub(super) cells: (i64, i64, i64, i64),
    max_window: f64,
    /// Base temperature (the schedule's); the Metropolis test uses it times `scale`.
    t: f64,
    /// Replica exchange: this chain's temperature factor (1 alone).
    scale: f64,
    t0: f64,
    t_end: f64,
    pub(super) window: f64,
    energy: f64,
    moves: u64,
    accepted: u64,
    /// The run ends when `moves` reaches this.
    budget: u64,
    stage_acc: StageAccum,
    moves_per_stage: u64,
    cooling: Cooling,
    /// Score ([`Self::score`]) and terms of the best state seen at a stage end.
    best_energy: f64,
    best_terms: Terms,
    best_pos: Vec<Point>,
    best_quarter: Vec<Quarter>,
    /// Move count at the last full recomputation of the energy terms.
    last_resync: u64,
    last_acceptance: f64,
    done: bool,
    history: Vec<StageReport>,
    /// The moves of the last group proposal (shift, mirror) and the parts it gathered.
    pub(super) group: Vec<PartMove>,
    pub(super) group_parts: Vec<u32>,
}

/// Share of the first cooling leg over which the legality weights rise, and the factor
/// they reach (see `Annealer::ramp_legality`).
pub const RAMP_SHARE: f64 = 0.2;
pub const RAMP_MAX: f64 = 16.0;

/// The temperature at which a run is frozen: a one-grid-step lengthening of a net of
/// median weight is accepted with probability e^-5 (under 1 %). Cooling legs end here.
pub fn end_temperature(design: &Design, weights: &Weights) -> f64 {
    let mut w: Vec<f64> = design
        .board
        .nets
        .iter()
        .zip(&design.net_pins)
        .filter(|(_, pins)| pins.len() >= 2)
        .map(|(n, _)| n.weight)
        .collect();
    w.sort_by(f64::total_cmp);
    let median = w.get(w.len() / 2).copied().unwrap_or(1.0);
    let g = design.board.rules.placement_grid;
    (g * median * weights.wirelength / 5.0).max(1e-12)
}

/// The temperature at which the Metropolis test accepts the fraction `chi` of the uphill
/// changes `ups` (all > 0) on average: the root of mean(exp(-dE/T)) = chi, found by
/// bisection on log T (the mean rises with T). Kirkpatrick, Gelatt and Vecchi's rule
/// T = mean(dE) / ln(1/chi) is the same for equal changes, but on a spread of changes it
/// accepts far fewer than `chi` of them (the large ones dominate the mean).
pub fn temperature_for_acceptance(ups: &[f64], chi: f64) -> f64 {
    if ups.is_empty() {
        return 1.0;
    }
    let chi = chi.clamp(1e-9, 1.0 - 1e-9);
    let acc = |t: f64| ups.iter().map(|&d| (-d / t).exp()).sum::<f64>() / ups.len() as f64;
    let max = ups.iter().copied().fold(0.0f64, f64::max).max(1e-300);
    let min = ups
        .iter()
        .copied()
        .fold(f64::INFINITY, f64::min)
        .max(1e-300);
    // Keep acc(lo) <= chi <= acc(hi).
    let (mut lo, mut hi) = (min / 1e3, max * 1e3 / (1.0 - chi));
    while acc(hi) < chi && hi < 1e300 {
        hi *= 10.0;
    }
    while acc(lo) > chi && lo > 1e-300 {
        lo /= 10.0;
    }
    for _ in 0..200 {
        let mid = (lo * hi).sqrt();
        if acc(mid) < chi {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi / lo < 1.0 + 1e-12 {
            break;
        }
    }
    (lo * hi).sqrt()
}

impl Annealer {
    /// Prepares a run: gives unplaced parts random positions, builds the layout, sets
    /// the start temperature and plans the cooling over the move budget
    /// (`opts.max_moves`, or the default budget for the board).
    pub fn new(design: &Design, opts: AnnealOptions) -> Result<Annealer, PlaceError> {
        check_options(&opts)?;
        let grid = design.board.rules.placement_grid;
        if !(grid.is_finite() && grid > 0.0) {
            return Err(PlaceError::BadGrid(grid));
        }
        let mut rng = Rng::new(opts.seed);
        let bounds = design.board.outline.bounds();
        // Grid cells whose points lie on the board's box (a bound a rounding error away
        // from a grid step is on it).
        let lo = |v: f64| (v / grid - 1e-9).ceil() as i64;
        let hi = |v: f64| (v / grid + 1e-9).floor() as i64;
        let cells = (
            lo(bounds.min.x),
            hi(bounds.max.x).max(lo(bounds.min.x)),
            lo(bounds.min.y),
            hi(bounds.max.y).max(lo(bounds.min.y)),
        );
        let mut design = design.clone();
        for part in &mut design.board.parts {
            if part.locked {
                if part.at.is_none() {
                    return Err(PlaceError::LockedUnplaced(part.reference.clone()));
                }
            } else if part.at.is_none() || opts.scatter {
                let cx = cells.0 + i64::from(rng.below((cells.1 - cells.0 + 1) as u32));
                let cy = cells.2 + i64::from(rng.below((cells.3 - cells.2 + 1) as u32));
                part.at = Some(Point::new(cx as f64 * grid, cy as f64 * grid));
            }
        }
        let layout = Layout::new(&design)?;
        let weights = opts.weights.unwrap_or_else(|| Weights::for_design(&design));
        let movable: Vec<u32> = (0..layout.part_count() as u32)
            .filter(|&i| !layout.is_locked(i))
            .collect();
        let budget = opts
            .max_moves
            .unwrap_or_else(|| default_budget(movable.len(), opts.effort))
            .max(1);
        let moves_per_stage = stage_length(budget, opts.stages, movable.len());
        let max_window = bounds.width().max(bounds.height()).max(grid);
        let energy = layout.terms().energy(&weights);
        let t_end = end_temperature(&design, &weights);
        let mut a = Annealer {
            best_pos: layout.positions().to_vec(),
            best_quarter: layout.quarters().to_vec(),
            layout,
            weights,
            base_weights: weights,
            rng,
            movable,
            ahead: [Ahead::default(); 3],
            cells,
            max_window,
            t: 0.0,
            scale: 1.0,
            t0: 0.0,
            t_end,
            window: opts
                .start_window
                .map_or(max_window, |w| w.clamp(grid, max_window)),
            energy,
            moves: 0,
            accepted: 0,
            budget,
            stage_acc: StageAccum::default(),
            moves_per_stage,
            cooling: Cooling::new(
                opts.schedule,
                Leg {
                    t_from: 0.0,
                    t_to: 0.0,
                    start: 0,
                    end: budget,
                },
            ),
            best_energy: f64::INFINITY,
            best_terms: Terms::default(),
            last_resync: 0,
            last_acceptance: 1.0,
            done: false,
            history: Vec::new(),
            group: Vec::new(),
            group_parts: Vec::new(),
            opts,
        };
        a.t0 = match (a.opts.schedule.is_descent(), a.opts.start_temperature) {
            (true, _) => 0.0,
            (_, Some(t)) => t,
            (_, None) => a.sample_start_temperature(a.opts.start_acceptance),
        };
        a.t = a.t0;
        a.keep_if_best();
        let t_to = a.leg_end_temperature(a.t0);
        a.cooling.set_leg(Leg {
            t_from: a.t0,
            t_to,
            start: 0,
            end: budget,
        });
        if a.movable.is_empty() {
            a.done = true;
        }
        Ok(a)
    }

    /// Where a leg starting at `t` ends: the frozen temperature, or a hundredth of `t`
    /// when `t` is already below it (a cool start).
    fn leg_end_temperature(&self, t: f64) -> f64 {
        if t > 0.0 && self.t_end >= t {
            t / 100.0
        } else {
            self.t_end
        }
    }

    /// The temperature at which the Metropolis test accepts the fraction `chi` of the
    /// uphill moves sampled from the current layout ([`temperature_for_acceptance`]).
    /// The samples are evaluated and undone, so the state is unchanged.
    fn sample_start_temperature(&mut self, chi: f64) -> f64 {
        let samples = self.moves_per_stage.clamp(500, 5000);
        let eps = 1e-9 * self.energy.abs().max(1e-6);
        let mut ups = Vec::new();
        for _ in 0..samples {
            let Some(p) = self.propose() else {
                continue;
            };
            let de = self.evaluate(p).energy(&self.weights);
            self.layout.revert();
            if de > eps {
                ups.push(de);
            }
        }
        if ups.is_empty() {
            return self.t_end.max(1e-9);
        }
        temperature_for_acceptance(&ups, chi)
    }

    /// Evaluates a proposal (see [`Layout::evaluate`]).
    #[inline]
    fn evaluate(&mut self, p: Proposal) -> Terms {
        match p {
            Proposal::Small(mv, n) => self.layout.evaluate(&mv[..n]),
            Proposal::Group => self.layout.evaluate(&self.group),
        }
    }

    /// One Metropolis step at the current temperature. Returns whether a move was
    /// accepted.
    #[inline]
    fn step(&mut self) -> bool {
        let Some(p) = self.propose() else {
            self.stage_acc.push(self.energy, false);
            self.moves += 1;
            return false;
        };
        let de = self.evaluate(p).energy(&self.weights);
        let t = self.t * self.scale;
        let accept = de <= 0.0 || (t > 0.0 && self.rng.unit() < (-de / t).exp());
        if accept {
            self.layout.commit();
            self.energy += de;
            self.accepted += 1;
        } else {
            self.layout.revert();
        }
        self.moves += 1;
        self.stage_acc.push(self.energy, accept);
        accept
    }

    /// Runs up to `n` moves (fewer if the budget runs out), ending stages as they fill.
    pub fn run_moves(&mut self, n: u64) {
        let mut left = n;
        while left > 0 && !self.done {
            let room = self.moves_per_stage - self.stage_acc.moves;
            let k = left.min(room).min(self.budget - self.moves);
            for _ in 0..k {
                self.step();
            }
            left -= k;
            if self.stage_acc.moves >= self.moves_per_stage || self.moves >= self.budget {
                self.end_stage();
            }
        }
    }

    /// Moves left in the current stage.
    pub fn stage_moves_left(&self) -> u64 {
        self.moves_per_stage - self.stage_acc.moves
    }

    /// Runs the rest of the current stage.
    pub fn run_stage(&mut self) {
        let room = self.moves_per_stage - self.stage_acc.moves;
        self.run_moves(room.max(1));
    }

    /// Runs until the budget is spent, calling `observe` after every stage; stops early
    /// when `observe` returns false. Then puts back the best state seen.
    pub fn run(&mut self, mut observe: impl FnMut(&StageReport) -> bool) {
        while !self.done {
            self.run_stage();
            if let Some(r) = self.history.last()
                && !observe(r)
            {
                break;
            }
        }
        self.restore_best();
    }

    fn end_stage(&mut self) {
        let acc = if self.stage_acc.moves > 0 {
            self.stage_acc.accepted as f64 / self.stage_acc.moves as f64
        } else {
            0.0
        };
        self.last_acceptance = acc;
        // Keep the acceptance of displacements near 0.44 by resizing the window (the
        // VPR placer's rule: w <- w * (1 - 0.44 + acceptance)).
        let g = self.layout.grid();
        self.window = (self.window * (1.0 - 0.44 + acc)).clamp(g, self.max_window);
        // Drop accumulated rounding now and then (a full recomputation costs about as
        // much as a few moves per part, so not after every short stage).
        if self.moves - self.last_resync >= 20 * self.layout.part_count() as u64 {
            self.layout.resync();
            self.energy = self.layout.terms().energy(&self.weights);
            self.last_resync = self.moves;
        }
        self.keep_if_best();
        self.history.push(StageReport {
            stage: self.history.len() as u32 + 1,
            moves: self.moves,
            temperature: self.temperature(),
            energy: self.energy,
            best_energy: self.lowest_energy(),
            terms: self.layout.terms(),
            acceptance: acc,
            window: self.window,
            ..StageReport::default()
        });
        let stats = StageStats {
            temperature: self.t,
            acceptance: acc,
            energy_sigma: self.stage_acc.sigma() / self.scale,
            moves: self.moves,
            stage_moves: self.moves_per_stage,
        };
        self.stage_acc = StageAccum::default();
        if self.moves >= self.budget {
            self.done = true;
            return;
        }
        self.t = self.cooling.next(&stats);
        self.ramp_legality();
    }

    /// Over the last [`RAMP_SHARE`] of the first cooling leg, the legality terms' weights
    /// rise geometrically to [`RAMP_MAX`] times their own, so the run resolves its last
    /// slivers of overlap itself, trading wirelength for legality in small steps, rather
    /// than leaving them to the legal finish's jumps. (The best state is judged by the
    /// ramp's final weights throughout, [`Self::score`], so states before and during the
    /// ramp compare fairly.)
    fn ramp_legality(&mut self) {
        let leg = self.cooling.leg;
        if leg.start != 0 || self.opts.schedule.is_descent() {
            return;
        }
        let p = self.moves as f64 / leg.end.max(1) as f64;
        let from = 1.0 - RAMP_SHARE;
        if p <= from {
            return;
        }
        let f = RAMP_MAX.powf(((p - from) / RAMP_SHARE).min(1.0));
        self.weights = self.base_weights.with_legality_factor(f);
        self.energy = self.layout.terms().energy(&self.weights);
    }

    /// How good a state is for keeping: the energy with the legality terms at the
    /// ramp's final weight, so a legal state beats one with a little less wiring but
    /// slivers of overlap, whatever the weights the run is at.
    fn score(&self) -> f64 {
        self.layout
            .terms()
            .energy(&self.base_weights.with_legality_factor(RAMP_MAX))
    }

    /// Keeps the current state as the best if it scores lower.
    fn keep_if_best(&mut self) {
        let s = self.score();
        if s < self.best_energy {
            self.best_energy = s;
            self.best_terms = self.layout.terms();
            self.best_pos.copy_from_slice(self.layout.positions());
            self.best_quarter.copy_from_slice(self.layout.quarters());
        }
    }

    /// Puts the best state seen at a stage end back, if it beats the current one.
    pub fn restore_best(&mut self) {
        if self.best_energy < self.score() {
            for i in 0..self.layout.part_count() as u32 {
                let (p, q) = (self.best_pos[i as usize], self.best_quarter[i as usize]);
                if self.layout.position(i) != p || self.layout.quarter(i) != q {
                    self.layout.apply(&[PartMove {
                        part: i,
                        at: p,
                        quarter: q,
                    }]);
                }
            }
            self.layout.resync();
            self.energy = self.layout.terms().energy(&self.weights);
        }
        if self.weights != self.base_weights {
            self.weights = self.base_weights;
            self.energy = self.layout.terms().energy(&self.weights);
        }
    }

    /// Raises the temperature mid-run to `fraction` of the start temperature (at least
    /// the current one), reopens the window, and adds a new cooling leg of `fraction`
    /// of the original budget, so a frozen or stuck run explores again and cools anew.
    pub fn reheat(&mut self, fraction: f64) {
        if self.opts.schedule.is_descent() || self.movable.is_empty() {
            return;
        }
        let f = fraction.clamp(0.0, 1.0);
        self.t = self.t.max(self.t0 * f);
        self.window = self.window.max(self.max_window * f.sqrt());
        let planned = self.cooling.leg.end.max(1);
        let extra = ((planned as f64 * f) as u64).max(self.moves_per_stage);
        self.budget = self.moves + extra;
        let t_to = self.leg_end_temperature(self.t);
        self.cooling.set_leg(Leg {
            t_from: self.t,
            t_to,
            start: self.moves,
            end: self.budget,
        });
        self.done = false;
    }

    /// Changes the schedule mid-run: a new leg from the current temperature over the
    /// moves left (a stage at least). From descent, the start temperature is sampled
    /// afresh.
    pub fn set_schedule(&mut self, s: Schedule) {
        self.opts.schedule = s;
        self.cooling.schedule = s;
        if s.is_descent() {
            self.t = 0.0;
        } else if self.t <= 0.0 {
            if self.t0 <= 0.0 {
                self.t0 = self.sample_start_temperature(self.opts.start_acceptance);
            }
            self.t = self.t0;
        }
        self.budget = self.budget.max(self.moves + self.moves_per_stage);
        let t_to = self.leg_end_temperature(self.t);
        self.cooling.set_leg(Leg {
            t_from: self.t,
            t_to,
            start: self.moves,
            end: self.budget,
        });
        self.done = self.movable.is_empty();
    }

    pub fn is_done(&self) -> bool {
        self.done
    }
    /// The temperature the Metropolis test uses now.
    pub fn temperature(&self) -> f64 {
        self.t * self.scale
    }
    pub fn start_temperature(&self) -> f64 {
        self.t0
    }
    /// The temperature cooling legs end at.
    pub fn end_temperature(&self) -> f64 {
        self.t_end
    }
    pub fn energy(&self) -> f64 {
        self.energy
    }
    /// Lowest energy of a state the run can return to: the best state kept at a stage
    /// end, or the current one.
    pub fn lowest_energy(&self) -> f64 {
        let best = if self.best_energy.is_finite() {
            self.best_terms.energy(&self.weights)
        } else {
            f64::INFINITY
        };
        best.min(self.energy)
    }
    pub fn moves(&self) -> u64 {
        self.moves
    }
    /// The move count at which the run ends.
    pub fn budget(&self) -> u64 {
        self.budget
    }
    pub fn accepted(&self) -> u64 {
        self.accepted
    }
    pub fn window(&self) -> f64 {
        self.window
    }
    pub fn moves_per_stage(&self) -> u64 {
        self.moves_per_stage
    }
    /// Acceptance ratio of the last completed stage.
    pub fn acceptance(&self) -> f64 {
        self.last_acceptance
    }
    /// The schedule's parameter as its last step set it ([`Cooling::parameter`]).
    pub fn schedule_parameter(&self) -> f64 {
        self.cooling.parameter()
    }
    pub fn weights(&self) -> &Weights {
        &self.weights
    }
    pub fn layout(&self) -> &Layout {
        &self.layout
    }
    pub fn layout_mut(&mut self) -> &mut Layout {
        &mut self.layout
    }
    pub fn options(&self) -> &AnnealOptions {
        &self.opts
    }
    pub fn history(&self) -> &[StageReport] {
        &self.history
    }
    pub fn rng_mut(&mut self) -> &mut Rng {
        &mut self.rng
    }

    /// Sets the base temperature directly (fixed-temperature experiments, manual
    /// control).
    pub fn set_temperature(&mut self, t: f64) {
        self.t = t.max(0.0);
    }

    /// Holds the base temperature at `t` for the rest of the budget (a leg that does not
    /// cool: fixed-temperature sampling through the ordinary stage loop).
    pub fn hold_temperature(&mut self, t: f64) {
        self.t = t.max(0.0);
        self.cooling.set_leg(Leg {
            t_from: self.t,
            t_to: self.t,
            start: self.moves,
            end: self.budget,
        });
    }

    /// Replica exchange: this chain's temperature factor over the schedule's.
    pub fn temperature_scale(&self) -> f64 {
        self.scale
    }
    pub fn set_temperature_scale(&mut self, s: f64) {
        self.scale = s.max(0.0);
    }

    /// Recomputes the running energy from the layout (after changes made outside the
    /// move loop, such as the legal finish).
    pub fn refresh_energy(&mut self) {
        self.layout.resync();
        self.energy = self.layout.terms().energy(&self.weights);
        self.keep_if_best();
    }

    /// Changes the energy weights; the running energy follows.
    pub fn set_weights(&mut self, w: Weights) {
        self.weights = w;
        self.base_weights = w;
        self.energy = self.layout.terms().energy(&w);
        self.best_energy = f64::INFINITY;
        self.keep_if_best();
    }

    /// Moves one part by hand (GUI drag); locked state is the caller's business.
    pub fn move_part(&mut self, part: u32, at: Point, quarter: Quarter) {
        self.layout.apply(&[PartMove { part, at, quarter }]);
        self.energy = self.layout.terms().energy(&self.weights);
        self.best_energy = f64::INFINITY;
        self.keep_if_best();
    }

    /// Locks or unlocks a part; locked parts leave the move set.
    pub fn set_locked(&mut self, part: u32, locked: bool) {
        self.layout.set_locked(part, locked);
        self.movable = (0..self.layout.part_count() as u32)
            .filter(|&i| !self.layout.is_locked(i))
            .collect();
        self.ahead = [Ahead::default(); 3];
        if self.movable.is_empty() {
            self.done = true;
        }
    }

    /// Proposes a random move and evaluates it, incrementally or by full recomputation,
    /// without keeping it; returns the energy change (benchmarks and tests).
    pub fn probe(&mut self, full: bool) -> f64 {
        let Some(p) = self.propose() else {
            return 0.0;
        };
        if full {
            let before = self.layout.terms().energy(&self.weights);
            let moves = match p {
                Proposal::Small(mv, n) => mv[..n].to_vec(),
                Proposal::Group => self.group.clone(),
            };
            self.layout.full_terms_with(&moves).energy(&self.weights) - before
        } else {
            let de = self.evaluate(p).energy(&self.weights);
            self.layout.revert();
            de
        }
    }

    /// Runs `n` single Metropolis steps at a fixed temperature outside the schedule (no
    /// stage logic, not counted in [`Self::moves`]), calling `visit` after each: fixed-
    /// temperature sampling and the legal finish's quench.
    pub fn sample_at(&mut self, t: f64, n: u64, mut visit: impl FnMut(&Layout)) {
        let saved = (
            self.t,
            self.scale,
            self.moves,
            self.accepted,
            self.stage_acc,
        );
        self.t = t;
        self.scale = 1.0;
        for _ in 0..n {
            self.step();
            visit(&self.layout);
        }
        (
            self.t,
            self.scale,
            self.moves,
            self.accepted,
            self.stage_acc,
        ) = saved;
    }

    /// Replica exchange: trades the temperature factor, window and cooling state with
    /// `other`, so each chain carries on at the other's temperature with its own parts.
    pub fn exchange_temperatures(&mut self, other: &mut Annealer) {
        std::mem::swap(&mut self.scale, &mut other.scale);
        std::mem::swap(&mut self.window, &mut other.window);
        std::mem::swap(&mut self.t, &mut other.t);
        std::mem::swap(&mut self.cooling, &mut other.cooling);
    }
}

/// Moves per stage for a budget: `stages` stages, each of at least one move per movable
/// part (at least 100 moves) when the budget allows, so a stage's statistics mean
/// something; a small budget gets fewer, longer stages.
fn stage_length(budget: u64, stages: u32, movable: usize) -> u64 {
    let floor = (movable as u64).max(100).min(budget);
    (budget / u64::from(stages.max(1))).max(floor).max(1)
}

#[cfg(test)]
mod tests {
    use super::temperature_for_acceptance;

    /// For equal uphill changes the measured temperature is Kirkpatrick's
    /// T = dE / ln(1/chi) (CHECK-VALUES.md: T0 / dE = 4.48 for chi = 0.8); on a spread of
    /// changes the mean acceptance at the solved temperature is chi.
    #[test]
    fn temperature_for_acceptance_solves_the_mean_acceptance() {
        let t = temperature_for_acceptance(&[2.0; 10], 0.8);
        assert!((t / 2.0 - 4.4814).abs() < 1e-3, "{t}");
        let ups: Vec<f64> = (1..=200).map(|k| (k as f64 * 0.37).powi(2)).collect();
        for chi in [0.05, 0.3, 0.8] {
            let t = temperature_for_acceptance(&ups, chi);
            let acc = ups.iter().map(|d| (-d / t).exp()).sum::<f64>() / ups.len() as f64;
            assert!((acc - chi).abs() < 1e-9, "{chi}: {acc}");
        }
    }
}
