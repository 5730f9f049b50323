//! An analytical start for annealing: quadratic and spectral placement, spread by
//! recursive bisection, then a cool, local anneal.
//!
//! Annealing a dense board from a random scatter condenses it into folded orders
//! (regions that each sit well but join badly), and single-part moves undo a fold only
//! through long chains of uphill steps. An analytical placement has no folds: it
//! minimises a smooth wiring measure over the whole board at once. The scheme:
//!
//! 1. **Part graph.** Each net of `k` parts, `2 <= k <= CLIQUE_LIMIT`, joins every pair
//!    of its parts with weight `w / (k - 1)` (the clique net model; `w` the net's
//!    weight). Larger nets (supplies, ground) are left out: their cliques would outweigh
//!    the signal nets (`k^2 / 2` edges each) and pull every part to one spot, and they
//!    say little about which parts belong together (the same rule as the multilevel
//!    matching).
//! 2. **Coordinates** of part centres. Parts in a connected piece of the graph that
//!    reaches a locked part: quadratic placement, the minimum of
//!    `sum w_ij |x_i - x_j|^2` with the locked parts fixed (a sparse, positive definite
//!    system per axis, solved by conjugate gradient). The other parts: Hall's spectral
//!    placement (K. M. Hall, "An r-dimensional quadratic placement algorithm",
//!    Management Science 17(3), 1970): the eigenvectors of the smallest nonzero
//!    eigenvalues of the Laplacian, found by inverse subspace iteration (conjugate
//!    gradient solves, vectors kept orthogonal to the constant vector of each connected
//!    piece) with Rayleigh-Ritz steps. Parts with no nets, and single parts, sit at the
//!    centre.
//! 3. **Spreading.** Recursive bisection of a box of the board's aspect that the parts'
//!    courtyards fill to [`SPREAD_FILL`] (the whole board's box when they fill more),
//!    centred on their mean coordinate: cut the longer side of a region at a whole
//!    number of grid steps near the middle of its parts' courtyard area, give each side
//!    the parts with the lowest or highest coordinate along that side in proportion to
//!    its area, until one part is left; it goes to its region's centre on the placement
//!    grid. Sorting makes the result independent of the axes' scales; the plane's
//!    rotation (arbitrary when the two eigenvalues are equal, as on a square grid) and
//!    mirror image are chosen by the shortest wiring (weighted HPWL) after spreading:
//!    16 angles x 2 mirror images, then ten halvings of the step about the best.
//!    Locked parts stay put; the cuts ignore them, keep-outs and the outline's shape
//!    (its bounding box is split), so the result is legal only where the board is
//!    simple: the anneal and the legal finish repair the rest.
//! 4. **Anneal** from that start at a low temperature (20 % of uphill moves accepted) in
//!    a window of a few part sides, then the usual legal finish.
//!
//! Deterministic: no hash-map order, a fixed seed for the iteration's start vectors.

use super::anneal::Annealer;
use super::options::{AnnealOptions, Start};
use super::rng::Rng;
use crate::model::board::{rect_to_board, to_board};
use crate::model::{Design, Point, Rect};

/// Nets with more parts than this are left out of the part graph (see the module docs).
pub const CLIQUE_LIMIT: usize = 12;
/// Fraction of uphill moves accepted at the hottest refinement start tried
/// ([`balance_temperature`]).
pub const START_ACCEPTANCE: f64 = 0.2;
/// The energy rise a refinement start may cause in a trial, relative to the start's.
pub const BALANCE_RISE: f64 = 0.02;
/// Trial length in moves per movable part, and the bisection's steps.
const BALANCE_TRIAL: u64 = 20;
const BALANCE_STEPS: usize = 8;
/// The anneal's start window, in median part sides.
pub const WINDOW_SIDES: f64 = 4.0;
/// Rotations of the spectral plane tried, evenly over a full turn (each also mirrored).
const ANGLES: usize = 16;
/// Courtyard fill of the region the bisection spreads the parts over (at most the board).
pub const SPREAD_FILL: f64 = 0.5;
/// Halvings of the angle step about the best coarse angle.
const REFINE_ROUNDS: usize = 10;
/// Degree of the polynomials in the first coordinate removed from the candidates for
/// the second (harmonics up to this order; cos k t is a polynomial of degree k in cos t).
const HARMONIC_DEGREE: usize = 6;
/// A candidate with less than this share of its variance left once the harmonics are
/// removed is a harmonic, not an axis.
const MIN_RESIDUAL: f64 = 0.2;
/// A candidate with at least this share left is used whole.
const KEEP_RESIDUAL: f64 = 0.7;
/// Relative precision of the linear solves inside the eigenvector iteration, and the
/// residual (relative to the largest degree) at which the eigenvectors count as found:
/// a placement sorts by the coordinates, so a few digits are plenty (tighter values took
/// most of a 2,000-part board's placement time for no change in the start).
const EIGEN_SOLVE_TOLERANCE: f64 = 1e-8;
const EIGEN_RESIDUAL: f64 = 1e-5;
/// Eigenvectors computed to choose the second axis from.
const EIGEN_CANDIDATES: usize = 6;
/// Rounds of anchored quadratic placement after the spectral spread.
const ANCHOR_ROUNDS: usize = 30;
/// The anchors' first weight, in mean part-graph degrees, and its growth per round.
const ANCHOR_START: f64 = 0.02;
const ANCHOR_GROWTH: f64 = 1.25;

