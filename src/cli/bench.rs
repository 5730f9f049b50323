//! `lehr bench`: speed and quality of placement on generated boards, and routing of the
//! placed sample boards. The targets and the figures measured on the reference machine
//! are in docs/performance.md.

use std::process::ExitCode;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

use anyhow::Result;
use clap::Args;
use serde_json::{Value, json};

use lehr_engine::model::{Board, Design, resolve};
use lehr_engine::place::{
    self, AnnealOptions, Annealer, Placed, Schedule, Start, baseline, generate, thread_count,
};
use lehr_engine::route::{RouteOptions, RouteResult};

use super::print::outln;

#[derive(Args, Debug)]
pub struct BenchArgs {
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
    /// Smaller, faster runs (for a smoke test; the figures are not the targets').
    #[arg(long)]
    pub quick: bool,
}

/// Prints a line unless the output is JSON.
struct Out {
    json: bool,
    map: serde_json::Map<String, Value>,
}

impl Out {
    fn say(&self, s: String) {
        if !self.json {
            outln!("{s}");
        }
    }

    fn put(&mut self, k: impl Into<String>, v: Value) {
        self.map.insert(k.into(), v);
    }
}

pub fn run(args: &BenchArgs) -> Result<ExitCode> {
    let mut out = Out {
        json: args.json,
        map: serde_json::Map::new(),
    };
    let threads = thread_count(0);
    out.put("threads", json!(threads));
    speed(args, &mut out)?;
    incremental(args, &mut out)?;
    known_optima(args, &mut out)?;
    against_baselines(args, &mut out)?;
    cores(args, &mut out)?;
    scale(args, &mut out)?;
    route_samples(args, &mut out)?;
    if args.json {
        outln!("{}", Value::Object(out.map));
    }
    Ok(ExitCode::SUCCESS)
}

fn design(b: Board) -> Result<Design> {
    resolve(b).map_err(problems)
}

/// Moves per second on one chain and one thread: an annealing run of a fixed budget on a
/// random board, with the adaptive schedule so the run covers the hot, middle and cold
/// phases in proportion; with the default moves and with plain moves only (no directed
/// moves, which cost a scan of the part's nets).
fn speed(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let budget: u64 = if args.quick { 300_000 } else { 6_000_000 };
    for n in [100u32, 1000, 10_000] {
        let d = design(generate::random_board(n, 7))?;
        for (key, directed) in [("", 0.3), ("_plain", 0.0)] {
            let opts = AnnealOptions {
                seed: 1,
                schedule: Schedule::LamDelosme,
                max_moves: Some(budget),
                directed_fraction: directed,
                ..AnnealOptions::default()
            };
            let mut an = Annealer::new(&d, opts)?;
            let t = Instant::now();
            an.run(|_| true);
            let secs = t.elapsed().as_secs_f64();
            let mps = an.moves() as f64 / secs;
            out.say(format!(
                "random board, {n:>5} parts{}: {mps:>10.0} moves/s ({} moves, {secs:.2} s, {:.0}% accepted)",
                if key.is_empty() { "" } else { ", plain moves" },
                an.moves(),
                100.0 * an.accepted() as f64 / an.moves().max(1) as f64
            ));
            out.put(format!("moves_per_second_{n}{key}"), json!(mps));
        }
    }
    Ok(())
}

/// Incremental against full recomputation, at 1,000 parts, on the same proposals.
fn incremental(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let d = design(generate::random_board(1000, 7))?;
    let opts = AnnealOptions {
        seed: 3,
        max_moves: Some(1_000_000),
        ..AnnealOptions::default()
    };
    let mut an = Annealer::new(&d, opts.clone())?;
    let k_inc = if args.quick { 20_000 } else { 400_000 };
    let t = Instant::now();
    let mut sink = 0.0;
    for _ in 0..k_inc {
        sink += an.probe(false);
    }
    let inc = t.elapsed().as_secs_f64() / f64::from(k_inc);
    let mut an = Annealer::new(&d, opts)?;
    let k_full = if args.quick { 200 } else { 2_000 };
    let t = Instant::now();
    for _ in 0..k_full {
        sink += an.probe(true);
    }
    let full = t.elapsed().as_secs_f64() / f64::from(k_full);
    std::hint::black_box(sink);
    let ratio = full / inc;
    out.say(format!(
        "1000 parts: incremental move {:.0} ns, full recomputation {:.0} ns: {ratio:.0} times faster",
        inc * 1e9,
        full * 1e9
    ));
    out.put("incremental_move_ns_1000", json!(inc * 1e9));
    out.put("full_recompute_ns_1000", json!(full * 1e9));
    out.put("incremental_speedup_1000", json!(ratio));
    Ok(())
}

