//! The annealer's moves: what a proposal changes, drawn from the seeded generator.
//!
//! - **Displace or swap** (the common move): a target cell within the displacement
//!   window around the part; if another part's origin is on that cell, the two trade
//!   places, else the part moves there. Symmetric (a swap is its own reverse; a target
//!   off the board is a null move, never clamped to the edge).
//! - **Turn**: a quarter turn to one of the three other turns. Symmetric.
//! - **Directed**: the same, aimed at the centroid of the part's net neighbours (within
//!   two grid steps of it). Not symmetric; it finds the downhill moves of a cold layout
//!   far more often than a random target does (common practice in annealing placers).
//! - **Shift**: the contents of a run of grid cells along a row or column turn by one
//!   cell. Symmetric. A row with one part too many or too few shears everything beyond
//!   it; a shift slides it straight in one step.
//! - **Mirror**: the contents of a window of grid cells are reflected (across a middle
//!   line or a diagonal) or turned half round. Symmetric. Turns a region that settled
//!   mirrored the right way round in one step.
//!
//! Each move's part is drawn three moves ahead and its displacement two ahead, so that
//! on a large board the part's data can be fetched into the cache early
//! ([`crate::place::layout::Layout::prefetch_row`]); the draws, and so the results, are the
//! same on every machine.

use super::Annealer;
use crate::model::{Point, Quarter};
use crate::place::fast::round;
use crate::place::layout::PartMove;

/// [`Ahead::part`] before the first draw.
pub(super) const NOT_DRAWN: u32 = u32::MAX;

/// Longest run of a shift move and widest window of a mirror move, in grid cells.
const SHIFT_MAX: u32 = 8;
const MIRROR_MAX: u32 = 6;

/// Coordinate `v` moved by `d` grid steps, keeping its offset from its grid point: the
/// new grid point is computed as `cell * g`, the same expression as every other move's
/// target, so a part on the grid lands exactly on a grid point (`v + d * g` can miss it
/// by a rounding error, and a swap partner is found by exact equality).
#[inline]
fn cell_moved(v: f64, g: f64, d: i64) -> f64 {
    let c = round(v / g);
    let off = v - c as f64 * g;
    (c + d) as f64 * g + off
}

/// A move drawn ahead: the part, its displacement in grid steps and the bins under the
/// part and its target (cache hints).
#[derive(Clone, Copy, Debug)]
pub(super) struct Ahead {
    pub part: u32,
    pub dx: i64,
    pub dy: i64,
    pub bins: [u32; 2],
}

impl Default for Ahead {
    fn default() -> Self {
        Ahead {
            part: NOT_DRAWN,
            dx: 0,
            dy: 0,
            bins: [u32::MAX; 2],
        }
    }
}

/// A proposed move: one or two parts held inline, or a group in the annealer's
/// `group` list.
#[derive(Clone, Copy)]
pub(super) enum Proposal {
    Small([PartMove; 2], usize),
    Group,
}

impl Annealer {
    /// The part to move now and its displacement in grid steps (see the module docs on
    /// drawing ahead). A displacement drawn ahead uses the window of its draw, which
    /// differs from the current one only across a stage's end; the proposal stays
    /// symmetric.
    #[inline]
    fn next_part(&mut self) -> Ahead {
        let n = self.movable.len() as u32;
        if self.ahead[0].part == NOT_DRAWN {
            for k in 0..3 {
                self.ahead[k].part = self.movable[self.rng.below(n) as usize];
            }
            self.draw_offset(0);
            self.draw_offset(1);
        }
        let now = self.ahead[0];
        self.ahead[0] = self.ahead[1];
        self.ahead[1] = self.ahead[2];
        self.ahead[2] = Ahead {
            part: self.movable[self.rng.below(n) as usize],
            ..Ahead::default()
        };
        self.draw_offset(1);
        if self.layout.hints() {
            self.layout.prefetch_row(self.ahead[2].part);
            self.layout
                .prefetch_nets(self.ahead[0].part, self.ahead[0].bins);
        }
        now
    }

