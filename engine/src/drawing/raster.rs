//! The window canvas's cached board picture: the scene drawn into a pixmap by a small
//! scanline filler of our own for its thousands of rectangles, lines and dots (tiny-skia's
//! general path pipeline costs several microseconds a shape, too slow to redraw 1,000
//! parts a few times a second), and by tiny-skia for concave outlines. Part references are
//! handed back for the window to set in its own fonts on top.
//!
//! Like the vector mesh it replaces (and like OpenGL filling triangles), a pixel is
//! covered when its centre is inside a shape, without smoothing; colours are blended
//! "source over" on premultiplied RGBA (Porter and Duff, "Compositing Digital Images",
//! 1984), dividing by 255 with the usual exact rounding (Blinn, "Three wrongs make a
//! right", 1995; from memory).

use tiny_skia::Pixmap;

use crate::model::{Design, Point, Rect};

use super::colour::{Colour, Palette};
use super::png::{SkiaPen, skia_colour};
use super::scene::{self, BoardFacts, Item, Marks, Pen, SceneGeometry};

/// Draws the part of the board inside `view` (board millimetres; its top-left corner is
/// pixel (0, 0)) into `pixmap` over the background colour, `scale` points per millimetre
/// and `ppp` pixels per point. Returns the part references (board position, height in
/// points, colour, text): the canvas sets them with egui's fonts on top, as the vector
/// drawing does.
#[allow(clippy::too_many_arguments)]
pub fn render_view(
    pixmap: &mut Pixmap,
    design: &Design,
    st: &BoardFacts,
    g: &SceneGeometry,
    pal: &Palette,
    marks: &Marks,
    view: Rect,
    scale: f64,
    ppp: f32,
) -> Vec<Label> {
    pixmap.fill(skia_colour(pal.background));
    let mut pen = FastPen {
        skia: SkiaPen {
            pixmap,
            bounds: view,
            scale,
            ppp,
        },
        labels: Vec::new(),
    };
    scene::draw(&mut pen, design, st, g, pal, marks);
    pen.labels
}

/// Text to set over the picture: board position, height in points, colour, text.
pub type Label = (Point, f32, Colour, String);

struct FastPen<'a> {
    skia: SkiaPen<'a>,
    labels: Vec<Label>,
}

impl FastPen<'_> {
    fn px(&self, p: Point) -> (f32, f32) {
        self.skia.px(p)
    }

    /// Fills the pixels whose centres lie inside the axis-aligned box.
    fn fill_box(&mut self, x0: f32, y0: f32, x1: f32, y1: f32, c: Colour) {
        let (w, h) = (self.skia.pixmap.width(), self.skia.pixmap.height());
        let (ix0, ix1) = (first_centre(x0.min(x1), w), first_centre(x0.max(x1), w));
        let (iy0, iy1) = (first_centre(y0.min(y1), h), first_centre(y0.max(y1), h));
        let data = self.skia.pixmap.data_mut();
        for y in iy0..iy1 {
            let row = y * w as usize * 4;
            blend_span(&mut data[row + ix0 * 4..row + ix1 * 4], c);
        }
    }

    /// Fills a convex polygon (pixel coordinates, either winding) row by row.
    fn fill_convex(&mut self, pts: &[(f32, f32)], c: Colour) {
        if pts.len() < 3 {
            return;
        }
        let (w, h) = (self.skia.pixmap.width(), self.skia.pixmap.height());
        let (lo, hi) = pts.iter().fold((f32::MAX, f32::MIN), |(lo, hi), p| {
            (lo.min(p.1), hi.max(p.1))
        });
        let (iy0, iy1) = (first_centre(lo, h), first_centre(hi, h));
        let data = self.skia.pixmap.data_mut();
        for y in iy0..iy1 {
            let yc = y as f32 + 0.5;
            let (mut xl, mut xr) = (f32::MAX, f32::MIN);
            for k in 0..pts.len() {
                let (a, b) = (pts[k], pts[(k + 1) % pts.len()]);
                if (a.1 <= yc) != (b.1 <= yc) {
                    let x = a.0 + (yc - a.1) / (b.1 - a.1) * (b.0 - a.0);
                    xl = xl.min(x);
                    xr = xr.max(x);
                }
            }
            if xl > xr {
                continue;
            }
            let (ix0, ix1) = (first_centre(xl, w), first_centre(xr, w));
            let row = y * w as usize * 4;
            blend_span(&mut data[row + ix0 * 4..row + ix1 * 4], c);
        }
    }
}

