//! `lehr check`: a board's copper and parts against the design rules.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use serde_json::json;

use lehr_engine::rules::{self, width};

use crate::shared::export_set::violation_line;

use super::print::outln;

#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The board file to check.
    pub board: PathBuf,
    /// Print one JSON object: `violations` (a count) and `items`.
    #[arg(long)]
    pub json: bool,
}

pub fn run(a: CheckArgs) -> Result<ExitCode> {
    let design = lehr_engine::io::load_board(&a.board)?;
    let items = rules::check(&design);
    if a.json {
        outln!("{}", json!({ "violations": items.len(), "items": items }));
    } else if items.is_empty() {
        outln!("{}: no violations", a.board.display());
    } else {
        outln!("{}: {} violations", a.board.display(), items.len());
        for v in &items {
            outln!("  {}", violation_line(v));
        }
    }
    let high_voltage = design
        .board
        .classes
        .iter()
        .any(|c| c.voltage.is_some_and(|v| v > 30.0));
    if high_voltage && !a.json {
        outln!("caution: {}", width::SAFETY_NOTE);
    }
    Ok(super::ok_or_problems(items.is_empty()))
}
