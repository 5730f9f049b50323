//! Exact copper shapes and the distances between them, in board millimetres.
//!
//! Every piece of copper lehr draws is one of two primitives grown by a radius (a
//! Minkowski sum with a disc):
//! - a segment grown by `r`: a track segment of width `2r` (a capsule), or an oval pad;
//! - an axis-aligned rectangle grown by `r`: rectangular pads (`r = 0`), rounded
//!   rectangles, circles and vias (a point grown by the radius).
//!
//! Pads stay axis-aligned because parts only turn by quarter turns. The gap between two
//! grown shapes is the distance between their cores minus both radii, which keeps every
//! test exact and cheap. The design-rule checker measures with these functions directly;
//! the router uses them to decide which of its grid points are free.

use crate::model::{Design, Layer, PadKind, PadShape, PartId, Point, Rect, Side, to_board};

/// A grown segment or a grown axis-aligned rectangle (see the module documentation).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Prim {
    /// The points within `r` of the segment `a`-`b`.
    Seg {
        /// One end.
        a: Point,
        /// The other end.
        b: Point,
        /// The growth: half a track's width.
        r: f64,
    },
    /// The points within `r` of the (possibly degenerate) rectangle `core`.
    Box {
        /// The rectangle grown; a point for a disc, a segment for an oval.
        core: Rect,
        /// The growth: the corner radius.
        r: f64,
    },
}

impl Prim {
    /// A disc of radius `r` at `c` (a via, a circular pad).
    pub fn disc(c: Point, r: f64) -> Prim {
        Prim::Box {
            core: Rect { min: c, max: c },
            r,
        }
    }

    /// A track segment of width `width` between `a` and `b`.
    pub fn track(a: Point, b: Point, width: f64) -> Prim {
        Prim::Seg {
            a,
            b,
            r: width / 2.0,
        }
    }

    /// How far the shape reaches beyond its core.
    pub fn radius(&self) -> f64 {
        match *self {
            Prim::Seg { r, .. } | Prim::Box { r, .. } => r,
        }
    }

    /// The bounding rectangle, radius included.
    pub fn bounds(&self) -> Rect {
        match *self {
            Prim::Seg { a, b, r } => Rect::new(
                a.x.min(b.x) - r,
                a.y.min(b.y) - r,
                a.x.max(b.x) + r,
                a.y.max(b.y) + r,
            ),
            Prim::Box { core, r } => core.inflate(r),
        }
    }

    /// A point of the core: inside the shape whatever its radius.
    pub fn reference(&self) -> Point {
        match *self {
            Prim::Seg { a, .. } => a,
            Prim::Box { core, .. } => core.center(),
        }
    }

    /// The gap between the two shapes' edges (negative when they overlap) and the closest
    /// points of their cores.
    pub fn gap(&self, o: &Prim) -> (f64, Point, Point) {
        let (d, p, q) = core_distance(self, o);
        (d - self.radius() - o.radius(), p, q)
    }

    /// The gap between the shape's edge and a point (negative inside).
    pub fn gap_to_point(&self, p: Point) -> f64 {
        match *self {
            Prim::Seg { a, b, r } => dist(p, closest_on_segment(p, a, b)) - r,
            Prim::Box { core, r } => dist(p, clamp_to_rect(p, &core)) - r,
        }
    }

    /// The gap between the shape's edge and a zero-width segment (a board edge, a keep-out
    /// side), with the closest point on the segment.
    pub fn gap_to_segment(&self, a: Point, b: Point) -> (f64, Point) {
        let (d, _, q) = core_distance(self, &Prim::Seg { a, b, r: 0.0 });
        (d - self.radius(), q)
    }
}

/// Euclidean distance.
#[inline]
pub fn dist(a: Point, b: Point) -> f64 {
    (a.x - b.x).hypot(a.y - b.y)
}

