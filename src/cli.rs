//! Command-line interface: raw flags become rich types here, the library does the work.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Duration;

use anyhow::{Result, bail};
use clap::{Args, Parser, Subcommand};
use indicatif::{ProgressBar, ProgressStyle};
use serde_json::json;

use lehr::model::{Board, Design};
use lehr::place::{self, AnnealOptions, Placed, Schedule, StageReport, Start, generate};

/// The board shown when no file is given: an invented bench LED dimmer.
pub const SAMPLE_BOARD: &str = include_str!("../sample-boards/led-dimmer.board.ron");
pub const SAMPLE_NAME: &str = "led-dimmer.board.ron (built in)";

#[derive(Parser, Debug)]
#[command(
    name = "lehr",
    version,
    about = "Places and routes small circuit boards by simulated annealing.",
    long_about = "Places and routes small circuit boards by simulated annealing.\n\n\
        Run without a command to open the window on the built-in sample board."
)]
struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Open the window on a board (the built-in sample board when none is given).
    Open(OpenArgs),
    /// Place every unlocked part of a board and write the placed board.
    Place(PlaceArgs),
    /// Write a synthetic board.
    #[command(subcommand)]
    Generate(GenerateCommand),
    /// Measure placement speed and quality on generated boards.
    Bench(BenchArgs),
    /// Route the nets of a placed board on two layers and write the routed board.
    Route(crate::copper_cmds::RouteArgs),
    /// Check a board's copper and parts against the design rules.
    Check(crate::copper_cmds::CheckArgs),
    /// Track width for a current (IPC-2221).
    Width(crate::copper_cmds::WidthArgs),
    /// Turn a netlist (CSV/TSV connection list or EDIF 2 0 0) into a board file.
    Import(crate::import_cmd::ImportArgs),
    /// Write pictures and fabrication files (Gerber, NC drill, centroid) of a board.
    Export(crate::export_cmd::ExportArgs),
}

#[derive(Args, Debug)]
struct PlaceArgs {
    /// The board file (RON, see docs/board-format.md).
    board: PathBuf,
    /// Seed of the random generator; the same seed gives the same placement.
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Cooling schedule: geometric, lundy-mees, lam-delosme, huang or descent
    /// (zero-temperature baseline).
    #[arg(long, default_value = "geometric", value_parser = parse_schedule)]
    schedule: Schedule,
    /// Cap on the total number of moves.
    #[arg(long)]
    moves: Option<u64>,
    /// Moves per temperature, as a multiple of N^(4/3) for N movable parts.
    #[arg(long, default_value_t = AnnealOptions::default().effort)]
    effort: f64,
    /// Ignore the file's positions of unlocked parts and start from a random spread.
    #[arg(long)]
    scatter: bool,
    /// Place clusters of strongly connected parts first, then the parts (for large,
    /// dense boards).
    #[arg(long)]
    multilevel: bool,
    /// Where the parts start: given (the file's positions, random spots for unplaced
    /// parts), spectral (an analytical placement, then a cool anneal; ignores --scatter
    /// and --multilevel) or both (one run from each, half the --moves cap each; the
    /// better result is kept).
    #[arg(long, default_value = "both", value_parser = parse_start)]
    start: Start,
    /// Where to write the placed board (default: NAME.placed.board.ron beside the input).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Print one JSON object with the results instead of text.
    #[arg(long)]
    json: bool,
    /// Also write the run log (one CSV row per annealing stage) here.
    #[arg(long, value_name = "FILE")]
    log: Option<PathBuf>,
}

