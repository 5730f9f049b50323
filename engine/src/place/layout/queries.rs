//! Read-only questions about a layout (positions, courtyards, neighbours, violations)
//! and the cache hints of the moves ahead.

use super::{LARGE_NET, LOCKED, Layout, ROTATABLE};
use crate::model::{Point, Quarter, Rect, Shape};
use crate::place::fast::{prefetch, round};

impl Layout {
    // Cache hints for the moves ahead. The annealer draws each move's part three moves
    // early and calls these on consecutive moves: the part's row; then its pins and the
    // bin headers under it and under its target (reading the row fetched a move before);
    // then its nets' boxes and those bins' entries (reading the pins and headers fetched
    // a move before). Hints only: nothing is computed or changed, and results do not
    // depend on them.

    /// Whether cache hints pay: the tables a move reads are larger than a core's
    /// second-level cache is likely to hold. Below that the hints cost more instructions
    /// than the misses they save (measured: docs/performance.md).
    #[inline]
    pub fn hints(&self) -> bool {
        self.hints
    }

    /// Turns the cache hints on or off whatever the board's size (tests: the hints must
    /// not change any result).
    #[doc(hidden)]
    pub fn set_hints(&mut self, on: bool) {
        self.hints = on;
    }

    /// Stage 0: the part's row.
    #[inline]
    pub fn prefetch_row(&self, part: u32) {
        prefetch(self.parts.as_ptr().wrapping_add(part as usize));
    }

    /// Stage 1: the part's pins and the header of the bin under it; returns that bin.
    #[inline]
    pub fn prefetch_pins(&self, part: u32) -> u32 {
        let c = &self.parts[part as usize];
        let s = c.pin_start as usize;
        prefetch(self.pins.as_ptr().wrapping_add(s));
        prefetch(self.pin_xy.as_ptr().wrapping_add(s));
        self.prefetch_bin_at(c.pos)
    }

    /// Stage 1: the header of the bin under point `p` (a move's target); returns it.
    #[inline]
    pub fn prefetch_bin_at(&self, p: Point) -> u32 {
        let b = self.hash.bin_of(p);
        self.hash.prefetch_header(b);
        b
    }

    /// Stage 2: the part's nets and the entries of two bins whose headers stage 1
    /// fetched.
    #[inline]
    pub fn prefetch_nets(&self, part: u32, bins: [u32; 2]) {
        let c = &self.parts[part as usize];
        for p in &self.pins[c.pins()] {
            prefetch(self.net_meta.as_ptr().wrapping_add(p.net as usize));
            prefetch(self.bbox.as_ptr().wrapping_add(p.net as usize));
        }
        self.hash.prefetch_entries(bins[0]);
        self.hash.prefetch_entries(bins[1]);
    }

    /// Number of connected pins of a part.
    pub fn pin_count(&self, part: u32) -> usize {
        self.pins_of(part as usize).len()
    }

    pub fn part_count(&self) -> usize {
        self.parts.len()
    }

    #[inline]
    pub fn position(&self, part: u32) -> Point {
        self.parts[part as usize].pos
    }

    #[inline]
    pub fn quarter(&self, part: u32) -> Quarter {
        self.parts[part as usize].quarter
    }

    pub fn positions(&self) -> &[Point] {
        &self.pos
    }

    pub fn quarters(&self) -> &[Quarter] {
        &self.quarter
    }

    #[inline]
    pub fn is_locked(&self, part: u32) -> bool {
        self.parts[part as usize].flags & LOCKED != 0
    }

    /// Locks or unlocks a part (the GUI's lock command).
    pub fn set_locked(&mut self, part: u32, locked: bool) {
        let c = &mut self.parts[part as usize];
        c.flags = if locked {
            c.flags | LOCKED
        } else {
            c.flags & !LOCKED
        };
    }

    #[inline]
    pub fn is_rotatable(&self, part: u32) -> bool {
        self.parts[part as usize].flags & ROTATABLE != 0
    }

    pub fn grid(&self) -> f64 {
        self.grid
    }

