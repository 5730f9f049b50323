//! The copper panel and the design-rule list: Route (on the worker, with a progress bar
//! and cancel), the result (nets routed and those left unrouted with the reason, track
//! length, vias, time), Check (the design rules on the parts where they stand and the
//! copper), and the list of broken rules, each of which the canvas can zoom to.

use lehr_engine::route::{RoutePhase, RouteProgress};
use lehr_engine::rules::ViolationKind;
use lehr_engine::worker::{Checked, Routed, Snapshot};

use super::Action;

/// What the copper panel knows: a route in progress, the last result, the last check.
#[derive(Debug, Default)]
pub struct CopperPanel {
    /// A route was asked for and has not ended.
    pub routing: bool,
    pub progress: Option<RouteProgress>,
    /// The last route's result.
    pub routed: Option<Box<Routed>>,
    /// A check was asked for and has not been answered.
    pub checking: bool,
    /// The last check's answer.
    pub checked: Option<Box<Checked>>,
    /// The parts moved (or the copper changed) since the last check.
    pub check_stale: bool,
    /// Whether the design-rule list is open.
    pub show_rules: bool,
    /// The violation the canvas is showing.
    pub selected: Option<usize>,
}

/// A plain name for each kind of broken rule.
pub fn kind_name(k: ViolationKind) -> &'static str {
    match k {
        ViolationKind::Short => "short",
        ViolationKind::Clearance => "clearance",
        ViolationKind::EdgeClearance => "too close to the edge",
        ViolationKind::CopperKeepout => "copper in a keep-out",
        ViolationKind::TrackWidth => "track too narrow",
        ViolationKind::Unconnected => "unconnected pins",
        ViolationKind::CourtyardOverlap => "parts overlap",
        ViolationKind::CourtyardOutsideBoard => "part outside the board",
        ViolationKind::PartKeepout => "part in a keep-out",
        ViolationKind::Unplaced => "part not placed",
        ViolationKind::ClassWidthForCurrent => "class too narrow for its current",
        ViolationKind::ClassClearanceForVoltage => "class clearance too small for its voltage",
    }
}

impl CopperPanel {
    /// Forgets everything (a new board).
    pub fn reset(&mut self) {
        *self = CopperPanel::default();
    }

    /// A new snapshot: is the last check still about the board as it stands?
    pub fn note_snapshot(&mut self, s: &Snapshot) {
        if let Some(c) = &self.checked {
            self.check_stale = c.positions != s.positions
                || c.quarters != s.quarters
                || c.copper_version != s.copper_version;
        }
    }

    /// The copper part of the status line.
    pub fn status(&self, snap: Option<&Snapshot>) -> String {
        if self.routing {
            return match &self.progress {
                Some(p) => format!("routing: {}", progress_text(p)),
                None => "routing: preparing".into(),
            };
        }
        match snap {
            Some(s) if s.copper.is_some() => match &self.routed {
                Some(r) => format!(
                    "copper: {} of {} nets routed",
                    r.result.routed, r.result.nets
                ),
                None => "copper: from the file".into(),
            },
            Some(s) if s.copper_cleared.is_some() => {
                "copper removed: parts moved after routing (Route again)".into()
            }
            _ => "no copper".into(),
        }
    }

    /// The design-rule part of the status line.
    pub fn rules_status(&self) -> String {
        if self.checking {
            return "checking the rules".into();
        }
        match &self.checked {
            None => "rules not checked".into(),
            Some(c) => {
                let n = c.violations.len();
                let what = if n == 0 {
                    "no broken rules".to_string()
                } else if n == 1 {
                    "1 broken rule".to_string()
                } else {
                    format!("{n} broken rules")
                };
                if self.check_stale {
                    format!("{what} (checked before the last change)")
                } else {
                    what
                }
            }
        }
    }

