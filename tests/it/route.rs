//! The router: its A* against the `pathfinding` crate's Dijkstra and A* on grids with
//! obstacles, and routed boards against the independent design-rule checker.

use std::sync::atomic::AtomicBool;

use lehr_engine::model::board::{Keepout, Layers};
use lehr_engine::model::{Board, Design, Shape};
use lehr_engine::route::{Cell, Maze, RouteOptions, RoutePhase, RouteProgress, RouteResult, route};
use lehr_engine::rules::{ViolationKind, check};
use pathfinding::prelude::{astar, dijkstra};

use super::boards::*;

/// Fixed-point scale for costs handed to `pathfinding`, which needs integer (Ord) costs.
const SCALE: f64 = 1e6;

/// A maze with about `density` of its cells blocked (invented test data).
fn random_maze(w: usize, h: usize, layers: usize, density: u64, seed: u64) -> Maze {
    let mut rng = Lcg::new(seed);
    let mut m = Maze::new(w, h, layers);
    for b in &mut m.blocked {
        *b = rng.below(100) < density;
    }
    m
}

/// The same graph as [`Maze::shortest_path`] searches, for the reference algorithms.
fn successors(m: &Maze, c: &Cell) -> Vec<(Cell, u64)> {
    let (x, y, l) = *c;
    let mut out = Vec::new();
    let open = |c: Cell| !m.blocked[m.index(c)];
    let dirs: &[(i64, i64)] = if m.diagonal {
        &[
            (1, 0),
            (0, 1),
            (-1, 0),
            (0, -1),
            (1, 1),
            (-1, 1),
            (-1, -1),
            (1, -1),
        ]
    } else {
        &[(1, 0), (0, 1), (-1, 0), (0, -1)]
    };
    for &(dx, dy) in dirs {
        let (nx, ny) = (x as i64 + dx, y as i64 + dy);
        if nx < 0 || ny < 0 || nx >= m.width as i64 || ny >= m.height as i64 {
            continue;
        }
        let n = (nx as usize, ny as usize, l);
        if !open(n) {
            continue;
        }
        if dx != 0 && dy != 0 {
            if !open((nx as usize, y, l)) || !open((x, ny as usize, l)) {
                continue;
            }
            out.push((n, (std::f64::consts::SQRT_2 * SCALE).round() as u64));
        } else {
            out.push((n, SCALE as u64));
        }
    }
    for l2 in 0..m.layers {
        if l2 != l && open((x, y, l2)) {
            out.push(((x, y, l2), (m.via_cost * SCALE).round() as u64));
        }
    }
    out
}

/// Checks that a path is made of legal moves between open cells and costs what was said.
fn path_cost(m: &Maze, path: &[Cell]) -> f64 {
    let mut cost = 0.0;
    for w in path.windows(2) {
        assert!(!m.blocked[m.index(w[0])] && !m.blocked[m.index(w[1])]);
        let step = successors(m, &w[0])
            .into_iter()
            .find(|(c, _)| *c == w[1])
            .unwrap_or_else(|| panic!("{:?} -> {:?} is not a move", w[0], w[1]));
        cost += step.1 as f64 / SCALE;
    }
    cost
}

fn compare_with_dijkstra(m: &Maze, from: Cell, to: Cell) -> bool {
    let ours = m.shortest_path(&[from], &[to]);
    let reference = if m.blocked[m.index(from)] {
        None
    } else {
        dijkstra(&from, |c| successors(m, c), |c| *c == to)
    };
    match (ours, reference) {
        (None, None) => false,
        (Some((cost, path)), Some((_, ref_cost))) => {
            let ref_cost = ref_cost as f64 / SCALE;
            assert!(
                (cost - ref_cost).abs() < 1e-4,
                "A* {cost} vs Dijkstra {ref_cost} from {from:?} to {to:?}"
            );
            assert_eq!(path.first(), Some(&from));
            assert_eq!(path.last(), Some(&to));
            assert!((path_cost(m, &path) - cost).abs() < 1e-4);
            true
        }
        (a, b) => panic!(
            "A* found {:?}, Dijkstra {:?} from {from:?} to {to:?}",
            a.map(|a| a.0),
            b.map(|b| b.1)
        ),
    }
}