    /// Draws the displacement of `ahead[k]` and fetches the bin headers under the part
    /// and its target.
    #[inline]
    fn draw_offset(&mut self, k: usize) {
        let g = self.layout.grid();
        let w = self.window_cells();
        let e = &mut self.ahead[k];
        // Any offset but (0, 0), which would move nothing (a ninth of the draws in the
        // one-step window of a cold run). Still symmetric: d and -d are equally likely.
        loop {
            e.dx = self.rng.symmetric(w);
            e.dy = self.rng.symmetric(w);
            if e.dx != 0 || e.dy != 0 {
                break;
            }
        }
        if !self.layout.hints() {
            return;
        }
        let own = self.layout.prefetch_pins(e.part);
        let pos = self.layout.position(e.part);
        let target = Point::new(
            (round(pos.x / g) + e.dx) as f64 * g,
            (round(pos.y / g) + e.dy) as f64 * g,
        );
        e.bins = [own, self.layout.prefetch_bin_at(target)];
    }

    /// The displacement window in whole grid steps (at least one).
    #[inline]
    pub(super) fn window_cells(&self) -> u32 {
        (round(self.window / self.layout.grid()) as u32).max(1)
    }

    /// Picks a move (see the module docs). `None` if the draw moved nothing.
    #[inline]
    pub(super) fn propose(&mut self) -> Option<Proposal> {
        if self.movable.is_empty() {
            // Every part locked: nothing to draw from.
            return None;
        }
        let ahead = self.next_part();
        let a = ahead.part;
        let pos = self.layout.position(a);
        let q = self.layout.quarter(a);
        if self.opts.rotate_fraction > 0.0
            && self.layout.is_rotatable(a)
            && self.rng.unit() < self.opts.rotate_fraction
        {
            let nq = Quarter::from_index(q.index() + 1 + self.rng.below(3) as usize);
            let m = PartMove {
                part: a,
                at: pos,
                quarter: nq,
            };
            return Some(Proposal::Small([m, m], 1));
        }
        let g = self.layout.grid();
        let mut centre = pos;
        let (mut dx, mut dy) = (ahead.dx, ahead.dy);
        // One draw picks the kind: directed, shift, mirror or plain.
        let o = &self.opts;
        if o.directed_fraction + o.shift_fraction + o.mirror_fraction > 0.0 {
            let u = self.rng.unit();
            let (d, s, m) = (o.directed_fraction, o.shift_fraction, o.mirror_fraction);
            if u < d {
                if let Some(c) = self.layout.neighbour_centroid(a) {
                    centre = c;
                    let w = self.window_cells().min(2);
                    dx = self.rng.symmetric(w);
                    dy = self.rng.symmetric(w);
                }
            } else if u < d + s {
                return self.propose_shift(a).then_some(Proposal::Group);
            } else if u < d + s + m {
                return self.propose_mirror(a).then_some(Proposal::Group);
            }
        }
        let cx = round(centre.x / g);
        let cy = round(centre.y / g);
        let tx = cx + dx;
        let ty = cy + dy;
        // A draw off the board is a null move rather than being clamped to the edge:
        // clamping would make edge cells likelier targets than they are sources, and the
        // proposal would no longer be symmetric (detailed balance). Only a part that is
        // itself off the board is pulled back in by clamping.
        let (x0, x1, y0, y1) = self.cells;
        let inside = |c: i64, lo: i64, hi: i64| (lo..=hi).contains(&c);
        let (tx, ty) = if inside(cx, x0, x1) && inside(cy, y0, y1) {
            if !inside(tx, x0, x1) || !inside(ty, y0, y1) {
                return None;
            }
            (tx, ty)
        } else {
            (tx.clamp(x0, x1), ty.clamp(y0, y1))
        };
        let target = Point::new(tx as f64 * g, ty as f64 * g);
        if target == pos {
            return None;
        }
        let ma = PartMove {
            part: a,
            at: target,
            quarter: q,
        };
        if let Some(b) = self.layout.part_at(target, a)
            && !self.layout.is_locked(b)
        {
            let pb = self.layout.position(b);
            let ma = PartMove { at: pb, ..ma };
            let mb = PartMove {
                part: b,
                at: pos,
                quarter: self.layout.quarter(b),
            };
            return Some(Proposal::Small([ma, mb], 2));
        }
        Some(Proposal::Small([ma, ma], 1))
    }

