//! The worker protocol, without any window: commands in, snapshots out.

use std::time::{Duration, Instant};

use lehr::engine::{Command, EngineHandle, Event, Snapshot};
use lehr::model::resolve;
use lehr::place::{AnnealOptions, generate};

fn design() -> lehr::model::Design {
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
    use lehr::engine::{CONFLICT_OUTSIDE, CONFLICT_OVERLAP};
    use lehr::model::{Point, Quarter};
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
