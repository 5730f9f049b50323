//! The desktop window (eframe/egui): a live board, the controls that steer the annealing,
//! and its plots. Binary only: the library never imports egui.
//!
//! One [`LehrApp`] owns the document (the loaded [`Design`], its file, unsaved marker) and
//! the [`EngineHandle`] of the worker thread that anneals it. Each frame it drains the
//! worker's snapshots without blocking, lets each panel (`canvas`, `controls`, `plots`)
//! draw and record [`Action`]s, and applies the actions at the end of the frame.
//! Settings (theme, last folder, recent files, schedule choices) are saved through
//! eframe's storage; panel sizes are kept by egui's own memory.

mod budget;
mod canvas;
mod caution;
mod controls;
mod copper;
mod export;
mod files;
mod framebench;
mod history;
mod plots;
mod raster;
mod scene;
pub(crate) mod svg;
mod undo;

#[cfg(test)]
mod tests;

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

use anyhow::{Result, anyhow};
use serde::{Deserialize, Serialize};

use lehr_engine::model::{Design, Point, Quarter};
use lehr_engine::place::{Schedule, Weights};
use lehr_engine::route::RouteOptions;
use lehr_engine::rules::ViolationKind;
use lehr_engine::worker::{Command, EngineHandle, Event, Snapshot};

use canvas::Canvas;
use controls::{ControlSettings, Controls};
use copper::CopperPanel;
pub use framebench::measure_frames;
use plots::Plots;
use scene::{Geometry, Palette, Static};
use undo::{Edit, PartState, UndoStack};

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
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            theme: ThemeChoice::System,
            last_folder: None,
            recent: Vec::new(),
            controls: ControlSettings::default(),
            labels: true,
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

/// Frame times of the user-interface thread, for the status line and `--measure`.
#[derive(Debug, Default)]
pub struct FrameTimes {
    /// Milliseconds, the last 240 frames.
    recent: std::collections::VecDeque<f64>,
    pub all: Vec<f64>,
    pub keep_all: bool,
    /// Whole-frame CPU time as eframe measures it (layout, tessellation and the calls to
    /// the renderer), the last 60 frames; empty without a real window.
    whole: std::collections::VecDeque<f64>,
}

impl FrameTimes {
    fn push(&mut self, ms: f64) {
        if self.recent.len() == 240 {
            self.recent.pop_front();
        }
        self.recent.push_back(ms);
        if self.keep_all {
            self.all.push(ms);
        }
    }

    /// Median of the recent frames.
    pub fn median(&self) -> Option<f64> {
        median(self.recent.iter().copied().collect())
    }

    fn push_whole(&mut self, ms: f64) {
        if self.whole.len() == 60 {
            self.whole.pop_front();
        }
        self.whole.push_back(ms);
    }

    /// Median whole-frame time of the recent frames.
    pub fn whole_median(&self) -> Option<f64> {
        median(self.whole.iter().copied().collect())
    }

    /// How long to wait between pictures while the engine runs: `min` (about 30 a
    /// second with a GPU), or longer when a frame costs more than an eighth of that, so
    /// the window takes at most about an eighth of a core from the worker.
    pub fn repaint_interval(&self, min: Duration) -> Duration {
        let cost = self.whole_median().or(self.median()).unwrap_or(0.0);
        min.max(Duration::from_secs_f64((8.0 * cost / 1e3).min(0.3)))
    }
}

/// The median of some values.
pub fn median(mut v: Vec<f64>) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    Some(v[v.len() / 2])
}

