//! The NC drill program: every hole of the board, plated and non-plated in two sections
//! of one file.
//!
//! The dialect is the common one of the IPC-NC-349 lineage (common practice, no single
//! published text): a header from `M48` to `%` with the units (`METRIC`) and the tool table
//! (`T1C0.800`: tool 1, diameter 0.800 mm), then the body: `G90` (absolute), `G05` (drill
//! mode), and per tool a select (`T1`) followed by one `X..Y..` hit per hole, `M30` at the
//! end. Coordinates are written with a decimal point, in mm, so no zero-suppression rule
//! is needed to read them.
//!
//! Plating is kept apart by tool: the plated tools (through-hole pads, vias) come first,
//! numbered from T1, then the non-plated tools (unplated mounting holes) numbered on, with
//! a comment line `; plated holes` / `; non-plated holes` opening each section in both the
//! tool table and the body. A tool is never shared between the two.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use super::{FabError, board_pads, decimal};
use crate::model::{Design, PadKind, Point};

/// What a hole belongs to.
#[derive(Clone, Debug, PartialEq)]
pub enum HoleOf {
    /// A through-hole pad of a part (`number` empty for a hole that is not a pin).
    Pad { reference: String, number: String },
    /// A via of a net.
    Via { net: String },
}

/// One hole to drill.
#[derive(Clone, Debug, PartialEq)]
pub struct Hole {
    pub at: Point,
    /// Finished hole diameter, mm.
    pub diameter: f64,
    pub plated: bool,
    pub of: HoleOf,
}

/// Every hole of the placed parts and of the vias, in board order (parts, then vias).
pub fn holes(design: &Design) -> Vec<Hole> {
    let mut out: Vec<Hole> = board_pads(design)
        .into_iter()
        .filter_map(|p| match p.kind {
            PadKind::ThroughHole { drill, plated } => Some(Hole {
                at: p.at,
                diameter: drill,
                plated,
                of: HoleOf::Pad {
                    reference: p.reference,
                    number: p.number,
                },
            }),
            PadKind::Smd => None,
        })
        .collect();
    out.extend(design.board.copper.vias.iter().map(|v| Hole {
        at: v.at,
        diameter: v.drill,
        plated: true,
        of: HoleOf::Via { net: v.net.clone() },
    }));
    out
}

/// Largest coordinate written, mm (the number format has no limit; this keeps the file
/// sane for any drilling machine).
pub const MAX_COORDINATE_MM: f64 = 9999.999;

/// The drill program of the board (see the module docs). A board with no holes gives a
/// valid program with an empty tool table.
pub fn drill(design: &Design) -> Result<String, FabError> {
    let holes = holes(design);
    for h in &holes {
        for (what, v) in [
            ("hole x", h.at.x),
            ("hole y", h.at.y),
            ("hole diameter", h.diameter),
        ] {
            if !(v.is_finite() && v.abs() <= MAX_COORDINATE_MM) {
                return Err(FabError::OutOfRange {
                    what: what.to_string(),
                    value: v,
                    format: "drill",
                    limit: MAX_COORDINATE_MM,
                });
            }
        }
    }
    // Tools per section, by diameter in micrometres (the program's 3 decimals).
    let um = |d: f64| (d * 1000.0).round() as i64;
    let mut sections: Vec<(&str, BTreeMap<i64, Vec<Point>>)> = Vec::new();
    for (label, plated) in [("plated holes", true), ("non-plated holes", false)] {
        let mut tools: BTreeMap<i64, Vec<Point>> = BTreeMap::new();
        for h in holes.iter().filter(|h| h.plated == plated) {
            tools.entry(um(h.diameter)).or_default().push(h.at);
        }
        sections.push((label, tools));
    }

    let mut s = String::new();
    s.push_str("M48\n");
    let _ = writeln!(s, "; {}", design.board.name.replace(['\n', '\r'], " "));
    let _ = writeln!(
        s,
        "; written by lehr {}, mm, absolute, decimal point",
        env!("CARGO_PKG_VERSION")
    );
    s.push_str("METRIC\n");
    let mut tool = 0;
    for (label, tools) in &sections {
        if tools.is_empty() {
            continue;
        }
        let _ = writeln!(s, "; {label}");
        for d in tools.keys() {
            tool += 1;
            let _ = writeln!(s, "T{tool}C{:.3}", *d as f64 / 1000.0);
        }
    }
    s.push_str("%\nG90\nG05\n");
    let mut tool = 0;
    for (label, tools) in &sections {
        if tools.is_empty() {
            continue;
        }
        let _ = writeln!(s, "; {label}");
        for hits in tools.values() {
            tool += 1;
            let _ = writeln!(s, "T{tool}");
            for p in hits {
                let _ = writeln!(s, "X{}Y{}", coord(p.x), coord(p.y));
            }
        }
    }
    s.push_str("M30\n");
    Ok(s)
}

/// A coordinate with at most 3 decimals and always a decimal point (12 is "12.0").
fn coord(v: f64) -> String {
    let s = decimal(v, 3);
    if s.contains('.') { s } else { format!("{s}.0") }
}

#[cfg(test)]
mod tests {
    use super::coord;

    #[test]
    fn coordinates_carry_a_decimal_point() {
        assert_eq!(coord(12.0), "12.0");
        assert_eq!(coord(-3.25), "-3.25");
        assert_eq!(coord(0.0004), "0.0");
    }
}
