//! The annealer: the move generator, Metropolis acceptance and the stage loop that the
//! cooling schedule drives.
//!
//! One [`Annealer`] owns a [`Layout`] and a seeded [`Rng`]. The caller advances it in
//! batches ([`Annealer::run_moves`], [`Annealer::run_stage`]) so that a worker thread can
//! interleave commands and snapshots, or runs it to the end with [`Annealer::run`].
//! Nothing here reads a clock except to report speed, and nothing depends on it: the same
//! design, options and seed give the same placement bit for bit.

use serde::{Deserialize, Serialize};

use super::layout::{Layout, LayoutError, PartMove, Terms, Weights};
use super::rng::Rng;
use super::schedule::{Schedule, StageStats};
use crate::model::{Design, Point, Quarter};

/// Settings of an annealing run. One set of defaults, [`AnnealOptions::default`].
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AnnealOptions {
    pub seed: u64,
    pub schedule: Schedule,
    /// Cap on the total number of moves (the adaptive schedule steers by it; without a cap
    /// it assumes 300 stages' worth).
    pub max_moves: Option<u64>,
    /// Moves per temperature are `effort * N^(4/3)` for N movable parts (common practice).
    pub effort: f64,
    /// Fraction of uphill moves accepted at the start temperature (chi0).
    pub start_acceptance: f64,
    /// Start temperature; `None` derives it from sampled moves and `start_acceptance`.
    pub start_temperature: Option<f64>,
    /// Energy weights; `None` uses [`Weights::for_design`].
    pub weights: Option<Weights>,
    /// Fraction of moves that rotate a part instead of displacing or swapping it.
    pub rotate_fraction: f64,
    /// Fraction of moves that exchange the contents of two equal square windows of the
    /// grid (2 to 6 cells a side, within the displacement window), each part keeping its
    /// place within its window: a symmetric move that shifts whole groups at once, meant
    /// to let folds frozen in while the layout condenses straighten. Off by default: on
    /// the grid instances it made results worse (N = 10: 1.38 to 1.77 with 2 % block
    /// moves against 1.19 to 1.48 without; see docs/performance.md).
    pub block_fraction: f64,
    /// Fraction of moves aimed at the centroid of the part's net neighbours (a small
    /// window around it) instead of a random spot in the window: a directed move (common
    /// practice in annealing placers). Directed moves are not symmetric, so Metropolis
    /// sampling is exact only with zero (the default).
    pub directed_fraction: f64,
    /// The run is frozen when a stage accepts fewer than this fraction of moves and the
    /// best energy has not improved for `frozen_stages` stages.
    pub frozen_acceptance: f64,
    pub frozen_stages: u32,
    /// Place every unlocked part at a random spot before starting, ignoring the file's
    /// positions.
    pub scatter: bool,
    /// Displacement window at the start, mm (`None`: the whole board). A smaller one
    /// also lowers the start temperature derived from sampled moves: a warm start that
    /// repairs local order without undoing the global one (multilevel refinement).
    #[serde(default)]
    pub start_window: Option<f64>,
    /// Place clusters of strongly connected parts first, then the parts
    /// ([`super::multilevel`]); used by [`super::place`], not by a bare [`Annealer`].
    #[serde(default)]
    pub multilevel: bool,
    /// Where the parts start: the file's positions (and random spots for unplaced
    /// parts), the analytical start of [`super::spectral`], or both (the default, the
    /// better result kept); used by [`super::place`], not by a bare [`Annealer`].
    #[serde(default)]
    pub start: Start,
}

