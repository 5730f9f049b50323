//! Placement by simulated annealing.
//!
//! - [`layout`]: the problem: part positions and the incremental energy;
//! - [`schedule`]: cooling schedules;
//! - [`anneal`]: moves, Metropolis acceptance and the stage loop;
//! - [`legal`]: snapping and the final repair, with a report of what remains;
//! - [`generate`]: synthetic boards (the known-optimal grid, random benchmark boards);
//! - [`multilevel`]: clusters first, then parts;
//! - [`spectral`]: an analytical start (quadratic and spectral placement);
//! - [`mst`]: minimum spanning trees of pins (unrouted connections, wiring estimates).
//!
//! **Invariant:** nothing here does I/O or spawns threads; the same design, options and
//! seed give the same result bit for bit.

pub mod anneal;
pub mod baseline;
mod fast;
pub mod generate;
mod hash;
pub mod layout;
pub mod legal;
pub mod mst;
pub mod multilevel;
pub mod options;
mod outcome;
pub mod replicas;
pub mod rng;
pub mod schedule;
pub mod spectral;
pub mod sweep;

use std::time::Instant;

pub use anneal::{Annealer, StageReport};
pub use layout::{Layout, PartMove, Terms, Weights};
pub use legal::{Conflict, ConflictKind};
pub use options::{AnnealOptions, PlaceError, Start, default_budget};
pub use outcome::{PlaceReport, Placed, board_at, board_with_positions, finish};
pub use replicas::Chains;
pub use schedule::Schedule;

use crate::model::Design;

/// Places every unlocked part: anneal over the move budget from the start (or starts)
/// `opts.start` names, on `opts.replicas` chains each, then the legal finish of the best
/// chain of each start; the better result is kept. `observe` sees a report after every
/// round of stages and may stop the run by returning false. The chains run on
/// `opts.threads` threads (all cores for 0); the result does not depend on it.
pub fn place(
    design: &Design,
    opts: &AnnealOptions,
    observe: impl FnMut(&StageReport) -> bool,
) -> Result<Placed, PlaceError> {
    if opts.multilevel && opts.start == Start::Given {
        return multilevel::place(design, opts, observe);
    }
    let mut placer = Placer::new(design, opts)?;
    placer.run_all(observe);
    placer.finish()
}

/// One start's run: the design it starts from and its chains.
pub struct Run {
    pub start: Start,
    pub design: Design,
    pub chains: Chains,
}

/// A placement in progress: one [`Run`] per start, each a set of replica chains. The
/// command line runs the starts side by side ([`Placer::run_all`]); the window advances
/// them one after the other ([`Placer::run_moves`]), which gives the same result.
pub struct Placer {
    design: Design,
    opts: AnnealOptions,
    runs: Vec<Run>,
    /// The run [`Placer::run_moves`] advances.
    active: usize,
    /// After [`Placer::finish`]: the run and chain whose result was kept (shown from
    /// then on).
    kept: Option<(usize, usize)>,
    clock: Instant,
}

/// Threads to use for `threads` (0: one per core).
pub fn thread_count(threads: usize) -> usize {
    if threads > 0 {
        threads
    } else {
        std::thread::available_parallelism().map_or(1, usize::from)
    }
}

impl Placer {
    /// Sets up the runs: the move budget (`opts.max_moves`, or the default budget for
    /// the board times `opts.effort`) is shared equally among the starts and, within
    /// each, among its chains.
    pub fn new(design: &Design, opts: &AnnealOptions) -> Result<Placer, PlaceError> {
        options::check_options(opts)?;
        let clock = Instant::now();
        let movable = design.board.parts.iter().filter(|p| !p.locked).count();
        let budget = opts
            .max_moves
            .unwrap_or_else(|| default_budget(movable, opts.effort));
        let starts: &[Start] = match opts.start {
            Start::Given => &[Start::Given],
            Start::Spectral => &[Start::Spectral],
            Start::Both => &[Start::Given, Start::Spectral],
        };
        let k = starts.len() as u64;
        let mut runs = Vec::with_capacity(starts.len());
        for (i, &start) in starts.iter().enumerate() {
            let share = (budget / k + u64::from((i as u64) < budget % k)).max(1);
            let (d, o) = match start {
                Start::Spectral => {
                    let d = spectral::start_design(design);
                    let o = spectral::refine_options(&d, opts);
                    (d, o)
                }
                _ => (
                    design.clone(),
                    AnnealOptions {
                        start: Start::Given,
                        ..opts.clone()
                    },
                ),
            };
            // Chain seeds follow the start, not its place in the list, so a start run
            // alone gives the same chains as within `Both`.
            let number = match start {
                Start::Spectral => 1,
                _ => 0,
            };
            let _ = i;
            let chains = Chains::new(&d, &o, number, share)?;
            runs.push(Run {
                start,
                design: d,
                chains,
            });
        }
        Ok(Placer {
            design: design.clone(),
            opts: opts.clone(),
            runs,
            active: 0,
            kept: None,
            clock,
        })
    }

