//! The engine's worker thread and its messages: the only place in the library that spawns
//! a thread.
//!
//! A user interface owns an [`EngineHandle`]: it sends [`Command`]s and drains [`Event`]s
//! without ever blocking. The worker owns the placement state (a [`Placer`]) and sends
//! [`Snapshot`]s at a bounded rate (about 30 per second while running), so the window can
//! draw a 1,000-part board without slowing the annealer down. Only owned, `Send` data
//! crosses the channel. A panic while handling a command is caught, reported as
//! [`Event::Failed`], and the worker goes back to the last board it was given.
//!
//! The worker also routes the current placement ([`Command::Route`], stopped early by
//! [`Command::CancelRoute`]) and checks it against the design rules ([`Command::Check`]).
//! It keeps the routed copper together with the part positions it was routed for; as
//! soon as a part stands anywhere else (annealing, a move by hand, a reset to other
//! positions), the copper is dropped and [`Snapshot::copper_cleared`] says why.

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, Sender, TryRecvError};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use crate::model::board::Copper;
use crate::model::{Board, Design, Point, Quarter};
use crate::place::{
    self, AnnealOptions, Conflict, PlaceReport, Placer, Schedule, StageReport, Start, Terms,
    Weights,
};
use crate::route::{RouteOptions, RouteProgress, RouteResult};
use crate::rules::Violation;

/// Interval between snapshots while running.
pub const SNAPSHOT_INTERVAL: Duration = Duration::from_millis(33);

/// Shortest interval between two [`Event::RouteProgress`] while routing.
pub const ROUTE_PROGRESS_INTERVAL: Duration = Duration::from_millis(50);

/// What the interface asks of the worker.
#[derive(Clone, Debug)]
pub enum Command {
    /// Replace the board (and start over with the current options).
    Load(Box<Design>),
    /// Run until paused or out of budget.
    Run,
    Pause,
    /// Run one temperature stage (of the shown chain), then pause.
    Step,
    /// Raise the temperature to this fraction of the start temperature.
    Reheat(f64),
    /// Start over from the loaded board's positions with the current options.
    Reset,
    /// New options (schedule, seed, weights, effort, ...): applied by starting over.
    SetOptions(AnnealOptions),
    /// Change the schedule without starting over (the temperature carries over).
    SetSchedule(Schedule),
    /// Change the energy weights without starting over.
    SetWeights(Weights),
    /// Moves per batch: 1 for a move at a time (teaching), large for full speed.
    SetMovesPerTick(u64),
    /// Start over from the loaded board with zero-temperature descent.
    DescentOnly,
    /// Move a part by hand.
    MovePart {
        part: u32,
        at: Point,
        quarter: Quarter,
    },
    /// Lock or unlock a part.
    Lock {
        part: u32,
        locked: bool,
    },
    /// Stop annealing and run the legal finish; answers with [`Event::Finished`].
    Finish,
    /// Pause, then route the parts where they stand now: answers with
    /// [`Event::RouteProgress`] while it works and [`Event::Routed`] at the end. The
    /// copper replaces any the board had and stays until a part moves.
    Route(RouteOptions),
    /// Stop a route in progress after the net it is on (the copper so far is kept and is
    /// legal). Takes effect at once, even while the worker is busy routing, because
    /// [`EngineHandle::send`] also raises a shared flag the router reads.
    CancelRoute,
    /// Check the parts where they stand now, with the copper if it is still valid,
    /// against the design rules: answers with [`Event::Checked`].
    Check,
    /// Ask for a snapshot now.
    Refresh,
    /// End the worker.
    Shutdown,
}

/// A sample for the plots, taken after each batch of moves.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct PlotPoint {
    pub moves: u64,
    pub energy: f64,
    pub best: f64,
    pub terms: Terms,
    pub temperature: f64,
    /// Acceptance ratio over the batch.
    pub acceptance: f64,
}