// Reference: Dijkstra's algorithm as implemented by the `pathfinding` crate finds the
// least-cost path; A* with an admissible heuristic must find the same cost (Hart, Nilsson
// and Raphael 1968).
#[test]
fn astar_matches_dijkstra_on_one_layer() {
    let mut found = 0;
    for seed in 0..20 {
        let m = random_maze(24, 18, 1, 28, seed);
        let mut rng = Lcg::new(seed + 100);
        for _ in 0..10 {
            let a = (rng.below(24) as usize, rng.below(18) as usize, 0);
            let b = (rng.below(24) as usize, rng.below(18) as usize, 0);
            found += usize::from(compare_with_dijkstra(&m, a, b));
        }
    }
    assert!(found > 50, "too few reachable pairs ({found}) to mean much");
}

#[test]
fn astar_matches_dijkstra_on_two_layers_with_vias() {
    let mut found = 0;
    for seed in 0..20 {
        let mut m = random_maze(20, 20, 2, 35, seed);
        m.via_cost = 1.0 + (seed % 5) as f64 * 2.5;
        let mut rng = Lcg::new(seed + 200);
        for _ in 0..10 {
            let a = (
                rng.below(20) as usize,
                rng.below(20) as usize,
                rng.below(2) as usize,
            );
            let b = (
                rng.below(20) as usize,
                rng.below(20) as usize,
                rng.below(2) as usize,
            );
            found += usize::from(compare_with_dijkstra(&m, a, b));
        }
    }
    assert!(found > 50, "{found}");
}

// Reference: the `pathfinding` crate's own A* with the octile heuristic (scaled to
// integers) on the same 8-connected graph.
#[test]
fn astar_with_diagonals_matches_reference_astar() {
    let mut found = 0;
    for seed in 0..20 {
        let mut m = random_maze(20, 16, 1, 25, seed);
        m.diagonal = true;
        let mut rng = Lcg::new(seed + 300);
        for _ in 0..10 {
            let a = (rng.below(20) as usize, rng.below(16) as usize, 0);
            let b = (rng.below(20) as usize, rng.below(16) as usize, 0);
            let ours = m.shortest_path(&[a], &[b]);
            let reference = (!m.blocked[m.index(a)])
                .then(|| {
                    astar(
                        &a,
                        |c| successors(&m, c),
                        |c| {
                            let dx = c.0.abs_diff(b.0) as f64;
                            let dy = c.1.abs_diff(b.1) as f64;
                            let h = dx.max(dy) + (std::f64::consts::SQRT_2 - 1.0) * dx.min(dy);
                            (h * SCALE).floor() as u64
                        },
                        |c| *c == b,
                    )
                })
                .flatten();
            match (ours, reference) {
                (Some((c, p)), Some((_, rc))) => {
                    assert!((c - rc as f64 / SCALE).abs() < 1e-4, "{c} vs {rc}");
                    assert!((path_cost(&m, &p) - c).abs() < 1e-4);
                    found += 1;
                }
                (None, None) => {}
                (a, b) => panic!("{:?} vs {:?}", a.map(|a| a.0), b.map(|b| b.1)),
            }
        }
    }
    assert!(found > 50, "{found}");
}

#[test]
fn many_sources_find_the_nearest() {
    // Reference: Dijkstra from each source separately; the multi-source search must
    // return the least of those costs.
    for seed in 0..10 {
        let m = random_maze(20, 20, 1, 20, seed);
        let mut rng = Lcg::new(seed + 400);
        let sources: Vec<Cell> = (0..5)
            .map(|_| (rng.below(20) as usize, rng.below(20) as usize, 0))
            .filter(|c| !m.blocked[m.index(*c)])
            .collect();
        let target = (rng.below(20) as usize, rng.below(20) as usize, 0);
        let best = sources
            .iter()
            .filter_map(|s| dijkstra(s, |c| successors(&m, c), |c| *c == target))
            .map(|(_, c)| c as f64 / SCALE)
            .fold(f64::INFINITY, f64::min);
        match m.shortest_path(&sources, &[target]) {
            Some((c, p)) => {
                assert!((c - best).abs() < 1e-4, "{c} vs {best}");
                assert!(sources.contains(&p[0]));
            }
            None => assert!(best.is_infinite()),
        }
    }
}

fn run(design: &Design, opts: &RouteOptions) -> (RouteResult, Vec<RouteProgress>) {
    let cancel = AtomicBool::new(false);
    let mut seen = Vec::new();
    let r = route(design, opts, &cancel, &mut |p| seen.push(p.clone())).expect("routes");
    (r, seen)
}

