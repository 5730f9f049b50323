//! `lehr export`: pictures and fabrication files of a board. The export set
//! ([`crate::shared::export_set`]) makes every file's bytes, the library the fabrication
//! text and the window's drawing code the pictures; this writes each file atomically and
//! touches nothing it was not asked to write.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Result, bail};
use clap::Args;
use serde_json::{Value, json};

use lehr_engine::fab::{self, FabOptions};

use crate::shared::export_set::{
    self, Targets, build_files, file_stem, violation_line, write_files,
};

use super::paths;

use super::print::outln;

#[derive(Args, Debug)]
pub struct ExportArgs {
    /// The board file (placed, and routed for copper).
    pub board: PathBuf,
    /// Write an SVG picture of the board here.
    #[arg(long, value_name = "FILE")]
    pub svg: Option<PathBuf>,
    /// Write a PNG picture of the board here.
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    /// Write the Gerber files into this folder (made if missing): NAME-copper-top.gbr,
    /// NAME-copper-bottom.gbr, NAME-mask-top.gbr, NAME-mask-bottom.gbr, NAME-outline.gbr.
    #[arg(long, value_name = "DIR")]
    pub gerber: Option<PathBuf>,
    /// Write the NC drill program (plated and non-plated sections) here.
    #[arg(long, value_name = "FILE")]
    pub drill: Option<PathBuf>,
    /// Write the centroid (pick-and-place) CSV here.
    #[arg(long, value_name = "FILE")]
    pub centroid: Option<PathBuf>,
    /// Solder mask opening beyond each pad, per side, mm.
    #[arg(long, default_value_t = fab::DEFAULT_MASK_EXPANSION, value_name = "MM")]
    pub mask_expansion: f64,
    /// Write the files even when design rules are broken (by default the export is
    /// refused with exit code 3 and the broken rules listed; unrouted nets count for the
    /// Gerber files, and the centroid list alone is never refused).
    #[arg(long)]
    pub allow_violations: bool,
    /// Print one JSON object: the files written, the warnings, `violations` (a count),
    /// `violation_items` (the broken rules) and `refused`.
    #[arg(long)]
    pub json: bool,
}

impl ExportArgs {
    /// The files asked for; an error when none is.
    fn targets(&self) -> Result<Targets> {
        let targets = Targets {
            svg: self.svg.clone(),
            png: self.png.clone(),
            gerber: self.gerber.clone(),
            drill: self.drill.clone(),
            centroid: self.centroid.clone(),
        };
        if targets.svg.is_none()
            && targets.png.is_none()
            && targets.gerber.is_none()
            && targets.drill.is_none()
            && targets.centroid.is_none()
        {
            bail!(
                "nothing to export: give at least one of --svg, --png, --gerber, --drill, --centroid"
            );
        }
        Ok(targets)
    }
}

pub fn run(a: ExportArgs) -> Result<ExitCode> {
    let targets = a.targets()?;
    // Before any work: every path asked for can be written.
    for p in [
        &targets.svg,
        &targets.png,
        &targets.drill,
        &targets.centroid,
    ]
    .into_iter()
    .flatten()
    {
        paths::output_file(p)?;
    }
    if let Some(dir) = &targets.gerber {
        paths::output_folder(dir)?;
    }
    let design = lehr_engine::io::load_board(&a.board)?;
    let opts = FabOptions {
        mask_expansion: a.mask_expansion,
        ..FabOptions::default()
    };
    opts.check()?;

    // The design rules first: a board that breaks them is not sent out unless asked.
    let violations = export_set::violations(&design, &targets);
    let items: Vec<Value> = violations
        .iter()
        .map(|v| serde_json::to_value(v).unwrap_or(Value::Null))
        .collect();
    if !violations.is_empty() && !a.allow_violations {
        if a.json {
            outln!(
                "{}",
                json!({
                    "written": [],
                    "violations": violations.len(),
                    "violation_items": items,
                    "refused": true,
                })
            );
        } else {
            eprintln!(
                "lehr: export refused: {} design rules are broken (--allow-violations writes the files anyway):",
                violations.len()
            );
            for v in &violations {
                eprintln!("  {}", violation_line(v));
            }
        }
        return Ok(ExitCode::from(super::PROBLEMS));
    }

    // Make every file's contents first: an error then writes nothing at all.
    let files = build_files(&design, &file_stem(&a.board), &targets, &opts)?;

    let warnings = fab::warnings(&design);
    // Hazardous voltages or high currents: the usual caution, before the files go out.
    let caution = lehr_engine::drawing::caution::caution(&design);
    if !a.json {
        if !violations.is_empty() {
            eprintln!(
                "lehr: warning: {} design rules are broken; exporting anyway as asked:",
                violations.len()
            );
            for v in &violations {
                eprintln!("  {}", violation_line(v));
            }
        }
        for w in &warnings {
            eprintln!("lehr: warning: {w}");
        }
        if let Some(c) = &caution {
            eprintln!("lehr: {c}");
        }
    }
    write_files(&targets, &files)?;
    if a.json {
        outln!(
            "{}",
            json!({
                "written": files.iter().map(|(p, _)| p.display().to_string()).collect::<Vec<_>>(),
                "warnings": warnings,
                "caution": caution,
                "violations": violations.len(),
                "violation_items": items,
                "refused": false,
            })
        );
    } else {
        for (p, _) in &files {
            outln!("wrote {}", p.display());
        }
    }
    Ok(ExitCode::SUCCESS)
}
