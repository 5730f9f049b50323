//! The placement problem: part positions and the incremental placement energy.
//!
//! E = w_wl * WL + w_ov * OV + w_out * OUT + w_ko * KO, where
//! - WL is the half-perimeter wirelength (HPWL) of every net, times the net's weight, with
//!   pins at their true pad positions after rotation and side;
//! - OV is the total pairwise overlap area of courtyards grown by half the clearance, for
//!   parts that can collide (same side, or either one has through-holes);
//! - OUT is the courtyard area lying outside the board outline;
//! - KO is the courtyard area inside part keep-outs on the part's side.
//!
//! A move is evaluated by [`Layout::evaluate`], which changes the pins and net boxes of the
//! moved parts in place and returns the change of each term; the caller then either
//! [`Layout::commit`]s or [`Layout::revert`]s. Only the moved parts' pins, their nets and
//! the parts near them (found through the spatial hash) are visited, so the cost of a move
//! does not grow with the board.
//!
//! **Invariant:** between moves, the cached pin positions, net boxes, per-net lengths,
//! spatial hash and running term totals agree with a full recomputation from the part
//! positions ([`Layout::full_terms`]) up to floating-point rounding.

mod energy;
mod queries;

use serde::{Deserialize, Serialize};

use super::hash::SpatialHash;
use crate::model::board::{Design, Layers, Shape, rect_to_board, to_board};
use crate::model::{Point, Quarter, Rect, Side};

/// Nets with more pins than this keep VPR-style edge counts so a move updates their box
/// in constant time; smaller nets are simply re-scanned (cheaper at that size).
const LARGE_NET: usize = 12;

/// Tables larger than this (bytes) make the annealer issue cache hints
/// ([`Layout::hints`]): half the 1 MiB second-level cache of the reference machine, and
/// of most current desktop cores.
const HINT_BYTES: usize = 512 * 1024;

/// The energy terms, unweighted (lengths in mm, areas in mm^2).
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct Terms {
    /// Net-weighted HPWL, mm.
    pub wirelength: f64,
    /// Overlap area of grown courtyards, mm^2.
    pub overlap: f64,
    /// Courtyard area outside the outline, mm^2.
    pub outside: f64,
    /// Courtyard area inside part keep-outs, mm^2.
    pub keepout: f64,
}

impl Terms {
    pub fn energy(&self, w: &Weights) -> f64 {
        w.wirelength * self.wirelength
            + w.overlap * self.overlap
            + w.outside * self.outside
            + w.keepout * self.keepout
    }

    fn add(&mut self, d: &Terms) {
        self.wirelength += d.wirelength;
        self.overlap += d.overlap;
        self.outside += d.outside;
        self.keepout += d.keepout;
    }

    /// Total area of the three legality terms.
    pub fn violation(&self) -> f64 {
        self.overlap + self.outside + self.keepout
    }
}

/// Weights of the energy terms. Wirelength is per mm; the area terms are per mm^2.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct Weights {
    pub wirelength: f64,
    pub overlap: f64,
    pub outside: f64,
    pub keepout: f64,
}

impl Weights {
    /// Defaults scaled to the board: an area penalty per mm^2 of `2 k / s`, where `s` is
    /// the mean courtyard side and `k` the 90th percentile of the net-weighted pin count
    /// per part. Sliding a part a distance d into another then costs about `2 k d`, twice
    /// the most wirelength the move could save, so overlap does not pay in the final
    /// state, while small intrusions stay cheap enough for the hot phase to pass parts
    /// through each other.
    pub fn for_design(design: &Design) -> Weights {
        let n = design.footprints.len().max(1) as f64;
        let s = design
            .footprints
            .iter()
            .map(|f| f.courtyard.area().sqrt())
            .sum::<f64>()
            / n;
        // Net-weighted connected pins per part; k is their 90th percentile, so the
        // weight also holds the well-connected parts (ICs, connectors) apart, not just
        // the average two-pin part.
        let mut per_part = vec![0.0; design.footprints.len()];
        for (pins, net) in design.net_pins.iter().zip(&design.board.nets) {
            if pins.len() >= 2 {
                for p in pins {
                    per_part[p.part.index()] += net.weight;
                }
            }
        }
        per_part.sort_by(f64::total_cmp);
        let k = per_part
            .get((per_part.len() * 9) / 10)
            .copied()
            .unwrap_or(1.0)
            .max(1.0);
        let area = 2.0 * k / s.max(0.1);
        Weights {
            wirelength: 1.0,
            overlap: area,
            outside: area,
            keepout: area,
        }
    }

