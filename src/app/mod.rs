//! The desktop window (eframe/egui): a live board, the controls that steer the annealing,
//! and its plots. Binary only: the library never imports egui.
//!
//! One [`LehrApp`] owns the document (the loaded [`Design`], its file, unsaved marker) and
//! the [`EngineHandle`] of the worker thread that anneals it. Each frame it drains the
//! worker's snapshots without blocking (`events`), lets each panel (`canvas`, `controls`,
//! `copper`, `plots`, the menu) draw and record [`Action`]s, and applies the actions at
//! the end of the frame (here; the file actions in `document`), which is where commands
//! go to the worker. Settings (theme, last folder, recent files, schedule choices,
//! diagnostics) are saved through eframe's storage (`window`); panel sizes are kept by
//! egui's own memory.
//!
//! Rooms: `document` (the board's files), `events` (the worker's messages), `menu` (menu
//! bar and shortcuts, one table), `window` (eframe, frame times, `lehr open`); the panels
//! `canvas`, `controls`, `copper`, `plots`; the drawing code `scene`, `svg`, `raster`,
//! `export`, `caution`.

mod actions;
mod budget;
mod canvas;
mod caution;
mod controls;
mod copper;
mod document;
mod events;
mod files;
mod framebench;
mod history;
mod menu;
mod plots;
mod undo;
mod window;

#[cfg(test)]
mod tests;

use std::path::PathBuf;
use std::sync::Arc;
use std::time::{Duration, Instant};

use anyhow::Result;
use serde::{Deserialize, Serialize};

use lehr_engine::model::{Design, Point, Quarter};
use lehr_engine::place::{Schedule, Weights};
use lehr_engine::worker::{Command, EngineHandle, Snapshot};

use crate::shared;

use canvas::Canvas;
use controls::{ControlSettings, Controls};
use copper::CopperPanel;
pub use framebench::measure_frames;
use lehr_engine::drawing::{BoardFacts, Palette, SceneGeometry};
use plots::Plots;
use undo::{PartState, UndoStack};
pub use window::{FrameTimes, OpenOptions, measure_headless, run_window};
use window::{median, percentile};

/// Repaint interval while the engine runs (about 30 pictures a second).
const REPAINT: Duration = Duration::from_millis(33);

/// The window's look.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum ThemeChoice {
    #[default]
    System,
    Dark,
    Light,
}

/// What is remembered between runs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Settings {
    pub theme: ThemeChoice,
    pub last_folder: Option<PathBuf>,
    pub recent: Vec<PathBuf>,
    pub controls: ControlSettings,
    pub labels: bool,
    /// Show the frame times (lehr's own frame code and a whole frame) in the status line.
    pub diagnostics: bool,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            theme: ThemeChoice::System,
            last_folder: None,
            recent: Vec::new(),
            controls: ControlSettings::default(),
            labels: true,
            diagnostics: false,
        }
    }
}

/// What the user asked for this frame; applied at the end of the frame.
#[derive(Clone, Debug, PartialEq)]
pub enum Action {
    Run,
    Pause,
    Step,
    Reheat(f64),
    Reset,
    DescentOnly,
    Finish,
    /// Route the parts where they stand (on the worker).
    Route,
    CancelRoute,
    /// Check the design rules.
    Check,
    /// Zoom the canvas to this violation of the last check.
    ShowViolation(usize),
    SetSchedule(Schedule),
    SetWeights(Weights),
    SetSpeed(u64),
    /// Fresh start with the controls' seed, effort and start temperature.
    Restart,
    MovePart {
        part: u32,
        before: PartState,
        at: Point,
        quarter: Quarter,
    },
    Rotate(u32),
    ToggleLock(u32),
    Undo,
    Redo,
    /// Open a board (`None`: ask with a dialog). Asks before discarding unsaved changes.
    Open(Option<PathBuf>),
    OpenSample,
    Save,
    SaveAs,
    ExportPng,
    /// Import a netlist as a new, unsaved board (`None`: ask which).
    Import(Option<PathBuf>),
    /// Write the fabrication files and an SVG picture into a folder (`None`: ask which).
    ExportFab(Option<PathBuf>),
    Fit,
    Quit,
    /// The user agreed to lose unsaved changes for this action.
    Discard(Box<Action>),
    /// Save the board (asking where when it has no file yet), then, only if that worked,
    /// carry out this action.
    SaveThen(Box<Action>),
}

