//! The board as a PNG picture, drawn with tiny-skia by the same scene code as the window's
//! canvas and the SVG picture. Part references are drawn from the outlines of a monospace
//! font (Hack, as packaged for egui's default fonts), read with skrifa.

use tiny_skia::{FillRule, Paint, PathBuilder, Pixmap, Stroke, Transform};

use crate::model::{Design, Point, Rect};

use super::colour::{Colour, Palette};
use super::scene::{self, BoardFacts, Item, Marks, Pen, SceneGeometry};
use super::svg::PX_PER_MM;

/// Largest side of an exported picture, pixels.
pub const MAX_SIDE: u32 = 4000;

/// The board as a PNG picture at [`PX_PER_MM`] (reduced for huge boards), with references,
/// on the light palette; the same drawing as [`super::svg::board_svg`].
pub fn board_png(design: &Design) -> Result<Vec<u8>, String> {
    let st = BoardFacts::new(design);
    let mut g = SceneGeometry::build(design, &st, None, None);
    // Wiring still to do is a working aid of the window, not part of the board.
    g.unrouted.clear();
    to_png(design, &st, &g, &Palette::light(), PX_PER_MM, true)
}

/// Renders the board at `px_per_mm` (reduced if the picture would exceed [`MAX_SIDE`]),
/// with part references when `labels`.
pub fn render(
    design: &Design,
    st: &BoardFacts,
    g: &SceneGeometry,
    pal: &Palette,
    px_per_mm: f64,
    labels: bool,
) -> Option<Pixmap> {
    let b = g.bounds.inflate(1.0);
    let scale = px_per_mm
        .min(f64::from(MAX_SIDE) / b.width().max(1e-3))
        .min(f64::from(MAX_SIDE) / b.height().max(1e-3));
    let side = |mm: f64| ((mm * scale).ceil().max(1.0) as u32).min(MAX_SIDE);
    let (w, h) = (side(b.width()), side(b.height()));
    let mut pixmap = Pixmap::new(w, h)?;
    pixmap.fill(skia_colour(pal.background));
    let mut pen = SkiaPen {
        pixmap: &mut pixmap,
        bounds: b,
        scale,
        ppp: 1.0,
    };
    let marks = Marks {
        labels,
        ..Marks::default()
    };
    scene::draw(&mut pen, design, st, g, pal, &marks);
    Some(pixmap)
}

/// The picture [`render`] makes, as PNG bytes.
pub fn to_png(
    design: &Design,
    st: &BoardFacts,
    g: &SceneGeometry,
    pal: &Palette,
    px_per_mm: f64,
    labels: bool,
) -> Result<Vec<u8>, String> {
    let pixmap =
        render(design, st, g, pal, px_per_mm, labels).ok_or("the picture would be empty")?;
    pixmap.encode_png().map_err(|e| e.to_string())
}

/// The colour as tiny-skia takes it.
pub fn skia_colour(c: Colour) -> tiny_skia::Color {
    let [r, g, b, a] = c.unmultiplied();
    tiny_skia::Color::from_rgba8(r, g, b, a)
}

fn paint(c: Colour) -> Paint<'static> {
    let mut p = Paint::default();
    let [r, g, b, a] = c.unmultiplied();
    p.set_color_rgba8(r, g, b, a);
    p.anti_alias = true;
    p
}

/// Draws with tiny-skia's paths: smoothed edges, any shape (slow for many small ones; see
/// [`super::raster`] for the window's fast pen).
pub(super) struct SkiaPen<'a> {
    pub(super) pixmap: &'a mut Pixmap,
    /// Board area shown; its top-left corner is pixel (0, 0).
    pub(super) bounds: Rect,
    /// Points per millimetre (what the scene's level of detail goes by).
    pub(super) scale: f64,
    /// Pixels per point (1 for the exported picture; the display's factor on the canvas).
    pub(super) ppp: f32,
}

impl SkiaPen<'_> {
    /// Pixel position of a board point.
    pub(super) fn px(&self, p: Point) -> (f32, f32) {
        let k = self.scale * f64::from(self.ppp);
        (
            ((p.x - self.bounds.min.x) * k) as f32,
            ((self.bounds.max.y - p.y) * k) as f32,
        )
    }

    fn rect_path(&self, r: &Rect) -> Option<tiny_skia::Path> {
        let (x0, y1) = self.px(r.min);
        let (x1, y0) = self.px(r.max);
        tiny_skia::Rect::from_ltrb(x0, y0, x1.max(x0 + 0.01), y1.max(y0 + 0.01))
            .map(PathBuilder::from_rect)
    }
}

