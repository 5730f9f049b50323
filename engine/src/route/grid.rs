//! The routing grid and what never moves on it: pads, keep-outs and the board edge.
//!
//! Tracks run along the lines of a square grid of pitch `routing_grid`, from grid point to
//! grid point; vias sit on grid points. For every class of net the grid stores, per layer,
//! whether each unit step (east, north, and the two diagonals when enabled) is free, and
//! per grid point whether a via is free. A step is free when the track along it, with the
//! class's width, clears every fixed obstacle by the larger of the two clearances: the
//! test is exact ([`crate::rules::geometry`]), not a rasterisation, so what the router
//! allows the design-rule checker accepts.
//!
//! A blocked entry records who blocks it: one net (whose own tracks may pass, as they may
//! cross their own pads) or everyone.
//!
//! Pins are entered at one grid point each, chosen next to the pad centre, joined to the
//! centre by a short stub track. Stubs are fixed copper like pads, so other nets keep clear
//! of them too.

use super::search::Dims;
use crate::model::{Point, Rect};
use crate::rules::geometry::{Buckets, LayerSet, Prim, edges};

/// A blocker entry: nothing blocks.
pub(crate) const FREE: u32 = u32::MAX;
/// A blocker entry: blocked for every net.
pub(crate) const WALL: u32 = u32::MAX - 1;
/// A gap this much below its need still counts as clear: far below the checker's own
/// tolerance, so rounding can never turn a routed track into a violation.
pub(crate) const SLACK: f64 = 1e-9;
/// Pins are entered at grid points within this many grid pitches of their pad.
const ACCESS_REACH: f64 = 2.0;

/// Edge kinds stored per grid point, each from the point to a neighbour.
pub(crate) const EAST: usize = 0;
pub(crate) const NORTH: usize = 1;
/// From (x, y) to (x + 1, y + 1).
pub(crate) const NORTH_EAST: usize = 2;
/// From (x + 1, y) to (x, y + 1): indexed by the lower-left point (x, y).
pub(crate) const NORTH_WEST: usize = 3;

#[inline]
pub(crate) fn merge(slot: &mut u32, owner: u32) {
    *slot = if *slot == FREE || *slot == owner {
        owner
    } else {
        WALL
    };
}

#[inline]
pub(crate) fn free_for(slot: u32, net: u32) -> bool {
    slot == FREE || slot == net
}

/// Where the grid lies on the board.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Lattice {
    pub origin: Point,
    pub pitch: f64,
    pub dims: Dims,
}

impl Lattice {
    /// The grid over `area`, its points on whole multiples of `pitch`.
    pub fn over(area: Rect, pitch: f64) -> Lattice {
        let x0 = (area.min.x / pitch).ceil() * pitch;
        let y0 = (area.min.y / pitch).ceil() * pitch;
        let w = ((area.max.x - x0) / pitch + 1e-9).floor().max(0.0) as usize + 1;
        let h = ((area.max.y - y0) / pitch + 1e-9).floor().max(0.0) as usize + 1;
        Lattice {
            origin: Point::new(x0, y0),
            pitch,
            dims: Dims { w, h, layers: 2 },
        }
    }

    #[inline]
    pub fn point(&self, x: usize, y: usize) -> Point {
        Point::new(
            self.origin.x + x as f64 * self.pitch,
            self.origin.y + y as f64 * self.pitch,
        )
    }

    /// Position of a node (any layer).
    pub fn node_point(&self, n: u32) -> Point {
        let (x, y, _) = self.dims.xyl(n);
        self.point(x, y)
    }

    /// The inclusive index ranges of grid points inside `r`, or `None` if none are.
    pub fn range(&self, r: &Rect) -> Option<(usize, usize, usize, usize)> {
        let lo = |v: f64, o: f64| ((v - o) / self.pitch).ceil().max(0.0);
        let hi = |v: f64, o: f64, n: usize| ((v - o) / self.pitch).floor().min(n as f64 - 1.0);
        let (x0, x1) = (
            lo(r.min.x, self.origin.x),
            hi(r.max.x, self.origin.x, self.dims.w),
        );
        let (y0, y1) = (
            lo(r.min.y, self.origin.y),
            hi(r.max.y, self.origin.y, self.dims.h),
        );
        (x0 <= x1 && y0 <= y1).then_some((x0 as usize, x1 as usize, y0 as usize, y1 as usize))
    }

