//! The window room: the eframe wrapper around [`LehrApp`] (what only a real window has:
//! the renderer, the frame's CPU time, the icon, saving the settings), the frame-time
//! measurement behind the status line's diagnostics and `--measure`, and the entry points
//! `lehr open` calls.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

use anyhow::{Result, anyhow};

use lehr_engine::worker::{Command, EngineHandle, Event, Snapshot};

use crate::shared;

use super::controls::ControlSettings;
use super::menu::apply_theme;
use super::{Action, LehrApp, Settings, budget, files};
use lehr_engine::drawing::Palette;

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
    pub(super) fn push(&mut self, ms: f64) {
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
        super::canvas::color32(pal.background).to_normalized_gamma_f32()
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
        self.measure_step(ui.ctx());
    }

    fn save(&mut self, storage: &mut dyn eframe::Storage) {
        eframe::set_value(storage, eframe::APP_KEY, &self.app.settings);
    }
}

impl Window {
    /// `--measure`: press run on the first frame; when the run is frozen or the time is
    /// up, print the report and close.
    fn measure_step(&mut self, ctx: &egui::Context) {
        if let Some(m) = &mut self.measure {
            if !m.started {
                m.started = true;
                m.start = Instant::now();
                m.cpu0 = budget::cpu_seconds();
                self.app.frames.keep_all = true;
                self.app.push(Action::Run);
            }
            ctx.request_repaint_after(self.app.interval);
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
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
                self.measure = None;
            }
        }
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
    // Read the board first so a bad file is reported in the terminal too; with a
    // display, the window still opens (on the sample board) and shows the error, so a
    // user who started lehr from a desktop sees why.
    let (loaded, error) = match board.map(|p| (lehr_engine::io::load_board(p), p)) {
        Some((Ok(d), p)) => (Some((d, p.to_path_buf())), None),
        Some((Err(e), _)) => {
            if !display_available() {
                return Err(e.into());
            }
            eprintln!("lehr: error: {e}");
            (None, Some(format!("Could not open the board: {e}")))
        }
        None => (None, None),
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
            Ok(Box::new(make_window(
                cc, loaded, error, measure, repaint_ms,
            )?))
        }),
    )
    .map_err(|e| anyhow!("cannot open the window: {e}"))
}

/// `--measure --headless`: the engine alone on the board, full speed, until the run is
/// frozen or `seconds` have passed.
pub fn measure_headless(board: Option<&Path>, seconds: f64) -> Result<()> {
    let design = match board {
        Some(p) => lehr_engine::io::load_board(p)?,
        None => lehr_engine::io::parse_board(shared::SAMPLE_BOARD, shared::SAMPLE_NAME)?,
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

/// The window's state at start: the saved settings, the board (the sample when none was
/// given), the repaint policy and the measurement asked for.
fn make_window(
    cc: &eframe::CreationContext<'_>,
    loaded: Option<(lehr_engine::model::Design, PathBuf)>,
    error: Option<String>,
    measure: Option<f64>,
    repaint_ms: Option<u64>,
) -> Result<Window> {
    let mut settings: Settings = cc
        .storage
        .and_then(|s| eframe::get_value(s, eframe::APP_KEY))
        .unwrap_or_default();
    if measure.is_some() {
        settings.controls.speed = 20_000;
    }
    apply_theme(&cc.egui_ctx, settings.theme);
    let mut app = match loaded {
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
    if let Some(text) = error {
        app.message = Some(super::Message { error: true, text });
    }
    if let Some(ms) = repaint_ms {
        app.repaint = Duration::from_millis(ms);
        app.repaint_fixed = true;
    } else {
        app.budget = Some(budget::Budget::default());
    }
    // The window clears to the canvas's background colour (see `clear_color`).
    app.canvas.paint_background = false;
    Ok(Window {
        app,
        measure: measure.map(|seconds| Measure {
            seconds,
            start: Instant::now(),
            started: false,
            cpu0: None,
        }),
        cpu_ms: Vec::new(),
        renderer_checked: false,
    })
}
