//! Tree growth per net and negotiated congestion across nets (McMurchie and Ebeling,
//! FPGA 1995), on the grid of [`super::grid`]; see the module documentation of
//! [`super`].
//!
//! Nets compete for space through "present" maps: for each class of net and layer, how
//! many grid points of other nets' copper lie too close to each grid point (a track of
//! class `a` and one of class `c` need their centres `w_a/2 + w_c/2 + max(clearance)`
//! apart; vias use their radius). A net's copper is the grid points of its paths (with
//! both side points of each diagonal step) and its vias. Two nets conflict when either
//! lies in the other's reach; on a grid with axis steps the closest points of two such
//! tracks are always grid points, so grid distance is copper distance.

use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Instant;

use super::grid::{
    ClassRule, Fixed, Lattice, MapBuilder, Obstacle, SLACK, StaticMaps, Surroundings, WALL,
    edge_of_step, free_for,
};
use super::search::{Costs, DIRS, Dims, Node, Params, Search};
use super::{
    MAX_GRID_POINTS, RouteError, RouteOptions, RoutePhase, RouteProgress, RouteResult, Unrouted,
};
use crate::model::board::{Board, Copper, Track, Via};
use crate::model::{Design, Layer, PartId, Point};
use crate::rules::geometry::{LayerSet, Prim, dist, placed_pad};

/// A pin of a net to route.
#[derive(Clone, Debug)]
struct Pin {
    name: String,
    centre: Point,
    /// The pad's copper.
    pad: Prim,
    layers: LayerSet,
    /// Planar index of the grid point the pin is entered at.
    access: usize,
    /// The stub: a polyline from the pad centre to the access point (just the centre
    /// when the centre is a grid point).
    stub: Vec<Point>,
}

/// A net to route.
#[derive(Clone, Debug)]
struct NetPlan {
    /// Index in the board's nets.
    index: usize,
    class: usize,
    pins: Vec<Pin>,
    /// Why the net cannot be routed at all, found before routing.
    problem: Option<String>,
}

/// A net's copper on the grid.
#[derive(Clone, Debug, Default)]
struct Routed {
    paths: Vec<Vec<u32>>,
    /// Grid points (with layer) the net's tracks occupy, diagonal side points included.
    claimed: Vec<u32>,
    /// Planar indices of vias.
    vias: Vec<usize>,
    /// Pins reached (same order as the plan's pins).
    connected: Vec<bool>,
    /// Why some pin was not reached.
    failure: Option<String>,
    committed: bool,
}

impl Routed {
    fn complete(&self) -> bool {
        !self.connected.is_empty() && self.connected.iter().all(|&c| c)
    }
}

/// Whether pad `k` of part `part` is the exposed (thermal) pad of a QFN, which may hold
/// vias of its own net: thermal vias in an exposed pad are common practice (they carry
/// heat and the ground connection to the other side).
fn is_exposed_pad(design: &Design, part: usize, k: usize) -> bool {
    match design.board.parts[part].footprint {
        crate::model::FootprintSpec::Qfn {
            pins,
            thermal: Some(_),
            ..
        } => design.footprints[part].pads[k].number == (pins + 1).to_string(),
        _ => false,
    }
}

/// Most fresh starts of negotiation when it stalls.
const RESTARTS: usize = 3;
/// Passes without fewer nets in conflict after which negotiation starts afresh.
const STALL_PASSES: usize = 6;

/// Grid offsets within a reach (see the module documentation).
fn disc_offsets(reach: f64, pitch: f64) -> Vec<(i32, i32)> {
    let r = (reach / pitch).ceil() as i32;
    let mut out = Vec::new();
    for dy in -r..=r {
        for dx in -r..=r {
            if ((dx * dx + dy * dy) as f64).sqrt() * pitch < reach - SLACK {
                out.push((dx, dy));
            }
        }
    }
    out
}

/// Reaches between classes: `[from][to]` for track into track, track into via, via into
/// track and via into via.
struct Reach {
    tt: Vec<Vec<Vec<(i32, i32)>>>,
    tv: Vec<Vec<Vec<(i32, i32)>>>,
    vt: Vec<Vec<Vec<(i32, i32)>>>,
    vv: Vec<Vec<Vec<(i32, i32)>>>,
}