/// The point of segment `a`-`b` closest to `p`.
#[inline]
pub fn closest_on_segment(p: Point, a: Point, b: Point) -> Point {
    let d = b.sub(a);
    let len2 = d.x * d.x + d.y * d.y;
    if len2 == 0.0 {
        return a;
    }
    let t = (((p.x - a.x) * d.x + (p.y - a.y) * d.y) / len2).clamp(0.0, 1.0);
    Point::new(a.x + t * d.x, a.y + t * d.y)
}

#[inline]
fn clamp_to_rect(p: Point, r: &Rect) -> Point {
    Point::new(p.x.clamp(r.min.x, r.max.x), p.y.clamp(r.min.y, r.max.y))
}

/// Distance between the cores of two primitives and the closest points.
fn core_distance(s: &Prim, o: &Prim) -> (f64, Point, Point) {
    match (*s, *o) {
        (Prim::Seg { a, b, .. }, Prim::Seg { a: c, b: d, .. }) => segment_segment(a, b, c, d),
        (Prim::Seg { a, b, .. }, Prim::Box { core, .. }) => segment_rect(a, b, &core),
        (Prim::Box { core, .. }, Prim::Seg { a, b, .. }) => {
            let (d, p, q) = segment_rect(a, b, &core);
            (d, q, p)
        }
        (Prim::Box { core: r1, .. }, Prim::Box { core: r2, .. }) => rect_rect(&r1, &r2),
    }
}

/// Closest points of two intervals on one axis: equal (the middle of the overlap) when
/// they overlap, else the facing ends.
fn interval_closest(a0: f64, a1: f64, b0: f64, b1: f64) -> (f64, f64) {
    if a1 < b0 {
        (a1, b0)
    } else if b1 < a0 {
        (a0, b1)
    } else {
        let m = (a0.max(b0) + a1.min(b1)) / 2.0;
        (m, m)
    }
}

fn rect_rect(r1: &Rect, r2: &Rect) -> (f64, Point, Point) {
    let (px, qx) = interval_closest(r1.min.x, r1.max.x, r2.min.x, r2.max.x);
    let (py, qy) = interval_closest(r1.min.y, r1.max.y, r2.min.y, r2.max.y);
    let p = Point::new(px, py);
    let q = Point::new(qx, qy);
    (dist(p, q), p, q)
}

/// Liang-Barsky: the first point of segment `a`-`b` inside the closed rectangle, if any.
fn segment_enters_rect(a: Point, b: Point, r: &Rect) -> Option<Point> {
    let d = b.sub(a);
    let (mut t0, mut t1) = (0.0f64, 1.0f64);
    for (p, q) in [
        (-d.x, a.x - r.min.x),
        (d.x, r.max.x - a.x),
        (-d.y, a.y - r.min.y),
        (d.y, r.max.y - a.y),
    ] {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let t = q / p;
            if p < 0.0 {
                t0 = t0.max(t);
            } else {
                t1 = t1.min(t);
            }
            if t0 > t1 {
                return None;
            }
        }
    }
    Some(Point::new(a.x + t0 * d.x, a.y + t0 * d.y))
}

fn segment_rect(a: Point, b: Point, r: &Rect) -> (f64, Point, Point) {
    if let Some(p) = segment_enters_rect(a, b, r) {
        return (0.0, p, p);
    }
    // Apart: the closest pair involves an end of the segment or a corner of the rectangle.
    let mut best = (f64::INFINITY, a, a);
    for p in [a, b] {
        let q = clamp_to_rect(p, r);
        let d = dist(p, q);
        if d < best.0 {
            best = (d, p, q);
        }
    }
    for c in r.corners() {
        let p = closest_on_segment(c, a, b);
        let d = dist(p, c);
        if d < best.0 {
            best = (d, p, c);
        }
    }
    best
}

fn segment_segment(a: Point, b: Point, c: Point, d: Point) -> (f64, Point, Point) {
    if let Some(x) = crossing(a, b, c, d) {
        return (0.0, x, x);
    }
    let mut best = (f64::INFINITY, a, a);
    for (p, s0, s1, first) in [
        (a, c, d, true),
        (b, c, d, true),
        (c, a, b, false),
        (d, a, b, false),
    ] {
        let q = closest_on_segment(p, s0, s1);
        let dd = dist(p, q);
        if dd < best.0 {
            best = if first { (dd, p, q) } else { (dd, q, p) };
        }
    }
    best
}