    /// The segment an edge kind covers from grid point (x, y), if it stays on the grid.
    #[inline]
    pub fn edge_segment(&self, x: usize, y: usize, kind: usize) -> Option<(Point, Point)> {
        let Dims { w, h, .. } = self.dims;
        let right = x + 1 < w;
        let up = y + 1 < h;
        match kind {
            EAST if right => Some((self.point(x, y), self.point(x + 1, y))),
            NORTH if up => Some((self.point(x, y), self.point(x, y + 1))),
            NORTH_EAST if right && up => Some((self.point(x, y), self.point(x + 1, y + 1))),
            NORTH_WEST if right && up => Some((self.point(x + 1, y), self.point(x, y + 1))),
            _ => None,
        }
    }
}

/// Which stored edge a step from (x, y) in direction `dir` uses, and at which point.
#[inline]
pub(crate) fn edge_of_step(w: usize, x: usize, y: usize, dir: usize) -> (usize, usize) {
    let i = y * w + x;
    match dir {
        0 => (EAST, i),
        1 => (NORTH, i),
        2 => (EAST, i - 1),
        3 => (NORTH, i - w),
        4 => (NORTH_EAST, i),
        5 => (NORTH_WEST, i - 1),
        6 => (NORTH_EAST, i - w - 1),
        _ => (NORTH_WEST, i - w),
    }
}

/// Track width and clearance of one class of nets.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct ClassRule {
    pub width: f64,
    pub clearance: f64,
}

impl ClassRule {
    pub fn half_width(&self) -> f64 {
        self.width / 2.0
    }
}

/// Fixed copper (a pad or a stub) or a hole, with its owner: a net index, or [`WALL`].
#[derive(Clone, Copy, Debug)]
pub(crate) struct Obstacle {
    pub prim: Prim,
    pub layers: LayerSet,
    pub owner: u32,
    /// The owner's clearance (the rules' default for pads of no net).
    pub clearance: f64,
    /// An SMD pad: no via may overlap it, not even one of its own net (solder would run
    /// down the hole).
    pub smd_pad: bool,
}

/// The fixed blockers of the grid, per class of nets (only for classes that route).
#[derive(Debug)]
pub(crate) struct StaticMaps {
    /// `edges[class][layer][kind][point]`.
    pub edges: Vec<Option<[[Vec<u32>; 4]; 2]>>,
    /// `vias[class][point]`: a via there would clear everything on both layers.
    pub vias: Vec<Option<Vec<u32>>>,
}

/// Fills [`StaticMaps`].
pub(crate) struct MapBuilder<'a> {
    pub lat: &'a Lattice,
    pub classes: &'a [ClassRule],
    pub used: &'a [bool],
    pub via_radius: f64,
    pub diagonal: bool,
    /// Keep vias off SMD pads (see [`Obstacle::smd_pad`]).
    pub no_vias_in_pads: bool,
    pub maps: StaticMaps,
}

impl<'a> MapBuilder<'a> {
    pub fn new(
        lat: &'a Lattice,
        classes: &'a [ClassRule],
        used: &'a [bool],
        via_radius: f64,
        diagonal: bool,
        no_vias_in_pads: bool,
    ) -> Self {
        let plane = lat.dims.plane();
        let kinds = if diagonal { 4 } else { 2 };
        let edges = used
            .iter()
            .map(|&u| {
                u.then(|| {
                    std::array::from_fn(|_| {
                        std::array::from_fn(|k| {
                            if k < kinds {
                                vec![FREE; plane]
                            } else {
                                Vec::new()
                            }
                        })
                    })
                })
            })
            .collect();
        let vias = used.iter().map(|&u| u.then(|| vec![FREE; plane])).collect();
        MapBuilder {
            lat,
            classes,
            used,
            via_radius,
            diagonal,
            no_vias_in_pads,
            maps: StaticMaps { edges, vias },
        }
    }

    fn kinds(&self) -> usize {
        if self.diagonal { 4 } else { 2 }
    }

