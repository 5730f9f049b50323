//! The worker protocol, without any window: commands in, snapshots out.

use std::time::{Duration, Instant};

use lehr_engine::model::resolve;
use lehr_engine::place::{AnnealOptions, generate};
use lehr_engine::worker::{Command, EngineHandle, Event, Snapshot};

fn design() -> lehr_engine::model::Design {
    resolve(generate::grid_board(6, 2.54, 5)).expect("generated board is valid")
}

/// Waits for a snapshot satisfying `f`, up to 20 s.
fn wait_for(h: &EngineHandle, f: impl Fn(&Snapshot) -> bool) -> std::sync::Arc<Snapshot> {
    let end = Instant::now() + Duration::from_secs(20);
    while Instant::now() < end {
        if let Some(Event::Snapshot(s)) = h.recv_timeout(Duration::from_millis(100))
            && f(&s)
        {
            return s;
        }
    }
    panic!("no matching snapshot within 20 s");
}

#[test]
fn run_pause_and_moves_increase() {
    let h = EngineHandle::spawn(design(), AnnealOptions::default());
    let first = wait_for(&h, |_| true);
    assert_eq!(first.moves, 0);
    assert!(!first.running);
    h.send(Command::SetMovesPerTick(500));
    h.send(Command::Run);
    let s = wait_for(&h, |s| s.moves > 0);
    assert!(s.moves > 0);
    h.send(Command::Pause);
    let paused = wait_for(&h, |s| !s.running);
    // Once paused, the move count stays put.
    h.send(Command::Refresh);
    let again = wait_for(&h, |_| true);
    assert_eq!(paused.moves, again.moves);
}

#[test]
fn a_locked_part_does_not_move() {
    let h = EngineHandle::spawn(design(), AnnealOptions::default());
    let s0 = wait_for(&h, |_| true);
    let pos = s0.positions[3];
    h.send(Command::Lock {
        part: 3,
        locked: true,
    });
    h.send(Command::Run);
    let s = wait_for(&h, |s| s.moves > 20_000 || s.done);
    assert!(s.locked[3]);
    assert_eq!(s.positions[3], pos);
    h.send(Command::Pause);
}

#[test]
fn step_runs_one_stage_and_finish_reports() {
    let h = EngineHandle::spawn(design(), AnnealOptions::default());
    wait_for(&h, |_| true);
    h.send(Command::Step);
    let s = wait_for(&h, |s| s.stage >= 1 && !s.running);
    assert_eq!(s.stage, 1);
    h.send(Command::Finish);
    let end = Instant::now() + Duration::from_secs(20);
    let mut finished = None;
    while Instant::now() < end && finished.is_none() {
        if let Some(Event::Finished(f)) = h.recv_timeout(Duration::from_millis(100)) {
            finished = Some(f);
        }
    }
    let f = finished.expect("finish answers");
    assert_eq!(f.board.parts.len(), 36);
    assert!(f.board.parts.iter().all(|p| p.at.is_some()));
}

#[test]
fn bad_options_are_reported_not_fatal() {
    let h = EngineHandle::spawn(design(), AnnealOptions::default());
    wait_for(&h, |_| true);
    h.send(Command::SetOptions(AnnealOptions {
        effort: -1.0,
        ..AnnealOptions::default()
    }));
    let end = Instant::now() + Duration::from_secs(10);
    let mut error = None;
    while Instant::now() < end && error.is_none() {
        if let Some(Event::Error(e)) = h.recv_timeout(Duration::from_millis(100)) {
            error = Some(e);
        }
    }
    assert!(error.expect("an error event").contains("effort"));
    // The worker is still alive and answers.
    h.send(Command::SetOptions(AnnealOptions::default()));
    wait_for(&h, |s| s.positions.len() == 36);
}

