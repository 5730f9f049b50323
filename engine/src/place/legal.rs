//! The legal finish: after annealing, put every unlocked part on the placement grid and
//! clear any remaining overlap, boundary or keep-out violation, then say exactly what, if
//! anything, is still in conflict.

use serde::{Deserialize, Serialize};

use super::anneal::Annealer;
use super::layout::{Layout, PartMove};
use crate::model::{Design, Point, Quarter, Rect};

/// Areas below this (mm^2) are rounding, not conflicts.
pub const AREA_EPS: f64 = 1e-6;

/// Share of the unlocked parts' courtyard area in conflict above which the finish
/// spreads them before repairing (see `legalize`, step 3).
const PILED: f64 = 0.1;

/// What kind of conflict a part is in.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub enum ConflictKind {
    /// Courtyards (grown by half the clearance) overlap.
    Overlap,
    /// Courtyard reaches outside the board outline.
    Outside,
    /// Courtyard intrudes on the named keep-out.
    Keepout(String),
}

/// One conflict left after the legal finish.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Conflict {
    /// References of the parts involved.
    pub parts: Vec<String>,
    pub kind: ConflictKind,
    pub area_mm2: f64,
}

impl std::fmt::Display for Conflict {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let who = self.parts.join(" and ");
        match &self.kind {
            ConflictKind::Overlap => write!(f, "{who} overlap by {:.3} mm^2", self.area_mm2),
            ConflictKind::Outside => {
                write!(
                    f,
                    "{who} reaches {:.3} mm^2 outside the board",
                    self.area_mm2
                )
            }
            ConflictKind::Keepout(k) => {
                write!(
                    f,
                    "{who} intrudes {:.3} mm^2 into keep-out {k}",
                    self.area_mm2
                )
            }
        }
    }
}

/// Every conflict in the layout, each pair of overlapping parts once.
pub fn conflicts(layout: &Layout, refs: &[String]) -> Vec<Conflict> {
    let mut out = Vec::new();
    for i in 0..layout.part_count() as u32 {
        for j in layout.overlapping(i, AREA_EPS) {
            if j > i {
                let a = layout
                    .grown_courtyard(i)
                    .overlap_area(&layout.grown_courtyard(j));
                out.push(Conflict {
                    parts: vec![refs[i as usize].clone(), refs[j as usize].clone()],
                    kind: ConflictKind::Overlap,
                    area_mm2: a,
                });
            }
        }
        let o = layout.outside_area(i);
        if o > AREA_EPS {
            out.push(Conflict {
                parts: vec![refs[i as usize].clone()],
                kind: ConflictKind::Outside,
                area_mm2: o,
            });
        }
        // A locked part stands where the user put it: a keep-out around a mounting
        // hole is for the other parts, so locked parts are not flagged against it.
        if layout.is_locked(i) {
            continue;
        }
        for (k, area) in layout.keepouts_hit(i, AREA_EPS) {
            out.push(Conflict {
                parts: vec![refs[i as usize].clone()],
                kind: ConflictKind::Keepout(k),
                area_mm2: area,
            });
        }
    }
    out
}

fn violation_of(layout: &Layout, part: u32) -> f64 {
    let (a, b, c) = layout.part_violations(part);
    a + b + c
}

