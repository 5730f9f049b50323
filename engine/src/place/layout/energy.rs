//! The energy of a move: [`Layout::evaluate`] and its [`Layout::commit`] or
//! [`Layout::revert`], and the totals with their full recomputation.

use super::{LARGE_NET, Layout, PartCell, PartMove, Terms, turn, update_axis};
use crate::model::{Point, Quarter, Rect};
use crate::place::hash::SpatialHash;

impl Layout {
    /// Evaluates moving one or more parts, applying the change to pins and net boxes
    /// tentatively. Returns the change of each term. Must be followed by [`Self::commit`]
    /// or [`Self::revert`] before the next call.
    pub fn evaluate(&mut self, moves: &[PartMove]) -> Terms {
        debug_assert!(self.undo_pins.is_empty() && self.undo_nets.is_empty());
        debug_assert!(!moves.is_empty());
        self.pending.clear();
        self.pending.extend_from_slice(moves);
        let mut d = Terms::default();

        // Area terms: each moved part against the parts that stay, then the moved parts
        // among themselves. Two parts of the same shape trading places (each keeping its
        // turn) leave the set of courtyards as it was, so every area term is unchanged:
        // exactly zero, with no search (on a full board of equal parts, every move).
        if (moves.len() == 2 && self.same_shape_swap(&moves[0], &moves[1]))
            || (moves.len() > 2 && self.same_shape_permutation(moves))
        {
        } else if moves.len() <= 2 {
            let mut ids = [u32::MAX; 2];
            for (k, m) in moves.iter().enumerate() {
                ids[k] = m.part;
            }
            let mut new_grown = [Rect::default(); 2];
            for (k, m) in moves.iter().enumerate() {
                new_grown[k] = self.area_delta(m, &mut d, |h, r, mask| h.overlap_sum(r, mask, ids));
            }
            if moves.len() == 2 {
                let (a, b) = (moves[0].part as usize, moves[1].part as usize);
                let (ca, cb) = (&self.parts[a], &self.parts[b]);
                if ca.mask() & cb.mask() != 0 {
                    d.overlap += new_grown[0].overlap_area(&new_grown[1])
                        - ca.grown().overlap_area(&cb.grown());
                }
            }
        } else {
            for m in moves {
                self.moving[m.part as usize] = true;
            }
            let moving = std::mem::take(&mut self.moving);
            for m in moves {
                self.area_delta(m, &mut d, |h, r, mask| {
                    h.overlap_sum_with(r, mask, |id| moving[id as usize])
                });
            }
            self.moving = moving;
            for (k, a) in moves.iter().enumerate() {
                let ca = &self.parts[a.part as usize];
                let new_a = ca.grown_at(a.at, a.quarter);
                for b in &moves[k + 1..] {
                    let cb = &self.parts[b.part as usize];
                    if ca.mask() & cb.mask() != 0 {
                        let new_b = cb.grown_at(b.at, b.quarter);
                        d.overlap +=
                            new_a.overlap_area(&new_b) - ca.grown().overlap_area(&cb.grown());
                    }
                }
            }
            for m in moves {
                self.moving[m.part as usize] = false;
            }
        }

        // Wirelength: move the pins, then update each touched net's box once.
        self.net_gen = self.net_gen.wrapping_add(1);
        if self.net_gen == 0 {
            self.net_meta.iter_mut().for_each(|m| m.stamp = 0);
            self.net_gen = 1;
        }
        for m in moves {
            let i = m.part as usize;
            let c = &self.parts[i];
            let t = (m.quarter != c.quarter).then(|| turn(c.quarter, m.quarter));
            for p in c.pins() {
                let pin = self.pins[p];
                let o = t.map_or(pin.off, |t| t.apply(pin.off));
                let (nx, ny) = (m.at.x + o.x, m.at.y + o.y);
                let [ox, oy] = self.pin_xy[p];
                if nx == ox && ny == oy {
                    continue;
                }
                self.undo_pins.push((p as u32, ox, oy));
                self.pin_xy[p] = [nx, ny];
                let net = pin.net as usize;
                let meta = &mut self.net_meta[net];
                if meta.stamp != self.net_gen {
                    meta.stamp = self.net_gen;
                    meta.dirty = meta.count != 2 && meta.count as usize <= LARGE_NET;
                    self.undo_net_ids.push(net as u32);
                    self.undo_nets.push(self.bbox[net]);
                }
                if meta.count == 2 {
                    // A two-pin net's box is exactly its two pins, so the pin that stays
                    // is the box's other side in each axis: no rescan, and no read of a
                    // pin of another part (a cache miss on a large board). Exact also
                    // when both pins move: the box then holds the first one's new place.
                    let b = &mut self.bbox[net];
                    let sx = if ox == b.xmin { b.xmax } else { b.xmin };
                    let sy = if oy == b.ymin { b.ymax } else { b.ymin };
                    (b.xmin, b.xmax) = if nx < sx { (nx, sx) } else { (sx, nx) };
                    (b.ymin, b.ymax) = if ny < sy { (ny, sy) } else { (sy, ny) };
                } else if !meta.dirty {
                    let b = &mut self.bbox[net];
                    let ok_x =
                        update_axis(&mut b.xmin, &mut b.xmax, &mut b.nxmin, &mut b.nxmax, ox, nx);
                    let ok_y =
                        update_axis(&mut b.ymin, &mut b.ymax, &mut b.nymin, &mut b.nymax, oy, ny);
                    if !(ok_x && ok_y) {
                        meta.dirty = true;
                    }
                }
            }
        }
        for k in 0..self.undo_nets.len() {
            let (net, old_len) = (self.undo_net_ids[k], self.undo_nets[k].len);
            let net = net as usize;
            if self.net_meta[net].dirty {
                self.bbox[net] = if self.net_start_len(net) <= LARGE_NET {
                    self.scan_small(net)
                } else {
                    self.scan_box(net)
                };
                self.net_meta[net].dirty = false;
            } else {
                let b = &mut self.bbox[net];
                b.len = b.hpwl();
            }
            let b = &self.bbox[net];
            d.wirelength += b.weight * (b.len - old_len);
        }
        self.pending_delta = d;
        d
    }