/// The board being edited.
struct Document {
    design: Design,
    path: Option<PathBuf>,
    name: String,
    dirty: bool,
}

/// A message shown at the top of the window until dismissed.
#[derive(Clone, Debug)]
struct Message {
    error: bool,
    text: String,
}

/// The application.
pub struct LehrApp {
    pub settings: Settings,
    doc: Document,
    st: BoardFacts,
    engine: EngineHandle,
    snap: Option<Arc<Snapshot>>,
    epoch: u64,
    geom: SceneGeometry,
    geom_stale: bool,
    canvas: Canvas,
    controls: Controls,
    plots: Plots,
    copper: CopperPanel,
    /// [`Snapshot::copper_version`] of the copper in `doc.design.board.copper`.
    copper_version: Option<u64>,
    undo: UndoStack,
    actions: Vec<Action>,
    message: Option<Message>,
    /// An action waiting for the user to agree to discard unsaved changes.
    confirm: Option<Action>,
    /// Fabrication files waiting for the user to agree to export a board that breaks
    /// design rules.
    export_confirm: Option<document::ExportConfirm>,
    caution: Option<String>,
    /// Keep polling the engine until then (an answer to a command is on its way).
    expect_until: Instant,
    /// A legal finish is on its way.
    finishing: bool,
    title: String,
    pub frames: FrameTimes,
    quit_ok: bool,
    /// Applying an action the user agreed may discard unsaved changes.
    discarding: bool,
    /// Shortest time between pictures while the engine runs.
    pub repaint: Duration,
    /// `repaint` was given on the command line: keep it.
    pub repaint_fixed: bool,
    /// The CPU budget that sets the interval between pictures (real window only).
    pub budget: Option<budget::Budget>,
    /// The interval between pictures chosen in the last frame.
    pub interval: Duration,
}

impl LehrApp {
    /// The app on `design`, read from `path` (`None` for the built-in sample).
    pub fn new(design: Design, path: Option<PathBuf>, name: String, settings: Settings) -> LehrApp {
        let opts = settings.controls.options(None);
        let engine = EngineHandle::spawn(design.clone(), opts);
        engine.send(Command::SetMovesPerTick(settings.controls.speed));
        let mut canvas = Canvas::default();
        canvas.labels = settings.labels;
        let mut app = LehrApp {
            st: BoardFacts::new(&design),
            caution: caution::caution(&design),
            doc: Document {
                design,
                path,
                name,
                dirty: false,
            },
            settings,
            engine,
            snap: None,
            epoch: 0,
            geom: SceneGeometry::default(),
            geom_stale: true,
            canvas,
            controls: Controls::default(),
            plots: Plots::default(),
            copper: CopperPanel::default(),
            copper_version: None,
            undo: UndoStack::default(),
            actions: Vec::new(),
            message: None,
            confirm: None,
            export_confirm: None,
            expect_until: Instant::now() + Duration::from_secs(2),
            finishing: false,
            title: String::new(),
            frames: FrameTimes::default(),
            quit_ok: false,
            discarding: false,
            repaint: REPAINT,
            repaint_fixed: false,
            budget: None,
            interval: REPAINT,
        };
        app.check_board_copper();
        app.rebuild_geometry();
        app
    }

    /// The built-in sample board.
    pub fn sample(settings: Settings) -> Result<LehrApp> {
        let design = lehr_engine::io::parse_board(shared::SAMPLE_BOARD, shared::SAMPLE_NAME)?;
        Ok(LehrApp::new(
            design,
            None,
            shared::SAMPLE_NAME.to_string(),
            settings,
        ))
    }

    /// The latest snapshot from the engine.
    pub fn snapshot(&self) -> Option<&Snapshot> {
        self.snap.as_deref()
    }

    pub fn design(&self) -> &Design {
        &self.doc.design
    }

    #[cfg(test)]
    pub fn is_dirty(&self) -> bool {
        self.doc.dirty
    }

    /// The text of the message shown at the top of the window, if any.
    #[cfg(test)]
    pub fn message_text(&self) -> Option<&str> {
        self.message.as_ref().map(|m| m.text.as_str())
    }