/// Snaps, repairs and polishes the annealer's layout of `design`. Returns the conflicts
/// that remain.
pub fn legalize(design: &Design, an: &mut Annealer, refs: &[String]) -> Vec<Conflict> {
    let n = an.layout().part_count() as u32;
    let g = an.layout().grid();
    let movable: Vec<u32> = (0..n).filter(|&i| !an.layout().is_locked(i)).collect();

    // 1. Snap unlocked parts to the grid (positions taken from the file may be off it).
    for &i in &movable {
        let p = an.layout().position(i);
        let s = Point::new((p.x / g).round() * g, (p.y / g).round() * g);
        if s != p {
            let q = an.layout().quarter(i);
            an.layout_mut().apply(&[PartMove {
                part: i,
                at: s,
                quarter: q,
            }]);
        }
    }

    // 2. Parts piled up (a short or stopped run leaves them so: a tenth of their area
    //    or more in conflict): spread the unlocked parts over the board by recursive
    //    bisection, keeping their order, so that the repairs after are local. Searching
    //    outward from a pile for each part in turn would cost the pile's area per part.
    //    An annealed layout keeps only slivers of overlap and is repaired in place.
    let area: f64 = movable
        .iter()
        .map(|&i| an.layout().courtyard(i).area())
        .sum();
    let conflict: f64 = movable.iter().map(|&i| violation_of(an.layout(), i)).sum();
    if conflict > PILED * area && movable.len() > 16 {
        let l = an.layout();
        let mut d = design.clone();
        for (i, p) in d.board.parts.iter_mut().enumerate() {
            p.rotation = l.quarter(i as u32).degrees();
        }
        let coords: Vec<Point> = (0..n).map(|i| l.courtyard(i).center()).collect();
        let at = super::spectral::spread(&d, &coords);
        for &i in &movable {
            let q = an.layout().quarter(i);
            if an.layout().position(i) != at[i as usize] {
                an.layout_mut().apply(&[PartMove {
                    part: i,
                    at: at[i as usize],
                    quarter: q,
                }]);
            }
        }
    }

    // 3. Let parts slide or swap apart: zero-temperature moves of the annealer's own
    //    kind (displacements within the final window, swaps, turns) with the legality
    //    terms weighted up step by step, so small overlaps are removed by local moves,
    //    not jumps.
    let sweeps = 8 * movable.len().max(1);
    let base = *an.weights();
    for f in [4.0, 16.0, 64.0] {
        an.set_weights(base.with_legality_factor(f));
        an.sample_at(0.0, 4 * sweeps as u64, |_| {});
    }
    an.set_weights(base);

    // 4. Move each part still in conflict to the nearest free grid spot. Parts with
    //    fewer pins go first: moving a capacitor out of an IC's way costs less wiring than
    //    moving the IC. Free spots are found on an occupancy raster of the board (see
    //    `Occupancy`) and confirmed by the exact energy terms; among the candidates of
    //    the first ring of grid steps that has any, the one adding the least wirelength
    //    wins.
    let mut bad: Vec<(usize, f64, u32)> = movable
        .iter()
        .map(|&i| (an.layout().pin_count(i), violation_of(an.layout(), i), i))
        .filter(|(_, v, _)| *v > AREA_EPS)
        .collect();
    bad.sort_by(|a, b| a.0.cmp(&b.0).then(b.1.total_cmp(&a.1)).then(a.2.cmp(&b.2)));
    if !bad.is_empty() {
        let mut occ = Occupancy::new(an.layout());
        for &(_, _, i) in &bad {
            relocate(an.layout_mut(), &mut occ, i);
        }
    }

    // 5. A short descent that never adds violation area: it shortens the wiring the
    //    repairs lengthened and removes what the repairs could not.
    let w = an.weights().with_legality_factor(1e3);
    polish(an, &movable, &w, sweeps, true);

    an.refresh_energy();
    conflicts(an.layout(), refs)
}

/// Zero-temperature single-part moves of a few grid cells, accepted when they lower the
/// energy (and, with `keep_legal`, do not increase the violation area).
fn polish(
    an: &mut Annealer,
    movable: &[u32],
    w: &super::layout::Weights,
    moves: usize,
    keep_legal: bool,
) {
    if movable.is_empty() {
        return;
    }
    let g = an.layout().grid();
    let bounds = an.layout().outline_bounds();
    for _ in 0..moves {
        let rng = an.rng_mut();
        let i = movable[rng.below(movable.len() as u32) as usize];
        let dx = rng.symmetric(3);
        let dy = rng.symmetric(3);
        let layout = an.layout_mut();
        let p = layout.position(i);
        let at = Point::new(p.x + dx as f64 * g, p.y + dy as f64 * g);
        if (dx == 0 && dy == 0) || !bounds.contains(at) {
            continue;
        }
        let m = PartMove {
            part: i,
            at,
            quarter: layout.quarter(i),
        };
        let d = layout.evaluate(&[m]);
        if (!keep_legal || d.violation() <= 1e-12) && d.energy(w) < 0.0 {
            layout.commit();
        } else {
            layout.revert();
        }
    }
}

/// The grid offsets at Chebyshev distance exactly `r`, in a fixed order.
fn ring(r: i64) -> impl Iterator<Item = (i64, i64)> {
    (-r..=r).flat_map(move |dx| {
        (-r..=r).filter_map(move |dy| (dx.abs() == r || dy.abs() == r).then_some((dx, dy)))
    })
}

/// Most cells an occupancy raster may have; coarser cells beyond.
const MAX_CELLS: usize = 4_000_000;