    /// The same weights with the three legality terms multiplied by `f`.
    pub fn with_legality_factor(&self, f: f64) -> Weights {
        Weights {
            wirelength: self.wirelength,
            overlap: self.overlap * f,
            outside: self.outside * f,
            keepout: self.keepout * f,
        }
    }
}

/// The position and turn of one part in a move.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PartMove {
    pub part: u32,
    pub at: Point,
    pub quarter: Quarter,
}

/// Everything a move reads and writes about one net, in one 64-byte cache line: the
/// bounding box of its pins, the edge counts (kept for large nets only), its HPWL and its
/// weight.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
#[repr(C, align(64))]
struct NetBox {
    xmin: f64,
    xmax: f64,
    ymin: f64,
    ymax: f64,
    len: f64,
    weight: f64,
    nxmin: u32,
    nxmax: u32,
    nymin: u32,
    nymax: u32,
}

/// Per-net bookkeeping of a move, packed so one cache line serves four nets.
#[derive(Clone, Copy, Debug, Default)]
struct NetMeta {
    /// The net's pins are `net_pin_list[start..start + count]`.
    start: u32,
    count: u32,
    /// Move generation that last touched the net.
    stamp: u32,
    /// The box must be rescanned (small net, or an edge count ran out).
    dirty: bool,
}

impl NetBox {
    fn hpwl(&self) -> f64 {
        (self.xmax - self.xmin) + (self.ymax - self.ymin)
    }
}

/// Updates one axis of a box's bounds and edge counts for a pin moving from `old` to
/// `new` (after the VPR placer's incremental bounding box). Returns false when the pin
/// was the only one on an edge it left, so the box must be rescanned.
#[inline]
fn update_axis(
    min: &mut f64,
    max: &mut f64,
    nmin: &mut u32,
    nmax: &mut u32,
    old: f64,
    new: f64,
) -> bool {
    if new > old {
        if new > *max || old == *max {
            // Either it passes the old maximum, or it was on it and moves beyond it.
            *max = new;
            *nmax = 1;
        } else if new == *max {
            *nmax += 1;
        }
        if old == *min {
            if *nmin > 1 {
                *nmin -= 1;
            } else {
                return false;
            }
        }
    } else if new < old {
        if new < *min || old == *min {
            *min = new;
            *nmin = 1;
        } else if new == *min {
            *nmin += 1;
        }
        if old == *max {
            if *nmax > 1 {
                *nmax -= 1;
            } else {
                return false;
            }
        }
    }
    true
}

struct KeepoutArea {
    name: String,
    shape: Shape,
    bounds: Rect,
    mask: u8,
}

fn layers_mask(l: Layers) -> u8 {
    match l {
        Layers::Top => 1,
        Layers::Bottom => 2,
        Layers::Both => 3,
    }
}

/// Pins at most this far apart (centre to centre, mm) make a part of at least
/// [`FINE_PITCH_MIN_PINS`] pins fine-pitch: 0.65 mm
/// (TSSOP) and below, the pitches at which tracks leave between the pins one at a time
/// and need room outside the part to spread (common practice).
pub const FINE_PITCH_MM: f64 = 0.65;

/// Fine-pitch parts have at least this many pins (the smallest such packages, SC-70-6
/// and TSSOP-8, have six and eight): a two- or three-pin part with close pads leaves
/// its pads from the sides.
pub const FINE_PITCH_MIN_PINS: usize = 6;