/// The state of the run as the interface sees it.
#[derive(Clone, Debug, Default)]
pub struct Snapshot {
    pub positions: Vec<Point>,
    pub quarters: Vec<Quarter>,
    pub locked: Vec<bool>,
    pub terms: Terms,
    pub weights: Option<Weights>,
    pub energy: f64,
    pub best_energy: f64,
    pub temperature: f64,
    pub start_temperature: f64,
    /// Acceptance ratio of the last completed stage.
    pub acceptance: f64,
    /// Displacement window, mm.
    pub window: f64,
    pub moves: u64,
    /// The move budget, every start and chain together.
    pub budget: u64,
    pub accepted: u64,
    pub stage: u32,
    pub running: bool,
    /// Out of budget.
    pub done: bool,
    /// Measured over the last second of running.
    pub moves_per_second: f64,
    /// Plot samples since the previous snapshot.
    pub samples: Vec<PlotPoint>,
    /// Stage reports since the previous snapshot.
    pub stages: Vec<StageReport>,
    /// Raw HPWL, mm.
    pub wirelength_mm: f64,
    pub schedule: Option<Schedule>,
    /// The schedule's parameter as its last step set it (alpha, beta or lambda).
    pub schedule_parameter: f64,
    /// The start the shown chain belongs to, and how many chains each start has.
    pub start: Option<Start>,
    pub replicas: u32,
    pub seed: u64,
    /// Counts fresh starts (load, reset, new options, descent, finish, recovery from a
    /// panic): a viewer clears its plots when it changes, so samples of an earlier run
    /// still in the channel never mix with the new one.
    pub epoch: u64,
    /// Per part, the conflicts it is in now: [`CONFLICT_OVERLAP`], [`CONFLICT_OUTSIDE`],
    /// [`CONFLICT_KEEPOUT`] or'ed together (0 when clear).
    pub conflicts: Vec<u8>,
    /// The copper for the parts where they stand (routed here, or the loaded board's),
    /// `None` when there is none or it was dropped because parts moved.
    pub copper: Option<Arc<Copper>>,
    /// Changes whenever [`Snapshot::copper`] is set or dropped, so a viewer copies the
    /// copper only when it changed.
    pub copper_version: u64,
    /// Why the copper was dropped, until the next route.
    pub copper_cleared: Option<String>,
}

/// [`Snapshot::conflicts`] bit: the part's courtyard overlaps another's.
pub const CONFLICT_OVERLAP: u8 = 1;
/// [`Snapshot::conflicts`] bit: the part reaches outside the board outline.
pub const CONFLICT_OUTSIDE: u8 = 2;
/// [`Snapshot::conflicts`] bit: the part intrudes on a keep-out.
pub const CONFLICT_KEEPOUT: u8 = 4;

/// What the worker tells the interface.
#[derive(Debug)]
pub enum Event {
    Snapshot(Arc<Snapshot>),
    /// The legal finish is done: the placed board and its report.
    Finished(Box<Finished>),
    /// A command could not be carried out (bad options, no board).
    Error(String),
    /// The worker panicked; it has gone back to the last board it was given.
    Failed(String),
    /// How a route is going (at most every [`ROUTE_PROGRESS_INTERVAL`]).
    RouteProgress(RouteProgress),
    /// A route has ended (finished or cancelled); its copper is now the snapshot's.
    Routed(Box<Routed>),
    /// The answer to [`Command::Check`].
    Checked(Box<Checked>),
}

/// Result of [`Command::Route`].
#[derive(Clone, Debug)]
pub struct Routed {
    /// The router's result: copper, routed and unrouted nets with reasons, track length,
    /// vias, seconds, and whether it was cancelled.
    pub result: RouteResult,
    /// The board as routed: parts where they stood, with the copper.
    pub board: Board,
}

/// Result of [`Command::Check`].
#[derive(Clone, Debug)]
pub struct Checked {
    /// Every rule broken; empty for a clean board.
    pub violations: Vec<Violation>,
    /// Part positions and turns the check was made for, so a viewer can tell when its
    /// list is out of date.
    pub positions: Vec<Point>,
    pub quarters: Vec<Quarter>,
    /// Whether the board checked had copper ([`Snapshot::copper_version`] it was).
    pub copper_version: u64,
    pub with_copper: bool,
    /// Time the check took.
    pub seconds: f64,
}

/// Result of [`Command::Finish`].
#[derive(Clone, Debug)]
pub struct Finished {
    pub board: Board,
    pub report: PlaceReport,
    pub conflicts: Vec<Conflict>,
}

/// The interface's end of the channel. Dropping it shuts the worker down.
pub struct EngineHandle {
    tx: Sender<Command>,
    rx: Receiver<Event>,
    thread: Option<JoinHandle<()>>,
    /// Read by the router between nets; raised by [`Command::CancelRoute`].
    cancel: Arc<AtomicBool>,
}

