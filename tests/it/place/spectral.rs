//! The analytical start and the default start that runs both.

use lehr_engine::model::Point;
use lehr_engine::place::layout::Layout;
use lehr_engine::place::spectral::{self, Graph};
use lehr_engine::place::{self, AnnealOptions, Start, generate};

use super::annealer::bits;
use super::optimum::grid_ratio;
use super::{close, independent_hpwl};
use crate::boards::{custom_footprint, design, outlined_board, part, rect_shape, rules};

// ---------------------------------------------------------------------------------------
// Analytical start (`place::spectral`): the Laplacian's spectrum, quadratic placement,
// and the grid instance placed from the spectral start.
// ---------------------------------------------------------------------------------------

/// Laplacian eigenvalue of the path P_n: 2 - 2 cos(k pi / n), k = 0..n-1 (Brouwer and
/// Haemers, "Spectra of Graphs", section 1.4.4, from memory).
fn path_eigenvalue(n: usize, k: usize) -> f64 {
    2.0 - 2.0 * (k as f64 * std::f64::consts::PI / n as f64).cos()
}

fn path_edges(n: usize, first: u32) -> Vec<(u32, u32, f64)> {
    (0..n as u32 - 1)
        .map(|i| (first + i, first + i + 1, 1.0))
        .collect()
}

/// The grid graph P_m x P_n (Cartesian product): nodes r * n + c.
fn grid_edges(m: usize, n: usize) -> Vec<(u32, u32, f64)> {
    let mut e = Vec::new();
    for r in 0..m as u32 {
        for c in 0..n as u32 {
            let i = r * n as u32 + c;
            if c + 1 < n as u32 {
                e.push((i, i + 1, 1.0));
            }
            if r + 1 < m as u32 {
                e.push((i, i + n as u32, 1.0));
            }
        }
    }
    e
}

/// Checks a returned eigenpair: unit length, sums to zero, and L v = lambda v.
fn check_pair(g_edges: &[(u32, u32, f64)], n: usize, lambda: f64, v: &[f64]) {
    let norm: f64 = v.iter().map(|x| x * x).sum::<f64>().sqrt();
    assert!(close(norm, 1.0, 1e-9), "norm {norm}");
    let mut lv = vec![0.0; n];
    for &(a, b, w) in g_edges {
        let (a, b) = (a as usize, b as usize);
        lv[a] += w * (v[a] - v[b]);
        lv[b] += w * (v[b] - v[a]);
    }
    let res: f64 = lv
        .iter()
        .zip(v)
        .map(|(l, x)| (l - lambda * x).powi(2))
        .sum::<f64>()
        .sqrt();
    assert!(res < 1e-6, "residual {res}");
}

#[test]
fn spectral_path_eigenvalues_match_the_closed_form() {
    for n in [2usize, 3, 7, 20, 50] {
        let e = path_edges(n, 0);
        let g = Graph::from_edges(n, &e);
        let pairs = spectral::laplacian_eigenpairs(&g, 2);
        // P_n has n - 1 nonzero eigenvalues.
        assert_eq!(pairs.len(), 2.min(n - 1), "n = {n}");
        for (k, (lambda, v)) in pairs.iter().enumerate() {
            let want = path_eigenvalue(n, k + 1);
            assert!(close(*lambda, want, 1e-8), "P_{n}: {lambda} against {want}");
            check_pair(&e, n, *lambda, v);
            assert!(v.iter().sum::<f64>().abs() < 1e-9);
        }
    }
}

#[test]
fn spectral_grid_eigenvalues_are_sums_of_path_eigenvalues() {
    // The Laplacian of a Cartesian product has the sums of the factors' eigenvalues
    // (Brouwer and Haemers, section 1.4.6, from memory).
    for (m, n) in [(6usize, 4usize), (5, 5), (30, 30), (3, 11)] {
        let e = grid_edges(m, n);
        let g = Graph::from_edges(m * n, &e);
        let mut want: Vec<f64> = (0..m)
            .flat_map(|i| (0..n).map(move |j| path_eigenvalue(m, i) + path_eigenvalue(n, j)))
            .collect();
        want.sort_by(f64::total_cmp);
        let pairs = spectral::laplacian_eigenpairs(&g, 3);
        for (k, (lambda, v)) in pairs.iter().enumerate() {
            assert!(
                close(*lambda, want[k + 1], 1e-8),
                "{m} x {n}, #{}: {lambda} against {}",
                k + 2,
                want[k + 1]
            );
            check_pair(&e, m * n, *lambda, v);
        }
    }
}