/// Where a placement run starts ([`AnnealOptions::start`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum Start {
    /// The file's positions; unplaced parts (all unlocked parts with `scatter`) at
    /// random spots; annealing from the start temperature.
    Given,
    /// Quadratic and spectral placement spread by recursive bisection, then annealing
    /// from a cool start in a small window ([`super::spectral`]).
    Spectral,
    /// `Given`, then `Spectral`, each with half of any move cap; the better result is
    /// kept (legal before not legal, then the lower energy; `Given` on a tie). Neither
    /// start wins everywhere: the analytical one has no folds on dense, regular boards
    /// (grid 30: 1.00 of the optimum against 1.60), annealing from a scatter does better
    /// on some small mixed boards (docs/performance.md).
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
            effort: 4.0,
            start_acceptance: 0.8,
            start_temperature: None,
            weights: None,
            rotate_fraction: 0.1,
            directed_fraction: 0.0,
            block_fraction: 0.0,
            frozen_acceptance: 0.02,
            frozen_stages: 5,
            scatter: false,
            start_window: None,
            multilevel: false,
            start: Start::Both,
        }
    }
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
    #[error("{what} must be {range}, got {value}")]
    BadOption {
        what: &'static str,
        range: &'static str,
        value: f64,
    },
}

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
}

#[derive(Clone, Copy, Debug, Default)]
struct StageAccum {
    moves: u64,
    accepted: u64,
    /// Accepted moves that changed the energy (moves of a part inside a big net's box
    /// can cost exactly nothing; they say nothing about being frozen).
    changed: u64,
    // Welford's running mean and sum of squares of the energy.
    mean: f64,
    m2: f64,
}