    fn used_classes(&self) -> impl Iterator<Item = (usize, ClassRule)> + '_ {
        self.classes
            .iter()
            .enumerate()
            .filter(|(c, _)| self.used[*c])
            .map(|(c, r)| (c, *r))
    }

    /// Blocks what would come too close to a pad, stub or hole.
    pub fn add_copper(&mut self, o: &Obstacle) {
        let reach = self
            .used_classes()
            .map(|(_, r)| r.half_width().max(self.via_radius) + r.clearance.max(o.clearance))
            .fold(0.0, f64::max)
            + self.lat.pitch;
        let Some((x0, x1, y0, y1)) = self.lat.range(&o.prim.bounds().inflate(reach)) else {
            return;
        };
        let w = self.lat.dims.w;
        let kinds = self.kinds();
        let layers: Vec<usize> = [0, 1]
            .into_iter()
            .filter(|&l| o.layers.0 & (1 << l) != 0)
            .collect();
        for y in y0..=y1 {
            for x in x0..=x1 {
                let i = y * w + x;
                let d = o.prim.gap_to_point(self.lat.point(x, y));
                for c in 0..self.classes.len() {
                    if !self.used[c] {
                        continue;
                    }
                    let need = self.via_radius + self.classes[c].clearance.max(o.clearance);
                    let slot = &mut self.maps.vias[c].as_mut().expect("used class")[i];
                    if o.smd_pad && self.no_vias_in_pads && d < self.via_radius - SLACK {
                        *slot = WALL;
                    } else if d < need - SLACK {
                        merge(slot, o.owner);
                    }
                }
                for k in 0..kinds {
                    let Some((a, b)) = self.lat.edge_segment(x, y, k) else {
                        continue;
                    };
                    let dk = o.prim.gap_to_segment(a, b).0;
                    for c in 0..self.classes.len() {
                        if !self.used[c] {
                            continue;
                        }
                        let r = self.classes[c];
                        if dk < r.half_width() + r.clearance.max(o.clearance) - SLACK {
                            let maps = self.maps.edges[c].as_mut().expect("used class");
                            for &l in &layers {
                                merge(&mut maps[l][k][i], o.owner);
                            }
                        }
                    }
                }
            }
        }
    }

    /// Blocks a region for everyone: outside `poly` when `keep_inside` (the board edge),
    /// inside it otherwise (a keep-out), and within `gap(class)` of its boundary (the
    /// track's or via's own radius is added here).
    pub fn add_region(
        &mut self,
        poly: &[Point],
        layers: LayerSet,
        keep_inside: bool,
        gap: impl Fn(ClassRule) -> f64,
    ) {
        let Dims { w, h, .. } = self.lat.dims;
        let kinds = self.kinds();
        let gaps: Vec<Option<f64>> = self
            .classes
            .iter()
            .enumerate()
            .map(|(c, r)| self.used[c].then(|| gap(*r)))
            .collect();
        let max_need = gaps
            .iter()
            .zip(self.classes)
            .filter_map(|(g, r)| g.map(|g| g + r.half_width().max(self.via_radius)))
            .fold(0.0, f64::max);
        let layer_list: Vec<usize> = [0, 1]
            .into_iter()
            .filter(|&l| layers.0 & (1 << l) != 0)
            .collect();

        // Grid points on the wrong side, row by row (even-odd rule).
        let bounds = Rect::bounding(poly.iter().copied()).unwrap_or_default();
        let (rx0, rx1, ry0, ry1) = if keep_inside {
            (0, w - 1, 0, h - 1)
        } else {
            self.lat.range(&bounds).unwrap_or((1, 0, 1, 0))
        };
        let mut xs = Vec::new();
        for y in ry0..=ry1.min(h - 1) {
            if rx0 > rx1 {
                break;
            }
            let py = self.lat.point(0, y).y;
            xs.clear();
            for (a, b) in edges(poly) {
                if (a.y > py) != (b.y > py) {
                    xs.push(a.x + (py - a.y) * (b.x - a.x) / (b.y - a.y));
                }
            }
            for x in rx0..=rx1 {
                let px = self.lat.point(x, y).x;
                let inside = xs.iter().filter(|&&cx| px < cx).count() % 2 == 1;
                if inside != keep_inside {
                    self.block_point(x, y, &layer_list);
                }
            }
        }

        // Near the boundary.
        for (a, b) in edges(poly) {
            let seg = Prim::Seg { a, b, r: 0.0 };
            let area = seg.bounds().inflate(max_need + self.lat.pitch);
            let Some((x0, x1, y0, y1)) = self.lat.range(&area) else {
                continue;
            };
            for y in y0..=y1 {
                for x in x0..=x1 {
                    let i = y * w + x;
                    let d = seg.gap_to_point(self.lat.point(x, y));
                    for (c, g) in gaps.iter().enumerate() {
                        let Some(g) = *g else { continue };
                        if d < self.via_radius + g - SLACK {
                            self.maps.vias[c].as_mut().expect("used class")[i] = WALL;
                        }
                    }
                    for k in 0..kinds {
                        let Some((p, q)) = self.lat.edge_segment(x, y, k) else {
                            continue;
                        };
                        let dk = seg.gap_to_segment(p, q).0;
                        for (c, g) in gaps.iter().enumerate() {
                            let Some(g) = *g else { continue };
                            if dk < self.classes[c].half_width() + g - SLACK {
                                let maps = self.maps.edges[c].as_mut().expect("used class");
                                for &l in &layer_list {
                                    maps[l][k][i] = WALL;
                                }
                            }
                        }
                    }
                }
            }
        }
    }

    /// Blocks a grid point for vias and every edge that touches it, on `layers`.
    fn block_point(&mut self, x: usize, y: usize, layers: &[usize]) {
        let w = self.lat.dims.w;
        let i = y * w + x;
        // Edges stored at neighbours that end at (x, y).
        let mut touching = vec![(EAST, i), (NORTH, i)];
        if x > 0 {
            touching.push((EAST, i - 1));
        }
        if y > 0 {
            touching.push((NORTH, i - w));
        }
        if self.diagonal {
            touching.push((NORTH_EAST, i));
            if x > 0 && y > 0 {
                touching.push((NORTH_EAST, i - w - 1));
            }
            if x > 0 {
                touching.push((NORTH_WEST, i - 1)); // from (x, y) up-left
            }
            if y > 0 {
                touching.push((NORTH_WEST, i - w)); // from (x + 1, y - 1) to (x, y)
            }
        }
        for c in 0..self.classes.len() {
            if !self.used[c] {
                continue;
            }
            self.maps.vias[c].as_mut().expect("used class")[i] = WALL;
            let maps = self.maps.edges[c].as_mut().expect("used class");
            for &l in layers {
                for &(k, j) in &touching {
                    maps[l][k][j] = WALL;
                }
            }
        }
    }

    pub fn finish(self) -> StaticMaps {
        self.maps
    }
}