#[test]
fn spectral_handles_disconnected_graphs_and_isolated_nodes() {
    // P_4 on nodes 0..3, P_6 on 4..9, node 10 alone: the nonzero spectrum is the union
    // of the two paths' spectra; every eigenvector sums to zero on each piece.
    let mut e = path_edges(4, 0);
    e.extend(path_edges(6, 4));
    let g = Graph::from_edges(11, &e);
    let mut want: Vec<f64> = (1..4)
        .map(|k| path_eigenvalue(4, k))
        .chain((1..6).map(|k| path_eigenvalue(6, k)))
        .collect();
    want.sort_by(f64::total_cmp);
    let pairs = spectral::laplacian_eigenpairs(&g, 4);
    assert_eq!(pairs.len(), 4);
    for (k, (lambda, v)) in pairs.iter().enumerate() {
        assert!(
            close(*lambda, want[k], 1e-8),
            "{lambda} against {}",
            want[k]
        );
        check_pair(&e, 11, *lambda, v);
        assert!(v[..4].iter().sum::<f64>().abs() < 1e-9);
        assert!(v[4..10].iter().sum::<f64>().abs() < 1e-9);
        assert_eq!(v[10], 0.0);
    }
    // At most n minus the number of pieces nonzero eigenvalues: 11 - 3 = 8.
    assert_eq!(spectral::laplacian_eigenpairs(&g, 20).len(), 8);
    // No edges at all: nothing to return, no NaN, no panic.
    assert!(spectral::laplacian_eigenpairs(&Graph::from_edges(5, &[]), 2).is_empty());
    assert!(spectral::laplacian_eigenpairs(&Graph::from_edges(0, &[]), 2).is_empty());
}

#[test]
fn quadratic_placement_spaces_a_chain_evenly_between_fixed_ends() {
    // The discrete Laplace equation on a chain: each free node at the mean of its two
    // neighbours, so the values are linear between the ends (handbook result).
    let n = 9;
    let g = Graph::from_edges(n, &path_edges(n, 0));
    let mut fixed = vec![None; n];
    fixed[0] = Some(2.0);
    fixed[n - 1] = Some(18.0);
    let x = spectral::quadratic(&g, &fixed);
    assert!(x[0].is_none() && x[n - 1].is_none());
    for (i, v) in x.iter().enumerate().take(n - 1).skip(1) {
        let want = 2.0 + 16.0 * i as f64 / (n - 1) as f64;
        assert!(
            close(v.unwrap(), want, 1e-10),
            "node {i}: {v:?} against {want}"
        );
    }
    // Weighted: one free node between ends held at 0 (weight 1) and 10 (weight 3) sits
    // at the weighted mean, 7.5.
    let g = Graph::from_edges(3, &[(0, 1, 1.0), (1, 2, 3.0)]);
    let x = spectral::quadratic(&g, &[Some(0.0), None, Some(10.0)]);
    assert!(close(x[1].unwrap(), 7.5, 1e-12));
    // A piece with no fixed node has no unique minimum: None.
    let g = Graph::from_edges(4, &[(0, 1, 1.0), (2, 3, 1.0)]);
    let x = spectral::quadratic(&g, &[Some(1.0), None, None, None]);
    assert_eq!(x, vec![None, Some(1.0), None, None]);
}

fn spectral_opts(seed: u64) -> AnnealOptions {
    AnnealOptions {
        seed,
        start: Start::Spectral,
        ..AnnealOptions::default()
    }
}

/// Issue 2's target on the smaller grid instances: within 10 % of 2N(N-1)p (the
/// optimum, reached by the array itself; CHECK-VALUES.md, "Placement").
#[test]
fn spectral_start_places_the_grid_within_ten_percent() {
    for (n, seed) in [(10u32, 1u64), (20, 1)] {
        let r = grid_ratio(n, 1.0, &spectral_opts(seed), 3);
        assert!(r <= 1.10, "N = {n}: ratio {r:.4}");
    }
    // Another pitch, other seeds.
    let r = grid_ratio(10, 2.54, &spectral_opts(2), 5);
    assert!(r <= 1.10, "N = 10, pitch 2.54: ratio {r:.4}");
}

