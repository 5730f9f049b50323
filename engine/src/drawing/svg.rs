//! The board as an SVG picture, drawn by the same scene code as the window's canvas and
//! the PNG picture (`scene::draw` through a [`Pen`]).
//!
//! The pen works in board millimetres: the SVG's user unit is 1 mm (`width`/`height` in
//! mm, `viewBox` from the board's bounds), y flipped so the board's y points up. The scene
//! gives line widths and text sizes in pixels; the pen draws them at [`PX_PER_MM`], the
//! scale the window's PNG export uses, so both pictures look alike.
//!
//! Each element carries a class naming what it is (`pad-top`, `track-bottom`, `via`,
//! `courtyard`, `reference`, ...: [`Item::name`] of the item the scene gives with the
//! shape) and elements of one item are grouped in a `<g>` of that id, so an editor can
//! show or hide a layer. The groups are stacked in the order of [`Item::ALL`] (board,
//! keep-outs, tracks, vias, courtyards, bodies, pads, holes, edges, references), which is
//! the scene's order for each part; within a group the scene's order is kept.

use std::fmt::Write as _;

use crate::model::{Design, Point, Rect};

use super::colour::{Colour, Palette};
use super::scene::{self, BoardFacts, Item, Marks, Pen, SceneGeometry};

/// Pixels per millimetre the scene's pixel sizes are taken at (the PNG export's scale).
pub const PX_PER_MM: f64 = 40.0;