/// What a pin stub must keep clear of besides other copper.
pub(crate) struct Surroundings<'a> {
    pub outline: &'a crate::model::Shape,
    pub outline_vertices: &'a [Point],
    pub edge_clearance: f64,
    /// Copper keep-outs: vertices and layers.
    pub keepouts: &'a [(Vec<Point>, LayerSet)],
    pub max_clearance: f64,
}

/// The fixed copper (pads, holes and the stubs chosen so far) with a bucket index, and
/// what else stubs must clear.
pub(crate) struct Fixed<'a> {
    pub obstacles: Vec<Obstacle>,
    buckets: Buckets,
    around: Surroundings<'a>,
    near: Vec<u32>,
}

impl<'a> Fixed<'a> {
    pub fn new(obstacles: Vec<Obstacle>, area: Rect, around: Surroundings<'a>) -> Self {
        let mut buckets = Buckets::new(area, 2.0);
        for (i, o) in obstacles.iter().enumerate() {
            buckets.insert(i as u32, &o.prim.bounds());
        }
        Fixed {
            obstacles,
            buckets,
            around,
            near: Vec::new(),
        }
    }

    /// Adds fixed copper (a stub).
    pub fn add(&mut self, o: Obstacle) {
        self.buckets
            .insert(self.obstacles.len() as u32, &o.prim.bounds());
        self.obstacles.push(o);
    }