    /// Collects the parts whose origin lies in the cells `x0..=x1` by `y0..=y1` into
    /// `group_parts`; false when the cells leave the board, hold a locked part or fewer
    /// than two parts.
    fn gather(&mut self, x0: i64, x1: i64, y0: i64, y1: i64) -> bool {
        let (bx0, bx1, by0, by1) = self.cells;
        if x0 < bx0 || x1 > bx1 || y0 < by0 || y1 > by1 {
            return false;
        }
        self.group_parts.clear();
        let l = &self.layout;
        l.parts_in_cells(x0, x1, y0, y1, &mut self.group_parts);
        self.group_parts.len() >= 2 && !self.group_parts.iter().any(|&p| l.is_locked(p))
    }

    /// A shift move (see the module docs): a run of `k` cells (2 to [`SHIFT_MAX`])
    /// along a row or a column that holds part `a`, its place among those that hold `a`
    /// drawn uniformly, turned one cell forward or back. The reverse turn of the same
    /// run is the reverse move and as likely.
    fn propose_shift(&mut self, a: u32) -> bool {
        let g = self.layout.grid();
        let pos = self.layout.position(a);
        let (ax, ay) = (round(pos.x / g), round(pos.y / g));
        let k = 2 + i64::from(self.rng.below(SHIFT_MAX - 1));
        let along_x = self.rng.below(2) == 0;
        let forward = self.rng.below(2) == 0;
        let back = i64::from(self.rng.below(k as u32));
        let (x0, x1, y0, y1) = if along_x {
            (ax - back, ax - back + k - 1, ay, ay)
        } else {
            (ax, ax, ay - back, ay - back + k - 1)
        };
        if !self.gather(x0, x1, y0, y1) {
            return false;
        }
        self.group.clear();
        for &p in &self.group_parts {
            let at = self.layout.position(p);
            let u = if along_x {
                round(at.x / g) - x0
            } else {
                round(at.y / g) - y0
            };
            let nu = if forward {
                (u + 1) % k
            } else {
                (u + k - 1) % k
            };
            let to = if along_x {
                Point::new(cell_moved(at.x, g, nu - u), at.y)
            } else {
                Point::new(at.x, cell_moved(at.y, g, nu - u))
            };
            self.group.push(PartMove {
                part: p,
                at: to,
                quarter: self.layout.quarter(p),
            });
        }
        true
    }

    /// A mirror move (see the module docs): a window of `kx` x `ky` cells (2 to
    /// [`MIRROR_MAX`] each) that holds part `a`, its place among those that hold `a`
    /// drawn uniformly; its parts change places by a reflection across either middle
    /// line, a half turn, or on a square window a reflection across either diagonal.
    /// Each part keeps its turn and its offset from its cell. Every one of these maps is
    /// its own inverse and the window is as likely drawn from the mirrored layout (it
    /// holds the same parts), so the move is symmetric.
    fn propose_mirror(&mut self, a: u32) -> bool {
        let g = self.layout.grid();
        let pos = self.layout.position(a);
        let (ax, ay) = (round(pos.x / g), round(pos.y / g));
        let kx = 2 + i64::from(self.rng.below(MIRROR_MAX - 1));
        let ky = 2 + i64::from(self.rng.below(MIRROR_MAX - 1));
        let x0 = ax - i64::from(self.rng.below(kx as u32));
        let y0 = ay - i64::from(self.rng.below(ky as u32));
        let kind = self.rng.below(if kx == ky { 5 } else { 3 });
        if !self.gather(x0, x0 + kx - 1, y0, y0 + ky - 1) {
            return false;
        }
        self.group.clear();
        for &p in &self.group_parts {
            let at = self.layout.position(p);
            let (u, v) = (round(at.x / g) - x0, round(at.y / g) - y0);
            let (nu, nv) = match kind {
                0 => (kx - 1 - u, v),
                1 => (u, ky - 1 - v),
                2 => (kx - 1 - u, ky - 1 - v),
                3 => (v, u),
                _ => (kx - 1 - v, kx - 1 - u),
            };
            self.group.push(PartMove {
                part: p,
                at: Point::new(cell_moved(at.x, g, nu - u), cell_moved(at.y, g, nv - v)),
                quarter: self.layout.quarter(p),
            });
        }
        true
    }
}
