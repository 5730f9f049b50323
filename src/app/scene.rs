//! What the board picture holds and how it is drawn, independent of where it is drawn:
//! the window's canvas paints it with egui, the picture export with tiny-skia. Positions
//! are board millimetres (y up) until a [`Pen`] maps them to pixels.

use egui::Color32;

use lehr_engine::model::board::Layer;
use lehr_engine::model::{Design, PadShape, Point, Quarter, Rect, Side, rect_to_board, to_board};
use lehr_engine::place::mst::{Metric, spanning_tree};
use lehr_engine::worker::Snapshot;

/// Colours of the board picture. Chosen for lehr: a dark-green board on the dark theme, a
/// pale sage board on the light one; copper in warm gold, the bottom side in teal, wiring
/// still to do in grey, conflicts in red, the selection in yellow.
#[derive(Clone, Copy, Debug)]
pub struct Palette {
    pub background: Color32,
    pub board: Color32,
    pub outline: Color32,
    pub keepout_fill: Color32,
    pub keepout_edge: Color32,
    pub courtyard: Color32,
    pub courtyard_fill: Color32,
    pub locked_fill: Color32,
    pub locked_edge: Color32,
    pub body: Color32,
    pub pad_top: Color32,
    pub pad_bottom: Color32,
    pub drill: Color32,
    pub unrouted: Color32,
    pub highlight: Color32,
    pub conflict: Color32,
    pub selected: Color32,
    pub hovered: Color32,
    pub label: Color32,
    pub track_top: Color32,
    pub track_bottom: Color32,
    pub via: Color32,
}

impl Palette {
    pub fn dark() -> Palette {
        Palette {
            background: Color32::from_rgb(0x16, 0x19, 0x1c),
            board: Color32::from_rgb(0x1c, 0x2e, 0x25),
            outline: Color32::from_rgb(0xc9, 0xd3, 0xbf),
            keepout_fill: Color32::from_rgba_unmultiplied(0xd0, 0x5a, 0x44, 40),
            keepout_edge: Color32::from_rgb(0xd8, 0x6e, 0x58),
            courtyard: Color32::from_rgb(0x8a, 0x98, 0xa6),
            courtyard_fill: Color32::from_rgba_unmultiplied(0x9a, 0xa8, 0xb4, 22),
            locked_fill: Color32::from_rgba_unmultiplied(0x6e, 0x8c, 0xe6, 60),
            locked_edge: Color32::from_rgb(0x8e, 0xaa, 0xf5),
            body: Color32::from_rgb(0x5c, 0x66, 0x70),
            pad_top: Color32::from_rgb(0xd8, 0xa6, 0x48),
            pad_bottom: Color32::from_rgb(0x3f, 0xb0, 0xaa),
            drill: Color32::from_rgb(0x10, 0x12, 0x14),
            unrouted: Color32::from_rgba_unmultiplied(0xe6, 0xe6, 0xdc, 110),
            highlight: Color32::from_rgb(0x62, 0xd6, 0xff),
            conflict: Color32::from_rgb(0xff, 0x55, 0x50),
            selected: Color32::from_rgb(0xff, 0xdc, 0x4a),
            hovered: Color32::from_rgb(0xee, 0xf2, 0xf4),
            label: Color32::from_rgb(0xe4, 0xe8, 0xe0),
            track_top: Color32::from_rgba_unmultiplied(0xd9, 0x74, 0x4c, 210),
            track_bottom: Color32::from_rgba_unmultiplied(0x52, 0x8e, 0xdc, 190),
            via: Color32::from_rgb(0xb8, 0xbc, 0xc0),
        }
    }

