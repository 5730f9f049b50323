//! Multilevel placement: cluster the parts, place the clusters, then the parts.
//!
//! Flat annealing of a large, dense board condenses from a disordered state, and the
//! order it condenses into is often folded: regions that each sit well but join badly
//! (rows interleaved, bands reversed). Undoing a fold means moving many parts together,
//! which single-part moves do only through long chains of uphill steps. A multilevel
//! placer (the coarsen-then-refine scheme of multilevel partitioners and placers, common
//! practice since the late 1990s) settles the global order first on a small problem:
//!
//! 1. **Coarsen.** Match each part with the free neighbour it shares the most
//!    connection with per unit of area (heavy-edge matching, clique net model
//!    `w / (k - 1)` for a net of `k` parts), alternately side by side and one above the
//!    other, so two levels of pairs make a compact block. Each pair becomes one part of a
//!    coarser board whose courtyard is the pair's box and whose pins sit where its
//!    members' pins are. Repeat until few parts are left or a step stops shrinking.
//! 2. **Place the coarsest board** with the full schedule.
//! 3. **Refine.** Put each level's parts where their cluster lies, then anneal that
//!    level starting cool and with a small window, so local order is repaired without
//!    melting the global order.
//!
//! Every level is an ordinary board that passed [`resolve`], annealed by the same
//! [`Annealer`]: the energy, the moves and the legal finish are those of flat placement.
//! Locked parts stay themselves, in place, at every level. Deterministic: the matching
//! order comes from the run's seeded generator.

use std::time::Instant;

use super::anneal::{Annealer, StageReport};
use super::options::{AnnealOptions, PlaceError, default_budget};
use super::outcome::{Placed, anneal_flat, finish};
use super::rng::Rng;
use super::spectral::{self, Graph, median_side};
use crate::model::board::{Board, Copper, Net, Part, Side, rect_to_board, to_board};
use crate::model::footprint::{FootprintSpec, PadShape, PadSpec};
use crate::model::{Design, Point, Rect, resolve};

/// Stop coarsening when this few movable parts are left.
const COARSEST: usize = 24;
/// Stop when a step keeps more than this fraction of the parts (matching has stalled).
const MIN_SHRINK: f64 = 0.85;
/// Nets with more parts than this are left out of the matching (supply nets say little
/// about which two parts belong together).
const MATCH_NET_LIMIT: usize = 12;
/// A pair's area may be at most this multiple of the level's mean part area.
const AREA_CAP: f64 = 4.5;
/// A pair's box may hold at most this multiple of its members' area (compact clusters
/// tile the board as their members do).
const COMPACT: f64 = 1.2;
/// Clusters' courtyards together cover at most this fraction of the board.
const BOARD_FILL: f64 = 0.97;
/// At most this many levels above the board.
const MAX_LEVELS: usize = 12;

/// One coarsening step: the coarser design, and for each of its parts the finer parts it
/// stands for with their offsets from its origin (a locked part stands for itself).
struct Level {
    design: Design,
    members: Vec<Vec<(u32, Point)>>,
}

