//! `lehr open BOARD --measure S --frames`: the window's frame without a window. Runs the
//! real app in an egui context at a fixed frame interval while the engine anneals, and
//! times lehr's own frame code and egui's tessellation (what a renderer is then handed)
//! separately, with the vertex counts. The OpenGL part of a frame is not in it.

use std::path::Path;
use std::time::{Duration, Instant};

use anyhow::Result;

use super::{Action, LehrApp, Settings, median, percentile};

pub fn measure_frames(board: Option<&Path>, seconds: f64, interval_ms: Option<u64>) -> Result<()> {
    let mut settings = Settings::default();
    settings.controls.speed = 20_000;
    let mut app = match board {
        Some(p) => LehrApp::new(
            lehr_engine::io::load_board(p)?,
            Some(p.to_path_buf()),
            super::files::short_name(p),
            settings,
        ),
        None => LehrApp::sample(settings)?,
    };
    let interval = Duration::from_millis(interval_ms.unwrap_or(100));
    let ctx = egui::Context::default();
    let input = || egui::RawInput {
        screen_rect: Some(egui::Rect::from_min_size(
            egui::Pos2::ZERO,
            egui::vec2(1280.0, 800.0),
        )),
        ..Default::default()
    };
    // Two frames to lay out, then run.
    for _ in 0..2 {
        // No renderer takes the textures: drop them on purpose (epaint checks in debug
        // builds that no texture change is lost).
        ctx.run_ui(input(), |ui| app.show(ui))
            .textures_delta
            .clear();
    }
    app.push(Action::Run);
    let (mut ui_ms, mut tess_ms, mut verts, mut canvas_verts) =
        (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let start = Instant::now();
    let mut next = Instant::now();
    while start.elapsed().as_secs_f64() < seconds {
        let t0 = Instant::now();
        let mut out = ctx.run_ui(input(), |ui| app.show(ui));
        let t1 = Instant::now();
        out.textures_delta.clear();
        let prims = ctx.tessellate(out.shapes, out.pixels_per_point);
        let t2 = Instant::now();
        let mut total = 0;
        let mut largest = 0;
        for p in &prims {
            if let egui::epaint::Primitive::Mesh(m) = &p.primitive {
                total += m.vertices.len();
                largest = largest.max(m.vertices.len());
            }
        }
        ui_ms.push((t1 - t0).as_secs_f64() * 1e3);
        tess_ms.push((t2 - t1).as_secs_f64() * 1e3);
        verts.push(total as f64);
        canvas_verts.push(largest as f64);
        if app.snapshot().is_some_and(|s| s.done && s.moves > 0) {
            break;
        }
        next += interval;
        if let Some(wait) = next.checked_duration_since(Instant::now()) {
            std::thread::sleep(wait);
        }
    }
    let s = app.snapshot();
    let sum: Vec<f64> = ui_ms.iter().zip(&tess_ms).map(|(a, b)| a + b).collect();
    let report = serde_json::json!({
        "parts": app.design().board.parts.len(),
        "seconds": start.elapsed().as_secs_f64(),
        "frames": ui_ms.len(),
        "interval_ms": interval.as_secs_f64() * 1e3,
        "ui_median_ms": median(ui_ms.clone()),
        "ui_p90_ms": percentile(&ui_ms, 0.9),
        "tessellate_median_ms": median(tess_ms.clone()),
        "tessellate_p90_ms": percentile(&tess_ms, 0.9),
        "ui_plus_tessellate_median_ms": median(sum.clone()),
        "vertices_median": median(verts),
        "largest_mesh_vertices_median": median(canvas_verts),
        "moves": s.map(|s| s.moves),
        "done": s.map(|s| s.done),
    });
    println!("{report}");
    Ok(())
}