    /// The copper section of the controls panel.
    pub fn ui(&mut self, ui: &mut egui::Ui, snap: Option<&Snapshot>, actions: &mut Vec<Action>) {
        ui.heading("Copper");
        ui.horizontal_wrapped(|ui| {
            if ui
                .add_enabled(!self.routing && snap.is_some(), egui::Button::new("Route"))
                .on_hover_text(
                    "Pause, then connect every net with tracks on the top and bottom layers and vias, for the parts where they stand now (Ctrl+T)",
                )
                .clicked()
            {
                actions.push(Action::Route);
            }
            if ui
                .add_enabled(self.routing, egui::Button::new("Stop routing"))
                .on_hover_text("Stop after the net being routed; the copper so far is kept")
                .clicked()
            {
                actions.push(Action::CancelRoute);
            }
            if ui
                .add_enabled(!self.checking && snap.is_some(), egui::Button::new("Check"))
                .on_hover_text(
                    "Check clearances, track widths, connections and part positions against the board's design rules (Ctrl+K)",
                )
                .clicked()
            {
                actions.push(Action::Check);
            }
        });
        if self.routing {
            let (frac, text) = match &self.progress {
                Some(p) => (progress_fraction(p), progress_text(p)),
                None => (0.0, "preparing".into()),
            };
            ui.add(egui::ProgressBar::new(frac).text(text));
        }
        if let Some(r) = &self.routed {
            let res = &r.result;
            ui.label(format!(
                "{} of {} nets routed{}: {:.1} mm of track, {} vias, {:.2} s",
                res.routed,
                res.nets,
                if res.cancelled { " (stopped)" } else { "" },
                res.track_length_mm,
                res.vias,
                res.seconds
            ));
            if !res.unrouted.is_empty() {
                egui::CollapsingHeader::new(format!("{} nets not routed", res.unrouted.len()))
                    .id_salt("unrouted-nets")
                    .default_open(res.unrouted.len() <= 6)
                    .show(ui, |ui| {
                        for u in &res.unrouted {
                            ui.label(format!("{}: {}", u.net, u.why));
                        }
                    });
            }
        }
        if let Some(s) = snap
            && s.copper.is_none()
            && let Some(why) = &s.copper_cleared
        {
            ui.label(egui::RichText::new(why).color(ui.visuals().warn_fg_color));
        }
        if self.checked.is_some() {
            let label = format!("Design rules: {}", self.rules_status());
            if ui
                .selectable_label(self.show_rules, label)
                .on_hover_text("Show or hide the list of broken rules")
                .clicked()
            {
                self.show_rules = !self.show_rules;
            }
        }
    }

    /// The list of broken rules (a panel under the board). Clicking one asks the canvas
    /// to show it.
    pub fn rules_ui(&mut self, ui: &mut egui::Ui, actions: &mut Vec<Action>) {
        let status = self.rules_status();
        let Some(c) = &self.checked else {
            return;
        };
        let mut close = false;
        ui.horizontal(|ui| {
            ui.strong("Design rules");
            ui.label(format!(
                "{status}, {} copper, in {:.0} ms",
                if c.with_copper { "with" } else { "without" },
                c.seconds * 1e3
            ));
            if ui.small_button("Check again").clicked() {
                actions.push(Action::Check);
            }
            close = ui.small_button("Close").clicked();
        });
        if close {
            self.show_rules = false;
            return;
        }
        if c.violations.is_empty() {
            ui.label("Every rule holds.");
            return;
        }
        let selected = self.selected;
        let row = |ui: &mut egui::Ui, i: usize, actions: &mut Vec<Action>| {
            let v = &c.violations[i];
            let mut text = format!("{}: {}", kind_name(v.kind), v.message);
            if !v.parts.is_empty() {
                text.push_str(&format!("  [parts {}]", v.parts.join(", ")));
            }
            if !v.nets.is_empty() {
                text.push_str(&format!("  [nets {}]", v.nets.join(", ")));
            }
            let r = ui.selectable_label(selected == Some(i), text);
            let r = if v.at.is_some() {
                r.on_hover_text("Click to show it on the board")
            } else {
                r.on_hover_text("A rule about the board as a whole")
            };
            if r.clicked() {
                actions.push(Action::ShowViolation(i));
            }
        };
        let area = egui::ScrollArea::vertical()
            .auto_shrink([false, false])
            .max_height(ui.available_height().max(40.0));
        if c.violations.len() <= 300 {
            area.show(ui, |ui| {
                for i in 0..c.violations.len() {
                    row(ui, i, actions);
                }
            });
        } else {
            // Only the rows in sight are laid out.
            let h = ui.text_style_height(&egui::TextStyle::Body) + ui.spacing().item_spacing.y;
            area.show_rows(ui, h, c.violations.len(), |ui, rows| {
                for i in rows {
                    row(ui, i, actions);
                }
            });
        }
    }
}

/// How far the router is, 0 to 1 (passes count as equal shares).
fn progress_fraction(p: &RouteProgress) -> f32 {
    let within = if p.nets_in_pass > 0 {
        p.done_in_pass as f32 / p.nets_in_pass as f32
    } else {
        0.0
    };
    match p.phase {
        RoutePhase::Preparing => 0.0,
        // The first pass routes every net and takes most of the time.
        RoutePhase::Negotiating if p.pass <= 1 => 0.7 * within,
        RoutePhase::Negotiating => {
            0.7 + 0.25 * (p.pass as f32 - 1.0) / (p.max_passes.max(2) as f32 - 1.0)
        }
        RoutePhase::Settling => 0.95 + 0.05 * within,
    }
}

fn progress_text(p: &RouteProgress) -> String {
    match p.phase {
        RoutePhase::Preparing => "preparing the grid".into(),
        RoutePhase::Negotiating if p.pass <= 1 => {
            format!("first pass, net {} of {}", p.done_in_pass, p.nets_in_pass)
        }
        RoutePhase::Negotiating => format!(
            "pass {} of at most {}: rerouting {} of {} nets that share space",
            p.pass, p.max_passes, p.done_in_pass, p.nets_in_pass
        ),
        RoutePhase::Settling => format!(
            "settling: rerouting {} of {} nets around the others",
            p.done_in_pass, p.nets_in_pass
        ),
    }
}
