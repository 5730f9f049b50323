//! `lehr bench`: speed and quality of placement on generated boards. The targets and the
//! figures measured on the reference machine are in docs/performance.md.

use std::process::ExitCode;
use std::time::Instant;

use anyhow::Result;
use serde_json::{Value, json};

use lehr::model::resolve;
use lehr::place::{self, AnnealOptions, Annealer, Schedule, generate};

use crate::cli::BenchArgs;

pub fn run(args: &BenchArgs) -> Result<ExitCode> {
    let mut out = serde_json::Map::new();
    let say = |s: String| {
        if !args.json {
            println!("{s}");
        }
    };
    let budget: u64 = if args.quick { 300_000 } else { 6_000_000 };

    // Moves per second: an annealing run of a fixed budget on a random board, with the
    // adaptive schedule so the run covers the hot, middle and cold phases in proportion.
    for n in [100u32, 1000, 10_000] {
        let design = resolve(generate::random_board(n, 7)).map_err(problems)?;
        let nf = f64::from(n);
        let opts = AnnealOptions {
            seed: 1,
            schedule: Schedule::LamDelosme { target: 0.44 },
            max_moves: Some(budget),
            // At least 50 stages within the budget.
            effort: (budget as f64 / (50.0 * nf.powf(4.0 / 3.0))).min(10.0),
            ..AnnealOptions::default()
        };
        let mut an = Annealer::new(&design, opts)?;
        let t = Instant::now();
        an.run(|_| true);
        let secs = t.elapsed().as_secs_f64();
        let mps = an.moves() as f64 / secs;
        say(format!(
            "random board, {n:>5} parts: {:>10.0} moves/s ({} moves, {:.2} s, {:.0}% accepted)",
            mps,
            an.moves(),
            secs,
            100.0 * an.accepted() as f64 / an.moves().max(1) as f64
        ));
        out.insert(format!("moves_per_second_{n}"), json!(mps));
    }

    // Incremental against full recomputation, at 1,000 parts, on the same proposals.
    {
        let design = resolve(generate::random_board(1000, 7)).map_err(problems)?;
        let opts = AnnealOptions {
            seed: 3,
            ..AnnealOptions::default()
        };
        let mut an = Annealer::new(&design, opts.clone())?;
        let k_inc = if args.quick { 20_000 } else { 400_000 };
        let t = Instant::now();
        let mut sink = 0.0;
        for _ in 0..k_inc {
            sink += an.probe(false);
        }
        let inc = t.elapsed().as_secs_f64() / f64::from(k_inc);
        let mut an = Annealer::new(&design, opts)?;
        let k_full = if args.quick { 200 } else { 2_000 };
        let t = Instant::now();
        for _ in 0..k_full {
            sink += an.probe(true);
        }
        let full = t.elapsed().as_secs_f64() / f64::from(k_full);
        std::hint::black_box(sink);
        let ratio = full / inc;
        say(format!(
            "1000 parts: incremental move {:.0} ns, full recomputation {:.0} ns: {ratio:.0} times faster",
            inc * 1e9,
            full * 1e9
        ));
        out.insert("incremental_move_ns_1000".into(), json!(inc * 1e9));
        out.insert("full_recompute_ns_1000".into(), json!(full * 1e9));
        out.insert("incremental_speedup_1000".into(), json!(ratio));
    }

    // Grid instances with a known optimum; annealing against descent on the same budget.
    // N = 10 with Lundy-Mees (long enough near the ordering temperature for sheared rows
    // to straighten); N = 30 with the default geometric schedule at effort 10, which
    // fits the time target (see docs/performance.md for both schedules at both sizes).
    let runs: Vec<(u32, Schedule, f64)> = if args.quick {
        vec![
            (6, Schedule::LundyMees { beta: 0.05 }, 4.0),
            (10, Schedule::default(), 2.0),
        ]
    } else {
        vec![
            (10, Schedule::LundyMees { beta: 0.05 }, 10.0),
            (30, Schedule::default(), 10.0),
        ]
    };
    let last = runs.last().map(|r| r.0);
    for (n, schedule, effort) in runs {
        let pitch = 2.54;
        let design = resolve(generate::grid_board(n, pitch, 11)).map_err(problems)?;
        let opt = generate::grid_optimum(n, pitch);
        let opts = AnnealOptions {
            seed: 1,
            schedule,
            effort,
            ..AnnealOptions::default()
        };
        let placed = place::place(&design, &opts, |_| true)?;
        let r = &placed.report;
        let ratio = r.wirelength_mm / opt;
        say(format!(
            "grid {n}x{n} ({}, effort {effort}): wirelength {:.2} mm, optimum {opt:.2} mm, ratio {ratio:.4}, legal {}, {:.2} s, {} moves",
            schedule.name(),
            r.wirelength_mm,
            r.legal,
            r.seconds,
            r.moves
        ));
        out.insert(format!("grid{n}_ratio"), json!(ratio));
        out.insert(format!("grid{n}_seconds"), json!(r.seconds));
        out.insert(format!("grid{n}_legal"), json!(r.legal));
        out.insert(format!("grid{n}_schedule"), json!(schedule.name()));
        if Some(n) == last {
            // The same instance, clusters first (`--multilevel`).
            let ml = AnnealOptions {
                multilevel: true,
                ..opts.clone()
            };
            let m = place::place(&design, &ml, |_| true)?;
            let mr = m.report.wirelength_mm / opt;
            say(format!(
                "grid {n}x{n} multilevel ({}, effort {effort}): ratio {mr:.4}, legal {}, {:.2} s, {} moves",
                schedule.name(),
                m.report.legal,
                m.report.seconds,
                m.report.moves
            ));
            out.insert(format!("grid{n}_multilevel_ratio"), json!(mr));
            out.insert(
                format!("grid{n}_multilevel_seconds"),
                json!(m.report.seconds),
            );
            let descent = AnnealOptions {
                schedule: Schedule::Descent,
                max_moves: Some(r.moves),
                // The whole budget: no early stop when frozen.
                frozen_stages: u32::MAX,
                ..opts
            };
            let d = place::place(&design, &descent, |_| true)?;
            let q = r.wirelength_mm / d.report.wirelength_mm;
            say(format!(
                "grid {n}x{n}, same budget ({} moves): descent wirelength {:.2} mm (ratio {:.3}); annealing/descent {q:.3}",
                r.moves,
                d.report.wirelength_mm,
                d.report.wirelength_mm / opt
            ));
            out.insert(
                format!("descent_grid{n}_ratio"),
                json!(d.report.wirelength_mm / opt),
            );
            out.insert(format!("anneal_over_descent_grid{n}"), json!(q));
        }
    }
    if args.json {
        println!("{}", Value::Object(out));
    }
    Ok(ExitCode::SUCCESS)
}

fn problems(ps: Vec<lehr::model::Problem>) -> anyhow::Error {
    anyhow::anyhow!(
        "generated board failed its checks: {}",
        ps.iter()
            .map(|p| p.to_string())
            .collect::<Vec<_>>()
            .join("; ")
    )
}