impl EngineHandle {
    /// Starts the worker on `design` with `opts`.
    pub fn spawn(design: Design, opts: AnnealOptions) -> EngineHandle {
        let (tx, crx) = mpsc::channel();
        let (etx, rx) = mpsc::channel();
        let cancel = Arc::new(AtomicBool::new(false));
        let flag = cancel.clone();
        let thread = std::thread::Builder::new()
            .name("lehr-engine".into())
            .spawn(move || Worker::new(design, opts, etx, flag).run(crx))
            .expect("the system can start a thread");
        EngineHandle {
            tx,
            rx,
            thread: Some(thread),
            cancel,
        }
    }

    /// Sends a command; false if the worker has gone. [`Command::CancelRoute`] also
    /// raises the cancel flag at once (the worker may be busy routing), and
    /// [`Command::Route`] lowers it, so a cancel sent before a route does not stop it.
    pub fn send(&self, c: Command) -> bool {
        match c {
            Command::Route(_) => self.cancel.store(false, Ordering::Relaxed),
            Command::CancelRoute => self.cancel.store(true, Ordering::Relaxed),
            _ => {}
        }
        self.tx.send(c).is_ok()
    }

    /// The next event, if one is waiting (never blocks).
    pub fn try_recv(&self) -> Option<Event> {
        self.rx.try_recv().ok()
    }

    /// Waits up to `timeout` for the next event (tests and the command line).
    pub fn recv_timeout(&self, timeout: Duration) -> Option<Event> {
        self.rx.recv_timeout(timeout).ok()
    }
}

impl Drop for EngineHandle {
    fn drop(&mut self) {
        let _ = self.tx.send(Command::Shutdown);
        self.cancel.store(true, Ordering::Relaxed);
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}

struct Worker {
    design: Design,
    opts: AnnealOptions,
    placer: Option<Placer>,
    events: Sender<Event>,
    running: bool,
    stop_after_stage: Option<u32>,
    moves_per_tick: u64,
    samples: Vec<PlotPoint>,
    stages_sent: usize,
    last_snapshot: Instant,
    rate_window: (Instant, u64),
    moves_per_second: f64,
    epoch: u64,
    cancel: Arc<AtomicBool>,
    copper: Option<RoutedCopper>,
    copper_version: u64,
    copper_cleared: Option<String>,
}

/// Copper and the placement it belongs to.
struct RoutedCopper {
    copper: Arc<Copper>,
    positions: Vec<Point>,
    quarters: Vec<Quarter>,
}

impl Worker {
    fn new(
        design: Design,
        opts: AnnealOptions,
        events: Sender<Event>,
        cancel: Arc<AtomicBool>,
    ) -> Worker {
        let mut w = Worker {
            design,
            opts,
            placer: None,
            events,
            running: false,
            stop_after_stage: None,
            moves_per_tick: 20_000,
            samples: Vec::new(),
            stages_sent: 0,
            last_snapshot: Instant::now(),
            rate_window: (Instant::now(), 0),
            moves_per_second: 0.0,
            epoch: 0,
            cancel,
            copper: None,
            copper_version: 0,
            copper_cleared: None,
        };
        w.load_fresh();
        w
    }

    /// A fresh start on a newly given board, with the board's own copper.
    fn load_fresh(&mut self) {
        self.start_over();
        self.adopt_board_copper();
        self.send_snapshot();
    }

    /// The loaded board's own copper, valid for the parts where the file has them.
    fn adopt_board_copper(&mut self) {
        self.copper = None;
        self.copper_cleared = None;
        self.copper_version += 1;
        let c = &self.design.board.copper;
        if let Some(a) = &self.placer
            && (!c.tracks.is_empty() || !c.vias.is_empty())
        {
            let l = a.shown().layout();
            self.copper = Some(RoutedCopper {
                copper: Arc::new(c.clone()),
                positions: l.positions().to_vec(),
                quarters: l.quarters().to_vec(),
            });
        }
    }

    /// Drops the copper if any part no longer stands where it was routed.
    fn validate_copper(&mut self) {
        let Some(rc) = &self.copper else {
            return;
        };
        let moved = match &self.placer {
            Some(a) => {
                let l = a.shown().layout();
                l.positions() != rc.positions.as_slice() || l.quarters() != rc.quarters.as_slice()
            }
            None => true,
        };
        if moved {
            self.copper = None;
            self.copper_version += 1;
            self.copper_cleared = Some(
                "the copper was removed because parts moved after routing; route again".into(),
            );
        }
    }