impl Reach {
    fn new(classes: &[ClassRule], via_radius: f64, pitch: f64) -> Reach {
        let table = |ra: &dyn Fn(&ClassRule) -> f64, rc: &dyn Fn(&ClassRule) -> f64| {
            classes
                .iter()
                .map(|a| {
                    classes
                        .iter()
                        .map(|c| disc_offsets(ra(a) + rc(c) + a.clearance.max(c.clearance), pitch))
                        .collect()
                })
                .collect()
        };
        let track = |r: &ClassRule| r.half_width();
        let via = |_: &ClassRule| via_radius;
        Reach {
            tt: table(&track, &track),
            tv: table(&track, &via),
            vt: table(&via, &track),
            vv: table(&via, &via),
        }
    }
}

pub(crate) struct Router<'a> {
    design: &'a Design,
    opts: &'a RouteOptions,
    start: Instant,
    lat: Lattice,
    classes: Vec<ClassRule>,
    used: Vec<bool>,
    maps: StaticMaps,
    reach: Reach,
    /// `present_tracks[class][layer][point]`: other nets' copper too close for a track.
    present_tracks: Vec<[Vec<u32>; 2]>,
    /// `present_vias[class][layer][point]`: other nets' copper too close for a via.
    present_vias: Vec<[Vec<u32>; 2]>,
    history: [Vec<f32>; 2],
    nets: Vec<NetPlan>,
    routes: Vec<Routed>,
    /// Nets in routing order (shortest first), problems excluded.
    order: Vec<usize>,
    search: Search,
    mark: Vec<u32>,
    mark_generation: u32,
    present_factor: f64,
    passes: u32,
    /// When the last progress report with copper went out, seconds from the start.
    copper_shown: std::cell::Cell<f64>,
}

impl<'a> Router<'a> {
    pub fn new(
        design: &'a Design,
        opts: &'a RouteOptions,
        start: Instant,
    ) -> Result<Router<'a>, RouteError> {
        let board = &design.board;
        let rules = &board.rules;
        let classes = class_rules(board);
        let via_radius = rules.via_diameter / 2.0;
        let max_clearance = classes.iter().map(|c| c.clearance).fold(0.0, f64::max);

        let lat = Lattice::over(board.outline.bounds(), rules.routing_grid);
        let points = lat.dims.plane();
        if points > MAX_GRID_POINTS {
            return Err(RouteError::GridTooLarge {
                width: lat.dims.w,
                height: lat.dims.h,
                points,
                limit: MAX_GRID_POINTS,
            });
        }

        // Fixed copper: every pad of every placed part.
        let obstacles = pad_obstacles(design, &classes);
        let area = obstacles
            .iter()
            .fold(board.outline.bounds(), |r, o| r.union(&o.prim.bounds()));

        // Nets to route, shortest first (by half-perimeter of their pins).
        let mut nets = net_plans(design);
        let mut order = routing_order(&nets);

        // Where each pin is entered, nets in routing order; stubs become fixed copper.
        let outline_vertices = board.outline.vertices();
        let keepouts: Vec<(Vec<Point>, LayerSet)> = board
            .keepouts
            .iter()
            .filter(|k| k.copper)
            .map(|k| (k.shape.vertices(), LayerSet::from_keepout(k.layers)))
            .collect();
        let mut fixed = Fixed::new(
            obstacles,
            area,
            Surroundings {
                outline: &board.outline,
                outline_vertices: &outline_vertices,
                edge_clearance: rules.edge_clearance,
                keepouts: &keepouts,
                max_clearance,
            },
        );
        choose_accesses(&mut fixed, &lat, &classes, &mut nets, &order);
        order.retain(|&k| nets[k].problem.is_none());

        let mut used = vec![false; classes.len()];
        for &k in &order {
            used[nets[k].class] = true;
        }
        let mut builder = MapBuilder::new(
            &lat,
            &classes,
            &used,
            via_radius,
            opts.diagonal,
            !opts.vias_in_pads,
        );
        for o in &fixed.obstacles {
            builder.add_copper(o);
        }
        builder.add_region(&outline_vertices, LayerSet::BOTH, true, |_| {
            rules.edge_clearance
        });
        for (poly, layers) in &keepouts {
            builder.add_region(poly, *layers, false, |r| r.clearance);
        }
        let maps = builder.finish();

