//! Command-line interface: raw flags become rich types here, the library does the work.
//! This file is the parser and the dispatch; each command lives in its own file.

mod bench;
mod check;
mod export;
mod generate;
mod import;
mod open;
mod paths;
mod place;
pub(crate) mod print;
mod route;
mod sweep;
mod width;

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Result;
use clap::{Parser, Subcommand};

use crate::shared::board_stem;

#[derive(Parser, Debug)]
#[command(
    name = "lehr",
    version,
    about = "Places and routes small circuit boards by simulated annealing.",
    long_about = "Places and routes small circuit boards by simulated annealing.\n\n\
        Run without a command to open the window on the built-in sample board."
)]
pub(crate) struct Cli {
    #[command(subcommand)]
    pub(crate) command: Option<Command>,
}

#[derive(Subcommand, Debug)]
pub(crate) enum Command {
    /// Open the window on a board (the built-in sample board when none is given).
    Open(open::OpenArgs),
    /// Place every unlocked part of a board and write the placed board.
    Place(place::PlaceArgs),
    /// Write a synthetic board.
    #[command(subcommand)]
    Generate(generate::GenerateCommand),
    /// Measure placement speed and quality on generated boards.
    Bench(bench::BenchArgs),
    /// Route the nets of a placed board on two layers and write the routed board.
    Route(route::RouteArgs),
    /// Check a board's copper and parts against the design rules.
    Check(check::CheckArgs),
    /// Track width for a current (IPC-2221).
    Width(width::WidthArgs),
    /// Turn a netlist (CSV/TSV connection list or EDIF 2 0 0) into a board file.
    Import(import::ImportArgs),
    /// Write pictures and fabrication files (Gerber, NC drill, centroid) of a board.
    Export(export::ExportArgs),
    /// Compare cooling schedules: schedules x parameter values x starts x seeds over
    /// boards, each run at the same move budget, on every core; CSV tables and pictures.
    Sweep(sweep::SweepArgs),
}

/// Exit code: the command ran, but its result has problems (conflicts remain after
/// placing, nets stay unrouted, design rules are broken, an export was refused).
pub const PROBLEMS: u8 = 3;
/// Exit code when standard output was closed before everything was printed (a reader
/// such as `head` that stopped early): 128 + 13, the code shells give a writer ended by
/// a broken pipe. Nothing is printed about it.
pub const CLOSED_OUTPUT: u8 = 141;

/// [`ExitCode::SUCCESS`] when `ok`, else [`PROBLEMS`].
pub fn ok_or_problems(ok: bool) -> ExitCode {
    if ok {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(PROBLEMS)
    }
}

/// Parses the command line and runs the command.
pub fn run() -> Result<ExitCode> {
    match Cli::parse().command {
        None => open::run_default(),
        Some(Command::Open(a)) => open::run(a),
        Some(Command::Place(a)) => place::run(a),
        Some(Command::Generate(g)) => generate::run(g),
        Some(Command::Bench(b)) => bench::run(&b),
        Some(Command::Route(a)) => route::run(a),
        Some(Command::Check(a)) => check::run(a),
        Some(Command::Width(a)) => width::run(a),
        Some(Command::Import(a)) => import::run(a),
        Some(Command::Export(a)) => export::run(a),
        Some(Command::Sweep(a)) => sweep::run(a),
    }
}

/// `dir/name.board.ron` -> `dir/name.SUFFIX.board.ron`: where a command writes its result
/// when no `--out` is given.
/// The stage suffixes do not stack (`bike.placed.board.ron` routed gives
/// `bike.routed.board.ron`), but the input is never the default output: routing
/// `bike.routed.board.ron` again writes `bike.routed.routed.board.ron`.
pub fn with_suffix(input: &Path, suffix: &str) -> PathBuf {
    let stem = crate::shared::design_stem(input).unwrap_or("board");
    let out = input.with_file_name(format!("{stem}.{suffix}.board.ron"));
    if out == input {
        let stem = board_stem(input).unwrap_or("board");
        input.with_file_name(format!("{stem}.{suffix}.board.ron"))
    } else {
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_outputs_do_not_stack_or_overwrite_the_input() {
        let p = |s: &str| PathBuf::from(s);
        assert_eq!(
            with_suffix(&p("d/bike.board.ron"), "placed"),
            p("d/bike.placed.board.ron")
        );
        assert_eq!(
            with_suffix(&p("d/bike.placed.board.ron"), "routed"),
            p("d/bike.routed.board.ron")
        );
        // Routing a routed board again never writes over it.
        assert_eq!(
            with_suffix(&p("bike.routed.board.ron"), "routed"),
            p("bike.routed.routed.board.ron")
        );
    }
}
