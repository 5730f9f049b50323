use lehr::model::resolve;
use lehr::place::{self, AnnealOptions, Schedule, generate};
fn main() {
    let a: Vec<String> = std::env::args().collect();
    let n: u32 = a[1].parse().unwrap();
    let effort: f64 = a[2].parse().unwrap();
    let sched: Schedule = a[3].parse().unwrap();
    let sched = match (sched, a.get(4)) {
        (Schedule::Geometric { .. }, Some(x)) => Schedule::Geometric {
            alpha: x.parse().unwrap(),
        },
        (s, _) => s,
    };
    let budget: Option<u64> = a.get(5).map(|x| x.parse().unwrap());
    let d = resolve(generate::grid_board(n, 2.54, 11)).unwrap();
    let mut line = String::new();
    for seed in 1..=std::env::var("SEEDS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(4)
    {
        let o = AnnealOptions {
            effort,
            seed,
            schedule: sched,
            max_moves: budget,
            ..Default::default()
        };
        let p = place::place(&d, &o, |r| {
            if std::env::var("TRACE").is_ok() && r.stage % 10 == 0 {
                println!(
                    "{} T {:.3} E {:.1} wl {:.1} ov {:.2} acc {:.3} w {:.1} moves {}",
                    r.stage,
                    r.temperature,
                    r.energy,
                    r.terms.wirelength,
                    r.terms.overlap,
                    r.acceptance,
                    r.window,
                    r.moves
                );
            }
            true
        })
        .unwrap();
        line += &format!(
            "{:.3} ({:.1}s {}M) ",
            p.report.wirelength_mm / generate::grid_optimum(n, 2.54),
            p.report.seconds,
            p.report.moves / 1_000_000
        );
    }
    println!("{line}");
}
