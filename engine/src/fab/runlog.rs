//! The annealing run as CSV, one row per stage, for people who plot elsewhere.
//!
//! Columns: `stage`, `moves` (total moves at the end of the stage), `temperature`,
//! `energy` (the weighted sum the annealer minimises), `best_energy` (lowest so far),
//! the unweighted energy terms `wirelength_mm` (net-weighted HPWL), `overlap_mm2`,
//! `outside_mm2` and `keepout_mm2`, `acceptance` (the fraction of the stage's moves
//! accepted), `window_mm` (the displacement window), and the run the row belongs to:
//! `start` (`given` or `spectral`: the default placement runs both, one after the other
//! in the log) and `chain` (the replica at the coldest temperature then).
//!
//! Numbers are written in Rust's shortest form that reads back to the same `f64`; the
//! header names the columns; every row ends in a line feed.

use std::fmt::Write as _;

use crate::place::StageReport;

/// The header line's column names, in order.
pub const COLUMNS: [&str; 13] = [
    "stage",
    "moves",
    "temperature",
    "energy",
    "best_energy",
    "wirelength_mm",
    "overlap_mm2",
    "outside_mm2",
    "keepout_mm2",
    "acceptance",
    "window_mm",
    "start",
    "chain",
];

/// The run log of a placement's stage history (`Placed::history`).
pub fn run_log(history: &[StageReport]) -> String {
    let mut s = COLUMNS.join(",");
    s.push('\n');
    for r in history {
        let _ = writeln!(
            s,
            "{},{},{},{},{},{},{},{},{},{},{},{},{}",
            r.stage,
            r.moves,
            r.temperature,
            r.energy,
            r.best_energy,
            r.terms.wirelength,
            r.terms.overlap,
            r.terms.outside,
            r.terms.keepout,
            r.acceptance,
            r.window,
            r.start.name(),
            r.chain
        );
    }
    s
}