/// An undirected graph with positive edge weights, as sorted adjacency lists.
#[derive(Clone, Debug)]
pub struct Graph {
    start: Vec<usize>,
    adj: Vec<(u32, f64)>,
    /// Sum of the weights at each node.
    degree: Vec<f64>,
}

impl Graph {
    /// A graph on `n` nodes. Parallel edges add up; self loops, edges to nodes `>= n`
    /// and weights that are not finite and positive are dropped.
    pub fn from_edges(n: usize, edges: &[(u32, u32, f64)]) -> Graph {
        let mut e: Vec<(u32, u32, f64)> = Vec::with_capacity(2 * edges.len());
        for &(a, b, w) in edges {
            if a != b && (a as usize) < n && (b as usize) < n && w.is_finite() && w > 0.0 {
                e.push((a, b, w));
                e.push((b, a, w));
            }
        }
        Graph::from_directed(n, e)
    }

    /// A graph on `n` nodes from directed edges (each undirected edge given both ways,
    /// every node `< n`), kept as they are: parallel edges add up in the order given.
    pub(super) fn from_directed(n: usize, mut e: Vec<(u32, u32, f64)>) -> Graph {
        e.sort_by_key(|x| (x.0, x.1));
        e.dedup_by(|next, kept| {
            let same = (next.0, next.1) == (kept.0, kept.1);
            if same {
                kept.2 += next.2;
            }
            same
        });
        let mut start = vec![0usize; n + 1];
        for x in &e {
            start[x.0 as usize + 1] += 1;
        }
        for i in 0..n {
            start[i + 1] += start[i];
        }
        let adj: Vec<(u32, f64)> = e.iter().map(|x| (x.1, x.2)).collect();
        let degree = (0..n)
            .map(|i| adj[start[i]..start[i + 1]].iter().map(|a| a.1).sum())
            .collect();
        Graph { start, adj, degree }
    }

    pub fn len(&self) -> usize {
        self.degree.len()
    }

    pub fn is_empty(&self) -> bool {
        self.degree.is_empty()
    }

    /// Node `i`'s neighbours and the weights to them, in increasing order.
    pub(super) fn neighbours(&self, i: usize) -> &[(u32, f64)] {
        &self.adj[self.start[i]..self.start[i + 1]]
    }

    /// Connected piece of each node, numbered in order of each piece's lowest node.
    pub fn components(&self) -> Vec<u32> {
        let n = self.len();
        let mut comp = vec![u32::MAX; n];
        let mut count = 0u32;
        let mut stack = Vec::new();
        for s in 0..n {
            if comp[s] != u32::MAX {
                continue;
            }
            comp[s] = count;
            stack.push(s);
            while let Some(u) = stack.pop() {
                for &(v, _) in self.neighbours(u) {
                    if comp[v as usize] == u32::MAX {
                        comp[v as usize] = count;
                        stack.push(v as usize);
                    }
                }
            }
            count += 1;
        }
        comp
    }

    /// `y = L x` on the active nodes, with the inactive nodes' values taken as zero (the
    /// Laplacian restricted to the active nodes: fixed neighbours still count in the
    /// degree). Inactive entries of `y` are zero.
    fn apply(&self, active: &[bool], x: &[f64], y: &mut [f64]) {
        for i in 0..self.len() {
            y[i] = if active[i] {
                let mut s = self.degree[i] * x[i];
                for &(j, w) in self.neighbours(i) {
                    if active[j as usize] {
                        s -= w * x[j as usize];
                    }
                }
                s
            } else {
                0.0
            };
        }
    }
}