/// Places every unlocked part by the multilevel scheme, then the legal finish. Falls
/// back to flat annealing when the board does not coarsen (too few parts).
pub fn place(
    design: &Design,
    opts: &AnnealOptions,
    mut observe: impl FnMut(&StageReport) -> bool,
) -> Result<Placed, PlaceError> {
    let start = Instant::now();
    let mut rng = Rng::new(opts.seed ^ 0x6d75_6c74_696c_6576);
    let mut levels: Vec<Level> = Vec::new();
    let mut axis_x = true;
    loop {
        let finer = levels.last().map_or(design, |l| &l.design);
        let movable = movable_count(finer);
        if movable <= COARSEST || levels.len() >= MAX_LEVELS {
            break;
        }
        let Some(level) = coarsen(finer, &mut rng, axis_x, opts.scatter) else {
            break;
        };
        if movable_count(&level.design) as f64 > MIN_SHRINK * movable as f64 {
            break;
        }
        levels.push(level);
        axis_x = !axis_x;
    }
    if levels.is_empty() {
        return anneal_flat(design, opts, observe);
    }

    // Share a move cap among the levels by their stage sizes (N^(4/3)).
    let sizes: Vec<f64> = std::iter::once(design)
        .chain(levels.iter().map(|l| &l.design))
        .map(|d| (movable_count(d).max(1) as f64).powf(4.0 / 3.0))
        .collect();
    let total: f64 = sizes.iter().sum();
    let budget = opts
        .max_moves
        .unwrap_or_else(|| default_budget(movable_count(design), opts.effort));
    let cap_for = |k: usize| Some(((budget as f64 * sizes[k] / total) as u64).max(100));

    let mut history: Vec<StageReport> = Vec::new();
    let (mut moves, mut accepted) = (0u64, 0u64);
    let mut stopped = false;
    let mut run_level = |an: &mut Annealer, history: &mut Vec<StageReport>| {
        let offset = moves;
        if !stopped {
            an.run(|r| {
                let r = StageReport {
                    moves: r.moves + offset,
                    ..*r
                };
                let go = observe(&r);
                stopped |= !go;
                go
            });
        }
        history.extend(an.history().iter().map(|r| StageReport {
            moves: r.moves + offset,
            ..*r
        }));
        moves += an.moves();
        accepted += an.accepted();
    };

    // The coarsest level: the full schedule from the start temperature.
    let top = levels.len();
    let coarse_opts = AnnealOptions {
        rotate_fraction: 0.0,
        max_moves: cap_for(top),
        multilevel: false,
        ..opts.clone()
    };
    let mut an = Annealer::new(&levels[top - 1].design, coarse_opts)?;
    let t0 = an.start_temperature();
    run_level(&mut an, &mut history);

    // Refine level by level down to the board itself.
    for k in (0..top).rev() {
        let coarse = &levels[k];
        let finer = if k == 0 {
            design
        } else {
            &levels[k - 1].design
        };
        let mut d = finer.clone();
        for (c, members) in coarse.members.iter().enumerate() {
            let at = an.layout().position(c as u32);
            for &(m, off) in members {
                let part = &mut d.board.parts[m as usize];
                if !part.locked {
                    part.at = Some(snap(at.add(off), finer.board.rules.placement_grid));
                }
            }
        }
        let window = 2.0 * median_side(&coarse.design);
        let refine = AnnealOptions {
            scatter: false,
            start_window: Some(window),
            start_acceptance: REFINE_ACCEPTANCE,
            rotate_fraction: if k == 0 { opts.rotate_fraction } else { 0.0 },
            max_moves: cap_for(k),
            multilevel: false,
            ..opts.clone()
        };
        an = Annealer::new(&d, refine)?;
        run_level(&mut an, &mut history);
    }
    let mut placed = finish(design, &mut an, start)?;
    let r = &mut placed.report;
    r.moves = moves;
    r.accepted = accepted;
    r.stages = history.len() as u32;
    r.start_temperature = t0;
    r.moves_per_second = moves as f64 / r.seconds.max(1e-9);
    if let Some(rec) = placed.board.placement.as_mut() {
        rec.moves = moves;
    }
    placed.history = history;
    Ok(placed)
}

/// Fraction of uphill moves accepted when a finer level starts: warm enough to repair
/// the order within a cluster's reach, too cool to undo the coarser level's order.
pub const REFINE_ACCEPTANCE: f64 = 0.1;

fn movable_count(d: &Design) -> usize {
    d.board.parts.iter().filter(|p| !p.locked).count()
}

fn snap(p: Point, grid: f64) -> Point {
    Point::new((p.x / grid).round() * grid, (p.y / grid).round() * grid)
}

/// Offset of `b`'s origin from `a`'s when `b`'s courtyard abuts `a`'s on the right
/// (`axis_x`) or above, centres aligned across, in whole steps of the grid so that a
/// cluster on the grid puts its members on it.
fn pair_offset(a: &Rect, b: &Rect, axis_x: bool, grid: f64) -> Point {
    let up = |v: f64| (v / grid - 1e-9).ceil() * grid;
    let near = |v: f64| (v / grid).round() * grid;
    if axis_x {
        Point::new(up(a.max.x - b.min.x), near(a.center().y - b.center().y))
    } else {
        Point::new(near(a.center().x - b.center().x), up(a.max.y - b.min.y))
    }
}

/// Courtyard of part `i` of `d` in board orientation (turned and mirrored as placed),
/// relative to the part's origin.
fn oriented_courtyard(d: &Design, i: usize) -> Rect {
    let p = &d.board.parts[i];
    rect_to_board(
        &d.footprints[i].courtyard,
        Point::new(0.0, 0.0),
        p.quarter(),
        p.side,
    )
}

