//! `lehr sweep`: schedules x parameter values x starts x seeds over one or more boards,
//! each run at the same exact move budget, in parallel on every core
//! (`lehr_engine::place::sweep`); writes `runs.csv`, `summary.csv` and, per board, two
//! pictures (SVG and PNG): the final wirelength per schedule as box plots, and the best
//! energy so far against moves.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{Context, Result, bail};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};

use lehr_engine::fab::centroid::field;
use lehr_engine::model::Design;
use lehr_engine::place::sweep::{self, SweepResult, SweepRun};
use lehr_engine::place::{AnnealOptions, Schedule, Start};

use super::print::outln;
use crate::shared::board_stem;

#[derive(Args, Debug)]
pub struct SweepArgs {
    /// The board files (RON, see docs/board-format.md).
    #[arg(required = true)]
    boards: Vec<PathBuf>,
    /// Schedules to compare, comma-separated (names as in `lehr place --schedule`).
    #[arg(long, default_value = "geometric,lam-delosme", value_delimiter = ',', value_parser = parse_schedule)]
    schedules: Vec<Schedule>,
    /// Seeds: a list (1,2,5) or a range (1-3).
    #[arg(long, default_value = "1-3", value_parser = parse_seeds)]
    seeds: SeedList,
    /// Starts to compare, comma-separated: given, spectral or both.
    #[arg(long, default_value = "both", value_delimiter = ',', value_parser = parse_start)]
    starts: Vec<Start>,
    /// Values of a schedule parameter to sweep, NAME=V1,V2,... (repeatable); each applies
    /// to the schedules that have that parameter, the others run once with it unset.
    #[arg(long = "param", value_name = "NAME=V1,V2,..", value_parser = parse_param_values)]
    params: Vec<(String, Vec<f64>)>,
    /// The move budget of every run (all its starts and chains together); default: the
    /// first board's default budget, so every run of every board gets the same number.
    #[arg(long)]
    moves: Option<u64>,
    /// Threads to run the runs on (0: one per core); each run itself uses one.
    #[arg(long, default_value_t = 0)]
    threads: usize,
    /// The folder to write runs.csv, summary.csv and the pictures into (made if missing).
    #[arg(long)]
    out: PathBuf,
}

/// Seeds from `1,2,5` or `1-3`.
#[derive(Clone, Debug)]
pub struct SeedList(Vec<u64>);

fn parse_seeds(s: &str) -> Result<SeedList, String> {
    let mut out = Vec::new();
    for part in s.split(',') {
        let part = part.trim();
        match part.split_once('-') {
            Some((a, b)) => {
                let (a, b): (u64, u64) = (
                    a.trim()
                        .parse()
                        .map_err(|_| format!("{a:?} is not a seed"))?,
                    b.trim()
                        .parse()
                        .map_err(|_| format!("{b:?} is not a seed"))?,
                );
                if b < a || b - a >= 10_000 {
                    return Err(format!(
                        "seed range {part} must go up and hold at most 10,000 seeds"
                    ));
                }
                out.extend(a..=b);
            }
            None => out.push(
                part.parse()
                    .map_err(|_| format!("{part:?} is not a seed"))?,
            ),
        }
    }
    Ok(SeedList(out))
}

/// An item of `--schedules` (spaces around it allowed), as `lehr place --schedule`.
fn parse_schedule(s: &str) -> Result<Schedule, String> {
    super::place::parse_schedule(s.trim())
}

/// An item of `--starts`, as `lehr place --start`.
fn parse_start(s: &str) -> Result<Start, String> {
    super::place::parse_start(s.trim())
}

fn parse_param_values(s: &str) -> Result<(String, Vec<f64>), String> {
    let (name, vs) = s
        .split_once('=')
        .ok_or_else(|| format!("expected NAME=V1,V2,..., got {s:?}"))?;
    let values = vs
        .split(',')
        .map(|v| {
            v.trim()
                .parse::<f64>()
                .map_err(|_| format!("{name}: {v:?} is not a number"))
        })
        .collect::<Result<Vec<f64>, String>>()?;
    Ok((name.trim().to_string(), values))
}

