//! The linear algebra of the analytical start: the part graph's Laplacian, conjugate
//! gradient solves, quadratic placement and the smallest eigenvectors (inverse subspace
//! iteration with Rayleigh-Ritz steps).

/// Relative precision of the linear solves inside the eigenvector iteration, and the
/// residual (relative to the largest degree) at which the eigenvectors count as found:
/// a placement sorts by the coordinates, so a few digits are plenty (tighter values took
/// most of a 2,000-part board's placement time for no change in the start).
pub(super) const EIGEN_SOLVE_TOLERANCE: f64 = 1e-8;
pub(super) const EIGEN_RESIDUAL: f64 = 1e-5;
/// Eigenvectors computed to choose the second axis from.
pub(super) const EIGEN_CANDIDATES: usize = 6;

use crate::place::rng::Rng;

/// An undirected graph with positive edge weights, as sorted adjacency lists.
#[derive(Clone, Debug)]
pub struct Graph {
    start: Vec<usize>,
    adj: Vec<(u32, f64)>,
    /// Sum of the weights at each node.
    pub(super) degree: Vec<f64>,
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
    pub(in crate::place) fn from_directed(n: usize, mut e: Vec<(u32, u32, f64)>) -> Graph {
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
    pub(in crate::place) fn neighbours(&self, i: usize) -> &[(u32, f64)] {
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
    pub(super) fn apply(&self, active: &[bool], x: &[f64], y: &mut [f64]) {
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

pub(super) fn dot(a: &[f64], b: &[f64]) -> f64 {
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
pub(super) fn conjugate_gradient_shifted(
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
pub(super) fn eigenpairs_on(
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