/// A board's known optimum, from its record.
fn optimum(b: &Board) -> f64 {
    b.optimum.as_ref().map_or(f64::NAN, |o| o.wirelength_mm)
}

/// The median of a few values.
fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied().unwrap_or(f64::NAN)
}

/// Makes a board with a known optimum from a seed.
type Make = Box<dyn Fn(u64) -> Board>;

/// The boards [`known_optima`] places, by name.
fn optima_boards(quick: bool) -> Vec<(&'static str, Make)> {
    let peko = |rows, cols, slack, s| {
        generate::peko_board(&generate::PekoSpec {
            slack,
            ..generate::PekoSpec::new(rows, cols, s)
        })
    };
    if quick {
        vec![
            ("peko144", Box::new(move |s| peko(12, 12, 1.0, s))),
            (
                "grid_aspect4",
                Box::new(|s| generate::grid_rect_board(5, 20, 2.54, 1.0, s)),
            ),
        ]
    } else {
        vec![
            ("peko625", Box::new(move |s| peko(25, 25, 1.0, s))),
            ("peko144", Box::new(move |s| peko(12, 12, 1.0, s))),
            ("peko625_slack", Box::new(move |s| peko(25, 25, 1.5, s))),
            (
                "grid_aspect1",
                Box::new(|s| generate::grid_rect_board(30, 30, 2.54, 1.0, s)),
            ),
            (
                "grid_aspect2",
                Box::new(|s| generate::grid_rect_board(20, 45, 2.54, 1.0, s)),
            ),
            (
                "grid_aspect4",
                Box::new(|s| generate::grid_rect_board(15, 60, 2.54, 1.0, s)),
            ),
        ]
    }
}

/// Default `lehr place` on boards with a known optimum: the multi-pin boards (filled,
/// and with half as much room again) and grids from square to four times as long as
/// wide. Each board is generated with seed s and placed with seed s, s = 1, 2, 3 (one
/// seed with `--quick`, on smaller boards).
fn known_optima(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let seeds: &[u64] = if args.quick { &[1] } else { &[1, 2, 3] };
    for (name, make) in optima_boards(args.quick) {
        let (mut ratios, mut secs) = (Vec::new(), Vec::new());
        let mut legal = true;
        for &s in seeds {
            let b = make(s);
            let opt = optimum(&b);
            let d = design(b)?;
            let p = place::place(
                &d,
                &AnnealOptions {
                    seed: s,
                    ..AnnealOptions::default()
                },
                |_| true,
            )?;
            let r = p.report.wirelength_mm / opt;
            out.say(format!(
                "{name}, seed {s}: {:.1} mm, optimum {opt:.1} mm, ratio {r:.4}, legal {}, {:.1} s, {} moves, kept the {} start",
                p.report.wirelength_mm, p.report.legal, p.report.seconds, p.report.moves, p.report.start
            ));
            ratios.push(r);
            secs.push(p.report.seconds);
            legal &= p.report.legal;
        }
        let worst = ratios.iter().copied().fold(0.0, f64::max);
        out.put(format!("{name}_ratio"), json!(median(ratios.clone())));
        out.put(format!("{name}_ratio_worst"), json!(worst));
        out.put(format!("{name}_seconds"), json!(median(secs.clone())));
        out.put(
            format!("{name}_seconds_worst"),
            json!(secs.iter().copied().fold(0.0, f64::max)),
        );
        out.put(format!("{name}_legal"), json!(legal));
    }
    Ok(())
}