/// Extra room each part keeps free of other parts, beyond half the clearance: for a
/// fine-pitch part, a fan-out band for two tracks and their clearances,
/// `2 (w + c) + c` with the widest track width `w` and clearance `c` among its nets (the
/// board's rules where a net names no class); zero for other parts. Without it the
/// placer packs neighbours against a QFN's pins and the router cannot leave them.
pub fn fanout_margins(design: &Design) -> Vec<f64> {
    let rules = &design.board.rules;
    let mut widest = vec![None::<(f64, f64)>; design.footprints.len()];
    for (ni, pins) in design.net_pins.iter().enumerate() {
        let (w, c) = design
            .net_class(crate::model::board::NetId(ni as u32))
            .map_or((rules.track_width, rules.clearance), |k| {
                (k.track_width, k.clearance)
            });
        for pin in pins {
            let e = &mut widest[pin.part.index()];
            let (w0, c0) = e.unwrap_or((0.0, 0.0));
            *e = Some((w0.max(w), c0.max(c)));
        }
    }
    design
        .footprints
        .iter()
        .zip(widest)
        .map(|(fp, wc)| {
            let Some((w, c)) = wc else { return 0.0 };
            let fine = fp.pads.len() >= FINE_PITCH_MIN_PINS
                && fp.pads.iter().enumerate().any(|(k, a)| {
                    fp.pads[k + 1..].iter().any(|b| {
                        let d = ((a.at.x - b.at.x).powi(2) + (a.at.y - b.at.y).powi(2)).sqrt();
                        d > 1e-9 && d <= FINE_PITCH_MM + 1e-9
                    })
                });
            if fine { 2.0 * (w + c) + c } else { 0.0 }
        })
        .collect()
}

/// Everything a move reads about one part, in one 64-byte cache line. On a large board
/// a move's first touch of a randomly chosen part misses the cache; with the position,
/// shape, pins and flags side by side that costs one line instead of one per table.
#[derive(Clone, Copy, Debug, Default)]
#[repr(C, align(64))]
struct PartCell {
    pos: Point,
    /// Courtyard relative to the part's origin at its current turn, side applied. Kept
    /// turned (like the pins' offsets) so that moves that keep the turn, nine in ten,
    /// rotate nothing: the turn of a random part is a branch the processor cannot
    /// predict.
    court: Rect,
    /// The grown courtyard is the courtyard inflated by this (half the clearance plus
    /// any fan-out band).
    margin: f64,
    /// The part's connected pins are `pins[pin_start..pin_start + pin_count]`.
    pin_start: u32,
    pin_count: u16,
    quarter: Quarter,
    /// Layer mask in bits 0-1 (1 = top, 2 = bottom, 3 = both: through-hole parts), then
    /// [`ROTATABLE`] and [`LOCKED`].
    flags: u8,
}

const LAYERS: u8 = 3;
const ROTATABLE: u8 = 4;
const LOCKED: u8 = 8;

impl PartCell {
    #[inline]
    fn mask(&self) -> u8 {
        self.flags & LAYERS
    }

    /// Board rectangle of the courtyard at `at` turned by `q`.
    #[inline]
    fn court_at(&self, at: Point, q: Quarter) -> Rect {
        if q == self.quarter {
            self.court.translate(at)
        } else {
            turn(self.quarter, q).apply_rect(&self.court).translate(at)
        }
    }

    /// Board rectangle of the grown courtyard at `at` turned by `q`.
    #[inline]
    fn grown_at(&self, at: Point, q: Quarter) -> Rect {
        let g = self.court.inflate(self.margin);
        if q == self.quarter {
            g.translate(at)
        } else {
            turn(self.quarter, q).apply_rect(&g).translate(at)
        }
    }

    #[inline]
    fn grown(&self) -> Rect {
        self.court.inflate(self.margin).translate(self.pos)
    }

    #[inline]
    fn court_now(&self) -> Rect {
        self.court.translate(self.pos)
    }

    #[inline]
    fn pins(&self) -> std::ops::Range<usize> {
        self.pin_start as usize..self.pin_start as usize + self.pin_count as usize
    }
}

/// The rotation that takes an offset at turn `from` to turn `to` (exact: quarter turns
/// only swap and negate coordinates).
#[inline]
fn turn(from: Quarter, to: Quarter) -> Quarter {
    Quarter::from_index(to.index() + 4 - from.index())
}

/// A connected pin: its offset from the part's origin (side applied, at the part's
/// current turn) and its net, read together when the part moves.
#[derive(Clone, Copy, Debug, Default)]
struct PinCell {
    off: Point,
    net: u32,
}