    /// Whether two moves trade the places of two parts of identical courtyard, margin and
    /// side mask, each keeping its turn.
    #[inline]
    fn same_shape_swap(&self, a: &PartMove, b: &PartMove) -> bool {
        let (ca, cb) = (&self.parts[a.part as usize], &self.parts[b.part as usize]);
        a.at == cb.pos
            && b.at == ca.pos
            && a.quarter == ca.quarter
            && b.quarter == cb.quarter
            && ca.court == cb.court
            && ca.margin == cb.margin
            && ca.mask() == cb.mask()
    }

    /// Whether a move only permutes the places of parts of one shape (identical
    /// courtyard, margin and side mask), each keeping its turn: then the set of
    /// courtyards is unchanged and so is every area term.
    fn same_shape_permutation(&mut self, moves: &[PartMove]) -> bool {
        let c0 = &self.parts[moves[0].part as usize];
        let same = moves.iter().all(|m| {
            let c = &self.parts[m.part as usize];
            m.quarter == c.quarter
                && c.court == c0.court
                && c.margin == c0.margin
                && c.mask() == c0.mask()
        });
        if !same {
            return false;
        }
        let key = |p: Point| (p.x.to_bits(), p.y.to_bits());
        let mut from = std::mem::take(&mut self.scratch_a);
        let mut to = std::mem::take(&mut self.scratch_b);
        from.clear();
        to.clear();
        from.extend(moves.iter().map(|m| key(self.parts[m.part as usize].pos)));
        to.extend(moves.iter().map(|m| key(m.at)));
        from.sort_unstable();
        to.sort_unstable();
        let same_places = from == to;
        self.scratch_a = from;
        self.scratch_b = to;
        same_places
    }

    /// Adds one moved part's change of overlap (against the parts `overlap` does not
    /// skip), outside and keep-out area to `d`; returns its new grown courtyard.
    #[inline]
    fn area_delta(
        &self,
        m: &PartMove,
        d: &mut Terms,
        overlap: impl Fn(&SpatialHash, &Rect, u8) -> f64,
    ) -> Rect {
        let c = &self.parts[m.part as usize];
        let mask = c.mask();
        let old_g = c.grown();
        let new_g = c.grown_at(m.at, m.quarter);
        let old_c = c.court_now();
        let new_c = c.court_at(m.at, m.quarter);
        d.overlap += overlap(&self.hash, &new_g, mask) - overlap(&self.hash, &old_g, mask);
        d.outside += self.outside_of(&new_c) - self.outside_of(&old_c);
        if !self.keepouts.is_empty() {
            d.keepout += self.keepout_of(&new_c, mask) - self.keepout_of(&old_c, mask);
        }
        new_g
    }

