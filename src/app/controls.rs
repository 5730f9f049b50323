//! The controls panel: run, pause, step, reheat, reset, descent only, finish; the cooling
//! schedule and its parameters, the start temperature, seed and effort; the energy weights;
//! the animation speed; and the status line.

use serde::{Deserialize, Serialize};

use lehr_engine::place::{AnnealOptions, Schedule, Start, Weights};
use lehr_engine::worker::Snapshot;

use super::Action;

/// The schedule settings the user picked, remembered between runs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ControlSettings {
    /// The schedule and the parameters set explicitly.
    pub schedule: Schedule,
    /// Index into [`STARTS`].
    pub start: usize,
    /// Annealing chains per start (replica exchange).
    pub replicas: u32,
    /// Moves the engine makes between two pictures.
    pub speed: u64,
    pub seed: u64,
    /// Multiple of the default move budget.
    pub effort: f64,
    pub auto_start: bool,
    pub start_temperature: f64,
    /// Fraction of the start temperature a reheat goes back to.
    pub reheat: f64,
}

/// The starts the window offers, in its list's order.
pub const STARTS: [Start; 3] = [Start::Both, Start::Given, Start::Spectral];

impl Default for ControlSettings {
    fn default() -> Self {
        let d = AnnealOptions::default();
        ControlSettings {
            schedule: d.schedule,
            start: STARTS.iter().position(|&k| k == d.start).unwrap_or(0),
            replicas: d.replicas,
            speed: 20_000,
            seed: d.seed,
            effort: d.effort,
            auto_start: true,
            start_temperature: 1.0,
            reheat: 0.3,
        }
    }
}

impl ControlSettings {
    pub fn schedule(&self) -> Schedule {
        self.schedule
    }

    pub fn start(&self) -> Start {
        STARTS[self.start.min(STARTS.len() - 1)]
    }

    /// The options a fresh start uses: the command line's defaults (`lehr place`) with
    /// the settings chosen here, so the same board, seed and settings give the same
    /// placement in both.
    pub fn options(&self, weights: Option<Weights>) -> AnnealOptions {
        AnnealOptions {
            seed: self.seed,
            schedule: self.schedule(),
            effort: self.effort,
            start: self.start(),
            replicas: self.replicas.clamp(1, 16),
            start_temperature: (!self.auto_start).then_some(self.start_temperature),
            weights,
            ..AnnealOptions::default()
        }
    }
}

/// Shortcut text shown in tooltips.
pub const KEYS_RUN: &str = "Space";

/// The controls panel's state: the settings being edited and the weights of the run.
#[derive(Debug, Default)]
pub struct Controls {
    pub weights: Option<Weights>,
    /// The schedule last sent to the engine (`None` before the first frame).
    sent: Option<Schedule>,
}

/// A label followed by a widget it names (so screen readers and tests find it by label).
fn labelled(
    ui: &mut egui::Ui,
    label: &str,
    add: impl FnOnce(&mut egui::Ui) -> egui::Response,
) -> egui::Response {
    ui.horizontal(|ui| {
        let l = ui.label(label);
        add(ui).labelled_by(l.id)
    })
    .inner
}

