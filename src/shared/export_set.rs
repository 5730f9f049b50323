//! The export set: which files an export of a board writes and their bytes, made before
//! anything is written so that an error writes nothing. `lehr export` and the window's
//! "Export fabrication files" both build and write it here. The fabrication text comes from
//! `lehr_engine::fab`, the pictures from `lehr_engine::drawing`.

use std::path::{Path, PathBuf};

use anyhow::{Context, Result, anyhow, bail};

use lehr_engine::fab::gerber::{GerberLayer, gerber};
use lehr_engine::fab::{self, FabOptions};
use lehr_engine::model::Design;
use lehr_engine::rules::{self, Violation, ViolationKind};

/// The name Gerber files start with: the board file's name without `.board.ron` (or
/// `.ron`), with anything but letters, digits, `.`, `_` and `-` made `_`.
pub fn file_stem(board: &Path) -> String {
    let stem = super::design_stem(board).unwrap_or("board");
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

impl Targets {
    /// Copper/mask Gerbers, the drill program or a picture is asked for: the export is
    /// held to the design rules (the centroid list alone is not).
    pub fn checked(&self) -> bool {
        self.gerber.is_some() || self.drill.is_some() || self.svg.is_some() || self.png.is_some()
    }
}

/// The broken design rules ([`rules::check`]) that stop an export of `targets` unless the
/// user agrees: none when only the centroid list is asked for; unrouted nets count only
/// when the copper layers (Gerber) are asked for.
pub fn violations(design: &Design, targets: &Targets) -> Vec<Violation> {
    if !targets.checked() {
        return Vec::new();
    }
    let mut items = rules::check(design);
    if targets.gerber.is_none() {
        items.retain(|v| v.kind != ViolationKind::Unconnected);
    }
    items
}

/// One broken rule on one line, as `lehr check` prints it (without the indent).
pub fn violation_line(v: &Violation) -> String {
    match v.at {
        Some(p) => format!("({:.3}, {:.3}) {:?}: {}", p.x, p.y, v.kind, v.message),
        None => format!("{:?}: {}", v.kind, v.message),
    }
}

/// The contents of every file `targets` names, before anything is written (the CLI and
/// the window both write them with [`write_files`]).
pub fn build_files(
    design: &Design,
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
