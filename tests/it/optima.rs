//! Boards with a known optimum (`lehr generate grid`, `lehr generate peko`), counted
//! here without lehr's own wirelength code, and the annealer's run structure: the move
//! budget, replica exchange (Boltzmann per chain), threads that change nothing, and the
//! window's engine giving the command line's result.
//!
//! Sources: the construction of placement examples with known optima (Chang, Cong and
//! Xie, ASP-DAC 2003) and its per-net bound (CHECK-VALUES.md, "Placement": k = 2, 3, 4,
//! 5, 6, 8, 10 pins give 1, 2, 2, 3, 3, 4, 5 pitches); replica exchange (Swendsen and
//! Wang 1986; Hukushima and Nemoto 1996, CHECK-VALUES.md): each chain's stationary
//! distribution stays Boltzmann at its own temperature.

use std::collections::HashMap;
use std::time::Duration;

use lehr_engine::model::{Board, Design, Point};
use lehr_engine::place::generate::{self, PekoSpec};
use lehr_engine::place::layout::{Layout, Weights};
use lehr_engine::place::{self, AnnealOptions, Chains, Schedule, Start};
use lehr_engine::worker::{Command, EngineHandle, Event};

use crate::boards::design;
use crate::place::sampler::{chi2_critical_001, enumerate_states, state_key};

/// The smallest `(w - 1) + (h - 1)` over boxes of `w x h` grid points holding `k` points,
/// by brute force over all boxes up to `k x k` (independent of the generator's search).
fn bound_steps(k: u32) -> u32 {
    let mut best = u32::MAX;
    for w in 1..=k {
        for h in 1..=k {
            if w * h >= k {
                best = best.min(w + h - 2);
            }
        }
    }
    best
}

/// HPWL of a board's nets with part `P{i+1}` (or `G{i+1}`) at `at[i]`, every pad at its
/// part's origin (as the generators make them), counted from the net's pin names.
fn hpwl_at(b: &Board, at: &HashMap<String, Point>) -> f64 {
    let mut total = 0.0;
    for n in &b.nets {
        let pts: Vec<Point> = n
            .pins
            .iter()
            .map(|pin| at[pin.split('.').next().unwrap()])
            .collect();
        let (x0, x1) = pts
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.x), b.max(p.x)));
        let (y0, y1) = pts
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.y), b.max(p.y)));
        total += n.weight * ((x1 - x0) + (y1 - y0));
    }
    total
}

#[test]
fn per_net_bounds_are_the_published_values() {
    // CHECK-VALUES.md: k = 2, 3, 4, 5, 6, 8, 10 give 1, 2, 2, 3, 3, 4, 5 pitches.
    for (k, steps) in [(2, 1), (3, 2), (4, 2), (5, 3), (6, 3), (8, 4), (10, 5)] {
        assert_eq!(bound_steps(k), steps, "k = {k}");
    }
}

/// The recorded optimum is the sum of the per-net bounds, counted here from the nets'
/// sizes; the array the nets were drawn on reaches it; every part is on a net; net
/// sizes stay within 2 to 10; the scattered start is legal (one part per cell).
#[test]
fn peko_optimum_is_the_sum_of_per_net_bounds_and_the_array_reaches_it() {
    for (rows, cols, slack, seed) in [(12, 12, 1.0, 1), (9, 17, 1.0, 5), (10, 10, 1.5, 3)] {
        let spec = PekoSpec {
            slack,
            ..PekoSpec::new(rows, cols, seed)
        };
        let b = generate::peko_board(&spec);
        let p = spec.pitch;
        let recorded = b.optimum.as_ref().unwrap().wirelength_mm;
        let bound: f64 = b
            .nets
            .iter()
            .map(|n| {
                assert!((2..=10).contains(&n.pins.len()), "{} pins", n.pins.len());
                f64::from(bound_steps(n.pins.len() as u32)) * p
            })
            .sum();
        assert!(
            (recorded - bound).abs() < 1e-9 * bound,
            "{recorded} vs {bound}"
        );
        let array: HashMap<String, Point> = generate::peko_reference_positions(&spec)
            .into_iter()
            .enumerate()
            .map(|(i, at)| (format!("P{}", i + 1), at))
            .collect();
        let reached = hpwl_at(&b, &array);
        assert!(
            (reached - bound).abs() < 1e-9 * bound,
            "{reached} vs {bound}"
        );
        // Every part on a net.
        let mut on_net = std::collections::HashSet::new();
        for n in &b.nets {
            for pin in &n.pins {
                on_net.insert(pin.split('.').next().unwrap().to_string());
            }
        }
        assert_eq!(on_net.len(), (rows * cols) as usize);
        // The start is legal: distinct cells inside the board.
        let d = design(b);
        let l = Layout::new(&d).unwrap();
        assert!(l.terms().overlap < 1e-9 && l.terms().outside < 1e-9);
        assert_eq!(d.board.parts.len(), (rows * cols) as usize);
    }
}

