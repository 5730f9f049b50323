//! The board as an SVG picture, drawn by the same scene code as the canvas and the PNG
//! export (`scene::draw` through a [`Pen`]), and the two pictures `lehr export` writes.
//!
//! The pen works in board millimetres: the SVG's user unit is 1 mm (`width`/`height` in
//! mm, `viewBox` from the board's bounds), y flipped so the board's y points up. The scene
//! gives line widths and text sizes in pixels; the pen draws them at [`PX_PER_MM`], the
//! scale the window's PNG export uses, so both pictures look alike.
//!
//! Each element carries a class naming what it is (`pad-top`, `track-bottom`, `via`,
//! `courtyard`, `reference`, ...) and elements of one class are grouped in a `<g>` of that
//! id, so an editor can show or hide a layer. The groups are stacked in a fixed order
//! ([`STACK`]: board, keep-outs, tracks, vias, courtyards, bodies, pads, holes, edges,
//! references), which is the scene's order for each part; within a group the scene's
//! order is kept. The scene's `Pen` calls say how to draw, not what; the pen recognises
//! what by the palette colour the scene chose for it (every palette colour is distinct).

use std::fmt::Write as _;

use egui::Color32;

use lehr_engine::model::{Design, Point, Rect};

use super::export;
use super::scene::{self, Geometry, Marks, Palette, Pen, Static};

/// The window's safety caution, for `lehr export` to show beside the files it writes.
pub(crate) use super::caution::caution;

/// Pixels per millimetre the scene's pixel sizes are taken at (the PNG export's scale).
pub const PX_PER_MM: f64 = 40.0;

/// The board as an SVG document: outline, keep-outs, copper of both layers, vias, pads,
/// courtyards, bodies and part references, on the light palette.
pub fn board_svg(design: &Design) -> String {
    let st = Static::new(design);
    let mut g = Geometry::build(design, &st, None, None);
    // Wiring still to do is a working aid of the window, not part of the board.
    g.unrouted.clear();
    let pal = Palette::light();
    let mut pen = SvgPen::new(g.bounds.inflate(1.0), &pal);
    let marks = Marks {
        labels: true,
        ..Marks::default()
    };
    scene::draw(&mut pen, design, &st, &g, &pal, &marks);
    pen.finish(&design.board.name)
}

/// The board as a PNG picture at [`PX_PER_MM`] (reduced for huge boards), with references,
/// on the light palette; the same drawing as [`board_svg`].
pub fn board_png(design: &Design) -> Result<Vec<u8>, String> {
    let st = Static::new(design);
    let mut g = Geometry::build(design, &st, None, None);
    g.unrouted.clear();
    export::png(design, &st, &g, &Palette::light(), PX_PER_MM, true)
}

/// What a colour of the palette stands for, as an SVG class name.
fn classes(pal: &Palette) -> Vec<(Color32, &'static str)> {
    vec![
        (pal.board, "board"),
        (pal.outline, "outline"),
        (pal.keepout_fill, "keepout"),
        (pal.keepout_edge, "keepout-edge"),
        (pal.courtyard, "courtyard-edge"),
        (pal.courtyard_fill, "courtyard"),
        (pal.locked_fill, "courtyard-locked"),
        (pal.locked_edge, "courtyard-locked-edge"),
        (pal.body, "body"),
        (pal.pad_top, "pad-top"),
        (pal.pad_bottom, "pad-bottom"),
        (pal.drill, "drill"),
        (pal.unrouted, "unrouted"),
        (pal.highlight, "highlight"),
        (pal.conflict, "conflict"),
        (pal.selected, "selected"),
        (pal.hovered, "hovered"),
        (pal.label, "reference"),
        (pal.track_top, "track-top"),
        (pal.track_bottom, "track-bottom"),
        (pal.via, "via"),
    ]
}