/// The schedules with every combination of the swept values of the parameters each has.
fn schedule_variants(
    schedules: &[Schedule],
    params: &[(String, Vec<f64>)],
) -> Result<Vec<Schedule>> {
    for (name, _) in params {
        if !schedules
            .iter()
            .any(|s| s.params().iter().any(|p| p.name == name))
        {
            bail!("no schedule of the sweep has a parameter {name:?}");
        }
    }
    let mut out = Vec::new();
    for &s in schedules {
        let mut variants = vec![s];
        for (name, values) in params {
            if !s.params().iter().any(|p| p.name == name) {
                continue;
            }
            let mut next = Vec::new();
            for v in &variants {
                for &x in values {
                    next.push(v.with(name, x)?);
                }
            }
            variants = next;
        }
        out.extend(variants);
    }
    Ok(out)
}

/// The schedule's hand-set parameters as `name=value` joined by spaces ("" when none).
fn parameters(s: &Schedule) -> String {
    s.explicit()
        .map(|(p, v)| format!("{}={v}", p.name))
        .collect::<Vec<_>>()
        .join(" ")
}

/// A schedule with its parameters, for legends and the summary.
fn label(s: &Schedule) -> String {
    s.to_string()
}

pub fn run(a: SweepArgs) -> Result<ExitCode> {
    let schedules = schedule_variants(&a.schedules, &a.params)?;
    let designs: Vec<Design> = a
        .boards
        .iter()
        .map(lehr_engine::io::load_board)
        .collect::<Result<_, _>>()?;
    std::fs::create_dir_all(&a.out)
        .with_context(|| format!("cannot make the folder {}", a.out.display()))?;
    let base = AnnealOptions {
        max_moves: Some(match a.moves {
            Some(m) => m,
            None => lehr_engine::place::options::default_budget(
                designs[0].board.parts.iter().filter(|p| !p.locked).count(),
                1.0,
            ),
        }),
        ..AnnealOptions::default()
    };
    let plan = sweep::plan(designs.len(), &schedules, &a.starts, &a.seeds.0);
    for r in &plan {
        lehr_engine::place::options::check_options(&sweep::run_options(&base, r))?;
    }
    eprintln!(
        "sweep: {} runs ({} boards x {} schedules x {} starts x {} seeds), {} moves each, on {} threads",
        plan.len(),
        designs.len(),
        schedules.len(),
        a.starts.len(),
        a.seeds.0.len(),
        base.max_moves.unwrap_or(0),
        lehr_engine::place::thread_count(a.threads)
    );
    let bar = if std::io::stderr().is_terminal() {
        ProgressBar::new(plan.len() as u64).with_style(
            ProgressStyle::with_template("{bar:30} {pos}/{len} runs {elapsed}")
                .unwrap_or_else(|_| ProgressStyle::default_bar()),
        )
    } else {
        ProgressBar::hidden()
    };
    let results = sweep::run(&designs, &plan, &base, a.threads, &|| bar.inc(1));
    bar.finish_and_clear();
    let mut done = Vec::with_capacity(plan.len());
    for (r, res) in plan.iter().zip(results) {
        let res = res.with_context(|| {
            format!(
                "{}: {} seed {}",
                a.boards[r.board].display(),
                label(&r.schedule),
                r.seed
            )
        })?;
        done.push((r.clone(), res));
    }
    let names: Vec<String> = a
        .boards
        .iter()
        .map(|b| board_stem(b).unwrap_or("board").to_string())
        .collect();
    let stats = group_stats(&done);
    let mut written = vec![
        write(&a.out.join("runs.csv"), &runs_csv(&names, &done))?,
        write(&a.out.join("summary.csv"), &summary_csv(&names, &stats))?,
    ];
    for (i, name) in names.iter().enumerate() {
        let mine: Vec<&(SweepRun, SweepResult)> =
            done.iter().filter(|(r, _)| r.board == i).collect();
        written.extend(pictures(&a.out, name, &mine)?);
    }
    for l in summary_text(&names, &stats).lines() {
        outln!("{l}");
    }
    for w in written {
        outln!("wrote {}", w.display());
    }
    Ok(ExitCode::SUCCESS)
}

fn write(path: &Path, text: &str) -> Result<PathBuf> {
    lehr_engine::io::write_file(path, text.as_bytes())?;
    Ok(path.to_path_buf())
}