/// One heavy-edge matching step over `d`. `None` if the coarser board would not pass
/// the board checks (then the caller stops coarsening).
fn coarsen(d: &Design, rng: &mut Rng, axis_x: bool, scatter: bool) -> Option<Level> {
    let n = d.board.parts.len();
    let parts = &d.board.parts;
    let movable: Vec<usize> = (0..n).filter(|&i| !parts[i].locked).collect();
    if movable.len() < 2 {
        return None;
    }
    let c = Coarsening::new(d, axis_x);
    let mate = c.mates(rng, &movable);
    let (groups, group_of) = pair_groups(&mate);
    let shapes = c.shapes(&groups);
    let shrink = c.shrink(&groups, &shapes);
    let (new_parts, members, pin_sum) = c.clusters(&groups, &shapes, shrink, scatter);
    let nets = c.nets(&group_of, &pin_sum, &new_parts)?;
    let design = clustered_design(d, new_parts, nets)?;
    Some(Level { design, members })
}

/// What the steps of [`coarsen`] share: the finer design and each part's copper class,
/// courtyard area and oriented courtyard.
struct Coarsening<'a> {
    d: &'a Design,
    parts: &'a [Part],
    /// Parts may pair only with parts that overlap the same copper sides: 1 top, 2
    /// bottom, 3 both (through-holes).
    class: Vec<u8>,
    area: Vec<f64>,
    courts: Vec<Rect>,
    grid: f64,
    axis_x: bool,
}

