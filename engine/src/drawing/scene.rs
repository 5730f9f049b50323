//! What the board picture holds and how it is drawn, independent of where it is drawn:
//! [`draw`] hands every shape, with the [`Item`] it shows and its colour, to a [`Pen`]
//! (the window's canvas paints with egui, the exported pictures are SVG or tiny-skia
//! pixels). Positions are board millimetres (y up) until a pen maps them to pixels.

use crate::model::board::Layer;
use crate::model::{Design, PadShape, Point, Quarter, Rect, Side, rect_to_board, to_board};
use crate::place::mst::{Metric, spanning_tree};
use crate::worker::Snapshot;

use super::colour::{Colour, Palette};

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
    /// Conflict bits, see [`crate::worker::Snapshot::conflicts`].
    pub conflicts: u8,
}

/// One straight line of wiring still to do (an edge of a net's spanning tree).
#[derive(Clone, Copy, Debug)]
pub struct Unrouted {
    pub net: u32,
    pub a: Point,
    pub b: Point,
}

/// What the picture takes from a design once per board: the outline, the keep-outs, each
/// pad's net and which nets are routed. None of it changes while parts move (the window
/// makes it again when another board is opened or the copper changes).
#[derive(Clone, Debug)]
pub struct BoardFacts {
    /// Net of each pad, per part.
    pub pad_net: Vec<Vec<Option<u32>>>,
    pub outline: Vec<Point>,
    pub keepouts: Vec<Vec<Point>>,
    /// Per net: its copper connects all its pins, so no unrouted lines are drawn for it.
    pub routed: Vec<bool>,
}