/// One row per run.
fn runs_csv(names: &[String], done: &[(SweepRun, SweepResult)]) -> String {
    let mut s = String::from(
        "board,schedule,parameters,start,seed,moves,wirelength_mm,legal,seconds,moves_per_second\n",
    );
    for (r, x) in done {
        let _ = writeln!(
            s,
            "{},{},{},{},{},{},{:.4},{},{:.3},{:.0}",
            field(&names[r.board]),
            r.schedule.name(),
            field(&parameters(&r.schedule)),
            r.start.name(),
            r.seed,
            x.moves,
            x.wirelength_mm,
            x.legal,
            x.seconds,
            x.moves_per_second
        );
    }
    s
}

/// The runs grouped by (board, schedule label, start), in first-seen order.
/// A group of runs: (board, schedule label, start).
type GroupKey = (usize, String, Start);

fn groups(done: &[(SweepRun, SweepResult)]) -> Vec<(GroupKey, Vec<&SweepResult>)> {
    let mut order: Vec<GroupKey> = Vec::new();
    let mut map: BTreeMap<usize, Vec<&SweepResult>> = BTreeMap::new();
    for (r, x) in done {
        let key = (r.board, label(&r.schedule), r.start);
        let i = match order.iter().position(|k| *k == key) {
            Some(i) => i,
            None => {
                order.push(key);
                order.len() - 1
            }
        };
        map.entry(i).or_default().push(x);
    }
    order
        .into_iter()
        .enumerate()
        .map(|(i, k)| (k, map.remove(&i).unwrap_or_default()))
        .collect()
}

/// One row per board, schedule (with parameters) and start: mean, spread, best.
/// What the summary says of one group of runs (board, schedule, start).
struct GroupStats {
    key: GroupKey,
    runs: usize,
    legal: usize,
    mean: f64,
    sd: f64,
    best: f64,
    worst: f64,
    moves_per_second: f64,
}

/// Each group's statistics, computed once for the CSV summary and the printed one.
fn group_stats(done: &[(SweepRun, SweepResult)]) -> Vec<GroupStats> {
    groups(done)
        .into_iter()
        .filter_map(|(key, xs)| {
            let wl: Vec<f64> = xs.iter().map(|x| x.wirelength_mm).collect();
            let (mean, sd, best, worst) = sweep::spread(&wl)?;
            Some(GroupStats {
                key,
                runs: xs.len(),
                legal: xs.iter().filter(|x| x.legal).count(),
                mean,
                sd,
                best,
                worst,
                moves_per_second: xs.iter().map(|x| x.moves_per_second).sum::<f64>()
                    / xs.len() as f64,
            })
        })
        .collect()
}

fn summary_csv(names: &[String], stats: &[GroupStats]) -> String {
    let mut s = String::from(
        "board,schedule,start,runs,legal_runs,mean_mm,std_mm,best_mm,worst_mm,mean_moves_per_second\n",
    );
    for g in stats {
        let (b, l, start) = &g.key;
        let _ = writeln!(
            s,
            "{},{},{},{},{},{:.4},{:.4},{:.4},{:.4},{:.0}",
            field(&names[*b]),
            field(l),
            start.name(),
            g.runs,
            g.legal,
            g.mean,
            g.sd,
            g.best,
            g.worst,
            g.moves_per_second
        );
    }
    s
}

fn summary_text(names: &[String], stats: &[GroupStats]) -> String {
    let mut s = String::new();
    for g in stats {
        let (b, l, start) = &g.key;
        let _ = writeln!(
            s,
            "{}: {l}, start {}: mean {:.1} mm (sd {:.1}), best {:.1} mm, {} of {} legal",
            names[*b],
            start.name(),
            g.mean,
            g.sd,
            g.best,
            g.legal,
            g.runs
        );
    }
    s
}

/// Line colours for the schedules, in order (our own set, readable on white).
const COLOURS: [(u8, u8, u8); 8] = [
    (0xc0, 0x50, 0x28),
    (0x14, 0x84, 0x80),
    (0x6a, 0x4c, 0xb0),
    (0xb8, 0x8a, 0x10),
    (0x3c, 0x7c, 0x3c),
    (0xa0, 0x30, 0x70),
    (0x40, 0x60, 0x90),
    (0x70, 0x70, 0x70),
];