impl Controls {
    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        s: &mut ControlSettings,
        snap: Option<&Snapshot>,
        actions: &mut Vec<Action>,
    ) {
        let running = snap.is_some_and(|s| s.running);
        let done = snap.is_some_and(|s| s.done);
        ui.heading("Annealing");
        ui.horizontal_wrapped(|ui| {
            if ui
                .add_enabled(!running && !done, egui::Button::new("Run"))
                .on_hover_text(format!("Anneal until the move budget is spent or paused ({KEYS_RUN})"))
                .clicked()
            {
                actions.push(Action::Run);
            }
            if ui
                .add_enabled(running, egui::Button::new("Pause"))
                .on_hover_text(format!("Stop after the current batch of moves ({KEYS_RUN})"))
                .clicked()
            {
                actions.push(Action::Pause);
            }
            if ui
                .add_enabled(!running && !done, egui::Button::new("Step"))
                .on_hover_text("Run one temperature stage, then pause (.)")
                .clicked()
            {
                actions.push(Action::Step);
            }
            if ui
                .button("Reheat")
                .on_hover_text("Raise the temperature to the fraction below of the start temperature (H)")
                .clicked()
            {
                actions.push(Action::Reheat(s.reheat));
            }
            if ui
                .button("Reset")
                .on_hover_text("Start over from the board's own positions (Ctrl+R)")
                .clicked()
            {
                actions.push(Action::Reset);
            }
            if ui
                .button("Descent only")
                .on_hover_text("Start over at zero temperature: accept only moves that do not raise the energy, the baseline annealing must beat")
                .clicked()
            {
                actions.push(Action::DescentOnly);
            }
            if ui
                .button("Finish")
                .on_hover_text("Stop, snap the parts to the placement grid and clear what conflicts remain (Ctrl+Enter)")
                .clicked()
            {
                actions.push(Action::Finish);
            }
        });
        labelled(ui, "reheat to", |ui| {
            ui.add(egui::Slider::new(&mut s.reheat, 0.05..=1.0).fixed_decimals(2))
        })
        .on_hover_text("Fraction of the start temperature");
        let speed = labelled(ui, "moves per frame", |ui| {
            ui.add(egui::Slider::new(&mut s.speed, 1..=200_000).logarithmic(true))
        })
        .on_hover_text("1 shows every move (for teaching); the largest value runs at full speed");
        if speed.changed() {
            actions.push(Action::SetSpeed(s.speed));
        }

        ui.separator();
        ui.heading("Schedule");
        self.schedule_ui(ui, s, snap, actions);
        labelled(ui, "start", |ui| {
            egui::ComboBox::from_id_salt("start-kind")
                .selected_text(s.start().name())
                .show_ui(ui, |ui| {
                    for (k, st) in STARTS.iter().enumerate() {
                        ui.selectable_value(&mut s.start, k, st.name());
                    }
                })
                .response
        })
        .on_hover_text(
            "given: the board's own positions; spectral: an analytical placement refined \
             cool; both: one run from each, the better kept (applies from a fresh start)",
        );
        labelled(ui, "chains", |ui| {
            ui.add(egui::DragValue::new(&mut s.replicas).range(1..=16))
        })
        .on_hover_text(
            "Annealing chains per start, at slightly different temperatures, trading \
             temperatures now and then (replica exchange); they share the move budget and \
             run on all cores (applies from a fresh start)",
        );

        ui.checkbox(&mut s.auto_start, "automatic start temperature")
            .on_hover_text(
                "Solved from sampled uphill moves so that 30 % of them are accepted at first",
            );
        ui.add_enabled_ui(!s.auto_start, |ui| {
            labelled(ui, "start temperature", |ui| {
                ui.add(
                    egui::DragValue::new(&mut s.start_temperature)
                        .range(0.0..=1e9)
                        .speed(0.01),
                )
            });
        });
        labelled(ui, "seed", |ui| ui.add(egui::DragValue::new(&mut s.seed)));
        labelled(ui, "effort", |ui| {
            ui.add(
                egui::DragValue::new(&mut s.effort)
                    .range(0.01..=1000.0)
                    .speed(0.05),
            )
        })
        .on_hover_text("Multiple of the default move budget (25,000 N^(4/3) moves for N movable parts, 1 to 150 million)");
        if ui
            .button("Restart with these settings")
            .on_hover_text(
                "Seed, effort, start, chains and start temperature apply from a fresh start",
            )
            .clicked()
        {
            actions.push(Action::Restart);
        }

        ui.separator();
        ui.heading("Energy weights");
        if let Some(w) = &mut self.weights {
            let mut changed = false;
            for (label, v) in [
                ("wirelength", &mut w.wirelength),
                ("overlap", &mut w.overlap),
                ("outside the board", &mut w.outside),
                ("keep-out", &mut w.keepout),
            ] {
                changed |= labelled(ui, label, |ui| {
                    ui.add(egui::DragValue::new(v).range(0.0..=1e6).speed(0.01))
                })
                .changed();
            }
            if changed {
                actions.push(Action::SetWeights(*w));
            }
        } else {
            ui.label("waiting for the engine");
        }
    }
}

impl Controls {
    /// The schedule box, made from the engine's list of schedules: the schedule, its
    /// formula, and per parameter a box to set it (unset: from the budget, the value the
    /// run derived shown). A change reaches the engine once no value is being dragged.
    fn schedule_ui(
        &mut self,
        ui: &mut egui::Ui,
        s: &mut ControlSettings,
        snap: Option<&Snapshot>,
        actions: &mut Vec<Action>,
    ) {
        labelled(ui, "schedule", |ui| {
            egui::ComboBox::from_id_salt("schedule-kind")
                .selected_text(s.schedule.name())
                .show_ui(ui, |ui| {
                    for sch in Schedule::ALL {
                        let on = sch.name() == s.schedule.name();
                        if ui.selectable_label(on, sch.name()).clicked() && !on {
                            s.schedule = sch;
                        }
                    }
                })
                .response
        });
        ui.small(s.schedule.formula());
        // The run's derived first parameter, when it runs this schedule.
        let derived = snap.filter(|n| n.schedule.is_some_and(|x| x.name() == s.schedule.name()));
        let mut hold = false;
        for (i, p) in s.schedule.params().iter().enumerate() {
            ui.horizontal(|ui| {
                let mut set = s.schedule.value(i).is_some();
                let shown = derived.filter(|_| i == 0);
                let hover = format!(
                    "{}: {}; {}. Unset: {}",
                    p.label,
                    p.help,
                    p.range_text(),
                    p.default
                );
                if ui.checkbox(&mut set, p.name).on_hover_text(hover).changed() {
                    let start = shown
                        .map(|n| n.schedule_parameter)
                        .filter(|v| p.allows(*v))
                        .unwrap_or(p.example);
                    // In range by construction.
                    let _ = s.schedule.set(i, set.then_some(start));
                }
                if let Some(mut v) = s.schedule.value(i) {
                    let speed = (v.abs() * 0.005).max(1e-4);
                    let r = ui.add(
                        egui::DragValue::new(&mut v)
                            .range(p.widget_range())
                            .speed(speed),
                    );
                    hold |= r.dragged() || r.has_focus();
                    if r.changed() && p.allows(v) {
                        let _ = s.schedule.set(i, Some(v));
                    }
                } else if let Some(n) = shown {
                    // The schedule derives it at its first step; before, say where it
                    // will come from rather than show a zero.
                    ui.small(if n.schedule_parameter > 0.0 {
                        format!(
                            "{} (set by the move budget, {} moves)",
                            sig(n.schedule_parameter),
                            big(n.budget as f64)
                        )
                    } else {
                        format!("set by the move budget ({} moves)", big(n.budget as f64))
                    });
                } else {
                    ui.small(p.default);
                }
            });
        }
        match self.sent {
            None => self.sent = Some(s.schedule),
            Some(prev) if prev != s.schedule && !hold => {
                actions.push(Action::SetSchedule(s.schedule));
                self.sent = Some(s.schedule);
            }
            Some(_) => {}
        }
    }
}

