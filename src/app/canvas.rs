//! The board canvas: pan (drag empty space, or drag with the middle or right button), zoom
//! around the cursor (wheel), fit to the board; hover to see a part or a net, click to
//! select a part and highlight the net under the cursor, drag a part to move it.

use egui::{Color32, Mesh, Pos2, Sense, Shape, Vec2, pos2};

use lehr_engine::drawing::raster;
use lehr_engine::drawing::scene::triangulate;
use lehr_engine::drawing::{BoardFacts, Colour, Item, Marks, Palette, Pen, SceneGeometry};
use lehr_engine::model::{Design, Point, Quarter, Rect};

use super::Action;
use super::undo::PartState;

/// The colour as egui takes it (both are premultiplied sRGB, byte for byte).
pub fn color32(c: Colour) -> Color32 {
    let [r, g, b, a] = c.to_premultiplied();
    Color32::from_rgba_premultiplied(r, g, b, a)
}

/// A part being dragged by hand.
#[derive(Clone, Copy, Debug)]
struct Drag {
    part: u32,
    /// Part origin minus the pointer's board position when the drag began.
    grab: Point,
    at: Point,
    quarter: Quarter,
    before: PartState,
}

/// The canvas panel's own state: the view and what is selected.
#[derive(Debug)]
pub struct Canvas {
    /// Board point at the centre of the view.
    center: Point,
    /// Pixels per millimetre.
    scale: f64,
    fit_pending: bool,
    pub selected: Option<u32>,
    /// The highlighted net.
    pub net: Option<u32>,
    hovered_part: Option<u32>,
    drag: Option<Drag>,
    pub labels: bool,
    /// The view of the last frame (tests point at parts through it).
    last_view: Option<View>,
    /// The canvas's size on screen in the last frame.
    last_size: Option<Vec2>,
    /// The canvas's place on screen in the last frame.
    last_rect: Option<egui::Rect>,
    /// A place singled out (a broken rule): a ring is drawn around it, and around the
    /// courtyards of these parts.
    pub marker: Option<(Point, Vec<u32>)>,
    /// Paint the background (not needed when the window is cleared to its colour: one
    /// full-canvas fill less for a software renderer).
    pub paint_background: bool,
    /// Boards of at least this many parts are drawn into a cached picture (see
    /// [`Picture`]); smaller ones as a vector mesh every frame. `usize::MAX`: never.
    pub picture_parts: usize,
    picture: Option<Picture>,
}

/// Boards from this many parts up are drawn as a cached picture by default (see
/// docs/performance.md, GUI, third round).
pub const PICTURE_PARTS: usize = 300;

/// The board drawn once with tiny-skia into a texture and shown as one textured
/// rectangle until the board, the view or the marks change: a software OpenGL renderer
/// pays for each triangle, and a large board's mesh has tens of thousands.
struct Picture {
    texture: egui::TextureHandle,
    key: PictureKey,
    pixmap: tiny_skia::Pixmap,
    /// Part references, set with egui's fonts over the picture.
    labels: Vec<raster::Label>,
    /// How many times it was drawn (tests).
    renders: u64,
}

impl std::fmt::Debug for Picture {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Picture")
            .field("key", &self.key)
            .field("renders", &self.renders)
            .finish_non_exhaustive()
    }
}

/// What the picture shows; a frame with another key draws it again.
#[derive(Clone, Copy, Debug, PartialEq)]
struct PictureKey {
    generation: u64,
    center: Point,
    scale: f64,
    pixels: [usize; 2],
    ppp: f32,
    marks: Marks,
    background: Colour,
    board: Colour,
}

impl Default for Canvas {
    fn default() -> Self {
        Canvas {
            center: Point::default(),
            scale: 10.0,
            fit_pending: true,
            selected: None,
            net: None,
            hovered_part: None,
            drag: None,
            labels: true,
            last_view: None,
            last_size: None,
            last_rect: None,
            marker: None,
            paint_background: true,
            picture_parts: PICTURE_PARTS,
            picture: None,
        }
    }
}

/// Maps board millimetres (y up) to screen points (y down).
#[derive(Clone, Copy, Debug)]
struct View {
    origin: Pos2,
    center: Point,
    scale: f64,
}

impl View {
    fn screen_from_board(&self, p: Point) -> Pos2 {
        pos2(
            self.origin.x + ((p.x - self.center.x) * self.scale) as f32,
            self.origin.y - ((p.y - self.center.y) * self.scale) as f32,
        )
    }

