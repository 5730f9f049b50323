//! Plane geometry in board millimetres: points, axis-aligned rectangles, simple polygons,
//! quarter-turn rotations and the area computations the placement energy needs.
//!
//! Everything here is pure arithmetic on `f64`; nothing allocates on the hot path except
//! polygon clipping, which only runs for boards whose outline or keep-outs are polygons.

use serde::{Deserialize, Serialize};

/// A point or a vector in millimetres. `y` grows upwards (board convention, not screen).
/// In board files a point is written as a pair `(x, y)`.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(from = "(f64, f64)", into = "(f64, f64)")]
pub struct Point {
    pub x: f64,
    pub y: f64,
}

impl From<(f64, f64)> for Point {
    fn from((x, y): (f64, f64)) -> Self {
        Point { x, y }
    }
}

impl From<Point> for (f64, f64) {
    fn from(p: Point) -> Self {
        (p.x, p.y)
    }
}

impl Point {
    pub const fn new(x: f64, y: f64) -> Self {
        Point { x, y }
    }

    pub fn is_finite(self) -> bool {
        self.x.is_finite() && self.y.is_finite()
    }

    #[allow(
        clippy::should_implement_trait,
        reason = "plain methods keep the few call sites explicit"
    )]
    pub fn add(self, o: Point) -> Point {
        Point::new(self.x + o.x, self.y + o.y)
    }

    #[allow(
        clippy::should_implement_trait,
        reason = "plain methods keep the few call sites explicit"
    )]
    pub fn sub(self, o: Point) -> Point {
        Point::new(self.x - o.x, self.y - o.y)
    }

    /// Rectilinear (L1) distance, the metric of HPWL and of grid routing.
    pub fn manhattan(self, o: Point) -> f64 {
        (self.x - o.x).abs() + (self.y - o.y).abs()
    }
}

/// An axis-aligned rectangle, `min` inclusive corner and `max` opposite corner.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Rect {
    pub min: Point,
    pub max: Point,
}

impl Rect {
    pub const fn new(x0: f64, y0: f64, x1: f64, y1: f64) -> Self {
        Rect {
            min: Point::new(x0, y0),
            max: Point::new(x1, y1),
        }
    }

    /// A rectangle of the given size centred on `c`.
    pub fn centered(c: Point, w: f64, h: f64) -> Self {
        Rect::new(c.x - w / 2.0, c.y - h / 2.0, c.x + w / 2.0, c.y + h / 2.0)
    }

    /// The smallest rectangle holding all the points; `None` for no points.
    pub fn bounding(points: impl IntoIterator<Item = Point>) -> Option<Rect> {
        let mut it = points.into_iter();
        let first = it.next()?;
        let mut r = Rect {
            min: first,
            max: first,
        };
        for p in it {
            r.min.x = r.min.x.min(p.x);
            r.min.y = r.min.y.min(p.y);
            r.max.x = r.max.x.max(p.x);
            r.max.y = r.max.y.max(p.y);
        }
        Some(r)
    }

    pub fn width(&self) -> f64 {
        self.max.x - self.min.x
    }

    pub fn height(&self) -> f64 {
        self.max.y - self.min.y
    }

    pub fn area(&self) -> f64 {
        self.width().max(0.0) * self.height().max(0.0)
    }

    pub fn center(&self) -> Point {
        Point::new(
            (self.min.x + self.max.x) / 2.0,
            (self.min.y + self.max.y) / 2.0,
        )
    }

    pub fn translate(&self, d: Point) -> Rect {
        Rect {
            min: self.min.add(d),
            max: self.max.add(d),
        }
    }

    /// Grows (or with a negative margin shrinks) every side by `m`.
    pub fn inflate(&self, m: f64) -> Rect {
        Rect::new(
            self.min.x - m,
            self.min.y - m,
            self.max.x + m,
            self.max.y + m,
        )
    }

    pub fn union(&self, o: &Rect) -> Rect {
        Rect::new(
            self.min.x.min(o.min.x),
            self.min.y.min(o.min.y),
            self.max.x.max(o.max.x),
            self.max.y.max(o.max.y),
        )
    }

    pub fn contains(&self, p: Point) -> bool {
        p.x >= self.min.x && p.x <= self.max.x && p.y >= self.min.y && p.y <= self.max.y
    }

    /// Area of the intersection of two rectangles (zero when they only touch).
    #[inline]
    pub fn overlap_area(&self, o: &Rect) -> f64 {
        let w = self.max.x.min(o.max.x) - self.min.x.max(o.min.x);
        let h = self.max.y.min(o.max.y) - self.min.y.max(o.min.y);
        if w > 0.0 && h > 0.0 { w * h } else { 0.0 }
    }

    pub fn intersects(&self, o: &Rect) -> bool {
        self.overlap_area(o) > 0.0
    }

