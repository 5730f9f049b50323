//! `lehr route`: the nets of a placed board routed on two layers.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use anyhow::{Result, bail};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use serde_json::{Value, json};

use lehr_engine::model::Design;
use lehr_engine::route::{self, RouteOptions, RouteProgress, RouteResult};

use super::print::outln;

#[derive(Args, Debug)]
pub struct RouteArgs {
    /// A placed board file.
    pub board: PathBuf,
    /// Allow 45-degree steps from the start (tried anyway when axis steps alone leave
    /// nets unrouted)
    #[arg(long)]
    pub diagonal: bool,
    /// Most rip-up and reroute passes.
    #[arg(long)]
    pub passes: Option<u32>,
    /// Where to write the routed board (default: NAME.routed.board.ron beside the input).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Print one JSON object with the results.
    #[arg(long)]
    pub json: bool,
}

pub fn run(a: RouteArgs) -> Result<ExitCode> {
    let design = lehr_engine::io::load_board(&a.board)?;
    lehr_engine::model::warnings(&design)
        .iter()
        .for_each(|w| eprintln!("lehr: warning: {w}"));
    let opts = a.options()?;
    let out = a
        .out
        .clone()
        .unwrap_or_else(|| super::with_suffix(&a.board, "routed"));
    // Before the routing: a path that cannot be written fails now, not after it.
    super::paths::output_file(&out)?;
    let result = route_with_progress(&design, &opts, !a.json)?;
    let mut board = design.board.clone();
    board.copper = result.copper.clone();
    lehr_engine::io::save_board(&out, &board)?;
    if a.json {
        outln!("{}", result_json(&result, &out));
    } else {
        print_result(&result, &out, a.diagonal);
    }
    Ok(super::ok_or_problems(result.unrouted.is_empty()))
}

impl RouteArgs {
    /// The router's options from the flags.
    fn options(&self) -> Result<RouteOptions> {
        let mut opts = RouteOptions {
            diagonal: self.diagonal,
            ..RouteOptions::default()
        };
        if let Some(p) = self.passes {
            if p == 0 {
                bail!("--passes must be at least 1");
            }
            opts.max_passes = p;
        }
        Ok(opts)
    }
}

/// Routes the board, with a spinner and the pass on a terminal.
fn route_with_progress(
    design: &Design,
    opts: &RouteOptions,
    progress: bool,
) -> Result<RouteResult> {
    let bar = if progress && std::io::stderr().is_terminal() {
        let b = ProgressBar::new_spinner().with_style(
            ProgressStyle::with_template("{spinner} {elapsed} {msg}").expect("static template"),
        );
        b.enable_steady_tick(Duration::from_millis(120));
        b
    } else {
        ProgressBar::hidden()
    };
    let cancel = AtomicBool::new(false);
    let result = route::route(design, opts, &cancel, &mut |p: &RouteProgress| {
        bar.set_message(format!(
            "pass {}/{}: net {}/{}, {} nets sharing cells",
            p.pass, p.max_passes, p.done_in_pass, p.nets_in_pass, p.conflicting_nets
        ));
    })?;
    bar.finish_and_clear();
    Ok(result)
}

/// The results as one JSON object (`--json`).
fn result_json(result: &RouteResult, out: &Path) -> Value {
    json!({
        "nets": result.nets,
        "routed": result.routed,
        "unrouted": result.unrouted.iter().map(|u| json!({"net": u.net, "why": u.why})).collect::<Vec<_>>(),
        "track_length_mm": result.track_length_mm,
        "vias": result.vias,
        "mst_mm": result.mst_mm,
        "track_over_mst": result.track_over_mst,
        "vias_per_net": result.vias_per_net,
        "passes": result.passes,
        "diagonal": result.diagonal,
        "seconds": result.seconds,
        "out": out.display().to_string(),
    })
}

/// The results as text; `asked_diagonal`: `--diagonal` was given.
fn print_result(result: &RouteResult, out: &Path, asked_diagonal: bool) {
    outln!(
        "routed {} of {} nets in {} passes, {:.2} s: {:.1} mm of track, {} vias",
        result.routed,
        result.nets,
        result.passes,
        result.seconds,
        result.track_length_mm,
        result.vias
    );
    outln!(
        "  {:.2} vias per net; track {:.2} x the spanning-tree length of the pads ({:.1} mm)",
        result.vias_per_net,
        result.track_over_mst,
        result.mst_mm
    );
    if result.diagonal && !asked_diagonal {
        outln!("  45-degree steps were used: axis steps alone left nets unrouted");
    }
    for u in &result.unrouted {
        outln!("  not routed: {}: {}", u.net, u.why);
    }
    outln!("wrote {}", out.display());
}
