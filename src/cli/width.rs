//! `lehr width`: the track width a current needs (IPC-2221).

use std::process::ExitCode;

use anyhow::{Result, bail};
use clap::Args;
use serde_json::json;

use lehr_engine::rules::width;

use super::print::outln;

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
    /// Print one JSON object (width, copper area and the inputs) instead of text.
    #[arg(long)]
    pub json: bool,
}

pub fn run(a: WidthArgs) -> Result<ExitCode> {
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
        outln!(
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
        outln!(
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
            outln!("caution: high current; follow IPC-2221 and your local codes");
        }
    }
    Ok(ExitCode::SUCCESS)
}