    fn board_from_screen(&self, p: Pos2) -> Point {
        Point::new(
            self.center.x + f64::from(p.x - self.origin.x) / self.scale,
            self.center.y - f64::from(p.y - self.origin.y) / self.scale,
        )
    }
}

impl Canvas {
    /// Fits the board into the view on the next frame.
    pub fn fit(&mut self) {
        self.fit_pending = true;
    }

    /// Forgets selection and hover (a new board).
    pub fn reset(&mut self) {
        *self = Canvas {
            labels: self.labels,
            paint_background: self.paint_background,
            picture_parts: self.picture_parts,
            ..Canvas::default()
        };
    }

    /// Centres the view on `at`, zoomed so that about `span` mm fit across, and marks
    /// it (with `parts`' courtyards).
    pub fn zoom_to(&mut self, at: Point, span: f64, parts: Vec<u32>) {
        let size = self.last_size.unwrap_or(Vec2::new(800.0, 600.0));
        self.fit_pending = false;
        self.center = at;
        self.scale = (f64::from(size.x.min(size.y)) / span.max(0.5)).clamp(0.05, 2000.0);
        self.marker = Some((at, parts));
    }

    /// The board point at the centre of the view.
    #[cfg(test)]
    pub fn center(&self) -> Point {
        self.center
    }

    /// Where a board point was on the screen in the last frame.
    #[cfg(test)]
    pub fn screen_from_board(&self, p: Point) -> Option<Pos2> {
        self.last_view.map(|v| v.screen_from_board(p))
    }

    /// Pixels per millimetre in the last frame.
    #[cfg(test)]
    pub fn scale(&self) -> f64 {
        self.scale
    }

    /// Where the canvas was on the screen in the last frame.
    #[cfg(test)]
    pub fn last_rect(&self) -> Option<egui::Rect> {
        self.last_rect
    }

    /// How many times the cached picture was drawn, and its size in pixels (none when
    /// the board is drawn as a mesh).
    #[cfg(test)]
    pub fn picture(&self) -> Option<(u64, [usize; 2])> {
        self.picture.as_ref().map(|p| (p.renders, p.texture.size()))
    }

    /// The colour of the cached picture at a screen point.
    #[cfg(test)]
    pub fn picture_pixel(&self, at: Pos2, ppp: f32) -> Option<Colour> {
        let p = self.picture.as_ref()?;
        let rect = self.last_rect?;
        let x = ((at.x - rect.min.x) * ppp) as u32;
        let y = ((at.y - rect.min.y) * ppp) as u32;
        let c = p.pixmap.pixel(x, y)?.demultiply();
        Some(Colour::rgba(c.red(), c.green(), c.blue(), c.alpha()))
    }

    /// Draws the board into the cached picture if what it shows changed, and returns the
    /// texture and its size in points (the labels stay in `self.picture`); `None` when
    /// the picture does not fit a texture.
    #[allow(clippy::too_many_arguments)]
    fn picture_for(
        &mut self,
        ctx: &egui::Context,
        rect: egui::Rect,
        view: &View,
        design: &Design,
        st: &BoardFacts,
        g: &SceneGeometry,
        pal: &Palette,
        marks: &Marks,
    ) -> Option<(egui::TextureId, Vec2)> {
        let ppp = ctx.pixels_per_point();
        let w = (rect.width() * ppp).round().max(0.0) as usize;
        let h = (rect.height() * ppp).round().max(0.0) as usize;
        let max_side = ctx.input(|i| i.max_texture_side);
        if w == 0 || h == 0 || w > max_side || h > max_side {
            return None;
        }
        let key = PictureKey {
            generation: g.generation,
            center: view.center,
            scale: view.scale,
            pixels: [w, h],
            ppp,
            marks: *marks,
            background: pal.background,
            board: pal.board,
        };
        let size = Vec2::new(w as f32 / ppp, h as f32 / ppp);
        if let Some(p) = &self.picture
            && p.key == key
        {
            return Some((p.texture.id(), size));
        }
        // The board area under the canvas: its top-left corner is the picture's pixel (0, 0).
        let a = view.board_from_screen(rect.min);
        let b = view.board_from_screen(rect.min + size);
        let area = Rect::bounding([a, b])?;
        let (mut pixmap, texture, renders) = match self.picture.take() {
            Some(p) if p.pixmap.width() as usize == w && p.pixmap.height() as usize == h => {
                (p.pixmap, Some(p.texture), p.renders)
            }
            old => (
                tiny_skia::Pixmap::new(w as u32, h as u32)?,
                old.as_ref().map(|p| p.texture.clone()),
                old.map_or(0, |p| p.renders),
            ),
        };
        let labels = raster::render_view(
            &mut pixmap,
            design,
            st,
            g,
            pal,
            marks,
            area,
            view.scale,
            ppp,
        );
        // Both are premultiplied RGBA, byte for byte.
        let image = egui::ColorImage::from_rgba_premultiplied([w, h], pixmap.data());
        let options = egui::TextureOptions::NEAREST;
        let texture = match texture {
            Some(mut t) => {
                t.set(image, options);
                t
            }
            None => ctx.load_texture("board picture", image, options),
        };
        let id = texture.id();
        self.picture = Some(Picture {
            texture,
            key,
            pixmap,
            labels,
            renders: renders + 1,
        });
        Some((id, size))
    }