    pub fn light() -> Palette {
        Palette {
            background: Color32::from_rgb(0xf3, 0xf4, 0xf1),
            board: Color32::from_rgb(0xdc, 0xe8, 0xd8),
            outline: Color32::from_rgb(0x2f, 0x42, 0x33),
            keepout_fill: Color32::from_rgba_unmultiplied(0xc8, 0x3c, 0x28, 40),
            keepout_edge: Color32::from_rgb(0xb0, 0x3a, 0x28),
            courtyard: Color32::from_rgb(0x55, 0x60, 0x6c),
            courtyard_fill: Color32::from_rgba_unmultiplied(0xff, 0xff, 0xff, 90),
            locked_fill: Color32::from_rgba_unmultiplied(0x3c, 0x5c, 0xc8, 50),
            locked_edge: Color32::from_rgb(0x2c, 0x48, 0xa8),
            body: Color32::from_rgb(0x8a, 0x94, 0x9c),
            pad_top: Color32::from_rgb(0xb4, 0x7a, 0x12),
            pad_bottom: Color32::from_rgb(0x14, 0x84, 0x80),
            drill: Color32::from_rgb(0xfa, 0xfa, 0xf6),
            unrouted: Color32::from_rgba_unmultiplied(0x30, 0x34, 0x38, 120),
            highlight: Color32::from_rgb(0x00, 0x6c, 0xd8),
            conflict: Color32::from_rgb(0xd2, 0x1e, 0x28),
            selected: Color32::from_rgb(0xc8, 0x8c, 0x00),
            hovered: Color32::from_rgb(0x10, 0x14, 0x18),
            label: Color32::from_rgb(0x1c, 0x22, 0x26),
            track_top: Color32::from_rgba_unmultiplied(0xc0, 0x50, 0x28, 200),
            track_bottom: Color32::from_rgba_unmultiplied(0x28, 0x60, 0xc0, 180),
            via: Color32::from_rgb(0x60, 0x66, 0x6c),
        }
    }
}

/// A pad as drawn: its board rectangle and the net it belongs to.
#[derive(Clone, Debug)]
pub struct PadGeom {
    pub rect: Rect,
    pub shape: PadShape,
    /// Drill diameter of a through-hole pad.
    pub drill: Option<f64>,
    pub net: Option<u32>,
}

/// A part as drawn.
#[derive(Clone, Debug)]
pub struct PartGeom {
    pub at: Point,
    pub quarter: Quarter,
    pub court: Rect,
    pub body: Rect,
    pub pads: Vec<PadGeom>,
    pub side: Side,
    pub locked: bool,
    /// Conflict bits, see [`lehr_engine::worker::Snapshot::conflicts`].
    pub conflicts: u8,
}

/// One straight line of wiring still to do (an edge of a net's spanning tree).
#[derive(Clone, Copy, Debug)]
pub struct Unrouted {
    pub net: u32,
    pub a: Point,
    pub b: Point,
}

/// Per-design facts the picture needs, computed once per board.
#[derive(Clone, Debug)]
pub struct Static {
    /// Net of each pad, per part.
    pub pad_net: Vec<Vec<Option<u32>>>,
    pub outline: Vec<Point>,
    pub keepouts: Vec<Vec<Point>>,
    /// Per net: its copper connects all its pins, so no unrouted lines are drawn for it.
    pub routed: Vec<bool>,
}

impl Static {
    pub fn new(design: &Design) -> Static {
        Static {
            pad_net: design
                .pad_nets()
                .into_iter()
                .map(|p| p.into_iter().map(|n| n.map(|n| n.0)).collect())
                .collect(),
            outline: design.board.outline.vertices(),
            keepouts: design
                .board
                .keepouts
                .iter()
                .map(|k| k.shape.vertices())
                .collect(),
            routed: vec![false; design.board.nets.len()],
        }
    }
}

/// Everything on the board at one moment, in board millimetres.
#[derive(Clone, Debug, Default)]
pub struct Geometry {
    pub parts: Vec<PartGeom>,
    pub unrouted: Vec<Unrouted>,
    /// Bounds of the outline and every part.
    pub bounds: Rect,
    /// A number of this build, different for every [`Geometry::build`] of the process
    /// (the canvas redraws its cached picture when it changes; 0 for the default).
    pub generation: u64,
}

/// Source of [`Geometry::generation`].
static GENERATION: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(1);

