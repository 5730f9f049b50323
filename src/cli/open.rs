//! `lehr open` (and `lehr` alone): the window on a board; with the hidden `--measure`
//! flags, the frame and engine measurements of docs/performance.md.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;

use crate::app::{self, OpenOptions};

#[derive(Args, Debug)]
pub struct OpenArgs {
    /// The board file (RON, see docs/board-format.md).
    board: Option<PathBuf>,
    /// Press run, measure the frame time and the engine's speed for this many seconds,
    /// print one JSON line and close (for docs/performance.md).
    #[arg(long, hide = true)]
    measure: Option<f64>,
    /// With --measure: run the engine without a window, for comparison.
    #[arg(long, hide = true, requires = "measure")]
    headless: bool,
    /// With --measure: lehr's frame code and egui's tessellation, no window (a frame
    /// every --repaint-ms, default 100).
    #[arg(long, hide = true, requires = "measure")]
    frames: bool,
    /// Shortest time between pictures while running, ms (default 33).
    #[arg(long, hide = true)]
    repaint_ms: Option<u64>,
}

pub fn run(a: OpenArgs) -> Result<ExitCode> {
    match (a.measure, a.headless) {
        (Some(secs), _) if a.frames => app::measure_frames(a.board.as_deref(), secs, a.repaint_ms)?,
        (Some(secs), true) => app::measure_headless(a.board.as_deref(), secs)?,
        (measure, _) => app::run_window(
            a.board.as_deref(),
            &OpenOptions {
                measure,
                repaint_ms: a.repaint_ms,
            },
        )?,
    }
    Ok(ExitCode::SUCCESS)
}

/// `lehr` with no command: the window on the built-in sample board.
pub fn run_default() -> Result<ExitCode> {
    app::run_window(None, &OpenOptions::default())?;
    Ok(ExitCode::SUCCESS)
}