/// Writes `NAME-wirelength.{svg,png}` and `NAME-best.{svg,png}` for one board's runs.
fn pictures(dir: &Path, name: &str, runs: &[&(SweepRun, SweepResult)]) -> Result<Vec<PathBuf>> {
    register_font();
    let mut out = Vec::new();
    // Group labels (schedule and start) in first-seen order.
    let mut labels: Vec<String> = Vec::new();
    for (r, _) in runs {
        let l = group_label(r);
        if !labels.contains(&l) {
            labels.push(l);
        }
    }
    for ext in ["svg", "png"] {
        let p = dir.join(format!("{name}-wirelength.{ext}"));
        box_plot(&p, name, &labels, runs)
            .map_err(|e| anyhow::anyhow!("cannot draw {}: {e}", p.display()))?;
        out.push(p);
        let p = dir.join(format!("{name}-best.{ext}"));
        best_plot(&p, name, &labels, runs)
            .map_err(|e| anyhow::anyhow!("cannot draw {}: {e}", p.display()))?;
        out.push(p);
    }
    Ok(out)
}

fn group_label(r: &SweepRun) -> String {
    format!("{} ({})", label(&r.schedule), r.start.name())
}

fn register_font() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        // egui's default proportional font, already in the tree; plotters' ab_glyph
        // backend needs one registered (no system font lookup).
        let _ = plotters::style::register_font(
            "sans-serif",
            plotters::style::FontStyle::Normal,
            epaint_default_fonts::UBUNTU_LIGHT,
        );
    });
}

type DrawResult = std::result::Result<(), Box<dyn std::error::Error>>;

/// Draws a picture into memory (`draw` gets an SVG string or an RGB buffer, by the
/// path's extension) and writes it atomically like every file lehr writes.
fn save(
    path: &Path,
    draw: impl FnOnce(Option<&mut String>, Option<&mut [u8]>) -> DrawResult,
) -> DrawResult {
    let bytes = if path.extension().is_some_and(|e| e == "svg") {
        let mut text = String::new();
        draw(Some(&mut text), None)?;
        text.into_bytes()
    } else {
        let (w, h) = SIZE;
        let mut rgb = vec![0u8; (w * h * 3) as usize];
        draw(None, Some(&mut rgb))?;
        let mut pm = tiny_skia::Pixmap::new(w, h).ok_or("empty picture")?;
        for (px, c) in pm.data_mut().chunks_exact_mut(4).zip(rgb.chunks_exact(3)) {
            px.copy_from_slice(&[c[0], c[1], c[2], 255]);
        }
        pm.encode_png()?
    };
    lehr_engine::io::write_file(path, &bytes)?;
    Ok(())
}

const SIZE: (u32, u32) = (960, 600);

fn box_plot(
    path: &Path,
    name: &str,
    labels: &[String],
    runs: &[&(SweepRun, SweepResult)],
) -> DrawResult {
    use plotters::prelude::*;
    let values: Vec<Vec<f64>> = labels
        .iter()
        .map(|l| {
            runs.iter()
                .filter(|(r, _)| group_label(r) == *l)
                .map(|(_, x)| x.wirelength_mm)
                .collect()
        })
        .collect();
    let all: Vec<f64> = values.iter().flatten().copied().collect();
    let lo = all.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = all.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let pad = ((hi - lo) * 0.1).max(hi.abs() * 0.01).max(1e-6);
    let (y0, y1) = ((lo - pad) as f32, (hi + pad) as f32);
    save(path, |svg, rgb| match (svg, rgb) {
        (Some(text), _) => box_plot_on(
            SVGBackend::with_string(text, SIZE).into_drawing_area(),
            name,
            labels,
            &values,
            (y0, y1),
        ),
        (_, Some(px)) => box_plot_on(
            BitMapBackend::with_buffer(px, SIZE).into_drawing_area(),
            name,
            labels,
            &values,
            (y0, y1),
        ),
        _ => Ok(()),
    })
}

