//! A uniform grid of bins over the board, each listing the parts whose (grown) courtyard
//! touches it, so overlap with a moved part is found by looking at a few bins instead of
//! every part.
//!
//! Hand-written rather than taken from an R-tree crate: the annealer queries it on every
//! move and changes it on every accepted move, and a flat grid with reused `Vec`s does
//! both in a handful of instructions with no allocation once warm. Rectangles partly
//! or wholly off the grid are clamped into the border bins, so parts outside the board
//! are still found.

use crate::model::Rect;

#[derive(Clone, Debug)]
pub(crate) struct SpatialHash {
    x0: f64,
    y0: f64,
    inv_bin: f64,
    nx: usize,
    ny: usize,
    bins: Vec<Vec<u32>>,
}

impl SpatialHash {
    /// A grid covering `area` with square bins of side about `bin` (capped so that the grid
    /// has at most `max_bins` bins).
    pub fn new(area: Rect, bin: f64, max_bins: usize) -> SpatialHash {
        let w = area.width().max(1e-3);
        let h = area.height().max(1e-3);
        let mut bin = bin.max(1e-3);
        while (w / bin).ceil() * (h / bin).ceil() > max_bins as f64 {
            bin *= 1.25;
        }
        let nx = ((w / bin).ceil() as usize).max(1);
        let ny = ((h / bin).ceil() as usize).max(1);
        SpatialHash {
            x0: area.min.x,
            y0: area.min.y,
            inv_bin: 1.0 / bin,
            nx,
            ny,
            bins: vec![Vec::new(); nx * ny],
        }
    }

    #[inline]
    fn cell(&self, v: f64, origin: f64, n: usize) -> usize {
        let c = ((v - origin) * self.inv_bin).floor();
        if c <= 0.0 {
            0
        } else if c >= (n - 1) as f64 {
            n - 1
        } else {
            c as usize
        }
    }

    /// Inclusive bin ranges a rectangle covers.
    #[inline]
    pub fn span(&self, r: &Rect) -> (usize, usize, usize, usize) {
        (
            self.cell(r.min.x, self.x0, self.nx),
            self.cell(r.max.x, self.x0, self.nx),
            self.cell(r.min.y, self.y0, self.ny),
            self.cell(r.max.y, self.y0, self.ny),
        )
    }

    pub fn insert(&mut self, id: u32, r: &Rect) {
        let (x0, x1, y0, y1) = self.span(r);
        for y in y0..=y1 {
            for x in x0..=x1 {
                self.bins[y * self.nx + x].push(id);
            }
        }
    }

    pub fn remove(&mut self, id: u32, r: &Rect) {
        let (x0, x1, y0, y1) = self.span(r);
        for y in y0..=y1 {
            for x in x0..=x1 {
                let bin = &mut self.bins[y * self.nx + x];
                if let Some(k) = bin.iter().position(|&p| p == id) {
                    bin.swap_remove(k);
                }
            }
        }
    }

    /// Moves a part from one rectangle to another, touching only bins that change.
    pub fn relocate(&mut self, id: u32, old: &Rect, new: &Rect) {
        let a = self.span(old);
        let b = self.span(new);
        if a == b {
            return;
        }
        self.remove(id, old);
        self.insert(id, new);
    }

    /// Calls `f` with every part id listed in the bins `r` covers (an id may repeat when a
    /// part spans several of those bins; callers de-duplicate).
    #[inline]
    pub fn for_each_near(&self, r: &Rect, mut f: impl FnMut(u32)) {
        let (x0, x1, y0, y1) = self.span(r);
        for y in y0..=y1 {
            let row = y * self.nx;
            for bin in &self.bins[row + x0..=row + x1] {
                for &id in bin {
                    f(id);
                }
            }
        }
    }
}
