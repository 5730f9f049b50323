//! Parametric footprints: a [`FootprintSpec`] written in the board file expands into a
//! [`Footprint`], the pads (shape, size, position, SMD or plated/unplated hole) and the
//! courtyard that placement keeps clear.
//!
//! Coordinates are millimetres relative to the footprint origin, which is the centre of
//! the land pattern, y up. Pin numbering follows the package standards: dual-row packages
//! (SOIC, TSSOP, DIP) count counter-clockwise from pin 1 seen from the top; quad packages
//! (QFN, QFP) start at the top of the left side and go counter-clockwise.

use serde::{Deserialize, Serialize};
use thiserror::Error;

use super::geom::{Point, Rect};
use super::text::fmt_num;

/// Courtyard excess around pads and body: IPC-7351 nominal density level
/// (0.25 mm; from memory, see ../shared/CHECK-VALUES.md).
pub const COURTYARD_EXCESS: f64 = 0.25;

/// A footprint as written in a board file, e.g. `Soic(8)` or `Chip("0603")`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub enum FootprintSpec {
    /// Two-terminal chip part by EIA inch size code: "0402", "0603", "0805", "1206",
    /// "1210" or "2512".
    Chip(String),
    /// SOD-123 diode, two pads (1 = cathode).
    Sod123,
    /// SOT-23 with 3, 5 or 6 pins.
    Sot23(u32),
    /// SOIC-n, narrow body 3.9 mm, pitch 1.27 mm (JEDEC MS-012); n is 8, 14 or 16.
    Soic(u32),
    /// TSSOP-n, body 4.4 mm, pitch 0.65 mm (JEDEC MO-153); n is 8, 14, 16, 20, 24 or 28.
    Tssop(u32),
    /// QFN with `pins` on four sides (pins divisible by 4), square `body` side and `pitch`
    /// in mm; `thermal` is the side of the exposed pad (numbered pins + 1), if any.
    Qfn {
        pins: u32,
        body: f64,
        pitch: f64,
        #[serde(default)]
        thermal: Option<f64>,
    },
    /// QFP with `pins` on four sides (pins divisible by 4), square `body` side and `pitch`
    /// in mm; the lead tips stand 1 mm outside the body.
    Qfp { pins: u32, body: f64, pitch: f64 },
    /// Dual in-line through-hole package, pitch 2.54 mm, rows 7.62 mm apart
    /// (15.24 mm when `wide`); n even, 4 to 64.
    Dip {
        pins: u32,
        #[serde(default)]
        wide: bool,
    },
    /// Pin header on a 2.54 mm grid, `rows` x `cols`; pins numbered along each row, rows
    /// from the top. Two-row numbering (odd pins one side, even the other) is `cols: 2`.
    Header { rows: u32, cols: u32 },
    /// Screw terminal block with `ways` positions at 5.08 mm pitch.
    TerminalBlock(u32),
    /// TO-220 three-lead power package, leads 2.54 mm apart, upright.
    To220,
    /// Radial through-hole part (electrolytic capacitor, LED): two leads `pitch` apart, a
    /// round body of `diameter`.
    Radial { pitch: f64, diameter: f64 },
    /// Axial through-hole part (resistor, diode) lying flat: leads `pitch` apart, body
    /// `length` x `diameter`.
    Axial {
        pitch: f64,
        length: f64,
        diameter: f64,
    },
    /// Mounting hole of `hole` (finished) diameter; `pad` gives a plated ring of that
    /// diameter (one pad "1"), otherwise the hole is unplated and has no pins (its one pad
    /// has an empty number, which no net can name).
    MountingHole {
        hole: f64,
        #[serde(default)]
        pad: Option<f64>,
    },
    /// An explicit pad list; the courtyard defaults to the pads' extent plus the excess.
    Custom {
        pads: Vec<PadSpec>,
        #[serde(default)]
        courtyard: Option<Rect>,
    },
}