/// Whether a polygon is convex: every turn goes the same way (collinear ones allowed).
/// A star also turns one way only; the model rejects self-crossing outlines before they
/// get here (`model::validate`).
fn is_convex(pts: &[(f32, f32)]) -> bool {
    let n = pts.len();
    if n < 3 {
        return false;
    }
    let (mut pos, mut neg) = (false, false);
    for k in 0..n {
        let (a, b, c) = (pts[k], pts[(k + 1) % n], pts[(k + 2) % n]);
        let cross = (b.0 - a.0) * (c.1 - b.1) - (b.1 - a.1) * (c.0 - b.0);
        pos |= cross > 0.0;
        neg |= cross < 0.0;
    }
    !(pos && neg) && (pos || neg)
}

/// The first pixel whose centre is at or right of `x`, clamped to `0..=n`.
fn first_centre(x: f32, n: u32) -> usize {
    if x.is_nan() {
        return 0;
    }
    // ceil(x - 0.5) on the clamped value, without a call to the C library's ceilf.
    let v = (x - 0.5).clamp(0.0, n as f32);
    let t = v as usize;
    if (t as f32) < v { t + 1 } else { t }
}

impl FastPen<'_> {
    /// A straight line `w` pixels wide between two pixel points, stepped along its longer
    /// axis: in each column (or row) the pixels whose centres are within the line's
    /// thickness measured along that column, `w / cos`, of its centre line. Ends are cut
    /// square to the stepping axis (off by less than the width from a true rectangle).
    fn thin_line(&mut self, a: (f32, f32), b: (f32, f32), w: f32, c: Colour) {
        let (dx, dy) = (b.0 - a.0, b.1 - a.1);
        let len = dx.hypot(dy);
        if len.is_nan() || len < 1e-3 {
            return;
        }
        let src = Source::new(c);
        if src.packed == 0 {
            return;
        }
        let (pw, ph) = (self.skia.pixmap.width(), self.skia.pixmap.height());
        let stride = pw as usize * 4;
        let data = self.skia.pixmap.data_mut();
        // Major axis u, minor axis v; (u, v) -> byte offset.
        let x_major = dx.abs() >= dy.abs();
        let (a_u, a_v, b_u, d_u, d_v, n_u, n_v) = if x_major {
            (a.0, a.1, b.0, dx, dy, pw, ph)
        } else {
            (a.1, a.0, b.1, dy, dx, ph, pw)
        };
        let slope = d_v / d_u;
        let half = w / 2.0 * len / d_u.abs();
        let (u0, u1) = (
            first_centre(a_u.min(b_u), n_u),
            first_centre(a_u.max(b_u), n_u),
        );
        for u in u0..u1 {
            let v = a_v + (u as f32 + 0.5 - a_u) * slope;
            let (v0, v1) = (first_centre(v - half, n_v), first_centre(v + half, n_v));
            for v in v0..v1 {
                let at = if x_major {
                    v * stride + u * 4
                } else {
                    u * stride + v * 4
                };
                let p = &mut data[at..at + 4];
                let d = u32::from_le_bytes([p[0], p[1], p[2], p[3]]);
                let out = if src.inv == 0 {
                    src.packed
                } else {
                    src.over(d)
                };
                p.copy_from_slice(&out.to_le_bytes());
            }
        }
    }
}

/// A colour ready to blend: premultiplied RGBA packed little-endian, and 255 minus its
/// alpha.
#[derive(Clone, Copy)]
struct Source {
    packed: u32,
    inv: u32,
}

impl Source {
    fn new(c: Colour) -> Source {
        let s = c.to_premultiplied();
        Source {
            packed: u32::from_le_bytes(s),
            inv: 255 - u32::from(s[3]),
        }
    }

    /// `self` over the pixel `d`: each channel `s + d * (255 - sa) / 255`, rounded; red
    /// and blue, then green and alpha, two 16-bit lanes at a time. Premultiplied channels
    /// never exceed their alpha, so no lane carries into the next.
    #[inline]
    fn over(self, d: u32) -> u32 {
        const M: u32 = 0x00ff_00ff;
        let div = |t: u32| ((t + ((t >> 8) & M)) >> 8) & M;
        let rb = div((d & M) * self.inv + 0x0080_0080);
        let ga = div(((d >> 8) & M) * self.inv + 0x0080_0080);
        self.packed.wrapping_add(rb | (ga << 8))
    }
}