/// Annealing against descent (same start, the given scatter, and the same budget), and
/// against a plain slot-swap annealer ([`baseline::plain_swap`], same start, same number
/// of moves), on the filled 625-part multi-pin board of seed 1.
fn against_baselines(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let (rows, budget) = if args.quick {
        (12, 2_000_000)
    } else {
        (25, 40_000_000)
    };
    let b = generate::peko_board(&generate::PekoSpec::new(rows, rows, 1));
    let opt = optimum(&b);
    let d = design(b)?;
    let key = if args.quick { "peko144" } else { "peko625" };
    let given = AnnealOptions {
        seed: 1,
        start: Start::Given,
        max_moves: Some(budget),
        replicas: 1,
        ..AnnealOptions::default()
    };
    let anneal = place::place(&d, &given, |_| true)?;
    let descent = place::place(
        &d,
        &AnnealOptions {
            schedule: Schedule::Descent,
            ..given.clone()
        },
        |_| true,
    )?;
    let q = anneal.report.wirelength_mm / descent.report.wirelength_mm;
    out.say(format!(
        "{key}, given start, {budget} moves each: annealing ratio {:.4}, descent ratio {:.4}; annealing/descent {q:.3}",
        anneal.report.wirelength_mm / opt,
        descent.report.wirelength_mm / opt
    ));
    out.put(format!("{key}_anneal_over_descent"), json!(q));
    out.put(
        format!("{key}_descent_ratio"),
        json!(descent.report.wirelength_mm / opt),
    );
    let t = Instant::now();
    let plain = baseline::plain_swap(&d, 1, anneal.report.moves)
        .ok_or_else(|| anyhow::anyhow!("the plain annealer has nothing to move"))?;
    let plain_secs = t.elapsed().as_secs_f64();
    // Compared before the legal finish (the plain annealer has none; on a full board of
    // equal parts every swap is legal).
    let ours = anneal.report.annealed_wirelength_mm;
    let over = ours / plain.wirelength_mm;
    out.say(format!(
        "{key}, given start, {} moves each: lehr's annealer {:.4}, plain slot-swap annealer {:.4} ({plain_secs:.1} s); lehr/plain {over:.3}",
        anneal.report.moves,
        ours / opt,
        plain.wirelength_mm / opt
    ));
    out.put(format!("{key}_over_plain_swap"), json!(over));
    out.put(
        format!("{key}_plain_swap_ratio"),
        json!(plain.wirelength_mm / opt),
    );
    Ok(())
}

/// The same run (multi-pin board, both starts, the default chains, a fixed budget) on one
/// thread, two, and all cores: the time each takes and that the result is the same.
fn cores(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let (rows, budget) = if args.quick {
        (12, 2_000_000)
    } else {
        (25, 40_000_000)
    };
    let d = design(generate::peko_board(&generate::PekoSpec::new(
        rows, rows, 4,
    )))?;
    let all = thread_count(0);
    let mut counts = vec![1usize, 2, all];
    counts.dedup();
    let mut first: Option<(f64, Placed)> = None;
    for &t in &counts {
        let p = place::place(
            &d,
            &AnnealOptions {
                seed: 4,
                max_moves: Some(budget),
                threads: t,
                ..AnnealOptions::default()
            },
            |_| true,
        )?;
        let secs = p.report.seconds;
        let (speedup, same) = match &first {
            Some((s1, p1)) => (s1 / secs, p1.board == p.board),
            None => (1.0, true),
        };
        out.say(format!(
            "{budget} moves on {t} thread(s): {secs:.2} s, speed-up {speedup:.2}, same placement as one thread: {same}"
        ));
        if !same {
            anyhow::bail!("the placement on {t} threads differs from one thread's");
        }
        out.put(format!("seconds_threads_{t}"), json!(secs));
        if t == all {
            out.put("speedup_all_cores", json!(speedup));
        }
        if t == 2 {
            out.put("speedup_2_cores", json!(speedup));
        }
        if first.is_none() {
            first = Some((secs, p));
        }
    }
    Ok(())
}

/// Large boards: 2,000 parts with a budget of 100,000 moves (the legal finish does most
/// of the work), and 10,000 parts at the default settings.
fn scale(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let d = design(generate::random_board(2000, 5))?;
    let p = place::place(
        &d,
        &AnnealOptions {
            max_moves: Some(100_000),
            ..AnnealOptions::default()
        },
        |_| true,
    )?;
    out.say(format!(
        "2000 parts, 100,000 moves: {:.2} s, legal {}, {} conflicts",
        p.report.seconds,
        p.report.legal,
        p.report.conflicts.len()
    ));
    out.put("place2000_capped_seconds", json!(p.report.seconds));
    out.put("place2000_capped_legal", json!(p.report.legal));
    if args.quick {
        return Ok(());
    }
    let d = design(generate::random_board(10_000, 5))?;
    let p = place::place(&d, &AnnealOptions::default(), |_| true)?;
    out.say(format!(
        "10000 parts, default settings: {:.1} s, {} moves, legal {}, {:.0} mm",
        p.report.seconds, p.report.moves, p.report.legal, p.report.wirelength_mm
    ));
    out.put("place10000_seconds", json!(p.report.seconds));
    out.put("place10000_legal", json!(p.report.legal));
    Ok(())
}

