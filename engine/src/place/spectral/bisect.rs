//! Spreading: recursive bisection of a box of the board's aspect among the unlocked
//! parts by their analytical coordinates, onto the placement grid.

use super::{SPREAD_FILL, court_offset};
use crate::model::board::{rect_to_board, to_board};
use crate::model::{Design, Point, Rect};

/// Recursive bisection of the board's bounding box among the unlocked parts by their
/// coordinates `coords` (courtyard centres); returns origins on the placement grid.
pub fn spread(design: &Design, coords: &[Point]) -> Vec<Point> {
    let parts = &design.board.parts;
    let bounds = design.board.outline.bounds();
    let grid = design.board.rules.placement_grid;
    let mut at: Vec<Point> = parts
        .iter()
        .map(|p| p.at.unwrap_or(bounds.center()))
        .collect();
    let area: Vec<f64> = design
        .footprints
        .iter()
        .map(|f| f.courtyard.area().max(1e-9))
        .collect();
    let movable: Vec<usize> = (0..parts.len()).filter(|&i| !parts[i].locked).collect();
    let region = compact_region(&bounds, &movable, &area, coords);
    let mut stack: Vec<(Rect, Vec<usize>)> = vec![(region, movable)];
    while let Some((region, mut items)) = stack.pop() {
        match items.len() {
            0 => continue,
            1 => {
                let i = items[0];
                at[i] = origin_in(design, i, &region, &bounds, grid);
                continue;
            }
            _ => {}
        }
        let cut_x = region.width() >= region.height();
        let key = |i: usize| {
            if cut_x {
                (coords[i].x, coords[i].y)
            } else {
                (coords[i].y, coords[i].x)
            }
        };
        items.sort_by(|&a, &b| {
            let (ka, kb) = (key(a), key(b));
            ka.0.total_cmp(&kb.0)
                .then(ka.1.total_cmp(&kb.1))
                .then(a.cmp(&b))
        });
        let mut cum = Vec::with_capacity(items.len() + 1);
        cum.push(0.0);
        for &i in &items {
            cum.push(cum.last().copied().unwrap_or(0.0) + area[i]);
        }
        let total = cum[items.len()];
        // The split count whose area share is nearest `frac`, at least one a side.
        let split_near = |frac: f64| -> usize {
            let target = frac * total;
            let mut best = 1;
            for k in 1..items.len() {
                if (cum[k] - target).abs() < (cum[best] - target).abs() {
                    best = k;
                }
            }
            best
        };
        let extent = if cut_x {
            region.width()
        } else {
            region.height()
        };
        let k0 = split_near(0.5);
        let mut off = extent * cum[k0] / total;
        let steps = (extent / grid + 1e-9).floor();
        let k = if steps >= 2.0 {
            off = ((off / grid).round() * grid).clamp(grid, (steps - 1.0) * grid);
            split_near(off / extent)
        } else {
            k0
        };
        let (lo, hi) = if cut_x {
            let m = region.min.x + off;
            (
                Rect::new(region.min.x, region.min.y, m, region.max.y),
                Rect::new(m, region.min.y, region.max.x, region.max.y),
            )
        } else {
            let m = region.min.y + off;
            (
                Rect::new(region.min.x, region.min.y, region.max.x, m),
                Rect::new(region.min.x, m, region.max.x, region.max.y),
            )
        };
        let upper = items.split_off(k);
        stack.push((hi, upper));
        stack.push((lo, items));
    }
    at
}

/// The region the bisection splits: the board's box, or on a board the parts fill to
/// less than [`SPREAD_FILL`], a box of the board's aspect holding their courtyards at
/// that fill, centred on their area-weighted mean coordinate and kept inside the board
/// (spreading over the whole box would set related parts farther apart than needed).
fn compact_region(bounds: &Rect, movable: &[usize], area: &[f64], coords: &[Point]) -> Rect {
    let total: f64 = movable.iter().map(|&i| area[i]).sum();
    let want = total / SPREAD_FILL;
    if movable.is_empty() || want >= bounds.area() {
        return *bounds;
    }
    let k = (want / bounds.area()).sqrt();
    let (w, h) = (bounds.width() * k, bounds.height() * k);
    let mut c = Point::new(0.0, 0.0);
    for &i in movable {
        c = c.add(Point::new(coords[i].x * area[i], coords[i].y * area[i]));
    }
    let c = Point::new(
        (c.x / total).clamp(bounds.min.x + w / 2.0, bounds.max.x - w / 2.0),
        (c.y / total).clamp(bounds.min.y + h / 2.0, bounds.max.y - h / 2.0),
    );
    Rect::centered(c, w, h)
}

/// The origin that puts part `i`'s courtyard centre at `region`'s centre, on the grid,
/// moved back inside the board where its courtyard fits.
fn origin_in(design: &Design, i: usize, region: &Rect, bounds: &Rect, grid: f64) -> Point {
    let off = court_offset(design, i);
    let court = &design.footprints[i].courtyard;
    let p = &design.board.parts[i];
    let c = rect_to_board(court, Point::new(0.0, 0.0), p.quarter(), p.side);
    let want = region.center().sub(off);
    let fit = |v: f64, lo: f64, hi: f64| {
        let v = (v / grid).round() * grid;
        if lo <= hi {
            // A bound a rounding error away from a grid step is on that step.
            let lo = (lo / grid - 1e-9).ceil() * grid;
            let hi = (hi / grid + 1e-9).floor() * grid;
            if lo <= hi { v.clamp(lo, hi) } else { v }
        } else {
            v
        }
    };
    Point::new(
        fit(want.x, bounds.min.x - c.min.x, bounds.max.x - c.max.x),
        fit(want.y, bounds.min.y - c.min.y, bounds.max.y - c.max.y),
    )
}

/// Sum over nets of weight x half-perimeter of the pins' box, with parts at `at`.
pub(super) fn weighted_hpwl(design: &Design, at: &[Point]) -> f64 {
    let mut total = 0.0;
    for (pins, net) in design.net_pins.iter().zip(&design.board.nets) {
        let pts = pins.iter().map(|pin| {
            let i = pin.part.index();
            let p = &design.board.parts[i];
            to_board(
                design.footprints[i].pads[pin.pad as usize].at,
                at[i],
                p.quarter(),
                p.side,
            )
        });
        if let Some(r) = Rect::bounding(pts) {
            total += net.weight * (r.width() + r.height());
        }
    }
    total
}
