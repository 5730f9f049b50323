use lehr_engine::model::resolve;
use lehr_engine::place::{AnnealOptions, Annealer, Schedule, generate};
fn main() {
    let n: u32 = std::env::args().nth(1).unwrap().parse().unwrap();
    let moves: u64 = std::env::args().nth(2).unwrap().parse().unwrap();
    let d = resolve(generate::random_board(n, 7)).unwrap();
    let o = AnnealOptions {
        schedule: std::env::args()
            .nth(3)
            .map(|s| s.parse().unwrap())
            .unwrap_or(Schedule::LamDelosme),
        max_moves: Some(moves),
        // PERF_DIRECTED=0 for plain moves only.
        directed_fraction: std::env::var("PERF_DIRECTED")
            .ok()
            .and_then(|v| v.parse().ok())
            .unwrap_or(AnnealOptions::default().directed_fraction),
        ..Default::default()
    };
    let mut a = Annealer::new(&d, o).unwrap();
    // PERF_HINTS=on|off forces the annealer's cache hints (A/B measurements).
    match std::env::var("PERF_HINTS").as_deref() {
        Ok("on") => a.layout_mut().set_hints(true),
        Ok("off") => a.layout_mut().set_hints(false),
        _ => {}
    }
    let t = std::time::Instant::now();
    a.run(|_| true);
    println!(
        "{} moves {:.0}/s acc {:.2}",
        a.moves(),
        a.moves() as f64 / t.elapsed().as_secs_f64(),
        a.accepted() as f64 / a.moves() as f64
    );
}