/// Placement state with incrementally maintained energy terms. See the module docs.
pub struct Layout {
    // Static description, indexed by part, pin (connected pins only) or net.
    grid: f64,
    pin_part: Vec<u32>,
    pins: Vec<PinCell>,
    net_meta: Vec<NetMeta>,
    net_pin_list: Vec<u32>,
    outline: Shape,
    outline_bounds: Rect,
    outline_is_rect: bool,
    keepouts: Vec<KeepoutArea>,

    // Dynamic state.
    /// Position, turn and everything static a move needs, per part (the hot table).
    parts: Vec<PartCell>,
    /// Copies of the parts' positions and turns, for callers that want slices; written
    /// only by [`Self::commit`], beside the rows.
    pos: Vec<Point>,
    quarter: Vec<Quarter>,
    /// Board position of each connected pin, x and y side by side (one cache line).
    pin_xy: Vec<[f64; 2]>,
    bbox: Vec<NetBox>,
    terms: Terms,
    hash: SpatialHash,

    /// Whether the annealer should issue cache hints ([`Self::hints`]).
    hints: bool,

    // Scratch, reused across moves so a move allocates nothing.
    net_gen: u32,
    undo_pins: Vec<(u32, f64, f64)>,
    /// Nets the move touched and their boxes before it (side by side: a tuple of a
    /// `u32` and a 64-byte-aligned box is 128 bytes and was copied through the stack).
    undo_net_ids: Vec<u32>,
    undo_nets: Vec<NetBox>,
    pending: Vec<PartMove>,
    /// Parts of the move being evaluated (for moves of more than two parts).
    moving: Vec<bool>,
    pending_delta: Terms,
    scratch_a: Vec<(u64, u64)>,
    scratch_b: Vec<(u64, u64)>,
}

/// Why a layout cannot be built from a design.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum LayoutError {
    #[error("part {0} has no position; give it one or let the placer choose (unlocked)")]
    Unplaced(String),
    #[error("part {0} has {1} connected pins; the placer takes at most 65,535 per part")]
    TooManyPins(String, usize),
}