/// Subtracts, over the active nodes of each connected piece, the piece's mean (makes a
/// vector orthogonal to the Laplacian's null space there); zeroes inactive entries.
fn project(comp: &[u32], active: &[bool], pieces: usize, x: &mut [f64]) {
    let mut sum = vec![0.0; pieces];
    let mut count = vec![0usize; pieces];
    for i in 0..x.len() {
        if active[i] {
            sum[comp[i] as usize] += x[i];
            count[comp[i] as usize] += 1;
        }
    }
    for i in 0..x.len() {
        x[i] = if active[i] {
            let c = comp[i] as usize;
            x[i] - sum[c] / count[c] as f64
        } else {
            0.0
        };
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Conjugate gradient for `L x = b` on the active nodes, from `x = 0`. With
/// `projection`, the system is singular and `b` lies in its range: the iterates are kept
/// there (orthogonal to each piece's constant vector).
fn conjugate_gradient(
    g: &Graph,
    active: &[bool],
    b: &[f64],
    projection: Option<(&[u32], usize)>,
    tolerance: f64,
) -> Vec<f64> {
    let n = g.len();
    let mut x = vec![0.0; n];
    let mut r: Vec<f64> = (0..n).map(|i| if active[i] { b[i] } else { 0.0 }).collect();
    if let Some((comp, pieces)) = projection {
        project(comp, active, pieces, &mut r);
    }
    let b_norm = dot(&r, &r).sqrt();
    if !(b_norm > 0.0 && b_norm.is_finite()) {
        return x;
    }
    let mut p = r.clone();
    let mut q = vec![0.0; n];
    let mut rr = dot(&r, &r);
    let max_iter = 20 * n + 100;
    for _ in 0..max_iter {
        g.apply(active, &p, &mut q);
        if let Some((comp, pieces)) = projection {
            project(comp, active, pieces, &mut q);
        }
        let pq = dot(&p, &q);
        if pq.is_nan() || pq <= 0.0 {
            break;
        }
        let alpha = rr / pq;
        for i in 0..n {
            x[i] += alpha * p[i];
            r[i] -= alpha * q[i];
        }
        let rr_new = dot(&r, &r);
        if rr_new.sqrt() <= tolerance * b_norm {
            break;
        }
        let beta = rr_new / rr;
        rr = rr_new;
        for i in 0..n {
            p[i] = r[i] + beta * p[i];
        }
    }
    if let Some((comp, pieces)) = projection {
        project(comp, active, pieces, &mut x);
    }
    x
}

/// Conjugate gradient for `(L + alpha I) x = b` on the active nodes (positive definite
/// for `alpha > 0`), from `x0`; inactive entries of the result are those of `x0`.
fn conjugate_gradient_shifted(
    g: &Graph,
    active: &[bool],
    alpha: f64,
    b: &[f64],
    x0: &[f64],
    tolerance: f64,
) -> Vec<f64> {
    let n = g.len();
    let mut x = x0.to_vec();
    let mut q = vec![0.0; n];
    let apply = |x: &[f64], y: &mut [f64]| {
        g.apply(active, x, y);
        for i in 0..n {
            if active[i] {
                y[i] += alpha * x[i];
            }
        }
    };
    let mut xa: Vec<f64> = (0..n).map(|i| if active[i] { x[i] } else { 0.0 }).collect();
    apply(&xa, &mut q);
    let mut r: Vec<f64> = (0..n)
        .map(|i| if active[i] { b[i] - q[i] } else { 0.0 })
        .collect();
    let b_norm = (0..n)
        .filter(|&i| active[i])
        .map(|i| b[i] * b[i])
        .sum::<f64>()
        .sqrt();
    if !(b_norm > 0.0 && b_norm.is_finite()) {
        return x;
    }
    let mut p = r.clone();
    let mut rr = dot(&r, &r);
    for _ in 0..(4 * n + 100) {
        if rr.sqrt() <= tolerance * b_norm {
            break;
        }
        apply(&p, &mut q);
        let pq = dot(&p, &q);
        if pq.is_nan() || pq <= 0.0 {
            break;
        }
        let step = rr / pq;
        for i in 0..n {
            xa[i] += step * p[i];
            r[i] -= step * q[i];
        }
        let rr_new = dot(&r, &r);
        let beta = rr_new / rr;
        rr = rr_new;
        for i in 0..n {
            p[i] = r[i] + beta * p[i];
        }
    }
    for i in 0..n {
        if active[i] {
            x[i] = xa[i];
        }
    }
    x
}

/// Quadratic placement along one axis: the values of the free nodes (`fixed[i]` is
/// `None`) that minimise `sum w_ij (x_i - x_j)^2` with the fixed nodes held at their
/// values (each free node at the weighted mean of its neighbours: the discrete Laplace
/// equation). Free nodes whose connected piece holds no fixed node have no unique
/// minimum and are `None`, as are the fixed nodes themselves.
pub fn quadratic(g: &Graph, fixed: &[Option<f64>]) -> Vec<Option<f64>> {
    let n = g.len();
    let comp = g.components();
    let pieces = comp.iter().map(|&c| c as usize + 1).max().unwrap_or(0);
    let mut anchored = vec![false; pieces];
    for i in 0..n {
        if fixed.get(i).copied().flatten().is_some() {
            anchored[comp[i] as usize] = true;
        }
    }
    let active: Vec<bool> = (0..n)
        .map(|i| fixed.get(i).copied().flatten().is_none() && anchored[comp[i] as usize])
        .collect();
    let mut b = vec![0.0; n];
    for i in 0..n {
        if active[i] {
            for &(j, w) in g.neighbours(i) {
                if let Some(v) = fixed.get(j as usize).copied().flatten() {
                    b[i] += w * v;
                }
            }
        }
    }
    let x = conjugate_gradient(g, &active, &b, None, 1e-12);
    (0..n).map(|i| active[i].then_some(x[i])).collect()
}

/// The `k` smallest nonzero eigenvalues of the graph's Laplacian with unit eigenvectors,
/// ascending (fewer when the Laplacian has fewer nonzero eigenvalues: `n` minus the
/// number of connected pieces). Each eigenvector sums to zero over every connected
/// piece. Inverse subspace iteration with Rayleigh-Ritz steps; deterministic.
pub fn laplacian_eigenpairs(g: &Graph, k: usize) -> Vec<(f64, Vec<f64>)> {
    let active = vec![true; g.len()];
    eigenpairs_on(g, &active, k, 1e-12, 1e-9)
}

/// [`laplacian_eigenpairs`] on the active nodes, with the linear solves' relative
/// precision and the residual (relative to the largest degree) at which to stop.
fn eigenpairs_on(
    g: &Graph,
    active: &[bool],
    k: usize,
    solve_tolerance: f64,
    residual: f64,
) -> Vec<(f64, Vec<f64>)> {
    let n = g.len();
    let comp = g.components();
    let pieces = comp.iter().map(|&c| c as usize + 1).max().unwrap_or(0);
    let mut seen = vec![false; pieces];
    let mut active_pieces = 0;
    let mut m = 0;
    for i in 0..n {
        if active[i] {
            m += 1;
            if !seen[comp[i] as usize] {
                seen[comp[i] as usize] = true;
                active_pieces += 1;
            }
        }
    }
    let rank = m - active_pieces;
    let k = k.min(rank);
    if k == 0 {
        return Vec::new();
    }
    // A few guard vectors beyond k speed convergence (ratio lambda_k / lambda_{b+1}).
    let b = (k + 3).min(rank);
    let proj = (&comp[..], pieces);
    let mut rng = Rng::new(0x7370_6563_7472_616c);
    let mut random_vector = |rng: &mut Rng| -> Vec<f64> {
        let mut v: Vec<f64> = (0..n).map(|_| rng.unit() - 0.5).collect();
        project(&comp, active, pieces, &mut v);
        v
    };
    let mut vs: Vec<Vec<f64>> = (0..b).map(|_| random_vector(&mut rng)).collect();
    orthonormalise(&mut vs, &mut rng, &mut random_vector);
    let scale = g.degree.iter().fold(0.0f64, |a, &d| a.max(d)).max(1e-300);
    let mut lv = vec![0.0; n];
    let mut ritz: Vec<f64> = vec![0.0; b];
    for _ in 0..500 {
        let mut ws: Vec<Vec<f64>> = vs
            .iter()
            .map(|v| conjugate_gradient(g, active, v, Some(proj), solve_tolerance))
            .collect();
        orthonormalise(&mut ws, &mut rng, &mut random_vector);
        // Rayleigh-Ritz: the Laplacian in the basis ws, diagonalised.
        let lws: Vec<Vec<f64>> = ws
            .iter()
            .map(|w| {
                let mut y = vec![0.0; n];
                g.apply(active, w, &mut y);
                y
            })
            .collect();
        let mut h = vec![vec![0.0; b]; b];
        for i in 0..b {
            for j in 0..b {
                h[i][j] = 0.5 * (dot(&ws[i], &lws[j]) + dot(&ws[j], &lws[i]));
            }
        }
        let (vals, q) = jacobi_eigen(h);
        for (c, v) in vs.iter_mut().enumerate() {
            for (i, x) in v.iter_mut().enumerate() {
                *x = (0..b).map(|r| ws[r][i] * q[r][c]).sum();
            }
        }
        ritz = vals;
        // Converged when the wanted pairs' residuals are small.
        let done = (0..k).all(|c| {
            g.apply(active, &vs[c], &mut lv);
            let res: f64 = lv
                .iter()
                .zip(&vs[c])
                .map(|(a, x)| (a - ritz[c] * x).powi(2))
                .sum::<f64>()
                .sqrt();
            res <= residual * scale
        });
        if done {
            break;
        }
    }
    (0..k).map(|c| (ritz[c], vs[c].clone())).collect()
}

/// Modified Gram-Schmidt; a vector that collapses is replaced by a fresh random one.
fn orthonormalise(
    vs: &mut [Vec<f64>],
    rng: &mut Rng,
    random_vector: &mut impl FnMut(&mut Rng) -> Vec<f64>,
) {
    for i in 0..vs.len() {
        for attempt in 0..8 {
            let before = dot(&vs[i], &vs[i]).sqrt();
            for j in 0..i {
                let (head, tail) = vs.split_at_mut(i);
                let c = dot(&head[j], &tail[0]);
                for (x, y) in tail[0].iter_mut().zip(&head[j]) {
                    *x -= c * y;
                }
            }
            let norm = dot(&vs[i], &vs[i]).sqrt();
            if norm > 1e-10 * before && norm > 1e-300 && norm.is_finite() {
                for x in vs[i].iter_mut() {
                    *x /= norm;
                }
                break;
            }
            if attempt < 7 {
                vs[i] = random_vector(rng);
            }
        }
    }
}

/// Eigenvalues (ascending) and eigenvectors (columns of the returned matrix) of a small
/// symmetric matrix, by cyclic Jacobi rotations.
fn jacobi_eigen(mut a: Vec<Vec<f64>>) -> (Vec<f64>, Vec<Vec<f64>>) {
    let n = a.len();
    let mut v = vec![vec![0.0; n]; n];
    for (i, row) in v.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    for _ in 0..100 {
        let off: f64 = (0..n)
            .flat_map(|i| (0..n).filter(move |&j| j != i).map(move |j| (i, j)))
            .map(|(i, j)| a[i][j] * a[i][j])
            .sum();
        let diag: f64 = (0..n).map(|i| a[i][i] * a[i][i]).sum();
        if off <= 1e-30 * diag.max(1e-300) {
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                if a[p][q] == 0.0 {
                    continue;
                }
                let theta = (a[q][q] - a[p][p]) / (2.0 * a[p][q]);
                let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
                let t = if theta == 0.0 { 1.0 } else { t };
                let c = 1.0 / (t * t + 1.0).sqrt();
                let s = t * c;
                for row in a.iter_mut() {
                    let (akp, akq) = (row[p], row[q]);
                    row[p] = c * akp - s * akq;
                    row[q] = s * akp + c * akq;
                }
                let (rp, rq) = (a[p].clone(), a[q].clone());
                for (k, (&apk, &aqk)) in rp.iter().zip(&rq).enumerate() {
                    a[p][k] = c * apk - s * aqk;
                    a[q][k] = s * apk + c * aqk;
                }
                for row in v.iter_mut() {
                    let (vp, vq) = (row[p], row[q]);
                    row[p] = c * vp - s * vq;
                    row[q] = s * vp + c * vq;
                }
            }
        }
    }
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&i, &j| a[i][i].total_cmp(&a[j][j]).then(i.cmp(&j)));
    let vals = order.iter().map(|&i| a[i][i]).collect();
    let vecs = (0..n)
        .map(|r| order.iter().map(|&c| v[r][c]).collect())
        .collect();
    (vals, vecs)
}