/// The grid at any aspect: optimum (R (C - 1) + C (R - 1)) p, reached by the array.
#[test]
fn grid_optimum_at_any_aspect() {
    for (rows, cols) in [(3, 7), (5, 20), (1, 9)] {
        let b = generate::grid_rect_board(rows, cols, 2.0, 1.0, 4);
        let want = f64::from(rows * (cols - 1) + cols * (rows - 1)) * 2.0;
        assert_eq!(b.optimum.as_ref().unwrap().wirelength_mm, want);
        let array: HashMap<String, Point> = (0..rows * cols)
            .map(|i| {
                (
                    format!("G{}", i + 1),
                    Point::new(f64::from(i % cols) * 2.0, f64::from(i / cols) * 2.0),
                )
            })
            .collect();
        assert!((hpwl_at(&b, &array) - want).abs() < 1e-9);
    }
}

/// A board with room to spare records the same optimum and is larger by about the
/// slack asked for.
#[test]
fn slack_boards_keep_the_optimum() {
    let full = generate::peko_board(&PekoSpec::new(10, 10, 2));
    let roomy = generate::peko_board(&PekoSpec {
        slack: 1.5,
        ..PekoSpec::new(10, 10, 2)
    });
    assert_eq!(full.optimum, roomy.optimum);
    let ratio = roomy.outline.area() / full.outline.area();
    assert!((1.5..1.75).contains(&ratio), "{ratio}");
}

/// Placement with four times the default budget finds the optimum of small multi-pin
/// boards (measured in release: 8 x 8 boards of seeds 1..3 all at the optimum in about
/// 4 s each; with the default budget, 6.4 million moves, seeds 1 and 3 ended at 1.088 and
/// 1.066, seed 2 at the optimum). Seeds 1 and 3 here.
#[test]
fn placement_reaches_a_small_multi_pin_optimum() {
    for seed in [1, 3] {
        let b = generate::peko_board(&PekoSpec::new(8, 8, seed));
        let opt = b.optimum.as_ref().unwrap().wirelength_mm;
        let d = design(b);
        let p = place::place(
            &d,
            &AnnealOptions {
                seed,
                effort: 4.0,
                ..AnnealOptions::default()
            },
            |_| true,
        )
        .unwrap();
        assert!(p.report.legal);
        let r = p.report.wirelength_mm / opt;
        assert!(r < 1.0 + 1e-9, "seed {seed}: {r}");
    }
}

/// Every schedule, start and chain count spends the move budget exactly.
#[test]
fn every_schedule_spends_the_budget_exactly() {
    let d = design(generate::peko_board(&PekoSpec::new(6, 6, 1)));
    for schedule in Schedule::ALL {
        for (start, replicas) in [(Start::Given, 1), (Start::Spectral, 3), (Start::Both, 2)] {
            let budget = 123_457;
            let p = place::place(
                &d,
                &AnnealOptions {
                    schedule,
                    start,
                    replicas,
                    max_moves: Some(budget),
                    ..AnnealOptions::default()
                },
                |_| true,
            )
            .unwrap();
            assert_eq!(p.report.moves, budget, "{schedule} {start:?} {replicas}");
        }
    }
}

