//! Placement by simulated annealing.
//!
//! - [`layout`]: the problem: part positions and the incremental energy;
//! - [`schedule`]: cooling schedules;
//! - [`anneal`]: moves, Metropolis acceptance and the stage loop;
//! - [`legal`]: snapping and the final repair, with a report of what remains;
//! - [`generate`]: synthetic boards (the known-optimal grid, random benchmark boards);
//! - [`multilevel`]: clusters first, then parts;
//! - [`spectral`]: an analytical start (quadratic and spectral placement);
//! - [`mst`]: minimum spanning trees of pins (unrouted connections, wiring estimates).
//!
//! **Invariant:** nothing here does I/O or spawns threads; the same design, options and
//! seed give the same result bit for bit.

pub mod anneal;
pub mod generate;
mod hash;
pub mod layout;
pub mod legal;
pub mod mst;
pub mod multilevel;
pub mod rng;
pub mod schedule;
pub mod spectral;

use std::time::Instant;

use serde::{Deserialize, Serialize};

pub use anneal::{AnnealOptions, Annealer, PlaceError, StageReport, Start};
pub use layout::{Layout, PartMove, Terms, Weights};
pub use legal::{Conflict, ConflictKind};
pub use schedule::Schedule;

use crate::model::board::{Board, PlacementRecord};
use crate::model::{Design, Point, Quarter};

/// The outcome of a placement run, as `lehr place --json` prints it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PlaceReport {
    /// Final energy with the run's weights.
    pub energy: f64,
    /// Raw half-perimeter wirelength over all nets, mm.
    pub wirelength_mm: f64,
    /// The same at the end of annealing, before the legal finish.
    pub annealed_wirelength_mm: f64,
    pub overlap_mm2: f64,
    pub outside_mm2: f64,
    pub keepout_mm2: f64,
    pub legal: bool,
    pub conflicts: Vec<Conflict>,
    pub moves: u64,
    pub accepted: u64,
    pub stages: u32,
    pub start_temperature: f64,
    pub seconds: f64,
    pub moves_per_second: f64,
    pub seed: u64,
    pub schedule: String,
    /// Where the kept result started: `given` or `spectral` ([`Start`]).
    #[serde(default)]
    pub start: String,
}

/// A placed board and how it went.
#[derive(Clone, Debug)]
pub struct Placed {
    pub board: Board,
    pub report: PlaceReport,
    pub history: Vec<StageReport>,
}

/// Writes the annealer's positions into a copy of the design's board.
pub fn board_with_positions(design: &Design, layout: &Layout) -> Board {
    board_at(design, layout.positions(), layout.quarters())
}

/// A copy of the design's board with the given positions and turns (one per part, as a
/// viewer holds them from the engine's snapshots). Extra or missing entries leave parts
/// as they are.
pub fn board_at(design: &Design, positions: &[Point], quarters: &[Quarter]) -> Board {
    let mut board = design.board.clone();
    for ((part, p), q) in board.parts.iter_mut().zip(positions).zip(quarters) {
        // Print-friendly: drop the last-bit noise of grid multiples (k * 0.1 and so on).
        part.at = Some(Point::new(tidy(p.x), tidy(p.y)));
        part.rotation = q.degrees();
    }
    board
}

fn tidy(v: f64) -> f64 {
    let r = (v * 1e6).round() / 1e6;
    if r == 0.0 { 0.0 } else { r }
}

/// Places every unlocked part: anneal until frozen or out of budget, then the legal
/// finish, from the start `opts.start` names. `observe` sees each stage and may stop the
/// run by returning false.
pub fn place(
    design: &Design,
    opts: &AnnealOptions,
    observe: impl FnMut(&StageReport) -> bool,
) -> Result<Placed, PlaceError> {
    match opts.start {
        Start::Given => place_given(design, opts, observe),
        Start::Spectral => spectral::place(design, opts, observe),
        Start::Both => place_both(design, opts, observe),
    }
}

fn place_given(
    design: &Design,
    opts: &AnnealOptions,
    observe: impl FnMut(&StageReport) -> bool,
) -> Result<Placed, PlaceError> {
    if opts.multilevel {
        multilevel::place(design, opts, observe)
    } else {
        anneal_flat(design, opts, observe)
    }
}