    fn restart(&mut self) {
        self.start_over();
        self.send_snapshot();
    }

    fn start_over(&mut self) {
        self.epoch += 1;
        self.running = false;
        self.stop_after_stage = None;
        self.samples.clear();
        self.stages_sent = 0;
        self.moves_per_second = 0.0;
        match Placer::new(&self.design, &self.opts) {
            Ok(a) => self.placer = Some(a),
            Err(e) => {
                self.placer = None;
                let _ = self.events.send(Event::Error(e.to_string()));
            }
        }
    }

    fn run(mut self, commands: Receiver<Command>) {
        loop {
            // Take every waiting command; block only while idle.
            let next = if self.running {
                match commands.try_recv() {
                    Ok(c) => Some(c),
                    Err(TryRecvError::Empty) => None,
                    Err(TryRecvError::Disconnected) => return,
                }
            } else {
                match commands.recv_timeout(Duration::from_millis(250)) {
                    Ok(c) => Some(c),
                    Err(RecvTimeoutError::Timeout) => None,
                    Err(RecvTimeoutError::Disconnected) => return,
                }
            };
            if let Some(c) = next {
                if matches!(c, Command::Shutdown) {
                    return;
                }
                self.guarded(|w| w.handle(c));
                continue;
            }
            if self.running {
                self.guarded(Worker::tick);
            }
        }
    }

    /// Runs `f`, turning a panic into [`Event::Failed`] and a fresh start.
    fn guarded(&mut self, f: impl FnOnce(&mut Worker)) {
        if let Err(p) = catch_unwind(AssertUnwindSafe(|| f(self))) {
            let msg = p
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| p.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "unknown panic".into());
            let _ = self.events.send(Event::Failed(format!(
                "the placement engine failed ({msg}); it went back to the last loaded board"
            )));
            self.restart();
        }
    }

    fn handle(&mut self, c: Command) {
        match c {
            Command::Load(d) => {
                self.design = *d;
                self.load_fresh();
            }
            Command::Run => {
                self.stop_after_stage = None;
                self.running = self.placer.as_ref().is_some_and(|a| !a.is_done());
                self.rate_window = (Instant::now(), self.moves());
                self.send_snapshot();
            }
            Command::Pause => {
                self.running = false;
                self.send_snapshot();
            }
            Command::Step => {
                if let Some(a) = &self.placer
                    && !a.is_done()
                {
                    self.stop_after_stage = Some(a.rounds() as u32 + 1);
                    self.running = true;
                    self.rate_window = (Instant::now(), self.moves());
                }
            }
            Command::Reheat(f) => {
                if let Some(a) = &mut self.placer {
                    a.reheat(f);
                }
                self.send_snapshot();
            }
            Command::Reset => self.restart(),
            Command::SetOptions(o) => {
                self.opts = o;
                self.restart();
            }
            Command::SetSchedule(s) => {
                self.opts.schedule = s;
                if let Some(a) = &mut self.placer {
                    a.chains_mut().for_each(|c| c.set_schedule(s));
                }
                self.send_snapshot();
            }
            Command::SetWeights(w) => {
                self.opts.weights = Some(w);
                if let Some(a) = &mut self.placer {
                    a.chains_mut().for_each(|c| c.set_weights(w));
                }
                self.send_snapshot();
            }
            Command::SetMovesPerTick(n) => self.moves_per_tick = n.max(1),
            Command::DescentOnly => {
                self.opts.schedule = Schedule::Descent;
                self.restart();
                self.running = self.placer.is_some();
                self.rate_window = (Instant::now(), 0);
            }
            Command::MovePart { part, at, quarter } => {
                if let Some(a) = &mut self.placer
                    && (part as usize) < a.shown().layout().part_count()
                    && at.is_finite()
                {
                    a.chains_mut().for_each(|c| c.move_part(part, at, quarter));
                }
                self.send_snapshot();
            }
            Command::Lock { part, locked } => {
                if let Some(p) = self.design.board.parts.get_mut(part as usize) {
                    p.locked = locked;
                    if let Some(a) = &mut self.placer {
                        // A part locked where it stands keeps that position on reset,
                        // and in every chain.
                        let l = a.shown().layout();
                        let (at, q) = (l.position(part), l.quarter(part));
                        if locked {
                            p.at = Some(at);
                            p.rotation = q.degrees();
                        }
                        a.chains_mut().for_each(|c| {
                            if locked {
                                c.move_part(part, at, q);
                            }
                            c.set_locked(part, locked);
                        });
                    }
                }
                self.send_snapshot();
            }
            Command::Finish => {
                self.running = false;
                self.finish_run();
                self.send_snapshot();
            }
            Command::Route(o) => {
                self.running = false;
                self.route(&o);
                self.send_snapshot();
            }
            Command::CancelRoute => {}
            Command::Check => self.check(),
            Command::Refresh => self.send_snapshot(),
            Command::Shutdown => {}
        }
    }