/// Annealing beats zero-temperature descent from the same start with the same budget
/// on a filled multi-pin board (the premise of annealing, Kirkpatrick, Gelatt and Vecchi
/// 1983; measured 0.62 to 0.66 for seeds 1 and 2).
#[test]
fn annealing_beats_descent_on_a_multi_pin_board() {
    let d = design(generate::peko_board(&PekoSpec::new(12, 12, 1)));
    for seed in 1..=2 {
        let o = AnnealOptions {
            seed,
            start: Start::Given,
            max_moves: Some(3_000_000),
            ..AnnealOptions::default()
        };
        let a = place::place(&d, &o, |_| true).unwrap().report;
        let dsc = place::place(
            &d,
            &AnnealOptions {
                schedule: Schedule::Descent,
                ..o.clone()
            },
            |_| true,
        )
        .unwrap()
        .report;
        assert_eq!(a.moves, dsc.moves);
        assert!(
            a.wirelength_mm < 0.85 * dsc.wirelength_mm,
            "seed {seed}: annealing {} vs descent {}",
            a.wirelength_mm,
            dsc.wirelength_mm
        );
    }
}

/// The same seed and chain count give the same placement bit for bit whatever the
/// number of threads.
#[test]
fn threads_change_nothing() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-boards/soil-logger.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    let run = |threads| {
        place::place(
            &d,
            &AnnealOptions {
                seed: 9,
                replicas: 3,
                threads,
                max_moves: Some(600_000),
                ..AnnealOptions::default()
            },
            |_| true,
        )
        .unwrap()
    };
    let one = run(1);
    for t in [2, 3] {
        let other = run(t);
        assert_eq!(one.board, other.board, "{t} threads");
        assert_eq!(one.report.energy.to_bits(), other.report.energy.to_bits());
    }
}

/// The window's engine, run to the end with the default options, gives the command
/// line's placement: same positions and turns, bit for bit.
#[test]
fn the_engine_gives_the_command_lines_placement() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    let opts = AnnealOptions {
        seed: 3,
        max_moves: Some(400_000),
        ..AnnealOptions::default()
    };
    let cli = place::place(&d, &opts, |_| true).unwrap();
    for batch in [1_000, 77_777] {
        let h = EngineHandle::spawn(d.clone(), opts.clone());
        h.send(Command::SetMovesPerTick(batch));
        h.send(Command::Run);
        let t = std::time::Instant::now();
        let finished = loop {
            assert!(t.elapsed() < Duration::from_secs(120), "no finish");
            if let Some(Event::Finished(f)) = h.recv_timeout(Duration::from_secs(5)) {
                break f;
            }
        };
        for (a, b) in finished.board.parts.iter().zip(&cli.board.parts) {
            assert_eq!(a.at, b.at, "batch {batch}: {}", a.reference);
            assert_eq!(a.rotation, b.rotation, "batch {batch}: {}", a.reference);
        }
        assert_eq!(finished.report.moves, cli.report.moves);
    }
}

// Replica exchange keeps every chain Boltzmann at its own temperature.