fn box_plot_on<DB: plotters::prelude::DrawingBackend>(
    root: plotters::prelude::DrawingArea<DB, plotters::coord::Shift>,
    name: &str,
    labels: &[String],
    values: &[Vec<f64>],
    (y0, y1): (f32, f32),
) -> DrawResult
where
    DB::ErrorType: 'static,
{
    use plotters::prelude::*;
    {
        root.fill(&WHITE)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                format!("{name}: final wirelength per schedule"),
                ("sans-serif", 24),
            )
            .margin(16)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(labels.into_segmented(), y0..y1)?;
        chart
            .configure_mesh()
            .y_desc("wirelength, mm")
            .x_desc("schedule (start)")
            .x_label_formatter(&|v| match v {
                SegmentValue::CenterOf(s) | SegmentValue::Exact(s) => s.to_string(),
                SegmentValue::Last => String::new(),
            })
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 16))
            .draw()?;
        for (i, (l, v)) in labels.iter().zip(values).enumerate() {
            let v32: Vec<f32> = v.iter().map(|&x| x as f32).collect();
            let q = Quartiles::new(&v32);
            let (r, g, b) = COLOURS[i % COLOURS.len()];
            chart.draw_series(std::iter::once(
                Boxplot::new_vertical(SegmentValue::CenterOf(l), &q)
                    .width(30)
                    .style(RGBColor(r, g, b).stroke_width(2)),
            ))?;
            chart.draw_series(v.iter().map(|&x| {
                Circle::new(
                    (SegmentValue::CenterOf(l), x as f32),
                    3,
                    RGBColor(r, g, b).filled(),
                )
            }))?;
        }
        root.present()?;
        Ok(())
    }
}

fn best_plot(
    path: &Path,
    name: &str,
    labels: &[String],
    runs: &[&(SweepRun, SweepResult)],
) -> DrawResult {
    use plotters::prelude::*;
    let pts = runs.iter().flat_map(|(_, x)| x.best_so_far.iter());
    let (mut x1, mut lo, mut hi) = (1u64, f64::INFINITY, f64::NEG_INFINITY);
    for &(m, e) in pts {
        if e.is_finite() {
            x1 = x1.max(m);
            lo = lo.min(e);
            hi = hi.max(e);
        }
    }
    if !lo.is_finite() {
        (lo, hi) = (0.0, 1.0);
    }
    let pad = ((hi - lo) * 0.05).max(1e-6);
    let range = (x1 as f64, lo - pad, hi + pad);
    save(path, |svg, rgb| match (svg, rgb) {
        (Some(text), _) => best_plot_on(
            SVGBackend::with_string(text, SIZE).into_drawing_area(),
            name,
            labels,
            runs,
            range,
        ),
        (_, Some(px)) => best_plot_on(
            BitMapBackend::with_buffer(px, SIZE).into_drawing_area(),
            name,
            labels,
            runs,
            range,
        ),
        _ => Ok(()),
    })
}

fn best_plot_on<DB: plotters::prelude::DrawingBackend>(
    root: plotters::prelude::DrawingArea<DB, plotters::coord::Shift>,
    name: &str,
    labels: &[String],
    runs: &[&(SweepRun, SweepResult)],
    (x1, y0, y1): (f64, f64, f64),
) -> DrawResult
where
    DB::ErrorType: 'static,
{
    use plotters::prelude::*;
    {
        root.fill(&WHITE)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(format!("{name}: best energy so far"), ("sans-serif", 24))
            .margin(16)
            .x_label_area_size(40)
            .y_label_area_size(80)
            .build_cartesian_2d(0f64..x1, y0..y1)?;
        chart
            .configure_mesh()
            .x_desc("moves")
            .x_label_formatter(&|x| format!("{x:.0}"))
            .y_desc("best energy")
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 16))
            .draw()?;
        for (i, l) in labels.iter().enumerate() {
            let (r, g, b) = COLOURS[i % COLOURS.len()];
            let colour = RGBColor(r, g, b);
            let mut first = true;
            for (run, x) in runs.iter().map(|p| (&p.0, &p.1)) {
                if group_label(run) != *l {
                    continue;
                }
                let s = chart.draw_series(LineSeries::new(
                    x.best_so_far
                        .iter()
                        .filter(|(_, e)| e.is_finite())
                        .map(|&(m, e)| (m as f64, e)),
                    colour.stroke_width(1),
                ))?;
                if first {
                    s.label(l.as_str()).legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(3))
                    });
                    first = false;
                }
            }
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font(("sans-serif", 14))
            .position(SeriesLabelPosition::UpperRight)
            .draw()?;
        root.present()?;
        Ok(())
    }
}