    /// The part being dragged, where it is now and its turn.
    pub fn dragging(&self) -> Option<(u32, Point, Quarter)> {
        self.drag.map(|d| (d.part, d.at, d.quarter))
    }

    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        design: &Design,
        st: &BoardFacts,
        g: &SceneGeometry,
        pal: &Palette,
        actions: &mut Vec<Action>,
    ) {
        let (response, painter) = ui.allocate_painter(ui.available_size(), Sense::click_and_drag());
        let rect = response.rect;
        self.last_size = Some(rect.size());
        self.last_rect = Some(rect);
        if self.fit_pending && rect.width() > 10.0 && rect.height() > 10.0 {
            let b = g.bounds.inflate(1.0);
            self.center = b.center();
            self.scale = (f64::from(rect.width()) / b.width().max(1.0))
                .min(f64::from(rect.height()) / b.height().max(1.0))
                * 0.95;
            self.fit_pending = false;
        }
        let mut view = View {
            origin: rect.center(),
            center: self.center,
            scale: self.scale,
        };

        // Zoom around the cursor.
        if let Some(hover) = response.hover_pos() {
            let (scroll, zoom) = ui.input(|i| (i.smooth_scroll_delta().y, i.zoom_delta()));
            let factor = f64::from(zoom) * (f64::from(scroll) * 0.002).exp();
            if (factor - 1.0).abs() > 1e-6 {
                let p = view.board_from_screen(hover);
                let new_scale = (self.scale * factor).clamp(0.05, 2000.0);
                let k = self.scale / new_scale;
                self.center = Point::new(
                    p.x - (p.x - self.center.x) * k,
                    p.y - (p.y - self.center.y) * k,
                );
                self.scale = new_scale;
                view.center = self.center;
                view.scale = self.scale;
            }
        }

        let pointer = response.hover_pos().or(response.interact_pointer_pos());
        let pointer_board = pointer.map(|p| view.board_from_screen(p));
        let tol = 4.0 / self.scale;
        self.hovered_part = pointer_board.and_then(|p| g.part_at(p));
        let hovered_net = pointer_board.and_then(|p| g.net_at(p, tol));

        // Dragging: a part (primary button on an unlocked part) or the view.
        if response.drag_started_by(egui::PointerButton::Primary)
            && let (Some(i), Some(pb)) = (self.hovered_part, pointer_board)
            && let Some(pg) = g.parts.get(i as usize)
            && !pg.locked
        {
            self.selected = Some(i);
            self.drag = Some(Drag {
                part: i,
                grab: pg.at.sub(pb),
                at: pg.at,
                quarter: pg.quarter,
                before: PartState {
                    at: pg.at,
                    quarter: pg.quarter,
                    locked: false,
                },
            });
        }
        if response.dragged() {
            match (&mut self.drag, pointer_board) {
                (Some(d), Some(pb)) => {
                    let grid = design.board.rules.placement_grid.max(1e-3);
                    let raw = pb.add(d.grab);
                    d.at = Point::new((raw.x / grid).round() * grid, (raw.y / grid).round() * grid);
                }
                _ => {
                    let dv = response.drag_delta();
                    self.center.x -= f64::from(dv.x) / self.scale;
                    self.center.y += f64::from(dv.y) / self.scale;
                    view.center = self.center;
                }
            }
        }
        if response.drag_stopped()
            && let Some(d) = self.drag.take()
        {
            actions.push(Action::MovePart {
                part: d.part,
                before: d.before,
                at: d.at,
                quarter: d.quarter,
            });
        }
        if response.clicked() {
            self.marker = None;
            self.selected = self.hovered_part;
            self.net = hovered_net;
        }
        if response.double_clicked() && self.hovered_part.is_none() {
            self.fit();
        }

        self.last_view = Some(view);
        // Paint.
        let marks = Marks {
            selected: self.selected,
            hovered_part: self.hovered_part,
            net: self
                .net
                .or(hovered_net.filter(|_| self.hovered_part.is_none())),
            labels: self.labels,
        };
        let picture = if g.parts.len() >= self.picture_parts {
            self.picture_for(ui.ctx(), rect, &view, design, st, g, pal, &marks)
        } else {
            self.picture = None;
            None
        };
        if let Some((texture, size)) = picture {
            painter.image(
                texture,
                egui::Rect::from_min_size(rect.min, size),
                egui::Rect::from_min_max(pos2(0.0, 0.0), pos2(1.0, 1.0)),
                Color32::WHITE,
            );
            if let Some(p) = &self.picture {
                for (at, size, c, s) in &p.labels {
                    label(&painter, view.screen_from_board(*at), *size, color32(*c), s);
                }
            }
        } else {
            if self.paint_background {
                painter.rect_filled(rect, 0.0, color32(pal.background));
            }
            let mut pen = EguiPen {
                view,
                clip: rect,
                mesh: Mesh::default(),
                texts: Vec::new(),
            };
            lehr_engine::drawing::draw(&mut pen, design, st, g, pal, &marks);
            painter.add(Shape::mesh(pen.mesh));
            for (at, size, c, s) in &pen.texts {
                label(&painter, *at, *size, *c, s);
            }
        }
        if let Some((at, parts)) = &self.marker {
            let stroke = egui::Stroke::new(2.5, color32(pal.selected));
            for &i in parts {
                if let Some(p) = g.parts.get(i as usize) {
                    let r = egui::Rect::from_two_pos(
                        view.screen_from_board(p.court.min),
                        view.screen_from_board(p.court.max),
                    )
                    .expand(3.0);
                    painter.rect_stroke(r, 2.0, stroke, egui::StrokeKind::Outside);
                }
            }
            let c = view.screen_from_board(*at);
            painter.circle_stroke(c, 14.0, stroke);
            painter.circle_stroke(c, 15.5, egui::Stroke::new(1.0, color32(pal.background)));
            for d in [Vec2::X, Vec2::Y] {
                painter.line_segment([c - d * 22.0, c - d * 8.0], stroke);
                painter.line_segment([c + d * 8.0, c + d * 22.0], stroke);
            }
        }

        // What is under the cursor.
        let tip = if let Some(i) = self.hovered_part {
            let part = &design.board.parts[i as usize];
            let pg = &g.parts[i as usize];
            let mut t = format!(
                "{} {} {}",
                part.reference, design.footprints[i as usize].name, part.value
            );
            if pg.locked {
                t.push_str("  (locked)");
            }
            for (bit, what) in [
                (
                    lehr_engine::worker::CONFLICT_OVERLAP,
                    "overlaps another part",
                ),
                (lehr_engine::worker::CONFLICT_OUTSIDE, "outside the board"),
                (lehr_engine::worker::CONFLICT_KEEPOUT, "in a keep-out"),
            ] {
                if pg.conflicts & bit != 0 {
                    t.push('\n');
                    t.push_str(what);
                }
            }
            Some(t)
        } else {
            hovered_net.map(|n| {
                let net = &design.board.nets[n as usize];
                format!(
                    "net {} ({} pins)",
                    net.name,
                    design.net_pins[n as usize].len()
                )
            })
        };
        if let (Some(t), true) = (tip, self.drag.is_none()) {
            response.on_hover_text_at_pointer(t);
        }
    }
}