/// Three parts on a 2 x 2 cell board (as the sampler board of the place tests): 96
/// states, cell assignments times A's turn; the proposal is symmetric there.
fn sampler_design() -> Design {
    let src = r#"(
        name: "exchange",
        outline: Rect(min: (-0.5, -0.5), max: (1.5, 1.5)),
        rules: (clearance: 0.2, placement_grid: 1.0),
        parts: [
            (reference: "A", at: (0.0, 0.0), footprint: Custom(pads: [
                (number: "1", centre: (0.2, 0.1), width: 0.1, height: 0.1, shape: Rectangle),
                (number: "2", centre: (-0.2, 0.0), width: 0.1, height: 0.1, shape: Rectangle),
            ], courtyard: (min: (-0.3, -0.3), max: (0.3, 0.3)))),
            (reference: "B", at: (1.0, 0.0), footprint: Custom(pads: [
                (number: "1", centre: (0.0, 0.0), width: 0.1, height: 0.1, shape: Rectangle),
                (number: "2", centre: (0.0, 0.0), width: 0.1, height: 0.1, shape: Rectangle),
            ], courtyard: (min: (-0.3, -0.3), max: (0.3, 0.3)))),
            (reference: "C", at: (0.0, 1.0), footprint: Custom(pads: [
                (number: "1", centre: (0.0, 0.0), width: 0.1, height: 0.1, shape: Rectangle),
                (number: "2", centre: (0.0, 0.0), width: 0.1, height: 0.1, shape: Rectangle),
            ], courtyard: (min: (-0.3, -0.3), max: (0.3, 0.3)))),
        ],
        nets: [
            (name: "N1", pins: ["A.1", "B.1"], weight: 1.0),
            (name: "N2", pins: ["A.2", "C.1"], weight: 1.5),
            (name: "N3", pins: ["B.2", "C.2"], weight: 0.7),
        ],
    )"#;
    lehr_engine::io::parse_board(src, "exchange").unwrap()
}

/// Three chains at fixed temperatures T, 1.6 T and 2.56 T trade temperatures after
/// every stage; the states seen at each rung (whatever chain holds it) follow the
/// Boltzmann distribution at that rung's temperature (chi-square, 95 degrees of
/// freedom, p = 0.001), and the test has power: the coldest rung's counts reject the
/// distribution of the hottest.
#[test]
fn replica_exchange_keeps_each_rung_boltzmann() {
    let d = sampler_design();
    let w = Weights {
        wirelength: 1.0,
        overlap: 10.0,
        outside: 10.0,
        keepout: 10.0,
    };
    let all = enumerate_states(&d, &w);
    assert_eq!(all.len(), 96);
    let index: HashMap<[u8; 4], usize> = all.iter().enumerate().map(|(i, s)| (s.0, i)).collect();
    let energies: Vec<f64> = all.iter().map(|s| s.1).collect();
    let (lo, hi) = energies
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &e| (a.min(e), b.max(e)));
    let t = (hi - lo) / 20f64.ln();
    let ratio = 1.6;
    let opts = AnnealOptions {
        seed: 11,
        replicas: 3,
        start: Start::Given,
        weights: Some(w),
        start_temperature: Some(t),
        rotate_fraction: 0.3,
        directed_fraction: 0.0,
        max_moves: Some(3 * 2_400_000),
        stages: 24_000,
        ..AnnealOptions::default()
    };
    let mut set = Chains::new(&d, &opts, 0, 3 * 2_400_000).unwrap();
    set.hold(t, ratio);
    let mut counts = vec![vec![0u64; 96]; 3];
    while !set.is_done() {
        set.run_round();
        for (rung, c) in counts.iter_mut().enumerate() {
            c[index[&state_key(set.at_rung(rung).layout())]] += 1;
        }
    }
    let (tried, taken, _) = set.swap_stats();
    assert!(taken > tried / 10, "trades taken {taken} of {tried}");
    let boltzmann = |temp: f64| -> Vec<f64> {
        let wts: Vec<f64> = energies.iter().map(|e| (-(e - lo) / temp).exp()).collect();
        let z: f64 = wts.iter().sum();
        wts.iter().map(|x| x / z).collect()
    };
    let chi2 = |c: &[u64], p: &[f64]| -> f64 {
        let n: u64 = c.iter().sum();
        c.iter()
            .zip(p)
            .map(|(&o, &pi)| (o as f64 - pi * n as f64).powi(2) / (pi * n as f64))
            .sum()
    };
    let crit = chi2_critical_001(95.0);
    for (rung, c) in counts.iter().enumerate() {
        let temp = t * ratio.powi(rung as i32);
        let x = chi2(c, &boltzmann(temp));
        assert!(x < crit, "rung {rung}: chi-square {x:.1} >= {crit:.1}");
    }
    let y = chi2(&counts[0], &boltzmann(t * ratio * ratio));
    assert!(y > 3.0 * crit, "power: {y:.1}");
}