#[test]
fn reset_starts_a_new_epoch() {
    let h = EngineHandle::spawn(design(), AnnealOptions::default());
    let first = wait_for(&h, |_| true);
    h.send(Command::SetMovesPerTick(500));
    h.send(Command::Run);
    wait_for(&h, |s| s.moves > 0);
    h.send(Command::Reset);
    // Every snapshot of the new start carries a larger epoch and begins at zero moves.
    let s = wait_for(&h, |s| s.epoch > first.epoch);
    assert_eq!(s.moves, 0);
    assert!(!s.running);
}

#[test]
fn conflicts_mark_overlapping_and_outside_parts() {
    use lehr_engine::model::{Point, Quarter};
    use lehr_engine::worker::{CONFLICT_OUTSIDE, CONFLICT_OVERLAP};
    let h = EngineHandle::spawn(design(), AnnealOptions::default());
    let s0 = wait_for(&h, |_| true);
    assert_eq!(s0.conflicts.len(), s0.positions.len());
    // Part 1 on top of part 0: both overlap.
    h.send(Command::MovePart {
        part: 1,
        at: s0.positions[0],
        quarter: s0.quarters[0],
    });
    let s = wait_for(&h, |s| s.positions[1] == s0.positions[0]);
    assert_ne!(s.conflicts[0] & CONFLICT_OVERLAP, 0);
    assert_ne!(s.conflicts[1] & CONFLICT_OVERLAP, 0);
    // Part 2 far off the board: outside, and overlapping nothing.
    h.send(Command::MovePart {
        part: 2,
        at: Point::new(-1000.0, -1000.0),
        quarter: Quarter::R0,
    });
    let s = wait_for(&h, |s| s.positions[2].x == -1000.0);
    assert_eq!(s.conflicts[2], CONFLICT_OUTSIDE);
}

// Routing and checking through the worker. The board is the hand-placed one the router's
// own tests use (tests/it/boards.rs); what the worker sends is compared with calling the
// library directly, and with what the copper must mean for the checker.

use lehr_engine::route::{RouteOptions, route};
use lehr_engine::rules::{ViolationKind, check};
use lehr_engine::worker::{Checked, Routed};

/// Waits for the first event that `f` picks, up to 60 s (debug builds route slowly).
fn wait_event<T>(h: &EngineHandle, what: &str, f: impl Fn(Event) -> Option<T>) -> T {
    let end = Instant::now() + Duration::from_secs(60);
    while Instant::now() < end {
        if let Some(ev) = h.recv_timeout(Duration::from_millis(100))
            && let Some(t) = f(ev)
        {
            return t;
        }
    }
    panic!("no {what} within 60 s");
}

fn routed(h: &EngineHandle) -> Box<Routed> {
    wait_event(h, "route result", |e| match e {
        Event::Routed(r) => Some(r),
        Event::Error(e) | Event::Failed(e) => panic!("{e}"),
        _ => None,
    })
}

fn checked(h: &EngineHandle) -> Box<Checked> {
    wait_event(h, "check result", |e| match e {
        Event::Checked(c) => Some(c),
        Event::Error(e) | Event::Failed(e) => panic!("{e}"),
        _ => None,
    })
}

fn small() -> lehr_engine::model::Design {
    super::boards::design(super::boards::small_board())
}