/// The spread alone (before annealing) of the grid instance is the array itself: the
/// eigenvectors of the two smallest eigenvalues are cosines along the rows and columns
/// (Brouwer and Haemers, from memory), bisection by sorted coordinate cuts along grid
/// lines, and the angle search picks an axis-aligned rotation.
#[test]
fn spectral_start_of_the_grid_is_the_array() {
    for n in [4u32, 9, 16] {
        let d = design(generate::grid_board(n, 1.0, 7));
        let at = spectral::start_positions(&d);
        let mut b = d.board.clone();
        for (p, a) in b.parts.iter_mut().zip(&at) {
            p.at = Some(*a);
        }
        let layout = Layout::new(&design(b)).unwrap();
        let (_, raw) = independent_hpwl(&d, &layout);
        assert!(
            close(raw, generate::grid_optimum(n, 1.0), 1e-9),
            "N = {n}: {raw} against {}",
            generate::grid_optimum(n, 1.0)
        );
    }
}

/// On a sample board with locked parts (quadratic placement about them): a legal
/// result, locked parts untouched, and the same board bit for bit for the same seed.
#[test]
fn spectral_start_on_a_sample_board_is_legal_and_keeps_locked_parts() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-boards/soil-logger.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    assert!(d.board.parts.iter().any(|p| p.locked));
    let a = place::place(&d, &spectral_opts(3), |_| true).unwrap();
    let again = place::place(&d, &spectral_opts(3), |_| true).unwrap();
    assert!(a.report.legal, "{:?}", a.report.conflicts);
    for (p, q) in d.board.parts.iter().zip(&a.board.parts) {
        if p.locked {
            assert_eq!(p.at, q.at, "{}", p.reference);
            assert_eq!(p.rotation, q.rotation, "{}", p.reference);
        }
    }
    assert_eq!(bits(&a.board), bits(&again.board));
}

/// Odd input: one part, no nets, every part locked; no panic, finite positions.
#[test]
fn spectral_start_survives_odd_boards() {
    let one = outlined_board(
        "one",
        rect_shape(0.0, 0.0, 10.0, 10.0),
        rules(0.5, 0.2),
        vec![part(
            "A",
            custom_footprint(&[("1", 0.0, 0.0)], Some((2.0, 2.0))),
            None,
        )],
        vec![],
    );
    let r = place::place(&design(one), &spectral_opts(1), |_| true).unwrap();
    assert!(r.report.legal);
    let mut no_nets = generate::random_board(30, 2);
    no_nets.nets.clear();
    let r = place::place(&design(no_nets), &spectral_opts(1), |_| true).unwrap();
    assert!(r.report.legal, "{:?}", r.report.conflicts);
    assert!(
        r.board
            .parts
            .iter()
            .all(|p| p.at.is_some_and(|a| a.x.is_finite() && a.y.is_finite()))
    );
    let mut locked = generate::random_board(20, 3);
    for (k, p) in locked.parts.iter_mut().enumerate() {
        p.at = Some(Point::new(
            2.0 + 4.0 * (k % 5) as f64,
            2.0 + 4.0 * (k / 5) as f64,
        ));
        p.locked = true;
    }
    let d = design(locked);
    let r = place::place(&d, &spectral_opts(1), |_| true).unwrap();
    for (p, q) in d.board.parts.iter().zip(&r.board.parts) {
        assert_eq!(p.at, q.at);
    }
}

// ---------------------------------------------------------------------------------------
// The default start (`Start::Both`) keeps the better of the two single-start runs and
// counts the work of both. A check of the combination rule, not against an outside
// source.
// ---------------------------------------------------------------------------------------

#[test]
fn both_starts_keep_the_better_run_and_count_both() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-boards/signal-driver.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    // Both starts share the budget: the first gets the odd move.
    let budget = 400_001u64;
    for seed in 1..=2u64 {
        let with = |start, moves| AnnealOptions {
            seed,
            start,
            max_moves: Some(moves),
            ..AnnealOptions::default()
        };
        let given = place::place(&d, &with(Start::Given, budget / 2 + 1), |_| true).unwrap();
        let spectral = place::place(&d, &with(Start::Spectral, budget / 2), |_| true).unwrap();
        let both = place::place(&d, &with(Start::Both, budget), |_| true).unwrap();
        let better = if (spectral.report.legal && !given.report.legal)
            || (spectral.report.legal == given.report.legal
                && spectral.report.energy < given.report.energy)
        {
            &spectral
        } else {
            &given
        };
        assert_eq!(both.board.parts, better.board.parts, "seed {seed}");
        assert_eq!(both.report.start, better.report.start);
        assert_eq!(both.report.energy, better.report.energy);
        assert_eq!(both.report.moves, budget);
        assert_eq!(
            both.report.moves,
            given.report.moves + spectral.report.moves
        );
        assert_eq!(
            both.history.len(),
            given.history.len() + spectral.history.len()
        );
    }
}
