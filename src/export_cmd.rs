//! `lehr export`: pictures and fabrication files of a board. The library makes the text
//! (`lehr_engine::fab`) and the pictures (`lehr_engine::drawing`); this writes
//! each file atomically and touches nothing it was not asked to write.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{Context, Result, anyhow, bail};
use clap::Args;
use serde_json::json;

use lehr_engine::fab::gerber::{GerberLayer, gerber};
use lehr_engine::fab::{self, FabOptions};

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
    /// Print one JSON object: the files written and the warnings.
    #[arg(long)]
    pub json: bool,
}

/// The name Gerber files start with: the board file's name without `.board.ron` (or
/// `.ron`), with anything but letters, digits, `.`, `_` and `-` made `_`.
pub fn file_stem(board: &Path) -> String {
    let stem = crate::cli::board_stem(board).unwrap_or("board");
    let s: String = stem
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '.' | '_' | '-') {
                c
            } else {
                '_'
            }
        })
        .collect();
    if s.is_empty() { "board".into() } else { s }
}

/// Where each export goes; `None` leaves it out.
#[derive(Clone, Debug, Default)]
pub struct Targets {
    pub svg: Option<PathBuf>,
    pub png: Option<PathBuf>,
    /// The folder for the Gerber files, named `STEM-LAYER.gbr`.
    pub gerber: Option<PathBuf>,
    pub drill: Option<PathBuf>,
    pub centroid: Option<PathBuf>,
}

impl Targets {
    /// Every fabrication file and the SVG picture in one folder, named after `stem`.
    pub fn all_in(dir: &Path, stem: &str) -> Targets {
        Targets {
            svg: Some(dir.join(format!("{stem}.svg"))),
            png: None,
            gerber: Some(dir.to_path_buf()),
            drill: Some(dir.join(format!("{stem}.drl"))),
            centroid: Some(dir.join(format!("{stem}-centroid.csv"))),
        }
    }
}

/// The contents of every file `targets` names, before anything is written (the CLI and
/// the window both write them with [`write_files`]).
pub fn build_files(
    design: &lehr_engine::model::Design,
    stem: &str,
    targets: &Targets,
    opts: &FabOptions,
) -> Result<Vec<(PathBuf, Vec<u8>)>> {
    let mut files: Vec<(PathBuf, Vec<u8>)> = Vec::new();
    if let Some(p) = &targets.svg {
        files.push((
            p.clone(),
            lehr_engine::drawing::board_svg(design).into_bytes(),
        ));
    }
    if let Some(p) = &targets.png {
        let bytes = lehr_engine::drawing::board_png(design)
            .map_err(|e| anyhow!("cannot draw the PNG picture: {e}"))?;
        files.push((p.clone(), bytes));
    }
    if let Some(dir) = &targets.gerber {
        for layer in GerberLayer::ALL {
            let text = gerber(design, layer, opts)?;
            files.push((
                dir.join(format!("{stem}-{}.gbr", layer.name())),
                text.into_bytes(),
            ));
        }
    }
    if let Some(p) = &targets.drill {
        files.push((p.clone(), fab::drill::drill(design)?.into_bytes()));
    }
    if let Some(p) = &targets.centroid {
        files.push((p.clone(), fab::centroid::centroid_csv(design).into_bytes()));
    }
    let names: Vec<&PathBuf> = files.iter().map(|(p, _)| p).collect();
    for (i, p) in names.iter().enumerate() {
        if names[..i].contains(p) {
            bail!("{} is named twice", p.display());
        }
    }
    Ok(files)
}

/// Makes the Gerber folder if needed, then writes each file atomically.
pub fn write_files(targets: &Targets, files: &[(PathBuf, Vec<u8>)]) -> Result<()> {
    if let Some(dir) = &targets.gerber {
        std::fs::create_dir_all(dir)
            .with_context(|| format!("cannot make the folder {}", dir.display()))?;
    }
    for (path, bytes) in files {
        lehr_engine::io::write_file(path, bytes)?;
    }
    Ok(())
}

pub fn export_cmd(a: ExportArgs) -> Result<ExitCode> {
    if a.svg.is_none()
        && a.png.is_none()
        && a.gerber.is_none()
        && a.drill.is_none()
        && a.centroid.is_none()
    {
        bail!(
            "nothing to export: give at least one of --svg, --png, --gerber, --drill, --centroid"
        );
    }
    let design = lehr_engine::io::load_board(&a.board)?;
    let opts = FabOptions {
        mask_expansion: a.mask_expansion,
        ..FabOptions::default()
    };
    opts.check()?;

    // Make every file's contents first: an error then writes nothing at all.
    let targets = Targets {
        svg: a.svg.clone(),
        png: a.png.clone(),
        gerber: a.gerber.clone(),
        drill: a.drill.clone(),
        centroid: a.centroid.clone(),
    };
    let files = build_files(&design, &file_stem(&a.board), &targets, &opts)?;

    let warnings = fab::warnings(&design);
    // Hazardous voltages or high currents: the usual caution, before the files go out.
    let caution = lehr_engine::drawing::caution::caution(&design);
    if !a.json {
        for w in &warnings {
            eprintln!("lehr: warning: {w}");
        }
        if let Some(c) = &caution {
            eprintln!("lehr: {c}");
        }
    }
    write_files(&targets, &files)?;
    if a.json {
        println!(
            "{}",
            json!({
                "written": files.iter().map(|(p, _)| p.display().to_string()).collect::<Vec<_>>(),
                "warnings": warnings,
                "caution": caution,
            })
        );
    } else {
        for (p, _) in &files {
            println!("wrote {}", p.display());
        }
    }
    Ok(ExitCode::SUCCESS)
}