        let plane = lat.dims.plane();
        let per_class = |u: bool| {
            if u {
                [vec![0u32; plane], vec![0u32; plane]]
            } else {
                [Vec::new(), Vec::new()]
            }
        };
        let reach = Reach::new(&classes, via_radius, lat.pitch);
        let routes = vec![Routed::default(); nets.len()];
        Ok(Router {
            design,
            opts,
            start,
            present_tracks: used.iter().map(|&u| per_class(u)).collect(),
            present_vias: used.iter().map(|&u| per_class(u)).collect(),
            history: [vec![0.0; plane], vec![0.0; plane]],
            lat,
            classes,
            used,
            maps,
            reach,
            nets,
            routes,
            order,
            search: Search::default(),
            mark: vec![0; plane * 2],
            mark_generation: 0,
            present_factor: opts.present_factor,
            passes: 0,
            copper_shown: std::cell::Cell::new(0.0),
        })
    }

    fn next_mark(&mut self) -> u32 {
        self.mark_generation = self.mark_generation.wrapping_add(1);
        if self.mark_generation == 0 {
            self.mark.fill(0);
            self.mark_generation = 1;
        }
        self.mark_generation
    }

    /// Adds (`add`) or removes a net's copper from the present maps.
    fn stamp(&mut self, k: usize, add: bool) {
        let a = self.nets[k].class;
        let Dims { w, h, .. } = self.lat.dims;
        let route = &self.routes[k];
        let bump = |map: &mut Vec<u32>, x: usize, y: usize, offs: &[(i32, i32)]| {
            for &(dx, dy) in offs {
                let (nx, ny) = (x as i64 + dx as i64, y as i64 + dy as i64);
                if nx < 0 || ny < 0 || nx >= w as i64 || ny >= h as i64 {
                    continue;
                }
                let slot = &mut map[ny as usize * w + nx as usize];
                if add {
                    *slot += 1;
                } else {
                    *slot -= 1;
                }
            }
        };
        for c in 0..self.classes.len() {
            if !self.used[c] {
                continue;
            }
            for &n in &route.claimed {
                let (x, y, l) = self.lat.dims.xyl(n);
                bump(&mut self.present_tracks[c][l], x, y, &self.reach.tt[a][c]);
                bump(&mut self.present_vias[c][l], x, y, &self.reach.tv[a][c]);
            }
            for &v in &route.vias {
                let (x, y) = (v % w, v / w);
                for l in 0..2 {
                    bump(&mut self.present_tracks[c][l], x, y, &self.reach.vt[a][c]);
                    bump(&mut self.present_vias[c][l], x, y, &self.reach.vv[a][c]);
                }
            }
        }
    }

    fn commit(&mut self, k: usize) {
        if !self.routes[k].committed {
            self.stamp(k, true);
            self.routes[k].committed = true;
        }
    }

    fn uncommit(&mut self, k: usize) {
        if self.routes[k].committed {
            self.stamp(k, false);
            self.routes[k].committed = false;
        }
    }

    /// Grid points of net `k` (with layer) that other nets' copper comes too close to.
    /// The net must be committed; it is taken out and put back to look.
    fn conflicts(&mut self, k: usize) -> Vec<u32> {
        self.uncommit(k);
        let c = self.nets[k].class;
        let plane = self.lat.dims.plane();
        let route = &self.routes[k];
        let mut out: Vec<u32> = route
            .claimed
            .iter()
            .copied()
            .filter(|&n| {
                let (l, i) = (n as usize / plane, n as usize % plane);
                self.present_tracks[c][l][i] > 0
            })
            .collect();
        for &v in &route.vias {
            for l in 0..2 {
                if self.present_vias[c][l][v] > 0 {
                    out.push((l * plane + v) as u32);
                }
            }
        }
        self.commit(k);
        out
    }

    /// Routes net `k` from scratch (its old copper must be out of the maps). With `hard`,
    /// space other nets use is forbidden rather than expensive.
    fn route_net(&mut self, k: usize, hard: bool) {
        let plan = &self.nets[k];
        let class = plan.class;
        let net = plan.index as u32;
        let dims = self.lat.dims;
        let plane = dims.plane();
        let w = dims.w;
        let npins = plan.pins.len();
        let nodes_of = |pin: &Pin| -> Vec<u32> {
            (0..2)
                .filter(|&l| pin.layers.0 & (1 << l) != 0)
                .map(|l| (l * plane + pin.access) as u32)
                .collect()
        };
        let pin_nodes: Vec<Vec<u32>> = plan.pins.iter().map(nodes_of).collect();
        let pin_xy: Vec<(usize, usize)> = plan
            .pins
            .iter()
            .map(|p| (p.access % w, p.access / w))
            .collect();

        let mark = self.next_mark();
        let mut tree: Vec<u32> = Vec::new();
        let mut connected = vec![false; npins];
        let mut tried = vec![false; npins];
        let mut best = vec![usize::MAX; npins];
        let mut paths: Vec<Vec<u32>> = Vec::new();
        let mut failure: Option<String> = None;

        let add_nodes = |nodes: &[u32],
                         tree: &mut Vec<u32>,
                         mark_vec: &mut Vec<u32>,
                         best: &mut Vec<usize>,
                         connected: &[bool]| {
            for &n in nodes {
                if mark_vec[n as usize] == mark {
                    continue;
                }
                mark_vec[n as usize] = mark;
                tree.push(n);
                let (x, y, _) = dims.xyl(n);
                for j in 0..npins {
                    if !connected[j] {
                        let d = x.abs_diff(pin_xy[j].0) + y.abs_diff(pin_xy[j].1);
                        best[j] = best[j].min(d);
                    }
                }
            }
        };
        connected[0] = true;
        tried[0] = true;
        add_nodes(
            &pin_nodes[0],
            &mut tree,
            &mut self.mark,
            &mut best,
            &connected,
        );

        let params = Params {
            diagonal: self.opts.diagonal,
            bend_cost: self.opts.bend_cost,
            via_lower_bound: self.opts.via_cost,
        };
        loop {
            // Pins reached by passing copper count as connected.
            for j in 0..npins {
                if !connected[j] && pin_nodes[j].iter().any(|&n| self.mark[n as usize] == mark) {
                    connected[j] = true;
                    tried[j] = true;
                }
            }
            let Some(j) = (0..npins)
                .filter(|&j| !tried[j])
                .min_by_key(|&j| (best[j], j))
            else {
                break;
            };
            tried[j] = true;
            let edges = self.maps.edges[class].as_ref().expect("used class");
            let vias = self.maps.vias[class].as_ref().expect("used class");
            let costs = NetCosts {
                w,
                plane,
                edges,
                vias,
                present_tracks: &self.present_tracks[class],
                present_vias: &self.present_vias[class],
                history: &self.history,
                net,
                present_factor: self.present_factor,
                hard,
                via_cost: self.opts.via_cost,
                wrong_way: self.opts.wrong_way_cost,
            };
            match self
                .search
                .run(&dims, &tree, &pin_nodes[j], &params, &costs)
            {
                Some((_, path)) => {
                    add_nodes(&path, &mut tree, &mut self.mark, &mut best, &connected);
                    connected[j] = true;
                    paths.push(path);
                }
                None => {
                    let pin = &self.nets[k].pins[j].name;
                    failure.get_or_insert_with(|| {
                        if hard {
                            format!(
                                "no room: other nets block every path to pin {pin} after {} \
                                 passes of rip-up and reroute",
                                self.passes
                            )
                        } else {
                            format!(
                                "pin {pin} cannot be reached: pads, keep-outs or the board edge \
                                 wall it in on the {} mm routing grid",
                                self.lat.pitch
                            )
                        }
                    });
                }
            }
        }

        // The copper the paths occupy: their points, both side points of diagonal steps,
        // and the vias.
        let mark = self.next_mark();
        let mut claimed = Vec::new();
        let mut vias = Vec::new();
        let claim = |n: u32, claimed: &mut Vec<u32>, mark_vec: &mut Vec<u32>| {
            if mark_vec[n as usize] != mark {
                mark_vec[n as usize] = mark;
                claimed.push(n);
            }
        };
        for path in &paths {
            for pair in path.windows(2) {
                let (x0, y0, l0) = dims.xyl(pair[0]);
                let (x1, y1, l1) = dims.xyl(pair[1]);
                if l0 != l1 {
                    let v = y0 * w + x0;
                    if !vias.contains(&v) {
                        vias.push(v);
                    }
                } else if x0 != x1 && y0 != y1 {
                    claim(dims.node(x1, y0, l0), &mut claimed, &mut self.mark);
                    claim(dims.node(x0, y1, l0), &mut claimed, &mut self.mark);
                }
            }
            for &n in path {
                claim(n, &mut claimed, &mut self.mark);
            }
        }
        self.routes[k] = Routed {
            paths,
            claimed,
            vias,
            connected,
            failure,
            committed: false,
        };
    }

    fn progress(
        &self,
        phase: RoutePhase,
        done: usize,
        of: usize,
        conflicting: usize,
    ) -> RouteProgress {
        let seconds = self.start.elapsed().as_secs_f64();
        let copper =
            (seconds - self.copper_shown.get() >= super::LIVE_COPPER_INTERVAL_S).then(|| {
                self.copper_shown.set(seconds);
                self.result(false).copper
            });
        RouteProgress {
            phase,
            pass: self.passes.max(1),
            max_passes: self.opts.max_passes,
            done_in_pass: done,
            nets_in_pass: of,
            conflicting_nets: conflicting,
            seconds,
            copper,
        }
    }

    /// Nets (in routing order) whose copper other nets come too close to, with the
    /// contested grid points of each.
    fn conflicting(&mut self) -> Vec<(usize, Vec<u32>)> {
        let mut out = Vec::new();
        for i in 0..self.order.len() {
            let k = self.order[i];
            if !self.routes[k].committed {
                continue;
            }
            let c = self.conflicts(k);
            if !c.is_empty() {
                out.push((k, c));
            }
        }
        out
    }

    pub fn run(
        &mut self,
        cancel: &AtomicBool,
        report: &mut dyn FnMut(&RouteProgress),
    ) -> RouteResult {
        let mut order = self.order.clone();
        report(&self.progress(RoutePhase::Preparing, 0, order.len(), 0));
        let mut cancelled = false;
        // The attempt that left the fewest nets in conflict: (count, routes).
        let mut best: Option<(usize, Vec<Routed>)> = None;
        self.passes = 0;

        for attempt in 0..=RESTARTS {
            if attempt > 0 {
                // Start again from nothing, the nets that were in conflict first; the
                // history of contested space is kept.
                for &k in &order {
                    self.uncommit(k);
                }
                self.present_factor = self.opts.present_factor;
            }
            // First pass: every net, in order.
            self.passes += 1;
            for (i, &k) in order.iter().enumerate() {
                if cancel.load(Ordering::Relaxed) {
                    cancelled = true;
                    break;
                }
                self.route_net(k, false);
                self.commit(k);
                report(&self.progress(RoutePhase::Negotiating, i + 1, order.len(), 0));
            }

            // Rip up and reroute the nets in conflict until none are, the pass limit is
            // reached or the count of nets in conflict stops improving.
            let mut conflicting = if cancelled {
                Vec::new()
            } else {
                self.conflicting()
            };
            let (mut fewest, mut since) = (conflicting.len(), 0);
            while !cancelled
                && !conflicting.is_empty()
                && self.passes < self.opts.max_passes
                && since < STALL_PASSES
            {
                for (_, points) in &conflicting {
                    for &n in points {
                        let plane = self.lat.dims.plane();
                        let (l, i) = (n as usize / plane, n as usize % plane);
                        self.history[l][i] += self.opts.history_factor as f32;
                    }
                }
                self.present_factor *= self.opts.present_growth;
                self.passes += 1;
                let nets: Vec<usize> = conflicting.iter().map(|c| c.0).collect();
                for (i, &k) in nets.iter().enumerate() {
                    if cancel.load(Ordering::Relaxed) {
                        cancelled = true;
                        break;
                    }
                    self.uncommit(k);
                    self.route_net(k, false);
                    self.commit(k);
                    report(&self.progress(RoutePhase::Negotiating, i + 1, nets.len(), nets.len()));
                }
                conflicting = self.conflicting();
                if conflicting.len() < fewest {
                    (fewest, since) = (conflicting.len(), 0);
                } else {
                    since += 1;
                }
            }
            let n = conflicting.len();
            if best.as_ref().is_none_or(|b| n < b.0) {
                best = Some((n, self.routes.clone()));
            }
            if n == 0 || cancelled || self.passes >= self.opts.max_passes {
                break;
            }
            let first: Vec<usize> = conflicting.iter().map(|c| c.0).collect();
            order.retain(|k| !first.contains(k));
            order.splice(0..0, first);
            self.order = order.clone();
        }
        // Go back to the best attempt.
        if let Some((_, routes)) = best {
            for &k in &order {
                self.uncommit(k);
            }
            self.routes = routes;
            for &k in &order {
                if self.routes[k].committed {
                    self.routes[k].committed = false;
                    self.commit(k);
                }
            }
        }

        // Settle: the most contested nets give way until no conflict is left, then try
        // again with contested space forbidden.
        let mut ripped: Vec<usize> = Vec::new();
        loop {
            let found = self.conflicting();
            if found.is_empty() {
                break;
            }
            let worst = found
                .iter()
                .max_by_key(|(k, pts)| (pts.len(), std::cmp::Reverse(*k)))
                .map(|(k, _)| *k)
                .expect("not empty");
            self.uncommit(worst);
            ripped.push(worst);
        }
        ripped.sort_by_key(|k| order.iter().position(|o| o == k));
        for (i, &k) in ripped.iter().enumerate() {
            if cancelled || cancel.load(Ordering::Relaxed) {
                cancelled = true;
                self.routes[k] = Routed {
                    failure: Some("cancelled before the net was finished".into()),
                    connected: vec![false; self.nets[k].pins.len()],
                    ..Routed::default()
                };
                continue;
            }
            self.route_net(k, true);
            self.commit(k);
            report(&self.progress(RoutePhase::Settling, i + 1, ripped.len(), ripped.len()));
        }
        if cancelled {
            for &k in &order {
                if !self.routes[k].committed && self.routes[k].failure.is_none() {
                    self.routes[k].failure = Some("cancelled before the net was routed".into());
                    self.routes[k].connected = vec![false; self.nets[k].pins.len()];
                }
            }
        }
        self.result(cancelled)
    }

    fn result(&self, cancelled: bool) -> RouteResult {
        let board = &self.design.board;
        let rules = &board.rules;
        let plane = self.lat.dims.plane();
        let mut copper = Copper::default();
        let mut unrouted = Vec::new();
        let mut routed = 0;
        for (k, plan) in self.nets.iter().enumerate() {
            let name = &board.nets[plan.index].name;
            if let Some(p) = &plan.problem {
                unrouted.push(Unrouted {
                    net: name.clone(),
                    why: p.clone(),
                });
                continue;
            }
            let r = &self.routes[k];
            if r.committed && r.complete() {
                routed += 1;
            } else {
                unrouted.push(Unrouted {
                    net: name.clone(),
                    why: r.failure.clone().unwrap_or_else(|| "not routed".into()),
                });
            }
            if !r.committed {
                continue;
            }
            let width = self.classes[plan.class].width;
            let layer_of = |l: usize| if l == 0 { Layer::Top } else { Layer::Bottom };
            for path in &r.paths {
                let mut run: Vec<u32> = Vec::new();
                for &n in path {
                    if let Some(&last) = run.last()
                        && last as usize / plane != n as usize / plane
                    {
                        self.push_track(
                            &mut copper,
                            name,
                            width,
                            layer_of(last as usize / plane),
                            &run,
                        );
                        run.clear();
                    }
                    run.push(n);
                }
                if let Some(&last) = run.last() {
                    self.push_track(
                        &mut copper,
                        name,
                        width,
                        layer_of(last as usize / plane),
                        &run,
                    );
                }
            }
            for &v in &r.vias {
                copper.vias.push(Via {
                    net: name.clone(),
                    at: self.lat.point(v % self.lat.dims.w, v / self.lat.dims.w),
                    drill: rules.via_drill,
                    diameter: rules.via_diameter,
                });
            }
            // Stubs from pad centres to where the tracks enter, on the layers they use.
            // A net whose pins all share one grid point needs no path: its stubs meet there.
            let used: std::collections::HashSet<u32> = if r.paths.is_empty() {
                plan.pins
                    .iter()
                    .flat_map(|p| {
                        (0..2)
                            .filter(|&l| p.layers.0 & (1 << l) != 0)
                            .map(|l| (l * plane + p.access) as u32)
                    })
                    .collect()
            } else {
                r.paths.iter().flatten().copied().collect()
            };
            for pin in &plan.pins {
                if pin.stub.len() < 2 {
                    continue;
                }
                for l in 0..2 {
                    if pin.layers.0 & (1 << l) != 0
                        && used.contains(&((l * plane + pin.access) as u32))
                    {
                        copper.tracks.push(Track {
                            net: name.clone(),
                            layer: layer_of(l),
                            width,
                            points: pin.stub.clone(),
                        });
                    }
                }
            }
        }
        let track_length_mm = copper
            .tracks
            .iter()
            .flat_map(|t| t.points.windows(2).map(|w| dist(w[0], w[1])))
            .sum();
        RouteResult {
            nets: self.nets.len(),
            routed,
            unrouted,
            track_length_mm,
            vias: copper.vias.len(),
            copper,
            passes: self.passes,
            seconds: self.start.elapsed().as_secs_f64(),
            cancelled,
            diagonal: self.opts.diagonal,
            ..RouteResult::default()
        }
        .with_quality(self.nets.iter().map(|n| n.pins.iter().map(|p| p.centre)))
    }

    /// One track for a run of grid points on one layer, with straight stretches merged.
    fn push_track(&self, copper: &mut Copper, net: &str, width: f64, layer: Layer, run: &[u32]) {
        if run.len() < 2 {
            return;
        }
        let xy: Vec<(i64, i64)> = run
            .iter()
            .map(|&n| {
                let (x, y, _) = self.lat.dims.xyl(n);
                (x as i64, y as i64)
            })
            .collect();
        let mut points = vec![self.lat.node_point(run[0])];
        for i in 1..run.len() - 1 {
            let d0 = (xy[i].0 - xy[i - 1].0, xy[i].1 - xy[i - 1].1);
            let d1 = (xy[i + 1].0 - xy[i].0, xy[i + 1].1 - xy[i].1);
            if d0 != d1 {
                points.push(self.lat.node_point(run[i]));
            }
        }
        points.push(self.lat.node_point(run[run.len() - 1]));
        copper.tracks.push(Track {
            net: net.to_string(),
            layer,
            width,
            points,
        });
    }
}

