//! Command-line interface: raw flags become rich types here, the library does the work.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Duration;

use anyhow::{Result, bail};
use clap::{Args, Parser, Subcommand};
use indicatif::{ProgressBar, ProgressStyle};
use serde_json::json;

use lehr_engine::model::{Board, Design};
use lehr_engine::place::{self, AnnealOptions, Placed, Schedule, StageReport, Start, generate};

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
    /// Seed of the random generator; the same seed (and --replicas) gives the same
    /// placement, whatever --threads.
    #[arg(long, default_value_t = 1)]
    seed: u64,
    #[command(flatten)]
    schedule: ScheduleArgs,
    /// The move budget: every move of the run, all starts and chains together; every
    /// schedule plans to use it up. Default: 25,000 N^(4/3) for N movable parts (1 to
    /// 150 million), times --effort.
    #[arg(long)]
    moves: Option<u64>,
    /// Multiple of the default move budget (ignored with --moves).
    #[arg(long, default_value_t = AnnealOptions::default().effort)]
    effort: f64,
    /// Fraction of sampled uphill moves accepted at the start temperature (the
    /// temperature is solved for from the samples).
    #[arg(long, default_value_t = AnnealOptions::default().start_acceptance)]
    start_acceptance: f64,
    /// Temperature stages over the budget.
    #[arg(long, default_value_t = AnnealOptions::default().stages)]
    stages: u32,
    /// Annealing chains per start, trading temperatures (replica exchange); they share
    /// the move budget.
    #[arg(long, default_value_t = AnnealOptions::default().replicas)]
    replicas: u32,
    /// Threads to run the chains on (default: one per core); never changes the result.
    #[arg(long, default_value_t = 0)]
    threads: usize,
    /// Ignore the file's positions of unlocked parts and start from a random spread.
    #[arg(long)]
    scatter: bool,
    /// Place clusters of strongly connected parts first, then the parts (given start
    /// only, one chain).
    #[arg(long)]
    multilevel: bool,
    /// Where the parts start: given (the file's positions, random spots for unplaced
    /// parts), spectral (an analytical placement, then a cool anneal; ignores --scatter
    /// and --multilevel) or both (one run from each, half the budget each, side by side
    /// on the cores; the better result is kept).
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
    /// Square parts in rows and columns with a two-pin net between grid neighbours;
    /// known optimum (R(C-1) + C(R-1)) x pitch, recorded in the board.
    Grid {
        /// Rows and columns both (a square grid); or give --rows and --cols.
        #[arg(long, conflicts_with_all = ["rows", "cols"])]
        size: Option<u32>,
        /// Rows of parts.
        #[arg(long, requires = "cols")]
        rows: Option<u32>,
        /// Columns of parts.
        #[arg(long, requires = "rows")]
        cols: Option<u32>,
        /// Side of each part and grid pitch, mm.
        #[arg(long, default_value_t = 2.54)]
        pitch: f64,
        /// Board area over the parts' area: 1 fills the board, 1.5 leaves a third free.
        #[arg(long, default_value_t = 1.0)]
        slack: f64,
        /// Seed for the random scatter of the parts.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Where to write the board file.
        #[arg(long)]
        out: PathBuf,
        /// Print one JSON object (parts, nets, optimum, file) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Square parts in a filled array joined by nets of 2 to 10 pins, each net's parts in
    /// a smallest box of the array, so the array is an optimal placement (the
    /// construction of Chang, Cong and Xie, 2003); the optimum is recorded in the board.
    Peko {
        /// Rows and columns both; or give --rows and --cols.
        #[arg(long, conflicts_with_all = ["rows", "cols"])]
        size: Option<u32>,
        /// Rows of parts.
        #[arg(long, requires = "cols")]
        rows: Option<u32>,
        /// Columns of parts.
        #[arg(long, requires = "rows")]
        cols: Option<u32>,
        /// Side of each part and grid pitch, mm.
        #[arg(long, default_value_t = 2.54)]
        pitch: f64,
        /// Nets per part.
        #[arg(long, default_value_t = 1.0)]
        nets_per_part: f64,
        /// The mix of net sizes as PINS:SHARE pairs, e.g. 2:60,3:20,4:20 (shares are
        /// relative; pins 2 to 10). Default: 2:60,3:14,4:8,5:5,6:4,7:3,8:2,9:2,10:2.
        #[arg(long, value_parser = parse_degrees)]
        degrees: Option<Vec<(u32, f64)>>,
        /// Board area over the parts' area: 1 fills the board, 1.5 leaves a third free.
        #[arg(long, default_value_t = 1.0)]
        slack: f64,
        /// Seed for the nets and the scatter of the parts.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Where to write the board file.
        #[arg(long)]
        out: PathBuf,
        /// Print one JSON object (parts, nets, optimum, file) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// A random board of chips and ICs with local nets (for speed benchmarks; no known
    /// optimum).
    Random {
        /// Number of parts.
        #[arg(long)]
        parts: u32,
        /// Seed for the parts and nets.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Where to write the board file.
        #[arg(long)]
        out: PathBuf,
        /// Print one JSON object (parts, nets, file) instead of text.
        #[arg(long)]
        json: bool,
    },
}

/// `2:60,3:20` -> [(2, 60.0), (3, 20.0)].
fn parse_degrees(s: &str) -> Result<Vec<(u32, f64)>, String> {
    let mut out = Vec::new();
    for item in s.split(',').map(str::trim).filter(|t| !t.is_empty()) {
        let (k, w) = item
            .split_once(':')
            .ok_or_else(|| format!("{item:?} is not PINS:SHARE (e.g. 2:60)"))?;
        let k: u32 = k
            .trim()
            .parse()
            .map_err(|_| format!("{k:?} is not a whole number of pins"))?;
        let w: f64 = w
            .trim()
            .parse()
            .map_err(|_| format!("{w:?} is not a number"))?;
        if !(2..=10).contains(&k) {
            return Err(format!("nets of {k} pins: pins must be 2 to 10"));
        }
        if !(w.is_finite() && w >= 0.0) {
            return Err(format!("share {w} of {k}-pin nets must be a number >= 0"));
        }
        out.push((k, w));
    }
    if !out.iter().any(|d| d.1 > 0.0) {
        return Err("give at least one net size with a share above 0".into());
    }
    Ok(out)
}

/// Rows and columns from `--size` or `--rows` and `--cols`, within 1..=`max` each and
/// at least two parts.
fn rows_cols(size: Option<u32>, rows: Option<u32>, cols: Option<u32>) -> Result<(u32, u32)> {
    let (r, c) = match (size, rows, cols) {
        (Some(n), _, _) => (n, n),
        (None, Some(r), Some(c)) => (r, c),
        _ => bail!("give --size N, or --rows R and --cols C"),
    };
    if !(1..=1000).contains(&r) || !(1..=1000).contains(&c) || r * c < 2 || r * c > 250_000 {
        bail!("rows and columns must be 1 to 1000 each, 2 to 250,000 parts in all; got {r} x {c}");
    }
    Ok((r, c))
}

fn check_pitch_slack(pitch: f64, slack: f64) -> Result<()> {
    if !(pitch.is_finite() && (0.1..=100.0).contains(&pitch)) {
        bail!("--pitch must be between 0.1 and 100 mm, got {pitch}");
    }
    if !(slack.is_finite() && (1.0..=16.0).contains(&slack)) {
        bail!("--slack must be between 1 (a full board) and 16, got {slack}");
    }
    Ok(())
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

/// The place command's schedule arguments; the schedules, their parameters, ranges and
/// help come from the engine's list ([`lehr_engine::place::schedule::ALL`]).
#[derive(Args, Debug)]
struct ScheduleArgs {
    #[arg(long, default_value_t = Schedule::default(), value_parser = parse_schedule,
          help = schedule_help(false), long_help = schedule_help(true))]
    schedule: Schedule,
    /// Set a parameter of the schedule (repeatable); the others follow from the budget.
    #[arg(long = "param", value_name = "NAME=VALUE", value_parser = parse_param)]
    params: Vec<(String, f64)>,
}