impl Geometry {
    /// The board as the snapshot has it, with `moved` (a part being dragged) overriding
    /// the snapshot's position of that part. Without a snapshot, the file's positions.
    pub fn build(
        design: &Design,
        st: &Static,
        snap: Option<&Snapshot>,
        moved: Option<(u32, Point, Quarter)>,
    ) -> Geometry {
        let n = design.board.parts.len();
        let snap = snap.filter(|s| s.positions.len() == n && s.quarters.len() == n);
        let mut parts = Vec::with_capacity(n);
        for (i, (part, fp)) in design
            .board
            .parts
            .iter()
            .zip(&design.footprints)
            .enumerate()
        {
            let (mut at, mut q) = match snap {
                Some(s) => (s.positions[i], s.quarters[i]),
                None => (part.at.unwrap_or_default(), part.quarter()),
            };
            if let Some((m, p, mq)) = moved
                && m as usize == i
            {
                at = p;
                q = mq;
            }
            let side = part.side;
            let pads = fp
                .pads
                .iter()
                .enumerate()
                .map(|(k, pad)| {
                    let (w, h) = q.apply_size(pad.width, pad.height);
                    PadGeom {
                        rect: Rect::centered(to_board(pad.at, at, q, side), w, h),
                        shape: pad.shape,
                        drill: match pad.kind {
                            lehr_engine::model::PadKind::ThroughHole { drill, .. } => Some(drill),
                            lehr_engine::model::PadKind::Smd => None,
                        },
                        net: st.pad_net[i][k],
                    }
                })
                .collect();
            parts.push(PartGeom {
                at,
                quarter: q,
                court: rect_to_board(&fp.courtyard, at, q, side),
                body: rect_to_board(&fp.body, at, q, side),
                pads,
                side,
                locked: snap.map_or(part.locked, |s| s.locked.get(i).copied().unwrap_or(false)),
                conflicts: snap.and_then(|s| s.conflicts.get(i).copied()).unwrap_or(0),
            });
        }
        let mut unrouted = Vec::new();
        let mut pts = Vec::new();
        for (net, pins) in design.net_pins.iter().enumerate() {
            if pins.len() < 2 || st.routed.get(net).copied().unwrap_or(false) {
                continue;
            }
            pts.clear();
            pts.extend(
                pins.iter()
                    .map(|p| parts[p.part.index()].pads[p.pad as usize].rect.center()),
            );
            for (a, b) in spanning_tree(&pts, Metric::Euclidean) {
                unrouted.push(Unrouted {
                    net: net as u32,
                    a: pts[a],
                    b: pts[b],
                });
            }
        }
        let outline = design.board.outline.bounds();
        let bounds = parts.iter().fold(outline, |r, p| r.union(&p.court));
        Geometry {
            parts,
            unrouted,
            bounds,
            generation: GENERATION.fetch_add(1, std::sync::atomic::Ordering::Relaxed),
        }
    }

    /// The part under a board point: the smallest courtyard holding it.
    pub fn part_at(&self, p: Point) -> Option<u32> {
        self.parts
            .iter()
            .enumerate()
            .filter(|(_, g)| g.court.contains(p))
            .min_by(|a, b| a.1.court.area().total_cmp(&b.1.court.area()))
            .map(|(i, _)| i as u32)
    }

    /// The net under a board point: a pad of it, or one of its unrouted lines within
    /// `tol` mm.
    pub fn net_at(&self, p: Point, tol: f64) -> Option<u32> {
        for g in &self.parts {
            if g.court.inflate(tol).contains(p) {
                for pad in &g.pads {
                    if pad.net.is_some() && pad.rect.contains(p) {
                        return pad.net;
                    }
                }
            }
        }
        self.unrouted
            .iter()
            .map(|u| (u.net, segment_distance(p, u.a, u.b)))
            .filter(|(_, d)| *d <= tol)
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(n, _)| n)
    }
}

/// Distance from `p` to the segment `a`-`b`.
pub fn segment_distance(p: Point, a: Point, b: Point) -> f64 {
    let (dx, dy) = (b.x - a.x, b.y - a.y);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((p.x - a.x) * dx + (p.y - a.y) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (p.x - (a.x + t * dx)).hypot(p.y - (a.y + t * dy))
}

/// Something that draws in board millimetres. Widths of lines are in pixels unless said.
pub trait Pen {
    /// Pixels per millimetre.
    fn scale(&self) -> f64;
    /// Whether anything inside this board rectangle can be seen.
    fn visible(&self, r: &Rect) -> bool;
    fn fill_rect(&mut self, r: &Rect, c: Color32);
    fn stroke_rect(&mut self, r: &Rect, width_px: f32, c: Color32);
    /// A straight line `width_px` wide.
    fn line(&mut self, a: Point, b: Point, width_px: f32, c: Color32);
    fn fill_circle(&mut self, centre: Point, radius_mm: f64, c: Color32);
    /// A simple polygon (concave allowed).
    fn fill_polygon(&mut self, pts: &[Point], c: Color32);
    /// Text centred on `at`, `height_px` tall.
    fn text(&mut self, at: Point, height_px: f32, c: Color32, s: &str);
}

/// What the viewer singles out.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Marks {
    pub selected: Option<u32>,
    pub hovered_part: Option<u32>,
    pub net: Option<u32>,
    pub labels: bool,
}