/// The track rule of each net class: the board's default first, then its classes.
fn class_rules(board: &Board) -> Vec<ClassRule> {
    let rules = &board.rules;
    let mut classes = vec![ClassRule {
        width: rules.track_width,
        clearance: rules.clearance,
    }];
    classes.extend(board.classes.iter().map(|c| ClassRule {
        width: c.track_width,
        clearance: c.clearance,
    }));
    classes
}

/// The index into [`class_rules`] of net `net`'s class.
fn class_of(board: &Board, net: usize) -> usize {
    board.nets[net]
        .class
        .as_deref()
        .and_then(|n| board.classes.iter().position(|c| c.name == n))
        .map_or(0, |i| i + 1)
}

/// Fixed copper: every pad of every placed part, with its net's clearance.
fn pad_obstacles(design: &Design, classes: &[ClassRule]) -> Vec<Obstacle> {
    let rules = &design.board.rules;
    let mut pad_net = std::collections::HashMap::new();
    for (n, pins) in design.net_pins.iter().enumerate() {
        for p in pins {
            pad_net.insert((p.part.0, p.pad), n as u32);
        }
    }
    let mut obstacles = Vec::new();
    for (pi, fp) in design.footprints.iter().enumerate() {
        for k in 0..fp.pads.len() {
            let Some(pad) = placed_pad(design, PartId(pi as u32), k) else {
                continue;
            };
            let net = pad_net.get(&(pi as u32, k as u32)).copied();
            let hole = pad.layers == LayerSet::NONE;
            obstacles.push(Obstacle {
                prim: pad.prim,
                layers: if hole { LayerSet::BOTH } else { pad.layers },
                owner: if hole { WALL } else { net.unwrap_or(WALL) },
                clearance: net.map_or(rules.clearance, |n| {
                    classes[class_of(&design.board, n as usize)].clearance
                }),
                smd_pad: pad.drill.is_none() && !is_exposed_pad(design, pi, k),
            });
        }
    }
    obstacles
}