/// One pad of a [`FootprintSpec::Custom`] footprint.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PadSpec {
    pub number: String,
    /// The pad centre, relative to the footprint origin.
    pub centre: Point,
    /// Copper width (along x) in mm.
    pub width: f64,
    /// Copper height (along y) in mm.
    pub height: f64,
    #[serde(default)]
    pub shape: PadShape,
    /// Finished hole diameter of a through-hole pad; `None` for SMD.
    #[serde(default)]
    pub hole: Option<f64>,
}

/// Copper shape of a pad, named after the Gerber standard apertures (rectangle, circle,
/// obround) plus the rounded rectangle.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum PadShape {
    #[default]
    Rectangle,
    /// Rectangle with corners rounded to 25 % of the smaller side.
    Rounded,
    Circle,
    /// Obround (stadium): a rectangle with fully rounded short ends.
    Obround,
}

/// Surface-mount or through-hole.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub enum PadKind {
    /// Copper on the part's own side only.
    Smd,
    /// A hole through the board; `plated` holes carry copper on both layers.
    ThroughHole { drill: f64, plated: bool },
}

/// A pad of an expanded footprint.
#[derive(Clone, Debug, PartialEq)]
pub struct Pad {
    /// Pin number as nets name it (`U1.3` names pad "3" of U1); empty for a hole that is
    /// not a pin, such as an unplated mounting hole.
    pub number: String,
    /// Centre relative to the footprint origin.
    pub at: Point,
    pub width: f64,
    pub height: f64,
    pub shape: PadShape,
    pub kind: PadKind,
}

impl Pad {
    pub fn is_through_hole(&self) -> bool {
        matches!(self.kind, PadKind::ThroughHole { .. })
    }

    /// The pad's bounding rectangle relative to the footprint origin.
    pub fn rect(&self) -> Rect {
        Rect::centered(self.at, self.width, self.height)
    }
}

/// An expanded footprint: pads and courtyard in footprint coordinates.
#[derive(Clone, Debug, PartialEq)]
pub struct Footprint {
    /// Display name such as "SOIC-8" or "0603".
    pub name: String,
    pub pads: Vec<Pad>,
    /// Package body outline (for drawing).
    pub body: Rect,
    /// Area the part claims on the board: pads and body plus [`COURTYARD_EXCESS`].
    pub courtyard: Rect,
}

impl Footprint {
    /// Index of the pad with this number. Pads with an empty number (unplated holes) are
    /// not pins and are never found.
    pub fn pad_index(&self, number: &str) -> Option<usize> {
        if number.is_empty() {
            return None;
        }
        self.pads.iter().position(|p| p.number == number)
    }

    /// True when any pad goes through the board (the part then blocks both sides).
    pub fn has_through_holes(&self) -> bool {
        self.pads.iter().any(Pad::is_through_hole)
    }
}

/// Why a footprint spec cannot be expanded.
#[derive(Clone, Debug, PartialEq, Error)]
pub enum FootprintError {
    #[error("unknown chip size code \"{0}\" (known: 0402, 0603, 0805, 1206, 1210, 2512)")]
    UnknownChipSize(String),
    #[error("{package} cannot have {pins} pins ({why})")]
    BadPinCount {
        package: &'static str,
        pins: u32,
        why: &'static str,
    },
    #[error(
        "{what} must be a finite number between {} and {} mm, got {}",
        fmt_num(*.min),
        fmt_num(*.max),
        fmt_num(*.value)
    )]
    BadDimension {
        what: &'static str,
        value: f64,
        min: f64,
        max: f64,
    },
    #[error("custom footprint: {0}")]
    BadCustom(String),
    /// The parameters are each sane but do not go together, e.g. a pitch too coarse for
    /// the body or a thermal pad that would touch the pins.
    #[error("{package}: {why}")]
    BadFit { package: String, why: String },
}