/// The order the groups are stacked in, bottom first; a class not listed goes on top.
const STACK: [&str; 21] = [
    "board",
    "keepout",
    "keepout-edge",
    "outline",
    "track-bottom",
    "track-top",
    "via",
    "courtyard",
    "courtyard-locked",
    "body",
    "pad-bottom",
    "pad-top",
    "drill",
    "courtyard-edge",
    "courtyard-locked-edge",
    "hovered",
    "conflict",
    "selected",
    "unrouted",
    "highlight",
    "reference",
];

struct SvgPen {
    bounds: Rect,
    background: Color32,
    classes: Vec<(Color32, &'static str)>,
    /// Elements per class, classes in the order first drawn.
    groups: Vec<(&'static str, String)>,
}

impl SvgPen {
    fn new(bounds: Rect, pal: &Palette) -> SvgPen {
        SvgPen {
            bounds,
            background: pal.background,
            classes: classes(pal),
            groups: Vec::new(),
        }
    }

    /// SVG coordinates of a board point (mm from the top-left corner, y down).
    fn xy(&self, p: Point) -> (String, String) {
        (num(p.x - self.bounds.min.x), num(self.bounds.max.y - p.y))
    }

    fn class_of(&self, c: Color32) -> &'static str {
        self.classes
            .iter()
            .find(|(k, _)| *k == c)
            .map_or("other", |(_, n)| n)
    }

    fn push(&mut self, c: Color32, element: String) {
        let class = self.class_of(c);
        let i = match self.groups.iter().position(|(n, _)| *n == class) {
            Some(i) => i,
            None => {
                self.groups.push((class, String::new()));
                self.groups.len() - 1
            }
        };
        let g = &mut self.groups[i].1;
        g.push_str("    ");
        g.push_str(&element);
        g.push('\n');
    }

    fn finish(mut self, title: &str) -> String {
        let rank = |c: &str| STACK.iter().position(|k| *k == c).unwrap_or(STACK.len());
        // Stable: classes off the list keep the order they were first drawn in.
        self.groups.sort_by_key(|(c, _)| rank(c));
        let (w, h) = (num(self.bounds.width()), num(self.bounds.height()));
        let mut s = String::new();
        s.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
        let _ = writeln!(
            s,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"{w}mm\" \
             height=\"{h}mm\" viewBox=\"0 0 {w} {h}\">"
        );
        let _ = writeln!(s, "  <title>{}</title>", escape(title));
        let _ = writeln!(
            s,
            "  <rect class=\"background\" x=\"0\" y=\"0\" width=\"{w}\" height=\"{h}\" {}/>",
            fill(self.background)
        );
        for (class, body) in &self.groups {
            let _ = writeln!(s, "  <g id=\"{class}\">");
            s.push_str(body);
            s.push_str("  </g>\n");
        }
        s.push_str("</svg>\n");
        s
    }
}

/// A length or coordinate in mm with at most 4 decimals (0.1 micrometre), no trailing
/// zeros.
fn num(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" || s.is_empty() {
        "0".to_string()
    } else {
        s.to_string()
    }
}

fn hex(c: Color32) -> (String, String) {
    let [r, g, b, a] = c.to_srgba_unmultiplied();
    (format!("#{r:02x}{g:02x}{b:02x}"), num(f64::from(a) / 255.0))
}

fn fill(c: Color32) -> String {
    let (rgb, a) = hex(c);
    if a == "1" {
        format!("fill=\"{rgb}\"")
    } else {
        format!("fill=\"{rgb}\" fill-opacity=\"{a}\"")
    }
}

fn stroke(c: Color32, width_mm: f64) -> String {
    let (rgb, a) = hex(c);
    let op = if a == "1" {
        String::new()
    } else {
        format!(" stroke-opacity=\"{a}\"")
    };
    format!(
        "fill=\"none\" stroke=\"{rgb}\"{op} stroke-width=\"{}\"",
        num(width_mm)
    )
}

/// Text as XML character data or attribute value.
fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c if c.is_control() && c != '\t' && c != '\n' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

impl Pen for SvgPen {
    fn scale(&self) -> f64 {
        PX_PER_MM
    }

    fn visible(&self, _r: &Rect) -> bool {
        true
    }