/// The sample boards, built in so the bench runs from any directory.
const ROUTE_SAMPLES: [(&str, &str); 4] = [
    (
        "led_dimmer",
        include_str!("../../sample-boards/led-dimmer.board.ron"),
    ),
    (
        "soil_logger",
        include_str!("../../sample-boards/soil-logger.board.ron"),
    ),
    (
        "signal_driver",
        include_str!("../../sample-boards/signal-driver.board.ron"),
    ),
    (
        "audio_preamp",
        include_str!("../../sample-boards/audio-preamp.board.ron"),
    ),
];

/// Routing: each sample board placed by `lehr place` (default settings, seeds 1 to 3; seed
/// 1 only with `--quick`), then routed with the default options and checked. Per board:
/// `route_<board>_seconds` (the slowest seed), `route_<board>_routed_fraction` (the worst
/// seed), `route_<board>_violations` (the most, every kind), `route_<board>_vias_per_net`
/// and `route_<board>_track_over_mst` (the worst seed; see
/// [`RouteResult::track_over_mst`]), `route_<board>_seeds`, and
/// the placement's wirelength and time (`place_<board>_mm`, `place_<board>_seconds`,
/// seed 1).
fn route_samples(args: &BenchArgs, out: &mut Out) -> Result<()> {
    let seeds: &[u64] = if args.quick { &[1] } else { &[1, 2, 3] };
    for (name, source) in ROUTE_SAMPLES {
        let design = lehr_engine::io::parse_board(source, name)?;
        let (mut worst_seconds, mut worst_fraction, mut most_violations) = (0.0f64, 1.0f64, 0);
        let (mut most_vias_per_net, mut worst_track_over_mst) = (0.0f64, 0.0f64);
        for &seed in seeds {
            let placed = place::place(
                &design,
                &AnnealOptions {
                    seed,
                    ..AnnealOptions::default()
                },
                |_| true,
            )?;
            if seed == 1 {
                out.put(
                    format!("place_{name}_mm"),
                    json!(placed.report.wirelength_mm),
                );
                out.put(
                    format!("place_{name}_seconds"),
                    json!(placed.report.seconds),
                );
            }
            let (r, violations) = route_and_check(placed.board)?;
            if !args.json {
                outln!(
                    "route {name}, seed {seed}: {} of {} nets, {} vias ({:.2} per net), {:.0} mm \
                     ({:.2} x spanning tree), {} passes, {:.2} s, {violations} violations",
                    r.routed,
                    r.nets,
                    r.vias,
                    r.vias_per_net,
                    r.track_length_mm,
                    r.track_over_mst,
                    r.passes,
                    r.seconds
                );
                for u in &r.unrouted {
                    outln!("    not routed: {}: {}", u.net, u.why);
                }
            }
            worst_seconds = worst_seconds.max(r.seconds);
            worst_fraction = worst_fraction.min(r.routed as f64 / r.nets.max(1) as f64);
            most_violations = most_violations.max(violations);
            most_vias_per_net = most_vias_per_net.max(r.vias_per_net);
            worst_track_over_mst = worst_track_over_mst.max(r.track_over_mst);
        }
        out.put(format!("route_{name}_seconds"), json!(worst_seconds));
        out.put(
            format!("route_{name}_routed_fraction"),
            json!(worst_fraction),
        );
        out.put(format!("route_{name}_violations"), json!(most_violations));
        out.put(
            format!("route_{name}_vias_per_net"),
            json!(most_vias_per_net),
        );
        out.put(
            format!("route_{name}_track_over_mst"),
            json!(worst_track_over_mst),
        );
        out.put(format!("route_{name}_seeds"), json!(seeds));
    }
    Ok(())
}

/// Routes a placed board with the default options and checks the result: the router's
/// result and the number of broken rules.
fn route_and_check(placed: Board) -> Result<(RouteResult, usize)> {
    let placed = resolve(placed).map_err(problems)?;
    let cancel = AtomicBool::new(false);
    let r = lehr_engine::route::route(&placed, &RouteOptions::default(), &cancel, &mut |_| {})?;
    let mut board = placed.board.clone();
    board.copper = r.copper.clone();
    let routed = resolve(board).map_err(problems)?;
    Ok((r, lehr_engine::rules::check(&routed).len()))
}

fn problems(ps: Vec<lehr_engine::model::Problem>) -> anyhow::Error {
    anyhow::anyhow!(
        "generated board failed its checks: {}",
        lehr_engine::model::problems_line(&ps)
    )
}