    /// The four corners counter-clockwise from `min`.
    pub fn corners(&self) -> [Point; 4] {
        [
            self.min,
            Point::new(self.max.x, self.min.y),
            self.max,
            Point::new(self.min.x, self.max.y),
        ]
    }
}

/// Largest rotation accepted, either way, in degrees: a thousand full turns. (Beyond
/// about 1e17 every float is a multiple of 90, so no check of the remainder could catch
/// a mistyped angle.)
pub const MAX_ROTATION_DEG: f64 = 360_000.0;

/// A rotation by a whole number of quarter turns, counter-clockwise (board y up).
///
/// Placement only uses quarter turns: courtyards stay axis-aligned, so overlap stays an
/// exact rectangle computation and a 90-degree move is a plain index change.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Quarter {
    #[default]
    R0,
    R90,
    R180,
    R270,
}

impl Quarter {
    pub const ALL: [Quarter; 4] = [Quarter::R0, Quarter::R90, Quarter::R180, Quarter::R270];

    /// From degrees; `None` unless the angle is a whole multiple of 90 (within 1e-6) no
    /// larger than [`MAX_ROTATION_DEG`] either way.
    pub fn from_degrees(deg: f64) -> Option<Quarter> {
        if !deg.is_finite() || deg.abs() > MAX_ROTATION_DEG {
            return None;
        }
        let q = deg / 90.0;
        let r = q.round();
        if (q - r).abs() > 1e-6 {
            return None;
        }
        Some(Quarter::from_index(r.rem_euclid(4.0) as usize))
    }

    pub fn from_index(i: usize) -> Quarter {
        Quarter::ALL[i % 4]
    }

    pub fn index(self) -> usize {
        self as usize
    }

    pub fn degrees(self) -> f64 {
        90.0 * self.index() as f64
    }

    /// Rotates a vector about the origin.
    #[inline]
    pub fn apply(self, p: Point) -> Point {
        match self {
            Quarter::R0 => p,
            Quarter::R90 => Point::new(-p.y, p.x),
            Quarter::R180 => Point::new(-p.x, -p.y),
            Quarter::R270 => Point::new(p.y, -p.x),
        }
    }

    /// Rotates a rectangle about the origin; the result is again axis-aligned.
    pub fn apply_rect(self, r: &Rect) -> Rect {
        let a = self.apply(r.min);
        let b = self.apply(r.max);
        Rect::new(a.x.min(b.x), a.y.min(b.y), a.x.max(b.x), a.y.max(b.y))
    }

    /// Swaps width and height for odd quarter turns.
    pub fn apply_size(self, w: f64, h: f64) -> (f64, f64) {
        match self {
            Quarter::R0 | Quarter::R180 => (w, h),
            Quarter::R90 | Quarter::R270 => (h, w),
        }
    }
}

/// Signed area of a closed polygon (shoelace formula): positive when counter-clockwise.
pub fn signed_area(pts: &[Point]) -> f64 {
    let n = pts.len();
    if n < 3 {
        return 0.0;
    }
    let mut s = 0.0;
    for i in 0..n {
        let a = pts[i];
        let b = pts[(i + 1) % n];
        s += a.x * b.y - b.x * a.y;
    }
    s / 2.0
}

/// Even-odd point-in-polygon test.
pub fn point_in_polygon(p: Point, pts: &[Point]) -> bool {
    let n = pts.len();
    let mut inside = false;
    let mut j = n.wrapping_sub(1);
    for i in 0..n {
        let (a, b) = (pts[i], pts[j]);
        if (a.y > p.y) != (b.y > p.y) {
            let x = a.x + (p.y - a.y) * (b.x - a.x) / (b.y - a.y);
            if p.x < x {
                inside = !inside;
            }
        }
        j = i;
    }
    inside
}

/// Area of the part of a simple polygon that lies inside an axis-aligned rectangle.
///
/// Sutherland-Hodgman clipping of the polygon against the rectangle's four half-planes.
/// The clip window is convex, so the result is correct for any simple subject polygon,
/// concave ones included (degenerate zero-width bridges add no area).
pub fn polygon_rect_overlap_area(poly: &[Point], r: &Rect) -> f64 {
    let mut cur: Vec<Point> = poly.to_vec();
    let mut next: Vec<Point> = Vec::with_capacity(poly.len() + 4);
    // (axis, bound, keep_greater)
    let planes = [
        (0, r.min.x, true),
        (0, r.max.x, false),
        (1, r.min.y, true),
        (1, r.max.y, false),
    ];
    for (axis, bound, keep_ge) in planes {
        next.clear();
        let n = cur.len();
        if n == 0 {
            return 0.0;
        }
        let coord = |p: Point| if axis == 0 { p.x } else { p.y };
        let inside = |p: Point| {
            if keep_ge {
                coord(p) >= bound
            } else {
                coord(p) <= bound
            }
        };
        for i in 0..n {
            let a = cur[i];
            let b = cur[(i + 1) % n];
            let (ia, ib) = (inside(a), inside(b));
            if ia {
                next.push(a);
            }
            if ia != ib {
                let t = (bound - coord(a)) / (coord(b) - coord(a));
                next.push(Point::new(a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)));
            }
        }
        std::mem::swap(&mut cur, &mut next);
    }
    signed_area(&cur).abs()
}