/// The part graph of a design (see the module docs): one node per part.
pub fn part_graph(design: &Design) -> Graph {
    let mut edges: Vec<(u32, u32, f64)> = Vec::new();
    clique_pairs(design, CLIQUE_LIMIT, |a, b, w| edges.push((a, b, w)));
    Graph::from_edges(design.board.parts.len(), &edges)
}

/// Calls `f(a, b, w)` for every pair `a < b` of distinct parts on a net of `k` parts,
/// `2 <= k <= limit`, with `w` the net's weight over `k - 1` (the clique net model), net
/// by net in the board's order.
pub(super) fn clique_pairs(design: &Design, limit: usize, mut f: impl FnMut(u32, u32, f64)) {
    let mut on_net: Vec<u32> = Vec::new();
    for (pins, net) in design.net_pins.iter().zip(&design.board.nets) {
        on_net.clear();
        on_net.extend(pins.iter().map(|p| p.part.0));
        on_net.sort_unstable();
        on_net.dedup();
        let k = on_net.len();
        if !(2..=limit).contains(&k) {
            continue;
        }
        let w = net.weight / (k - 1) as f64;
        for (x, &a) in on_net.iter().enumerate() {
            for &b in &on_net[x + 1..] {
                f(a, b, w);
            }
        }
    }
}