/// Draws the whole board.
pub fn draw(
    pen: &mut dyn Pen,
    design: &Design,
    st: &Static,
    g: &Geometry,
    pal: &Palette,
    m: &Marks,
) {
    let s = pen.scale() as f32;
    pen.fill_polygon(&st.outline, pal.board);
    for k in &st.keepouts {
        pen.fill_polygon(k, pal.keepout_fill);
        outline(pen, k, 1.5, pal.keepout_edge);
    }
    outline(pen, &st.outline, 2.0, pal.outline);

    // Routed copper, bottom layer first.
    let copper = &design.board.copper;
    for layer in [Layer::Bottom, Layer::Top] {
        let c = if layer == Layer::Top {
            pal.track_top
        } else {
            pal.track_bottom
        };
        for t in copper.tracks.iter().filter(|t| t.layer == layer) {
            let w = (t.width as f32 * s).max(1.0);
            // Round joints and ends only where they can be seen.
            let round = w >= 2.5;
            for seg in t.points.windows(2) {
                pen.line(seg[0], seg[1], w, c);
                if round {
                    pen.fill_circle(seg[1], t.width / 2.0, c);
                }
            }
            if let Some(p) = t.points.first().filter(|_| round) {
                pen.fill_circle(*p, t.width / 2.0, c);
            }
        }
    }
    for v in &copper.vias {
        pen.fill_circle(v.at, v.diameter / 2.0, pal.via);
        pen.fill_circle(v.at, v.drill / 2.0, pal.drill);
    }

    for (i, p) in g.parts.iter().enumerate() {
        if !pen.visible(&p.court) {
            continue;
        }
        let i = i as u32;
        let (edge, w) = if Some(i) == m.selected {
            (pal.selected, 2.5)
        } else if p.conflicts != 0 {
            (pal.conflict, 2.0)
        } else if Some(i) == m.hovered_part {
            (pal.hovered, 1.5)
        } else if p.locked {
            (pal.locked_edge, 1.5)
        } else {
            (pal.courtyard, 1.0)
        };
        // A part only a few pixels across is drawn as one block in its edge colour: an
        // outline costs eight triangles, and a software renderer pays for each.
        if p.court.width().min(p.court.height()) * pen.scale() < 8.0 {
            pen.fill_rect(&p.court, edge.gamma_multiply(0.55));
            continue;
        }
        pen.fill_rect(
            &p.court,
            if p.locked {
                pal.locked_fill
            } else {
                pal.courtyard_fill
            },
        );
        // Zoomed far out, pads and bodies would be specks: skip them (fewer triangles).
        let detail = p.court.width().min(p.court.height()) * pen.scale() >= 8.0;
        if detail {
            pen.stroke_rect(&p.body, 1.0, pal.body);
        }
        let pad_c = if p.side == Side::Top {
            pal.pad_top
        } else {
            pal.pad_bottom
        };
        for pad in p.pads.iter().filter(|_| detail) {
            let c = if m.net.is_some() && pad.net == m.net {
                pal.highlight
            } else {
                pad_c
            };
            match pad.shape {
                PadShape::Circle => pen.fill_circle(
                    pad.rect.center(),
                    pad.rect.width().min(pad.rect.height()) / 2.0,
                    c,
                ),
                _ => pen.fill_rect(&pad.rect, c),
            }
            if let Some(d) = pad.drill {
                pen.fill_circle(pad.rect.center(), d / 2.0, pal.drill);
            }
        }
        pen.stroke_rect(&p.court, w, edge);
        if p.conflicts != 0 && Some(i) == m.selected {
            pen.stroke_rect(&p.court.inflate(2.5 / pen.scale()), 1.5, pal.conflict);
        }
    }

    for u in &g.unrouted {
        let hi = Some(u.net) == m.net;
        let (c, w) = if hi {
            (pal.highlight, 2.0)
        } else {
            (pal.unrouted, 1.0)
        };
        pen.line(u.a, u.b, w, c);
    }

    if m.labels {
        for (p, part) in g.parts.iter().zip(&design.board.parts) {
            let w_px = p.court.width() as f32 * s;
            let h_px = p.court.height() as f32 * s;
            let size = (h_px * 0.45)
                .min(w_px / (0.62 * part.reference.len().max(1) as f32))
                .min(18.0);
            if size >= 7.0 && pen.visible(&p.court) {
                pen.text(p.court.center(), size, pal.label, &part.reference);
            }
        }
    }
}

