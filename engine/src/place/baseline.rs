//! A plain slot-swap annealer: the reference lehr's annealer is measured against.
//!
//! Each move swaps the places of two movable parts drawn at random from the whole board
//! (no window, no turns, no displacements into free space), accepted by the Metropolis
//! test; the temperature falls geometrically from the start temperature (80 % of
//! sampled uphill swaps accepted, Kirkpatrick, Gelatt and Vecchi's rule) to the end
//! temperature of [`super::anneal::end_temperature`] over exactly the move budget, and the
//! best state seen is kept. This is what a general-purpose annealing library does with
//! a swap move, written on lehr's incremental energy so that it runs as fast per move as
//! lehr's own annealer: the bench compares quality at an equal number of moves.

use super::anneal::end_temperature;
use super::layout::{Layout, PartMove, Weights};
use super::rng::Rng;
use crate::model::{Design, Point};

/// The outcome of a baseline run.
#[derive(Clone, Debug, PartialEq)]
pub struct BaselineResult {
    /// Raw HPWL of the best state seen, mm.
    pub wirelength_mm: f64,
    /// Energy of that state with the design's default weights.
    pub energy: f64,
    pub moves: u64,
}

/// Runs the plain slot-swap annealer from the design's positions (every part must have
/// one) for exactly `moves` moves. `None` when fewer than two parts can move or a part
/// has no position.
pub fn plain_swap(design: &Design, seed: u64, moves: u64) -> Option<BaselineResult> {
    let mut layout = Layout::new(design).ok()?;
    let weights = Weights::for_design(design);
    let movable: Vec<u32> = (0..layout.part_count() as u32)
        .filter(|&i| !layout.is_locked(i))
        .collect();
    if movable.len() < 2 {
        return None;
    }
    let mut rng = Rng::new(seed);
    let n = movable.len() as u32;
    let draw = |rng: &mut Rng, layout: &Layout| -> [PartMove; 2] {
        let a = movable[rng.below(n) as usize];
        let mut b = movable[rng.below(n - 1) as usize];
        if b == a {
            b = movable[(n - 1) as usize];
        }
        let (pa, pb): (Point, Point) = (layout.position(a), layout.position(b));
        [
            PartMove {
                part: a,
                at: pb,
                quarter: layout.quarter(a),
            },
            PartMove {
                part: b,
                at: pa,
                quarter: layout.quarter(b),
            },
        ]
    };
    // Start temperature from sampled uphill swaps.
    let (mut sum, mut count) = (0.0, 0u32);
    for _ in 0..1000 {
        let m = draw(&mut rng, &layout);
        let de = layout.evaluate(&m).energy(&weights);
        layout.revert();
        if de > 0.0 {
            sum += de;
            count += 1;
        }
    }
    let t0 = if count > 0 {
        (sum / f64::from(count)) / (1.0f64 / 0.8).ln()
    } else {
        1.0
    };
    let t_end = end_temperature(design, &weights).min(t0);
    let mut energy = layout.terms().energy(&weights);
    let mut best = (energy, layout.positions().to_vec(), layout.wirelength_mm());
    // Geometric cooling over the budget, one temperature per block of moves.
    const BLOCK: u64 = 1000;
    let blocks = moves.div_ceil(BLOCK).max(1);
    let ratio = (t_end / t0).powf(1.0 / blocks as f64);
    let mut t = t0;
    let mut done = 0u64;
    while done < moves {
        let k = BLOCK.min(moves - done);
        for _ in 0..k {
            let m = draw(&mut rng, &layout);
            let de = layout.evaluate(&m).energy(&weights);
            if de <= 0.0 || rng.unit() < (-de / t).exp() {
                layout.commit();
                energy += de;
            } else {
                layout.revert();
            }
        }
        done += k;
        if energy < best.0 {
            best = (energy, layout.positions().to_vec(), layout.wirelength_mm());
        }
        t *= ratio;
    }
    Some(BaselineResult {
        wirelength_mm: best.2,
        energy: best.0,
        moves: done,
    })
}