/// The board with the router's copper in place, checked again from scratch.
fn with_copper(board: &Board, r: &RouteResult) -> Design {
    let mut b = board.clone();
    b.copper = r.copper.clone();
    design(b)
}

#[test]
fn small_board_routes_completely_and_passes_the_checker() {
    let board = small_board();
    let d = design(board.clone());
    let (r, progress) = run(&d, &RouteOptions::default());
    assert_eq!(r.nets, 6);
    assert_eq!(r.routed, 6, "unrouted: {:?}", r.unrouted);
    assert!(r.unrouted.is_empty());
    assert!(!r.cancelled);
    assert!(
        r.vias >= 1,
        "EN runs to a part on the bottom side and needs a via"
    );
    assert!(r.track_length_mm > 20.0);
    let v = check(&with_copper(&board, &r));
    assert!(v.is_empty(), "{v:#?}");
    // Power nets got their class width.
    assert!(
        r.copper
            .tracks
            .iter()
            .filter(|t| t.net == "GND" || t.net == "VCC")
            .all(|t| t.width == 0.4)
    );
    // Straight runs are merged: no three consecutive collinear points.
    for t in &r.copper.tracks {
        for w in t.points.windows(3) {
            let (a, b, c) = (w[0], w[1], w[2]);
            let cross = (b.x - a.x) * (c.y - b.y) - (b.y - a.y) * (c.x - b.x);
            assert!(cross.abs() > 1e-9, "collinear points in {t:?}");
        }
    }
    assert!(progress.iter().any(|p| p.phase == RoutePhase::Negotiating));
    assert!(progress.windows(2).all(|w| w[0].seconds <= w[1].seconds));
}

#[test]
fn small_board_routes_with_diagonal_steps() {
    let board = small_board();
    let d = design(board.clone());
    let opts = RouteOptions {
        diagonal: true,
        ..RouteOptions::default()
    };
    let (r, _) = run(&d, &opts);
    assert_eq!(r.routed, 6, "unrouted: {:?}", r.unrouted);
    let diagonal = r.copper.tracks.iter().any(|t| {
        t.points
            .windows(2)
            .any(|w| (w[1].x - w[0].x).abs() > 1e-9 && (w[1].y - w[0].y).abs() > 1e-9)
    });
    assert!(diagonal, "no 45-degree segment used");
    let v = check(&with_copper(&board, &r));
    assert!(v.is_empty(), "{v:#?}");
}

#[test]
fn polygon_outline_is_respected() {
    // Chamfered corners: 3 mm off each corner of the 32 x 22 board.
    let mut board = small_board();
    board.outline = Shape::Polygon(vec![
        p(3.0, 0.0),
        p(29.0, 0.0),
        p(32.0, 3.0),
        p(32.0, 19.0),
        p(29.0, 22.0),
        p(3.0, 22.0),
        p(0.0, 19.0),
        p(0.0, 3.0),
    ]);
    let d = design(board.clone());
    assert!(
        check(&d)
            .iter()
            .all(|v| v.kind == ViolationKind::Unconnected)
    );
    let (r, _) = run(&d, &RouteOptions::default());
    assert_eq!(r.routed, 6, "unrouted: {:?}", r.unrouted);
    let v = check(&with_copper(&board, &r));
    assert!(v.is_empty(), "{v:#?}");
}

#[test]
fn routing_is_deterministic() {
    let d = design(small_board());
    let (a, _) = run(&d, &RouteOptions::default());
    let (b, _) = run(&d, &RouteOptions::default());
    assert_eq!(a.copper, b.copper);
}

#[test]
fn a_walled_in_pin_is_reported_and_the_rest_stays_legal() {
    let mut board = small_board();
    // A copper keep-out ring around C2 (at 26, 5), leaving its pads no way out.
    let ring = |min: (f64, f64), max: (f64, f64)| Keepout {
        name: "ring".into(),
        shape: Shape::Rect {
            min: p(min.0, min.1),
            max: p(max.0, max.1),
        },
        layers: Layers::Both,
        parts: false,
        copper: true,
    };
    board.keepouts.extend([
        ring((23.5, 2.5), (28.5, 3.0)),
        ring((23.5, 7.0), (28.5, 7.5)),
        ring((23.5, 2.5), (24.0, 7.5)),
        ring((28.0, 2.5), (28.5, 7.5)),
    ]);
    let d = design(board.clone());
    let (r, _) = run(&d, &RouteOptions::default());
    let names: Vec<&str> = r.unrouted.iter().map(|u| u.net.as_str()).collect();
    assert!(
        names.contains(&"OUT") && names.contains(&"GND"),
        "{:?}",
        r.unrouted
    );
    let out = r.unrouted.iter().find(|u| u.net == "OUT").unwrap();
    assert!(out.why.contains("cannot be reached"), "{}", out.why);
    assert_eq!(r.routed, 4);
    let v = check(&with_copper(&board, &r));
    assert!(
        v.iter().all(|v| v.kind == ViolationKind::Unconnected),
        "{v:#?}"
    );
    assert_eq!(v.len(), 2);
}