    pub fn runs(&self) -> &[Run] {
        &self.runs
    }

    pub fn runs_mut(&mut self) -> &mut [Run] {
        &mut self.runs
    }

    /// The run the window shows and [`Self::run_moves`] advances.
    pub fn active(&self) -> usize {
        self.active.min(self.runs.len() - 1)
    }

    /// The chain the window shows: the coldest of the active run, or after the finish
    /// the one whose result was kept.
    pub fn shown(&self) -> &Annealer {
        if let Some((r, c)) = self.kept {
            return &self.runs[r].chains.chains[c];
        }
        let r = &self.runs[self.active()];
        &r.chains.chains[r.chains.coldest()]
    }

    /// The start the shown chain belongs to.
    pub fn shown_start(&self) -> Start {
        self.runs[self.kept.map_or(self.active(), |k| k.0)].start
    }

    /// Every chain of every run, for changes that apply to all (weights, schedule, a
    /// part moved or locked by hand).
    pub fn chains_mut(&mut self) -> impl Iterator<Item = &mut Annealer> {
        self.runs
            .iter_mut()
            .flat_map(|r| r.chains.chains.iter_mut())
    }

    /// The chains of the run the window shows.
    pub fn shown_run_mut(&mut self) -> &mut Chains {
        let r = self.kept.map_or(self.active(), |k| k.0);
        &mut self.runs[r].chains
    }

    /// A reheat ([`Annealer::reheat`]) of every chain of the shown run, which becomes
    /// the active one again.
    pub fn reheat(&mut self, fraction: f64) {
        let r = self.kept.map_or(self.active(), |k| k.0);
        self.kept = None;
        self.active = r;
        for c in &mut self.runs[r].chains.chains {
            c.reheat(fraction);
        }
    }

    /// Runs about `n` moves of the active run on the calling thread (moving on to the
    /// next run when it is done); any batch size gives the same result as
    /// [`Self::run_all`]. Returns the moves made.
    pub fn run_moves(&mut self, n: u64) -> u64 {
        let mut done = 0;
        while done < n.max(1) && !self.is_done() {
            while self.active < self.runs.len() && self.runs[self.active].chains.is_done() {
                self.active += 1;
            }
            let Some(r) = self.runs.get_mut(self.active) else {
                break;
            };
            let m = r.chains.run_moves(n.max(1) - done);
            done += m;
            if m == 0 && !r.chains.is_done() {
                break;
            }
        }
        done
    }

    pub fn is_done(&self) -> bool {
        self.runs.iter().all(|r| r.chains.is_done())
    }

    /// The history from round `from` on: each run's coldest chain after each round,
    /// one run after the other, with stages and moves counted on from the runs before.
    pub fn history_from(&self, from: usize) -> Vec<StageReport> {
        let mut out = Vec::new();
        let (mut shift_moves, mut shift_stages, mut skip) = (0u64, 0u32, from);
        for r in &self.runs {
            let h = r.chains.history();
            let k = skip.min(h.len());
            skip -= k;
            out.extend(h[k..].iter().map(|s| StageReport {
                stage: s.stage + shift_stages,
                moves: s.moves + shift_moves,
                start: r.start,
                ..*s
            }));
            shift_moves += r.chains.moves();
            shift_stages += h.len() as u32;
        }
        out
    }

    /// Rounds (of a stage per chain) ended so far, every run together.
    pub fn rounds(&self) -> u64 {
        self.runs.iter().map(|r| r.chains.rounds()).sum()
    }

    /// Moves left before the active run's next trades.
    pub fn round_moves_left(&self) -> u64 {
        self.runs[self.active()].chains.round_moves_left()
    }

