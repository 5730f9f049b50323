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

mod bisect;
mod eigen;

use super::anneal::Annealer;
use super::options::{AnnealOptions, Start};
use crate::model::board::rect_to_board;
use crate::model::{Design, Point};

pub use self::bisect::spread;
use self::bisect::weighted_hpwl;
use self::eigen::{
    EIGEN_CANDIDATES, EIGEN_RESIDUAL, EIGEN_SOLVE_TOLERANCE, conjugate_gradient_shifted, dot,
    eigenpairs_on,
};
pub use self::eigen::{Graph, laplacian_eigenpairs, quadratic};

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
/// Rounds of anchored quadratic placement after the spectral spread.
const ANCHOR_ROUNDS: usize = 30;
/// The anchors' first weight, in mean part-graph degrees, and its growth per round.
const ANCHOR_START: f64 = 0.02;
const ANCHOR_GROWTH: f64 = 1.25;

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
