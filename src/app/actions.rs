//! Applying the actions: what the panels, the menu and the keys asked for in a frame is
//! applied at its end, here. This is where the window talks to the worker: each action
//! that changes the run sends [`Command`]s through [`LehrApp::send`] (run, pause, step,
//! reheat, reset, descent, finish, route, check, schedule, weights, speed, options, part
//! moves and locks); the answers come back as events, drained in `events`. Manual part
//! edits go through the undo stack first; file actions are handed to `document`.

use std::time::{Duration, Instant};

use lehr_engine::model::Quarter;
use lehr_engine::route::RouteOptions;
use lehr_engine::worker::Command;

use super::undo::{Edit, PartState};
use super::{Action, LehrApp, Message};

impl LehrApp {
    /// Sends a command to the worker and keeps polling for its answer a while.
    pub(super) fn send(&mut self, c: Command) {
        self.expect_until = Instant::now() + Duration::from_secs(1);
        if !self.engine.send(c) {
            self.message = Some(Message {
                error: true,
                text: "the placement engine has stopped; open the board again to restart it".into(),
            });
        }
    }

    /// Where a part stands now (as the engine has it, not where a drag shows it) and
    /// whether it is locked.
    pub(super) fn part_state(&self, part: u32) -> Option<PartState> {
        let i = part as usize;
        if let Some(s) = self.snap.as_deref()
            && let (Some(at), Some(quarter), Some(locked)) =
                (s.positions.get(i), s.quarters.get(i), s.locked.get(i))
        {
            return Some(PartState {
                at: *at,
                quarter: *quarter,
                locked: *locked,
            });
        }
        let g = self.geom.parts.get(i)?;
        Some(PartState {
            at: g.at,
            quarter: g.quarter,
            locked: g.locked,
        })
    }

    pub(super) fn apply(&mut self, a: Action, ctx: &egui::Context) {
        match a {
            Action::Run => {
                self.doc.dirty = true;
                self.send(Command::Run);
            }
            Action::Pause => self.send(Command::Pause),
            Action::Step => {
                self.doc.dirty = true;
                self.send(Command::Step);
            }
            Action::Reheat(f) => self.send(Command::Reheat(f)),
            Action::Reset => self.send(Command::Reset),
            Action::DescentOnly => {
                self.doc.dirty = true;
                self.send(Command::DescentOnly);
            }
            Action::Finish => {
                self.finishing = true;
                self.send(Command::Finish);
            }
            Action::Route => {
                self.copper.routing = true;
                self.copper.progress = None;
                self.send(Command::Route(RouteOptions::default()));
            }
            Action::CancelRoute => self.send(Command::CancelRoute),
            Action::Check => {
                self.copper.checking = true;
                self.send(Command::Check);
            }
            Action::ShowViolation(i) => self.show_violation(i),
            Action::SetSchedule(s) => self.send(Command::SetSchedule(s)),
            Action::SetWeights(w) => self.send(Command::SetWeights(w)),
            Action::SetSpeed(n) => self.send(Command::SetMovesPerTick(n)),
            Action::Restart => {
                // A restart starts a fresh run with these settings and runs it: a user who
                // asks to restart expects to see it anneal.
                let opts = self.settings.controls.options(self.controls.weights);
                self.send(Command::SetOptions(opts));
                self.doc.dirty = true;
                self.send(Command::Run);
            }
            Action::MovePart {
                part,
                before,
                at,
                quarter,
            } => {
                let after = PartState {
                    at,
                    quarter,
                    ..before
                };
                self.edit(part, before, after);
            }
            Action::Rotate(part) => {
                if let Some(before) = self.part_state(part)
                    && !before.locked
                {
                    let after = PartState {
                        quarter: Quarter::from_index(before.quarter.index() + 1),
                        ..before
                    };
                    self.edit(part, before, after);
                }
            }
            Action::ToggleLock(part) => {
                if let Some(before) = self.part_state(part) {
                    let after = PartState {
                        locked: !before.locked,
                        ..before
                    };
                    self.edit(part, before, after);
                }
            }
            Action::Undo => {
                if let Some(e) = self.undo.undo() {
                    self.set_part(e.part, e.before);
                }
            }
            Action::Redo => {
                if let Some(e) = self.undo.redo() {
                    self.set_part(e.part, e.after);
                }
            }
            Action::Open(_) | Action::OpenSample | Action::Import(_) | Action::Quit
                if self.doc.dirty && !self.discarding =>
            {
                self.confirm = Some(a);
            }
            Action::SaveThen(inner) => {
                let path = self.doc.path.clone().or_else(|| self.pick_save_path());
                match path {
                    Some(p) => self.save_to(&p),
                    None => {
                        self.message = Some(Message {
                            error: true,
                            text: "Not saved (no file chosen); nothing was discarded.".into(),
                        });
                    }
                }
                // A failed save keeps the board dirty: the action waits, nothing is lost.
                if !self.doc.dirty {
                    self.apply(*inner, ctx);
                }
            }
            Action::Discard(inner) => {
                self.discarding = true;
                self.apply(*inner, ctx);
                self.discarding = false;
            }
            Action::Open(_)
            | Action::OpenSample
            | Action::Save
            | Action::SaveAs
            | Action::ExportPng
            | Action::Import(_)
            | Action::ExportFab(_) => self.apply_file(a, ctx),
            Action::Fit => self.canvas.fit(),
            Action::Quit => {
                self.quit_ok = true;
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            }
        }
    }

    /// Zooms the canvas to a broken rule of the last check and marks it.
    fn show_violation(&mut self, i: usize) {
        let Some(v) = self
            .copper
            .checked
            .as_ref()
            .and_then(|c| c.violations.get(i))
        else {
            return;
        };
        self.copper.selected = Some(i);
        let board = &self.doc.design.board;
        let parts: Vec<u32> = v
            .parts
            .iter()
            .filter_map(|r| board.parts.iter().position(|p| &p.reference == r))
            .map(|k| k as u32)
            .collect();
        self.canvas.net = v
            .nets
            .first()
            .and_then(|n| board.nets.iter().position(|x| &x.name == n))
            .map(|k| k as u32);
        if let Some(at) = v.at {
            // Wide enough to show the parts involved, at least 6 mm.
            let span = parts
                .iter()
                .filter_map(|&k| self.geom.parts.get(k as usize))
                .map(|p| {
                    let c = p.court;
                    2.0 * (c.min.x - at.x)
                        .abs()
                        .max((c.max.x - at.x).abs())
                        .max((c.min.y - at.y).abs())
                        .max((c.max.y - at.y).abs())
                })
                .fold(6.0, f64::max)
                .min(60.0);
            self.canvas.zoom_to(at, span * 1.2, parts);
        }
    }

    /// A manual edit: recorded for undo, then applied.
    fn edit(&mut self, part: u32, before: PartState, after: PartState) {
        self.undo.record(Edit {
            part,
            before,
            after,
        });
        self.set_part(part, after);
    }

    fn set_part(&mut self, part: u32, s: PartState) {
        let Some(now) = self.part_state(part) else {
            return;
        };
        self.doc.dirty = true;
        if now.locked && !s.locked {
            self.send(Command::Lock {
                part,
                locked: false,
            });
        }
        if now.at != s.at || now.quarter != s.quarter {
            self.send(Command::MovePart {
                part,
                at: s.at,
                quarter: s.quarter,
            });
        }
        if s.locked && !now.locked {
            self.send(Command::Lock { part, locked: true });
        }
    }
}