/// Courtyard centre of part `i` relative to its origin, as placed (turned, mirrored).
fn court_offset(design: &Design, i: usize) -> Point {
    let p = &design.board.parts[i];
    rect_to_board(
        &design.footprints[i].courtyard,
        Point::new(0.0, 0.0),
        p.quarter(),
        p.side,
    )
    .center()
}

/// The analytical start: a position (origin, on the placement grid) for every part;
/// locked parts keep theirs. Unlocked parts' positions in the file are ignored.
pub fn start_positions(design: &Design) -> Vec<Point> {
    let parts = &design.board.parts;
    let n = parts.len();
    let bounds = design.board.outline.bounds();
    let centre = bounds.center();
    let g = part_graph(design);
    let fixed: Vec<Option<Point>> = (0..n)
        .map(|i| {
            let p = &parts[i];
            match (p.locked, p.at) {
                (true, Some(at)) => Some(at.add(court_offset(design, i))),
                _ => None,
            }
        })
        .collect();
    let qx = quadratic(
        &g,
        &fixed.iter().map(|f| f.map(|p| p.x)).collect::<Vec<_>>(),
    );
    let qy = quadratic(
        &g,
        &fixed.iter().map(|f| f.map(|p| p.y)).collect::<Vec<_>>(),
    );
    // The rest (not locked, no path to a locked part): spectral coordinates.
    let spectral: Vec<bool> = (0..n)
        .map(|i| !parts[i].locked && qx[i].is_none())
        .collect();
    let mut pairs = eigenpairs_on(
        &g,
        &spectral,
        EIGEN_CANDIDATES,
        EIGEN_SOLVE_TOLERANCE,
        EIGEN_RESIDUAL,
    );
    if pairs.len() > 2 {
        // The second axis. On a long board the eigenvectors after the first are often
        // harmonics of it (cos 2 pi x, cos 3 pi x beside cos pi x on a strip: functions
        // of the first coordinate that fold the board), and the axis across the board
        // comes later, possibly mixed with a harmonic of equal eigenvalue. So each
        // candidate is stripped of what a polynomial in the first coordinate explains,
        // and the remainder that varies most smoothly over the part graph (the least
        // Rayleigh quotient) is the second axis.
        let first = pairs.remove(0);
        let mut best: Option<(f64, Vec<f64>)> = None;
        for (_, v) in &pairs {
            let r = poly_residual(&first.1, v, &spectral, HARMONIC_DEGREE);
            let rr = dot(&r, &r);
            if rr < MIN_RESIDUAL * dot(v, v) {
                continue;
            }
            // Mostly not a function of the first: kept as it is (stripping it would
            // also remove the part that only correlates with the first by chance).
            let r = if rr >= KEEP_RESIDUAL * dot(v, v) {
                v.clone()
            } else {
                r
            };
            let rr = dot(&r, &r);
            let mut lr = vec![0.0; n];
            g.apply(&spectral, &r, &mut lr);
            let q = dot(&r, &lr) / rr;
            if best.as_ref().is_none_or(|b| q < b.0) {
                best = Some((q, r));
            }
        }
        let second = match best {
            Some((q, r)) => (q, r),
            None => pairs.swap_remove(0),
        };
        pairs = vec![first, second];
    }
    let mut uv = vec![(0.0, 0.0); n];
    for (axis, (_, vec)) in pairs.iter().enumerate() {
        // Scale to the board: a uniform spread over the width has deviation w / sqrt(12).
        let m = spectral.iter().filter(|&&s| s).count().max(1) as f64;
        let sd = (dot(vec, vec) / m).sqrt();
        let span = if axis == 0 {
            bounds.width()
        } else {
            bounds.height()
        };
        let s = if sd > 0.0 {
            span / 12f64.sqrt() / sd
        } else {
            0.0
        };
        for i in 0..n {
            if spectral[i] {
                if axis == 0 {
                    uv[i].0 = vec[i] * s;
                } else {
                    uv[i].1 = vec[i] * s;
                }
            }
        }
    }
    let coords_at = |theta: f64, mirror: bool| -> Vec<Point> {
        let (s, c) = theta.sin_cos();
        (0..n)
            .map(|i| {
                if let (Some(x), Some(y)) = (qx[i], qy[i]) {
                    Point::new(x, y)
                } else if let Some(p) = fixed[i] {
                    p
                } else {
                    let (u, v) = uv[i];
                    let v = if mirror { -v } else { v };
                    Point::new(centre.x + c * u - s * v, centre.y + s * u + c * v)
                }
            })
            .collect()
    };
    let layout_at = |theta: f64, mirror: bool| -> (f64, Vec<Point>) {
        let at = spread(design, &coords_at(theta, mirror));
        (weighted_hpwl(design, &at), at)
    };
    if pairs.is_empty() {
        return layout_at(0.0, false).1;
    }
    // Coarse: evenly spaced angles, each also mirrored; the first best wins ties.
    let mut best = (f64::INFINITY, 0.0, false, Vec::new());
    for a in 0..ANGLES {
        let theta = a as f64 * std::f64::consts::TAU / ANGLES as f64;
        for mirror in [false, true] {
            let (cost, at) = layout_at(theta, mirror);
            if cost < best.0 {
                best = (cost, theta, mirror, at);
            }
        }
    }
    // Fine: the eigenvectors of a repeated eigenvalue are an arbitrary rotation of the
    // plane, so the best angle need not be one of the coarse ones; halve the step about
    // the best one (the cost is piecewise constant in the angle: sorted orders change
    // at discrete angles).
    let mut step = std::f64::consts::TAU / ANGLES as f64 / 2.0;
    for _ in 0..REFINE_ROUNDS {
        let (theta, mirror) = (best.1, best.2);
        for t in [theta - step, theta + step] {
            let (cost, at) = layout_at(t, mirror);
            if cost < best.0 {
                best = (cost, t, mirror, at);
            }
        }
        step /= 2.0;
    }
    let (cost, theta, mirror, at) = best;
    anchor_iterations(design, &g, coords_at(theta, mirror), at, cost)
}

