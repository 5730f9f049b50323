//! Placement: the incremental energy, the Metropolis sampler, the annealer and the legal
//! finish, checked against sources outside the project (../shared/CHECK-VALUES.md,
//! "Annealing and physics" and "Placement"), against exhaustive enumeration, against an
//! independent graph library (petgraph) and against numbers worked by hand.
//!
//! Each check names its source. "From memory" marks values that CHECK-VALUES.md (or this
//! test) recalls rather than read from the source; "common practice" marks facts of the
//! trade. All boards here are invented or generated.
//!
//! Everything runs with fixed seeds, so a failure is reproducible bit for bit.

mod annealer;
mod energy;
mod legal;
mod mst;
mod multilevel;
mod optimum;
pub(crate) mod sampler;
mod spectral;

use lehr_engine::model::{Design, Point, Quarter, Side};
use lehr_engine::place::layout::{Layout, Terms};

/// A pad centre on the board, computed here from the convention documented in
/// docs/board-format.md rather than with the engine's `to_board`: a bottom-side footprint
/// is seen through the board (x -> -x), then turned counter-clockwise by quarter turns
/// (y up), then moved to the part's position.
fn pad_on_board(pad: Point, at: Point, q: Quarter, side: Side) -> Point {
    let (mut x, mut y) = (pad.x, pad.y);
    if side == Side::Bottom {
        x = -x;
    }
    for _ in 0..q.index() {
        (x, y) = (-y, x);
    }
    Point::new(at.x + x, at.y + y)
}

/// Net-weighted and raw HPWL of every net of `d` with parts at the layout's positions and
/// turns, from the footprints' pads directly (no engine cache, no engine transform).
fn independent_hpwl(d: &Design, layout: &Layout) -> (f64, f64) {
    let (mut weighted, mut raw) = (0.0, 0.0);
    for (pins, n) in d.net_pins.iter().zip(&d.board.nets) {
        let pts: Vec<Point> = pins
            .iter()
            .map(|pin| {
                let i = pin.part.0;
                let pad = d.footprints[pin.part.index()].pads[pin.pad as usize].at;
                pad_on_board(
                    pad,
                    layout.position(i),
                    layout.quarter(i),
                    d.board.parts[pin.part.index()].side,
                )
            })
            .collect();
        let h = box_half_perimeter(&pts);
        weighted += n.weight * h;
        raw += h;
    }
    (weighted, raw)
}

/// (xmax - xmin) + (ymax - ymin), written out here (CHECK-VALUES.md, "Placement": the
/// definition of HPWL).
fn box_half_perimeter(pts: &[Point]) -> f64 {
    if pts.len() < 2 {
        return 0.0;
    }
    let xs = pts.iter().map(|p| p.x);
    let ys = pts.iter().map(|p| p.y);
    let (x0, x1) = (
        xs.clone().fold(f64::MAX, f64::min),
        xs.fold(f64::MIN, f64::max),
    );
    let (y0, y1) = (
        ys.clone().fold(f64::MAX, f64::min),
        ys.fold(f64::MIN, f64::max),
    );
    (x1 - x0) + (y1 - y0)
}

/// `a` equals `b` within `rel` relative, with a floor of 1 (mm or mm^2) on the scale so a
/// term that should be zero may carry the rounding of the additions that cancelled it.
fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1.0)
}

fn assert_terms_close(inc: &Terms, full: &Terms, rel: f64, what: &str) {
    for (name, a, b) in [
        ("wirelength", inc.wirelength, full.wirelength),
        ("overlap", inc.overlap, full.overlap),
        ("outside", inc.outside, full.outside),
        ("keepout", inc.keepout, full.keepout),
    ] {
        assert!(
            close(a, b, rel),
            "{what}: incremental {name} {a} != full {b} (diff {:e})",
            a - b
        );
    }
}

fn terms_plus(a: &Terms, d: &Terms) -> Terms {
    Terms {
        wirelength: a.wirelength + d.wirelength,
        overlap: a.overlap + d.overlap,
        outside: a.outside + d.outside,
        keepout: a.keepout + d.keepout,
    }
}
