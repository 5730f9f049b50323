//! The annealer: its start temperature, reproducibility, annealing against descent,
//! and block moves.

use lehr_engine::model::Design;
use lehr_engine::model::board::Board;
use lehr_engine::place::anneal::temperature_for_acceptance;
use lehr_engine::place::{self, AnnealOptions, Annealer, Schedule, Start, generate};

use crate::boards::design;

// ---------------------------------------------------------------------------------------
// 7. Start temperature.
//    Source: Kirkpatrick, Gelatt and Vecchi, Science 220, 1983 (the rule as CHECK-VALUES.md
//    attributes it): T0 = mean(dE+) / ln(1/chi0); T0 / mean(dE+) = 4.48 for chi0 = 0.8 and
//    19.50 for chi0 = 0.95 (computed values in CHECK-VALUES.md). The engine solves
//    mean(exp(-dE/T0)) = chi0 over sampled uphill changes, which is the rule for equal
//    changes and the rate the Metropolis test then accepts for unequal ones.
// ---------------------------------------------------------------------------------------

/// A generated random board; its parts start unplaced, so the annealer scatters them.
pub(super) fn random_design(count: u32, seed: u64) -> Design {
    design(generate::random_board(count, seed))
}

#[test]
fn start_temperature_follows_the_acceptance_rule() {
    // Kirkpatrick's rule for equal changes, which the solver must reproduce.
    assert!((1.0 / (1.0 / 0.8f64).ln() - 4.48).abs() < 0.005);
    assert!((1.0 / (1.0 / 0.95f64).ln() - 19.50).abs() < 0.005);
    for (chi, factor) in [(0.8, 4.48), (0.95, 19.50)] {
        let t = temperature_for_acceptance(&[3.0; 7], chi);
        assert!((t / 3.0 - factor).abs() < 0.005, "{chi}: {}", t / 3.0);
    }

    // The engine solves for the temperature at which the sampled uphill moves are
    // accepted at the rate asked for. Our own sample of the engine's proposals at the
    // start state (other draws than the engine's) must see that rate; then check what
    // the chain does: at each step, probe the proposals at the current state and
    // average min(1, exp(-dE/T0)) over the uphill ones, then take one Metropolis step.
    // The state improves as it goes, so the rate drifts down; what the chain accepts must
    // match what the probes predict.
    let d = random_design(200, 21);
    for chi0 in [0.3, 0.8] {
        let mut a = Annealer::new(
            &d,
            AnnealOptions {
                seed: 4,
                start_acceptance: chi0,
                max_moves: Some(1_000_000),
                ..AnnealOptions::default()
            },
        )
        .unwrap();
        let t0 = a.start_temperature();
        let (mut acc0, mut up0) = (0.0, 0u32);
        for _ in 0..20_000 {
            let de = a.probe(false);
            if de > 0.0 {
                acc0 += (-de / t0).exp();
                up0 += 1;
            }
        }
        let chi_start = acc0 / f64::from(up0);
        assert!(
            (chi_start - chi0).abs() < 0.03,
            "chi0 {chi0}: uphill acceptance at the start {chi_start:.3}"
        );
        let stage = a.moves_per_stage().min(5000);
        let (mut acc, mut up) = (0.0, 0u32);
        let (mut uphill_taken, mut e_prev) = (0u32, a.energy());
        for _ in 0..stage {
            for _ in 0..2 {
                let de = a.probe(false);
                if de > 0.0 {
                    acc += (-de / t0).exp();
                    up += 1;
                }
            }
            a.sample_at(t0, 1, |_| {});
            if a.energy() > e_prev {
                uphill_taken += 1;
            }
            e_prev = a.energy();
        }
        let chi = acc / f64::from(up);
        let uphill_share = f64::from(up) / (2.0 * stage as f64);
        // Cross-check with what the chain did: accepted uphill steps = steps x share x
        // rate.
        let taken = f64::from(uphill_taken) / stage as f64;
        assert!(
            chi <= chi_start + 0.02,
            "chi0 {chi0}: {chi:.3} over the stage"
        );
        assert!(
            (taken / (uphill_share * chi) - 1.0).abs() < 0.1,
            "chi0 {chi0}: taken {taken:.3}, predicted {:.3}",
            uphill_share * chi
        );
    }
}

// ---------------------------------------------------------------------------------------
// 8. Reproducibility. Source: the invariant in src/place/mod.rs (same design, options and
//    seed give the same result bit for bit); common practice for seeded annealers.
// ---------------------------------------------------------------------------------------