/// `v` minus its least-squares fit by a polynomial of degree `degree` in `u`, over the
/// active nodes (zero elsewhere): the part of `v` that is not a function of `u` of that
/// kind. The polynomials are orthonormalised over the nodes (Gram-Schmidt on the powers
/// of `u` scaled to [-1, 1]), so the fit is a sum of projections.
fn poly_residual(u: &[f64], v: &[f64], active: &[bool], degree: usize) -> Vec<f64> {
    let n = u.len();
    let (lo, hi) = (0..n)
        .filter(|&i| active[i])
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), i| {
            (lo.min(u[i]), hi.max(u[i]))
        });
    let mut r: Vec<f64> = (0..n).map(|i| if active[i] { v[i] } else { 0.0 }).collect();
    if hi.is_nan() || lo.is_nan() || hi <= lo {
        return r;
    }
    let t: Vec<f64> = (0..n)
        .map(|i| {
            if active[i] {
                2.0 * (u[i] - lo) / (hi - lo) - 1.0
            } else {
                0.0
            }
        })
        .collect();
    let mut basis: Vec<Vec<f64>> = Vec::new();
    let mut power: Vec<f64> = (0..n).map(|i| if active[i] { 1.0 } else { 0.0 }).collect();
    for _ in 0..=degree {
        let mut b = power.clone();
        for q in &basis {
            let c = dot(q, &b);
            for (x, y) in b.iter_mut().zip(q) {
                *x -= c * y;
            }
        }
        let norm = dot(&b, &b).sqrt();
        if norm > 1e-9 {
            for x in &mut b {
                *x /= norm;
            }
            let c = dot(&b, &r);
            for (x, y) in r.iter_mut().zip(&b) {
                *x -= c * y;
            }
            basis.push(b);
        }
        for (p, x) in power.iter_mut().zip(&t) {
            *p *= x;
        }
    }
    r
}

/// Improves a spread placement by anchored quadratic placement (after the SimPL
/// placer's scheme, Kim, Lee and Markov, ICCAD 2010): each round solves for the
/// coordinates that minimise the clique wiring `sum w_ij |x_i - x_j|^2` plus
/// `alpha sum |x_i - a_i|^2`, each part pulled toward its place `a_i` in the last
/// spreading, spreads the result again by recursive bisection, and keeps the spread
/// placement with the shortest wiring. A rising `alpha` lets parts first drift toward
/// their nets and then settles them; the spreading between rounds moves parts past each
/// other, which repairs the local disorder that the two eigenvectors leave.
fn anchor_iterations(
    design: &Design,
    g: &Graph,
    mut coords: Vec<Point>,
    at: Vec<Point>,
    cost: f64,
) -> Vec<Point> {
    let parts = &design.board.parts;
    let n = parts.len();
    let active: Vec<bool> = parts.iter().map(|p| !p.locked).collect();
    if n < 3 || !active.iter().any(|&a| a) {
        return at;
    }
    let mean_degree = {
        let (s, k) = (0..n)
            .filter(|&i| active[i])
            .fold((0.0, 0usize), |(s, k), i| (s + g.degree[i], k + 1));
        (s / k.max(1) as f64).max(1e-9)
    };
    let offsets: Vec<Point> = (0..n).map(|i| court_offset(design, i)).collect();
    let mut best = (cost, at.clone());
    let mut anchors = at;
    let mut alpha = ANCHOR_START * mean_degree;
    for _ in 0..ANCHOR_ROUNDS {
        for axis in 0..2 {
            let get = |p: Point| if axis == 0 { p.x } else { p.y };
            let x0: Vec<f64> = coords.iter().map(|&p| get(p)).collect();
            // Locked parts pull their neighbours: their terms move to the right side.
            let b: Vec<f64> = (0..n)
                .map(|i| {
                    if !active[i] {
                        return 0.0;
                    }
                    let mut v = alpha * get(anchors[i].add(offsets[i]));
                    for &(j, w) in g.neighbours(i) {
                        if !active[j as usize] {
                            v += w * x0[j as usize];
                        }
                    }
                    v
                })
                .collect();
            let x = conjugate_gradient_shifted(g, &active, alpha, &b, &x0, 1e-6);
            for i in 0..n {
                if active[i] {
                    if axis == 0 {
                        coords[i].x = x[i];
                    } else {
                        coords[i].y = x[i];
                    }
                }
            }
        }
        anchors = spread(design, &coords);
        let c = weighted_hpwl(design, &anchors);
        if c < best.0 {
            best = (c, anchors.clone());
        }
        alpha *= ANCHOR_GROWTH;
    }
    best.1
}

