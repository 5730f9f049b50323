//! `lehr place`: every unlocked part of a board placed by annealing, the placed board
//! written, the results printed as text or JSON.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Duration;

use anyhow::Result;
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use serde_json::{Value, json};

use lehr_engine::model::Design;
use lehr_engine::place::{self, AnnealOptions, Placed, Schedule, StageReport, Start};

use super::print::outln;

#[derive(Args, Debug)]
pub struct PlaceArgs {
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

pub(super) fn parse_schedule(s: &str) -> Result<Schedule, String> {
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

pub(super) fn parse_start(s: &str) -> Result<Start, String> {
    s.parse()
}

pub fn run(a: PlaceArgs) -> Result<ExitCode> {
    let design = lehr_engine::io::load_board(&a.board)?;
    lehr_engine::model::warnings(&design)
        .iter()
        .for_each(|w| eprintln!("lehr: warning: {w}"));
    let opts = a.options()?;
    lehr_engine::place::options::check_options(&opts)?;
    let out = a
        .out
        .clone()
        .unwrap_or_else(|| super::with_suffix(&a.board, "placed"));
    // Before the annealing: a path that cannot be written fails now, not after it.
    super::paths::output_file(&out)?;
    if let Some(log) = &a.log {
        super::paths::output_file(log)?;
    }
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
        outln!("{}", report_json(&placed, &out, optimum));
    } else {
        print_report(&placed, Some(&out), optimum);
    }
    Ok(super::ok_or_problems(placed.report.legal))
}

impl PlaceArgs {
    /// The annealing options the flags ask for (the schedule's parameters checked, the
    /// rest not yet).
    fn options(&self) -> Result<AnnealOptions, place::schedule::ScheduleError> {
        Ok(AnnealOptions {
            seed: self.seed,
            schedule: self.schedule.schedule()?,
            max_moves: self.moves,
            effort: self.effort,
            start_acceptance: self.start_acceptance,
            stages: self.stages,
            replicas: self.replicas,
            threads: self.threads,
            scatter: self.scatter,
            multilevel: self.multilevel,
            start: self.start,
            ..AnnealOptions::default()
        })
    }
}

/// The results as one JSON object (`--json`).
fn report_json(placed: &Placed, out: &Path, optimum: Option<f64>) -> Value {
    let r = &placed.report;
    json!({
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
    })
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
    outln!(
        "{} schedule, seed {}, {} chain(s) per start: {} moves ({} accepted) in {:.2} s, {:.0} moves/s; kept the run from the {} start",
        r.schedule,
        r.seed,
        r.replicas,
        r.moves,
        r.accepted,
        r.seconds,
        r.moves_per_second,
        r.start
    );
    outln!(
        "wirelength {:.2} mm, overlap {:.4} mm^2, outside {:.4} mm^2, keep-out {:.4} mm^2",
        r.wirelength_mm,
        r.overlap_mm2,
        r.outside_mm2,
        r.keepout_mm2
    );
    if let Some(o) = optimum {
        outln!(
            "the board's known optimum is {o:.2} mm: this placement is {:.4} times it",
            r.wirelength_mm / o
        );
    }
    if r.legal {
        outln!("legal: every part inside the board, clear of keep-outs, no overlaps");
    } else {
        outln!("NOT legal, {} conflicts:", r.conflicts.len());
        for c in &r.conflicts {
            outln!("  {c}");
        }
    }
    if let Some(out) = out {
        outln!("wrote {}", out.display());
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cli::{Cli, Command};
    use clap::{CommandFactory, Parser};

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
        let readme = include_str!("../../README.md");
        let arch = include_str!("../../docs/ARCHITECTURE.md");
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