/// The board as an SVG document: outline, keep-outs, copper of both layers, vias, pads,
/// courtyards, bodies and part references, on the light palette.
pub fn board_svg(design: &Design) -> String {
    let st = BoardFacts::new(design);
    let mut g = SceneGeometry::build(design, &st, None, None);
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

/// Writes SVG elements, one group per [`Item`].
pub struct SvgPen {
    bounds: Rect,
    background: Colour,
    /// Elements per item, items in the order first drawn.
    groups: Vec<(Item, String)>,
}

impl SvgPen {
    /// A pen for a picture of the board area `bounds` on the palette's background.
    pub fn new(bounds: Rect, pal: &Palette) -> SvgPen {
        SvgPen {
            bounds,
            background: pal.background,
            groups: Vec::new(),
        }
    }

    /// SVG coordinates of a board point (mm from the top-left corner, y down).
    fn xy(&self, p: Point) -> (String, String) {
        (num(p.x - self.bounds.min.x), num(self.bounds.max.y - p.y))
    }

    fn push(&mut self, item: Item, element: String) {
        let i = match self.groups.iter().position(|(n, _)| *n == item) {
            Some(i) => i,
            None => {
                self.groups.push((item, String::new()));
                self.groups.len() - 1
            }
        };
        let g = &mut self.groups[i].1;
        g.push_str("    ");
        g.push_str(&element);
        g.push('\n');
    }

    /// The SVG document, titled `title`.
    pub fn finish(mut self, title: &str) -> String {
        let rank = |i: &Item| Item::ALL.iter().position(|k| k == i);
        self.groups.sort_by_key(|(i, _)| rank(i));
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
        for (item, body) in &self.groups {
            let _ = writeln!(s, "  <g id=\"{}\">", item.name());
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

fn hex(c: Colour) -> (String, String) {
    let [r, g, b, a] = c.unmultiplied();
    (format!("#{r:02x}{g:02x}{b:02x}"), num(f64::from(a) / 255.0))
}

fn fill(c: Colour) -> String {
    let (rgb, a) = hex(c);
    if a == "1" {
        format!("fill=\"{rgb}\"")
    } else {
        format!("fill=\"{rgb}\" fill-opacity=\"{a}\"")
    }
}

fn stroke(c: Colour, width_mm: f64) -> String {
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

    fn fill_rect(&mut self, item: Item, r: &Rect, c: Colour) {
        let (x, y) = self.xy(Point::new(r.min.x, r.max.y));
        let e = format!(
            "<rect class=\"{}\" x=\"{x}\" y=\"{y}\" width=\"{}\" height=\"{}\" {}/>",
            item.name(),
            num(r.width()),
            num(r.height()),
            fill(c)
        );
        self.push(item, e);
    }

    fn stroke_rect(&mut self, item: Item, r: &Rect, width_px: f32, c: Colour) {
        let (x, y) = self.xy(Point::new(r.min.x, r.max.y));
        let e = format!(
            "<rect class=\"{}\" x=\"{x}\" y=\"{y}\" width=\"{}\" height=\"{}\" {}/>",
            item.name(),
            num(r.width()),
            num(r.height()),
            stroke(c, f64::from(width_px) / PX_PER_MM)
        );
        self.push(item, e);
    }

    fn line(&mut self, item: Item, a: Point, b: Point, width_px: f32, c: Colour) {
        let ((x1, y1), (x2, y2)) = (self.xy(a), self.xy(b));
        let e = format!(
            "<line class=\"{}\" x1=\"{x1}\" y1=\"{y1}\" x2=\"{x2}\" y2=\"{y2}\" {}/>",
            item.name(),
            stroke(c, f64::from(width_px) / PX_PER_MM)
        );
        self.push(item, e);
    }

    fn fill_circle(&mut self, item: Item, centre: Point, radius_mm: f64, c: Colour) {
        let (x, y) = self.xy(centre);
        let e = format!(
            "<circle class=\"{}\" cx=\"{x}\" cy=\"{y}\" r=\"{}\" {}/>",
            item.name(),
            num(radius_mm),
            fill(c)
        );
        self.push(item, e);
    }

    fn fill_polygon(&mut self, item: Item, pts: &[Point], c: Colour) {
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
            item.name(),
            points.join(" "),
            fill(c)
        );
        self.push(item, e);
    }

    fn text(&mut self, item: Item, at: Point, height_px: f32, c: Colour, s: &str) {
        let (x, y) = self.xy(at);
        let e = format!(
            "<text class=\"{}\" x=\"{x}\" y=\"{y}\" font-family=\"monospace\" \
             font-size=\"{}\" text-anchor=\"middle\" dominant-baseline=\"central\" {}>{}</text>",
            item.name(),
            num(f64::from(height_px) / PX_PER_MM),
            fill(c),
            escape(s)
        );
        self.push(item, e);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_item_has_its_own_name_and_place_in_the_stack() {
        for (i, a) in Item::ALL.iter().enumerate() {
            for b in &Item::ALL[i + 1..] {
                assert_ne!(a, b);
                assert_ne!(a.name(), b.name());
            }
        }
    }

    #[test]
    fn groups_come_from_the_item_not_the_colour() {
        // Two items in one colour still land in their own groups, stacked by item (the
        // pad drawn first goes above the track drawn after it), and a group holds its
        // items in the order drawn.
        let pal = Palette::light();
        let bounds = Rect::bounding([Point::new(0.0, 0.0), Point::new(10.0, 5.0)]).unwrap();
        let mut pen = SvgPen::new(bounds, &pal);
        let red = Colour::rgb(0xff, 0, 0);
        let pad = Rect::bounding([Point::new(1.0, 1.0), Point::new(2.0, 2.0)]).unwrap();
        pen.fill_rect(Item::PadTop, &pad, red);
        let (a, b) = (Point::new(0.0, 0.0), Point::new(10.0, 5.0));
        pen.line(Item::TrackBottom, a, b, 8.0, red);
        pen.fill_circle(Item::TrackBottom, b, 0.1, red);
        let svg = pen.finish("t");
        let track = svg.find("<g id=\"track-bottom\">").expect("a track group");
        let pads = svg.find("<g id=\"pad-top\">").expect("a pad group");
        assert!(track < pads, "{svg}");
        assert_eq!(svg.matches("<g ").count(), 2);
        assert_eq!(svg.matches("class=\"track-bottom\"").count(), 2);
        assert_eq!(svg.matches("class=\"pad-top\"").count(), 1);
        let line = svg.find("<line class=\"track-bottom\"").unwrap();
        let dot = svg.find("<circle class=\"track-bottom\"").unwrap();
        assert!(track < line && line < dot && dot < pads, "{svg}");
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(escape("R<1> & \"C\""), "R&lt;1&gt; &amp; &quot;C&quot;");
    }

    #[test]
    fn the_picture_holds_every_pad() {
        let design = crate::model::resolve(crate::place::generate::grid_board(3, 2.54, 1)).unwrap();
        let svg = board_svg(&design);
        let pads: usize = design.footprints.iter().map(|f| f.pads.len()).sum();
        let drawn = svg.matches("class=\"pad-top\"").count();
        assert_eq!(drawn, pads);
        assert_eq!(svg.matches("class=\"reference\"").count(), 9);
        assert!(svg.ends_with("</svg>\n"));
    }
}