fn outline(pen: &mut dyn Pen, pts: &[Point], w: f32, c: Color32) {
    for i in 0..pts.len() {
        pen.line(pts[i], pts[(i + 1) % pts.len()], w, c);
    }
}

/// Triangles of a simple polygon by ear clipping (O(n^2), outlines have few vertices), as
/// index triples. Degenerate input gives fewer triangles, never a panic.
pub fn triangulate(pts: &[Point]) -> Vec<[usize; 3]> {
    let n = pts.len();
    if n < 3 {
        return Vec::new();
    }
    let area = lehr_engine::model::geom::signed_area(pts);
    let ccw = area >= 0.0;
    let mut idx: Vec<usize> = if ccw {
        (0..n).collect()
    } else {
        (0..n).rev().collect()
    };
    let cross =
        |o: Point, a: Point, b: Point| (a.x - o.x) * (b.y - o.y) - (a.y - o.y) * (b.x - o.x);
    let mut out = Vec::with_capacity(n - 2);
    let mut guard = 0;
    while idx.len() > 3 && guard < n * n {
        guard += 1;
        let m = idx.len();
        let mut clipped = false;
        for k in 0..m {
            let (ia, ib, ic) = (idx[(k + m - 1) % m], idx[k], idx[(k + 1) % m]);
            let (a, b, c) = (pts[ia], pts[ib], pts[ic]);
            if cross(a, b, c) <= 0.0 {
                continue;
            }
            let inside = idx.iter().any(|&j| {
                j != ia
                    && j != ib
                    && j != ic
                    && cross(a, b, pts[j]) >= 0.0
                    && cross(b, c, pts[j]) >= 0.0
                    && cross(c, a, pts[j]) >= 0.0
            });
            if !inside {
                out.push([ia, ib, ic]);
                idx.remove(k);
                clipped = true;
                break;
            }
        }
        if !clipped {
            break;
        }
    }
    if idx.len() == 3 {
        out.push([idx[0], idx[1], idx[2]]);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn triangles_cover_a_concave_polygon() {
        // An L shape of area 3.
        let l = [
            Point::new(0.0, 0.0),
            Point::new(2.0, 0.0),
            Point::new(2.0, 1.0),
            Point::new(1.0, 1.0),
            Point::new(1.0, 2.0),
            Point::new(0.0, 2.0),
        ];
        for pts in [l.to_vec(), l.iter().rev().copied().collect()] {
            let tris = triangulate(&pts);
            assert_eq!(tris.len(), 4);
            let area: f64 = tris
                .iter()
                .map(|t| {
                    lehr_engine::model::geom::signed_area(&[pts[t[0]], pts[t[1]], pts[t[2]]]).abs()
                })
                .sum();
            assert!((area - 3.0).abs() < 1e-12);
        }
        assert!(triangulate(&l[..2]).is_empty());
    }

    #[test]
    fn hit_tests_find_parts_and_nets() {
        let design =
            lehr_engine::model::resolve(lehr_engine::place::generate::grid_board(3, 2.54, 1))
                .unwrap();
        let st = Static::new(&design);
        let g = Geometry::build(&design, &st, None, None);
        assert_eq!(g.parts.len(), 9);
        let c = g.parts[4].court.center();
        assert_eq!(g.part_at(c), Some(4));
        // Every unrouted line ends on a pad, and nothing is far off the board.
        for u in &g.unrouted {
            assert!(g.net_at(u.a, 0.01).is_some());
        }
        assert_eq!(g.net_at(Point::new(-100.0, -100.0), 0.01), None);
        assert_eq!(
            segment_distance(
                Point::new(0.0, 1.0),
                Point::new(-1.0, 0.0),
                Point::new(1.0, 0.0)
            ),
            1.0
        );
    }
}