    /// Queues an action as if the user had asked for it.
    pub fn push(&mut self, a: Action) {
        self.actions.push(a);
    }

    fn rebuild_geometry(&mut self) {
        self.geom = SceneGeometry::build(
            &self.doc.design,
            &self.st,
            self.snap.as_deref(),
            self.canvas.dragging(),
        );
        self.geom_stale = false;
    }

    /// The part panel: what is selected, with its lock and turn buttons.
    fn selection_ui(&mut self, ui: &mut egui::Ui) {
        let Some(i) = self.canvas.selected else {
            ui.label("Click a part to select it; drag it to move it.");
            return;
        };
        let Some(part) = self.doc.design.board.parts.get(i as usize) else {
            return;
        };
        let locked = self.geom.parts.get(i as usize).is_some_and(|g| g.locked);
        ui.horizontal_wrapped(|ui| {
            ui.strong(format!("Part {}", part.reference));
            ui.label(format!(
                "{} {}",
                self.doc.design.footprints[i as usize].name, part.value
            ));
            if let Some(g) = self.geom.parts.get(i as usize) {
                ui.label(format!(
                    "at ({:.2}, {:.2}) mm, {} deg",
                    g.at.x,
                    g.at.y,
                    g.quarter.degrees()
                ));
            }
            if ui
                .button(if locked { "Unlock" } else { "Lock" })
                .on_hover_text("Locked parts never move (L)")
                .clicked()
            {
                self.actions.push(Action::ToggleLock(i));
            }
            if ui
                .add_enabled(!locked, egui::Button::new("Turn"))
                .on_hover_text("A quarter turn counter-clockwise (R)")
                .clicked()
            {
                self.actions.push(Action::Rotate(i));
            }
        });
    }

    /// Everything in the window, one frame: take the worker's events, read the input, draw
    /// the panels (which record actions), apply the actions, then ask for the next frame.
    /// (Tests call this through the headless harness.)
    pub fn show(&mut self, ui: &mut egui::Ui) {
        let t0 = Instant::now();
        let ctx = ui.ctx().clone();
        self.drain();
        if self.geom_stale || self.canvas.dragging().is_some() {
            self.rebuild_geometry();
        }
        self.window_input(&ctx);
        let dark = ui.visuals().dark_mode;
        let pal = if dark {
            Palette::dark()
        } else {
            Palette::light()
        };
        self.banners_ui(ui, dark);
        self.panels_ui(ui, &pal);
        self.confirm_ui(&ctx);
        self.export_confirm_ui(&ctx);
        for a in std::mem::take(&mut self.actions) {
            self.apply(a, &ctx);
        }
        self.update_title(&ctx);
        self.schedule_repaint(&ctx);
        self.frames.push(t0.elapsed().as_secs_f64() * 1e3);
    }

    /// Files dropped on the window, a request to close it, and the keyboard shortcuts.
    fn window_input(&mut self, ctx: &egui::Context) {
        // Files dropped on the window.
        let dropped: Vec<PathBuf> = ctx.input(|i| {
            i.raw
                .dropped_files
                .iter()
                .map(|f| f.path().to_path_buf())
                .collect()
        });
        if let Some(p) = dropped.into_iter().next() {
            self.actions.push(Action::Open(Some(p)));
        }
        // Closing the window with unsaved changes asks first.
        if ctx.input(|i| i.viewport().close_requested()) && self.doc.dirty && !self.quit_ok {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            self.confirm = Some(Action::Quit);
        }
        self.shortcuts(ctx);
    }

    /// The menu bar, the caution about hazards, and the message line.
    fn banners_ui(&mut self, ui: &mut egui::Ui, dark: bool) {
        egui::Panel::top("menu").show(ui, |ui| {
            self.menu_ui(ui);
        });
        if let Some(c) = &self.caution {
            let c = c.clone();
            egui::Panel::top("caution")
                .frame(
                    egui::Frame::new()
                        .fill(if dark {
                            egui::Color32::from_rgb(0x5a, 0x3c, 0x0a)
                        } else {
                            egui::Color32::from_rgb(0xff, 0xe6, 0xa8)
                        })
                        .inner_margin(6.0),
                )
                .show(ui, |ui| {
                    ui.label(egui::RichText::new(c).strong());
                });
        }
        if let Some(m) = self.message.clone() {
            egui::Panel::top("message").show(ui, |ui| {
                ui.horizontal(|ui| {
                    let color = if m.error {
                        ui.visuals().error_fg_color
                    } else {
                        ui.visuals().text_color()
                    };
                    ui.label(egui::RichText::new(&m.text).color(color));
                    if ui.small_button("Dismiss").clicked() {
                        self.message = None;
                    }
                });
            });
        }
    }

