//! The outcome of a placement run: the legal finish, the report and the placed board.

use std::time::Instant;

use serde::{Deserialize, Serialize};

use super::anneal::{Annealer, StageReport};
use super::layout::Layout;
use super::legal::{self, Conflict};
use super::options::{AnnealOptions, PlaceError, Start};
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
    /// The schedule with any parameters set by hand (`geometric alpha=0.95`).
    pub schedule: String,
    /// Where the kept result started: `given` or `spectral` ([`Start`]).
    #[serde(default)]
    pub start: String,
    /// Annealing chains per start (replica exchange).
    #[serde(default = "one")]
    pub replicas: u32,
    /// Temperature trades between chains tried and taken, all starts together.
    #[serde(default)]
    pub exchanges_tried: u64,
    #[serde(default)]
    pub exchanges_taken: u64,
    /// The kept start's ladder ratio (temperature factor between neighbouring chains)
    /// at the end.
    #[serde(default)]
    pub ladder: f64,
}

fn one() -> u32 {
    1
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

/// One chain from the given start, then the legal finish (the multilevel placer's
/// fallback for boards too small to coarsen).
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

/// The legal finish and the report, for a run driven step by step.
pub fn finish(design: &Design, an: &mut Annealer, start: Instant) -> Result<Placed, PlaceError> {
    let refs: Vec<String> = design
        .board
        .parts
        .iter()
        .map(|p| p.reference.clone())
        .collect();
    let annealed_wirelength_mm = an.layout().wirelength_mm();
    let conflicts = legal::legalize(design, an, &refs);
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
        schedule: an.options().schedule.to_string(),
        // A caller that started elsewhere (the analytical start) says so.
        start: Start::Given.name().to_string(),
        replicas: 1,
        exchanges_tried: 0,
        exchanges_taken: 0,
        ladder: 1.0,
    };
    board.placement = Some(PlacementRecord {
        seed: report.seed,
        schedule: report.schedule.clone(),
        moves: report.moves,
        energy: report.energy,
        wirelength_mm: report.wirelength_mm,
        legal: report.legal,
        start: report.start.clone(),
        replicas: report.replicas,
    });
    Ok(Placed {
        board,
        report,
        history: an.history().to_vec(),
    })
}