/// One anneal of all the parts from the given start, then the legal finish.
pub(super) fn anneal_flat(
    design: &Design,
    opts: &AnnealOptions,
    observe: impl FnMut(&StageReport) -> bool,
) -> Result<Placed, PlaceError> {
    let start = Instant::now();
    let mut an = Annealer::new(design, opts.clone())?;
    an.run(observe);
    finish(design, &mut an, start)
}

/// [`Start::Both`]: the given start with half of any move cap, then the analytical start
/// with the rest; keeps the better. The second run's stages reach `observe` numbered on
/// from the first's, so a progress display counts one run; when `observe` stops the
/// first run, the second does not start. The report counts the moves, stages and time
/// of both runs; the history holds both, one after the other.
fn place_both(
    design: &Design,
    opts: &AnnealOptions,
    mut observe: impl FnMut(&StageReport) -> bool,
) -> Result<Placed, PlaceError> {
    let t = Instant::now();
    let mut stopped = false;
    let first_opts = AnnealOptions {
        start: Start::Given,
        max_moves: opts.max_moves.map(|m| (m / 2).max(1)),
        ..opts.clone()
    };
    let mut first = place_given(design, &first_opts, |s| {
        let go = observe(s);
        stopped |= !go;
        go
    })?;
    let rest = opts.max_moves.map(|m| m.saturating_sub(first.report.moves));
    if stopped || rest == Some(0) {
        return Ok(first);
    }
    // The second run's stages, numbered on from the first's.
    let (moves, stages) = (first.report.moves, first.report.stages);
    let shift = |s: &StageReport| StageReport {
        stage: s.stage + stages,
        moves: s.moves + moves,
        ..*s
    };
    let second_opts = AnnealOptions {
        start: Start::Spectral,
        max_moves: rest,
        ..opts.clone()
    };
    let second = spectral::place(design, &second_opts, |s| observe(&shift(s)))?;
    let mut history = std::mem::take(&mut first.history);
    history.extend(second.history.iter().map(shift));
    let better = |a: &PlaceReport, b: &PlaceReport| {
        (b.legal && !a.legal) || (b.legal == a.legal && b.energy < a.energy)
    };
    let (mut kept, other) = if better(&first.report, &second.report) {
        (second, first)
    } else {
        (first, second)
    };
    let (r, o) = (&mut kept.report, &other.report);
    r.moves += o.moves;
    r.accepted += o.accepted;
    r.stages += o.stages;
    r.seconds = t.elapsed().as_secs_f64();
    r.moves_per_second = r.moves as f64 / r.seconds.max(1e-9);
    if let Some(record) = &mut kept.board.placement {
        record.moves = r.moves;
    }
    kept.history = history;
    Ok(kept)
}

/// The legal finish and the report, for a run driven step by step.
pub fn finish(design: &Design, an: &mut Annealer, start: Instant) -> Result<Placed, PlaceError> {
    let refs: Vec<String> = design
        .board
        .parts
        .iter()
        .map(|p| p.reference.clone())
        .collect();
    let annealed_wirelength_mm = an.layout().wirelength_mm();
    let conflicts = legal::legalize(an, &refs);
    let layout = an.layout();
    let terms = layout.terms();
    let seconds = start.elapsed().as_secs_f64();
    let energy = terms.energy(an.weights());
    let mut board = board_with_positions(design, layout);
    let report = PlaceReport {
        energy,
        wirelength_mm: layout.wirelength_mm(),
        annealed_wirelength_mm,
        overlap_mm2: terms.overlap,
        outside_mm2: terms.outside,
        keepout_mm2: terms.keepout,
        legal: conflicts.is_empty(),
        conflicts,
        moves: an.moves(),
        accepted: an.accepted(),
        stages: an.history().len() as u32,
        start_temperature: an.start_temperature(),
        seconds,
        moves_per_second: an.moves() as f64 / seconds.max(1e-9),
        seed: an.options().seed,
        schedule: an.options().schedule.name().to_string(),
        // A caller that started elsewhere (the analytical start) says so.
        start: Start::Given.name().to_string(),
    };
    board.placement = Some(PlacementRecord {
        seed: report.seed,
        schedule: report.schedule.clone(),
        moves: report.moves,
        energy: report.energy,
        wirelength_mm: report.wirelength_mm,
        legal: report.legal,
    });
    Ok(Placed {
        board,
        report,
        history: an.history().to_vec(),
    })
}
