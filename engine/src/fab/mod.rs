//! Fabrication outputs: what a board house and an assembly line need from a placed (and
//! usually routed) board. Each generator turns a [`Design`] into the text of one file and
//! does no I/O; the caller writes it (atomically, see [`crate::io::write_file`]).
//!
//! - [`gerber`]: Gerber RS-274X with X2 attributes (Ucamco Gerber Layer Format
//!   Specification, revision 2022.02): copper, solder mask openings and the board outline;
//! - [`drill`]: the NC drill program (IPC-NC-349 lineage, common practice), plated and
//!   non-plated holes in separate sections;
//! - [`centroid`]: the pick-and-place table;
//! - [`runlog`]: the annealing run, one row per stage, for plotting elsewhere.
//!
//! Every file uses the board's own coordinates: millimetres, origin the board file's
//! (0, 0), x to the right and y up, as seen from the top. docs/fabrication.md describes
//! the files for the people who receive them.
//!
//! **Invariant:** nothing here reads a clock, the environment or a file: the same design
//! gives the same bytes.

pub mod centroid;
pub mod drill;
pub mod gerber;
pub mod runlog;

use thiserror::Error;

use crate::model::board::Layer;
use crate::model::{Design, PadKind, PadShape, Point, Side, to_board};

/// Solder mask expansion: each opening is the pad grown by this much on every side, mm.
/// 0.05 mm is a common practice value for boards of ordinary density.
pub const DEFAULT_MASK_EXPANSION: f64 = 0.05;

/// Width of the line that draws the board outline in the profile file, mm.
pub const DEFAULT_OUTLINE_WIDTH: f64 = 0.1;

/// Settings shared by the fabrication outputs.
#[derive(Clone, Debug, PartialEq)]
pub struct FabOptions {
    /// See [`DEFAULT_MASK_EXPANSION`].
    pub mask_expansion: f64,
    /// See [`DEFAULT_OUTLINE_WIDTH`].
    pub outline_width: f64,
}

impl Default for FabOptions {
    fn default() -> Self {
        FabOptions {
            mask_expansion: DEFAULT_MASK_EXPANSION,
            outline_width: DEFAULT_OUTLINE_WIDTH,
        }
    }
}

/// Why a fabrication file cannot be written.
#[derive(Clone, Debug, PartialEq, Error)]
pub enum FabError {
    /// A coordinate or size does not fit the file's number format.
    #[error("{what} {value} mm does not fit the {format} number format (at most {limit} mm)")]
    OutOfRange {
        what: String,
        value: f64,
        format: &'static str,
        limit: f64,
    },
    /// A setting is not a sane number.
    #[error("{what} must be a finite number between {min} and {max} mm, got {value}")]
    BadOption {
        what: &'static str,
        value: f64,
        min: f64,
        max: f64,
    },
}

impl FabOptions {
    /// Checks the settings before any file is made.
    pub fn check(&self) -> Result<(), FabError> {
        let sane = |what, value: f64, min, max| {
            if value.is_finite() && value >= min && value <= max {
                Ok(())
            } else {
                Err(FabError::BadOption {
                    what,
                    value,
                    min,
                    max,
                })
            }
        };
        sane("mask expansion", self.mask_expansion, 0.0, 1.0)?;
        sane("outline width", self.outline_width, 0.01, 1.0)
    }
}

/// A pad where it sits on the board, as fabrication sees it.
#[derive(Clone, Debug, PartialEq)]
pub struct BoardPad {
    /// The part's reference designator.
    pub reference: String,
    /// The pad's pin number (empty for a hole that is not a pin).
    pub number: String,
    /// Name of the pad's net, if it is on one.
    pub net: Option<String>,
    /// Centre on the board.
    pub at: Point,
    /// Size along the board's x and y (the part's turn already applied).
    pub width: f64,
    pub height: f64,
    pub shape: PadShape,
    pub kind: PadKind,
    /// The side of the part.
    pub side: Side,
}

