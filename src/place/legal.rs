//! The legal finish: after annealing, put every unlocked part on the placement grid and
//! clear any remaining overlap, boundary or keep-out violation, then say exactly what, if
//! anything, is still in conflict.

use serde::{Deserialize, Serialize};

use super::anneal::Annealer;
use super::layout::{Layout, PartMove};
use crate::model::{Point, Quarter};

/// Areas below this (mm^2) are rounding, not conflicts.
pub const AREA_EPS: f64 = 1e-6;

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

/// Snaps, repairs and polishes the annealer's layout. Returns the conflicts that remain.
pub fn legalize(an: &mut Annealer, refs: &[String]) -> Vec<Conflict> {
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

    // 2. Let parts slide or swap apart: zero-temperature moves of the annealer's own
    //    kind (displacements within the final window, swaps, turns) with the legality
    //    terms weighted up step by step, so the small overlaps an annealed layout keeps
    //    are removed by local moves, not jumps.
    let sweeps = 8 * movable.len().max(1);
    let base = *an.weights();
    for f in [4.0, 16.0, 64.0] {
        an.set_weights(base.with_legality_factor(f));
        an.sample_at(0.0, 4 * sweeps as u64, |_| {});
    }
    an.set_weights(base);

    // 3. Move each part still in conflict to the nearest free grid spot (rings of grid
    //    cells around it; among the first ring with free spots, the one adding the least
    //    wirelength). Parts with fewer pins go first: moving a capacitor out of an IC's
    //    way costs less wiring than moving the IC.
    let mut bad: Vec<(usize, f64, u32)> = movable
        .iter()
        .map(|&i| (an.layout().pin_count(i), violation_of(an.layout(), i), i))
        .filter(|(_, v, _)| *v > AREA_EPS)
        .collect();
    bad.sort_by(|a, b| a.0.cmp(&b.0).then(b.1.total_cmp(&a.1)).then(a.2.cmp(&b.2)));
    let bounds = an.layout().outline_bounds();
    let max_ring = ((bounds.width().max(bounds.height()) / g).ceil() as i64 + 2).max(2);
    for (_, _, i) in bad {
        let layout = an.layout_mut();
        let here = violation_of(layout, i);
        if here <= AREA_EPS {
            continue;
        }
        let p = layout.position(i);
        let q0 = layout.quarter(i);
        let (cx, cy) = ((p.x / g).round() as i64, (p.y / g).round() as i64);
        let quarters: Vec<Quarter> = if layout.is_rotatable(i) {
            (0..4)
                .map(|k| Quarter::from_index(q0.index() + k))
                .collect()
        } else {
            vec![q0]
        };
        let mut best: Option<(f64, PartMove)> = None;
        for r in 1..=max_ring {
            for (dx, dy) in ring(r) {
                let at = Point::new((cx + dx) as f64 * g, (cy + dy) as f64 * g);
                let c = layout.courtyard_at(i, at, q0);
                if !bounds.inflate(g).contains(c.center()) {
                    continue;
                }
                for &q in &quarters {
                    let m = PartMove {
                        part: i,
                        at,
                        quarter: q,
                    };
                    let d = layout.evaluate(&[m]);
                    layout.revert();
                    let after = here + d.violation();
                    if after <= AREA_EPS && best.as_ref().is_none_or(|(w, _)| d.wirelength < *w) {
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
    }

    // 4. A short descent that never adds violation area: it shortens the wiring the
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
