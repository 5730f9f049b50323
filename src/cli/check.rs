//! `lehr check`: a board's copper and parts against the design rules.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use serde_json::json;

use lehr_engine::rules::{self, width};

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
        println!("{}", json!({ "violations": items.len(), "items": items }));
    } else if items.is_empty() {
        println!("{}: no violations", a.board.display());
    } else {
        println!("{}: {} violations", a.board.display(), items.len());
        for v in &items {
            match v.at {
                Some(p) => println!("  ({:.3}, {:.3}) {:?}: {}", p.x, p.y, v.kind, v.message),
                None => println!("  {:?}: {}", v.kind, v.message),
            }
        }
    }
    let high_voltage = design
        .board
        .classes
        .iter()
        .any(|c| c.voltage.is_some_and(|v| v > 30.0));
    if high_voltage && !a.json {
        println!("caution: {}", width::SAFETY_NOTE);
    }
    Ok(if items.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(2)
    })
}