/// Every net of two or more pins, with its pins, or the problem that keeps it from being
/// routed.
fn net_plans(design: &Design) -> Vec<NetPlan> {
    let mut nets = Vec::new();
    for (n, pins) in design.net_pins.iter().enumerate() {
        if pins.len() < 2 {
            continue;
        }
        let mut plan = NetPlan {
            index: n,
            class: class_of(&design.board, n),
            pins: Vec::new(),
            problem: None,
        };
        for p in pins {
            let name = format!(
                "{}.{}",
                design.part(p.part).reference,
                design.footprints[p.part.index()].pads[p.pad as usize].number
            );
            match placed_pad(design, p.part, p.pad as usize) {
                Some(pad) if pad.layers != LayerSet::NONE => plan.pins.push(Pin {
                    name,
                    centre: pad.at,
                    pad: pad.prim,
                    layers: pad.layers,
                    access: usize::MAX,
                    stub: vec![pad.at],
                }),
                Some(_) => {
                    plan.problem
                        .get_or_insert(format!("pin {name} is an unplated hole"));
                }
                None => {
                    plan.problem.get_or_insert(format!(
                        "part {} is not placed",
                        design.part(p.part).reference
                    ));
                }
            }
        }
        nets.push(plan);
    }
    nets
}

/// The nets in routing order: shortest first, by the half-perimeter of their pins.
fn routing_order(nets: &[NetPlan]) -> Vec<usize> {
    let span = |p: &NetPlan| {
        crate::model::Rect::bounding(p.pins.iter().map(|p| p.centre))
            .map_or(0.0, |r| r.width() + r.height())
    };
    let mut order: Vec<usize> = (0..nets.len()).collect();
    order.sort_by(|&a, &b| span(&nets[a]).total_cmp(&span(&nets[b])).then(a.cmp(&b)));
    order
}