impl BoardPad {
    /// Whether the pad has copper on `layer`: SMD pads on their part's side, plated
    /// through-hole pads on both, unplated holes on neither.
    pub fn has_copper_on(&self, layer: Layer) -> bool {
        match self.kind {
            PadKind::Smd => matches!(
                (self.side, layer),
                (Side::Top, Layer::Top) | (Side::Bottom, Layer::Bottom)
            ),
            PadKind::ThroughHole { plated, .. } => plated,
        }
    }

    /// Whether the pad needs a solder mask opening on `layer`: wherever it has copper,
    /// and on both sides for an unplated hole (so the mask stays off the hole).
    pub fn opens_mask_on(&self, layer: Layer) -> bool {
        match self.kind {
            PadKind::ThroughHole { plated: false, .. } => true,
            _ => self.has_copper_on(layer),
        }
    }

    /// Corner radius of a [`PadShape::Rounded`] pad: 25 % of the smaller side (the
    /// footprint module's definition).
    pub fn corner_radius(&self) -> f64 {
        0.25 * self.width.min(self.height)
    }
}

/// Every pad of every placed part, in part order then pad order. Unplaced parts are left
/// out (see [`warnings`]).
pub fn board_pads(design: &Design) -> Vec<BoardPad> {
    let pad_net = design.pad_nets();
    let mut out = Vec::new();
    for (i, (part, fp)) in design
        .board
        .parts
        .iter()
        .zip(&design.footprints)
        .enumerate()
    {
        let Some(at) = part.at else { continue };
        let q = part.quarter();
        for (k, pad) in fp.pads.iter().enumerate() {
            let (width, height) = q.apply_size(pad.width, pad.height);
            out.push(BoardPad {
                reference: part.reference.clone(),
                number: pad.number.clone(),
                net: pad_net[i][k].map(|n| design.board.nets[n.index()].name.clone()),
                at: to_board(pad.at, at, q, part.side),
                width,
                height,
                shape: pad.shape,
                kind: pad.kind,
                side: part.side,
            });
        }
    }
    out
}

/// What a fabrication export should tell the user before they send the files away:
/// unplaced parts (left out of the fabrication files) and a board without copper (pads
/// only).
pub fn warnings(design: &Design) -> Vec<String> {
    let mut out = Vec::new();
    let unplaced: Vec<&str> = design
        .board
        .parts
        .iter()
        .filter(|p| p.at.is_none())
        .map(|p| p.reference.as_str())
        .collect();
    if !unplaced.is_empty() {
        out.push(format!(
            "{} unplaced part{} left out of the fabrication files (pictures draw them at the \
             origin): {}",
            unplaced.len(),
            if unplaced.len() == 1 { "" } else { "s" },
            unplaced.join(", ")
        ));
    }
    let wanted = design.net_pins.iter().filter(|p| p.len() >= 2).count();
    let copper = &design.board.copper;
    if wanted > 0 && copper.tracks.is_empty() && copper.vias.is_empty() {
        out.push(format!(
            "the board is not routed: the copper files hold pads only, and {wanted} net{} \
             still need{} wiring",
            if wanted == 1 { "" } else { "s" },
            if wanted == 1 { "s" } else { "" }
        ));
    }
    out
}

/// A number in plain decimal notation with at most `decimals` places and no trailing
/// zeros ("0.8", "12", "-3.25"), for the text formats.
pub(crate) fn decimal(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" { "0".to_string() } else { s }
}

#[cfg(test)]
mod tests {
    use super::decimal;

    #[test]
    fn decimals_are_plain_and_short() {
        assert_eq!(decimal(0.8, 3), "0.8");
        assert_eq!(decimal(12.0, 3), "12");
        assert_eq!(decimal(-3.25, 3), "-3.25");
        assert_eq!(decimal(-0.0001, 3), "0");
        assert_eq!(decimal(1.23456, 4), "1.2346");
    }
}