/// Where two segments properly cross (not merely touch; touching is found by the
/// end-point distances).
fn crossing(a: Point, b: Point, c: Point, d: Point) -> Option<Point> {
    let r = b.sub(a);
    let s = d.sub(c);
    let den = r.x * s.y - r.y * s.x;
    if den == 0.0 {
        return None;
    }
    let w = c.sub(a);
    let t = (w.x * s.y - w.y * s.x) / den;
    let u = (w.x * r.y - w.y * r.x) / den;
    if (0.0..=1.0).contains(&t) && (0.0..=1.0).contains(&u) {
        Some(Point::new(a.x + t * r.x, a.y + t * r.y))
    } else {
        None
    }
}

/// Copper layers as a bit set: bit 0 top, bit 1 bottom.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct LayerSet(pub u8);

impl LayerSet {
    /// No copper (an unplated hole).
    pub const NONE: LayerSet = LayerSet(0);
    /// Top copper only.
    pub const TOP: LayerSet = LayerSet(1);
    /// Bottom copper only.
    pub const BOTTOM: LayerSet = LayerSet(2);
    /// Both (through-hole pads, vias).
    pub const BOTH: LayerSet = LayerSet(3);

    /// The one layer.
    pub fn of(layer: Layer) -> LayerSet {
        match layer {
            Layer::Top => LayerSet::TOP,
            Layer::Bottom => LayerSet::BOTTOM,
        }
    }

    /// The copper of an SMD part on `side`.
    pub fn of_side(side: Side) -> LayerSet {
        match side {
            Side::Top => LayerSet::TOP,
            Side::Bottom => LayerSet::BOTTOM,
        }
    }

    /// The layers a keep-out applies to.
    pub fn from_keepout(l: crate::model::board::Layers) -> LayerSet {
        match l {
            crate::model::board::Layers::Both => LayerSet::BOTH,
            crate::model::board::Layers::Top => LayerSet::TOP,
            crate::model::board::Layers::Bottom => LayerSet::BOTTOM,
        }
    }

    /// Whether the two sets share a layer (so their copper can touch).
    pub fn meets(self, o: LayerSet) -> bool {
        self.0 & o.0 != 0
    }

    /// Whether the set holds `layer`.
    pub fn has(self, layer: Layer) -> bool {
        self.meets(LayerSet::of(layer))
    }
}

/// The copper shape of a pad of width `w` and height `h` (already turned) centred on `c`.
/// A circle takes the larger side as its diameter; a rounded rectangle rounds its corners
/// to a quarter of the smaller side; an oval rounds its short ends fully.
pub fn pad_prim(c: Point, w: f64, h: f64, shape: PadShape) -> Prim {
    match shape {
        PadShape::Rectangle => Prim::Box {
            core: Rect::centered(c, w, h),
            r: 0.0,
        },
        PadShape::Rounded => {
            let r = 0.25 * w.min(h);
            Prim::Box {
                core: Rect::centered(c, w - 2.0 * r, h - 2.0 * r),
                r,
            }
        }
        PadShape::Circle => Prim::disc(c, w.max(h) / 2.0),
        PadShape::Obround => {
            let r = w.min(h) / 2.0;
            Prim::Box {
                core: Rect::centered(c, w - 2.0 * r, h - 2.0 * r),
                r,
            }
        }
    }
}

/// A pad as copper on the board.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PlacedPad {
    /// Centre on the board.
    pub at: Point,
    /// The copper (or, for an unplated hole, the hole).
    pub prim: Prim,
    /// LayerSet with copper; [`LayerSet::NONE`] for an unplated hole.
    pub layers: LayerSet,
    /// Drill diameter for a hole.
    pub drill: Option<f64>,
}

