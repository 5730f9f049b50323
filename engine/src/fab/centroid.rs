//! The centroid (pick-and-place) table as CSV: one row per placed component.
//!
//! Columns: `reference`, `value`, `footprint` (lehr's footprint name, such as "SOIC-8" or
//! "0603"), `x_mm`, `y_mm`, `rotation_deg`, `side` (`top` or `bottom`).
//!
//! Conventions (see docs/fabrication.md):
//! - the position is the part's origin, which lehr defines as the centre of the land
//!   pattern, in board coordinates (mm, the board file's origin, x right, y up, seen from
//!   the top), the same coordinates as the Gerber and drill files;
//! - the rotation is the board file's: counter-clockwise degrees seen from the top, 0 to
//!   270. A bottom-side part is the footprint mirrored left to right (x -> -x) and then
//!   turned by that angle, seen from the top;
//! - unplaced parts and mounting holes (nothing to place) are left out.
//!
//! Fields that hold a comma, a quote or a line break are quoted as RFC 4180 says
//! (doubled quotes inside).

use std::fmt::Write as _;

use super::decimal;
use crate::model::{Design, FootprintSpec, Side};

/// The header line's column names, in order.
pub const COLUMNS: [&str; 7] = [
    "reference",
    "value",
    "footprint",
    "x_mm",
    "y_mm",
    "rotation_deg",
    "side",
];

/// One row of the table.
#[derive(Clone, Debug, PartialEq)]
pub struct Centroid {
    pub reference: String,
    pub value: String,
    pub footprint: String,
    pub x: f64,
    pub y: f64,
    /// Counter-clockwise degrees seen from the top: 0, 90, 180 or 270.
    pub rotation: f64,
    pub side: Side,
}

/// The rows: placed parts in board order, mounting holes left out.
pub fn centroids(design: &Design) -> Vec<Centroid> {
    design
        .board
        .parts
        .iter()
        .zip(&design.footprints)
        .filter(|(p, _)| !matches!(p.footprint, FootprintSpec::MountingHole { .. }))
        .filter_map(|(p, fp)| {
            let at = p.at?;
            Some(Centroid {
                reference: p.reference.clone(),
                value: p.value.clone(),
                footprint: fp.name.clone(),
                x: at.x,
                y: at.y,
                rotation: p.quarter().degrees(),
                side: p.side,
            })
        })
        .collect()
}

/// The table as CSV text.
pub fn centroid_csv(design: &Design) -> String {
    let mut s = COLUMNS.join(",");
    s.push('\n');
    for c in centroids(design) {
        let _ = writeln!(
            s,
            "{},{},{},{},{},{},{}",
            field(&c.reference),
            field(&c.value),
            field(&c.footprint),
            decimal(c.x, 6),
            decimal(c.y, 6),
            decimal(c.rotation, 3),
            match c.side {
                Side::Top => "top",
                Side::Bottom => "bottom",
            }
        );
    }
    s
}

/// A CSV field, quoted when it must be (RFC 4180, section 2).
pub fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::field;

    #[test]
    fn fields_are_quoted_only_when_needed() {
        assert_eq!(field("R1"), "R1");
        assert_eq!(field("10k, 1%"), "\"10k, 1%\"");
        assert_eq!(field("2\" pipe"), "\"2\"\" pipe\"");
    }
}
