//! `lehr generate`: synthetic boards (grids and multi-pin arrays with a known optimum,
//! random boards for speed), written as board files.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Result, bail};
use clap::{Args, Subcommand};
use serde_json::json;

use lehr_engine::model::Board;
use lehr_engine::place::generate;

use super::print::outln;

#[derive(Subcommand, Debug)]
pub enum GenerateCommand {
    /// Square parts in rows and columns with a two-pin net between grid neighbours;
    /// known optimum (R(C-1) + C(R-1)) x pitch, recorded in the board.
    Grid {
        #[command(flatten)]
        array: ArrayArgs,
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
        #[command(flatten)]
        array: ArrayArgs,
        /// Nets per part.
        #[arg(long, default_value_t = 1.0)]
        nets_per_part: f64,
        /// The mix of net sizes as PINS:SHARE pairs, e.g. 2:60,3:20,4:20 (shares are
        /// relative; pins 2 to 10). Default: 2:60,3:14,4:8,5:5,6:4,7:3,8:2,9:2,10:2.
        #[arg(long, value_parser = parse_degrees)]
        degrees: Option<Vec<(u32, f64)>>,
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

/// The array of square parts the grid and PEKO boards share: its size, pitch and slack.
#[derive(Args, Debug)]
pub struct ArrayArgs {
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
}

impl ArrayArgs {
    /// Rows and columns from `--size` or `--rows` and `--cols`, within 1 to 1000 each
    /// and 2 to 250,000 parts; pitch and slack checked too.
    fn rows_cols(&self) -> Result<(u32, u32)> {
        let (r, c) = match (self.size, self.rows, self.cols) {
            (Some(n), _, _) => (n, n),
            (None, Some(r), Some(c)) => (r, c),
            _ => bail!("give --size N, or --rows R and --cols C"),
        };
        if !(1..=1000).contains(&r) || !(1..=1000).contains(&c) || r * c < 2 || r * c > 250_000 {
            bail!(
                "rows and columns must be 1 to 1000 each, 2 to 250,000 parts in all; got {r} x {c}"
            );
        }
        let (pitch, slack) = (self.pitch, self.slack);
        if !(pitch.is_finite() && (0.1..=100.0).contains(&pitch)) {
            bail!("--pitch must be between 0.1 and 100 mm, got {pitch}");
        }
        if !(slack.is_finite() && (1.0..=16.0).contains(&slack)) {
            bail!("--slack must be between 1 (a full board) and 16, got {slack}");
        }
        Ok((r, c))
    }
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

pub fn run(g: GenerateCommand) -> Result<ExitCode> {
    let (board, out, json) = make(g)?;
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
        outln!("{v}");
    } else {
        outln!(
            "wrote {} ({} parts, {} nets)",
            out.display(),
            board.parts.len(),
            board.nets.len()
        );
        if let Some(o) = optimum {
            outln!("optimal wirelength {o} mm");
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// The board the subcommand asks for, where to write it and whether to print JSON.
fn make(g: GenerateCommand) -> Result<(Board, PathBuf, bool)> {
    Ok(match g {
        GenerateCommand::Grid {
            array,
            seed,
            out,
            json,
        } => {
            let (r, c) = array.rows_cols()?;
            (
                generate::grid_rect_board(r, c, array.pitch, array.slack, seed),
                out,
                json,
            )
        }
        GenerateCommand::Peko {
            array,
            nets_per_part,
            degrees,
            seed,
            out,
            json,
        } => {
            let (r, c) = array.rows_cols()?;
            let ArrayArgs { pitch, slack, .. } = array;
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
    })
}