/// The status line: temperature, acceptance, speed, wirelength, conflicts.
/// `frame_ms` is the time of the app's own frame code and, with a real window, of the
/// whole frame (both `None` unless View > Diagnostics is on).
pub fn status_ui(
    ui: &mut egui::Ui,
    snap: Option<&Snapshot>,
    frame_ms: (Option<f64>, Option<f64>),
    extra: &[String],
) {
    ui.horizontal_wrapped(|ui| {
        let Some(s) = snap else {
            ui.label("starting the engine");
            return;
        };
        let state = if s.running {
            "running"
        } else if s.done {
            "done"
        } else {
            "paused"
        };
        ui.label(state);
        ui.separator();
        ui.label(format!("T {}", sig(s.temperature)));
        ui.separator();
        ui.label(format!("accepted {:.1} %", 100.0 * s.acceptance));
        ui.separator();
        ui.label(format!("{} moves/s", big(s.moves_per_second)));
        ui.separator();
        ui.label(format!("moves {} of {}", big(s.moves as f64), big(s.budget as f64)));
        ui.separator();
        ui.label(format!("stage {}", s.stage));
        ui.separator();
        ui.label(format!("wirelength {:.1} mm", s.wirelength_mm));
        ui.separator();
        let conflicts = s.conflicts.iter().filter(|&&c| c != 0).count();
        ui.label(format!("parts in conflict {conflicts}"));
        ui.separator();
        ui.label(format!("move range {:.2} mm", s.window))
            .on_hover_text("The farthest one move shifts a part at this stage of the run");
        for e in extra {
            ui.separator();
            ui.label(e);
        }
        if let Some(ms) = frame_ms.0 {
            ui.separator();
            ui.label(format!("ui {ms:.1} ms"))
                .on_hover_text("Median time of lehr's own frame code (drawing the board and plots, handling input)");
        }
        if let Some(ms) = frame_ms.1 {
            ui.separator();
            ui.label(format!("frame {ms:.1} ms"))
                .on_hover_text("Median CPU time of a whole frame, including tessellation and rendering");
        }
    });
}

/// Four significant digits, in scientific notation when very large or small.
pub fn sig(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else if v.abs() >= 1e4 || v.abs() < 1e-2 {
        format!("{v:.3e}")
    } else {
        format!("{v:.4}")
    }
}

/// 1234567 as "1.23 M".
pub fn big(v: f64) -> String {
    if v >= 1e9 {
        format!("{:.2} G", v / 1e9)
    } else if v >= 1e6 {
        format!("{:.2} M", v / 1e6)
    } else if v >= 1e4 {
        format!("{:.1} k", v / 1e3)
    } else {
        format!("{v:.0}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn settings_make_the_chosen_schedule() {
        let mut s = ControlSettings::default();
        // The window's defaults are the command line's.
        assert_eq!(s.options(None), AnnealOptions::default());
        assert_eq!(s.schedule(), Schedule::Geometric);
        s.schedule = Schedule::ALL[2];
        assert_eq!(s.schedule(), Schedule::LamDelosme);
        s.schedule = Schedule::ALL[4];
        assert!(s.schedule().is_descent());
        s.auto_start = false;
        s.start_temperature = 3.0;
        assert_eq!(s.options(None).start_temperature, Some(3.0));
        s.start = 2;
        assert_eq!(s.options(None).start, Start::Spectral);
    }

    #[test]
    fn numbers_read_well() {
        assert_eq!(big(1_234_567.0), "1.23 M");
        assert_eq!(big(950.0), "950");
        assert_eq!(sig(0.5), "0.5000");
        assert_eq!(sig(0.000123), "1.230e-4");
    }
}