/// Blends one colour over a run of premultiplied RGBA pixels ("source over").
fn blend_span(px: &mut [u8], c: Colour) {
    let s = Source::new(c);
    if s.inv == 0 {
        for p in px.chunks_exact_mut(4) {
            p.copy_from_slice(&s.packed.to_le_bytes());
        }
    } else if s.packed != 0 {
        for p in px.chunks_exact_mut(4) {
            let d = u32::from_le_bytes([p[0], p[1], p[2], p[3]]);
            p.copy_from_slice(&s.over(d).to_le_bytes());
        }
    }
}

impl Pen for FastPen<'_> {
    fn scale(&self) -> f64 {
        self.skia.scale
    }

    fn visible(&self, r: &Rect) -> bool {
        self.skia.visible(r)
    }

    fn fill_rect(&mut self, _: Item, r: &Rect, c: Colour) {
        let (x0, y0) = self.px(r.min);
        let (x1, y1) = self.px(r.max);
        self.fill_box(x0, y0, x1, y1, c);
    }

    fn stroke_rect(&mut self, _: Item, r: &Rect, w: f32, c: Colour) {
        let (x0, y1) = self.px(r.min);
        let (x1, y0) = self.px(r.max);
        let h = w * self.skia.ppp / 2.0;
        // Four bars that do not overlap (a translucent colour is blended once).
        self.fill_box(x0 - h, y0 - h, x1 + h, y0 + h, c);
        self.fill_box(x0 - h, y1 - h, x1 + h, y1 + h, c);
        self.fill_box(x0 - h, y0 + h, x0 + h, y1 - h, c);
        self.fill_box(x1 - h, y0 + h, x1 + h, y1 - h, c);
    }

    fn line(&mut self, _: Item, a: Point, b: Point, w: f32, c: Colour) {
        let (a, b) = (self.px(a), self.px(b));
        self.thin_line(a, b, w * self.skia.ppp, c);
    }

    fn fill_circle(&mut self, _: Item, centre: Point, r: f64, c: Colour) {
        let (x, y) = self.px(centre);
        let rp = (r * self.skia.scale) as f32 * self.skia.ppp;
        let n = (rp * 2.0).clamp(8.0, 64.0) as usize;
        let pts: Vec<(f32, f32)> = (0..n)
            .map(|j| {
                let t = j as f32 / n as f32 * std::f32::consts::TAU;
                (x + rp * t.cos(), y + rp * t.sin())
            })
            .collect();
        self.fill_convex(&pts, c);
    }

    fn fill_polygon(&mut self, item: Item, pts: &[Point], c: Colour) {
        // Board outlines are mostly rectangles: a convex one is filled here (tiny-skia's
        // smoothed fill samples the whole board area several times over).
        let px: Vec<(f32, f32)> = pts.iter().map(|p| self.px(*p)).collect();
        if is_convex(&px) {
            self.fill_convex(&px, c);
        } else {
            self.skia.fill_polygon(item, pts, c);
        }
    }

    fn text(&mut self, _: Item, at: Point, h: f32, c: Colour, s: &str) {
        self.labels.push((at, h, c, s.to_string()));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A pen on `p` at one pixel per millimetre, board (0, 0) at the bottom-left pixel.
    fn pen_on(p: &mut Pixmap) -> FastPen<'_> {
        let (w, h) = (f64::from(p.width()), f64::from(p.height()));
        FastPen {
            skia: SkiaPen {
                pixmap: p,
                bounds: Rect::bounding([Point::new(0.0, 0.0), Point::new(w, h)]).unwrap(),
                scale: 1.0,
                ppp: 1.0,
            },
            labels: Vec::new(),
        }
    }

    fn pixel(p: &Pixmap, x: u32, y: u32) -> [u8; 4] {
        let c = p.pixel(x, y).unwrap();
        [c.red(), c.green(), c.blue(), c.alpha()]
    }

    #[test]
    fn boxes_cover_the_pixels_whose_centres_they_hold() {
        let mut p = Pixmap::new(10, 10).unwrap();
        let mut pen = pen_on(&mut p);
        // x 2.4..5.6 holds the centres 2.5, 3.5, 4.5, 5.5; board y 7..9 is pixel rows
        // 1..3 (y down), centres 1.5 and 2.5.
        let r = Rect::bounding([Point::new(2.4, 7.0), Point::new(5.6, 9.0)]).unwrap();
        pen.fill_rect(Item::PadTop, &r, Colour::rgb(255, 0, 0));
        for y in 0..10 {
            for x in 0..10 {
                let inside = (2..=5).contains(&x) && (1..=2).contains(&y);
                let want = if inside {
                    [255, 0, 0, 255]
                } else {
                    [0, 0, 0, 0]
                };
                assert_eq!(pixel(&p, x, y), want, "pixel {x},{y}");
            }
        }
    }

    #[test]
    fn source_over_blends_premultiplied_colours() {
        // Porter-Duff source over, premultiplied: out = src + dst * (1 - src alpha).
        // Half-transparent white (premultiplied 128,128,128,128) over opaque black
        // gives 128 grey; over opaque (0,0,200) gives (128,128,128+100).
        let mut px = [0, 0, 0, 255, 0, 0, 200, 255];
        blend_span(&mut px, Colour::premultiplied(128, 128, 128, 128));
        assert_eq!(px, [128, 128, 128, 255, 128, 128, 228, 255]);
        // Fully transparent leaves the pixels alone; opaque replaces them.
        blend_span(&mut px, Colour::TRANSPARENT);
        assert_eq!(px, [128, 128, 128, 255, 128, 128, 228, 255]);
        blend_span(&mut px, Colour::rgb(1, 2, 3));
        assert_eq!(px, [1, 2, 3, 255, 1, 2, 3, 255]);
    }

    #[test]
    fn packed_blending_equals_the_per_channel_formula() {
        // Every destination value against a few sources: the two-lanes-at-a-time
        // arithmetic must give round(s + d * (255 - sa) / 255) per channel, as in
        // floating point (the premultiplied source-over equation).
        for sa in [0u8, 1, 64, 110, 128, 200, 254] {
            let c = Colour::premultiplied(sa / 2, sa, sa / 3, sa);
            let s = Source::new(c);
            for d in 0..=255u8 {
                let dst = u32::from_le_bytes([d / 4, d / 2, d, d]);
                let out = s.over(dst).to_le_bytes();
                for (k, dv) in [d / 4, d / 2, d, d].into_iter().enumerate() {
                    let want = f64::from(c.to_premultiplied()[k])
                        + (f64::from(dv) * f64::from(255 - sa) / 255.0).round();
                    assert_eq!(f64::from(out[k]), want, "sa {sa} d {d} channel {k}");
                }
            }
        }
    }

    #[test]
    fn convex_polygons_are_told_from_concave_ones() {
        let square = [(0.0, 0.0), (4.0, 0.0), (4.0, 4.0), (0.0, 4.0)];
        let l = [
            (0.0, 0.0),
            (2.0, 0.0),
            (2.0, 1.0),
            (1.0, 1.0),
            (1.0, 2.0),
            (0.0, 2.0),
        ];
        assert!(is_convex(&square));
        let mut back = square;
        back.reverse();
        assert!(is_convex(&back));
        assert!(!is_convex(&l));
        assert!(!is_convex(&square[..2]));
        // All on one line: no area, not filled as a polygon.
        assert!(!is_convex(&[(0.0, 0.0), (1.0, 0.0), (2.0, 0.0)]));
    }

    #[test]
    fn a_line_and_a_dot_fill_what_they_cover() {
        let mut p = Pixmap::new(20, 20).unwrap();
        let mut pen = pen_on(&mut p);
        // A diagonal 2 px wide, from pixel (2, 18) to (18, 2) in board terms (y up):
        // pixels along x = y (screen) are filled, far corners are not.
        pen.line(
            Item::TrackTop,
            Point::new(2.0, 2.0),
            Point::new(18.0, 18.0),
            2.0,
            Colour::rgb(255, 255, 255),
        );
        // A dot of radius 3 at (15, 5) on the board, screen (15, 15), clear of the line.
        pen.fill_circle(
            Item::Via,
            Point::new(15.0, 5.0),
            3.0,
            Colour::rgb(0, 0, 255),
        );
        for i in 3..17 {
            // Board (i + 0.5, i + 0.5) is screen pixel (i, 19 - i).
            assert_eq!(pixel(&p, i, 19 - i), [255, 255, 255, 255], "line at {i}");
        }
        assert_eq!(pixel(&p, 18, 18), [0, 0, 0, 0]);
        assert_eq!(pixel(&p, 1, 1), [0, 0, 0, 0]);
        // Centre and points within the radius are blue; outside the radius, not.
        assert_eq!(pixel(&p, 15, 14), [0, 0, 255, 255]);
        assert_eq!(pixel(&p, 13, 14), [0, 0, 255, 255]);
        assert_eq!(pixel(&p, 11, 11), [0, 0, 0, 0]);
        assert_eq!(pixel(&p, 19, 14), [0, 0, 0, 0]);
    }
}