    pub fn accepted(&self) -> u64 {
        self.runs.iter().map(|r| r.chains.accepted()).sum()
    }

    pub fn options(&self) -> &AnnealOptions {
        &self.opts
    }

    /// Moves made so far, all runs and chains together.
    pub fn moves(&self) -> u64 {
        self.runs.iter().map(|r| r.chains.moves()).sum()
    }

    /// The whole budget, all runs and chains together.
    pub fn budget(&self) -> u64 {
        self.runs.iter().map(|r| r.chains.budget()).sum()
    }

    /// Runs every start to the end, side by side: each round runs a stage of every
    /// chain that has moves left, on `opts.threads` threads, then each start's trades.
    /// `observe` sees the first unfinished start's coldest chain after each round (moves
    /// counted over everything), and stops the run by returning false.
    pub fn run_all(&mut self, mut observe: impl FnMut(&StageReport) -> bool) {
        let threads = thread_count(self.opts.threads);
        let pool = if threads > 1 {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .ok()
        } else {
            None
        };
        while !self.is_done() {
            let busy: Vec<bool> = self.runs.iter().map(|r| !r.chains.is_done()).collect();
            {
                let mut work: Vec<&mut Annealer> = self
                    .runs
                    .iter_mut()
                    .flat_map(|r| r.chains.chains.iter_mut())
                    .filter(|c| !c.is_done())
                    .collect();
                match &pool {
                    Some(pool) => {
                        use rayon::prelude::*;
                        pool.install(|| work.par_iter_mut().for_each(|c| c.run_stage()));
                    }
                    None => work.iter_mut().for_each(|c| c.run_stage()),
                }
            }
            for (r, was_busy) in self.runs.iter_mut().zip(busy) {
                if was_busy {
                    r.chains.end_round();
                }
            }
            let moves = self.moves();
            let shown = self
                .runs
                .iter()
                .find(|r| !r.chains.is_done())
                .or(self.runs.last());
            if let Some(r) = shown.and_then(|r| r.chains.history().last()) {
                let report = StageReport { moves, ..*r };
                if !observe(&report) {
                    break;
                }
            }
        }
        self.active = self.runs.len() - 1;
    }

    /// The legal finish of each start's best chain and the report of the better (legal
    /// before not legal, then the lower energy; the first start on a tie). Moves, stages
    /// and time count every start; the history holds each start's coldest chain, one
    /// start after the other.
    pub fn finish(&mut self) -> Result<Placed, PlaceError> {
        let mut results: Vec<Placed> = Vec::with_capacity(self.runs.len());
        let mut best_chain = Vec::with_capacity(self.runs.len());
        for r in &mut self.runs {
            let best = r.chains.settle();
            best_chain.push(best);
            let mut p = finish(&self.design, &mut r.chains.chains[best], self.clock)?;
            p.report.start = r.start.name().to_string();
            results.push(p);
        }
        let better = |a: &PlaceReport, b: &PlaceReport| {
            (b.legal && !a.legal) || (b.legal == a.legal && b.energy < a.energy)
        };
        let mut kept = 0;
        for (i, p) in results.iter().enumerate() {
            if better(&results[kept].report, &p.report) {
                kept = i;
            }
        }
        let moves: u64 = self.runs.iter().map(|r| r.chains.moves()).sum();
        let accepted: u64 = self.runs.iter().map(|r| r.chains.accepted()).sum();
        let history = self.history_from(0);
        self.kept = Some((kept, best_chain[kept]));
        let mut placed = results.swap_remove(kept);
        let r = &mut placed.report;
        r.moves = moves;
        r.accepted = accepted;
        r.stages = history.len() as u32;
        r.seconds = self.clock.elapsed().as_secs_f64();
        r.moves_per_second = moves as f64 / r.seconds.max(1e-9);
        r.seed = self.opts.seed;
        r.replicas = self.opts.replicas;
        for run in &self.runs {
            let (tried, taken, _) = run.chains.swap_stats();
            r.exchanges_tried += tried;
            r.exchanges_taken += taken;
        }
        r.ladder = self.runs[kept].chains.swap_stats().2;
        if let Some(record) = &mut placed.board.placement {
            record.moves = moves;
            record.seed = r.seed;
            record.start = r.start.clone();
            record.replicas = r.replicas;
        }
        placed.history = history;
        Ok(placed)
    }
}
