//! Draws lehr's application icon, assets/icon.png: a board-green tile with a falling
//! temperature curve in kiln orange over a few gold pads settling into rows.
//!
//!     cargo run --example icon -- assets/icon.png

use tiny_skia::{
    Color, FillRule, GradientStop, LineCap, LinearGradient, Paint, PathBuilder, Pixmap, Point,
    Rect, SpreadMode, Stroke, Transform,
};

fn main() {
    let out = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "assets/icon.png".into());
    let size = 256.0_f32;
    let mut pm = Pixmap::new(size as u32, size as u32).expect("non-zero size");

    // Rounded tile.
    let r = 44.0;
    let (x0, y0, x1, y1) = (8.0, 8.0, size - 8.0, size - 8.0);
    let mut pb = PathBuilder::new();
    pb.move_to(x0 + r, y0);
    pb.line_to(x1 - r, y0);
    pb.quad_to(x1, y0, x1, y0 + r);
    pb.line_to(x1, y1 - r);
    pb.quad_to(x1, y1, x1 - r, y1);
    pb.line_to(x0 + r, y1);
    pb.quad_to(x0, y1, x0, y1 - r);
    pb.line_to(x0, y0 + r);
    pb.quad_to(x0, y0, x0 + r, y0);
    pb.close();
    let tile = pb.finish().expect("closed path");
    let mut paint = Paint {
        anti_alias: true,
        ..Paint::default()
    };
    paint.shader = LinearGradient::new(
        Point::from_xy(0.0, 0.0),
        Point::from_xy(0.0, size),
        vec![
            GradientStop::new(0.0, Color::from_rgba8(0x24, 0x3c, 0x30, 255)),
            GradientStop::new(1.0, Color::from_rgba8(0x14, 0x24, 0x1c, 255)),
        ],
        SpreadMode::Pad,
        Transform::identity(),
    )
    .expect("two stops");
    pm.fill_path(
        &tile,
        &paint,
        FillRule::Winding,
        Transform::identity(),
        None,
    );

    // Pads: a loose scatter at the top left tightening into neat rows at the bottom right.
    let mut gold = Paint {
        anti_alias: true,
        ..Paint::default()
    };
    gold.set_color_rgba8(0xd8, 0xa6, 0x48, 255);
    let pads = [
        (46.0, 58.0),
        (92.0, 40.0),
        (70.0, 98.0),
        (120.0, 150.0),
        (150.0, 150.0),
        (180.0, 150.0),
        (120.0, 184.0),
        (150.0, 184.0),
        (180.0, 184.0),
    ];
    for (x, y) in pads {
        let rect = Rect::from_xywh(x, y, 20.0, 20.0).expect("positive size");
        pm.fill_rect(rect, &gold, Transform::identity(), None);
    }

    // The temperature curve: T falls exponentially across the tile.
    let mut pb = PathBuilder::new();
    for i in 0..=60 {
        let t = i as f32 / 60.0;
        let x = 30.0 + t * 196.0;
        let y = 40.0 + 170.0 * (1.0 - (-4.0 * t).exp());
        if i == 0 {
            pb.move_to(x, y);
        } else {
            pb.line_to(x, y);
        }
    }
    let curve = pb.finish().expect("a line");
    let mut orange = Paint {
        anti_alias: true,
        ..Paint::default()
    };
    orange.set_color_rgba8(0xf0, 0x78, 0x30, 255);
    let stroke = Stroke {
        width: 14.0,
        line_cap: LineCap::Round,
        ..Stroke::default()
    };
    pm.stroke_path(&curve, &orange, &stroke, Transform::identity(), None);

    pm.save_png(&out).expect("writable output");
    println!("wrote {out}");
}