/// Where each pin is entered, nets in routing order; the stubs become fixed copper. A
/// pin with no room for its track gives its net a problem.
fn choose_accesses(
    fixed: &mut Fixed,
    lat: &Lattice,
    classes: &[ClassRule],
    nets: &mut [NetPlan],
    order: &[usize],
) {
    for &k in order {
        let plan = &mut nets[k];
        if plan.problem.is_some() {
            continue;
        }
        let rule = classes[plan.class];
        for pin in &mut plan.pins {
            let net = plan.index as u32;
            match fixed.choose_access(lat, &pin.pad, pin.centre, pin.layers, net, rule) {
                Some((i, stub)) => {
                    pin.access = i;
                    for w in stub.windows(2) {
                        fixed.add(Obstacle {
                            prim: Prim::track(w[0], w[1], rule.width),
                            layers: pin.layers,
                            owner: net,
                            clearance: rule.clearance,
                            smd_pad: false,
                        });
                    }
                    pin.stub = stub;
                }
                None => {
                    // Does the track fit at the pad centre at all, off the grid?
                    let fits = fixed.stub_is_clear(pin.centre, pin.centre, pin.layers, net, rule);
                    plan.problem = Some(if fits {
                        format!(
                            "pin {}: no point of the {} mm routing grid near the pad centre \
                         leaves room for a {} mm track (try a finer routing grid)",
                            pin.name, lat.pitch, rule.width
                        )
                    } else {
                        format!(
                            "pin {}: a {} mm track with {} mm clearance does not fit at the \
                         pad; neighbouring copper, a keep-out or the board edge is too \
                         close (the net's class is too wide for this footprint)",
                            pin.name, rule.width, rule.clearance
                        )
                    });
                    break;
                }
            }
        }
    }
}