    /// The board with the parts where the annealer has them now (no copper).
    fn current_design(&self) -> Result<Design, String> {
        let a = self.placer.as_ref().ok_or("no board is loaded")?;
        let l = a.shown().layout();
        let mut board = place::board_at(&self.design, l.positions(), l.quarters());
        board.copper = Copper::default();
        crate::model::resolve(board).map_err(|problems| {
            format!(
                "the board is not valid as placed: {}",
                crate::model::problems_line(&problems)
            )
        })
    }

    /// Routes the current placement; see [`Command::Route`].
    fn route(&mut self, opts: &RouteOptions) {
        let design = match self.current_design() {
            Ok(d) => d,
            Err(e) => {
                let _ = self.events.send(Event::Error(e));
                return;
            }
        };
        let events = self.events.clone();
        let mut last: Option<Instant> = None;
        let mut progress = |p: &RouteProgress| {
            // Reports that carry the copper so far always go out (the router spaces them).
            if p.copper.is_some() || last.is_none_or(|t| t.elapsed() >= ROUTE_PROGRESS_INTERVAL) {
                last = Some(Instant::now());
                let _ = events.send(Event::RouteProgress(p.clone()));
            }
        };
        match crate::route::route(&design, opts, &self.cancel, &mut progress) {
            Ok(result) => {
                let l = self.placer.as_ref().map(|p| p.shown().layout());
                let copper = Arc::new(result.copper.clone());
                self.copper = l.map(|l| RoutedCopper {
                    copper: copper.clone(),
                    positions: l.positions().to_vec(),
                    quarters: l.quarters().to_vec(),
                });
                self.copper_version += 1;
                self.copper_cleared = None;
                let mut board = design.board;
                board.copper = result.copper.clone();
                let _ = self
                    .events
                    .send(Event::Routed(Box::new(Routed { result, board })));
            }
            Err(e) => {
                let _ = self.events.send(Event::Error(format!("cannot route: {e}")));
            }
        }
    }

    /// Checks the current placement and its copper; see [`Command::Check`].
    fn check(&mut self) {
        self.validate_copper();
        let start = Instant::now();
        let mut design = match self.current_design() {
            Ok(d) => d,
            Err(e) => {
                let _ = self.events.send(Event::Error(e));
                return;
            }
        };
        if let Some(rc) = &self.copper {
            design.board.copper = (*rc.copper).clone();
        }
        let violations = crate::rules::check(&design);
        let l = self.placer.as_ref().map(|p| p.shown().layout());
        let _ = self.events.send(Event::Checked(Box::new(Checked {
            violations,
            positions: l.map_or_else(Vec::new, |l| l.positions().to_vec()),
            quarters: l.map_or_else(Vec::new, |l| l.quarters().to_vec()),
            copper_version: self.copper_version,
            with_copper: self.copper.is_some(),
            seconds: start.elapsed().as_secs_f64(),
        })));
    }

    /// The legal finish on the current run, answered by [`Event::Finished`]. The run
    /// keeps its move count and plots; a reheat continues from the finished layout.
    fn finish_run(&mut self) {
        let Some(a) = &mut self.placer else {
            return;
        };
        match a.finish() {
            Ok(p) => {
                let conflicts = p.report.conflicts.clone();
                let _ = self.events.send(Event::Finished(Box::new(Finished {
                    board: p.board,
                    report: p.report,
                    conflicts,
                })));
            }
            Err(e) => {
                let _ = self.events.send(Event::Error(e.to_string()));
            }
        }
    }

    fn moves(&self) -> u64 {
        self.placer.as_ref().map_or(0, Placer::moves)
    }