    /// Whether a track of `rule`'s width from `centre` to `p` on `layers`, belonging to
    /// `net`, clears the board edge, the keep-outs and other nets' fixed copper.
    pub fn stub_is_clear(
        &mut self,
        centre: Point,
        p: Point,
        layers: LayerSet,
        net: u32,
        rule: ClassRule,
    ) -> bool {
        let around = &self.around;
        let stub = Prim::track(centre, p, rule.width);
        if !around.outline.contains(centre) || !around.outline.contains(p) {
            return false;
        }
        if edges(around.outline_vertices)
            .any(|(a, b)| stub.gap_to_segment(a, b).0 < around.edge_clearance - SLACK)
        {
            return false;
        }
        for (poly, kl) in around.keepouts {
            if kl.meets(layers)
                && (crate::model::geom::point_in_polygon(p, poly)
                    || edges(poly)
                        .any(|(a, b)| stub.gap_to_segment(a, b).0 < rule.clearance - SLACK))
            {
                return false;
            }
        }
        self.buckets
            .query(&stub.bounds().inflate(around.max_clearance), &mut self.near);
        self.near.iter().all(|&j| {
            let o = &self.obstacles[j as usize];
            o.owner == net
                || !o.layers.meets(layers)
                || stub.gap(&o.prim).0 >= rule.clearance.max(o.clearance) - SLACK
        })
    }

    /// Whether a stub (a polyline from the pad centre) is clear, segment by segment
    /// ([`Fixed::stub_is_clear`]).
    pub fn polyline_is_clear(
        &mut self,
        points: &[Point],
        layers: LayerSet,
        net: u32,
        rule: ClassRule,
    ) -> bool {
        if points.len() == 1 {
            return self.stub_is_clear(points[0], points[0], layers, net, rule);
        }
        points
            .windows(2)
            .all(|w| self.stub_is_clear(w[0], w[1], layers, net, rule))
    }

    /// How a pin is entered: the stub, a polyline from the pad centre to a grid point, and
    /// that point's planar index. Candidates are the grid points near the pad, each reached
    /// straight or with one bend (first along x, or first along y, so an off-grid pad of a
    /// fine-pitch part leaves along its own axis and jogs onto the grid once clear of its
    /// neighbours); the shortest clear stub wins, ties broken by the point's index. A stub
    /// is clear when every segment is ([`Fixed::stub_is_clear`]) and a track can leave the
    /// grid point by at least one unit step.
    pub fn choose_access(
        &mut self,
        lat: &Lattice,
        pad: &Prim,
        centre: Point,
        layers: LayerSet,
        net: u32,
        rule: ClassRule,
    ) -> Option<(usize, Vec<Point>)> {
        let area = pad.bounds().inflate(ACCESS_REACH * lat.pitch);
        let (x0, x1, y0, y1) = lat.range(&area)?;
        let mut candidates: Vec<(f64, usize, u8, Point)> = Vec::new();
        for y in y0..=y1 {
            for x in x0..=x1 {
                let p = lat.point(x, y);
                let i = y * lat.dims.w + x;
                let (dx, dy) = ((p.x - centre.x).abs(), (p.y - centre.y).abs());
                candidates.push((crate::rules::geometry::dist(p, centre), i, 0, p));
                if dx > 1e-9 && dy > 1e-9 {
                    candidates.push((dx + dy, i, 1, p));
                    candidates.push((dx + dy, i, 2, p));
                }
            }
        }
        candidates.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
        let steps = [(1.0, 0.0), (0.0, 1.0), (-1.0, 0.0), (0.0, -1.0)];
        for (_, i, shape, p) in candidates {
            let stub = match shape {
                0 if p == centre => vec![centre],
                0 => vec![centre, p],
                1 => vec![centre, Point::new(p.x, centre.y), p],
                _ => vec![centre, Point::new(centre.x, p.y), p],
            };
            if !self.polyline_is_clear(&stub, layers, net, rule) {
                continue;
            }
            let exit = steps.iter().any(|&(sx, sy)| {
                let q = Point::new(p.x + sx * lat.pitch, p.y + sy * lat.pitch);
                lat.range(&Rect { min: q, max: q }).is_some()
                    && self.stub_is_clear(p, q, layers, net, rule)
            });
            if exit {
                return Some((i, stub));
            }
        }
        None
    }
}
