//! Grid-instance quality for schedule tuning:
//! `cargo run --release --example grid_quality -- N EFFORT SCHEDULE [PARAM] [MAX_MOVES] [SEEDS] [BLOCK]`
//! prints achieved/optimal wirelength, seconds and moves for each seed.
use lehr::model::resolve;
use lehr::place::{self, AnnealOptions, Schedule, generate};

fn main() {
    let a: Vec<String> = std::env::args().collect();
    let n: u32 = a[1].parse().expect("N");
    let effort: f64 = a[2].parse().expect("effort");
    let mut sched: Schedule = a[3].parse().expect("schedule");
    if let Some(x) = a.get(4).and_then(|x| x.parse::<f64>().ok()) {
        sched = match sched {
            Schedule::Geometric { .. } => Schedule::Geometric { alpha: x },
            Schedule::LundyMees { .. } => Schedule::LundyMees { beta: x },
            Schedule::Huang { .. } => Schedule::Huang { lambda: x },
            s => s,
        };
    }
    let budget: Option<u64> = a.get(5).and_then(|x| x.parse().ok()).filter(|&m| m > 0);
    let seeds: u64 = a.get(6).and_then(|x| x.parse().ok()).unwrap_or(4);
    let block: f64 = a
        .get(7)
        .and_then(|x| x.parse().ok())
        .unwrap_or(AnnealOptions::default().block_fraction);
    let d = resolve(generate::grid_board(n, 2.54, 11)).expect("valid board");
    let opt = generate::grid_optimum(n, 2.54);
    for seed in 1..=seeds {
        let o = AnnealOptions {
            effort,
            seed,
            schedule: sched,
            max_moves: budget,
            block_fraction: block,
            ..Default::default()
        };
        let p = place::place(&d, &o, |_| true).expect("placement runs");
        println!(
            "seed {seed}: ratio {:.4}  {:.1} s  {} moves  legal {}",
            p.report.wirelength_mm / opt,
            p.report.seconds,
            p.report.moves,
            p.report.legal
        );
    }
}
