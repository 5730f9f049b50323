//! The NC drill program read back.

use std::collections::BTreeMap;

use lehr_engine::fab::drill;
use lehr_engine::model::{PadKind, to_board};

use super::fixture;

// ----------------------------------------------------------------------------------------
// NC drill
// ----------------------------------------------------------------------------------------

/// Reads the drill dialect (IPC-NC-349 lineage, common practice): `M48` header with
/// `T<n>C<diameter>` tools up to `%`, then tool selects and `X..Y..` hits to `M30`. The
/// `; plated holes` / `; non-plated holes` comments of lehr's header say each tool's
/// plating (docs/fabrication.md). Returns (x, y, diameter, plated) in micrometres.
fn read_drill(text: &str) -> Vec<(i64, i64, i64, bool)> {
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("M48"));
    let mut tools = BTreeMap::new();
    let mut plated = None;
    let mut metric = false;
    for l in lines.by_ref() {
        match l {
            "%" => break,
            "METRIC" => metric = true,
            "; plated holes" => plated = Some(true),
            "; non-plated holes" => plated = Some(false),
            l if l.starts_with(';') => {}
            l => {
                let (t, dia) = l
                    .strip_prefix('T')
                    .and_then(|r| r.split_once('C'))
                    .expect("a tool line");
                tools.insert(
                    t.parse::<u32>().unwrap(),
                    (dia.parse::<f64>().unwrap(), plated.expect("a section")),
                );
            }
        }
    }
    assert!(metric);
    let um = |v: f64| (v * 1000.0).round() as i64;
    let mut hits = Vec::new();
    let mut tool = None;
    let mut ended = false;
    for l in lines {
        assert!(!ended);
        match l {
            "G90" | "G05" => {}
            "M30" => ended = true,
            l if l.starts_with(';') => {}
            l if l.starts_with('T') => tool = Some(l[1..].parse::<u32>().unwrap()),
            l => {
                let (x, y) = l
                    .strip_prefix('X')
                    .and_then(|r| r.split_once('Y'))
                    .expect("a hit");
                let (d, p) = tools[&tool.expect("a tool is selected")];
                hits.push((um(x.parse().unwrap()), um(y.parse().unwrap()), um(d), p));
            }
        }
    }
    assert!(ended, "ends with M30");
    hits.sort();
    hits
}

#[test]
fn drill_hits_are_the_board_holes() {
    let d = &fixture().design;
    let got = read_drill(&drill::drill(d).unwrap());
    let um = |v: f64| (v * 1000.0).round() as i64;
    let mut want = Vec::new();
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        for pad in &fp.pads {
            if let PadKind::ThroughHole { drill, plated } = pad.kind {
                let at = to_board(pad.at, part.at.unwrap(), part.quarter(), part.side);
                want.push((um(at.x), um(at.y), um(drill), plated));
            }
        }
    }
    for v in &d.board.copper.vias {
        want.push((um(v.at.x), um(v.at.y), um(v.drill), true));
    }
    want.sort();
    assert_eq!(got, want);
    // The two M3 holes are the non-plated ones.
    assert_eq!(got.iter().filter(|h| !h.3).count(), 2);
    assert!(got.iter().filter(|h| !h.3).all(|h| h.2 == 3200));
}