impl Pen for SkiaPen<'_> {
    fn scale(&self) -> f64 {
        self.scale
    }

    fn visible(&self, r: &Rect) -> bool {
        // Inclusive, and a few pixels wider for outlines drawn across the edge.
        let m = 4.0 / self.scale.max(1e-9);
        let b = &self.bounds;
        r.max.x >= b.min.x - m
            && r.min.x <= b.max.x + m
            && r.max.y >= b.min.y - m
            && r.min.y <= b.max.y + m
    }

    fn fill_rect(&mut self, _: Item, r: &Rect, c: Colour) {
        if let Some(path) = self.rect_path(r) {
            self.pixmap.fill_path(
                &path,
                &paint(c),
                FillRule::Winding,
                Transform::identity(),
                None,
            );
        }
    }

    fn stroke_rect(&mut self, _: Item, r: &Rect, w: f32, c: Colour) {
        if let Some(path) = self.rect_path(r) {
            let stroke = Stroke {
                width: w * self.ppp,
                ..Stroke::default()
            };
            self.pixmap
                .stroke_path(&path, &paint(c), &stroke, Transform::identity(), None);
        }
    }

    fn line(&mut self, _: Item, a: Point, b: Point, w: f32, c: Colour) {
        let mut pb = PathBuilder::new();
        let (ax, ay) = self.px(a);
        let (bx, by) = self.px(b);
        pb.move_to(ax, ay);
        pb.line_to(bx, by);
        if let Some(path) = pb.finish() {
            let stroke = Stroke {
                width: w * self.ppp,
                ..Stroke::default()
            };
            self.pixmap
                .stroke_path(&path, &paint(c), &stroke, Transform::identity(), None);
        }
    }

    fn fill_circle(&mut self, _: Item, centre: Point, r: f64, c: Colour) {
        let (x, y) = self.px(centre);
        let rp = (r * self.scale) as f32 * self.ppp;
        if let Some(path) = PathBuilder::from_circle(x, y, rp.max(0.3)) {
            self.pixmap.fill_path(
                &path,
                &paint(c),
                FillRule::Winding,
                Transform::identity(),
                None,
            );
        }
    }

    fn fill_polygon(&mut self, _: Item, pts: &[Point], c: Colour) {
        let mut pb = PathBuilder::new();
        for (i, p) in pts.iter().enumerate() {
            let (x, y) = self.px(*p);
            if i == 0 {
                pb.move_to(x, y);
            } else {
                pb.line_to(x, y);
            }
        }
        pb.close();
        if let Some(path) = pb.finish() {
            self.pixmap.fill_path(
                &path,
                &paint(c),
                FillRule::EvenOdd,
                Transform::identity(),
                None,
            );
        }
    }

    fn text(&mut self, _: Item, at: Point, h: f32, c: Colour, s: &str) {
        let (cx, cy) = self.px(at);
        if let Some(path) = text_path(s, h * self.ppp, cx, cy) {
            self.pixmap.fill_path(
                &path,
                &paint(c),
                FillRule::Winding,
                Transform::identity(),
                None,
            );
        }
    }
}

/// Glyph outlines into a tiny-skia path, flipping y (fonts grow upward).
struct GlyphPen {
    pb: PathBuilder,
    x: f32,
    y: f32,
}

impl skrifa::outline::OutlinePen for GlyphPen {
    fn move_to(&mut self, x: f32, y: f32) {
        self.pb.move_to(self.x + x, self.y - y);
    }

    fn line_to(&mut self, x: f32, y: f32) {
        self.pb.line_to(self.x + x, self.y - y);
    }

    fn quad_to(&mut self, cx0: f32, cy0: f32, x: f32, y: f32) {
        self.pb
            .quad_to(self.x + cx0, self.y - cy0, self.x + x, self.y - y);
    }

    fn curve_to(&mut self, cx0: f32, cy0: f32, cx1: f32, cy1: f32, x: f32, y: f32) {
        self.pb.cubic_to(
            self.x + cx0,
            self.y - cy0,
            self.x + cx1,
            self.y - cy1,
            self.x + x,
            self.y - y,
        );
    }