    /// One batch of moves, then a snapshot if one is due.
    fn tick(&mut self) {
        let Some(a) = &mut self.placer else {
            self.running = false;
            return;
        };
        let before = (a.moves(), a.accepted());
        let mut batch = self.moves_per_tick;
        if self.stop_after_stage.is_some() {
            batch = batch.min(a.round_moves_left().max(1));
        }
        // Teaching speeds: a few moves per frame, paced to the snapshot rate.
        let paced = batch < 2_000;
        a.run_moves(batch);
        let (m, acc) = (a.moves() - before.0, a.accepted() - before.1);
        let c = a.shown();
        self.samples.push(PlotPoint {
            moves: a.moves(),
            energy: c.energy(),
            best: c.lowest_energy(),
            terms: c.layout().terms(),
            temperature: c.temperature(),
            acceptance: if m > 0 { acc as f64 / m as f64 } else { 0.0 },
        });
        let just_done = a.is_done();
        if just_done {
            self.running = false;
        }
        if let Some(s) = self.stop_after_stage
            && a.rounds() as u32 >= s
        {
            self.running = false;
            self.stop_after_stage = None;
        }
        let elapsed = self.rate_window.0.elapsed();
        if elapsed >= Duration::from_secs(1) {
            self.moves_per_second = (a.moves() - self.rate_window.1) as f64 / elapsed.as_secs_f64();
            self.rate_window = (Instant::now(), a.moves());
        }
        if just_done {
            // Out of budget: the legal finish follows on its own, so a run
            // ends with every part on the grid and clear of the others (or a list of
            // what could not be cleared).
            self.finish_run();
        }
        if !self.running || self.last_snapshot.elapsed() >= SNAPSHOT_INTERVAL {
            self.send_snapshot();
        } else if paced {
            std::thread::sleep(SNAPSHOT_INTERVAL.saturating_sub(self.last_snapshot.elapsed()));
            self.send_snapshot();
        }
    }

    fn send_snapshot(&mut self) {
        self.validate_copper();
        self.last_snapshot = Instant::now();
        let snap = match &self.placer {
            Some(p) => {
                let a = p.shown();
                let l = a.layout();
                let stages = p.history_from(self.stages_sent);
                self.stages_sent += stages.len();
                Snapshot {
                    positions: l.positions().to_vec(),
                    quarters: l.quarters().to_vec(),
                    locked: (0..l.part_count() as u32).map(|i| l.is_locked(i)).collect(),
                    terms: l.terms(),
                    weights: Some(*a.weights()),
                    energy: a.energy(),
                    best_energy: a.lowest_energy(),
                    temperature: a.temperature(),
                    start_temperature: a.start_temperature(),
                    acceptance: a.acceptance(),
                    window: a.window(),
                    moves: p.moves(),
                    budget: p.budget(),
                    accepted: p.accepted(),
                    stage: self.stages_sent as u32,
                    running: self.running,
                    done: p.is_done(),
                    moves_per_second: self.moves_per_second,
                    samples: std::mem::take(&mut self.samples),
                    stages,
                    wirelength_mm: l.wirelength_mm(),
                    schedule: Some(a.options().schedule),
                    schedule_parameter: a.schedule_parameter(),
                    start: Some(p.shown_start()),
                    replicas: p.options().replicas,
                    seed: p.options().seed,
                    epoch: self.epoch,
                    conflicts: (0..l.part_count() as u32)
                        .map(|i| conflict_bits(l.part_violations(i)))
                        .collect(),
                    copper: self.copper.as_ref().map(|c| c.copper.clone()),
                    copper_version: self.copper_version,
                    copper_cleared: self.copper_cleared.clone(),
                }
            }
            None => Snapshot {
                epoch: self.epoch,
                copper_version: self.copper_version,
                copper_cleared: self.copper_cleared.clone(),
                ..Snapshot::default()
            },
        };
        let _ = self.events.send(Event::Snapshot(Arc::new(snap)));
    }
}

/// [`Snapshot::conflicts`] bits from a part's overlap, outside and keep-out areas.
fn conflict_bits((overlap, outside, keepout): (f64, f64, f64)) -> u8 {
    let eps = place::legal::AREA_EPS;
    let mut bits = 0;
    if overlap > eps {
        bits |= CONFLICT_OVERLAP;
    }
    if outside > eps {
        bits |= CONFLICT_OUTSIDE;
    }
    if keepout > eps {
        bits |= CONFLICT_KEEPOUT;
    }
    bits
}
