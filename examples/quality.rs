//! Placement quality on boards with a known optimum, for tuning the annealer:
//!
//!     cargo run --release --example quality -- INSTANCE[,INSTANCE..] SEEDS [key=value ..]
//!
//! INSTANCE: `peko:RxC[:slack][:gseed]`, `grid:RxC[:slack][:gseed]`; SEEDS: `1-3` or `5`.
//! key=value pairs set `AnnealOptions` fields (JSON values: `schedule={"Geometric":{"alpha":0.9}}`,
//! `max_moves=1000000`); `descent=1` and `plain=1` also run descent and the plain swap
//! annealer from the same start with the same number of moves.
use lehr_engine::model::resolve;
use lehr_engine::place::{self, AnnealOptions, Schedule, Start, baseline, generate};
use serde_json::Value;

fn instance(spec: &str) -> (String, lehr_engine::model::Board) {
    let f: Vec<&str> = spec.split(':').collect();
    let (r, c) = f[1].split_once('x').expect("RxC");
    let (r, c): (u32, u32) = (r.parse().unwrap(), c.parse().unwrap());
    let slack: f64 = f.get(2).map_or(1.0, |s| s.parse().unwrap());
    let gseed: u64 = f.get(3).map_or(1, |s| s.parse().unwrap());
    let b = match f[0] {
        "peko" => generate::peko_board(&generate::PekoSpec {
            slack,
            ..generate::PekoSpec::new(r, c, gseed)
        }),
        "grid" => generate::grid_rect_board(r, c, 2.54, slack, gseed),
        k => panic!("unknown instance kind {k}"),
    };
    (spec.to_string(), b)
}

fn main() {
    let a: Vec<String> = std::env::args().collect();
    let insts: Vec<&str> = a[1].split(',').collect();
    let seeds: Vec<u64> = match a[2].split_once('-') {
        Some((x, y)) => (x.parse().unwrap()..=y.parse().unwrap()).collect(),
        None => vec![a[2].parse().unwrap()],
    };
    let mut opts = serde_json::to_value(AnnealOptions::default()).unwrap();
    let (mut descent, mut plain, mut start_only) = (false, false, false);
    for kv in &a[3..] {
        let (k, v) = kv.split_once('=').expect("key=value");
        match k {
            "descent" => descent = v == "1",
            "plain" => plain = v == "1",
            "startonly" => start_only = v == "1",
            _ => {
                let v: Value = serde_json::from_str(v).unwrap_or(Value::String(v.into()));
                opts[k] = v;
            }
        }
    }
    let base: AnnealOptions = serde_json::from_value(opts).expect("options");
    for spec in insts {
        let (name, board) = instance(spec);
        let opt = board.optimum.as_ref().unwrap().wirelength_mm;
        let d = resolve(board).expect("valid board");
        let mut ratios = Vec::new();
        if start_only {
            let t = std::time::Instant::now();
            let at = lehr_engine::place::spectral::start_positions(&d);
            let mut cells: Vec<(i64, i64)> = at
                .iter()
                .map(|p| ((p.x / 2.54).round() as i64, (p.y / 2.54).round() as i64))
                .collect();
            cells.sort();
            let before = cells.len();
            cells.dedup();
            if std::env::var("QDBG").is_ok() {
                eprintln!(
                    "distinct {} of {before}; x range {:?}",
                    cells.len(),
                    (
                        cells.iter().map(|c| c.0).min(),
                        cells.iter().map(|c| c.0).max(),
                        cells.iter().map(|c| c.1).min(),
                        cells.iter().map(|c| c.1).max()
                    )
                );
            }
            let mut b = d.board.clone();
            for (p, a) in b.parts.iter_mut().zip(at) {
                p.at = Some(a);
            }
            let dd = resolve(b).unwrap();
            let l = lehr_engine::place::Layout::new(&dd).unwrap();
            println!(
                "{name}: start {:.4} overlap {:.3} in {:.2} s",
                l.wirelength_mm() / opt,
                l.terms().overlap,
                t.elapsed().as_secs_f64()
            );
            continue;
        }
        for &seed in &seeds {
            let o = AnnealOptions {
                seed,
                ..base.clone()
            };
            let p = place::place(&d, &o, |_| true).expect("placement runs");
            let r = p.report.wirelength_mm / opt;
            if let Ok(path) = std::env::var("QOUT") {
                let _ = lehr_engine::io::save_board(
                    std::path::Path::new(&format!("{path}.{seed}.board.ron")),
                    &p.board,
                );
            }
            if let Ok(path) = std::env::var("QLOG") {
                let _ = std::fs::write(
                    format!("{path}.{seed}.csv"),
                    lehr_engine::fab::runlog::run_log(&p.history),
                );
            }
            ratios.push(r);
            let mut line = format!(
                "{name} seed {seed}: ratio {r:.4} ann {:.4} {:.1} s {} moves legal {} start {} rep {} swaps {}/{} ladder {:.4}",
                p.report.annealed_wirelength_mm / opt,
                p.report.seconds,
                p.report.moves,
                p.report.legal,
                p.report.start,
                p.report.replicas,
                p.report.exchanges_taken,
                p.report.exchanges_tried,
                p.report.ladder
            );
            if descent {
                let od = AnnealOptions {
                    seed,
                    schedule: Schedule::Descent,
                    max_moves: Some(p.report.moves),
                    start: Start::Given,
                    ..base.clone()
                };
                let pd = place::place(&d, &od, |_| true).expect("descent runs");
                line += &format!(
                    " | descent {:.4} ({} moves)",
                    pd.report.wirelength_mm / opt,
                    pd.report.moves
                );
            }
            if plain {
                let t = std::time::Instant::now();
                let b = baseline::plain_swap(&d, seed, p.report.moves).expect("baseline runs");
                line += &format!(
                    " | plain {:.4} ({:.1} s)",
                    b.wirelength_mm / opt,
                    t.elapsed().as_secs_f64()
                );
            }
            println!("{line}");
        }
        ratios.sort_by(f64::total_cmp);
        println!(
            "{name}: median {:.4} mean {:.4}",
            ratios[ratios.len() / 2],
            ratios.iter().sum::<f64>() / ratios.len() as f64
        );
    }
}