#[derive(Args, Debug)]
struct OpenArgs {
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

#[derive(Subcommand, Debug)]
enum GenerateCommand {
    /// N x N square parts with a net between grid neighbours; known optimum 2N(N-1)P.
    Grid {
        /// Parts per side.
        #[arg(long)]
        size: u32,
        /// Side of each part and grid pitch, mm.
        #[arg(long, default_value_t = 2.54)]
        pitch: f64,
        /// Seed for the random scatter of the parts.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        #[arg(long)]
        out: PathBuf,
        #[arg(long)]
        json: bool,
    },
    /// A random board of chips and ICs with local nets (for benchmarks).
    Random {
        #[arg(long)]
        parts: u32,
        #[arg(long, default_value_t = 1)]
        seed: u64,
        #[arg(long)]
        out: PathBuf,
        #[arg(long)]
        json: bool,
    },
}

#[derive(Args, Debug)]
pub struct BenchArgs {
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
    /// Smaller, faster runs (for a smoke test; the figures are not the targets').
    #[arg(long)]
    pub quick: bool,
}

fn parse_schedule(s: &str) -> Result<Schedule, String> {
    s.parse()
}

fn parse_start(s: &str) -> Result<Start, String> {
    s.parse()
}

pub fn run() -> Result<ExitCode> {
    let cli = Cli::parse();
    match cli.command {
        None => {
            crate::app::run_window(None, &crate::app::OpenOptions::default())?;
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Open(a)) => {
            match (a.measure, a.headless) {
                (Some(secs), _) if a.frames => {
                    crate::app::measure_frames(a.board.as_deref(), secs, a.repaint_ms)?
                }
                (Some(secs), true) => crate::app::measure_headless(a.board.as_deref(), secs)?,
                (measure, _) => crate::app::run_window(
                    a.board.as_deref(),
                    &crate::app::OpenOptions {
                        measure,
                        repaint_ms: a.repaint_ms,
                    },
                )?,
            }
            Ok(ExitCode::SUCCESS)
        }
        Some(Command::Place(a)) => place_cmd(a),
        Some(Command::Generate(g)) => generate_cmd(g),
        Some(Command::Bench(b)) => crate::bench::run(&b),
        Some(Command::Route(a)) => crate::copper_cmds::route_cmd(a),
        Some(Command::Check(a)) => crate::copper_cmds::check_cmd(a),
        Some(Command::Width(a)) => crate::copper_cmds::width_cmd(a),
        Some(Command::Import(a)) => crate::import_cmd::import_cmd(a),
        Some(Command::Export(a)) => crate::export_cmd::export_cmd(a),
    }
}

fn place_cmd(a: PlaceArgs) -> Result<ExitCode> {
    let design = lehr::io::load_board(&a.board)?;
    if a.moves == Some(0) {
        bail!("--moves must be at least 1");
    }
    let opts = AnnealOptions {
        seed: a.seed,
        schedule: a.schedule,
        max_moves: a.moves,
        effort: a.effort,
        scatter: a.scatter,
        multilevel: a.multilevel,
        start: a.start,
        ..AnnealOptions::default()
    };
    let out = a
        .out
        .clone()
        .unwrap_or_else(|| with_suffix(&a.board, "placed"));
    if !a.json {
        eprintln!(
            "placing {} ({} parts, {} nets) with {}, seed {}",
            a.board.display(),
            design.board.parts.len(),
            design.board.nets.len(),
            opts.schedule,
            opts.seed
        );
    }
    let placed = run_place(&design, &opts, !a.json)?;
    lehr::io::save_board(&out, &placed.board)?;
    if let Some(log) = &a.log {
        lehr::io::write_file(log, lehr::fab::runlog::run_log(&placed.history).as_bytes())?;
    }
    if a.json {
        let r = &placed.report;
        let v = json!({
            "energy": r.energy,
            "wirelength_mm": r.wirelength_mm,
            "annealed_wirelength_mm": r.annealed_wirelength_mm,
            "overlap_mm2": r.overlap_mm2,
            "outside_mm2": r.outside_mm2,
            "keepout_mm2": r.keepout_mm2,
            "legal": r.legal,
            "conflicts": r.conflicts.iter().map(|c| c.to_string()).collect::<Vec<_>>(),
            "moves": r.moves,
            "accepted": r.accepted,
            "stages": r.stages,
            "start_temperature": r.start_temperature,
            "seconds": r.seconds,
            "moves_per_second": r.moves_per_second,
            "seed": r.seed,
            "schedule": r.schedule,
            "start": r.start,
            "out": out.display().to_string(),
        });
        println!("{v}");
    } else {
        print_report(&placed, Some(&out));
    }
    Ok(if placed.report.legal {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(2)
    })
}

/// `dir/name.board.ron` -> `dir/name.SUFFIX.board.ron`: where a command writes its result
/// when no `--out` is given.
pub fn with_suffix(input: &Path, suffix: &str) -> PathBuf {
    let stem = board_stem(input).unwrap_or("board");
    input.with_file_name(format!("{stem}.{suffix}.board.ron"))
}

/// A board file's name without `.board.ron` (or `.ron`); `None` if it has no name that
/// is text.
pub fn board_stem(path: &Path) -> Option<&str> {
    let file = path.file_name().and_then(|f| f.to_str())?;
    Some(
        file.strip_suffix(".board.ron")
            .or_else(|| file.strip_suffix(".ron"))
            .unwrap_or(file),
    )
}

/// Runs a placement, with a progress line on a terminal.
fn run_place(design: &Design, opts: &AnnealOptions, progress: bool) -> Result<Placed> {
    let bar = if progress && std::io::stderr().is_terminal() {
        let bar = match opts.max_moves {
            Some(m) => ProgressBar::new(m).with_style(
                ProgressStyle::with_template("{bar:30} {percent:>3}% {elapsed} {msg}")
                    .expect("static template"),
            ),
            None => ProgressBar::new_spinner().with_style(
                ProgressStyle::with_template("{spinner} {elapsed} {msg}").expect("static template"),
            ),
        };
        bar.enable_steady_tick(Duration::from_millis(120));
        bar
    } else {
        ProgressBar::hidden()
    };
    let placed = place::place(design, opts, |r: &StageReport| {
        bar.set_position(r.moves);
        bar.set_message(format!(
            "stage {}  T {:.4}  E {:.2}  accepted {:.0}%  moves {}",
            r.stage,
            r.temperature,
            r.energy,
            100.0 * r.acceptance,
            r.moves
        ));
        true
    })?;
    bar.finish_and_clear();
    Ok(placed)
}

fn print_report(placed: &Placed, out: Option<&Path>) {
    let r = &placed.report;
    println!(
        "{} schedule, seed {}: {} moves ({} accepted) in {:.2} s, {:.0} moves/s; kept the run from the {} start",
        r.schedule, r.seed, r.moves, r.accepted, r.seconds, r.moves_per_second, r.start
    );
    println!(
        "wirelength {:.2} mm, overlap {:.4} mm^2, outside {:.4} mm^2, keep-out {:.4} mm^2",
        r.wirelength_mm, r.overlap_mm2, r.outside_mm2, r.keepout_mm2
    );
    if r.legal {
        println!("legal: every part inside the board, clear of keep-outs, no overlaps");
    } else {
        println!("NOT legal, {} conflicts:", r.conflicts.len());
        for c in &r.conflicts {
            println!("  {c}");
        }
    }
    if let Some(out) = out {
        println!("wrote {}", out.display());
    }
}

fn generate_cmd(g: GenerateCommand) -> Result<ExitCode> {
    let (board, out, json, optimum): (Board, PathBuf, bool, Option<f64>) = match g {
        GenerateCommand::Grid {
            size,
            pitch,
            seed,
            out,
            json,
        } => {
            if !(2..=200).contains(&size) {
                bail!("--size must be between 2 and 200, got {size}");
            }
            if !(pitch.is_finite() && (0.1..=100.0).contains(&pitch)) {
                bail!("--pitch must be between 0.1 and 100 mm, got {pitch}");
            }
            (
                generate::grid_board(size, pitch, seed),
                out,
                json,
                Some(generate::grid_optimum(size, pitch)),
            )
        }
        GenerateCommand::Random {
            parts,
            seed,
            out,
            json,
        } => {
            if !(2..=100_000).contains(&parts) {
                bail!("--parts must be between 2 and 100000, got {parts}");
            }
            (generate::random_board(parts, seed), out, json, None)
        }
    };
    lehr::io::save_board(&out, &board)?;
    if json {
        let mut v = json!({
            "parts": board.parts.len(),
            "nets": board.nets.len(),
            "out": out.display().to_string(),
        });
        if let Some(o) = optimum {
            v["optimal_wirelength_mm"] = json!(o);
        }
        println!("{v}");
    } else {
        println!(
            "wrote {} ({} parts, {} nets)",
            out.display(),
            board.parts.len(),
            board.nets.len()
        );
        if let Some(o) = optimum {
            println!("optimal wirelength {o} mm");
        }
    }
    Ok(ExitCode::SUCCESS)
}
