//! Minimum spanning trees over pin positions: the straight "unrouted connection" lines a
//! viewer draws for each net, and a wirelength estimate that, unlike HPWL, grows with
//! every pin.

use crate::model::Point;

/// Distance used for the tree.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Metric {
    /// |dx| + |dy| (rectilinear wiring).
    Manhattan,
    /// Straight-line distance.
    Euclidean,
}

impl Metric {
    #[inline]
    pub fn dist(self, a: Point, b: Point) -> f64 {
        match self {
            Metric::Manhattan => (a.x - b.x).abs() + (a.y - b.y).abs(),
            Metric::Euclidean => (a.x - b.x).hypot(a.y - b.y),
        }
    }
}

/// Edges `(i, j)` of a minimum spanning tree of `pts` (Prim's algorithm on the complete
/// graph, O(n^2): nets have tens of pins, and the dense form needs no heap).
pub fn spanning_tree(pts: &[Point], metric: Metric) -> Vec<(usize, usize)> {
    let n = pts.len();
    if n < 2 {
        return Vec::new();
    }
    let mut in_tree = vec![false; n];
    let mut best = vec![f64::INFINITY; n];
    let mut from = vec![0usize; n];
    let mut edges = Vec::with_capacity(n - 1);
    in_tree[0] = true;
    for j in 1..n {
        best[j] = metric.dist(pts[0], pts[j]);
    }
    for _ in 1..n {
        let mut k = usize::MAX;
        for j in 0..n {
            if !in_tree[j] && (k == usize::MAX || best[j] < best[k]) {
                k = j;
            }
        }
        in_tree[k] = true;
        edges.push((from[k], k));
        for j in 0..n {
            if !in_tree[j] {
                let d = metric.dist(pts[k], pts[j]);
                if d < best[j] {
                    best[j] = d;
                    from[j] = k;
                }
            }
        }
    }
    edges
}

/// Total length of a minimum spanning tree of `pts`.
pub fn spanning_length(pts: &[Point], metric: Metric) -> f64 {
    spanning_tree(pts, metric)
        .iter()
        .map(|&(i, j)| metric.dist(pts[i], pts[j]))
        .sum()
}

/// Half-perimeter of the bounding box of `pts` (0 for fewer than two points).
pub fn hpwl(pts: &[Point]) -> f64 {
    if pts.len() < 2 {
        return 0.0;
    }
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for p in pts {
        x0 = x0.min(p.x);
        x1 = x1.max(p.x);
        y0 = y0.min(p.y);
        y1 = y1.max(p.y);
    }
    (x1 - x0) + (y1 - y0)
}