/// Where a pad of a placed part lies; `None` while the part is unplaced.
///
/// An unplated hole has no copper but copper must still keep clear of it: its shape is
/// the hole and its layers are [`LayerSet::NONE`]; callers treat it as a hole on both sides.
pub fn placed_pad(design: &Design, part: PartId, pad: usize) -> Option<PlacedPad> {
    let p = design.part(part);
    let at = p.at?;
    let q = p.quarter();
    let fp_pad = &design.footprints[part.index()].pads[pad];
    let c = to_board(fp_pad.at, at, q, p.side);
    let (w, h) = q.apply_size(fp_pad.width, fp_pad.height);
    Some(match fp_pad.kind {
        PadKind::Smd => PlacedPad {
            at: c,
            prim: pad_prim(c, w, h, fp_pad.shape),
            layers: LayerSet::of_side(p.side),
            drill: None,
        },
        PadKind::ThroughHole {
            drill,
            plated: true,
        } => PlacedPad {
            at: c,
            prim: pad_prim(c, w, h, fp_pad.shape),
            layers: LayerSet::BOTH,
            drill: Some(drill),
        },
        PadKind::ThroughHole {
            drill,
            plated: false,
        } => PlacedPad {
            at: c,
            prim: Prim::disc(c, drill / 2.0),
            layers: LayerSet::NONE,
            drill: Some(drill),
        },
    })
}

/// The closed edges of a polygon (a rectangle's four sides).
pub fn edges(vertices: &[Point]) -> impl Iterator<Item = (Point, Point)> + '_ {
    let n = vertices.len();
    (0..n).map(move |i| (vertices[i], vertices[(i + 1) % n]))
}

/// A uniform grid of buckets over a rectangle: items are filed in every cell their bounds
/// touch, so a query only looks at nearby items. Items outside the rectangle are filed in
/// the border cells.
#[derive(Clone, Debug)]
pub struct Buckets {
    origin: Point,
    cell: f64,
    nx: usize,
    ny: usize,
    cells: Vec<Vec<u32>>,
    stamp: Vec<u32>,
    generation: u32,
}

impl Buckets {
    /// Buckets over `area` with cells of about `cell` mm (made larger if there would be
    /// more than about a million cells).
    pub fn new(area: Rect, cell: f64) -> Buckets {
        let mut cell = cell.max(1e-3);
        let (w, h) = (area.width().max(cell), area.height().max(cell));
        while (w / cell).ceil() * (h / cell).ceil() > 1.0e6 {
            cell *= 2.0;
        }
        let nx = (w / cell).ceil() as usize;
        let ny = (h / cell).ceil() as usize;
        Buckets {
            origin: area.min,
            cell,
            nx,
            ny,
            cells: vec![Vec::new(); nx * ny],
            stamp: Vec::new(),
            generation: 0,
        }
    }

    fn range(&self, r: &Rect) -> (usize, usize, usize, usize) {
        let ix =
            |x: f64| (((x - self.origin.x) / self.cell).floor().max(0.0) as usize).min(self.nx - 1);
        let iy =
            |y: f64| (((y - self.origin.y) / self.cell).floor().max(0.0) as usize).min(self.ny - 1);
        (ix(r.min.x), ix(r.max.x), iy(r.min.y), iy(r.max.y))
    }

    /// Files item `id` under every cell `bounds` touches.
    pub fn insert(&mut self, id: u32, bounds: &Rect) {
        let (x0, x1, y0, y1) = self.range(bounds);
        for y in y0..=y1 {
            for x in x0..=x1 {
                self.cells[y * self.nx + x].push(id);
            }
        }
        if self.stamp.len() <= id as usize {
            self.stamp.resize(id as usize + 1, 0);
        }
    }