    /// Keeps the move last evaluated.
    pub fn commit(&mut self) {
        for k in 0..self.pending.len() {
            let m = self.pending[k];
            let i = m.part as usize;
            let c = &self.parts[i];
            let new_g = c.grown_at(m.at, m.quarter);
            self.hash.relocate(m.part, c.mask(), &c.grown(), &new_g);
            self.turn_part(i, m.quarter);
            self.parts[i].pos = m.at;
            self.pos[i] = m.at;
            self.quarter[i] = m.quarter;
        }
        let d = self.pending_delta;
        self.terms.add(&d);
        self.pending.clear();
        self.undo_pins.clear();
        self.undo_nets.clear();
        self.undo_net_ids.clear();
    }

    /// Undoes the move last evaluated.
    pub fn revert(&mut self) {
        for &(p, x, y) in self.undo_pins.iter().rev() {
            self.pin_xy[p as usize] = [x, y];
        }
        for (&net, b) in self.undo_net_ids.iter().zip(&self.undo_nets).rev() {
            self.bbox[net as usize] = *b;
        }
        self.pending.clear();
        self.undo_pins.clear();
        self.undo_nets.clear();
        self.undo_net_ids.clear();
    }

    /// Applies a move unconditionally (evaluate + commit).
    pub fn apply(&mut self, moves: &[PartMove]) -> Terms {
        let d = self.evaluate(moves);
        self.commit();
        d
    }

    /// The running totals of the terms.
    pub fn terms(&self) -> Terms {
        self.terms
    }

    /// Every term recomputed from the part positions alone, without any cache: the
    /// reference the incremental totals are tested against, and the baseline the
    /// benchmark compares with. Overlap pairs are found by a sort-and-sweep on x.
    pub fn full_terms(&self) -> Terms {
        let n = self.parts.len();
        let mut t = Terms::default();
        let court: Vec<Rect> = self.parts.iter().map(PartCell::court_now).collect();
        let grown: Vec<Rect> = self.parts.iter().map(PartCell::grown).collect();
        // Wirelength from scratch: pin positions, then each net's box.
        let nn = self.bbox.len();
        let mut boxes = vec![
            (
                f64::INFINITY,
                f64::NEG_INFINITY,
                f64::INFINITY,
                f64::NEG_INFINITY
            );
            nn
        ];
        for c in &self.parts {
            for p in c.pins() {
                let o = self.pins[p].off;
                let (x, y) = (c.pos.x + o.x, c.pos.y + o.y);
                let b = &mut boxes[self.pins[p].net as usize];
                b.0 = b.0.min(x);
                b.1 = b.1.max(x);
                b.2 = b.2.min(y);
                b.3 = b.3.max(y);
            }
        }
        for (k, b) in boxes.iter().enumerate() {
            if b.0.is_finite() {
                t.wirelength += self.bbox[k].weight * ((b.1 - b.0) + (b.3 - b.2));
            }
        }
        // Overlap by sweep.
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| grown[a].min.x.total_cmp(&grown[b].min.x));
        for (k, &a) in order.iter().enumerate() {
            for &b in &order[k + 1..] {
                if grown[b].min.x >= grown[a].max.x {
                    break;
                }
                if self.parts[a].mask() & self.parts[b].mask() != 0 {
                    t.overlap += grown[a].overlap_area(&grown[b]);
                }
            }
        }
        for (c, cell) in court.iter().zip(&self.parts) {
            t.outside += self.outside_of(c);
            t.keepout += self.keepout_of(c, cell.mask());
        }
        t
    }

    /// The terms after a move, by full recomputation (the move is not kept). This is the
    /// slow way the incremental [`Self::evaluate`] is measured against.
    pub fn full_terms_with(&mut self, moves: &[PartMove]) -> Terms {
        let saved: Vec<(u32, Point, Quarter)> = moves
            .iter()
            .map(|m| {
                let c = &self.parts[m.part as usize];
                (m.part, c.pos, c.quarter)
            })
            .collect();
        for m in moves {
            self.turn_part(m.part as usize, m.quarter);
            self.parts[m.part as usize].pos = m.at;
        }
        let t = self.full_terms();
        for (p, at, q) in saved.into_iter().rev() {
            self.turn_part(p as usize, q);
            self.parts[p as usize].pos = at;
        }
        t
    }

    /// Resets the running totals to a full recomputation (drops accumulated rounding).
    pub fn resync(&mut self) {
        self.terms = self.full_terms();
    }

    /// Raw HPWL of every net in mm (net weights ignored).
    pub fn wirelength_mm(&self) -> f64 {
        self.bbox.iter().map(|b| b.len).sum()
    }
}