    pub fn outline_bounds(&self) -> Rect {
        self.outline_bounds
    }

    /// Board rectangle of a part's courtyard (not grown).
    pub fn courtyard(&self, part: u32) -> Rect {
        self.parts[part as usize].court_now()
    }

    /// Board rectangle of a part's courtyard grown by half the clearance.
    pub fn grown_courtyard(&self, part: u32) -> Rect {
        self.parts[part as usize].grown()
    }

    /// Courtyard of a part if it stood at `at` turned by `q`.
    pub fn courtyard_at(&self, part: u32, at: Point, q: Quarter) -> Rect {
        self.parts[part as usize].court_at(at, q)
    }

    /// Grown courtyard (the one overlap is measured on) of a part if it stood at `at`
    /// turned by `q`.
    pub fn grown_courtyard_at(&self, part: u32, at: Point, q: Quarter) -> Rect {
        self.parts[part as usize].grown_at(at, q)
    }

    /// The sides a part occupies: 1 top, 2 bottom, 3 both (through-hole parts).
    pub fn side_mask(&self, part: u32) -> u8 {
        self.parts[part as usize].mask()
    }

    /// The board outline.
    pub fn outline(&self) -> &Shape {
        &self.outline
    }

    /// The part keep-outs: shape, bounding box and the sides they apply to (as
    /// [`Self::side_mask`]).
    pub fn keepout_regions(&self) -> impl Iterator<Item = (&Shape, Rect, u8)> {
        self.keepouts.iter().map(|k| (&k.shape, k.bounds, k.mask))
    }

    /// Appends the parts whose origin lies in the grid cells `x0..=x1` by `y0..=y1` (cell
    /// = origin / grid, rounded) to `out`, sorted and without repeats.
    pub fn parts_in_cells(&self, x0: i64, x1: i64, y0: i64, y1: i64, out: &mut Vec<u32>) {
        let g = self.grid;
        let r = Rect::new(
            (x0 as f64 - 0.5) * g,
            (y0 as f64 - 0.5) * g,
            (x1 as f64 + 0.5) * g,
            (y1 as f64 + 0.5) * g,
        );
        let start = out.len();
        self.hash.for_each_near(&r, |e| {
            let p = self.parts[e.id as usize].pos;
            let (cx, cy) = (round(p.x / g), round(p.y / g));
            if (x0..=x1).contains(&cx) && (y0..=y1).contains(&cy) {
                out.push(e.id);
            }
        });
        out[start..].sort_unstable();
        let mut tail = out.split_off(start);
        tail.dedup();
        out.extend(tail);
    }

    /// Mean position of the pins that share a net with `part` (nets of more than
    /// [`LARGE_NET`] pins left out: they pull everywhere and cost a scan). The target of
    /// a directed move; `None` when the part has no such neighbours.
    pub fn neighbour_centroid(&self, part: u32) -> Option<Point> {
        let (mut sx, mut sy, mut k) = (0.0, 0.0, 0u32);
        for p in self.pins_of(part as usize) {
            let net = self.pins[p].net as usize;
            if self.net_start_len(net) > LARGE_NET {
                continue;
            }
            for &q in self.net_pins(net) {
                if self.pin_part[q as usize] != part {
                    sx += self.pin_xy[q as usize][0];
                    sy += self.pin_xy[q as usize][1];
                    k += 1;
                }
            }
        }
        (k > 0).then(|| Point::new(sx / f64::from(k), sy / f64::from(k)))
    }