pub(super) fn bits(b: &Board) -> Vec<(u64, u64, u64)> {
    b.parts
        .iter()
        .map(|p| {
            let at = p.at.unwrap();
            (at.x.to_bits(), at.y.to_bits(), p.rotation.to_bits())
        })
        .collect()
}

#[test]
fn same_seed_same_board_bit_for_bit() {
    let d = random_design(25, 3);
    let run = |seed| {
        place::place(
            &d,
            &AnnealOptions {
                seed,
                ..AnnealOptions::default()
            },
            |_| true,
        )
        .unwrap()
    };
    let (a, b) = (run(5), run(5));
    assert_eq!(bits(&a.board), bits(&b.board));
    assert_eq!(a.report.energy.to_bits(), b.report.energy.to_bits());
    assert_eq!(
        (a.report.moves, a.report.accepted),
        (b.report.moves, b.report.accepted)
    );
    assert_eq!(a.history, b.history);
    let ron = |b: &Board| ron::to_string(b).unwrap();
    assert_eq!(ron(&a.board), ron(&b.board));
    // Different seeds: different placements (each pair of three seeds).
    let (c, e) = (run(6), run(7));
    assert_ne!(bits(&a.board), bits(&c.board));
    assert_ne!(bits(&a.board), bits(&e.board));
    assert_ne!(bits(&c.board), bits(&e.board));
}

// ---------------------------------------------------------------------------------------
// 10. Annealing beats zero-temperature descent on the grid instance with the same moves.
//     Source: Kirkpatrick, Gelatt and Vecchi 1983 (the premise of annealing: accepting
//     uphill moves escapes the local minima a descent stops in); common practice.
// ---------------------------------------------------------------------------------------

/// The annealer runs from the scatter (`Start::Given`) until it freezes (about 80,000 to
/// 105,000 moves on this 8 x 8 grid); the descent then gets exactly as many moves from
/// the same start. Measured for seeds 1..8: annealing 112 to 168 mm, descent 194 to
/// 228 mm (optimum 112). Note: a geometric
/// schedule cut short by `max_moves` is not the comparison to make; it stops while still
/// hot (at 50,000 moves it ended at 277 to 366 mm, worse than descent).
#[test]
fn annealing_beats_descent_with_the_same_move_budget() {
    for seed in 1..=2u64 {
        let d = design(generate::grid_board(8, 1.0, seed));
        let anneal = place::place(
            &d,
            &AnnealOptions {
                seed,
                start: Start::Given,
                ..AnnealOptions::default()
            },
            |_| true,
        )
        .unwrap()
        .report;
        let opts = AnnealOptions {
            seed,
            schedule: Schedule::Descent,
            max_moves: Some(anneal.moves),
            start: Start::Given,
            ..AnnealOptions::default()
        };
        let descent = place::place(&d, &opts, |_| true).unwrap().report;
        assert_eq!(descent.moves, anneal.moves);
        assert!(anneal.legal && descent.legal);
        assert!(
            anneal.wirelength_mm < 0.9 * descent.wirelength_mm,
            "seed {seed}: anneal {} vs descent {}",
            anneal.wirelength_mm,
            descent.wirelength_mm
        );
    }
}

/// Moves of many parts at once (block moves exchange two windows' contents) keep the
/// incremental terms equal to a full recomputation too. Source: the layout invariant,
/// checked as in test 1.
#[test]
fn block_moves_keep_incremental_terms_exact() {
    let d = design(generate::random_board(150, 9));
    let opts = AnnealOptions {
        seed: 4,
        shift_fraction: 0.3,
        mirror_fraction: 0.3,
        scatter: true,
        ..AnnealOptions::default()
    };
    let mut an = Annealer::new(&d, opts).unwrap();
    let t0 = an.start_temperature();
    for round in 0..30 {
        an.sample_at(t0 * 0.3, 300, |_| {});
        let t = an.layout().terms();
        let f = an.layout().full_terms();
        for (a, b, what) in [
            (t.wirelength, f.wirelength, "wirelength"),
            (t.overlap, f.overlap, "overlap"),
            (t.outside, f.outside, "outside"),
            (t.keepout, f.keepout, "keepout"),
        ] {
            assert!(
                (a - b).abs() <= 1e-9 * b.abs().max(1.0),
                "round {round}: {what} {a} vs full {b}"
            );
        }
    }
}