    /// The status line, the rules list, the controls, the plots and the board.
    fn panels_ui(&mut self, ui: &mut egui::Ui, pal: &Palette) {
        let frame_ms = if self.settings.diagnostics {
            (self.frames.median(), self.frames.whole_median())
        } else {
            (None, None)
        };
        let extra = [
            self.copper.status(self.snap.as_deref()),
            self.copper.rules_status(),
        ];
        egui::Panel::bottom("status").show(ui, |ui| {
            controls::status_ui(ui, self.snap.as_deref(), frame_ms, &extra);
        });
        if self.copper.show_rules && self.copper.checked.is_some() {
            egui::Panel::bottom("rules")
                .resizable(true)
                .default_size(150.0)
                .show(ui, |ui| {
                    self.copper.rules_ui(ui, &mut self.actions);
                });
        }
        egui::Panel::left("controls")
            .resizable(true)
            .default_size(270.0)
            .show(ui, |ui| {
                egui::ScrollArea::vertical().show(ui, |ui| {
                    self.controls.ui(
                        ui,
                        &mut self.settings.controls,
                        self.snap.as_deref(),
                        &mut self.actions,
                    );
                    ui.separator();
                    self.copper.ui(ui, self.snap.as_deref(), &mut self.actions);
                    ui.separator();
                    ui.heading("Part");
                    self.selection_ui(ui);
                });
            });
        egui::Panel::right("plots")
            .resizable(true)
            .default_size(380.0)
            .show(ui, |ui| {
                self.plots.ui(ui, self.snap.as_deref());
            });
        egui::CentralPanel::default_margins()
            .frame(egui::Frame::NONE)
            .show(ui, |ui| {
                self.canvas.ui(
                    ui,
                    &self.doc.design,
                    &self.st,
                    &self.geom,
                    pal,
                    &mut self.actions,
                );
            });
        self.settings.labels = self.canvas.labels;
    }

    /// The question before unsaved changes are lost.
    fn confirm_ui(&mut self, ctx: &egui::Context) {
        if let Some(pending) = self.confirm.clone() {
            let modal = egui::Modal::new(egui::Id::unique("discard")).show(ctx, |ui| {
                ui.heading("Unsaved changes");
                ui.label(format!(
                    "The board {} has changes that are not saved. Save them first?",
                    self.doc.name
                ));
                ui.horizontal(|ui| {
                    if ui.button("Save").clicked() {
                        self.actions
                            .push(Action::SaveThen(Box::new(pending.clone())));
                        self.confirm = None;
                    }
                    if ui.button("Discard changes").clicked() {
                        self.actions
                            .push(Action::Discard(Box::new(pending.clone())));
                        self.confirm = None;
                    }
                    if ui.button("Cancel").clicked() {
                        self.confirm = None;
                    }
                });
            });
            if modal.should_close() {
                self.confirm = None;
            }
        }
    }

    /// The window's title: the board's name, starred while it has unsaved changes.
    fn update_title(&mut self, ctx: &egui::Context) {
        let title = format!(
            "{}{} - lehr",
            if self.doc.dirty { "* " } else { "" },
            self.doc.name
        );
        if title != self.title {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(title.clone()));
            self.title = title;
        }
    }

    /// Repaint only while something is happening, at about 30 pictures a second.
    fn schedule_repaint(&mut self, ctx: &egui::Context) {
        let running = self.snap.as_deref().is_some_and(|s| s.running);
        if running
            || self.finishing
            || self.copper.routing
            || self.copper.checking
            || Instant::now() < self.expect_until
            || self.canvas.dragging().is_some()
        {
            let fallback = self.frames.repaint_interval(self.repaint);
            self.interval = match &mut self.budget {
                Some(b) if running => b.update(fallback),
                _ => fallback,
            };
            ctx.request_repaint_after(self.interval);
        }
        if !running && let Some(b) = &mut self.budget {
            b.pause();
        }
    }
}