/// The application.
pub struct LehrApp {
    pub settings: Settings,
    doc: Document,
    st: Static,
    engine: EngineHandle,
    snap: Option<Arc<Snapshot>>,
    epoch: u64,
    geom: Geometry,
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
            st: Static::new(&design),
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
            geom: Geometry::default(),
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
        app.rebuild_geometry();
        app
    }

    /// The built-in sample board.
    pub fn sample(settings: Settings) -> Result<LehrApp> {
        let design =
            lehr_engine::io::parse_board(crate::cli::SAMPLE_BOARD, crate::cli::SAMPLE_NAME)?;
        Ok(LehrApp::new(
            design,
            None,
            crate::cli::SAMPLE_NAME.to_string(),
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

    fn send(&mut self, c: Command) {
        self.expect_until = Instant::now() + Duration::from_secs(1);
        if !self.engine.send(c) {
            self.message = Some(Message {
                error: true,
                text: "the placement engine has stopped; open the board again to restart it".into(),
            });
        }
    }

    /// Takes what the engine sent, for at most a few milliseconds.
    fn drain(&mut self) {
        let start = Instant::now();
        while start.elapsed() < Duration::from_millis(4) {
            let Some(ev) = self.engine.try_recv() else {
                break;
            };
            match ev {
                Event::Snapshot(s) => {
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
                        self.doc.design.board.copper =
                            s.copper.as_deref().cloned().unwrap_or_default();
                        if s.copper.is_none() {
                            self.st.routed.iter_mut().for_each(|r| *r = false);
                        }
                    }
                    self.copper.note_snapshot(&s);
                    self.snap = Some(s);
                    self.geom_stale = true;
                }
                Event::RouteProgress(mut p) => {
                    // Copper as it appears; the final copper comes with the snapshot
                    // after `Routed`.
                    if let Some(c) = p.copper.take() {
                        self.doc.design.board.copper = c;
                        self.geom_stale = true;
                    }
                    self.copper.progress = Some(p);
                }
                Event::Routed(r) => {
                    self.copper.routing = false;
                    self.copper.progress = None;
                    self.doc.dirty = true;
                    let res = &r.result;
                    let unrouted: std::collections::HashSet<&str> =
                        res.unrouted.iter().map(|u| u.net.as_str()).collect();
                    for (flag, net) in self.st.routed.iter_mut().zip(&self.doc.design.board.nets) {
                        *flag = !unrouted.contains(net.name.as_str());
                    }
                    self.geom_stale = true;
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
                            if res.unrouted.is_empty() {
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
                            }
                        ),
                    });
                    self.copper.routed = Some(r);
                }
                Event::Checked(c) => {
                    self.copper.checking = false;
                    if c.with_copper {
                        let open: std::collections::HashSet<&str> = c
                            .violations
                            .iter()
                            .filter(|v| v.kind == ViolationKind::Unconnected)
                            .flat_map(|v| v.nets.iter().map(String::as_str))
                            .collect();
                        for (flag, net) in
                            self.st.routed.iter_mut().zip(&self.doc.design.board.nets)
                        {
                            *flag = !open.contains(net.name.as_str());
                        }
                        self.geom_stale = true;
                    }
                    self.copper.checked = Some(c);
                    self.copper.check_stale = false;
                    self.copper.selected = None;
                    self.copper.show_rules = true;
                }
                Event::Finished(f) => {
                    self.finishing = false;
                    self.doc.dirty = true;
                    let r = &f.report;
                    let text = if f.conflicts.is_empty() {
                        format!(
                            "Finished: every part on the grid, inside the board, clear of keep-outs and of each other; wirelength {:.1} mm.",
                            r.wirelength_mm
                        )
                    } else {
                        let list: Vec<String> =
                            f.conflicts.iter().take(6).map(|c| c.to_string()).collect();
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
                Event::Error(e) => {
                    self.finishing = false;
                    self.copper.routing = false;
                    self.copper.checking = false;
                    self.message = Some(Message {
                        error: true,
                        text: e,
                    });
                }
                Event::Failed(e) => {
                    self.finishing = false;
                    self.copper.routing = false;
                    self.copper.checking = false;
                    self.message = Some(Message {
                        error: true,
                        text: e,
                    });
                }
            }
        }
    }

    fn rebuild_geometry(&mut self) {
        self.geom = Geometry::build(
            &self.doc.design,
            &self.st,
            self.snap.as_deref(),
            self.canvas.dragging(),
        );
        self.geom_stale = false;
    }

    /// Where a part stands now (as the engine has it, not where a drag shows it) and
    /// whether it is locked.
    fn part_state(&self, part: u32) -> Option<PartState> {
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

    /// The board with the parts where the engine has them now.
    fn current_board(&self) -> lehr_engine::model::Board {
        let mut board = match self.snap.as_deref() {
            Some(s) => lehr_engine::place::board_at(&self.doc.design, &s.positions, &s.quarters),
            None => self.doc.design.board.clone(),
        };
        if let Some(s) = self.snap.as_deref() {
            for (p, l) in board.parts.iter_mut().zip(&s.locked) {
                p.locked = *l;
            }
        }
        board
    }

    /// Replaces the board and starts a new engine on it.
    fn load(&mut self, design: Design, path: Option<PathBuf>, name: String) {
        self.engine = EngineHandle::spawn(design.clone(), self.settings.controls.options(None));
        self.engine
            .send(Command::SetMovesPerTick(self.settings.controls.speed));
        self.st = Static::new(&design);
        self.caution = caution::caution(&design);
        self.doc = Document {
            design,
            path,
            name,
            dirty: false,
        };
        self.snap = None;
        self.epoch = 0;
        self.plots.history.clear();
        self.controls.weights = None;
        self.copper.reset();
        self.copper_version = None;
        self.undo.clear();
        self.canvas.reset();
        self.message = None;
        self.finishing = false;
        self.expect_until = Instant::now() + Duration::from_secs(2);
        self.rebuild_geometry();
    }

    /// Opens a board file; a problem is shown in the window with file, line and column.
    pub fn open_path(&mut self, path: &Path) {
        match lehr_engine::io::load_board(path) {
            Ok(design) => {
                files::remember(&mut self.settings.recent, path);
                self.settings.last_folder = path.parent().map(Path::to_path_buf);
                self.load(design, Some(path.to_path_buf()), files::short_name(path));
            }
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: format!("Could not open the board:\n{e}"),
                });
            }
        }
    }

    fn save_to(&mut self, path: &Path) {
        let board = self.current_board();
        match lehr_engine::io::save_board(path, &board) {
            Ok(()) => {
                self.doc.dirty = false;
                self.doc.path = Some(path.to_path_buf());
                self.doc.name = files::short_name(path);
                files::remember(&mut self.settings.recent, path);
                self.settings.last_folder = path.parent().map(Path::to_path_buf);
                self.message = Some(Message {
                    error: false,
                    text: format!("Saved {}", path.display()),
                });
            }
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: format!("Could not save: {e}"),
                })
            }
        }
    }

    /// Writes a PNG picture of the board as it is now.
    pub fn export_png(&self, path: &Path, dark: bool) -> Result<()> {
        let pal = if dark {
            Palette::dark()
        } else {
            Palette::light()
        };
        let bytes = export::png(
            &self.doc.design,
            &self.st,
            &self.geom,
            &pal,
            40.0,
            self.canvas.labels,
        )
        .map_err(|e| anyhow!(e))?;
        std::fs::write(path, bytes).map_err(|e| anyhow!("cannot write {}: {e}", path.display()))
    }

    /// Imports a netlist (with its parts table or footprint mapping when one lies beside
    /// it, see [`files::companion`]) as a new board that is not saved yet.
    fn import_netlist(&mut self, path: &Path) {
        use lehr_engine::io::{Format, ImportFiles, ImportOptions, import_file};
        let format = std::fs::read(path).map(|b| Format::detect(path, &b));
        let (parts, footprints) = match format {
            Ok(Format::Connections) => (files::companion(path, "parts.csv"), None),
            Ok(Format::Edif) => (None, files::companion(path, "footprints.txt")),
            Err(_) => (None, None),
        };
        let files = ImportFiles {
            netlist: path,
            parts: parts.as_deref(),
            footprints: footprints.as_deref(),
        };
        let result = import_file(&files, &ImportOptions::default())
            .map_err(|e| e.to_string())
            .and_then(|(_, imp)| {
                lehr_engine::model::resolve(imp.board)
                    .map(|d| (d, imp.warnings))
                    .map_err(|ps| {
                        format!(
                            "the imported board is not valid: {}",
                            lehr_engine::model::problems_line(&ps)
                        )
                    })
            });
        match result {
            Ok((design, warnings)) => {
                let name = path
                    .file_stem()
                    .and_then(|s| s.to_str())
                    .unwrap_or("imported")
                    .to_string();
                let (n_parts, n_nets) = (design.board.parts.len(), design.board.nets.len());
                self.load(design, None, name);
                // A new board: nothing on disk holds it yet.
                self.doc.dirty = true;
                self.settings.last_folder = path.parent().map(Path::to_path_buf);
                let mut text = format!(
                    "Imported {}: {n_parts} parts, {n_nets} nets. Press Run to place them, then save.",
                    path.display()
                );
                if let Some(w) = warnings.first() {
                    text.push_str(&format!(" {} warning(s), the first: {w}", warnings.len()));
                }
                self.message = Some(Message {
                    error: !warnings.is_empty(),
                    text,
                });
            }
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: format!("Could not import: {e}"),
                })
            }
        }
    }

    /// Writes the Gerber files, the drill program, the centroid list and an SVG picture
    /// of the board as it stands into `dir`; returns what to tell the user.
    fn export_fab(&self, dir: &Path) -> Result<String> {
        let design = lehr_engine::model::resolve(self.current_board()).map_err(|ps| {
            anyhow!(
                "the board is not valid as placed: {}",
                lehr_engine::model::problems_line(&ps)
            )
        })?;
        let stem = crate::export_cmd::file_stem(Path::new(&format!("{}.board.ron", self.doc.name)));
        let targets = crate::export_cmd::Targets::all_in(dir, &stem);
        let files = crate::export_cmd::build_files(
            &design,
            &stem,
            &targets,
            &lehr_engine::fab::FabOptions::default(),
        )?;
        crate::export_cmd::write_files(&targets, &files)?;
        let mut text = format!("Wrote {} files into {}.", files.len(), dir.display());
        for w in lehr_engine::fab::warnings(&design) {
            text.push(' ');
            text.push_str(&w);
            text.push('.');
        }
        Ok(text)
    }

    fn folder(&self) -> Option<PathBuf> {
        self.settings.last_folder.clone()
    }

    fn apply(&mut self, a: Action, ctx: &egui::Context) {
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
                let opts = self.settings.controls.options(self.controls.weights);
                self.send(Command::SetOptions(opts));
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
            Action::Discard(inner) => {
                self.discarding = true;
                self.apply(*inner, ctx);
                self.discarding = false;
            }
            Action::Open(Some(path)) => self.open_path(&path),
            Action::Open(None) => match files::pick_board(self.folder().as_deref()) {
                Some(p) => self.open_path(&p),
                None => self.no_dialog(),
            },
            Action::OpenSample => {
                match lehr_engine::io::parse_board(
                    crate::cli::SAMPLE_BOARD,
                    crate::cli::SAMPLE_NAME,
                ) {
                    Ok(d) => self.load(d, None, crate::cli::SAMPLE_NAME.to_string()),
                    Err(e) => {
                        self.message = Some(Message {
                            error: true,
                            text: e.to_string(),
                        })
                    }
                }
            }
            Action::Save => match self.doc.path.clone() {
                Some(p) => self.save_to(&p),
                None => self.apply(Action::SaveAs, ctx),
            },
            Action::SaveAs => match files::pick_save(self.folder().as_deref(), &self.doc.name) {
                Some(p) => self.save_to(&p),
                None => self.no_dialog(),
            },
            Action::ExportPng => match files::pick_png(self.folder().as_deref(), &self.doc.name) {
                Some(p) => {
                    let dark = ctx.global_style().visuals.dark_mode;
                    self.message = Some(match self.export_png(&p, dark) {
                        Ok(()) => Message {
                            error: false,
                            text: format!("Wrote {}", p.display()),
                        },
                        Err(e) => Message {
                            error: true,
                            text: format!("Could not export: {e}"),
                        },
                    });
                }
                None => self.no_dialog(),
            },
            Action::Import(Some(path)) => self.import_netlist(&path),
            Action::Import(None) => match files::pick_netlist(self.folder().as_deref()) {
                Some(p) => self.import_netlist(&p),
                None => self.no_dialog(),
            },
            Action::ExportFab(Some(dir)) => {
                self.message = Some(match self.export_fab(&dir) {
                    Ok(text) => Message { error: false, text },
                    Err(e) => Message {
                        error: true,
                        text: format!("Could not export: {e:#}"),
                    },
                });
            }
            Action::ExportFab(None) => match files::pick_folder(self.folder().as_deref()) {
                Some(d) => self.apply(Action::ExportFab(Some(d)), ctx),
                None => self.no_dialog(),
            },
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
            self.canvas.show(at, span * 1.2, parts);
        }
    }

    /// A dialog gave no file: cancelled, or no dialog could be shown.
    fn no_dialog(&mut self) {
        self.message = Some(Message {
            error: false,
            text: "No file chosen. (If no dialog appeared, this desktop has no file-dialog service: open a board with `lehr open FILE` or drop it on the window.)".into(),
        });
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

    /// Keyboard shortcuts (not while a text field has the keyboard).
    fn shortcuts(&mut self, ctx: &egui::Context) {
        if ctx.egui_wants_keyboard_input() {
            return;
        }
        use egui::{Key, KeyboardShortcut, Modifiers};
        let running = self.snap.as_deref().is_some_and(|s| s.running);
        let sel = self.canvas.selected;
        let mut out = Vec::new();
        ctx.input_mut(|i| {
            let cmd = Modifiers::COMMAND;
            let cmd_shift = Modifiers::COMMAND | Modifiers::SHIFT;
            if i.consume_shortcut(&KeyboardShortcut::new(cmd_shift, Key::Z))
                || i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::Y))
            {
                out.push(Action::Redo);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::Z)) {
                out.push(Action::Undo);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd_shift, Key::S)) {
                out.push(Action::SaveAs);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::S)) {
                out.push(Action::Save);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::O)) {
                out.push(Action::Open(None));
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::E)) {
                out.push(Action::ExportPng);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::R)) {
                out.push(Action::Reset);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::Enter)) {
                out.push(Action::Finish);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::T)) {
                out.push(Action::Route);
            }
            if i.consume_shortcut(&KeyboardShortcut::new(cmd, Key::K)) {
                out.push(Action::Check);
            }
            if i.consume_key(Modifiers::NONE, Key::Space) {
                out.push(if running { Action::Pause } else { Action::Run });
            }
            if i.consume_key(Modifiers::NONE, Key::Period) {
                out.push(Action::Step);
            }
            if i.consume_key(Modifiers::NONE, Key::H) {
                out.push(Action::Reheat(self.settings.controls.reheat));
            }
            if i.consume_key(Modifiers::NONE, Key::F) {
                out.push(Action::Fit);
            }
            if let Some(p) = sel {
                if i.consume_key(Modifiers::NONE, Key::R) {
                    out.push(Action::Rotate(p));
                }
                if i.consume_key(Modifiers::NONE, Key::L) {
                    out.push(Action::ToggleLock(p));
                }
            }
        });
        self.actions.extend(out);
    }

    fn menu_ui(&mut self, ui: &mut egui::Ui) {
        egui::MenuBar::new().ui(ui, |ui| {
            ui.menu_button("File", |ui| {
                if ui
                    .add(egui::Button::new("Open...").shortcut_text("Ctrl+O"))
                    .clicked()
                {
                    self.actions.push(Action::Open(None));
                }
                ui.menu_button("Open recent", |ui| {
                    if self.settings.recent.is_empty() {
                        ui.label("nothing yet");
                    }
                    for p in self.settings.recent.clone() {
                        if ui.button(p.display().to_string()).clicked() {
                            self.actions.push(Action::Open(Some(p)));
                        }
                    }
                });
                if ui.button("Open the sample board").clicked() {
                    self.actions.push(Action::OpenSample);
                }
                if ui
                    .button("Import netlist (CSV, TSV, EDIF)...")
                    .on_hover_text(
                        "A connection list with NAME.parts.csv beside it, or an EDIF netlist \
                         with NAME.footprints.txt beside it (docs/import-formats.md)",
                    )
                    .clicked()
                {
                    self.actions.push(Action::Import(None));
                }
                ui.separator();
                if ui
                    .add(egui::Button::new("Save").shortcut_text("Ctrl+S"))
                    .clicked()
                {
                    self.actions.push(Action::Save);
                }
                if ui
                    .add(egui::Button::new("Save as...").shortcut_text("Ctrl+Shift+S"))
                    .clicked()
                {
                    self.actions.push(Action::SaveAs);
                }
                if ui
                    .add(egui::Button::new("Export picture (PNG)...").shortcut_text("Ctrl+E"))
                    .clicked()
                {
                    self.actions.push(Action::ExportPng);
                }
                if ui
                    .button("Export fabrication files...")
                    .on_hover_text("Gerber (copper, mask, outline), NC drill, centroid CSV and an SVG picture, into a folder")
                    .clicked()
                {
                    self.actions.push(Action::ExportFab(None));
                }
                ui.separator();
                if ui.button("Quit").clicked() {
                    self.actions.push(Action::Quit);
                }
            });
            ui.menu_button("Edit", |ui| {
                if ui
                    .add_enabled(
                        self.undo.can_undo(),
                        egui::Button::new("Undo").shortcut_text("Ctrl+Z"),
                    )
                    .clicked()
                {
                    self.actions.push(Action::Undo);
                }
                if ui
                    .add_enabled(
                        self.undo.can_redo(),
                        egui::Button::new("Redo").shortcut_text("Ctrl+Shift+Z"),
                    )
                    .clicked()
                {
                    self.actions.push(Action::Redo);
                }
                ui.separator();
                let sel = self.canvas.selected;
                if ui
                    .add_enabled(
                        sel.is_some(),
                        egui::Button::new("Turn part").shortcut_text("R"),
                    )
                    .clicked()
                    && let Some(p) = sel
                {
                    self.actions.push(Action::Rotate(p));
                }
                if ui
                    .add_enabled(
                        sel.is_some(),
                        egui::Button::new("Lock or unlock part").shortcut_text("L"),
                    )
                    .clicked()
                    && let Some(p) = sel
                {
                    self.actions.push(Action::ToggleLock(p));
                }
            });
            ui.menu_button("View", |ui| {
                if ui
                    .add(egui::Button::new("Fit board").shortcut_text("F"))
                    .clicked()
                {
                    self.actions.push(Action::Fit);
                }
                ui.checkbox(&mut self.canvas.labels, "part references");
                ui.separator();
                for (t, name) in [
                    (ThemeChoice::System, "theme of the system"),
                    (ThemeChoice::Dark, "dark"),
                    (ThemeChoice::Light, "light"),
                ] {
                    if ui.radio_value(&mut self.settings.theme, t, name).changed() {
                        apply_theme(ui.ctx(), t);
                    }
                }
            });
        });
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

    /// Everything in the window. (Tests call this through the headless harness.)
    pub fn show(&mut self, ui: &mut egui::Ui) {
        let t0 = Instant::now();
        let ctx = ui.ctx().clone();
        self.drain();
        if self.geom_stale || self.canvas.dragging().is_some() {
            self.rebuild_geometry();
        }

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
        self.shortcuts(&ctx);

        let dark = ui.visuals().dark_mode;
        let pal = if dark {
            Palette::dark()
        } else {
            Palette::light()
        };

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
        let frame_ms = (self.frames.median(), self.frames.whole_median());
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
                    &pal,
                    &mut self.actions,
                );
            });
        self.settings.labels = self.canvas.labels;

        if let Some(pending) = self.confirm.clone() {
            let modal = egui::Modal::new(egui::Id::unique("discard")).show(&ctx, |ui| {
                ui.heading("Unsaved changes");
                ui.label(format!(
                    "The board {} has changes that are not saved. Discard them?",
                    self.doc.name
                ));
                ui.horizontal(|ui| {
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

        for a in std::mem::take(&mut self.actions) {
            self.apply(a, &ctx);
        }

        let title = format!(
            "{}{} - lehr",
            if self.doc.dirty { "* " } else { "" },
            self.doc.name
        );
        if title != self.title {
            ctx.send_viewport_cmd(egui::ViewportCommand::Title(title.clone()));
            self.title = title;
        }
        // Repaint only while something is happening, at about 30 pictures a second.
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
        self.frames.push(t0.elapsed().as_secs_f64() * 1e3);
    }
}

fn apply_theme(ctx: &egui::Context, t: ThemeChoice) {
    ctx.set_theme(match t {
        ThemeChoice::System => egui::ThemePreference::System,
        ThemeChoice::Dark => egui::ThemePreference::Dark,
        ThemeChoice::Light => egui::ThemePreference::Light,
    });
}

/// `--measure`: press run at start, report frame times and engine speed when the run is
/// frozen or after a while, whichever comes first.
struct Measure {
    seconds: f64,
    start: Instant,
    started: bool,
    /// Process and engine CPU seconds at the start.
    cpu0: Option<(f64, f64)>,
}

/// Shares of a core over `wall` seconds since `cpu0`: the engine's and the rest of the
/// process's (the window and the renderer's threads), from `/proc` (Linux).
fn cpu_shares(cpu0: Option<(f64, f64)>, wall: f64) -> (Option<f64>, Option<f64>) {
    match (cpu0, budget::cpu_seconds()) {
        (Some((p0, e0)), Some((p1, e1))) if wall > 0.0 => (
            Some((e1 - e0) / wall),
            Some(((p1 - p0) - (e1 - e0)).max(0.0) / wall),
        ),
        _ => (None, None),
    }
}

/// The eframe side: the app plus what only a real window has.
struct Window {
    app: LehrApp,
    measure: Option<Measure>,
    cpu_ms: Vec<f64>,
    renderer_checked: bool,
}

/// Shortest time between pictures when OpenGL is drawn by the CPU (Mesa's llvmpipe or
/// softpipe, as on machines without a GPU): rasterising takes CPU time from the worker.
const SOFTWARE_REPAINT: Duration = Duration::from_millis(100);

/// The OpenGL renderer's name, if the window draws with OpenGL.
fn gl_renderer(frame: &eframe::Frame) -> Option<String> {
    use eframe::glow::HasContext as _;
    let gl = frame.gl()?;
    // SAFETY: a plain query of a string constant on the current context.
    Some(unsafe { gl.get_parameter_string(eframe::glow::RENDERER) })
}

impl eframe::App for Window {
    /// The canvas's background, so the canvas need not paint it again.
    fn clear_color(&self, visuals: &egui::Visuals) -> [f32; 4] {
        let pal = if visuals.dark_mode {
            Palette::dark()
        } else {
            Palette::light()
        };
        pal.background.to_normalized_gamma_f32()
    }

    fn ui(&mut self, ui: &mut egui::Ui, frame: &mut eframe::Frame) {
        if !self.renderer_checked {
            self.renderer_checked = true;
            if let Some(r) = gl_renderer(frame) {
                let r = r.to_lowercase();
                if (r.contains("llvmpipe") || r.contains("softpipe") || r.contains("software"))
                    && self.app.repaint < SOFTWARE_REPAINT
                    && !self.app.repaint_fixed
                {
                    self.app.repaint = SOFTWARE_REPAINT;
                }
            }
        }
        if let Some(cpu) = frame.info().cpu_usage {
            let ms = f64::from(cpu) * 1e3;
            self.app.frames.push_whole(ms);
            if self.measure.is_some() {
                self.cpu_ms.push(ms);
            }
        }
        self.app.show(ui);
        if let Some(m) = &mut self.measure {
            if !m.started {
                m.started = true;
                m.start = Instant::now();
                m.cpu0 = budget::cpu_seconds();
                self.app.frames.keep_all = true;
                self.app.push(Action::Run);
            }
            ui.ctx().request_repaint_after(self.app.interval);
            let done = self.app.snapshot().is_some_and(|s| s.done && s.moves > 0);
            if done || m.start.elapsed().as_secs_f64() >= m.seconds {
                let s = self.app.snapshot();
                let (engine_cpu, other_cpu) = cpu_shares(m.cpu0, m.start.elapsed().as_secs_f64());
                let report = serde_json::json!({
                    "engine_share_of_a_core": engine_cpu,
                    "rest_share_of_a_core": other_cpu,
                    "parts": self.app.design().board.parts.len(),
                    "seconds": m.start.elapsed().as_secs_f64(),
                    "frames": self.app.frames.all.len(),
                    "ui_median_ms": median(self.app.frames.all.clone()),
                    "ui_p90_ms": percentile(&self.app.frames.all, 0.9),
                    "frame_cpu_median_ms": median(self.cpu_ms.clone()),
                    "frame_cpu_p90_ms": percentile(&self.cpu_ms, 0.9),
                    "moves": s.map(|s| s.moves),
                    "moves_per_second": s.map(|s| s.moves_per_second),
                    "mean_moves_per_second": s.map(|s| s.moves as f64 / m.start.elapsed().as_secs_f64()),
                    "done": s.map(|s| s.done),
                    "repaint_min_ms": self.app.repaint.as_secs_f64() * 1e3,
                    "interval_ms": self.app.interval.as_secs_f64() * 1e3,
                    "window_share_of_a_core": self.app.budget.as_ref().and_then(|b| b.share),
                });
                println!("{report}");
                self.app.quit_ok = true;
                ui.ctx().send_viewport_cmd(egui::ViewportCommand::Close);
                self.measure = None;
            }
        }
    }

    fn save(&mut self, storage: &mut dyn eframe::Storage) {
        eframe::set_value(storage, eframe::APP_KEY, &self.app.settings);
    }
}

/// The `p` quantile of some values.
pub fn percentile(v: &[f64], p: f64) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    Some(s[((s.len() - 1) as f64 * p).round() as usize])
}

/// The application icon, drawn by examples/icon.rs.
const ICON_PNG: &[u8] = include_bytes!("../../assets/icon.png");

fn icon() -> Option<egui::IconData> {
    let p = tiny_skia::Pixmap::decode_png(ICON_PNG).ok()?;
    let (w, h) = (p.width(), p.height());
    Some(egui::IconData {
        rgba: p.take_demultiplied(),
        width: w,
        height: h,
    })
}

/// Whether a display server is reachable (X11 or Wayland); checked before eframe so
/// that a terminal without one gets a one-line answer.
fn display_available() -> bool {
    let set = |k: &str| std::env::var_os(k).is_some_and(|v| !v.is_empty());
    cfg!(not(target_os = "linux")) || set("DISPLAY") || set("WAYLAND_DISPLAY")
}

/// Options of `lehr open` beyond the board.
#[derive(Clone, Debug, Default)]
pub struct OpenOptions {
    /// Press run, measure for this many seconds, print a JSON line, close.
    pub measure: Option<f64>,
    /// Shortest time between pictures while running, ms (default 33).
    pub repaint_ms: Option<u64>,
}

/// Opens the window on `board` (the built-in sample when `None`) and runs until it closes.
pub fn run_window(board: Option<&Path>, o: &OpenOptions) -> Result<()> {
    // Read the board first so a bad file is reported in the terminal too.
    let loaded = match board {
        Some(p) => Some((lehr_engine::io::load_board(p)?, p.to_path_buf())),
        None => None,
    };
    if !display_available() {
        return Err(anyhow!(
            "no display to open the window on (neither DISPLAY nor WAYLAND_DISPLAY is set); use `lehr place` on the command line, or see `lehr --help`"
        ));
    }
    let mut viewport = egui::ViewportBuilder::default()
        .with_title("lehr")
        .with_app_id("lehr")
        .with_inner_size([1280.0, 800.0])
        .with_min_inner_size([640.0, 420.0])
        .with_drag_and_drop(true);
    if let Some(i) = icon() {
        viewport = viewport.with_icon(Arc::new(i));
    }
    let native = eframe::NativeOptions {
        viewport,
        persist_window: o.measure.is_none(),
        ..Default::default()
    };
    let measure = o.measure;
    let repaint_ms = o.repaint_ms;
    eframe::run_native(
        "lehr",
        native,
        Box::new(move |cc| {
            let mut settings: Settings = cc
                .storage
                .and_then(|s| eframe::get_value(s, eframe::APP_KEY))
                .unwrap_or_default();
            if measure.is_some() {
                settings.controls.speed = 20_000;
            }
            apply_theme(&cc.egui_ctx, settings.theme);
            let app = match loaded {
                Some((design, path)) => {
                    let mut a = LehrApp::new(
                        design,
                        Some(path.clone()),
                        files::short_name(&path),
                        settings,
                    );
                    files::remember(&mut a.settings.recent, &path);
                    a.settings.last_folder = path.parent().map(Path::to_path_buf);
                    a
                }
                None => LehrApp::sample(settings)?,
            };
            let mut app = app;
            if let Some(ms) = repaint_ms {
                app.repaint = Duration::from_millis(ms);
                app.repaint_fixed = true;
            } else {
                app.budget = Some(budget::Budget::default());
            }
            // The window clears to the canvas's background colour (see `clear_color`).
            app.canvas.paint_background = false;
            Ok(Box::new(Window {
                app,
                measure: measure.map(|seconds| Measure {
                    seconds,
                    start: Instant::now(),
                    started: false,
                    cpu0: None,
                }),
                cpu_ms: Vec::new(),
                renderer_checked: false,
            }))
        }),
    )
    .map_err(|e| anyhow!("cannot open the window: {e}"))
}

/// `--measure --headless`: the engine alone on the board, full speed, until the run is
/// frozen or `seconds` have passed.
pub fn measure_headless(board: Option<&Path>, seconds: f64) -> Result<()> {
    let design = match board {
        Some(p) => lehr_engine::io::load_board(p)?,
        None => lehr_engine::io::parse_board(crate::cli::SAMPLE_BOARD, crate::cli::SAMPLE_NAME)?,
    };
    let parts = design.board.parts.len();
    let h = EngineHandle::spawn(design, ControlSettings::default().options(None));
    h.send(Command::SetMovesPerTick(20_000));
    h.send(Command::Run);
    let start = Instant::now();
    let cpu0 = budget::cpu_seconds();
    let mut last: Option<Arc<Snapshot>> = None;
    while start.elapsed().as_secs_f64() < seconds && !last.as_ref().is_some_and(|s| s.done) {
        if let Some(Event::Snapshot(s)) = h.recv_timeout(Duration::from_millis(50)) {
            last = Some(s);
        }
    }
    let (engine_cpu, other_cpu) = cpu_shares(cpu0, start.elapsed().as_secs_f64());
    let report = serde_json::json!({
        "engine_share_of_a_core": engine_cpu,
        "rest_share_of_a_core": other_cpu,
        "parts": parts,
        "seconds": start.elapsed().as_secs_f64(),
        "moves": last.as_ref().map(|s| s.moves),
        "moves_per_second": last.as_ref().map(|s| s.moves_per_second),
        "mean_moves_per_second": last.as_ref().map(|s| s.moves as f64 / start.elapsed().as_secs_f64()),
        "done": last.as_ref().map(|s| s.done),
    });
    println!("{report}");
    Ok(())
}
