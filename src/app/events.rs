//! Draining the worker: each frame [`LehrApp::drain`] takes what the engine sent
//! (snapshots, routing progress, answers to route, check and finish) without blocking,
//! for at most a few milliseconds, and folds each event into the app's state.
//!
//! Who talks to the worker: the app's actions send [`lehr_engine::worker::Command`]s
//! (`LehrApp::send`, from `apply` at the end of a frame); this room is the only reader of
//! its [`Event`]s.

use std::collections::HashSet;
use std::sync::Arc;
use std::time::{Duration, Instant};

use lehr_engine::route::RouteProgress;
use lehr_engine::rules::ViolationKind;
use lehr_engine::worker::{Checked, Event, Finished, Routed, Snapshot};

use super::{LehrApp, Message};

/// Longest time a frame spends taking events.
const DRAIN_BUDGET: Duration = Duration::from_millis(4);

impl LehrApp {
    /// Takes what the engine sent, for at most a few milliseconds.
    pub(super) fn drain(&mut self) {
        let start = Instant::now();
        while start.elapsed() < DRAIN_BUDGET {
            let Some(ev) = self.engine.try_recv() else {
                break;
            };
            match ev {
                Event::Snapshot(s) => self.on_snapshot(s),
                Event::RouteProgress(p) => self.on_route_progress(p),
                Event::Routed(r) => self.on_routed(r),
                Event::Checked(c) => self.on_checked(c),
                Event::Finished(f) => self.on_finished(&f),
                Event::Error(e) | Event::Failed(e) => self.on_error(e),
            }
        }
    }

    /// A new picture of the run: plots, weights and copper follow it.
    fn on_snapshot(&mut self, s: Arc<Snapshot>) {
        if s.epoch != self.epoch {
            self.epoch = s.epoch;
            self.plots.history.clear();
            self.controls.weights = s.weights;
        }
        if self.controls.weights.is_none() {
            self.controls.weights = s.weights;
        }
        for p in &s.samples {
            self.plots.history.push(*p);
        }
        if self.copper_version != Some(s.copper_version) {
            self.copper_version = Some(s.copper_version);
            self.doc.design.board.copper = s.copper.as_deref().cloned().unwrap_or_default();
            if s.copper.is_none() {
                self.st.routed.iter_mut().for_each(|r| *r = false);
            }
        }
        self.copper.note_snapshot(&s);
        self.snap = Some(s);
        self.geom_stale = true;
    }

    /// Copper as it appears; the final copper comes with the snapshot after `Routed`.
    fn on_route_progress(&mut self, mut p: RouteProgress) {
        if let Some(c) = p.copper.take() {
            self.doc.design.board.copper = c;
            self.geom_stale = true;
        }
        self.copper.progress = Some(p);
    }

    /// Routing ended: mark the routed nets and say how it went.
    fn on_routed(&mut self, r: Box<Routed>) {
        self.copper.routing = false;
        self.copper.progress = None;
        self.doc.dirty = true;
        let res = &r.result;
        let unrouted: HashSet<&str> = res.unrouted.iter().map(|u| u.net.as_str()).collect();
        for (flag, net) in self.st.routed.iter_mut().zip(&self.doc.design.board.nets) {
            *flag = !unrouted.contains(net.name.as_str());
        }
        self.geom_stale = true;
        let not_routed = if res.unrouted.is_empty() {
            String::new()
        } else {
            format!(
                " Not routed: {} (reasons under Copper).",
                res.unrouted
                    .iter()
                    .take(6)
                    .map(|u| u.net.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
                    + if res.unrouted.len() > 6 { ", ..." } else { "" }
            )
        };
        self.message = Some(Message {
            error: !res.unrouted.is_empty(),
            text: format!(
                "{}Routed {} of {} nets: {:.1} mm of track, {} vias, in {:.2} s.{}",
                if res.cancelled {
                    "Routing stopped. "
                } else {
                    ""
                },
                res.routed,
                res.nets,
                res.track_length_mm,
                res.vias,
                res.seconds,
                not_routed
            ),
        });
        self.copper.routed = Some(r);
    }

    /// A design-rule check ended: with copper, the open nets are no longer drawn routed.
    fn on_checked(&mut self, c: Box<Checked>) {
        self.copper.checking = false;
        if c.with_copper {
            let open: HashSet<&str> = c
                .violations
                .iter()
                .filter(|v| v.kind == ViolationKind::Unconnected)
                .flat_map(|v| v.nets.iter().map(String::as_str))
                .collect();
            for (flag, net) in self.st.routed.iter_mut().zip(&self.doc.design.board.nets) {
                *flag = !open.contains(net.name.as_str());
            }
            self.geom_stale = true;
        }
        self.copper.checked = Some(c);
        self.copper.check_stale = false;
        self.copper.selected = None;
        self.copper.show_rules = true;
    }

    /// The legal finish ended: say whether every conflict is gone.
    fn on_finished(&mut self, f: &Finished) {
        self.finishing = false;
        self.doc.dirty = true;
        let r = &f.report;
        let text = if f.conflicts.is_empty() {
            format!(
                "Finished: every part on the grid, inside the board, clear of keep-outs and of each other; wirelength {:.1} mm.",
                r.wirelength_mm
            )
        } else {
            let list: Vec<String> = f.conflicts.iter().take(6).map(|c| c.to_string()).collect();
            format!(
                "Finished with {} conflicts left: {}{}",
                f.conflicts.len(),
                list.join("; "),
                if f.conflicts.len() > 6 { "; ..." } else { "" }
            )
        };
        self.message = Some(Message {
            error: !f.conflicts.is_empty(),
            text,
        });
    }

    /// A command failed, or the worker did: nothing is on its way any more.
    fn on_error(&mut self, e: String) {
        self.finishing = false;
        self.copper.routing = false;
        self.copper.checking = false;
        self.message = Some(Message {
            error: true,
            text: e,
        });
    }
}