/// Whether two closed segments properly cross or touch (used to reject self-crossing outlines).
pub fn segments_intersect(p1: Point, p2: Point, q1: Point, q2: Point) -> bool {
    fn orient(a: Point, b: Point, c: Point) -> f64 {
        (b.x - a.x) * (c.y - a.y) - (b.y - a.y) * (c.x - a.x)
    }
    fn on_segment(a: Point, b: Point, p: Point) -> bool {
        p.x >= a.x.min(b.x) && p.x <= a.x.max(b.x) && p.y >= a.y.min(b.y) && p.y <= a.y.max(b.y)
    }
    let d1 = orient(q1, q2, p1);
    let d2 = orient(q1, q2, p2);
    let d3 = orient(p1, p2, q1);
    let d4 = orient(p1, p2, q2);
    if ((d1 > 0.0 && d2 < 0.0) || (d1 < 0.0 && d2 > 0.0))
        && ((d3 > 0.0 && d4 < 0.0) || (d3 < 0.0 && d4 > 0.0))
    {
        return true;
    }
    (d1 == 0.0 && on_segment(q1, q2, p1))
        || (d2 == 0.0 && on_segment(q1, q2, p2))
        || (d3 == 0.0 && on_segment(p1, p2, q1))
        || (d4 == 0.0 && on_segment(p1, p2, q2))
}

/// Index pairs of non-adjacent polygon edges that intersect; empty for a simple polygon.
pub fn self_crossings(pts: &[Point]) -> Option<(usize, usize)> {
    let n = pts.len();
    for i in 0..n {
        for j in i + 1..n {
            // Adjacent edges share a vertex; skip them (and the wrap-around pair).
            if j == i + 1 || (i == 0 && j == n - 1) {
                continue;
            }
            if segments_intersect(pts[i], pts[(i + 1) % n], pts[j], pts[(j + 1) % n]) {
                return Some((i, j));
            }
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quarter_turns_compose() {
        let p = Point::new(2.0, 1.0);
        assert_eq!(Quarter::R90.apply(p), Point::new(-1.0, 2.0));
        assert_eq!(Quarter::R180.apply(p), Point::new(-2.0, -1.0));
        assert_eq!(Quarter::R270.apply(p), Point::new(1.0, -2.0));
        assert_eq!(Quarter::from_degrees(-90.0), Some(Quarter::R270));
        assert_eq!(Quarter::from_degrees(450.0), Some(Quarter::R90));
        assert_eq!(Quarter::from_degrees(45.0), None);
        assert_eq!(Quarter::from_degrees(f64::NAN), None);
        assert_eq!(Quarter::from_degrees(360_000.0), Some(Quarter::R0));
        assert_eq!(Quarter::from_degrees(-360_090.0), None);
        assert_eq!(Quarter::from_degrees(1e20), None);
    }

    #[test]
    fn clipped_area_of_concave_polygon() {
        // An L shape of area 3 (unit squares), clipped by a window holding two of them.
        let l = [
            Point::new(0.0, 0.0),
            Point::new(2.0, 0.0),
            Point::new(2.0, 1.0),
            Point::new(1.0, 1.0),
            Point::new(1.0, 2.0),
            Point::new(0.0, 2.0),
        ];
        assert!((signed_area(&l) - 3.0).abs() < 1e-12);
        let w = Rect::new(0.5, 0.5, 2.5, 2.5);
        // Inside the window: [0.5,2]x[0.5,1] (1.5 x 0.5) plus [0.5,1]x[1,2] (0.5 x 1).
        assert!((polygon_rect_overlap_area(&l, &w) - 1.25).abs() < 1e-12);
        assert!(point_in_polygon(Point::new(0.5, 1.5), &l));
        assert!(!point_in_polygon(Point::new(1.5, 1.5), &l));
    }

    #[test]
    fn bow_tie_is_self_crossing() {
        let bow = [
            Point::new(0.0, 0.0),
            Point::new(1.0, 1.0),
            Point::new(1.0, 0.0),
            Point::new(0.0, 1.0),
        ];
        assert!(self_crossings(&bow).is_some());
        let sq = Rect::new(0.0, 0.0, 1.0, 1.0).corners();
        assert!(self_crossings(&sq).is_none());
    }
}
