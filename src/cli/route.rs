//! `lehr route`, `lehr check` and `lehr width`: the copper side of the command line.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::process::ExitCode;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use anyhow::{Result, bail};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use serde_json::json;

use lehr_engine::route::{self, RouteOptions, RouteProgress};
use lehr_engine::rules::{self, width};

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

#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The board file to check.
    pub board: PathBuf,
    /// Print one JSON object: `violations` (a count) and `items`.
    #[arg(long)]
    pub json: bool,
}

#[derive(Args, Debug)]
pub struct WidthArgs {
    /// Continuous current, A.
    #[arg(long)]
    pub current: f64,
    /// Allowed temperature rise, degrees C.
    #[arg(long, default_value_t = width::DEFAULT_TEMP_RISE_C)]
    pub rise: f64,
    /// Copper weight, oz/ft^2 (1 oz is 0.035 mm thick).
    #[arg(long, default_value_t = 1.0)]
    pub copper: f64,
    /// An inner layer of a multilayer board (half the current of an outer one).
    #[arg(long)]
    pub inner: bool,
    #[arg(long)]
    pub json: bool,
}

pub fn route_cmd(a: RouteArgs) -> Result<ExitCode> {
    let design = lehr_engine::io::load_board(&a.board)?;
    let mut opts = RouteOptions {
        diagonal: a.diagonal,
        ..RouteOptions::default()
    };
    if let Some(p) = a.passes {
        if p == 0 {
            bail!("--passes must be at least 1");
        }
        opts.max_passes = p;
    }
    let bar = if !a.json && std::io::stderr().is_terminal() {
        let b = ProgressBar::new_spinner().with_style(
            ProgressStyle::with_template("{spinner} {elapsed} {msg}").expect("static template"),
        );
        b.enable_steady_tick(Duration::from_millis(120));
        b
    } else {
        ProgressBar::hidden()
    };
    let cancel = AtomicBool::new(false);
    let result = route::route(&design, &opts, &cancel, &mut |p: &RouteProgress| {
        bar.set_message(format!(
            "pass {}/{}: net {}/{}, {} nets sharing cells",
            p.pass, p.max_passes, p.done_in_pass, p.nets_in_pass, p.conflicting_nets
        ));
    })?;
    bar.finish_and_clear();
    let mut board = design.board.clone();
    board.copper = result.copper.clone();
    let out = a
        .out
        .clone()
        .unwrap_or_else(|| crate::cli::with_suffix(&a.board, "routed"));
    lehr_engine::io::save_board(&out, &board)?;
    if a.json {
        println!(
            "{}",
            json!({
                "nets": result.nets,
                "routed": result.routed,
                "unrouted": result.unrouted.iter().map(|u| json!({"net": u.net, "why": u.why})).collect::<Vec<_>>(),
                "track_length_mm": result.track_length_mm,
                "vias": result.vias,
                "passes": result.passes,
                "diagonal": result.diagonal,
                "seconds": result.seconds,
                "out": out.display().to_string(),
            })
        );
    } else {
        println!(
            "routed {} of {} nets in {} passes, {:.2} s: {:.1} mm of track, {} vias",
            result.routed,
            result.nets,
            result.passes,
            result.seconds,
            result.track_length_mm,
            result.vias
        );
        if result.diagonal && !a.diagonal {
            println!("  45-degree steps were used: axis steps alone left nets unrouted");
        }
        for u in &result.unrouted {
            println!("  not routed: {}: {}", u.net, u.why);
        }
        println!("wrote {}", out.display());
    }
    Ok(if result.unrouted.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(2)
    })
}

pub fn check_cmd(a: CheckArgs) -> Result<ExitCode> {
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

pub fn width_cmd(a: WidthArgs) -> Result<ExitCode> {
    let sane = |v: f64, lo: f64, hi: f64| v.is_finite() && v >= lo && v <= hi;
    if !sane(a.current, 0.001, 1000.0) {
        bail!(
            "--current must be between 0.001 and 1000 A, got {}",
            a.current
        );
    }
    if !sane(a.rise, 1.0, 100.0) {
        bail!("--rise must be between 1 and 100 degrees C, got {}", a.rise);
    }
    if !sane(a.copper, 0.25, 10.0) {
        bail!("--copper must be between 0.25 and 10 oz, got {}", a.copper);
    }
    let position = if a.inner {
        width::LayerPosition::Inner
    } else {
        width::LayerPosition::Outer
    };
    let area = width::required_area_mil2(a.current, a.rise, position);
    let w = width::required_width_mm(a.current, a.rise, a.copper, position);
    if a.json {
        println!(
            "{}",
            json!({
                "width_mm": w,
                "area_mil2": area,
                "current_a": a.current,
                "rise_c": a.rise,
                "copper_oz": a.copper,
                "layer": if a.inner { "inner" } else { "outer" },
            })
        );
    } else {
        println!(
            "{:.3} mm ({:.1} mil) for {} A, {} C rise, {} oz copper, {} layer (IPC-2221: \
             I = k dT^0.44 A^0.725, A = {:.1} mil^2)",
            w,
            w / width::MM_PER_MIL,
            a.current,
            a.rise,
            a.copper,
            if a.inner { "inner" } else { "outer" },
            area
        );
        if a.current >= 10.0 {
            println!("caution: high current; follow IPC-2221 and your local codes");
        }
    }
    Ok(ExitCode::SUCCESS)
}