impl StageAccum {
    #[inline]
    fn push(&mut self, e: f64, accepted: bool, changed: bool) {
        self.moves += 1;
        self.accepted += u64::from(accepted);
        self.changed += u64::from(accepted && changed);
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
    layout: Layout,
    weights: Weights,
    rng: Rng,
    opts: AnnealOptions,
    movable: Vec<u32>,
    /// The parts of the next three moves, drawn ahead so that their data can be fetched
    /// into the cache while the moves before them run ([`NOT_DRAWN`] until first used).
    ahead: [Ahead; 3],
    cells: (i64, i64, i64, i64),
    max_window: f64,
    t: f64,
    t0: f64,
    window: f64,
    energy: f64,
    moves: u64,
    accepted: u64,
    stage: u32,
    stage_acc: StageAccum,
    moves_per_stage: u64,
    best_energy: f64,
    best_pos: Vec<Point>,
    best_quarter: Vec<Quarter>,
    stale_stages: u32,
    /// Move count at the last full recomputation of the energy terms.
    last_resync: u64,
    /// Energy changes smaller than this are rounding (moves that change nothing).
    change_eps: f64,
    last_acceptance: f64,
    done: bool,
    history: Vec<StageReport>,
    /// The moves of the last block proposal, and scratch lists of the two windows' parts.
    block_buf: Vec<PartMove>,
    block_a: Vec<u32>,
    block_b: Vec<u32>,
}

/// `v.round() as i64` (half away from zero, saturating, NaN to 0) without the library
/// call that `f64::round` becomes on baseline x86-64 (no SSE4.1 rounding instruction):
/// the move generator rounds four times a move. Exact, since `v - trunc(v)` is exact.
#[inline]
pub(crate) fn round(v: f64) -> i64 {
    let t = v as i64;
    let f = v - t as f64;
    if f >= 0.5 {
        t.saturating_add(1)
    } else if f <= -0.5 {
        t.saturating_sub(1)
    } else {
        t
    }
}

/// [`Annealer::ahead`] before the first draw.
const NOT_DRAWN: u32 = u32::MAX;

/// A move drawn ahead: the part, its displacement in grid steps and the bins under the
/// part and its target (cache hints).
#[derive(Clone, Copy, Debug)]
struct Ahead {
    part: u32,
    dx: i64,
    dy: i64,
    bins: [u32; 2],
}

impl Default for Ahead {
    fn default() -> Self {
        Ahead {
            part: NOT_DRAWN,
            dx: 0,
            dy: 0,
            bins: [u32::MAX; 2],
        }
    }
}

/// A proposed move: one or two parts held inline, or a block move in `block_buf`.
#[derive(Clone, Copy)]
enum Proposal {
    Small([PartMove; 2], usize),
    Block,
}

impl Annealer {
    /// Prepares a run: gives unplaced parts random positions, builds the layout and sets
    /// the start temperature.
    pub fn new(design: &Design, opts: AnnealOptions) -> Result<Annealer, PlaceError> {
        check_options(&opts)?;
        let grid = design.board.rules.placement_grid;
        if !(grid.is_finite() && grid > 0.0) {
            return Err(PlaceError::BadGrid(grid));
        }
        let mut rng = Rng::new(opts.seed);
        let bounds = design.board.outline.bounds();
        let cells = (
            (bounds.min.x / grid).ceil() as i64,
            ((bounds.max.x / grid).floor() as i64).max((bounds.min.x / grid).ceil() as i64),
            (bounds.min.y / grid).ceil() as i64,
            ((bounds.max.y / grid).floor() as i64).max((bounds.min.y / grid).ceil() as i64),
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
        let n = movable.len().max(1) as f64;
        let mut moves_per_stage = (opts.effort * n.powf(4.0 / 3.0)).ceil().max(100.0) as u64;
        // With a move cap, shorten the stages so the schedule can cool all the way within
        // it, rather than being cut off while still hot.
        if let Some(cap) = opts.max_moves {
            let stages = opts.schedule.typical_stages().max(1.0);
            moves_per_stage = moves_per_stage.min(((cap as f64 / stages) as u64).max(100));
        }
        let max_window = bounds.width().max(bounds.height()).max(grid);
        let energy = layout.terms().energy(&weights);
        let mut a = Annealer {
            best_pos: layout.positions().to_vec(),
            best_quarter: layout.quarters().to_vec(),
            layout,
            weights,
            rng,
            movable,
            ahead: [Ahead::default(); 3],
            cells,
            max_window,
            t: 0.0,
            t0: 0.0,
            window: opts
                .start_window
                .map_or(max_window, |w| w.clamp(grid, max_window)),
            energy,
            moves: 0,
            accepted: 0,
            stage: 0,
            stage_acc: StageAccum::default(),
            moves_per_stage,
            best_energy: energy,
            stale_stages: 0,
            last_resync: 0,
            change_eps: 1e-9 * energy.abs().max(1e-6),
            last_acceptance: 1.0,
            done: false,
            history: Vec::new(),
            block_buf: Vec::new(),
            block_a: Vec::new(),
            block_b: Vec::new(),
            opts,
        };
        a.t0 = match (a.opts.schedule, a.opts.start_temperature) {
            (Schedule::Descent, _) => 0.0,
            (_, Some(t)) => t,
            (_, None) => a.sample_start_temperature(),
        };
        a.t = a.t0;
        if a.movable.is_empty() {
            a.done = true;
        }
        Ok(a)
    }

    /// T0 = mean(dE+) / ln(1/chi0) over sampled uphill moves (Kirkpatrick, Gelatt and
    /// Vecchi's rule). The samples are evaluated and undone, so the state is unchanged.
    fn sample_start_temperature(&mut self) -> f64 {
        let samples = self.moves_per_stage.clamp(200, 5000);
        let (mut sum, mut count) = (0.0, 0u64);
        for _ in 0..samples {
            let Some(p) = self.propose() else {
                continue;
            };
            let de = self.evaluate(p).energy(&self.weights);
            self.layout.revert();
            if de > 0.0 {
                sum += de;
                count += 1;
            }
        }
        if count == 0 {
            return 1.0;
        }
        (sum / count as f64) / (1.0 / self.opts.start_acceptance).ln()
    }

    /// The part to move now and its displacement in grid steps. Parts are drawn three
    /// moves ahead and displacements two: on a large board the part's row, its pins,
    /// its nets and the bins under it and under its target are each a cache miss, so
    /// they are asked for a move or two before they are read (see
    /// [`Layout::prefetch_row`]). A hint only: the draws, and so the results, are the
    /// same on every machine. A displacement drawn ahead uses the window of its draw,
    /// which differs from the current one only across a stage's end; the proposal stays
    /// symmetric.
    #[inline]
    fn next_part(&mut self) -> Ahead {
        let n = self.movable.len() as u32;
        if self.ahead[0].part == NOT_DRAWN {
            for k in 0..3 {
                self.ahead[k].part = self.movable[self.rng.below(n) as usize];
            }
            self.draw_offset(0);
            self.draw_offset(1);
        }
        let now = self.ahead[0];
        self.ahead[0] = self.ahead[1];
        self.ahead[1] = self.ahead[2];
        self.ahead[2] = Ahead {
            part: self.movable[self.rng.below(n) as usize],
            ..Ahead::default()
        };
        self.draw_offset(1);
        if self.layout.hints() {
            self.layout.prefetch_row(self.ahead[2].part);
            self.layout
                .prefetch_nets(self.ahead[0].part, self.ahead[0].bins);
        }
        now
    }

    /// Draws the displacement of `ahead[k]` and fetches the bin headers under the part
    /// and its target.
    #[inline]
    fn draw_offset(&mut self, k: usize) {
        let g = self.layout.grid();
        let w = self.window_cells();
        let e = &mut self.ahead[k];
        e.dx = self.rng.symmetric(w);
        e.dy = self.rng.symmetric(w);
        if !self.layout.hints() {
            return;
        }
        let own = self.layout.prefetch_pins(e.part);
        let pos = self.layout.position(e.part);
        let target = Point::new(
            (round(pos.x / g) + e.dx) as f64 * g,
            (round(pos.y / g) + e.dy) as f64 * g,
        );
        e.bins = [own, self.layout.prefetch_bin_at(target)];
    }

    /// The displacement window in whole grid steps (at least one).
    #[inline]
    fn window_cells(&self) -> u32 {
        (round(self.window / self.layout.grid()) as u32).max(1)
    }

    /// Picks a move: a quarter turn, a swap with the part at a random spot within the
    /// window, or a displacement to that spot. `None` if the draw moved nothing.
    #[inline]
    fn propose(&mut self) -> Option<Proposal> {
        if self.movable.is_empty() {
            // Every part locked: nothing to draw from.
            return None;
        }
        let ahead = self.next_part();
        let a = ahead.part;
        let pos = self.layout.position(a);
        let q = self.layout.quarter(a);
        if self.opts.rotate_fraction > 0.0
            && self.layout.is_rotatable(a)
            && self.rng.unit() < self.opts.rotate_fraction
        {
            let nq = Quarter::from_index(q.index() + 1 + self.rng.below(3) as usize);
            let m = PartMove {
                part: a,
                at: pos,
                quarter: nq,
            };
            return Some(Proposal::Small([m, m], 1));
        }
        let g = self.layout.grid();
        let mut w = self.window_cells();
        if self.opts.block_fraction > 0.0 && w >= 2 && self.rng.unit() < self.opts.block_fraction {
            return self.propose_block(a, w).then_some(Proposal::Block);
        }
        let mut centre = pos;
        let (mut dx, mut dy) = (ahead.dx, ahead.dy);
        if self.opts.directed_fraction > 0.0
            && self.rng.unit() < self.opts.directed_fraction
            && let Some(c) = self.layout.neighbour_centroid(a)
        {
            centre = c;
            w = w.min(2);
            dx = self.rng.symmetric(w);
            dy = self.rng.symmetric(w);
        }
        let cx = round(centre.x / g);
        let cy = round(centre.y / g);
        let tx = cx + dx;
        let ty = cy + dy;
        // A draw off the board is a null move rather than being clamped to the edge:
        // clamping would make edge cells likelier targets than they are sources, and the
        // proposal would no longer be symmetric (detailed balance). Only a part that is
        // itself off the board is pulled back in by clamping.
        let (x0, x1, y0, y1) = self.cells;
        let inside = |c: i64, lo: i64, hi: i64| (lo..=hi).contains(&c);
        let (tx, ty) = if inside(cx, x0, x1) && inside(cy, y0, y1) {
            if !inside(tx, x0, x1) || !inside(ty, y0, y1) {
                return None;
            }
            (tx, ty)
        } else {
            (tx.clamp(x0, x1), ty.clamp(y0, y1))
        };
        let target = Point::new(tx as f64 * g, ty as f64 * g);
        if target == pos {
            return None;
        }
        let ma = PartMove {
            part: a,
            at: target,
            quarter: q,
        };
        if let Some(b) = self.layout.part_at(target, a)
            && !self.layout.is_locked(b)
        {
            let pb = self.layout.position(b);
            let ma = PartMove { at: pb, ..ma };
            let mb = PartMove {
                part: b,
                at: pos,
                quarter: self.layout.quarter(b),
            };
            return Some(Proposal::Small([ma, mb], 2));
        }
        Some(Proposal::Small([ma, ma], 1))
    }

    /// A block move anchored at part `a`: window A has `a`'s cell as its lower-left
    /// corner, window B is A shifted by a random offset within the window `w`, at least
    /// a side apart so the two do not overlap. Every part in A moves by the offset and
    /// every part in B by minus the offset. The reverse is the same kind of move anchored
    /// at `a` in its new place, equally likely. False (a null move) when a window leaves
    /// the board, holds a locked part, or the two hold nothing or too much.
    fn propose_block(&mut self, a: u32, w: u32) -> bool {
        let g = self.layout.grid();
        let pos = self.layout.position(a);
        let (cx, cy) = (round(pos.x / g), round(pos.y / g));
        let side = 2 + i64::from(self.rng.below(w.min(6) - 1));
        let dx = self.rng.symmetric(w);
        let dy = self.rng.symmetric(w);
        if dx.abs().max(dy.abs()) < side {
            return false;
        }
        let (x0, x1, y0, y1) = self.cells;
        let fits = |x: i64, y: i64| x >= x0 && x + side - 1 <= x1 && y >= y0 && y + side - 1 <= y1;
        if !fits(cx, cy) || !fits(cx + dx, cy + dy) {
            return false;
        }
        self.block_a.clear();
        self.block_b.clear();
        let l = &self.layout;
        l.parts_in_cells(cx, cx + side - 1, cy, cy + side - 1, &mut self.block_a);
        l.parts_in_cells(
            cx + dx,
            cx + dx + side - 1,
            cy + dy,
            cy + dy + side - 1,
            &mut self.block_b,
        );
        let n = self.block_a.len() + self.block_b.len();
        if !(2..=64).contains(&n)
            || self
                .block_a
                .iter()
                .chain(&self.block_b)
                .any(|&p| l.is_locked(p))
        {
            return false;
        }
        let off = Point::new(dx as f64 * g, dy as f64 * g);
        self.block_buf.clear();
        for &p in &self.block_a {
            self.block_buf.push(PartMove {
                part: p,
                at: l.position(p).add(off),
                quarter: l.quarter(p),
            });
        }
        for &p in &self.block_b {
            self.block_buf.push(PartMove {
                part: p,
                at: l.position(p).sub(off),
                quarter: l.quarter(p),
            });
        }
        true
    }

    /// Evaluates a proposal (see [`Layout::evaluate`]).
    #[inline]
    fn evaluate(&mut self, p: Proposal) -> Terms {
        match p {
            Proposal::Small(mv, n) => self.layout.evaluate(&mv[..n]),
            Proposal::Block => self.layout.evaluate(&self.block_buf),
        }
    }

    /// One Metropolis step at the current temperature. Returns whether a move was
    /// accepted.
    #[inline]
    fn step(&mut self) -> bool {
        let Some(p) = self.propose() else {
            self.stage_acc.push(self.energy, false, false);
            self.moves += 1;
            return false;
        };
        let de = self.evaluate(p).energy(&self.weights);
        let accept = de <= 0.0 || (self.t > 0.0 && self.rng.unit() < (-de / self.t).exp());
        if accept {
            self.layout.commit();
            self.energy += de;
            self.accepted += 1;
        } else {
            self.layout.revert();
        }
        self.moves += 1;
        self.stage_acc
            .push(self.energy, accept, de.abs() > self.change_eps);
        accept
    }

    /// Runs up to `n` moves (fewer if the run ends), ending stages as they fill.
    pub fn run_moves(&mut self, n: u64) {
        let mut left = n;
        while left > 0 && !self.done {
            let room = self.moves_per_stage - self.stage_acc.moves;
            let budget_room = self
                .opts
                .max_moves
                .map_or(u64::MAX, |m| m.saturating_sub(self.moves));
            let k = left.min(room).min(budget_room);
            for _ in 0..k {
                self.step();
            }
            left -= k;
            if self.stage_acc.moves >= self.moves_per_stage || budget_room <= k {
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

    /// Runs until frozen or out of budget, calling `observe` after every stage; stops
    /// early when `observe` returns false.
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
        let scale = self.best_energy.abs().max(1e-12);
        if self.energy < self.best_energy - 1e-7 * scale {
            self.best_energy = self.energy;
            self.best_pos.copy_from_slice(self.layout.positions());
            self.best_quarter.copy_from_slice(self.layout.quarters());
            self.stale_stages = 0;
        } else {
            self.stale_stages += 1;
            if self.energy < self.best_energy {
                self.best_energy = self.energy;
                self.best_pos.copy_from_slice(self.layout.positions());
                self.best_quarter.copy_from_slice(self.layout.quarters());
            }
        }
        self.stage += 1;
        self.history.push(StageReport {
            stage: self.stage,
            moves: self.moves,
            temperature: self.t,
            energy: self.energy,
            best_energy: self.best_energy,
            terms: self.layout.terms(),
            acceptance: acc,
            window: self.window,
        });
        let budget = self.budget();
        let stats = StageStats {
            temperature: self.t,
            acceptance: acc,
            energy_sigma: self.stage_acc.sigma(),
            progress: self.moves as f64 / budget as f64,
        };
        let changed = self.stage_acc.changed as f64 / self.stage_acc.moves.max(1) as f64;
        self.stage_acc = StageAccum::default();
        let cold = self.t == 0.0 || changed < self.opts.frozen_acceptance;
        if (cold && self.stale_stages >= self.opts.frozen_stages)
            || self.opts.max_moves.is_some_and(|m| self.moves >= m)
            || self.moves >= budget && self.opts.schedule.needs_budget()
        {
            self.done = true;
            return;
        }
        self.t = self.opts.schedule.next(&stats, self.t0);
        if self.t < 1e-9 * self.t0 {
            self.t = 0.0;
        }
    }

    /// The move budget the adaptive schedule steers by.
    fn budget(&self) -> u64 {
        self.opts
            .max_moves
            .unwrap_or(self.moves_per_stage * 300)
            .max(1)
    }

    /// Puts the best state seen at a stage end back, if it beats the current one.
    pub fn restore_best(&mut self) {
        if self.best_energy < self.energy {
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
    }

    /// Raises the temperature mid-run to `fraction` of the start temperature (at least the
    /// current one) and reopens the window, so a frozen or stuck run explores again.
    pub fn reheat(&mut self, fraction: f64) {
        if self.opts.schedule.is_descent() {
            return;
        }
        self.t = self.t.max(self.t0 * fraction.clamp(0.0, 1.0));
        self.window = self
            .window
            .max(self.max_window * fraction.clamp(0.0, 1.0).sqrt());
        self.stale_stages = 0;
        self.done = self.movable.is_empty();
    }

    pub fn is_done(&self) -> bool {
        self.done
    }
    pub fn temperature(&self) -> f64 {
        self.t
    }
    pub fn start_temperature(&self) -> f64 {
        self.t0
    }
    pub fn energy(&self) -> f64 {
        self.energy
    }
    /// Lowest energy of a state the run can return to: the best state kept at a stage
    /// end, or the current one.
    pub fn lowest_energy(&self) -> f64 {
        self.best_energy.min(self.energy)
    }
    pub fn moves(&self) -> u64 {
        self.moves
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

    /// Sets the temperature directly (fixed-temperature experiments, manual control).
    pub fn set_temperature(&mut self, t: f64) {
        self.t = t.max(0.0);
    }

    /// Recomputes the running energy from the layout (after changes made outside the
    /// move loop, such as the legal finish).
    pub fn refresh_energy(&mut self) {
        self.layout.resync();
        self.energy = self.layout.terms().energy(&self.weights);
        self.best_energy = self.best_energy.min(self.energy);
    }

    /// Changes the energy weights; the running energy follows.
    pub fn set_weights(&mut self, w: Weights) {
        self.weights = w;
        self.energy = self.layout.terms().energy(&w);
        self.best_energy = f64::INFINITY;
    }

    /// Changes the schedule mid-run (the temperature carries over).
    pub fn set_schedule(&mut self, s: Schedule) {
        if self.opts.schedule.is_descent() && !s.is_descent() && self.t0 == 0.0 {
            self.opts.schedule = s;
            self.t0 = self.sample_start_temperature();
            self.t = self.t0;
        } else {
            self.opts.schedule = s;
            if s.is_descent() {
                self.t = 0.0;
            }
        }
        self.done = self.movable.is_empty();
        self.stale_stages = 0;
    }

    /// Moves one part by hand (GUI drag); locked state is the caller's business.
    pub fn move_part(&mut self, part: u32, at: Point, quarter: Quarter) {
        self.layout.apply(&[PartMove { part, at, quarter }]);
        self.energy = self.layout.terms().energy(&self.weights);
        self.best_energy = f64::INFINITY;
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
                Proposal::Block => self.block_buf.clone(),
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
        let saved = (self.t, self.moves, self.accepted, self.stage_acc);
        self.t = t;
        for _ in 0..n {
            self.step();
            visit(&self.layout);
        }
        (self.t, self.moves, self.accepted, self.stage_acc) = saved;
    }
}

fn check_options(o: &AnnealOptions) -> Result<(), PlaceError> {
    let bad = |what, range, value: f64| Err(PlaceError::BadOption { what, range, value });
    if !(o.effort.is_finite() && o.effort > 0.0 && o.effort <= 1e4) {
        return bad("effort", "between 0 and 10000", o.effort);
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
    if !(0.0..=1.0).contains(&o.block_fraction) {
        return bad("block fraction", "between 0 and 1", o.block_fraction);
    }
    if !(0.0..=1.0).contains(&o.directed_fraction) {
        return bad("directed fraction", "between 0 and 1", o.directed_fraction);
    }
    if !(0.0..=1.0).contains(&o.rotate_fraction) {
        return bad("rotate fraction", "between 0 and 1", o.rotate_fraction);
    }
    match o.schedule {
        Schedule::Geometric { alpha } if !(alpha > 0.0 && alpha < 1.0) => {
            bad("geometric alpha", "strictly between 0 and 1", alpha)
        }
        Schedule::LundyMees { beta } if !(beta > 0.0 && beta.is_finite()) => {
            bad("lundy-mees beta", "a positive number", beta)
        }
        Schedule::LamDelosme { target } if !(target > 0.0 && target < 1.0) => {
            bad("lam-delosme target", "strictly between 0 and 1", target)
        }
        Schedule::Huang { lambda } if !(lambda > 0.0 && lambda.is_finite()) => {
            bad("huang lambda", "a positive number", lambda)
        }
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::round;

    /// The move generator's rounding agrees with the standard library's `f64::round`
    /// (half away from zero) on halves, near-halves, zeros, large and odd values.
    #[test]
    fn round_matches_the_standard_library() {
        let mut values = vec![
            0.0,
            -0.0,
            0.5,
            -0.5,
            1.5,
            -1.5,
            2.5,
            -2.5,
            0.499_999_999_999_999_94,
            -0.499_999_999_999_999_94,
            1e15 + 0.5,
            -1e15 - 0.5,
            4_503_599_627_370_495.5,
            123.456,
            -987.654,
        ];
        let mut x = 0.1_f64;
        for _ in 0..10_000 {
            x = (x * 7.3 + 0.37) % 2000.0 - 1000.0;
            values.push(x);
            values.push(x.trunc() + 0.5);
        }
        for v in values {
            assert_eq!(round(v), v.round() as i64, "{v}");
        }
        assert_eq!(round(f64::NAN), 0);
        assert_eq!(round(f64::INFINITY), i64::MAX);
        assert_eq!(round(f64::NEG_INFINITY), i64::MIN);
    }
}
