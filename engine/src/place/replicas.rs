//! Replica exchange (parallel tempering): several annealing chains of one start, each
//! at its own rung of a temperature ladder, that trade temperatures now and then.
//!
//! Chain `k` of `R` runs the schedule's temperature times `ladder^slot`, slot 0 the
//! coldest. After every stage, neighbouring slots (even pairs one round, odd pairs the
//! next) trade temperatures with probability min(1, exp((1/T_i - 1/T_j)(E_i - E_j)))
//! (Swendsen and Wang 1986; Geyer 1991; Hukushima and Nemoto 1996), which keeps every
//! chain's stationary distribution Boltzmann at its own temperature while letting a good
//! layout found warm reach the cold end. The ladder's ratio is tuned as the run goes so
//! that about [`SWAP_TARGET`] of the trades are taken (common practice: 20 to 40 %).
//!
//! Deterministic whatever the threads: each chain has its own seeded generator and runs
//! a whole stage between trades, the trades are decided by the set's own generator in a
//! fixed order, and the chains of a round may run on any threads in any order.

use super::anneal::{Annealer, StageReport};
use super::options::{AnnealOptions, PlaceError};
use super::rng::Rng;
use crate::model::Design;

/// Share of temperature trades the ladder is tuned to.
pub const SWAP_TARGET: f64 = 0.3;

