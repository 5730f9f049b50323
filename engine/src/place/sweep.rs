//! Batch comparison of cooling schedules: every combination of boards, schedules (with
//! their parameter values), starts and seeds, each placed at the same exact move budget,
//! the runs side by side on the machine's cores.
//!
//! Each run is an ordinary [`super::place`] on one thread, so its result depends only on
//! its board, options and seed; the runs are independent and come back in the plan's
//! order whatever the thread timing, so a sweep is reproducible to the byte (timings
//! aside).

use rayon::prelude::*;

use super::options::{AnnealOptions, PlaceError, Start};
use super::schedule::Schedule;
use super::{Placed, thread_count};
use crate::model::Design;

/// One run of a sweep.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepRun {
    /// Index of the board in the sweep's list.
    pub board: usize,
    /// The schedule, with any parameter values set by hand.
    pub schedule: Schedule,
    /// Where the run starts.
    pub start: Start,
    /// Seed of the run's random generator.
    pub seed: u64,
}

/// What one run gave.
#[derive(Clone, Debug)]
pub struct SweepResult {
    /// Moves the run made (its budget).
    pub moves: u64,
    /// Wirelength of the final placement (after the legal finish).
    pub wirelength_mm: f64,
    /// Whether the final placement has no conflicts.
    pub legal: bool,
    /// Wall time of the run.
    pub seconds: f64,
    /// Moves per second of the run.
    pub moves_per_second: f64,
    /// The lowest energy seen so far, after each stage: (moves, energy).
    pub best_so_far: Vec<(u64, f64)>,
}

/// Every combination of the boards, schedules, starts and seeds, in that nesting order
/// (boards outermost).
pub fn plan(
    boards: usize,
    schedules: &[Schedule],
    starts: &[Start],
    seeds: &[u64],
) -> Vec<SweepRun> {
    let mut runs = Vec::with_capacity(boards * schedules.len() * starts.len() * seeds.len());
    for board in 0..boards {
        for &schedule in schedules {
            for &start in starts {
                for &seed in seeds {
                    runs.push(SweepRun {
                        board,
                        schedule,
                        start,
                        seed,
                    });
                }
            }
        }
    }
    runs
}

/// The options of one run: `base` with the run's schedule, start and seed, on one
/// thread (the sweep spreads the runs, not the chains, over the cores).
pub fn run_options(base: &AnnealOptions, run: &SweepRun) -> AnnealOptions {
    AnnealOptions {
        schedule: run.schedule,
        start: run.start,
        seed: run.seed,
        threads: 1,
        ..base.clone()
    }
}

/// Runs every planned run on `threads` threads (0: one per core), calling `done` after
/// each run finishes (from the worker threads, in any order). Results come back in the
/// plan's order.
pub fn run(
    designs: &[Design],
    runs: &[SweepRun],
    base: &AnnealOptions,
    threads: usize,
    done: &(dyn Fn() + Sync),
) -> Vec<Result<SweepResult, PlaceError>> {
    let one = |r: &SweepRun| {
        let out = super::place(&designs[r.board], &run_options(base, r), |_| true).map(summarise);
        done();
        out
    };
    match rayon::ThreadPoolBuilder::new()
        .num_threads(thread_count(threads))
        .build()
    {
        Ok(pool) => pool.install(|| runs.par_iter().map(one).collect()),
        Err(_) => runs.iter().map(one).collect(),
    }
}

fn summarise(p: Placed) -> SweepResult {
    let r = &p.report;
    SweepResult {
        moves: r.moves,
        wirelength_mm: r.wirelength_mm,
        legal: r.legal,
        seconds: r.seconds,
        moves_per_second: r.moves_per_second,
        best_so_far: p
            .history
            .iter()
            .scan(f64::INFINITY, |best, s| {
                *best = best.min(s.best_energy);
                Some((s.moves, *best))
            })
            .collect(),
    }
}

/// Mean, standard deviation (sample, n - 1), lowest and highest of `xs`; `None` when
/// empty.
pub fn spread(xs: &[f64]) -> Option<(f64, f64, f64, f64)> {
    if xs.is_empty() {
        return None;
    }
    let n = xs.len() as f64;
    let mean = xs.iter().sum::<f64>() / n;
    let var = if xs.len() > 1 {
        xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)
    } else {
        0.0
    };
    let lo = xs.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    Some((mean, var.sqrt(), lo, hi))
}
