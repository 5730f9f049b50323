//! How often the window may draw while the engine runs, from what drawing really costs.
//!
//! With software OpenGL (Mesa's llvmpipe, on machines without a GPU) most of a picture's
//! cost is in the rasteriser's own threads, which the frame timer never sees, and on a
//! busy machine every one of those milliseconds is taken from the annealer. So on Linux
//! the window reads the CPU time of its whole process and of the engine thread
//! (`/proc/self/stat`, `/proc/self/task/*/stat`) about once a second, and stretches or
//! shrinks the interval between pictures so that everything but the engine (the window's
//! thread and the rasteriser's) uses at most [`BUDGET`] of one core.
//! Elsewhere, or when `/proc` cannot be read, the interval rule of `FrameTimes` applies.
//!
//! On Linux the window also lowers the scheduling priority (nice 10) of its helper
//! threads, the software rasteriser's among them, so that on a busy machine they wait for
//! the engine rather than the engine for them. The window's own thread keeps its priority
//! (engines for boards opened later are started from it and inherit it).

use std::time::{Duration, Instant};

/// Share of one core the window may use while the engine runs (the rest is the engine's:
/// the target is at least 80 % of the engine's speed without a window).
pub const BUDGET: f64 = 0.12;

/// Bounds of the interval between pictures.
pub const MIN_INTERVAL: Duration = Duration::from_millis(33);
pub const MAX_INTERVAL: Duration = Duration::from_millis(400);

/// User plus system CPU seconds from a `/proc/.../stat` line: fields after the command
/// name (in parentheses, and it may hold spaces and parentheses itself): state is field 3,
/// utime 14 and stime 15, in clock ticks (proc(5)); USER_HZ is 100 on every Linux
/// architecture lehr builds for.
fn stat_seconds(text: &str) -> Option<f64> {
    let rest = &text[text.rfind(')')? + 1..];
    let f: Vec<&str> = rest.split_whitespace().collect();
    let utime: f64 = f.get(11)?.parse().ok()?;
    let stime: f64 = f.get(12)?.parse().ok()?;
    Some((utime + stime) / 100.0)
}

/// CPU seconds of this process and of the engine thread, if `/proc` tells.
pub fn cpu_seconds() -> Option<(f64, f64)> {
    let parse = stat_seconds;
    let process = parse(&std::fs::read_to_string("/proc/self/stat").ok()?)?;
    let mut engine = None;
    for entry in std::fs::read_dir("/proc/self/task").ok()?.flatten() {
        let dir = entry.path();
        let comm = std::fs::read_to_string(dir.join("comm")).unwrap_or_default();
        if comm.trim_end() == "lehr-engine" {
            engine = Some(parse(&std::fs::read_to_string(dir.join("stat")).ok()?)?);
            break;
        }
    }
    Some((process, engine?))
}

/// Nice value given to the window's helper threads.
pub const HELPER_NICE: i32 = 10;

/// Lowers the priority of every thread of this process but the main one and the
/// engine's, once per thread; `done` remembers which were lowered.
#[cfg(target_os = "linux")]
fn lower_helpers(done: &mut Vec<u32>) {
    let pid = std::process::id();
    let Ok(dir) = std::fs::read_dir("/proc/self/task") else {
        return;
    };
    for entry in dir.flatten() {
        let Some(tid) = entry
            .file_name()
            .to_str()
            .and_then(|s| s.parse::<u32>().ok())
        else {
            continue;
        };
        if tid == pid || done.contains(&tid) {
            continue;
        }
        let comm = std::fs::read_to_string(entry.path().join("comm")).unwrap_or_default();
        if comm.trim_end() == "lehr-engine" {
            continue;
        }
        // SAFETY: a plain system call on a thread of this process; raising a nice value
        // needs no privilege, and a failure only leaves the priority as it was.
        unsafe {
            libc::setpriority(libc::PRIO_PROCESS, tid as libc::id_t, HELPER_NICE);
        }
        done.push(tid);
    }
}

#[cfg(not(target_os = "linux"))]
fn lower_helpers(_done: &mut Vec<u32>) {}

/// The interval between pictures, adjusted about once a second.
#[derive(Debug, Default)]
pub struct Budget {
    last: Option<(Instant, f64, f64)>,
    /// The current interval; `None` until the first measurement (or without `/proc`).
    pub interval: Option<Duration>,
    /// The window's share of a core over the last measurement.
    pub share: Option<f64>,
    /// Helper threads whose priority was lowered.
    lowered: Vec<u32>,
}

impl Budget {
    /// Call once a frame while the engine runs, with the interval the frame-time rule
    /// would use; returns the interval to use.
    pub fn update(&mut self, fallback: Duration) -> Duration {
        let now = Instant::now();
        match self.last {
            Some((t, _, _)) if now.duration_since(t) < Duration::from_millis(1000) => {}
            _ => {
                lower_helpers(&mut self.lowered);
                if let Some((process, engine)) = cpu_seconds() {
                    if let Some((t, p0, e0)) = self.last {
                        let wall = now.duration_since(t).as_secs_f64();
                        let share = ((process - p0) - (engine - e0)).max(0.0) / wall;
                        self.share = Some(share);
                        let current = self.interval.unwrap_or(fallback).as_secs_f64();
                        // Cost per picture is about share x interval: aim at the budget,
                        // changing by at most a factor of two per step.
                        let factor = (share / BUDGET).clamp(0.5, 2.0);
                        let next = (current * factor)
                            .clamp(MIN_INTERVAL.as_secs_f64(), MAX_INTERVAL.as_secs_f64());
                        self.interval = Some(Duration::from_secs_f64(next));
                    }
                    self.last = Some((now, process, engine));
                }
            }
        }
        self.interval.unwrap_or(fallback)
    }

    /// Forget the last measurement (the engine paused: its idle time says nothing).
    pub fn pause(&mut self) {
        self.last = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stat_lines_give_user_plus_system_time() {
        // The layout of proc(5): pid (comm) state ppid pgrp session tty_nr tpgid flags
        // minflt cminflt majflt cmajflt utime stime ...; a command name may hold ") ".
        let line = "4242 (odd) name) R 1 4242 4242 0 -1 4194560 100 0 0 0 250 70 0 0 20 0 3";
        assert_eq!(stat_seconds(line), Some(3.2));
        assert_eq!(stat_seconds("garbage"), None);
        // This process can be read on Linux, and its engine thread is found once one runs.
        if cfg!(target_os = "linux") {
            let me = std::fs::read_to_string("/proc/self/stat").unwrap();
            assert!(stat_seconds(&me).is_some());
        }
    }
}