/// Where parts stand, on a raster of the board's box: per side (top, bottom) and cell,
/// how many grown courtyards cover it, and whether it is off the board or in a keep-out
/// of that side. A cell counts as covered when a rectangle reaches into its inside, so
/// rectangles that only touch share no cell, and a rectangle over free cells overlaps
/// nothing there (the exact terms confirm). Built once per finish in time proportional
/// to the board's cells; a part's move recounts only its own rows.
struct Occupancy {
    x0: f64,
    y0: f64,
    cell: f64,
    nx: usize,
    ny: usize,
    /// Courtyards over each cell, top and bottom.
    count: [Vec<u16>; 2],
    /// Cells off the board or in a keep-out, per side.
    blocked: [Vec<bool>; 2],
    /// Per side and row y, the number of taken (covered or blocked) cells in `[0, x)`
    /// of the row, at `y * (nx + 1) + x`: a rectangle's cells are checked in two reads
    /// per row, and a part's move recounts only its rows.
    sums: [Vec<u32>; 2],
}

impl Occupancy {
    fn new(l: &Layout) -> Occupancy {
        let b = l.outline_bounds();
        let mut cell = l.grid();
        while (b.width() / cell).ceil() * (b.height() / cell).ceil() > MAX_CELLS as f64 {
            cell *= 2.0;
        }
        let nx = ((b.width() / cell).ceil() as usize).max(1);
        let ny = ((b.height() / cell).ceil() as usize).max(1);
        let mut o = Occupancy {
            x0: b.min.x,
            y0: b.min.y,
            cell,
            nx,
            ny,
            count: [vec![0; nx * ny], vec![0; nx * ny]],
            blocked: [vec![false; nx * ny], vec![false; nx * ny]],
            sums: [vec![0; (nx + 1) * ny], vec![0; (nx + 1) * ny]],
        };
        let rect_outline = matches!(l.outline(), crate::model::Shape::Rect { .. });
        for y in 0..ny {
            for x in 0..nx {
                let r = o.cell_rect(x, y);
                let off = !rect_outline && l.outline().overlap_with_rect(&r) < r.area() - 1e-9;
                let k = y * nx + x;
                for side in 0..2 {
                    o.blocked[side][k] = off;
                }
            }
        }
        for (shape, bounds, mask) in l.keepout_regions() {
            if let Some((x0, x1, y0, y1)) = o.span(&bounds) {
                for y in y0..=y1 {
                    for x in x0..=x1 {
                        let r = o.cell_rect(x, y);
                        if shape.overlap_with_rect(&r) > 1e-9 {
                            for side in 0..2 {
                                if mask & (1 << side) != 0 {
                                    o.blocked[side][y * nx + x] = true;
                                }
                            }
                        }
                    }
                }
            }
        }
        for i in 0..l.part_count() as u32 {
            let (r, mask) = (l.grown_courtyard(i), l.side_mask(i));
            if let Some((x0, x1, y0, y1)) = o.span(&r) {
                for side in 0..2 {
                    if mask & (1 << side) != 0 {
                        for y in y0..=y1 {
                            for c in &mut o.count[side][y * nx + x0..=y * nx + x1] {
                                *c = c.saturating_add(1);
                            }
                        }
                    }
                }
            }
        }
        for side in 0..2 {
            for y in 0..ny {
                o.recount(side, y, 0);
            }
        }
        o
    }

    fn cell_rect(&self, x: usize, y: usize) -> Rect {
        let (x0, y0) = (
            self.x0 + x as f64 * self.cell,
            self.y0 + y as f64 * self.cell,
        );
        Rect::new(x0, y0, x0 + self.cell, y0 + self.cell)
    }

    /// The cells whose inside `r` reaches into, clamped to the raster; `None` when `r`
    /// lies wholly off it or has no area.
    fn span(&self, r: &Rect) -> Option<(usize, usize, usize, usize)> {
        let eps = 1e-7;
        let lo = |v: f64, o: f64| floor((v - o) / self.cell + eps);
        let hi = |v: f64, o: f64| -floor(-((v - o) / self.cell - eps)) - 1.0;
        let (x0, x1) = (lo(r.min.x, self.x0), hi(r.max.x, self.x0));
        let (y0, y1) = (lo(r.min.y, self.y0), hi(r.max.y, self.y0));
        if x1 < x0 || y1 < y0 || x1 < 0.0 || y1 < 0.0 {
            return None;
        }
        let (nx, ny) = (self.nx as f64 - 1.0, self.ny as f64 - 1.0);
        if x0 > nx || y0 > ny {
            return None;
        }
        Some((
            x0.max(0.0) as usize,
            x1.min(nx) as usize,
            y0.max(0.0) as usize,
            y1.min(ny) as usize,
        ))
    }