impl Layout {
    /// Builds the layout from a checked design whose parts all have positions.
    pub fn new(design: &Design) -> Result<Layout, LayoutError> {
        let board = &design.board;
        let n = board.parts.len();
        let half_clear = board.rules.clearance / 2.0;
        let mut layout = Layout {
            grid: board.rules.placement_grid,
            pin_part: Vec::new(),
            pins: Vec::new(),
            net_meta: Vec::new(),
            net_pin_list: Vec::new(),
            outline: board.outline.clone(),
            outline_bounds: board.outline.bounds(),
            outline_is_rect: matches!(board.outline, Shape::Rect { .. }),
            keepouts: board
                .keepouts
                .iter()
                .filter(|k| k.parts)
                .map(|k| KeepoutArea {
                    name: k.name.clone(),
                    shape: k.shape.clone(),
                    bounds: k.shape.bounds(),
                    mask: layers_mask(k.layers),
                })
                .collect(),
            parts: Vec::with_capacity(n),
            pos: Vec::with_capacity(n),
            quarter: Vec::with_capacity(n),
            pin_xy: Vec::new(),
            bbox: board
                .nets
                .iter()
                .map(|n| NetBox {
                    weight: n.weight,
                    ..NetBox::default()
                })
                .collect(),
            terms: Terms::default(),
            hash: SpatialHash::new(Rect::default(), 1.0, 1),
            hints: false,
            net_gen: 0,
            undo_pins: Vec::new(),
            undo_net_ids: Vec::new(),
            undo_nets: Vec::new(),
            pending: Vec::new(),
            moving: vec![false; n],
            pending_delta: Terms::default(),
            scratch_a: Vec::new(),
            scratch_b: Vec::new(),
        };

        // Which net each pad is on.
        let pad_net = design.pad_nets();

        let fanout = fanout_margins(design);
        let mut part_pins_of_net: Vec<Vec<u32>> = vec![Vec::new(); board.nets.len()];
        for (i, (part, fp)) in board.parts.iter().zip(&design.footprints).enumerate() {
            let at = part
                .at
                .ok_or_else(|| LayoutError::Unplaced(part.reference.clone()))?;
            let side = part.side;
            let mut flags = if fp.has_through_holes() {
                3
            } else {
                match side {
                    Side::Top => 1,
                    Side::Bottom => 2,
                }
            };
            let origin = Point::default();
            let court: [Rect; 4] =
                Quarter::ALL.map(|q| rect_to_board(&fp.courtyard, origin, q, side));
            let pin_start = layout.pins.len();
            let mut rotatable = court.iter().any(|r| *r != court[0]);
            for (pad, net) in fp.pads.iter().zip(&pad_net[i]) {
                if let Some(net) = net {
                    let offs = Quarter::ALL.map(|q| to_board(pad.at, origin, q, side));
                    rotatable |= offs.iter().any(|o| *o != offs[0]);
                    part_pins_of_net[net.index()].push(layout.pins.len() as u32);
                    layout.pins.push(PinCell {
                        off: offs[part.quarter().index()],
                        net: net.0,
                    });
                    layout.pin_part.push(i as u32);
                }
            }
            let pin_count = layout.pins.len() - pin_start;
            let pin_count = u16::try_from(pin_count)
                .map_err(|_| LayoutError::TooManyPins(part.reference.clone(), pin_count))?;
            if rotatable {
                flags |= ROTATABLE;
            }
            if part.locked {
                flags |= LOCKED;
            }
            layout.parts.push(PartCell {
                pos: at,
                court: court[part.quarter().index()],
                margin: half_clear + fanout[i],
                pin_start: pin_start as u32,
                pin_count,
                quarter: part.quarter(),
                flags,
            });
            layout.pos.push(at);
            layout.quarter.push(part.quarter());
        }
        for pins in &part_pins_of_net {
            layout.net_meta.push(NetMeta {
                start: layout.net_pin_list.len() as u32,
                count: pins.len() as u32,
                ..NetMeta::default()
            });
            layout.net_pin_list.extend_from_slice(pins);
        }

        // Spatial hash over the board and its surroundings; bins about twice the mean
        // grown courtyard side, so a typical part touches one to four bins.
        let mut area = layout.outline_bounds;
        let mut side_sum = 0.0;
        for c in &layout.parts {
            let r = c.grown();
            area = area.union(&r);
            side_sum += (r.width() + r.height()) / 2.0;
        }
        let bin = 2.0 * side_sum / n.max(1) as f64;
        layout.hash = SpatialHash::new(area.inflate(1.0), bin.max(0.1), (4 * n).max(64));
        // What a move may touch: the part rows, pins, nets and bins with their entries
        // (about two per part).
        let bytes = n * (size_of::<PartCell>() + 2 * 48)
            + layout.pins.len() * (size_of::<PinCell>() + 16)
            + board.nets.len() * (size_of::<NetBox>() + size_of::<NetMeta>())
            + 4 * n * 24;
        layout.hints = bytes > HINT_BYTES;

        layout.rebuild();
        Ok(layout)
    }

    /// Recomputes every cache and running total from the part positions.
    pub fn rebuild(&mut self) {
        let n = self.parts.len();
        let np = self.pins.len();
        self.pin_xy.resize(np, [0.0; 2]);
        for c in &self.parts {
            for p in c.pins() {
                let o = self.pins[p].off;
                self.pin_xy[p] = [c.pos.x + o.x, c.pos.y + o.y];
            }
        }
        for k in 0..self.bbox.len() {
            self.bbox[k] = self.scan_box(k);
        }
        // Rebuild the hash from scratch.
        let area = self.hash_area();
        self.hash = SpatialHash::new(area.0, area.1, (4 * n).max(64));
        for (i, c) in self.parts.iter().enumerate() {
            self.hash.insert(i as u32, c.mask(), &c.grown());
        }
        self.terms = self.full_terms();
    }

    /// Turns part `i`'s courtyard and pin offsets to `q` (the position is the caller's).
    fn turn_part(&mut self, i: usize, q: Quarter) {
        let c = &mut self.parts[i];
        if c.quarter == q {
            return;
        }
        let t = turn(c.quarter, q);
        c.court = t.apply_rect(&c.court);
        c.quarter = q;
        for p in c.pins() {
            self.pins[p].off = t.apply(self.pins[p].off);
        }
    }

    fn hash_area(&self) -> (Rect, f64) {
        let n = self.parts.len();
        let mut area = self.outline_bounds;
        let mut side_sum = 0.0;
        for c in &self.parts {
            let r = &c.grown();
            area = area.union(r);
            side_sum += (r.width() + r.height()) / 2.0;
        }
        (
            area.inflate(1.0),
            (2.0 * side_sum / n.max(1) as f64).max(0.1),
        )
    }