#[test]
fn a_class_too_wide_for_a_fine_pitch_part_is_explained() {
    // Four 0.35 mm pads at 0.65 mm pitch: a 0.8 mm track with 0.25 mm clearance cannot
    // reach the inner pins, whatever the grid.
    let mut board = small_board();
    let pads = (0..4)
        .map(|i| {
            smd(
                &(i + 1).to_string(),
                p(0.65 * i as f64, 0.0),
                0.35,
                1.2,
                lehr_engine::model::PadShape::Rectangle,
            )
        })
        .collect();
    board.parts.push(custom("U9", pads, p(6.0, 12.0)));
    board.nets.push(net("HEAVY", &["U9.2", "R2.2"]));
    board.nets.retain(|n| n.name != "FB");
    board.nets.last_mut().unwrap().class = Some("power".into());
    board.classes[0].track_width = 0.8;
    let d = design(board);
    let (r, _) = run(&d, &RouteOptions::default());
    let heavy = r
        .unrouted
        .iter()
        .find(|u| u.net == "HEAVY")
        .expect("HEAVY unrouted");
    assert!(
        heavy.why.contains("too wide for this footprint"),
        "{}",
        heavy.why
    );
}

#[test]
fn unplaced_parts_leave_their_nets_unrouted() {
    let mut board = small_board();
    board
        .parts
        .iter_mut()
        .find(|p| p.reference == "R2")
        .unwrap()
        .at = None;
    let d = design(board);
    let (r, _) = run(&d, &RouteOptions::default());
    let why: Vec<(&str, &str)> = r
        .unrouted
        .iter()
        .map(|u| (u.net.as_str(), u.why.as_str()))
        .collect();
    assert!(why.contains(&("SIG", "part R2 is not placed")), "{why:?}");
    assert!(why.contains(&("FB", "part R2 is not placed")), "{why:?}");
    assert_eq!(r.routed, 4);
}

#[test]
fn cancelling_stops_early_with_legal_copper() {
    let board = small_board();
    let d = design(board.clone());
    let cancel = AtomicBool::new(true);
    let r = route(&d, &RouteOptions::default(), &cancel, &mut |_| {}).unwrap();
    assert!(r.cancelled);
    assert_eq!(r.routed, 0);
    assert_eq!(r.unrouted.len(), 6);
    assert!(r.copper.tracks.is_empty());
}

#[test]
fn a_grid_too_fine_is_refused() {
    let mut board = small_board();
    board.rules.routing_grid = 0.01;
    let d = design(board);
    let cancel = AtomicBool::new(false);
    let e = route(&d, &RouteOptions::default(), &cancel, &mut |_| {}).unwrap_err();
    assert!(e.to_string().contains("coarser routing grid"), "{e}");
}

#[test]
fn crowded_synthetic_board_negotiates_to_a_legal_result() {
    // Invented test data: 16 parts, kept small so the debug build stays quick.
    let board = synthetic(16, 3);
    let d = design(board.clone());
    let (r, progress) = run(&d, &RouteOptions::default());
    assert_eq!(r.routed + r.unrouted.len(), r.nets);
    assert!(
        r.routed * 10 >= r.nets * 9,
        "{} of {}: {:?}",
        r.routed,
        r.nets,
        r.unrouted
    );
    let v = check(&with_copper(&board, &r));
    assert!(
        v.iter().all(|v| v.kind == ViolationKind::Unconnected),
        "{v:#?}"
    );
    assert_eq!(v.len(), r.unrouted.len());
    assert!(!progress.is_empty());
}