    /// The items filed in cells `area` touches, each once, in no particular order.
    pub fn query(&mut self, area: &Rect, out: &mut Vec<u32>) {
        out.clear();
        self.generation = self.generation.wrapping_add(1);
        if self.generation == 0 {
            self.stamp.fill(0);
            self.generation = 1;
        }
        let (x0, x1, y0, y1) = self.range(area);
        for y in y0..=y1 {
            for x in x0..=x1 {
                for &id in &self.cells[y * self.nx + x] {
                    let s = &mut self.stamp[id as usize];
                    if *s != self.generation {
                        *s = self.generation;
                        out.push(id);
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() < 1e-12
    }

    #[test]
    fn gaps_between_primitives() {
        // Two parallel tracks 1 mm apart (centre to centre), 0.25 wide: gap 0.75.
        let t1 = Prim::track(Point::new(0.0, 0.0), Point::new(5.0, 0.0), 0.25);
        let t2 = Prim::track(Point::new(1.0, 1.0), Point::new(4.0, 1.0), 0.25);
        assert!(close(t1.gap(&t2).0, 0.75));
        // Crossing tracks overlap by their radii.
        let t3 = Prim::track(Point::new(2.0, -1.0), Point::new(2.0, 1.0), 0.25);
        assert!(close(t1.gap(&t3).0, -0.25));
        // A 1 x 1 pad at (3, 3) and a via of radius 0.3 at (5, 3): core gap 1.5.
        let pad = pad_prim(Point::new(3.0, 3.0), 1.0, 1.0, PadShape::Rectangle);
        let via = Prim::disc(Point::new(5.0, 3.0), 0.3);
        assert!(close(pad.gap(&via).0, 1.2));
        // Diagonal from a rectangle corner: (1,1) corner to a disc at (4,5), distance 5.
        let r = Prim::Box {
            core: Rect::new(0.0, 0.0, 1.0, 1.0),
            r: 0.0,
        };
        assert!(close(r.gap(&Prim::disc(Point::new(4.0, 5.0), 1.0)).0, 4.0));
        // A segment passing a rectangle corner diagonally.
        let s = Prim::track(Point::new(2.0, 0.0), Point::new(0.0, 2.0), 0.0);
        assert!(close(r.gap(&s).0, 0.0));
        let s = Prim::track(Point::new(3.0, 0.0), Point::new(0.0, 3.0), 0.0);
        assert!(close(r.gap(&s).0, 2f64.sqrt() / 2.0));
        // A segment through a rectangle.
        let s = Prim::track(Point::new(-1.0, 0.5), Point::new(2.0, 0.5), 0.1);
        assert!(r.gap(&s).0 < 0.0);
    }

    #[test]
    fn pad_shapes() {
        let c = Point::new(0.0, 0.0);
        // An oval 2 x 1: a segment from -0.5 to 0.5 grown by 0.5.
        let o = pad_prim(c, 2.0, 1.0, PadShape::Obround);
        assert!(close(o.gap_to_point(Point::new(1.0, 0.0)), 0.0));
        assert!(o.gap_to_point(Point::new(0.95, 0.45)) > 0.0);
        // A rounded rectangle 2 x 1 has corner radius 0.25.
        let rr = pad_prim(c, 2.0, 1.0, PadShape::Rounded);
        assert!(close(rr.gap_to_point(Point::new(1.0, 0.0)), 0.0));
        assert!(rr.gap_to_point(Point::new(1.0, 0.5)) > 0.0);
        let circle = pad_prim(c, 1.6, 1.6, PadShape::Circle);
        assert!(close(circle.gap_to_point(Point::new(0.0, 2.0)), 1.2));
    }

    #[test]
    fn buckets_find_neighbours_once() {
        let mut b = Buckets::new(Rect::new(0.0, 0.0, 10.0, 10.0), 1.0);
        b.insert(0, &Rect::new(0.5, 0.5, 3.5, 0.6));
        b.insert(1, &Rect::new(8.0, 8.0, 9.0, 9.0));
        b.insert(2, &Rect::new(-5.0, -5.0, -4.0, -4.0));
        let mut out = Vec::new();
        b.query(&Rect::new(0.0, 0.0, 4.0, 1.0), &mut out);
        out.sort();
        assert_eq!(out, vec![0, 2]); // 2 lies outside and is filed in the corner cell
        b.query(&Rect::new(7.5, 7.5, 20.0, 20.0), &mut out);
        assert_eq!(out, vec![1]);
    }
}
