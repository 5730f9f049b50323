//! `lehr import`: a netlist (CSV/TSV connection list or EDIF 2 0 0) becomes a board file
//! with unplaced parts, ready for `lehr place`. The work is `lehr_engine::io::import_file`.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use serde_json::json;

use lehr_engine::io::{Format, ImportFiles, ImportOptions, OutlineSize, import_file};

use super::print::outln;

#[derive(Args, Debug)]
pub struct ImportArgs {
    /// The netlist: a connection list (.csv, .tsv, .txt) or an EDIF 2 0 0 file (.edif,
    /// .edf, .edn); other names are told apart by their content. See
    /// docs/import-formats.md.
    pub file: PathBuf,
    /// A parts table (reference, value, footprint) for a connection list.
    #[arg(long)]
    pub parts: Option<PathBuf>,
    /// A footprint mapping file (CELL = FOOTPRINT per line) for an EDIF netlist.
    #[arg(long)]
    pub footprints: Option<PathBuf>,
    /// Board outline W x H in mm, e.g. 50x30 (default: a square sized from the parts).
    #[arg(long)]
    pub outline: Option<String>,
    /// Where to write the board file.
    #[arg(long)]
    pub out: PathBuf,
    /// Print one JSON object with the results (warnings included) instead of text.
    #[arg(long)]
    pub json: bool,
}

pub fn run(a: ImportArgs) -> Result<ExitCode> {
    // Before the import: a path that cannot be written fails now, not after it.
    super::paths::output_file(&a.out)?;
    let files = ImportFiles {
        netlist: &a.file,
        parts: a.parts.as_deref(),
        footprints: a.footprints.as_deref(),
    };
    // Parsed here rather than by clap so that a bad value exits with 1 and one line,
    // like every other import error.
    let outline = match a.outline.as_deref() {
        Some(s) => Some(s.parse::<OutlineSize>().map_err(anyhow::Error::msg)?),
        None => None,
    };
    let opts = ImportOptions {
        name: None,
        outline,
    };
    let (format, imported) = import_file(&files, &opts)?;
    lehr_engine::io::save_board(&a.out, &imported.board)?;
    let board = &imported.board;
    let bounds = board.outline.bounds();
    let format_name = match format {
        Format::Connections => "connection list",
        Format::Edif => "EDIF",
    };
    if a.json {
        let v = json!({
            "format": format_name,
            "parts": board.parts.len(),
            "nets": board.nets.len(),
            "outline_mm": [bounds.width(), bounds.height()],
            "warnings": imported.warnings.iter().map(|w| w.to_string()).collect::<Vec<_>>(),
            "out": a.out.display().to_string(),
        });
        outln!("{v}");
    } else {
        for w in &imported.warnings {
            eprintln!("warning: {w}");
        }
        outln!(
            "imported {} ({format_name}): {} parts, {} nets, outline {} x {} mm",
            a.file.display(),
            board.parts.len(),
            board.nets.len(),
            bounds.width(),
            bounds.height()
        );
        outln!("wrote {}", a.out.display());
    }
    Ok(ExitCode::SUCCESS)
}