/// The window's pen: draws into one egui mesh (fast for thousands of rectangles) plus
/// text shapes.
struct EguiPen {
    view: View,
    clip: egui::Rect,
    mesh: Mesh,
    texts: Vec<(Pos2, f32, Color32, String)>,
}

impl EguiPen {
    fn quad(&mut self, p: [Pos2; 4], c: Color32) {
        let i = self.mesh.vertices.len() as u32;
        for v in p {
            self.mesh.colored_vertex(v, c);
        }
        self.mesh.add_triangle(i, i + 1, i + 2);
        self.mesh.add_triangle(i, i + 2, i + 3);
    }

    fn seg(&mut self, a: Pos2, b: Pos2, w: f32, c: Color32) {
        let d = b - a;
        let len = d.length();
        if len < 1e-3 {
            return;
        }
        let n = Vec2::new(-d.y, d.x) / len * (w / 2.0);
        self.quad([a + n, b + n, b - n, a - n], c);
    }
}

impl Pen for EguiPen {
    fn scale(&self) -> f64 {
        self.view.scale
    }

    fn visible(&self, r: &Rect) -> bool {
        let a = self.view.screen_from_board(r.min);
        let b = self.view.screen_from_board(r.max);
        egui::Rect::from_two_pos(a, b).intersects(self.clip)
    }

