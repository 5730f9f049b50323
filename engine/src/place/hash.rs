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

/// One part's entry in a bin: the rectangle is stored inline so a query reads the bins
/// sequentially instead of chasing each id into the part tables.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Entry {
    pub id: u32,
    pub mask: u8,
    pub rect: Rect,
}

#[derive(Clone, Debug)]
pub(crate) struct SpatialHash {
    x0: f64,
    y0: f64,
    inv_bin: f64,
    nx: usize,
    ny: usize,
    bins: Vec<Vec<Entry>>,
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
        // Truncation toward zero differs from floor only on (-1, 0), which clamps to 0
        // either way; `as` saturates on huge or NaN values.
        let c = ((v - origin) * self.inv_bin) as i64;
        c.clamp(0, n as i64 - 1) as usize
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

    pub fn insert(&mut self, id: u32, mask: u8, r: &Rect) {
        let (x0, x1, y0, y1) = self.span(r);
        let e = Entry { id, mask, rect: *r };
        for y in y0..=y1 {
            for x in x0..=x1 {
                self.bins[y * self.nx + x].push(e);
            }
        }
    }

    pub fn remove(&mut self, id: u32, r: &Rect) {
        let (x0, x1, y0, y1) = self.span(r);
        for y in y0..=y1 {
            for x in x0..=x1 {
                let bin = &mut self.bins[y * self.nx + x];
                if let Some(k) = bin.iter().position(|e| e.id == id) {
                    bin.swap_remove(k);
                }
            }
        }
    }

    /// Moves a part from one rectangle to another.
    pub fn relocate(&mut self, id: u32, mask: u8, old: &Rect, new: &Rect) {
        let a = self.span(old);
        if a == self.span(new) {
            // Same bins: update the stored rectangle in place.
            for y in a.2..=a.3 {
                for x in a.0..=a.1 {
                    let bin = &mut self.bins[y * self.nx + x];
                    if let Some(e) = bin.iter_mut().find(|e| e.id == id) {
                        e.rect = *new;
                    }
                }
            }
            return;
        }
        self.remove(id, old);
        self.insert(id, mask, new);
    }

    /// Sum of the overlap areas of `r` with every stored rectangle whose mask shares a bit
    /// with `mask`, skipping the ids in `exclude`. Each pair is counted once, in the bin
    /// holding the lower-left corner of the intersection (both rectangles cover that
    /// bin), so no de-duplication table is needed.
    #[inline]
    pub fn overlap_sum(&self, r: &Rect, mask: u8, exclude: [u32; 2]) -> f64 {
        self.overlap_sum_with(r, mask, |id| id == exclude[0] || id == exclude[1])
    }

    /// [`Self::overlap_sum`] skipping every id for which `skip` is true.
    #[inline]
    pub fn overlap_sum_with(&self, r: &Rect, mask: u8, skip: impl Fn(u32) -> bool) -> f64 {
        let (x0, x1, y0, y1) = self.span(r);
        let single = x0 == x1 && y0 == y1;
        let mut sum = 0.0;
        for y in y0..=y1 {
            let row = y * self.nx;
            for x in x0..=x1 {
                for e in &self.bins[row + x] {
                    if e.mask & mask == 0 || skip(e.id) {
                        continue;
                    }
                    let lx = if e.rect.min.x > r.min.x {
                        e.rect.min.x
                    } else {
                        r.min.x
                    };
                    let ly = if e.rect.min.y > r.min.y {
                        e.rect.min.y
                    } else {
                        r.min.y
                    };
                    let w = (if e.rect.max.x < r.max.x {
                        e.rect.max.x
                    } else {
                        r.max.x
                    }) - lx;
                    let h = (if e.rect.max.y < r.max.y {
                        e.rect.max.y
                    } else {
                        r.max.y
                    }) - ly;
                    if w > 0.0
                        && h > 0.0
                        && (single
                            || (self.cell(lx, self.x0, self.nx) == x
                                && self.cell(ly, self.y0, self.ny) == y))
                    {
                        sum += w * h;
                    }
                }
            }
        }
        sum
    }

    /// Index of the bin holding point `p` (clamped to the grid).
    #[inline]
    pub fn bin_of(&self, p: crate::model::Point) -> u32 {
        let x = self.cell(p.x, self.x0, self.nx);
        let y = self.cell(p.y, self.y0, self.ny);
        (y * self.nx + x) as u32
    }

    /// Cache hint: the header of bin `b` (see [`super::layout::Layout::prefetch_pins`]).
    #[inline]
    pub fn prefetch_header(&self, b: u32) {
        super::fast::prefetch(self.bins.as_ptr().wrapping_add(b as usize));
    }

    /// Cache hint: the first entries of bin `b` (reads its header).
    #[inline]
    pub fn prefetch_entries(&self, b: u32) {
        if let Some(bin) = self.bins.get(b as usize) {
            super::fast::prefetch(bin.as_ptr());
        }
    }

    /// Calls `f` with every entry in the bins `r` covers (an entry may repeat when its
    /// part spans several of those bins; callers de-duplicate).
    pub fn for_each_near(&self, r: &Rect, mut f: impl FnMut(&Entry)) {
        let (x0, x1, y0, y1) = self.span(r);
        for y in y0..=y1 {
            let row = y * self.nx;
            for bin in &self.bins[row + x0..=row + x1] {
                for e in bin {
                    f(e);
                }
            }
        }
    }

    /// The lowest id among the entries whose rectangle contains `p` and that pass
    /// `keep` (lowest, so the answer does not depend on the order of the bin).
    #[inline]
    pub fn min_at_point(&self, p: crate::model::Point, keep: impl Fn(u32) -> bool) -> Option<u32> {
        let x = self.cell(p.x, self.x0, self.nx);
        let y = self.cell(p.y, self.y0, self.ny);
        self.bins[y * self.nx + x]
            .iter()
            .filter(|e| e.rect.contains(p) && keep(e.id))
            .map(|e| e.id)
            .min()
    }
}