    fn fill_rect(&mut self, r: &Rect, c: Color32) {
        let (x, y) = self.xy(Point::new(r.min.x, r.max.y));
        let e = format!(
            "<rect class=\"{}\" x=\"{x}\" y=\"{y}\" width=\"{}\" height=\"{}\" {}/>",
            self.class_of(c),
            num(r.width()),
            num(r.height()),
            fill(c)
        );
        self.push(c, e);
    }

    fn stroke_rect(&mut self, r: &Rect, width_px: f32, c: Color32) {
        let (x, y) = self.xy(Point::new(r.min.x, r.max.y));
        let e = format!(
            "<rect class=\"{}\" x=\"{x}\" y=\"{y}\" width=\"{}\" height=\"{}\" {}/>",
            self.class_of(c),
            num(r.width()),
            num(r.height()),
            stroke(c, f64::from(width_px) / PX_PER_MM)
        );
        self.push(c, e);
    }

    fn line(&mut self, a: Point, b: Point, width_px: f32, c: Color32) {
        let ((x1, y1), (x2, y2)) = (self.xy(a), self.xy(b));
        let e = format!(
            "<line class=\"{}\" x1=\"{x1}\" y1=\"{y1}\" x2=\"{x2}\" y2=\"{y2}\" {}/>",
            self.class_of(c),
            stroke(c, f64::from(width_px) / PX_PER_MM)
        );
        self.push(c, e);
    }

    fn fill_circle(&mut self, centre: Point, radius_mm: f64, c: Color32) {
        let (x, y) = self.xy(centre);
        let e = format!(
            "<circle class=\"{}\" cx=\"{x}\" cy=\"{y}\" r=\"{}\" {}/>",
            self.class_of(c),
            num(radius_mm),
            fill(c)
        );
        self.push(c, e);
    }

    fn fill_polygon(&mut self, pts: &[Point], c: Color32) {
        if pts.len() < 3 {
            return;
        }
        let points: Vec<String> = pts
            .iter()
            .map(|p| {
                let (x, y) = self.xy(*p);
                format!("{x},{y}")
            })
            .collect();
        let e = format!(
            "<polygon class=\"{}\" points=\"{}\" fill-rule=\"evenodd\" {}/>",
            self.class_of(c),
            points.join(" "),
            fill(c)
        );
        self.push(c, e);
    }

    fn text(&mut self, at: Point, height_px: f32, c: Color32, s: &str) {
        let (x, y) = self.xy(at);
        let e = format!(
            "<text class=\"{}\" x=\"{x}\" y=\"{y}\" font-family=\"monospace\" \
             font-size=\"{}\" text-anchor=\"middle\" dominant-baseline=\"central\" {}>{}</text>",
            self.class_of(c),
            num(f64::from(height_px) / PX_PER_MM),
            fill(c),
            escape(s)
        );
        self.push(c, e);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn palette_colours_are_distinct_so_classes_are_unambiguous() {
        for pal in [Palette::light(), Palette::dark()] {
            let c = classes(&pal);
            for (i, a) in c.iter().enumerate() {
                for b in &c[i + 1..] {
                    assert_ne!(a.0, b.0, "{} and {} share a colour", a.1, b.1);
                }
            }
        }
    }

    #[test]
    fn every_class_has_its_place_in_the_stack() {
        for (_, class) in classes(&Palette::light()) {
            assert!(STACK.contains(&class), "{class}");
        }
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(escape("R<1> & \"C\""), "R&lt;1&gt; &amp; &quot;C&quot;");
    }

    #[test]
    fn the_picture_holds_every_pad() {
        let design =
            lehr_engine::model::resolve(lehr_engine::place::generate::grid_board(3, 2.54, 1))
                .unwrap();
        let svg = board_svg(&design);
        let pads: usize = design.footprints.iter().map(|f| f.pads.len()).sum();
        let drawn = svg.matches("class=\"pad-top\"").count();
        assert_eq!(drawn, pads);
        assert_eq!(svg.matches("class=\"reference\"").count(), 9);
        assert!(svg.ends_with("</svg>\n"));
    }
}