#[test]
fn route_on_the_worker_gives_the_libraries_copper_and_keeps_it_until_a_part_moves() {
    let d = small();
    // The same board routed by the library directly (the router is deterministic).
    let cancel = std::sync::atomic::AtomicBool::new(false);
    let direct = route(&d, &RouteOptions::default(), &cancel, &mut |_| {}).unwrap();
    let h = EngineHandle::spawn(d.clone(), AnnealOptions::default());
    let s0 = wait_for(&h, |_| true);
    assert!(
        s0.copper.is_none(),
        "the test board has no copper of its own"
    );
    h.send(Command::Route(RouteOptions::default()));
    let r = routed(&h);
    assert!(!r.result.cancelled);
    assert_eq!(r.result.nets, 6);
    assert_eq!(r.result.routed, direct.routed);
    assert_eq!(r.result.copper, direct.copper);
    assert_eq!(r.board.copper, direct.copper);
    // The board the worker routed passes the independent checker.
    let v = check(&super::boards::design(r.board.clone()));
    assert!(v.is_empty(), "{v:#?}");
    let s = wait_for(&h, |s| s.copper.is_some());
    assert_eq!(s.copper.as_deref(), Some(&direct.copper));
    assert!(s.copper_cleared.is_none());
    let version = s.copper_version;

    // A check on the worker sees the copper: every rule holds.
    h.send(Command::Check);
    let c = checked(&h);
    assert!(c.with_copper);
    assert!(c.violations.is_empty(), "{:#?}", c.violations);
    assert_eq!(c.positions, s.positions);

    // Moving a part by hand drops the copper, and the snapshot says why.
    h.send(Command::MovePart {
        part: 2,
        at: lehr_engine::model::Point::new(s.positions[2].x + 1.0, s.positions[2].y),
        quarter: s.quarters[2],
    });
    let s2 = wait_for(&h, |s| s.copper_version != version);
    assert!(s2.copper.is_none());
    assert!(s2.copper_cleared.as_deref().unwrap().contains("moved"));
}

#[test]
fn annealing_after_routing_drops_the_copper() {
    let h = EngineHandle::spawn(small(), AnnealOptions::default());
    wait_for(&h, |_| true);
    h.send(Command::Route(RouteOptions::default()));
    routed(&h);
    wait_for(&h, |s| s.copper.is_some());
    h.send(Command::SetMovesPerTick(200));
    h.send(Command::Run);
    let s = wait_for(&h, |s| s.moves > 0 && s.copper.is_none());
    assert!(s.copper_cleared.is_some());
    h.send(Command::Pause);
}

#[test]
fn a_cancelled_route_stops_with_legal_copper() {
    let h = EngineHandle::spawn(small(), AnnealOptions::default());
    wait_for(&h, |_| true);
    // The cancel flag is raised as the command is sent, so the route stops before its
    // first net: nothing is routed and every net says why.
    h.send(Command::Route(RouteOptions::default()));
    h.send(Command::CancelRoute);
    let r = routed(&h);
    assert!(r.result.cancelled);
    assert_eq!(r.result.routed + r.result.unrouted.len(), r.result.nets);
    assert!(r.result.routed < r.result.nets);
    let v = check(&super::boards::design(r.board.clone()));
    assert!(
        v.iter().all(|v| v.kind == ViolationKind::Unconnected),
        "{v:#?}"
    );
    // A new route after the cancel runs to the end.
    h.send(Command::Route(RouteOptions::default()));
    let r = routed(&h);
    assert!(!r.result.cancelled);
    assert_eq!(r.result.routed, r.result.nets, "{:?}", r.result.unrouted);
}

#[test]
fn a_check_names_overlapping_parts() {
    let h = EngineHandle::spawn(small(), AnnealOptions::default());
    let s0 = wait_for(&h, |_| true);
    // R2 (part 3) dropped on top of R1 (part 2): their courtyards overlap, which is plain
    // geometry; and without copper every net's pins are unconnected.
    h.send(Command::MovePart {
        part: 3,
        at: s0.positions[2],
        quarter: s0.quarters[2],
    });
    wait_for(&h, |s| s.positions[3] == s0.positions[2]);
    h.send(Command::Check);
    let c = checked(&h);
    assert!(!c.with_copper);
    let overlap = c
        .violations
        .iter()
        .find(|v| v.kind == ViolationKind::CourtyardOverlap)
        .expect("an overlap");
    assert!(overlap.parts.contains(&"R1".to_string()));
    assert!(overlap.parts.contains(&"R2".to_string()));
    assert!(overlap.at.is_some());
    assert!(
        c.violations
            .iter()
            .any(|v| v.kind == ViolationKind::Unconnected)
    );
}