    fn fill_rect(&mut self, _: Item, r: &Rect, c: Colour) {
        let c = color32(c);
        let a = self.view.screen_from_board(r.min);
        let b = self.view.screen_from_board(r.max);
        self.mesh
            .add_colored_rect(egui::Rect::from_two_pos(a, b), c);
    }

    fn stroke_rect(&mut self, _: Item, r: &Rect, w: f32, c: Colour) {
        let c = color32(c);
        let rr = egui::Rect::from_two_pos(
            self.view.screen_from_board(r.min),
            self.view.screen_from_board(r.max),
        );
        let h = w / 2.0;
        let (l, t, rt, bt) = (rr.left(), rr.top(), rr.right(), rr.bottom());
        self.mesh.add_colored_rect(
            egui::Rect::from_min_max(pos2(l - h, t - h), pos2(rt + h, t + h)),
            c,
        );
        self.mesh.add_colored_rect(
            egui::Rect::from_min_max(pos2(l - h, bt - h), pos2(rt + h, bt + h)),
            c,
        );
        self.mesh.add_colored_rect(
            egui::Rect::from_min_max(pos2(l - h, t + h), pos2(l + h, bt - h)),
            c,
        );
        self.mesh.add_colored_rect(
            egui::Rect::from_min_max(pos2(rt - h, t + h), pos2(rt + h, bt - h)),
            c,
        );
    }

    fn line(&mut self, _: Item, a: Point, b: Point, w: f32, c: Colour) {
        let c = color32(c);
        let (a, b) = (
            self.view.screen_from_board(a),
            self.view.screen_from_board(b),
        );
        self.seg(a, b, w, c);
    }

    fn fill_circle(&mut self, _: Item, centre: Point, r: f64, c: Colour) {
        let c = color32(c);
        let o = self.view.screen_from_board(centre);
        let rp = (r * self.view.scale) as f32;
        let k = if rp < 3.0 { 8 } else { 20 };
        let i0 = self.mesh.vertices.len() as u32;
        self.mesh.colored_vertex(o, c);
        for j in 0..k {
            let t = j as f32 / k as f32 * std::f32::consts::TAU;
            self.mesh
                .colored_vertex(o + Vec2::new(t.cos(), t.sin()) * rp, c);
        }
        for j in 0..k {
            self.mesh.add_triangle(i0, i0 + 1 + j, i0 + 1 + (j + 1) % k);
        }
    }

    fn fill_polygon(&mut self, _: Item, pts: &[Point], c: Colour) {
        let c = color32(c);
        let i0 = self.mesh.vertices.len() as u32;
        for p in pts {
            let s = self.view.screen_from_board(*p);
            self.mesh.colored_vertex(s, c);
        }
        for t in triangulate(pts) {
            self.mesh
                .add_triangle(i0 + t[0] as u32, i0 + t[1] as u32, i0 + t[2] as u32);
        }
    }

    fn text(&mut self, _: Item, at: Point, h: f32, c: Colour, s: &str) {
        let c = color32(c);
        let p = self.view.screen_from_board(at);
        self.texts.push((p, h, c, s.to_string()));
    }
}

/// A part reference centred on `at`, in egui's monospace font (over the mesh or the
/// cached picture alike).
fn label(painter: &egui::Painter, at: Pos2, size: f32, c: Color32, s: &str) {
    painter.text(
        at,
        egui::Align2::CENTER_CENTER,
        s,
        egui::FontId::monospace(size),
        c,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn board_and_screen_points_round_trip() {
        let v = View {
            origin: pos2(400.0, 300.0),
            center: Point::new(10.0, 5.0),
            scale: 8.0,
        };
        let p = Point::new(12.5, 3.0);
        let s = v.screen_from_board(p);
        // Board y grows upward, screen y downward.
        assert_eq!(s, pos2(420.0, 316.0));
        let back = v.board_from_screen(s);
        assert!((back.x - p.x).abs() < 1e-9 && (back.y - p.y).abs() < 1e-9);
    }
}