impl ScheduleArgs {
    /// The schedule with its parameters, each checked against its range.
    fn schedule(&self) -> Result<Schedule, place::schedule::ScheduleError> {
        self.params
            .iter()
            .try_fold(self.schedule, |s, (name, v)| s.with(name, *v))
    }
}

/// `--schedule`'s help: the names (`-h`), or every schedule with its parameters.
fn schedule_help(long: bool) -> String {
    let names: Vec<&str> = place::schedule::ALL.iter().map(|k| k.name).collect();
    let short = format!(
        "Cooling schedule: {}; each plans its cooling over the move budget",
        names.join(", ")
    );
    if long {
        format!(
            "{short}. Set a parameter with --param NAME=VALUE.\n\n{}",
            place::schedule::help_text().trim_end()
        )
    } else {
        format!("{short} (--help lists their parameters)")
    }
}

fn parse_schedule(s: &str) -> Result<Schedule, String> {
    s.parse()
        .map_err(|e: place::schedule::ScheduleError| e.to_string())
}

fn parse_param(s: &str) -> Result<(String, f64), String> {
    let (name, v) = s
        .split_once('=')
        .ok_or_else(|| format!("expected NAME=VALUE, got \"{s}\""))?;
    let v = v
        .trim()
        .parse()
        .map_err(|_| format!("{name}: \"{v}\" is not a number"))?;
    Ok((name.trim().to_string(), v))
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
    let design = lehr_engine::io::load_board(&a.board)?;
    let opts = AnnealOptions {
        seed: a.seed,
        schedule: a.schedule.schedule()?,
        max_moves: a.moves,
        effort: a.effort,
        start_acceptance: a.start_acceptance,
        stages: a.stages,
        replicas: a.replicas,
        threads: a.threads,
        scatter: a.scatter,
        multilevel: a.multilevel,
        start: a.start,
        ..AnnealOptions::default()
    };
    lehr_engine::place::options::check_options(&opts)?;
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
    let optimum = design.board.optimum.as_ref().map(|o| o.wirelength_mm);
    let placed = run_place(&design, &opts, !a.json)?;
    lehr_engine::io::save_board(&out, &placed.board)?;
    if let Some(log) = &a.log {
        lehr_engine::io::write_file(
            log,
            lehr_engine::fab::runlog::run_log(&placed.history).as_bytes(),
        )?;
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
            "replicas": r.replicas,
            "exchanges_tried": r.exchanges_tried,
            "exchanges_taken": r.exchanges_taken,
            "optimum_mm": optimum,
            "ratio_to_optimum": optimum.map(|o| r.wirelength_mm / o),
            "out": out.display().to_string(),
        });
        println!("{v}");
    } else {
        print_report(&placed, Some(&out), optimum);
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
        let movable = design.board.parts.iter().filter(|p| !p.locked).count();
        let budget = opts
            .max_moves
            .unwrap_or_else(|| place::default_budget(movable, opts.effort));
        let bar = ProgressBar::new(budget).with_style(
            ProgressStyle::with_template("{bar:30} {percent:>3}% {elapsed} {msg}")
                .expect("static template"),
        );
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

fn print_report(placed: &Placed, out: Option<&Path>, optimum: Option<f64>) {
    let r = &placed.report;
    println!(
        "{} schedule, seed {}, {} chain(s) per start: {} moves ({} accepted) in {:.2} s, {:.0} moves/s; kept the run from the {} start",
        r.schedule, r.seed, r.replicas, r.moves, r.accepted, r.seconds, r.moves_per_second, r.start
    );
    println!(
        "wirelength {:.2} mm, overlap {:.4} mm^2, outside {:.4} mm^2, keep-out {:.4} mm^2",
        r.wirelength_mm, r.overlap_mm2, r.outside_mm2, r.keepout_mm2
    );
    if let Some(o) = optimum {
        println!(
            "the board's known optimum is {o:.2} mm: this placement is {:.4} times it",
            r.wirelength_mm / o
        );
    }
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
    let (board, out, json): (Board, PathBuf, bool) = match g {
        GenerateCommand::Grid {
            size,
            rows,
            cols,
            pitch,
            slack,
            seed,
            out,
            json,
        } => {
            let (r, c) = rows_cols(size, rows, cols)?;
            check_pitch_slack(pitch, slack)?;
            (
                generate::grid_rect_board(r, c, pitch, slack, seed),
                out,
                json,
            )
        }
        GenerateCommand::Peko {
            size,
            rows,
            cols,
            pitch,
            nets_per_part,
            degrees,
            slack,
            seed,
            out,
            json,
        } => {
            let (r, c) = rows_cols(size, rows, cols)?;
            check_pitch_slack(pitch, slack)?;
            if !(nets_per_part.is_finite() && (0.1..=10.0).contains(&nets_per_part)) {
                bail!("--nets-per-part must be between 0.1 and 10, got {nets_per_part}");
            }
            let spec = generate::PekoSpec {
                pitch,
                nets_per_part,
                degrees: degrees.unwrap_or_else(|| generate::PekoSpec::DEFAULT_DEGREES.to_vec()),
                slack,
                ..generate::PekoSpec::new(r, c, seed)
            };
            (generate::peko_board(&spec), out, json)
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
            (generate::random_board(parts, seed), out, json)
        }
    };
    let optimum = board.optimum.as_ref().map(|o| o.wirelength_mm);
    lehr_engine::io::save_board(&out, &board)?;
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

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    /// `--schedule` and `--param` make the schedule; bad names and values are refused
    /// with the parameter's name and range.
    #[test]
    fn schedule_arguments_make_the_schedule() {
        let parse = |args: &[&str]| {
            let cli = Cli::try_parse_from(["lehr", "place", "b.ron"].iter().chain(args))
                .map_err(|e| e.to_string())?;
            let Some(Command::Place(a)) = cli.command else {
                unreachable!()
            };
            a.schedule.schedule().map_err(|e| e.to_string())
        };
        assert_eq!(parse(&[]).unwrap(), Schedule::default());
        assert_eq!(
            parse(&["--schedule", "lam-delosme", "--param", "target=0.5"]).unwrap(),
            Schedule::LamDelosme.with("target", 0.5).unwrap()
        );
        let e = parse(&["--param", "alpha=1.5"]).unwrap_err();
        assert!(
            e.contains("alpha must be greater than 0 and less than 1"),
            "{e}"
        );
        let e = parse(&["--schedule", "huang", "--param", "alpha=0.5"]).unwrap_err();
        assert!(e.contains("no parameter \"alpha\""), "{e}");
        assert!(parse(&["--param", "alpha"]).is_err());
    }

    /// The help lists every schedule and parameter of the engine's list.
    #[test]
    fn place_help_lists_every_schedule_and_parameter() {
        let mut cmd = Cli::command();
        let help = cmd
            .find_subcommand_mut("place")
            .unwrap()
            .render_long_help()
            .to_string();
        for k in place::schedule::ALL {
            assert!(help.contains(k.name), "{}", k.name);
            for p in k.params {
                assert!(
                    help.contains(&format!("{}: {}", p.name, p.label)),
                    "{}",
                    p.name
                );
            }
        }
    }

    /// README.md and docs/ARCHITECTURE.md name every schedule, and the README every
    /// parameter.
    #[test]
    fn the_docs_name_every_schedule_and_parameter() {
        let readme = include_str!("../README.md");
        let arch = include_str!("../docs/ARCHITECTURE.md");
        for k in place::schedule::ALL {
            let code = format!("`{}`", k.name);
            assert!(readme.contains(&code), "README.md does not name {code}");
            assert!(arch.contains(&code), "ARCHITECTURE.md does not name {code}");
            for p in k.params {
                let code = format!("`{}`", p.name);
                assert!(
                    readme.contains(&code),
                    "README.md does not name {} {code}",
                    k.name
                );
            }
        }
    }
}