    fn close(&mut self) {
        self.pb.close();
    }
}

/// The outline of `s` set in Hack, `h` pixels tall (the font size), centred on (cx, cy).
fn text_path(s: &str, h: f32, cx: f32, cy: f32) -> Option<tiny_skia::Path> {
    use skrifa::MetadataProvider as _;
    use skrifa::instance::{LocationRef, Size};
    use skrifa::outline::DrawSettings;
    let font = skrifa::FontRef::new(epaint_default_fonts::HACK_REGULAR).ok()?;
    let size = Size::new(h);
    let metrics = font.glyph_metrics(size, LocationRef::default());
    let charmap = font.charmap();
    let outlines = font.outline_glyphs();
    let glyphs: Vec<_> = s.chars().filter_map(|ch| charmap.map(ch)).collect();
    let width: f32 = glyphs
        .iter()
        .filter_map(|g| metrics.advance_width(*g))
        .sum();
    let m = font.metrics(size, LocationRef::default());
    // Centre the cap height on cy.
    let cap = m.cap_height.unwrap_or(m.ascent * 0.7);
    let mut pen = GlyphPen {
        pb: PathBuilder::new(),
        x: cx - width / 2.0,
        y: cy + cap / 2.0,
    };
    for g in glyphs {
        if let Some(glyph) = outlines.get(g) {
            let _ = glyph.draw(
                DrawSettings::unhinted(size, LocationRef::default()),
                &mut pen,
            );
        }
        pen.x += metrics.advance_width(g).unwrap_or(0.0);
    }
    pen.pb.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_picture_shows_the_board_and_its_pads() {
        let design = crate::model::resolve(crate::place::generate::grid_board(4, 2.54, 3)).unwrap();
        let st = BoardFacts::new(&design);
        let mut g = SceneGeometry::build(&design, &st, None, None);
        // Unrouted lines run through pad centres; leave them out to see the pad.
        g.unrouted.clear();
        let pal = Palette::light();
        let bytes = to_png(&design, &st, &g, &pal, 20.0, false).unwrap();
        let pic = Pixmap::decode_png(&bytes).unwrap();
        let b = g.bounds.inflate(1.0);
        assert_eq!(pic.width(), (b.width() * 20.0).ceil() as u32);
        // Pad colour appears at the centre of a pad; the board colour at the outline's
        // middle is not the background.
        let pad = g.parts[0].pads[0].rect.center();
        let px = |p: Point| {
            let x = ((p.x - b.min.x) * 20.0) as u32;
            let y = ((b.max.y - p.y) * 20.0) as u32;
            pic.pixel(x, y).unwrap().demultiply()
        };
        let c = px(pad);
        let [r, gg, bb, _] = pal.pad_top.unmultiplied();
        assert_eq!((c.red(), c.green(), c.blue()), (r, gg, bb));
        let corner = pic.pixel(0, 0).unwrap().demultiply();
        let [r, gg, bb, _] = pal.background.unmultiplied();
        assert_eq!((corner.red(), corner.green(), corner.blue()), (r, gg, bb));
    }

    #[test]
    fn references_are_written_in_the_picture() {
        let p = text_path("U12", 20.0, 100.0, 50.0).expect("glyph outlines");
        let b = p.bounds();
        // Centred on the point, about three monospace cells wide and a cap height tall.
        assert!(((b.left() + b.right()) / 2.0 - 100.0).abs() < 1.5);
        assert!(((b.top() + b.bottom()) / 2.0 - 50.0).abs() < 1.5);
        assert!(b.width() > 20.0 && b.width() < 40.0, "{b:?}");
        assert!(b.height() > 10.0 && b.height() < 20.0, "{b:?}");
        assert!(text_path("", 20.0, 0.0, 0.0).is_none());
    }

    #[test]
    fn huge_boards_are_scaled_down() {
        let design = crate::model::resolve(crate::place::generate::grid_board(3, 2.54, 3)).unwrap();
        let st = BoardFacts::new(&design);
        let g = SceneGeometry::build(&design, &st, None, None);
        let pic = render(&design, &st, &g, &Palette::dark(), 1e6, true).unwrap();
        assert!(pic.width() <= MAX_SIDE && pic.height() <= MAX_SIDE);
    }
}