    #[inline]
    fn pins_of(&self, part: usize) -> std::ops::Range<usize> {
        self.parts[part].pins()
    }

    #[inline]
    fn net_start_len(&self, net: usize) -> usize {
        self.net_meta[net].count as usize
    }

    #[inline]
    fn net_pins(&self, net: usize) -> &[u32] {
        let m = self.net_meta[net];
        &self.net_pin_list[m.start as usize..(m.start + m.count) as usize]
    }

    /// [`Self::scan_small_raw`] with the net's weight and length filled in.
    #[inline]
    fn scan_small(&self, net: usize) -> NetBox {
        let mut b = self.scan_small_raw(net);
        b.weight = self.bbox[net].weight;
        b.len = b.hpwl();
        b
    }

    /// [`Self::scan_box_raw`] with the net's weight and length filled in.
    fn scan_box(&self, net: usize) -> NetBox {
        let mut b = self.scan_box_raw(net);
        b.weight = self.bbox[net].weight;
        b.len = b.hpwl();
        b
    }

    /// The box of a small net from its pins' current positions (no edge counts: small
    /// nets are always rescanned, so the counts would never be read).
    #[inline]
    fn scan_small_raw(&self, net: usize) -> NetBox {
        let pins = self.net_pins(net);
        let Some(&first) = pins.first() else {
            return NetBox::default();
        };
        let [x, y] = self.pin_xy[first as usize];
        let mut b = NetBox {
            xmin: x,
            xmax: x,
            ymin: y,
            ymax: y,
            ..NetBox::default()
        };
        for &p in &pins[1..] {
            let [x, y] = self.pin_xy[p as usize];
            b.xmin = b.xmin.min(x);
            b.xmax = b.xmax.max(x);
            b.ymin = b.ymin.min(y);
            b.ymax = b.ymax.max(y);
        }
        b
    }

    /// The box of a net from its pins' current positions, with edge counts.
    fn scan_box_raw(&self, net: usize) -> NetBox {
        let pins = self.net_pins(net);
        if pins.is_empty() {
            return NetBox::default();
        }
        let mut b = NetBox {
            xmin: f64::INFINITY,
            xmax: f64::NEG_INFINITY,
            ymin: f64::INFINITY,
            ymax: f64::NEG_INFINITY,
            ..NetBox::default()
        };
        for &p in pins {
            let [x, y] = self.pin_xy[p as usize];
            if x < b.xmin {
                b.xmin = x;
                b.nxmin = 1;
            } else if x == b.xmin {
                b.nxmin += 1;
            }
            if x > b.xmax {
                b.xmax = x;
                b.nxmax = 1;
            } else if x == b.xmax {
                b.nxmax += 1;
            }
            if y < b.ymin {
                b.ymin = y;
                b.nymin = 1;
            } else if y == b.ymin {
                b.nymin += 1;
            }
            if y > b.ymax {
                b.ymax = y;
                b.nymax = 1;
            } else if y == b.ymax {
                b.nymax += 1;
            }
        }
        b
    }

    /// Courtyard area outside the outline.
    #[inline]
    fn outside_of(&self, r: &Rect) -> f64 {
        let inside = if self.outline_is_rect {
            self.outline_bounds.overlap_area(r)
        } else if !self.outline_bounds.intersects(r) {
            0.0
        } else {
            self.outline.overlap_with_rect(r)
        };
        (r.area() - inside).max(0.0)
    }

    /// Courtyard area inside keep-outs that apply to the part's sides.
    #[inline]
    fn keepout_of(&self, r: &Rect, mask: u8) -> f64 {
        let mut a = 0.0;
        for k in &self.keepouts {
            if k.mask & mask != 0 && k.bounds.intersects(r) {
                a += k.shape.overlap_with_rect(r);
            }
        }
        a
    }

    /// Overlap of rectangle `r` (of a part with `mask`) with every part not in `exclude`.
    #[inline]
    fn overlap_near(&self, r: &Rect, mask: u8, exclude: [u32; 2]) -> f64 {
        self.hash.overlap_sum(r, mask, exclude)
    }
}