/// Recursive bisection of the board's bounding box among the unlocked parts by their
/// coordinates `coords` (courtyard centres); returns origins on the placement grid.
pub fn spread(design: &Design, coords: &[Point]) -> Vec<Point> {
    let parts = &design.board.parts;
    let bounds = design.board.outline.bounds();
    let grid = design.board.rules.placement_grid;
    let mut at: Vec<Point> = parts
        .iter()
        .map(|p| p.at.unwrap_or(bounds.center()))
        .collect();
    let area: Vec<f64> = design
        .footprints
        .iter()
        .map(|f| f.courtyard.area().max(1e-9))
        .collect();
    let movable: Vec<usize> = (0..parts.len()).filter(|&i| !parts[i].locked).collect();
    let region = compact_region(&bounds, &movable, &area, coords);
    let mut stack: Vec<(Rect, Vec<usize>)> = vec![(region, movable)];
    while let Some((region, mut items)) = stack.pop() {
        match items.len() {
            0 => continue,
            1 => {
                let i = items[0];
                at[i] = origin_in(design, i, &region, &bounds, grid);
                continue;
            }
            _ => {}
        }
        let cut_x = region.width() >= region.height();
        let key = |i: usize| {
            if cut_x {
                (coords[i].x, coords[i].y)
            } else {
                (coords[i].y, coords[i].x)
            }
        };
        items.sort_by(|&a, &b| {
            let (ka, kb) = (key(a), key(b));
            ka.0.total_cmp(&kb.0)
                .then(ka.1.total_cmp(&kb.1))
                .then(a.cmp(&b))
        });
        let mut cum = Vec::with_capacity(items.len() + 1);
        cum.push(0.0);
        for &i in &items {
            cum.push(cum.last().copied().unwrap_or(0.0) + area[i]);
        }
        let total = cum[items.len()];
        // The split count whose area share is nearest `frac`, at least one a side.
        let split_near = |frac: f64| -> usize {
            let target = frac * total;
            let mut best = 1;
            for k in 1..items.len() {
                if (cum[k] - target).abs() < (cum[best] - target).abs() {
                    best = k;
                }
            }
            best
        };
        let extent = if cut_x {
            region.width()
        } else {
            region.height()
        };
        let k0 = split_near(0.5);
        let mut off = extent * cum[k0] / total;
        let steps = (extent / grid + 1e-9).floor();
        let k = if steps >= 2.0 {
            off = ((off / grid).round() * grid).clamp(grid, (steps - 1.0) * grid);
            split_near(off / extent)
        } else {
            k0
        };
        let (lo, hi) = if cut_x {
            let m = region.min.x + off;
            (
                Rect::new(region.min.x, region.min.y, m, region.max.y),
                Rect::new(m, region.min.y, region.max.x, region.max.y),
            )
        } else {
            let m = region.min.y + off;
            (
                Rect::new(region.min.x, region.min.y, region.max.x, m),
                Rect::new(region.min.x, m, region.max.x, region.max.y),
            )
        };
        let upper = items.split_off(k);
        stack.push((hi, upper));
        stack.push((lo, items));
    }
    at
}

/// The region the bisection splits: the board's box, or on a board the parts fill to
/// less than [`SPREAD_FILL`], a box of the board's aspect holding their courtyards at
/// that fill, centred on their area-weighted mean coordinate and kept inside the board
/// (spreading over the whole box would set related parts farther apart than needed).
fn compact_region(bounds: &Rect, movable: &[usize], area: &[f64], coords: &[Point]) -> Rect {
    let total: f64 = movable.iter().map(|&i| area[i]).sum();
    let want = total / SPREAD_FILL;
    if movable.is_empty() || want >= bounds.area() {
        return *bounds;
    }
    let k = (want / bounds.area()).sqrt();
    let (w, h) = (bounds.width() * k, bounds.height() * k);
    let mut c = Point::new(0.0, 0.0);
    for &i in movable {
        c = c.add(Point::new(coords[i].x * area[i], coords[i].y * area[i]));
    }
    let c = Point::new(
        (c.x / total).clamp(bounds.min.x + w / 2.0, bounds.max.x - w / 2.0),
        (c.y / total).clamp(bounds.min.y + h / 2.0, bounds.max.y - h / 2.0),
    );
    Rect::centered(c, w, h)
}