/// The cost of moving for one net (see [`super::search::Costs`]).
struct NetCosts<'r> {
    w: usize,
    plane: usize,
    edges: &'r [[Vec<u32>; 4]; 2],
    vias: &'r [u32],
    present_tracks: &'r [Vec<u32>; 2],
    present_vias: &'r [Vec<u32>; 2],
    history: &'r [Vec<f32>; 2],
    net: u32,
    present_factor: f64,
    hard: bool,
    via_cost: f64,
    wrong_way: f64,
}

impl Costs for NetCosts<'_> {
    #[inline]
    fn step(&self, from: Node, to: u32, dir: usize) -> Option<f64> {
        let Node { x, y, layer: l, .. } = from;
        let fi = y * self.w + x;
        let (kind, at) = edge_of_step(self.w, x, y, dir);
        if !free_for(self.edges[l][kind][at], self.net) {
            return None;
        }
        let ti = to as usize - l * self.plane;
        let present = &self.present_tracks[l];
        let mut crowd = present[ti];
        let len = if dir < 4 {
            1.0
        } else {
            let (dx, dy) = DIRS[dir];
            let side_a = (fi as i64 + dx as i64) as usize;
            let side_b = (fi as i64 + dy as i64 * self.w as i64) as usize;
            crowd += present[side_a] + present[side_b];
            std::f64::consts::SQRT_2
        };
        if self.hard && crowd > 0 {
            return None;
        }
        // Top prefers horizontal steps, bottom vertical.
        let wrong = match (l, dir) {
            (0, 1 | 3) | (1, 0 | 2) => self.wrong_way,
            _ => 0.0,
        };
        Some(
            len * (1.0 + wrong)
                * (1.0 + self.history[l][ti] as f64)
                * (1.0 + self.present_factor * crowd as f64),
        )
    }

    #[inline]
    fn via(&self, from: u32, _to: u32) -> Option<f64> {
        let i = from as usize % self.plane;
        if !free_for(self.vias[i], self.net) {
            return None;
        }
        let crowd = self.present_vias[0][i] + self.present_vias[1][i];
        if self.hard && crowd + self.present_tracks[0][i] + self.present_tracks[1][i] > 0 {
            return None;
        }
        let history = (self.history[0][i] + self.history[1][i]) as f64 / 2.0;
        Some(self.via_cost * (1.0 + history) * (1.0 + self.present_factor * crowd as f64))
    }
}