    /// Recounts the prefix sums of row `y` on `side` from column `x0` on.
    fn recount(&mut self, side: usize, y: usize, x0: usize) {
        let w = self.nx + 1;
        let (count, blocked, sums) = (
            &self.count[side][y * self.nx..(y + 1) * self.nx],
            &self.blocked[side][y * self.nx..(y + 1) * self.nx],
            &mut self.sums[side][y * w..(y + 1) * w],
        );
        for x in x0..self.nx {
            sums[x + 1] = sums[x] + u32::from(count[x] > 0 || blocked[x]);
        }
    }

    fn mark(&mut self, r: &Rect, mask: u8, add: bool) {
        let Some((x0, x1, y0, y1)) = self.span(r) else {
            return;
        };
        for side in 0..2 {
            if mask & (1 << side) == 0 {
                continue;
            }
            for y in y0..=y1 {
                for c in &mut self.count[side][y * self.nx + x0..=y * self.nx + x1] {
                    *c = if add {
                        c.saturating_add(1)
                    } else {
                        c.saturating_sub(1)
                    };
                }
                self.recount(side, y, x0);
            }
        }
    }

    /// Whether a grown courtyard at `r` on the sides `mask` lies on the board over free,
    /// unblocked cells only.
    fn free(&self, r: &Rect, mask: u8) -> bool {
        let b = Rect::new(
            self.x0,
            self.y0,
            self.x0 + self.nx as f64 * self.cell,
            self.y0 + self.ny as f64 * self.cell,
        );
        if r.min.x < b.min.x - 1e-9
            || r.min.y < b.min.y - 1e-9
            || r.max.x > b.max.x + 1e-9
            || r.max.y > b.max.y + 1e-9
        {
            return false;
        }
        let Some((x0, x1, y0, y1)) = self.span(r) else {
            return true;
        };
        let w = self.nx + 1;
        for side in 0..2 {
            if mask & (1 << side) == 0 {
                continue;
            }
            let s = &self.sums[side];
            for y in y0..=y1 {
                if s[y * w + x1 + 1] != s[y * w + x0] {
                    return false;
                }
            }
        }
        true
    }
}

/// `v.floor()` without the library call it is on baseline x86-64 (the raster rounds
/// four times per candidate spot). Exact for |v| < 2^52.
#[inline]
fn floor(v: f64) -> f64 {
    if v.is_nan() || v.abs() >= 4.0e15 {
        return v.floor();
    }
    let t = v as i64 as f64;
    if t > v { t - 1.0 } else { t }
}

/// Candidate spots checked by the exact terms, at most, in the first ring that has
/// any free on the raster (the raster is nearly exact, so a few suffice to compare their
/// wiring).
const CANDIDATES: usize = 12;

/// Moves part `i`, if it is still in conflict, to the nearest spot free of conflict:
/// rings of grid steps around it, each candidate first tested on the raster (cheap), then
/// by the exact terms; among the confirmed candidates of the first ring that has any, the
/// one adding the least wirelength. The raster follows the move.
fn relocate(layout: &mut Layout, occ: &mut Occupancy, i: u32) {
    let here = violation_of(layout, i);
    if here <= AREA_EPS {
        return;
    }
    let g = layout.grid();
    let p = layout.position(i);
    let q0 = layout.quarter(i);
    let mask = layout.side_mask(i);
    let (cx, cy) = ((p.x / g).round() as i64, (p.y / g).round() as i64);
    let quarters: Vec<Quarter> = if layout.is_rotatable(i) {
        (0..4)
            .map(|k| Quarter::from_index(q0.index() + k))
            .collect()
    } else {
        vec![q0]
    };
    let own = layout.grown_courtyard(i);
    occ.mark(&own, mask, false);
    let bounds = layout.outline_bounds();
    let max_ring = ((bounds.width().max(bounds.height()) / g).ceil() as i64 + 2).max(2);
    let mut best: Option<(f64, PartMove)> = None;
    for r in 1..=max_ring {
        let mut tried = 0;
        for (dx, dy) in ring(r) {
            let at = Point::new((cx + dx) as f64 * g, (cy + dy) as f64 * g);
            for &q in &quarters {
                if tried >= CANDIDATES || !occ.free(&layout.grown_courtyard_at(i, at, q), mask) {
                    continue;
                }
                tried += 1;
                let m = PartMove {
                    part: i,
                    at,
                    quarter: q,
                };
                let d = layout.evaluate(&[m]);
                layout.revert();
                if here + d.violation() <= AREA_EPS
                    && best.as_ref().is_none_or(|(w, _)| d.wirelength < *w)
                {
                    best = Some((d.wirelength, m));
                }
            }
        }
        if best.is_some() {
            break;
        }
    }
    if let Some((_, m)) = best {
        layout.apply(&[m]);
    }
    occ.mark(&layout.grown_courtyard(i), mask, true);
}