/// The origin that puts part `i`'s courtyard centre at `region`'s centre, on the grid,
/// moved back inside the board where its courtyard fits.
fn origin_in(design: &Design, i: usize, region: &Rect, bounds: &Rect, grid: f64) -> Point {
    let off = court_offset(design, i);
    let court = &design.footprints[i].courtyard;
    let p = &design.board.parts[i];
    let c = rect_to_board(court, Point::new(0.0, 0.0), p.quarter(), p.side);
    let want = region.center().sub(off);
    let fit = |v: f64, lo: f64, hi: f64| {
        let v = (v / grid).round() * grid;
        if lo <= hi {
            // A bound a rounding error away from a grid step is on that step.
            let lo = (lo / grid - 1e-9).ceil() * grid;
            let hi = (hi / grid + 1e-9).floor() * grid;
            if lo <= hi { v.clamp(lo, hi) } else { v }
        } else {
            v
        }
    };
    Point::new(
        fit(want.x, bounds.min.x - c.min.x, bounds.max.x - c.max.x),
        fit(want.y, bounds.min.y - c.min.y, bounds.max.y - c.max.y),
    )
}

/// Sum over nets of weight x half-perimeter of the pins' box, with parts at `at`.
fn weighted_hpwl(design: &Design, at: &[Point]) -> f64 {
    let mut total = 0.0;
    for (pins, net) in design.net_pins.iter().zip(&design.board.nets) {
        let pts = pins.iter().map(|pin| {
            let i = pin.part.index();
            let p = &design.board.parts[i];
            to_board(
                design.footprints[i].pads[pin.pad as usize].at,
                at[i],
                p.quarter(),
                p.side,
            )
        });
        if let Some(r) = Rect::bounding(pts) {
            total += net.weight * (r.width() + r.height());
        }
    }
    total
}

/// The design with every unlocked part at its analytical start
/// ([`start_positions`]).
pub fn start_design(design: &Design) -> Design {
    let at = start_positions(design);
    let mut d = design.clone();
    for (p, a) in d.board.parts.iter_mut().zip(at) {
        if !p.locked {
            p.at = Some(a);
        }
    }
    d
}

/// The options of the anneal that refines the analytical start: a window of
/// [`WINDOW_SIDES`] median part sides (unless `opts.start_window` sets one) and the start
/// temperature at which the start is in balance ([`balance_temperature`]), so the
/// refinement repairs local disorder without melting the global order; `scatter` and
/// `multilevel` do not apply. A start temperature in `opts` is kept.
pub fn refine_options(design: &Design, opts: &AnnealOptions) -> AnnealOptions {
    let window = opts
        .start_window
        .unwrap_or(WINDOW_SIDES * median_side(design));
    let mut o = AnnealOptions {
        scatter: false,
        multilevel: false,
        start: Start::Spectral,
        start_window: Some(window),
        start_acceptance: START_ACCEPTANCE,
        ..opts.clone()
    };
    if o.start_temperature.is_none() && !o.schedule.is_descent() {
        o.start_temperature = balance_temperature(design, &o);
    }
    o
}

/// The highest temperature at which annealing from the design's positions does not
/// raise the energy by more than [`BALANCE_RISE`] (averaged over the second half of a
/// trial of [`BALANCE_TRIAL`] moves per part): where the start is about as good as the
/// chain's own balance, so annealing from there keeps what the start got right and
/// repairs what it did not. Found by bisection on log T between the end temperature and
/// the temperature at which [`START_ACCEPTANCE`] of the uphill moves are accepted, each
/// trial on a fresh chain from the start (seeded, so the answer is reproducible).
/// `None` when the trials cannot run (nothing to move).
pub fn balance_temperature(design: &Design, opts: &AnnealOptions) -> Option<f64> {
    let probe = AnnealOptions {
        start_temperature: None,
        max_moves: Some(1_000_000),
        ..opts.clone()
    };
    let first = Annealer::new(design, probe.clone()).ok()?;
    let movable = (0..first.layout().part_count() as u32)
        .filter(|&i| !first.layout().is_locked(i))
        .count();
    if movable == 0 {
        return None;
    }
    let e0 = first.energy();
    let (mut lo, mut hi) = (first.end_temperature(), first.start_temperature());
    if hi <= lo {
        return Some(lo);
    }
    let trial = (BALANCE_TRIAL * movable as u64).max(1000);
    let rises = |t: f64| -> bool {
        let Ok(mut a) = Annealer::new(
            design,
            AnnealOptions {
                start_temperature: Some(t),
                ..probe.clone()
            },
        ) else {
            return true;
        };
        let w = *a.weights();
        let (mut sum, mut k, mut n) = (0.0, 0u64, 0u64);
        a.sample_at(t, trial, |l| {
            k += 1;
            if k > trial / 2 {
                sum += l.terms().energy(&w);
                n += 1;
            }
        });
        sum / n.max(1) as f64 > e0 + BALANCE_RISE * e0.abs()
    };
    if !rises(hi) {
        return Some(hi);
    }
    for _ in 0..BALANCE_STEPS {
        let mid = (lo * hi).sqrt();
        if rises(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(lo)
}

/// Median of the shorter courtyard side over the movable parts.
pub(super) fn median_side(d: &Design) -> f64 {
    let mut sides: Vec<f64> = d
        .board
        .parts
        .iter()
        .zip(&d.footprints)
        .filter(|(p, _)| !p.locked)
        .map(|(_, f)| f.courtyard.width().min(f.courtyard.height()))
        .collect();
    if sides.is_empty() {
        return d.board.rules.placement_grid;
    }
    sides.sort_by(f64::total_cmp);
    sides[sides.len() / 2]
}