impl BoardFacts {
    pub fn new(design: &Design) -> BoardFacts {
        BoardFacts {
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

/// The placed geometry of one moment (one frame of the window, or an exported picture):
/// every part where it stands with its pads, and the wiring still to do, in board
/// millimetres. Built from the [`BoardFacts`] and the positions of a snapshot.
#[derive(Clone, Debug, Default)]
pub struct SceneGeometry {
    pub parts: Vec<PartGeom>,
    pub unrouted: Vec<Unrouted>,
    /// Bounds of the outline and every part.
    pub bounds: Rect,
    /// A number of this build, different for every [`SceneGeometry::build`] of the process
    /// (the canvas redraws its cached picture when it changes; 0 for the default).
    pub generation: u64,
}

/// Source of [`SceneGeometry::generation`].
static GENERATION: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(1);

impl SceneGeometry {
    /// The board as the snapshot has it, with `moved` (a part being dragged) overriding
    /// the snapshot's position of that part. Without a snapshot, the file's positions.
    pub fn build(
        design: &Design,
        st: &BoardFacts,
        snap: Option<&Snapshot>,
        moved: Option<(u32, Point, Quarter)>,
    ) -> SceneGeometry {
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
                            crate::model::PadKind::ThroughHole { drill, .. } => Some(drill),
                            crate::model::PadKind::Smd => None,
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
        SceneGeometry {
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

/// What a shape of the picture shows. The scene names it with every shape it hands a
/// [`Pen`], so a pen that sorts shapes (the SVG pen groups them into layers) never has
/// to guess from colours. Listed in the order the SVG stacks its groups, bottom first.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Item {
    /// The board's area inside its outline.
    Board,
    /// The area of a keep-out.
    Keepout,
    /// The edge of a keep-out.
    KeepoutEdge,
    /// The board's outline.
    Outline,
    /// A track on the bottom copper layer (segments and round joints).
    TrackBottom,
    /// A track on the top copper layer.
    TrackTop,
    /// The copper ring of a via.
    Via,
    /// The area of a part's courtyard.
    Courtyard,
    /// The area of a locked part's courtyard.
    CourtyardLocked,
    /// A part's body outline.
    Body,
    /// A pad of a part on the bottom side.
    PadBottom,
    /// A pad of a part on the top side.
    PadTop,
    /// A drilled hole: of a through-hole pad or of a via.
    Hole,
    /// The edge of a part's courtyard.
    CourtyardEdge,
    /// The edge of a locked part's courtyard.
    CourtyardLockedEdge,
    /// The edge of the part under the pointer.
    Hovered,
    /// A part in conflict (overlapping, outside the board, in a keep-out): its edge, or
    /// its whole courtyard when too small to outline.
    Conflict,
    /// The edge of the selected part.
    Selected,
    /// A line of wiring still to do.
    Unrouted,
    /// A pad or unrouted line of the highlighted net.
    Highlight,
    /// A part's reference.
    Reference,
}

impl Item {
    /// Every item, in stacking order (bottom first).
    pub const ALL: [Item; 21] = [
        Item::Board,
        Item::Keepout,
        Item::KeepoutEdge,
        Item::Outline,
        Item::TrackBottom,
        Item::TrackTop,
        Item::Via,
        Item::Courtyard,
        Item::CourtyardLocked,
        Item::Body,
        Item::PadBottom,
        Item::PadTop,
        Item::Hole,
        Item::CourtyardEdge,
        Item::CourtyardLockedEdge,
        Item::Hovered,
        Item::Conflict,
        Item::Selected,
        Item::Unrouted,
        Item::Highlight,
        Item::Reference,
    ];

    /// A short name of our own, for class names and layer names of pictures.
    pub fn name(self) -> &'static str {
        match self {
            Item::Board => "board",
            Item::Keepout => "keepout",
            Item::KeepoutEdge => "keepout-edge",
            Item::Outline => "outline",
            Item::TrackBottom => "track-bottom",
            Item::TrackTop => "track-top",
            Item::Via => "via",
            Item::Courtyard => "courtyard",
            Item::CourtyardLocked => "courtyard-locked",
            Item::Body => "body",
            Item::PadBottom => "pad-bottom",
            Item::PadTop => "pad-top",
            Item::Hole => "drill",
            Item::CourtyardEdge => "courtyard-edge",
            Item::CourtyardLockedEdge => "courtyard-locked-edge",
            Item::Hovered => "hovered",
            Item::Conflict => "conflict",
            Item::Selected => "selected",
            Item::Unrouted => "unrouted",
            Item::Highlight => "highlight",
            Item::Reference => "reference",
        }
    }
}

/// Something that draws in board millimetres. Each shape comes with the [`Item`] it
/// shows and the colour to draw it in. Widths of lines are in pixels unless said.
pub trait Pen {
    /// Pixels per millimetre.
    fn scale(&self) -> f64;
    /// Whether anything inside this board rectangle can be seen.
    fn visible(&self, r: &Rect) -> bool;
    fn fill_rect(&mut self, item: Item, r: &Rect, c: Colour);
    fn stroke_rect(&mut self, item: Item, r: &Rect, width_px: f32, c: Colour);
    /// A straight line `width_px` wide.
    fn line(&mut self, item: Item, a: Point, b: Point, width_px: f32, c: Colour);
    fn fill_circle(&mut self, item: Item, centre: Point, radius_mm: f64, c: Colour);
    /// A simple polygon (concave allowed).
    fn fill_polygon(&mut self, item: Item, pts: &[Point], c: Colour);
    /// Text centred on `at`, `height_px` tall.
    fn text(&mut self, item: Item, at: Point, height_px: f32, c: Colour, s: &str);
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
    st: &BoardFacts,
    g: &SceneGeometry,
    pal: &Palette,
    m: &Marks,
) {
    let s = pen.scale() as f32;
    pen.fill_polygon(Item::Board, &st.outline, pal.board);
    for k in &st.keepouts {
        pen.fill_polygon(Item::Keepout, k, pal.keepout_fill);
        outline(pen, Item::KeepoutEdge, k, 1.5, pal.keepout_edge);
    }
    outline(pen, Item::Outline, &st.outline, 2.0, pal.outline);

    // Routed copper, bottom layer first.
    let copper = &design.board.copper;
    for layer in [Layer::Bottom, Layer::Top] {
        let (item, c) = if layer == Layer::Top {
            (Item::TrackTop, pal.track_top)
        } else {
            (Item::TrackBottom, pal.track_bottom)
        };
        for t in copper.tracks.iter().filter(|t| t.layer == layer) {
            let w = (t.width as f32 * s).max(1.0);
            // Round joints and ends only where they can be seen.
            let round = w >= 2.5;
            for seg in t.points.windows(2) {
                pen.line(item, seg[0], seg[1], w, c);
                if round {
                    pen.fill_circle(item, seg[1], t.width / 2.0, c);
                }
            }
            if let Some(p) = t.points.first().filter(|_| round) {
                pen.fill_circle(item, *p, t.width / 2.0, c);
            }
        }
    }
    for v in &copper.vias {
        pen.fill_circle(Item::Via, v.at, v.diameter / 2.0, pal.via);
        pen.fill_circle(Item::Hole, v.at, v.drill / 2.0, pal.drill);
    }

    for (i, p) in g.parts.iter().enumerate() {
        if !pen.visible(&p.court) {
            continue;
        }
        let i = i as u32;
        let (edge_item, edge, w) = if Some(i) == m.selected {
            (Item::Selected, pal.selected, 2.5)
        } else if p.conflicts != 0 {
            (Item::Conflict, pal.conflict, 2.0)
        } else if Some(i) == m.hovered_part {
            (Item::Hovered, pal.hovered, 1.5)
        } else if p.locked {
            (Item::CourtyardLockedEdge, pal.locked_edge, 1.5)
        } else {
            (Item::CourtyardEdge, pal.courtyard, 1.0)
        };
        // A part only a few pixels across is drawn as one block in its edge colour: an
        // outline costs eight triangles, and a software renderer pays for each.
        if p.court.width().min(p.court.height()) * pen.scale() < 8.0 {
            pen.fill_rect(edge_item, &p.court, edge.faded(0.55));
            continue;
        }
        let (fill_item, fill) = if p.locked {
            (Item::CourtyardLocked, pal.locked_fill)
        } else {
            (Item::Courtyard, pal.courtyard_fill)
        };
        pen.fill_rect(fill_item, &p.court, fill);
        // Zoomed far out, pads and bodies would be specks: skip them (fewer triangles).
        let detail = p.court.width().min(p.court.height()) * pen.scale() >= 8.0;
        if detail {
            pen.stroke_rect(Item::Body, &p.body, 1.0, pal.body);
        }
        let pad_side = if p.side == Side::Top {
            (Item::PadTop, pal.pad_top)
        } else {
            (Item::PadBottom, pal.pad_bottom)
        };
        for pad in p.pads.iter().filter(|_| detail) {
            let (item, c) = if m.net.is_some() && pad.net == m.net {
                (Item::Highlight, pal.highlight)
            } else {
                pad_side
            };
            match pad.shape {
                PadShape::Circle => pen.fill_circle(
                    item,
                    pad.rect.center(),
                    pad.rect.width().min(pad.rect.height()) / 2.0,
                    c,
                ),
                _ => pen.fill_rect(item, &pad.rect, c),
            }
            if let Some(d) = pad.drill {
                pen.fill_circle(Item::Hole, pad.rect.center(), d / 2.0, pal.drill);
            }
        }
        pen.stroke_rect(edge_item, &p.court, w, edge);
        if p.conflicts != 0 && Some(i) == m.selected {
            pen.stroke_rect(
                Item::Conflict,
                &p.court.inflate(2.5 / pen.scale()),
                1.5,
                pal.conflict,
            );
        }
    }

    for u in &g.unrouted {
        let hi = Some(u.net) == m.net;
        let (item, c, w) = if hi {
            (Item::Highlight, pal.highlight, 2.0)
        } else {
            (Item::Unrouted, pal.unrouted, 1.0)
        };
        pen.line(item, u.a, u.b, w, c);
    }

    if m.labels {
        for (p, part) in g.parts.iter().zip(&design.board.parts) {
            let w_px = p.court.width() as f32 * s;
            let h_px = p.court.height() as f32 * s;
            let size = (h_px * 0.45)
                .min(w_px / (0.62 * part.reference.len().max(1) as f32))
                .min(18.0);
            if size >= 7.0 && pen.visible(&p.court) {
                pen.text(
                    Item::Reference,
                    p.court.center(),
                    size,
                    pal.label,
                    &part.reference,
                );
            }
        }
    }
}

fn outline(pen: &mut dyn Pen, item: Item, pts: &[Point], w: f32, c: Colour) {
    for i in 0..pts.len() {
        pen.line(item, pts[i], pts[(i + 1) % pts.len()], w, c);
    }
}

/// Triangles of a simple polygon by ear clipping (O(n^2), outlines have few vertices), as
/// index triples. Degenerate input gives fewer triangles, never a panic.
pub fn triangulate(pts: &[Point]) -> Vec<[usize; 3]> {
    let n = pts.len();
    if n < 3 {
        return Vec::new();
    }
    let area = crate::model::geom::signed_area(pts);
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
                .map(|t| crate::model::geom::signed_area(&[pts[t[0]], pts[t[1]], pts[t[2]]]).abs())
                .sum();
            assert!((area - 3.0).abs() < 1e-12);
        }
        assert!(triangulate(&l[..2]).is_empty());
    }

    #[test]
    fn hit_tests_find_parts_and_nets() {
        let design = crate::model::resolve(crate::place::generate::grid_board(3, 2.54, 1)).unwrap();
        let st = BoardFacts::new(&design);
        let g = SceneGeometry::build(&design, &st, None, None);
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