/// The seed of chain `k` of the start numbered `start`: the run's own seed for the
/// first chain of the first start (so one chain is a plain anneal with that seed), a
/// well-mixed function of the three otherwise (SplitMix64's finaliser).
pub fn chain_seed(seed: u64, start: u64, k: u64) -> u64 {
    if start == 0 && k == 0 {
        return seed;
    }
    let mut z = seed.wrapping_add(0x9E37_79B9_7F4A_7C15u64.wrapping_mul(1 + k + (start << 16)));
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The chains of one start and their ladder.
pub struct Chains {
    pub chains: Vec<Annealer>,
    /// `slot[i]` is chain i's rung (0 coldest).
    slot: Vec<usize>,
    rng: Rng,
    ladder: f64,
    round: u64,
    swaps_tried: u64,
    swaps_taken: u64,
    /// Running share of trades taken (for tuning the ladder).
    swap_rate: f64,
    /// Whether the ladder's ratio is tuned to [`SWAP_TARGET`] (off: fixed).
    tune: bool,
    /// The coldest chain's report after each round, moves counted over all chains.
    history: Vec<StageReport>,
    /// Stages each chain had ended when the current round began.
    stages_at_round: usize,
}

impl Chains {
    /// `replicas` chains on `design` (its positions are the start), sharing `budget`
    /// moves. All start at the temperature the first chain measures; chain `k` uses
    /// [`chain_seed`]`(opts.seed, start, k)`.
    pub fn new(
        design: &Design,
        opts: &AnnealOptions,
        start: u64,
        budget: u64,
    ) -> Result<Chains, PlaceError> {
        let r = opts.replicas.max(1) as u64;
        let share = |k: u64| (budget / r + u64::from(k < budget % r)).max(1);
        let first = Annealer::new(
            design,
            AnnealOptions {
                seed: chain_seed(opts.seed, start, 0),
                max_moves: Some(share(0)),
                ..opts.clone()
            },
        )?;
        let t0 = first.start_temperature();
        let mut chains = vec![first];
        for k in 1..r {
            chains.push(Annealer::new(
                design,
                AnnealOptions {
                    seed: chain_seed(opts.seed, start, k),
                    max_moves: Some(share(k)),
                    start_temperature: Some(t0),
                    ..opts.clone()
                },
            )?);
        }
        let movable = (0..chains[0].layout().part_count() as u32)
            .filter(|&i| !chains[0].layout().is_locked(i))
            .count()
            .max(1);
        // A first ladder: trades between rungs ln(r) apart are taken about half the
        // time when the energy's spread is about sqrt(N) times a typical move's change
        // (specific heat growing with the number of parts); tuned from there.
        let ladder = 1.0 + 1.0 / (movable as f64).sqrt();
        let mut set = Chains {
            slot: (0..chains.len()).collect(),
            chains,
            rng: Rng::new(chain_seed(opts.seed, start, 1 << 20)),
            ladder,
            round: 0,
            swaps_tried: 0,
            swaps_taken: 0,
            swap_rate: SWAP_TARGET,
            tune: true,
            history: Vec::new(),
            stages_at_round: 0,
        };
        set.apply_ladder();
        Ok(set)
    }

    fn apply_ladder(&mut self) {
        for (c, &s) in self.chains.iter_mut().zip(&self.slot) {
            c.set_temperature_scale(self.ladder.powi(s as i32));
        }
    }

    /// Holds every chain at a fixed temperature: `t` times `ratio^rung`, with the
    /// ratio no longer tuned (fixed-temperature sampling; tests).
    pub fn hold(&mut self, t: f64, ratio: f64) {
        self.tune = false;
        self.ladder = ratio.max(1.0);
        for c in &mut self.chains {
            c.hold_temperature(t);
        }
        self.apply_ladder();
    }

    /// The chain at rung `s`.
    pub fn at_rung(&self, s: usize) -> &Annealer {
        &self.chains[self.slot.iter().position(|&x| x == s).unwrap_or(0)]
    }

    /// Moves left before the current round's trades: the rest of the stage of each
    /// chain that has not ended it.
    pub fn round_moves_left(&self) -> u64 {
        self.chains
            .iter()
            .filter(|c| !c.is_done() && c.history().len() <= self.stages_at_round)
            .map(Annealer::stage_moves_left)
            .sum()
    }

    /// Rounds ended so far.
    pub fn rounds(&self) -> u64 {
        self.round
    }

    /// Whether every chain has spent its budget.
    pub fn is_done(&self) -> bool {
        self.chains.iter().all(Annealer::is_done)
    }

    /// Moves made by all chains together.
    pub fn moves(&self) -> u64 {
        self.chains.iter().map(Annealer::moves).sum()
    }

    pub fn accepted(&self) -> u64 {
        self.chains.iter().map(Annealer::accepted).sum()
    }

    /// Moves all chains together will have made at the end.
    pub fn budget(&self) -> u64 {
        self.chains.iter().map(Annealer::budget).sum()
    }

    /// The chain at the coldest rung.
    pub fn coldest(&self) -> usize {
        self.slot.iter().position(|&s| s == 0).unwrap_or(0)
    }

    /// The coldest chain's reports, one per round, moves counted over all chains.
    pub fn history(&self) -> &[StageReport] {
        &self.history
    }

    /// Share of the temperature trades tried that were taken, and the ladder's ratio.
    pub fn swap_stats(&self) -> (u64, u64, f64) {
        (self.swaps_tried, self.swaps_taken, self.ladder)
    }

    /// Ends a round: every chain has run a stage (by [`Self::run_stage_each`] or on
    /// threads). Trades temperatures between neighbouring rungs and records the coldest
    /// chain's report.
    pub fn end_round(&mut self) {
        let n = self.chains.len();
        if n > 1 {
            let mut by_slot = vec![0usize; n];
            for (i, &s) in self.slot.iter().enumerate() {
                by_slot[s] = i;
            }
            let (mut tried, mut taken) = (0u32, 0u32);
            let first = (self.round % 2) as usize;
            for s in (first..n - 1).step_by(2) {
                let (i, j) = (by_slot[s], by_slot[s + 1]);
                let (a, b) = (&self.chains[i], &self.chains[j]);
                if a.is_done() || b.is_done() {
                    continue;
                }
                let (ti, tj) = (a.temperature(), b.temperature());
                if !(ti > 0.0 && tj > 0.0) {
                    continue;
                }
                let x = (1.0 / ti - 1.0 / tj) * (a.energy() - b.energy());
                tried += 1;
                let u = self.rng.unit();
                if x >= 0.0 || u < x.exp() {
                    taken += 1;
                    let (lo, hi) = (i.min(j), i.max(j));
                    let (left, right) = self.chains.split_at_mut(hi);
                    left[lo].exchange_temperatures(&mut right[0]);
                    self.slot.swap(i, j);
                }
            }
            if tried > 0 {
                self.swaps_tried += u64::from(tried);
                self.swaps_taken += u64::from(taken);
                let rate = f64::from(taken) / f64::from(tried);
                self.swap_rate = 0.9 * self.swap_rate + 0.1 * rate;
            }
            if tried > 0 && self.tune {
                // Closer rungs when too few trades are taken, wider when too many.
                let l = self.ladder.ln() * (0.5 * (self.swap_rate - SWAP_TARGET)).exp();
                self.ladder = l.exp().clamp(1.0005, 4.0);
                // The trade moved each chain's factor with its rung; refit all to the
                // new ratio (the ratio changes by a factor near 1 per round).
                for (c, &s) in self.chains.iter_mut().zip(&self.slot) {
                    let want = self.ladder.powi(s as i32);
                    c.set_temperature_scale(want);
                }
            }
        }
        self.round += 1;
        self.stages_at_round = self
            .chains
            .iter()
            .map(|c| c.history().len())
            .max()
            .unwrap_or(0);
        let moves = self.moves();
        let coldest = self.coldest();
        if let Some(r) = self.chains[coldest].history().last() {
            self.history.push(StageReport {
                stage: self.round as u32,
                moves,
                chain: coldest as u32,
                ..*r
            });
        }
    }

    /// One round on the calling thread: the rest of a stage of each chain, then the
    /// trades.
    pub fn run_round(&mut self) {
        for c in &mut self.chains {
            if !c.is_done() {
                c.run_stage();
            }
        }
        self.end_round();
    }

    /// Runs about `n` moves on the calling thread, chain after chain, each to the end of
    /// its stage, then the trades when every chain has ended its stage; returns the moves
    /// made. Stops within a stage when `n` runs out, so any batch size gives the same
    /// chains and trades as whole rounds (the window's speeds, down to one move at a
    /// time). `n` = 0 makes no move.
    pub fn run_moves(&mut self, n: u64) -> u64 {
        let before = self.moves();
        let mut left = n;
        while left > 0 && !self.is_done() {
            let next = self
                .chains
                .iter()
                .position(|c| !c.is_done() && c.history().len() < self.stages_at_round + 1);
            match next {
                Some(i) => {
                    let c = &mut self.chains[i];
                    let m0 = c.moves();
                    c.run_moves(left.min(c.stage_moves_left().max(1)));
                    left = left.saturating_sub(c.moves() - m0);
                }
                None => self.end_round(),
            }
        }
        // A round whose stages all ended trades at once (so the picture and the trades
        // never wait for the next batch).
        if !self.is_done()
            && self
                .chains
                .iter()
                .all(|c| c.is_done() || c.history().len() > self.stages_at_round)
        {
            self.end_round();
        }
        self.moves() - before
    }

    /// Puts each chain's best state back and returns the index of the chain with the
    /// lowest energy (the first on a tie).
    pub fn settle(&mut self) -> usize {
        let mut best = 0;
        for c in &mut self.chains {
            c.restore_best();
        }
        for (i, c) in self.chains.iter().enumerate() {
            if c.energy() < self.chains[best].energy() {
                best = i;
            }
        }
        best
    }
}
