use lehr::model::resolve;
use lehr::place::{self, AnnealOptions, generate, Schedule};
fn main() {
    let a: Vec<String> = std::env::args().collect();
    let n: u32 = a[1].parse().unwrap();
    let effort: f64 = a[2].parse().unwrap();
    let sched: Schedule = a[3].parse().unwrap();
    let sched = match (sched, a.get(4)) { (Schedule::Geometric{..}, Some(x)) => Schedule::Geometric{alpha: x.parse().unwrap()}, (s, _) => s };
    let budget: Option<u64> = a.get(5).map(|x| x.parse().unwrap());
    let d = resolve(generate::grid_board(n, 2.54, 11)).unwrap();
    let mut line = String::new();
    for seed in 1..=4 {
        let o = AnnealOptions { effort, seed, schedule: sched, max_moves: budget, ..Default::default() };
        let p = place::place(&d, &o, |_| true).unwrap();
        line += &format!("{:.3} ({:.1}s {}M) ", p.report.wirelength_mm / generate::grid_optimum(n, 2.54), p.report.seconds, p.report.moves / 1_000_000);
    }
    println!("{line}");
}