/// Routes synthetic boards of 60 and 150 parts and prints the figures; run with
/// `cargo test --release -- --ignored --nocapture route_timing`.
#[test]
#[ignore = "timing; run in release"]
fn route_timing() {
    for (n, dense, budget) in [
        (60, false, 5.0),
        (150, false, 30.0),
        (60, true, 5.0),
        (150, true, 30.0),
    ] {
        let board = if dense {
            synthetic_dense(n, 11)
        } else {
            synthetic(n, 11)
        };
        let d = design(board.clone());
        // The board itself is legal; only its nets are open.
        assert!(
            check(&d)
                .iter()
                .all(|v| v.kind == ViolationKind::Unconnected)
        );
        let (r, _) = run(&d, &RouteOptions::default());
        let routed = with_copper(&board, &r);
        let t = std::time::Instant::now();
        let v = check(&routed);
        let check_s = t.elapsed().as_secs_f64();
        let bad: Vec<_> = v
            .iter()
            .filter(|v| v.kind != ViolationKind::Unconnected)
            .collect();
        println!(
            "{n} parts{}: {} nets, {} routed, {} unrouted, {:.0} mm, {} vias, {} passes, {:.2} s, \
             {} violations ({} not unconnected), checked in {check_s:.3} s",
            if dense { " (dense)" } else { "" },
            r.nets,
            r.routed,
            r.unrouted.len(),
            r.track_length_mm,
            r.vias,
            r.passes,
            r.seconds,
            v.len(),
            bad.len()
        );
        for u in &r.unrouted {
            println!("  {}: {}", u.net, u.why);
        }
        assert!(bad.is_empty(), "{bad:#?}");
        assert!(r.seconds < budget, "{} s", r.seconds);
    }
}

/// Rectilinear minimum spanning tree length by petgraph's Kruskal on the complete graph.
fn petgraph_manhattan_mst(pts: &[lehr_engine::model::Point]) -> f64 {
    use petgraph::algo::min_spanning_tree;
    use petgraph::data::Element;
    use petgraph::graph::UnGraph;
    let mut g = UnGraph::<(), f64>::new_undirected();
    let nodes: Vec<_> = pts.iter().map(|_| g.add_node(())).collect();
    for i in 0..pts.len() {
        for j in i + 1..pts.len() {
            let d = (pts[i].x - pts[j].x).abs() + (pts[i].y - pts[j].y).abs();
            g.add_edge(nodes[i], nodes[j], d);
        }
    }
    min_spanning_tree(&g)
        .filter_map(|e| match e {
            Element::Edge { weight, .. } => Some(weight),
            Element::Node { .. } => None,
        })
        .sum()
}

#[test]
fn routing_quality_figures_match_an_independent_computation() {
    let board = small_board();
    let d = design(board.clone());
    let (r, _) = run(&d, &RouteOptions::default());
    assert_eq!(r.routed, r.nets, "unrouted: {:?}", r.unrouted);
    // The pad centres from the model's own pin positions, not the router's pin list.
    let nets: Vec<Vec<lehr_engine::model::Point>> = d
        .net_pins
        .iter()
        .filter(|pins| pins.len() >= 2)
        .map(|pins| {
            pins.iter()
                .map(|&p| d.pin_position(p).expect("placed"))
                .collect()
        })
        .collect();
    assert_eq!(nets.len(), r.nets);
    let mst: f64 = nets.iter().map(|pts| petgraph_manhattan_mst(pts)).sum();
    assert!(mst > 0.0);
    assert!((r.mst_mm - mst).abs() < 1e-9, "{} vs {mst}", r.mst_mm);
    // Track length from the copper's segments, vias counted on the copper.
    let track: f64 = r
        .copper
        .tracks
        .iter()
        .flat_map(|t| {
            t.points
                .windows(2)
                .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
        })
        .sum();
    assert!((r.track_length_mm - track).abs() < 1e-9);
    assert!((r.track_over_mst - track / mst).abs() < 1e-12);
    let per_net = r.copper.vias.len() as f64 / nets.len() as f64;
    assert!((r.vias_per_net - per_net).abs() < 1e-12);
    assert!(r.vias_per_net > 0.0, "EN needs a via");
    // Every routed net joins all its pads, so its copper is at least a rectilinear Steiner
    // tree of them, which is at least 2/3 of the spanning tree (Hwang, 1976).
    assert!(r.track_over_mst >= 2.0 / 3.0, "{}", r.track_over_mst);
}