impl<'a> Coarsening<'a> {
    fn new(d: &'a Design, axis_x: bool) -> Coarsening<'a> {
        let n = d.board.parts.len();
        let parts = &d.board.parts;
        let class: Vec<u8> = (0..n)
            .map(|i| {
                if d.footprints[i].has_through_holes() {
                    3
                } else if parts[i].side == Side::Bottom {
                    2
                } else {
                    1
                }
            })
            .collect();
        Coarsening {
            d,
            parts,
            class,
            area: d.footprints.iter().map(|f| f.courtyard.area()).collect(),
            courts: (0..n).map(|i| oriented_courtyard(d, i)).collect(),
            grid: d.board.rules.placement_grid,
            axis_x,
        }
    }

    /// Each movable part's mate, paired by connection weight per area.
    fn mates(&self, rng: &mut Rng, movable: &[usize]) -> Vec<Option<usize>> {
        let (d, parts, class, area, courts) =
            (self.d, self.parts, &self.class, &self.area, &self.courts);
        let (n, grid, axis_x) = (parts.len(), self.grid, self.axis_x);
        let mean_area = movable.iter().map(|&i| area[i]).sum::<f64>() / movable.len() as f64;

        // Connection weights between pairs of movable parts (clique model), as sorted
        // adjacency lists so every choice below is deterministic.
        let mut edges: Vec<(u32, u32, f64)> = Vec::new();
        spectral::clique_pairs(d, MATCH_NET_LIMIT, |a, b, w| {
            let (ai, bi) = (a as usize, b as usize);
            if !parts[ai].locked && !parts[bi].locked && class[ai] == class[bi] {
                edges.push((a, b, w));
                edges.push((b, a, w));
            }
        });
        let graph = Graph::from_directed(n, edges);

        // Visit in a random order, each free part taking its best free neighbour.
        let mut order = movable.to_vec();
        for i in (1..order.len()).rev() {
            let j = rng.below(i as u32 + 1) as usize;
            order.swap(i, j);
        }
        let mut mate: Vec<Option<usize>> = vec![None; n];
        let mut matched = vec![false; n];
        for &u in &order {
            if matched[u] {
                continue;
            }
            let mut best: Option<(f64, usize)> = None;
            for &(v, w) in graph.neighbours(u) {
                let v = v as usize;
                if matched[v] || area[u] + area[v] > AREA_CAP * mean_area {
                    continue;
                }
                let (cu, cv) = (&courts[u], &courts[v]);
                let off = pair_offset(cu, cv, axis_x, grid);
                if cu.union(&cv.translate(off)).area() > COMPACT * (area[u] + area[v]) {
                    continue;
                }
                let score = w / (area[u] + area[v]);
                if best.is_none_or(|(s, _)| score > s) {
                    best = Some((score, v));
                }
            }
            if let Some((_, v)) = best {
                matched[u] = true;
                matched[v] = true;
                mate[u] = Some(v);
                mate[v] = Some(u);
            }
        }
        mate
    }

    /// Each group's member offsets (the first member's origin is the group's) and box.
    fn shapes(&self, groups: &[Vec<usize>]) -> Vec<(Vec<Point>, Rect)> {
        let (courts, grid, axis_x) = (&self.courts, self.grid, self.axis_x);
        groups
            .iter()
            .map(|g| {
                let offs: Vec<Point> = match g[..] {
                    [a, b] => vec![
                        Point::new(0.0, 0.0),
                        pair_offset(&courts[a], &courts[b], axis_x, grid),
                    ],
                    _ => vec![Point::new(0.0, 0.0)],
                };
                let bbox = g
                    .iter()
                    .zip(&offs)
                    .map(|(&m, o)| courts[m].translate(*o))
                    .reduce(|a, b| a.union(&b))
                    .unwrap_or(courts[g[0]]);
                (offs, bbox)
            })
            .collect()
    }

    /// The factor the clusters' courtyards shrink by about their centres (1 when they
    /// fit): when the boxes would not fit on the board (a board the parts fill), every
    /// cluster's courtyard shrinks by one factor; the refinement of the finer level takes
    /// the slack back.
    fn shrink(&self, groups: &[Vec<usize>], shapes: &[(Vec<Point>, Rect)]) -> f64 {
        let (d, parts) = (self.d, self.parts);
        let boxes: f64 = groups
            .iter()
            .zip(shapes)
            .filter(|(g, _)| !parts[g[0]].locked)
            .map(|(_, s)| s.1.area())
            .sum();
        let room = BOARD_FILL * d.board.outline.area();
        if boxes > room {
            (room / boxes).sqrt()
        } else {
            1.0
        }
    }

    /// The coarser board's parts (one per group), each group's members with their
    /// offsets, and each group's pins per net as (net, sum of positions, count).
    #[allow(clippy::type_complexity)]
    fn clusters(
        &self,
        groups: &[Vec<usize>],
        shapes: &[(Vec<Point>, Rect)],
        shrink: f64,
        scatter: bool,
    ) -> (
        Vec<Part>,
        Vec<Vec<(u32, Point)>>,
        Vec<Vec<(u32, Point, u32)>>,
    ) {
        let (d, parts, class) = (self.d, self.parts, &self.class);
        let n = parts.len();
        let taken: std::collections::HashSet<&str> = parts
            .iter()
            .filter(|p| p.locked)
            .map(|p| p.reference.as_str())
            .collect();
        // Each part's connected pins as (net, pad), in net order.
        let mut pins_of: Vec<Vec<(u32, u32)>> = vec![Vec::new(); n];
        for (ni, pins) in d.net_pins.iter().enumerate() {
            for pin in pins {
                pins_of[pin.part.index()].push((ni as u32, pin.pad));
            }
        }

        // Pin offsets of each group per net: the mean of its members' pins on that net.
        let mut pin_sum: Vec<Vec<(u32, Point, u32)>> = vec![Vec::new(); groups.len()];
        let mut new_parts: Vec<Part> = Vec::with_capacity(groups.len());
        let mut members: Vec<Vec<(u32, Point)>> = Vec::with_capacity(groups.len());
        for (gi, g) in groups.iter().enumerate() {
            let first = &parts[g[0]];
            if first.locked {
                new_parts.push(first.clone());
                members.push(vec![(g[0] as u32, Point::new(0.0, 0.0))]);
                continue;
            }
            let (offs, bbox) = &shapes[gi];
            let court =
                Rect::centered(bbox.center(), bbox.width() * shrink, bbox.height() * shrink);
            for (&m, off) in g.iter().zip(offs) {
                for &(ni, pad) in &pins_of[m] {
                    let pad = &d.footprints[m].pads[pad as usize];
                    let at = to_board(
                        pad.at,
                        Point::new(0.0, 0.0),
                        parts[m].quarter(),
                        parts[m].side,
                    )
                    .add(*off);
                    match pin_sum[gi].iter_mut().find(|e| e.0 == ni) {
                        Some(e) => {
                            e.1 = e.1.add(at);
                            e.2 += 1;
                        }
                        None => pin_sum[gi].push((ni, at, 1)),
                    }
                }
            }
            let mut pads: Vec<PadSpec> = pin_sum[gi]
                .iter()
                .enumerate()
                .map(|(k, &(_, s, c))| PadSpec {
                    number: (k + 1).to_string(),
                    centre: Point::new(s.x / f64::from(c), s.y / f64::from(c)),
                    width: 0.1,
                    height: 0.1,
                    shape: PadShape::Rectangle,
                    hole: None,
                })
                .collect();
            if class[g[0]] == 3 {
                // A drilled pad of no net makes the cluster block both sides, as its
                // through-hole members do.
                pads.push(PadSpec {
                    number: "0".into(),
                    centre: court.center(),
                    width: 0.2,
                    height: 0.2,
                    shape: PadShape::Circle,
                    hole: Some(0.1),
                });
            }
            let placed = g.iter().all(|&m| parts[m].at.is_some()) && !scatter;
            let at = if placed { parts[g[0]].at } else { None };
            let mut reference = format!("cluster-{gi}");
            while taken.contains(reference.as_str()) {
                reference.push('_');
            }
            new_parts.push(Part {
                reference,
                footprint: FootprintSpec::Custom {
                    pads,
                    courtyard: Some(court),
                },
                value: String::new(),
                at,
                rotation: 0.0,
                side: if class[g[0]] == 2 {
                    Side::Bottom
                } else {
                    Side::Top
                },
                locked: false,
            });
            members.push(
                g.iter()
                    .map(|&m| m as u32)
                    .zip(offs.iter().copied())
                    .collect(),
            );
        }
        (new_parts, members, pin_sum)
    }

    /// Nets between groups; a net inside one group has a fixed length and is dropped.
    fn nets(
        &self,
        group_of: &[usize],
        pin_sum: &[Vec<(u32, Point, u32)>],
        new_parts: &[Part],
    ) -> Option<Vec<Net>> {
        let (d, parts) = (self.d, self.parts);
        let mut nets = Vec::new();
        for (ni, (pins, net)) in d.net_pins.iter().zip(&d.board.nets).enumerate() {
            let mut names: Vec<String> = Vec::new();
            let mut groups_on: Vec<usize> = Vec::new();
            for pin in pins {
                let m = pin.part.index();
                let gi = group_of[m];
                groups_on.push(gi);
                let name = if parts[m].locked {
                    format!(
                        "{}.{}",
                        parts[m].reference, d.footprints[m].pads[pin.pad as usize].number
                    )
                } else {
                    let k = pin_sum[gi].iter().position(|e| e.0 == ni as u32)?;
                    format!("{}.{}", new_parts[gi].reference, k + 1)
                };
                if !names.contains(&name) {
                    names.push(name);
                }
            }
            groups_on.sort_unstable();
            groups_on.dedup();
            if groups_on.len() >= 2 {
                nets.push(Net {
                    name: net.name.clone(),
                    class: net.class.clone(),
                    pins: names,
                    weight: net.weight,
                });
            }
        }
        Some(nets)
    }
}

/// The groups of the matching: a pair, a single part or a locked part each, in the
/// order of each group's lowest index; and each part's group.
fn pair_groups(mate: &[Option<usize>]) -> (Vec<Vec<usize>>, Vec<usize>) {
    let n = mate.len();
    let mut groups: Vec<Vec<usize>> = Vec::new();
    let mut group_of = vec![usize::MAX; n];
    for i in 0..n {
        if group_of[i] != usize::MAX {
            continue;
        }
        let g = match mate[i] {
            Some(j) => vec![i, j],
            None => vec![i],
        };
        for &m in &g {
            group_of[m] = groups.len();
        }
        groups.push(g);
    }
    (groups, group_of)
}

/// The coarser design of the clusters, on a coarser grid for coarser parts.
fn clustered_design(d: &Design, new_parts: Vec<Part>, nets: Vec<Net>) -> Option<Design> {
    let mut rules = d.board.rules.clone();
    let g0 = rules.placement_grid;
    let board = Board {
        name: format!("{} (clustered)", d.board.name),
        outline: d.board.outline.clone(),
        keepouts: d.board.keepouts.clone(),
        rules: rules.clone(),
        classes: d.board.classes.clone(),
        parts: new_parts,
        nets,
        copper: Copper::default(),
        placement: None,
        optimum: None,
    };
    let mut design = resolve(board).ok()?;
    // A coarser grid for coarser parts: half the median short side, in whole steps of
    // the board's grid.
    let steps = (median_side(&design) / 2.0 / g0).round().max(1.0);
    rules.placement_grid = g0 * steps;
    design.board.rules = rules;
    Some(design)
}