    /// The optimal region of a part's pins: for each of the part's nets (nets of more
    /// than [`LARGE_NET`] pins left out), the box of the net's other pins; the range
    /// between the two middle values of those boxes' low and high edges, in x and in y,
    /// is where the part's pins' HPWL is least (the median rule of annealing placers).
    /// Returned as the range for the part's origin (the pins' mean offset removed);
    /// `None` when no net has another pin.
    pub fn optimal_region(&self, part: u32, xs: &mut Vec<f64>, ys: &mut Vec<f64>) -> Option<Rect> {
        xs.clear();
        ys.clear();
        let (mut ox, mut oy, mut k) = (0.0, 0.0, 0u32);
        let c = &self.parts[part as usize];
        for p in c.pins() {
            let net = self.pins[p].net as usize;
            if self.net_start_len(net) > LARGE_NET {
                continue;
            }
            let (mut x0, mut x1, mut y0, mut y1) = (
                f64::INFINITY,
                f64::NEG_INFINITY,
                f64::INFINITY,
                f64::NEG_INFINITY,
            );
            for &q in self.net_pins(net) {
                if self.pin_part[q as usize] != part {
                    let [x, y] = self.pin_xy[q as usize];
                    x0 = x0.min(x);
                    x1 = x1.max(x);
                    y0 = y0.min(y);
                    y1 = y1.max(y);
                }
            }
            if x0 > x1 {
                continue;
            }
            let o = self.pins[p].off;
            xs.push(x0 - o.x);
            xs.push(x1 - o.x);
            ys.push(y0 - o.y);
            ys.push(y1 - o.y);
            ox += o.x;
            oy += o.y;
            k += 1;
        }
        let _ = (ox, oy);
        if k == 0 {
            return None;
        }
        let n = xs.len();
        xs.sort_unstable_by(f64::total_cmp);
        ys.sort_unstable_by(f64::total_cmp);
        Some(Rect::new(
            xs[n / 2 - 1],
            ys[n / 2 - 1],
            xs[n / 2],
            ys[n / 2],
        ))
    }

    /// The part other than `not` whose origin is exactly `p` (the lowest-numbered if
    /// several are stacked there): the swap partner of a move aimed at `p`. Matching the
    /// origin, not the courtyard, keeps a swap its own reverse (A to B's spot and B to A's
    /// is undone by the same swap), which detailed balance needs.
    #[inline]
    pub fn part_at(&self, p: Point, not: u32) -> Option<u32> {
        self.hash
            .min_at_point(p, |id| id != not && self.parts[id as usize].pos == p)
    }

    /// Overlap, outside and keep-out areas of one part (for conflict reports).
    pub fn part_violations(&self, part: u32) -> (f64, f64, f64) {
        let cell = &self.parts[part as usize];
        let (g, c) = (cell.grown(), cell.court_now());
        let ov = self.overlap_near(&g, cell.mask(), [part, u32::MAX]);
        (ov, self.outside_of(&c), self.keepout_of(&c, cell.mask()))
    }

    /// Parts whose grown courtyards overlap part `part`'s by more than `eps` mm^2.
    pub fn overlapping(&self, part: u32, eps: f64) -> Vec<u32> {
        let i = part as usize;
        let g = self.parts[i].grown();
        let mut out = Vec::new();
        self.hash.for_each_near(&g, |e| {
            let j = e.id as usize;
            if j != i
                && self.parts[i].mask() & self.parts[j].mask() != 0
                && self.parts[j].grown().overlap_area(&g) > eps
                && !out.contains(&e.id)
            {
                out.push(e.id);
            }
        });
        out.sort_unstable();
        out
    }

    /// The part keep-outs a part's courtyard intrudes on by more than `eps` mm^2: name
    /// and intruding area of each.
    pub fn keepouts_hit(&self, part: u32, eps: f64) -> Vec<(String, f64)> {
        let cell = &self.parts[part as usize];
        let c = cell.court_now();
        self.keepouts
            .iter()
            .enumerate()
            .filter(|(_, k)| k.mask & cell.mask() != 0)
            .map(|(k, ko)| (k, ko, ko.shape.overlap_with_rect(&c)))
            .filter(|(_, _, a)| *a > eps)
            .map(|(k, ko, a)| {
                let name = if ko.name.is_empty() {
                    format!("#{}", k + 1)
                } else {
                    ko.name.clone()
                };
                (name, a)
            })
            .collect()
    }

    /// Outside area of a part's courtyard.
    pub fn outside_area(&self, part: u32) -> f64 {
        self.outside_of(&self.parts[part as usize].court_now())
    }
}
