//! Placement: the incremental energy, the Metropolis sampler, the annealer and the legal
//! finish, checked against sources outside the project (../shared/CHECK-VALUES.md,
//! "Annealing and physics" and "Placement"), against exhaustive enumeration, against an
//! independent graph library (petgraph) and against numbers worked by hand.
//!
//! Each check names its source. "From memory" marks values that CHECK-VALUES.md (or this
//! test) recalls rather than read from the source; "common practice" marks facts of the
//! trade. All boards here are invented or generated.
//!
//! Everything runs with fixed seeds, so a failure is reproducible bit for bit.

use std::collections::HashMap;

use lehr_engine::model::board::{Board, Copper, Keepout, Layers, Net, Part, Rules, Shape};
use lehr_engine::model::footprint::PadSpec;
use lehr_engine::model::{Design, FootprintSpec, PadShape, Point, Quarter, Rect, Side, resolve};
use lehr_engine::place::anneal::temperature_for_acceptance;
use lehr_engine::place::layout::{Layout, PartMove, Terms, Weights};
use lehr_engine::place::mst::{self, Metric};
use lehr_engine::place::rng::Rng;
use lehr_engine::place::{
    self, AnnealOptions, Annealer, ConflictKind, Schedule, generate, legal::AREA_EPS,
};
use proptest::prelude::*;

// ---------------------------------------------------------------------------------------
// Builders for invented boards.
// ---------------------------------------------------------------------------------------

/// A custom footprint: SMD pads (number, x, y) of 0.3 x 0.3 mm and, if given, a courtyard
/// of `w` x `h` centred on the origin.
fn custom(pads: &[(&str, f64, f64)], court: Option<(f64, f64)>) -> FootprintSpec {
    FootprintSpec::Custom {
        pads: pads
            .iter()
            .map(|&(n, x, y)| PadSpec {
                number: n.to_string(),
                centre: Point::new(x, y),
                width: 0.3,
                height: 0.3,
                shape: PadShape::Rectangle,
                hole: None,
            })
            .collect(),
        courtyard: court.map(|(w, h)| Rect::centered(Point::new(0.0, 0.0), w, h)),
    }
}

fn part(reference: &str, footprint: FootprintSpec, at: Option<(f64, f64)>) -> Part {
    Part {
        reference: reference.to_string(),
        footprint,
        value: String::new(),
        at: at.map(Point::from),
        rotation: 0.0,
        side: Side::Top,
        locked: false,
    }
}

fn net(name: &str, pins: &[&str], weight: f64) -> Net {
    Net {
        name: name.to_string(),
        class: None,
        pins: pins.iter().map(|s| s.to_string()).collect(),
        weight,
    }
}

fn rect_shape(x0: f64, y0: f64, x1: f64, y1: f64) -> Shape {
    Shape::Rect {
        min: Point::new(x0, y0),
        max: Point::new(x1, y1),
    }
}

fn board(name: &str, outline: Shape, rules: Rules, parts: Vec<Part>, nets: Vec<Net>) -> Board {
    Board {
        name: name.to_string(),
        outline,
        keepouts: Vec::new(),
        rules,
        classes: Vec::new(),
        parts,
        nets,
        copper: Copper::default(),
        placement: None,
        optimum: None,
    }
}

fn design(b: Board) -> Design {
    resolve(b).unwrap_or_else(|p| panic!("test board should resolve: {p:?}"))
}

/// Rules with the given placement grid and clearance, defaults otherwise.
fn rules(grid: f64, clearance: f64) -> Rules {
    Rules {
        placement_grid: grid,
        clearance,
        ..Rules::default()
    }
}

/// Gives every unplaced part of `b` a random position on the `grid` within `bounds`.
fn scatter(b: &mut Board, bounds: Rect, grid: f64, rng: &mut Rng) {
    let nx = (bounds.width() / grid).floor() as u32 + 1;
    let ny = (bounds.height() / grid).floor() as u32 + 1;
    for p in &mut b.parts {
        if p.at.is_none() {
            p.at = Some(Point::new(
                bounds.min.x + f64::from(rng.below(nx)) * grid,
                bounds.min.y + f64::from(rng.below(ny)) * grid,
            ));
        }
    }
}

/// A pad centre on the board, computed here from the convention documented in
/// docs/board-format.md rather than with the engine's `to_board`: a bottom-side footprint
/// is seen through the board (x -> -x), then turned counter-clockwise by quarter turns
/// (y up), then moved to the part's position.
fn pad_on_board(pad: Point, at: Point, q: Quarter, side: Side) -> Point {
    let (mut x, mut y) = (pad.x, pad.y);
    if side == Side::Bottom {
        x = -x;
    }
    for _ in 0..q.index() {
        (x, y) = (-y, x);
    }
    Point::new(at.x + x, at.y + y)
}

/// Net-weighted and raw HPWL of every net of `d` with parts at the layout's positions and
/// turns, from the footprints' pads directly (no engine cache, no engine transform).
fn independent_hpwl(d: &Design, layout: &Layout) -> (f64, f64) {
    let (mut weighted, mut raw) = (0.0, 0.0);
    for (pins, n) in d.net_pins.iter().zip(&d.board.nets) {
        let pts: Vec<Point> = pins
            .iter()
            .map(|pin| {
                let i = pin.part.0;
                let pad = d.footprints[pin.part.index()].pads[pin.pad as usize].at;
                pad_on_board(
                    pad,
                    layout.position(i),
                    layout.quarter(i),
                    d.board.parts[pin.part.index()].side,
                )
            })
            .collect();
        let h = box_half_perimeter(&pts);
        weighted += n.weight * h;
        raw += h;
    }
    (weighted, raw)
}

/// (xmax - xmin) + (ymax - ymin), written out here (CHECK-VALUES.md, "Placement": the
/// definition of HPWL).
fn box_half_perimeter(pts: &[Point]) -> f64 {
    if pts.len() < 2 {
        return 0.0;
    }
    let xs = pts.iter().map(|p| p.x);
    let ys = pts.iter().map(|p| p.y);
    let (x0, x1) = (
        xs.clone().fold(f64::MAX, f64::min),
        xs.fold(f64::MIN, f64::max),
    );
    let (y0, y1) = (
        ys.clone().fold(f64::MAX, f64::min),
        ys.fold(f64::MIN, f64::max),
    );
    (x1 - x0) + (y1 - y0)
}

/// `a` equals `b` within `rel` relative, with a floor of 1 (mm or mm^2) on the scale so a
/// term that should be zero may carry the rounding of the additions that cancelled it.
fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1.0)
}

fn assert_terms_close(inc: &Terms, full: &Terms, rel: f64, what: &str) {
    for (name, a, b) in [
        ("wirelength", inc.wirelength, full.wirelength),
        ("overlap", inc.overlap, full.overlap),
        ("outside", inc.outside, full.outside),
        ("keepout", inc.keepout, full.keepout),
    ] {
        assert!(
            close(a, b, rel),
            "{what}: incremental {name} {a} != full {b} (diff {:e})",
            a - b
        );
    }
}

fn terms_plus(a: &Terms, d: &Terms) -> Terms {
    Terms {
        wirelength: a.wirelength + d.wirelength,
        overlap: a.overlap + d.overlap,
        outside: a.outside + d.outside,
        keepout: a.keepout + d.keepout,
    }
}

// ---------------------------------------------------------------------------------------
// 1. Incremental energy against full recomputation.
//    Source: the invariant stated in src/place/layout.rs; the reference is the definition
//    of each term (HPWL: CHECK-VALUES.md "Placement"), recomputed from the positions.
// ---------------------------------------------------------------------------------------

/// A board with everything the incremental update has to get right: a concave polygon
/// outline, part keep-outs on the top, the bottom and both sides (and one that only
/// keeps out copper), bottom-side, through-hole and turned parts, parts partly off the
/// board, and three nets of more than 12 pins (the engine's large-net path).
fn mixed_board(seed: u64) -> Board {
    let mut rng = Rng::new(seed);
    let footprints = [
        FootprintSpec::Chip("0603".into()),
        FootprintSpec::Chip("1206".into()),
        FootprintSpec::Soic(8),
        FootprintSpec::Sot23(3),
        FootprintSpec::Dip {
            pins: 8,
            wide: false,
        },
        FootprintSpec::Header { rows: 1, cols: 6 },
        FootprintSpec::TerminalBlock(2),
        FootprintSpec::MountingHole {
            hole: 3.2,
            pad: None,
        },
        custom(
            &[("1", -1.0, 0.5), ("2", 1.0, 0.5), ("3", 0.0, -1.0)],
            Some((3.0, 2.5)),
        ),
    ];
    let mut parts = Vec::new();
    for i in 0..60 {
        let fp = footprints[rng.below(footprints.len() as u32) as usize].clone();
        let mut p = part(&format!("X{}", i + 1), fp, None);
        p.side = if rng.below(3) == 0 {
            Side::Bottom
        } else {
            Side::Top
        };
        p.rotation = 90.0 * f64::from(rng.below(4));
        parts.push(p);
    }
    // Every pin, in random order, then handed out to nets.
    let mut free: Vec<String> = Vec::new();
    for p in &parts {
        let fp = p.footprint.build().expect("library footprint");
        for pad in &fp.pads {
            if !pad.number.is_empty() {
                free.push(format!("{}.{}", p.reference, pad.number));
            }
        }
    }
    for k in (1..free.len()).rev() {
        let j = rng.below(k as u32 + 1) as usize;
        free.swap(k, j);
    }
    let mut nets = Vec::new();
    for (name, size) in [("GND", 24), ("VCC", 16), ("BUS", 13)] {
        let pins: Vec<&str> = free[..size].iter().map(String::as_str).collect();
        nets.push(net(name, &pins, 1.0));
        free.drain(..size);
    }
    let mut k = 0;
    while free.len() >= 2 {
        let size = (2 + rng.below(3) as usize).min(free.len());
        let pins: Vec<&str> = free[..size].iter().map(String::as_str).collect();
        // Weights other than one, so the weighting is exercised too.
        let w = [1.0, 0.5, 2.0, 3.0][k % 4];
        nets.push(net(&format!("S{k}"), &pins, w));
        free.drain(..size);
        k += 1;
    }
    // A notched outline (concave), about 90 x 70 mm.
    let outline = Shape::Polygon(
        [
            (0.0, 0.0),
            (90.0, 0.0),
            (90.0, 45.0),
            (70.0, 70.0),
            (35.0, 70.0),
            (35.0, 50.0),
            (20.0, 50.0),
            (0.0, 60.0),
        ]
        .map(Point::from)
        .to_vec(),
    );
    let mut b = board("mixed", outline, rules(0.5, 0.2), parts, nets);
    b.keepouts = vec![
        Keepout {
            name: "fixing".into(),
            shape: rect_shape(75.0, 2.0, 86.0, 12.0),
            layers: Layers::Both,
            parts: true,
            copper: true,
        },
        Keepout {
            name: "battery underside".into(),
            shape: rect_shape(5.0, 5.0, 25.0, 18.0),
            layers: Layers::Bottom,
            parts: true,
            copper: true,
        },
        Keepout {
            name: "antenna".into(),
            shape: Shape::Polygon(
                [(40.0, 52.0), (65.0, 52.0), (55.0, 68.0)]
                    .map(Point::from)
                    .to_vec(),
            ),
            layers: Layers::Top,
            parts: true,
            copper: true,
        },
        Keepout {
            name: "copper only".into(),
            shape: rect_shape(40.0, 10.0, 55.0, 25.0),
            layers: Layers::Both,
            parts: false,
            copper: true,
        },
    ];
    // Positions on the 0.5 mm grid over the board and a few mm around it, so some parts
    // start partly outside and pins often share a coordinate (ties on a box edge).
    scatter(&mut b, Rect::new(-4.0, -4.0, 94.0, 74.0), 0.5, &mut rng);
    b
}

/// A random move on `layout`: a displacement (to a grid point or to an arbitrary point,
/// sometimes off the board, sometimes onto another part), a swap of two parts, a quarter
/// turn, or a move that changes nothing.
fn random_move(layout: &Layout, rng: &mut Rng, area: Rect) -> Vec<PartMove> {
    let n = layout.part_count() as u32;
    let a = rng.below(n);
    let qa = layout.quarter(a);
    let mv = |part, at, quarter| PartMove { part, at, quarter };
    match rng.below(10) {
        0..=3 => {
            let at = if rng.below(2) == 0 {
                let g = 0.5;
                Point::new(
                    area.min.x + (rng.unit() * area.width() / g).floor() * g,
                    area.min.y + (rng.unit() * area.height() / g).floor() * g,
                )
            } else {
                Point::new(
                    area.min.x + rng.unit() * area.width(),
                    area.min.y + rng.unit() * area.height(),
                )
            };
            let q = if rng.below(4) == 0 {
                Quarter::from_index(rng.below(4) as usize)
            } else {
                qa
            };
            vec![mv(a, at, q)]
        }
        4 => {
            // Onto another part's position: pins coincide, boxes tie.
            let b = rng.below(n);
            vec![mv(a, layout.position(b), qa)]
        }
        5..=7 => {
            let b = (a + 1 + rng.below(n - 1)) % n;
            let qb = layout.quarter(b);
            let (qa2, qb2) = if rng.below(3) == 0 {
                (qb, qa)
            } else {
                (qa, qb)
            };
            vec![
                mv(a, layout.position(b), qa2),
                mv(b, layout.position(a), qb2),
            ]
        }
        8 => vec![mv(
            a,
            layout.position(a),
            Quarter::from_index(qa.index() + 1 + rng.below(3) as usize),
        )],
        _ => vec![mv(a, layout.position(a), qa)],
    }
}

/// Applies `moves` random moves, keeping about half, and checks after each that the
/// running totals equal a full recomputation (never calling resync), that the change
/// `evaluate` returns is the change of the full recomputation, that a revert restores the
/// totals exactly, and, every 50 moves, that the wirelength agrees with HPWL computed
/// from the footprints directly.
fn check_incremental(d: &Design, seed: u64, moves: usize, area: Rect) {
    let mut layout = Layout::new(d).expect("all parts placed");
    let mut rng = Rng::new(seed);
    let rel = 1e-9;
    assert_terms_close(&layout.terms(), &layout.full_terms(), rel, "after build");
    for k in 0..moves {
        let mv = random_move(&layout, &mut rng, area);
        let before = layout.terms();
        let expected = layout.full_terms_with(&mv);
        let delta = layout.evaluate(&mv);
        assert_terms_close(
            &terms_plus(&before, &delta),
            &expected,
            rel,
            &format!("move {k} {mv:?}: totals + evaluated change"),
        );
        if rng.below(2) == 0 {
            layout.commit();
        } else {
            layout.revert();
            assert_eq!(
                layout.terms(),
                before,
                "move {k}: revert must restore totals"
            );
        }
        assert_terms_close(
            &layout.terms(),
            &layout.full_terms(),
            rel,
            &format!("after move {k}"),
        );
        if k % 50 == 0 || k + 1 == moves {
            let (weighted, raw) = independent_hpwl(d, &layout);
            assert!(
                close(layout.terms().wirelength, weighted, rel),
                "move {k}: wirelength {} vs pads {weighted}",
                layout.terms().wirelength
            );
            assert!(
                close(layout.wirelength_mm(), raw, rel),
                "move {k}: raw wirelength {} vs pads {raw}",
                layout.wirelength_mm()
            );
        }
    }
}

#[test]
fn incremental_terms_match_full_recomputation_on_a_random_board() {
    let mut b = generate::random_board(200, 11);
    let bounds = b.outline.bounds();
    let mut rng = Rng::new(5);
    scatter(&mut b, bounds, 0.5, &mut rng);
    let d = design(b);
    // The generated board has nets above the large-net threshold (12 pins).
    assert!(d.net_pins.iter().any(|p| p.len() > 12));
    check_incremental(&d, 1, 2000, bounds.inflate(3.0));
}

#[test]
fn incremental_terms_match_full_recomputation_on_a_mixed_board() {
    let d = design(mixed_board(3));
    assert!(d.board.parts.iter().any(|p| p.side == Side::Bottom));
    assert!(d.footprints.iter().any(|f| f.has_through_holes()));
    assert!(d.board.parts.iter().any(|p| p.rotation != 0.0));
    assert_eq!(d.net_pins.iter().filter(|p| p.len() > 12).count(), 3);
    let mut layout = Layout::new(&d).unwrap();
    let t = layout.full_terms();
    assert!(
        t.overlap > 0.0 && t.outside > 0.0 && t.keepout > 0.0,
        "{t:?}"
    );
    layout.resync();
    check_incremental(&d, 2, 3000, Rect::new(-6.0, -6.0, 96.0, 76.0));
}

/// Small random boards for the property test: parts with one to five pads on a coarse
/// lattice (so pins tie often), random courtyards, sides and holes; a rectangle or a
/// concave outline; one keep-out; nets over random pins, one of them possibly large.
#[derive(Clone, Debug)]
struct SmallPart {
    pads: Vec<(i8, i8)>,
    court: (u8, u8),
    bottom: bool,
    hole: bool,
    at: (i8, i8),
    quarter: u8,
}

fn small_part() -> impl Strategy<Value = SmallPart> {
    (
        prop::collection::vec((-2i8..=2, -2i8..=2), 1..=5),
        (1u8..=5, 1u8..=5),
        any::<bool>(),
        prop::bool::weighted(0.2),
        (-2i8..=22, -2i8..=17),
        0u8..4,
    )
        .prop_map(|(pads, court, bottom, hole, at, quarter)| SmallPart {
            pads,
            court,
            bottom,
            hole,
            at,
            quarter,
        })
}

fn small_board(parts: &[SmallPart], nets: &[Vec<usize>], concave: bool) -> Board {
    let mut all_pins = Vec::new();
    let ps: Vec<Part> = parts
        .iter()
        .enumerate()
        .map(|(i, sp)| {
            let pads = sp
                .pads
                .iter()
                .enumerate()
                .map(|(k, &(x, y))| {
                    all_pins.push(format!("P{i}.{}", k + 1));
                    PadSpec {
                        number: (k + 1).to_string(),
                        centre: Point::new(f64::from(x) * 0.5, f64::from(y) * 0.5),
                        width: 0.4,
                        height: 0.4,
                        shape: PadShape::Rectangle,
                        hole: sp.hole.then_some(0.2),
                    }
                })
                .collect();
            let (w, h) = (f64::from(sp.court.0), f64::from(sp.court.1));
            Part {
                reference: format!("P{i}"),
                footprint: FootprintSpec::Custom {
                    pads,
                    courtyard: Some(Rect::new(-w / 2.0, -h / 3.0, w / 2.0, 2.0 * h / 3.0)),
                },
                value: String::new(),
                at: Some(Point::new(f64::from(sp.at.0), f64::from(sp.at.1))),
                rotation: 90.0 * f64::from(sp.quarter),
                side: if sp.bottom { Side::Bottom } else { Side::Top },
                locked: false,
            }
        })
        .collect();
    // Each pin joins at most one net: nets take pins from the pool in order.
    let mut used = vec![false; all_pins.len()];
    let mut ns = Vec::new();
    for (k, picks) in nets.iter().enumerate() {
        let pins: Vec<&str> = picks
            .iter()
            .map(|&p| p % all_pins.len())
            .filter(|&p| !std::mem::replace(&mut used[p], true))
            .map(|p| all_pins[p].as_str())
            .collect();
        if !pins.is_empty() {
            ns.push(net(&format!("N{k}"), &pins, 1.0 + k as f64 * 0.25));
        }
    }
    let outline = if concave {
        Shape::Polygon(
            [
                (0.0, 0.0),
                (20.0, 0.0),
                (20.0, 15.0),
                (8.0, 8.0),
                (0.0, 15.0),
            ]
            .map(Point::from)
            .to_vec(),
        )
    } else {
        rect_shape(0.0, 0.0, 20.0, 15.0)
    };
    let mut b = board("small", outline, rules(0.5, 0.3), ps, ns);
    b.keepouts.push(Keepout {
        name: "k".into(),
        shape: rect_shape(12.0, 2.0, 17.0, 6.0),
        layers: Layers::Top,
        parts: true,
        copper: true,
    });
    b
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    /// The invariant of src/place/layout.rs on small random boards and move sequences.
    #[test]
    fn incremental_terms_match_full_recomputation_proptest(
        parts in prop::collection::vec(small_part(), 3..10),
        big in prop::collection::vec(0usize..64, 13..30),
        small in prop::collection::vec(prop::collection::vec(0usize..64, 1..5), 0..6),
        concave in any::<bool>(),
        moves in prop::collection::vec(
            (0u8..3, 0usize..64, 0usize..64, (-3i8..=23, -3i8..=18), 0u8..4, any::<bool>()),
            1..120,
        ),
    ) {
        // The first net is large (often more than 12 pins: the engine's edge-count path).
        let nets: Vec<Vec<usize>> = std::iter::once(big).chain(small).collect();
        let d = resolve(small_board(&parts, &nets, concave));
        // A board too small for its courtyards is rejected by the checks; skip it.
        prop_assume!(d.is_ok());
        let d = d.unwrap();
        let mut layout = Layout::new(&d).unwrap();
        let n = layout.part_count();
        for (k, &(kind, a, b, (x, y), q, keep)) in moves.iter().enumerate() {
            let (a, b) = ((a % n) as u32, (b % n) as u32);
            let at = Point::new(f64::from(x) * 0.75, f64::from(y) * 0.75);
            let q = Quarter::from_index(q as usize);
            let mv: Vec<PartMove> = match kind {
                0 => vec![PartMove { part: a, at, quarter: q }],
                1 if a != b => vec![
                    PartMove { part: a, at: layout.position(b), quarter: layout.quarter(a) },
                    PartMove { part: b, at: layout.position(a), quarter: q },
                ],
                _ => vec![PartMove { part: a, at: layout.position(a), quarter: q }],
            };
            let before = layout.terms();
            let expected = layout.full_terms_with(&mv);
            let delta = layout.evaluate(&mv);
            let sum = terms_plus(&before, &delta);
            if keep { layout.commit() } else { layout.revert() }
            let full = layout.full_terms();
            for (name, a, b) in [
                ("wirelength", layout.terms().wirelength, full.wirelength),
                ("overlap", layout.terms().overlap, full.overlap),
                ("outside", layout.terms().outside, full.outside),
                ("keepout", layout.terms().keepout, full.keepout),
                ("evaluated wirelength", sum.wirelength, expected.wirelength),
                ("evaluated overlap", sum.overlap, expected.overlap),
                ("evaluated outside", sum.outside, expected.outside),
                ("evaluated keepout", sum.keepout, expected.keepout),
            ] {
                prop_assert!(close(a, b, 1e-9), "move {}: {} {} vs full {}", k, name, a, b);
            }
        }
        let (weighted, _) = independent_hpwl(&d, &layout);
        prop_assert!(close(layout.terms().wirelength, weighted, 1e-9));
    }
}

/// The annealer's cache hints (src/place/layout.rs, `Layout::prefetch_row` and the
/// stages after it) are hints only: with them forced on or off, the same run gives the
/// same placement bit for bit. The board is small enough that they would be off.
#[test]
fn cache_hints_do_not_change_the_run() {
    let d = random_design(300, 4);
    let run = |hints: bool| {
        let opts = AnnealOptions {
            seed: 9,
            max_moves: Some(200_000),
            ..AnnealOptions::default()
        };
        let mut an = Annealer::new(&d, opts).unwrap();
        assert!(!an.layout().hints(), "300 parts fit the cache");
        an.layout_mut().set_hints(hints);
        an.run(|_| true);
        let l = an.layout();
        let pos: Vec<(u64, u64)> = l
            .positions()
            .iter()
            .map(|p| (p.x.to_bits(), p.y.to_bits()))
            .collect();
        (pos, l.quarters().to_vec(), an.moves(), an.accepted())
    };
    let (on, off) = (run(true), run(false));
    assert_eq!(on, off);
    // The run did something: parts moved and turned.
    assert!(on.3 > 10_000, "accepted {}", on.3);
}

// ---------------------------------------------------------------------------------------
// 2. Boltzmann distribution of the Metropolis sampler.
//    Source: Metropolis et al., J. Chem. Phys. 21, 1953 (CHECK-VALUES.md, "Annealing and
//    physics"): accepting with probability min(1, exp(-dE/T)) under a symmetric proposal
//    gives a chain whose stationary distribution is exp(-E(s)/T)/Z.
//
//    The proposal in src/place/anneal.rs (`Annealer::propose`) is symmetric only on boards
//    of at most two grid cells per axis whose courtyards are smaller than a grid cell, so
//    the test uses such a board (see the two ignored tests after it for why):
//    - directed moves (`directed_fraction`, aimed at the net neighbours) are off;
//    - the part is drawn uniformly;
//    - a turn goes to one of the three other quarters uniformly (symmetric);
//    - a displacement draws a target uniformly in a window of +-w cells and clamps it to
//      the board's cells. With two cells per axis the clamp is symmetric: from either
//      cell, w of the 2w + 1 offsets reach the other cell;
//    - a target inside another part's grown courtyard swaps the two parts. With
//      courtyards smaller than a cell, that happens exactly when the other part sits on
//      the target, so a swap is undone by the reverse draw, and a displacement never
//      lands two parts on one cell: the chain stays on assignments of distinct cells.
// ---------------------------------------------------------------------------------------

/// Three parts on a 2 x 2 cell board (cells (0|1, 0|1), grid 1 mm), courtyards 0.6 mm
/// (0.8 mm grown by half the 0.2 mm clearance) so no state overlaps or leaves the board.
/// A has two off-centre pins and can turn; B and C have their pins at the origin and a
/// square courtyard, so the engine treats them as not rotatable. States: 4 x 3 x 2 cell
/// assignments times A's 4 quarters = 96.
fn boltzmann_design() -> Design {
    let pads_ab = [("1", 0.0, 0.0), ("2", 0.0, 0.0)];
    let parts = vec![
        part(
            "A",
            custom(&[("1", 0.2, 0.1), ("2", -0.2, 0.0)], Some((0.6, 0.6))),
            Some((0.0, 0.0)),
        ),
        part("B", custom(&pads_ab, Some((0.6, 0.6))), Some((1.0, 0.0))),
        part("C", custom(&pads_ab, Some((0.6, 0.6))), Some((0.0, 1.0))),
    ];
    let nets = vec![
        net("N1", &["A.1", "B.1"], 1.0),
        net("N2", &["A.2", "C.1"], 1.5),
        net("N3", &["B.2", "C.2"], 0.7),
    ];
    design(board(
        "boltzmann",
        rect_shape(-0.5, -0.5, 1.5, 1.5),
        rules(1.0, 0.2),
        parts,
        nets,
    ))
}

fn sampler_weights(wl: f64) -> Weights {
    Weights {
        wirelength: wl,
        overlap: 10.0,
        outside: 10.0,
        keepout: 10.0,
    }
}

/// Every weight zero: the energy is the same in every state.
fn flat_weights() -> Weights {
    Weights {
        wirelength: 0.0,
        overlap: 0.0,
        outside: 0.0,
        keepout: 0.0,
    }
}

/// State key: each part's cell (x + 2 y) and A's quarter.
fn state_key(l: &Layout) -> [u8; 4] {
    let cell = |i: u32| {
        let p = l.position(i);
        (p.x.round() + 2.0 * p.y.round()) as u8
    };
    [cell(0), cell(1), cell(2), l.quarter(0).index() as u8]
}

/// Every state of the Boltzmann board with its energy by full recomputation.
fn enumerate_states(d: &Design, w: &Weights) -> Vec<([u8; 4], f64)> {
    let mut layout = Layout::new(d).unwrap();
    let at = |c: u8| Point::new(f64::from(c % 2), f64::from(c / 2));
    let mut out = Vec::new();
    for a in 0..4u8 {
        for b in (0..4u8).filter(|&b| b != a) {
            for c in (0..4u8).filter(|&c| c != a && c != b) {
                for q in 0..4u8 {
                    let qa = Quarter::from_index(q as usize);
                    layout.apply(&[PartMove {
                        part: 0,
                        at: at(a),
                        quarter: qa,
                    }]);
                    for (i, cell) in [(1, b), (2, c)] {
                        layout.apply(&[PartMove {
                            part: i,
                            at: at(cell),
                            quarter: Quarter::R0,
                        }]);
                    }
                    let key = [a, b, c, q];
                    assert_eq!(state_key(&layout), key);
                    out.push((key, layout.full_terms().energy(w)));
                }
            }
        }
    }
    out
}

/// Upper `p = 0.001` point of the chi-square distribution with `k` degrees of freedom, by
/// the Wilson-Hilferty cube-root approximation (Wilson and Hilferty, PNAS 17, 1931; from
/// memory; within about 1 % for k > 30, common statistical practice).
fn chi2_critical_001(k: f64) -> f64 {
    let z = 3.090_232; // upper 0.1 % point of the standard normal
    let c = 2.0 / (9.0 * k);
    k * (1.0 - c + z * c.sqrt()).powi(3)
}

/// Pearson's chi-square statistic of `counts` against probabilities `p`.
fn chi2(counts: &[u64], p: &[f64]) -> f64 {
    let n: u64 = counts.iter().sum();
    counts
        .iter()
        .zip(p)
        .map(|(&o, &pi)| {
            let e = pi * n as f64;
            (o as f64 - e).powi(2) / e
        })
        .sum()
}

fn boltzmann_probabilities(energies: &[f64], t: f64) -> Vec<f64> {
    let e0 = energies.iter().copied().fold(f64::MAX, f64::min);
    let w: Vec<f64> = energies.iter().map(|e| (-(e - e0) / t).exp()).collect();
    let z: f64 = w.iter().sum();
    w.iter().map(|x| x / z).collect()
}

/// Runs the engine's Metropolis sampler at temperature `t` and counts every `thin`-th
/// state, plus the transitions between consecutive states.
fn sample_states(
    d: &Design,
    w: Weights,
    t: f64,
    steps: u64,
    thin: u64,
    seed: u64,
    index: &HashMap<[u8; 4], usize>,
) -> (Vec<u64>, HashMap<(usize, usize), u64>) {
    let opts = AnnealOptions {
        seed,
        start_temperature: Some(t),
        rotate_fraction: 0.3,
        // Directed moves aim at the net neighbours: not symmetric, kept off.
        directed_fraction: 0.0,
        weights: Some(w),
        ..AnnealOptions::default()
    };
    let mut an = Annealer::new(d, opts).unwrap();
    let mut counts = vec![0u64; index.len()];
    let mut moves: HashMap<(usize, usize), u64> = HashMap::new();
    let mut prev = index[&state_key(an.layout())];
    let mut k = 0u64;
    an.sample_at(t, steps, |l| {
        let s = *index
            .get(&state_key(l))
            .unwrap_or_else(|| panic!("left the enumerated states: {:?}", state_key(l)));
        if s != prev {
            *moves.entry((prev, s)).or_default() += 1;
        }
        prev = s;
        k += 1;
        if k.is_multiple_of(thin) {
            counts[s] += 1;
        }
    });
    (counts, moves)
}

#[test]
fn metropolis_sampler_reproduces_the_boltzmann_distribution() {
    let d = boltzmann_design();
    let w = sampler_weights(1.0);
    let states = enumerate_states(&d, &w);
    assert_eq!(states.len(), 96);
    let index: HashMap<[u8; 4], usize> = states.iter().enumerate().map(|(i, s)| (s.0, i)).collect();
    let energies: Vec<f64> = states.iter().map(|s| s.1).collect();
    let (emin, emax) = (
        energies.iter().copied().fold(f64::MAX, f64::min),
        energies.iter().copied().fold(f64::MIN, f64::max),
    );
    assert!(emax - emin > 1.0, "the states must differ in energy");
    // A temperature at which the likeliest state is 20 times as likely as the least.
    let t = (emax - emin) / 20f64.ln();
    let p = boltzmann_probabilities(&energies, t);

    // Every 20th state of 300,000 steps: consecutive states are correlated (the statistic
    // of the unthinned chain is about 3.5 times its degrees of freedom), every 20th is
    // close to independent (the statistic over seeds 1..9 averaged 95 for 95 dof).
    let (counts, _) = sample_states(&d, w, t, 300_000, 20, 7, &index);
    let crit = chi2_critical_001(95.0);
    let x = chi2(&counts, &p);
    assert!(
        x < crit,
        "chi-square {x:.1} >= {crit:.1} (95 dof, p = 0.001)"
    );
    // The test has power: the same samples reject the distributions 1.5 times hotter and
    // colder (an acceptance rule off by that factor in T would fail).
    for (what, tt) in [("hotter", 1.5 * t), ("colder", t / 1.5)] {
        let y = chi2(&counts, &boltzmann_probabilities(&energies, tt));
        assert!(y > 3.0 * crit, "{what}: chi-square {y:.1} should reject");
    }
}

/// With every weight zero each proposal is accepted, so the chain is the proposal
/// kernel itself. A symmetric kernel (the condition of Metropolis et al. 1953 for the
/// Boltzmann result) has a uniform stationary distribution and equal flows both ways
/// along every pair of states: for each pair seen m times in all, the count one way is
/// Binomial(m, 1/2), and the sum of (a - b)^2 / (a + b) over pairs is chi-square with one
/// degree of freedom per pair.
#[test]
fn proposal_kernel_is_symmetric_on_the_sampler_board() {
    let d = boltzmann_design();
    let w = flat_weights();
    let states = enumerate_states(&d, &sampler_weights(1.0));
    let index: HashMap<[u8; 4], usize> = states.iter().enumerate().map(|(i, s)| (s.0, i)).collect();
    let (counts, moves) = sample_states(&d, w, 1.0, 200_000, 20, 3, &index);
    let uniform = vec![1.0 / 96.0; 96];
    let x = chi2(&counts, &uniform);
    assert!(x < chi2_critical_001(95.0), "visits not uniform: {x:.1}");
    let (mut s, mut pairs) = (0.0, 0.0);
    for (&(a, b), &n_ab) in &moves {
        if a < b {
            let n_ba = moves.get(&(b, a)).copied().unwrap_or(0);
            let m = (n_ab + n_ba) as f64;
            s += (n_ab as f64 - n_ba as f64).powi(2) / m;
            pairs += 1.0;
        } else {
            assert!(moves.contains_key(&(b, a)), "move {b} -> {a} never undone");
        }
    }
    // 96 states, each with 9 neighbours: 3 turns of A, 3 swaps, 3 moves to the free cell.
    assert_eq!(pairs, 432.0, "every neighbouring pair should be seen");
    assert!(
        s < chi2_critical_001(pairs),
        "flows differ: {s:.1} over {pairs} pairs"
    );
}

/// One part alone on a row of three cells, every weight zero: the energy is the same
/// everywhere, so the Boltzmann distribution is uniform, 1/3 per cell.
///
/// Guards the proposal's symmetry at the board edge: were an off-board target clamped
/// to the edge cell, then with the window the board's size (3 cells) an end cell would
/// reach the middle with 1 offset of 7 while the middle reaches each end with 3 of 7, and
/// the chain would visit the cells 3/7, 1/7, 3/7 (measured 0.145 for the middle before
/// the engine made off-board draws null moves).
#[test]
fn flat_energy_is_sampled_uniformly_on_a_row_of_three_cells() {
    let d = design(board(
        "row",
        rect_shape(-0.5, -0.5, 2.5, 0.5),
        rules(1.0, 0.2),
        vec![part(
            "P",
            custom(&[("1", 0.0, 0.0)], Some((0.6, 0.6))),
            Some((0.0, 0.0)),
        )],
        Vec::new(),
    ));
    let opts = AnnealOptions {
        seed: 5,
        start_temperature: Some(1.0),
        weights: Some(flat_weights()),
        directed_fraction: 0.0,
        ..AnnealOptions::default()
    };
    let mut an = Annealer::new(&d, opts).unwrap();
    // Every 20th state: consecutive states of the chain are correlated (most draws
    // leave this one-row board and are null moves), and chi-square wants independent
    // samples.
    let mut counts = [0u64; 3];
    let mut k = 0u64;
    an.sample_at(1.0, 600_000, |l| {
        k += 1;
        if k.is_multiple_of(20) {
            counts[l.position(0).x.round() as usize] += 1
        }
    });
    let x = chi2(&counts, &[1.0 / 3.0; 3]);
    let middle = counts[1] as f64 / 30_000.0;
    assert!(
        x < 13.8,
        "visits {counts:?}: middle {middle:.3}, chi-square {x:.1} (2 dof)"
    );
}

/// Two parts with courtyards wider than a grid cell on a row of four cells, every weight
/// zero (each proposal is accepted, so the chain shows the proposal kernel).
///
/// A target inside another part's grown courtyard swaps the two parts (anneal.rs,
/// `propose`, `part_at(target, a)`), even when that part does not sit on the target.
/// From the start, A at 0 and B at 1 (overlapping), B can be displaced to cell 2, which
/// A's grown courtyard (x from -1.4 to 1.4) does not cover. From A at 0, B at 2, the
/// reverse draw (B to 1) lands in A's courtyard and becomes a swap (A to 2, B to 0), so
/// the move cannot be undone: q(s -> s') > 0 with q(s' -> s) = 0, which no Metropolis
/// acceptance can balance. More: a state with the parts one cell apart can only be
/// entered by a draw one cell from the other part, which is inside its courtyard and so
/// always a swap, and a swap keeps the distance; once the chain leaves the start it never
/// returns (measured: the one one-way move in 20,000 steps is that first exit). The
/// engine therefore swaps only with a part whose origin is the target point; this test
/// guards that.
#[test]
fn every_move_can_be_undone_when_courtyards_exceed_the_grid() {
    let wide = custom(&[("1", 0.0, 0.0)], Some((2.6, 0.6)));
    let d = design(board(
        "wide",
        rect_shape(-0.5, -0.5, 3.5, 0.5),
        rules(1.0, 0.2),
        vec![
            part("A", wide.clone(), Some((0.0, 0.0))),
            part("B", wide, Some((1.0, 0.0))),
        ],
        Vec::new(),
    ));
    let opts = AnnealOptions {
        seed: 9,
        start_temperature: Some(1.0),
        weights: Some(flat_weights()),
        // No turns: a turned part's courtyard is narrow and would hide the effect.
        rotate_fraction: 0.0,
        directed_fraction: 0.0,
        ..AnnealOptions::default()
    };
    let mut an = Annealer::new(&d, opts).unwrap();
    let key = |l: &Layout| {
        (
            l.position(0).x.round() as i32,
            l.position(1).x.round() as i32,
        )
    };
    let mut prev = key(an.layout());
    // (A's cell, B's cell) before and after -> how often.
    type Pair = (i32, i32);
    let mut seen: HashMap<(Pair, Pair), u64> = HashMap::new();
    an.sample_at(1.0, 20_000, |l| {
        let s = key(l);
        if s != prev {
            *seen.entry((prev, s)).or_default() += 1;
        }
        prev = s;
    });
    let mut one_way: Vec<_> = seen
        .iter()
        .filter(|&(&(a, b), _)| !seen.contains_key(&(b, a)))
        .map(|(&(a, b), &n)| format!("{a:?} -> {b:?} ({n} times)"))
        .collect();
    one_way.sort();
    assert!(one_way.is_empty(), "never undone: {one_way:?}");
}

// ---------------------------------------------------------------------------------------
// 3. The known-optimal grid instance.
//    Source: CHECK-VALUES.md, "Placement", known-optimal grid netlist: an N x N array of
//    identical squares of side p filling an N p x N p board, one two-pin net per pair of
//    4-neighbours; each net's HPWL is at least p, so the optimum is 2 N (N - 1) p, reached
//    by the array itself (for N = 10: 180 p).
// ---------------------------------------------------------------------------------------

/// Places the grid instance and checks the result is legal, on the grid cells, and
/// returns wirelength / optimum.
fn grid_ratio(n: u32, pitch: f64, opts: &AnnealOptions, board_seed: u64) -> f64 {
    let d = design(generate::grid_board(n, pitch, board_seed));
    let placed = place::place(&d, opts, |_| true).unwrap();
    assert!(placed.report.legal, "{:?}", placed.report.conflicts);
    // Legal on this board means a permutation of the cells (the squares fill it).
    let mut cells: Vec<(i64, i64)> = placed
        .board
        .parts
        .iter()
        .map(|p| {
            let at = p.at.unwrap();
            let (x, y) = (at.x / pitch, at.y / pitch);
            assert!((x - x.round()).abs() < 1e-9 && (y - y.round()).abs() < 1e-9);
            (x.round() as i64, y.round() as i64)
        })
        .collect();
    cells.sort_unstable();
    cells.dedup();
    assert_eq!(cells.len(), (n * n) as usize, "two parts share a cell");
    // The reported wirelength is the HPWL of the placed board, recomputed here.
    let layout = Layout::new(&design(placed.board.clone())).unwrap();
    let (_, raw) = independent_hpwl(&d, &layout);
    assert!(close(placed.report.wirelength_mm, raw, 1e-12));
    // Each net is at least p long (the bound the optimum rests on).
    assert!(raw >= generate::grid_optimum(n, pitch) - 1e-9);
    placed.report.wirelength_mm / generate::grid_optimum(n, pitch)
}

#[test]
fn grid_optimum_formula() {
    // 2 N (N - 1) p; CHECK-VALUES.md gives 10 x 10 -> 180 p.
    assert_eq!(generate::grid_optimum(10, 1.0), 180.0);
    assert_eq!(generate::grid_optimum(4, 2.5), 60.0);
    assert_eq!(generate::grid_optimum(1, 1.0), 0.0);
}

/// Default options reach the 4 x 4 optimum exactly, whatever the seed (seeds 1..10, at
/// three pitches).
#[test]
fn grid_4x4_reaches_the_known_optimum_with_default_options() {
    let mut misses = Vec::new();
    for seed in 1..=10u64 {
        let pitch = [1.0, 2.5, 0.5][seed as usize % 3];
        let opts = AnnealOptions {
            seed,
            ..AnnealOptions::default()
        };
        let r = grid_ratio(4, pitch, &opts, seed);
        if !close(r, 1.0, 1e-12) {
            misses.push((seed, r));
        }
    }
    assert!(
        misses.is_empty(),
        "(seed, ratio) off the optimum: {misses:?}"
    );
}

/// The annealer alone, from the scatter (no analytical start), reaches the 4 x 4
/// optimum with the default budget (seeds 1..3).
#[test]
fn grid_4x4_reaches_the_known_optimum_from_the_scatter() {
    for seed in 1..=3u64 {
        let opts = AnnealOptions {
            seed,
            start: Start::Given,
            ..AnnealOptions::default()
        };
        let r = grid_ratio(4, 1.0, &opts, seed);
        assert!(close(r, 1.0, 1e-12), "seed {seed}: ratio {r}");
    }
}

/// 10 x 10 within 5 % of 180 p under a fixed seed and effort, with the Lundy-Mees
/// schedule (beta 0.05 per unit of T0, effort 10: about three million moves), which spends
/// long enough near the ordering temperature for sheared rows to straighten. Measured in
/// release for seeds 1..4: 1.000, 1.000, 1.000, 1.178; the geometric default freezes with
/// sheared arrays at 1.2 to 1.5 (see docs/performance.md).
#[test]
fn grid_10x10_within_five_percent_of_the_optimum() {
    let opts = AnnealOptions {
        seed: 1,
        schedule: Schedule::LundyMees,
        ..AnnealOptions::default()
    };
    let r = grid_ratio(10, 1.0, &opts, 1);
    assert!(r <= 1.05, "ratio {r:.4}");
}

// ---------------------------------------------------------------------------------------
// 4. Exhaustive optimum of a 6-part instance.
//    Source: enumeration of all 6! = 720 assignments with HPWL computed here from its
//    definition (CHECK-VALUES.md, "Placement"), independently of the engine.
// ---------------------------------------------------------------------------------------

/// Each net's pins as (part index, pad offset).
type NetPins = Vec<Vec<(usize, Point)>>;

/// Six 2 x 2 mm parts exactly filling a 6 x 4 mm board (slots at x = 0, 2, 4 and y = 0, 2,
/// placement grid 2 mm, no clearance), with off-centre pins and weighted nets. The only
/// legal placements are the 720 assignments of parts to slots.
fn six_part_instance() -> (Board, NetPins, Vec<f64>) {
    // Pads per part (number, x, y).
    let pads: [&[(&str, f64, f64)]; 6] = [
        &[("1", 0.5, 0.5), ("2", -0.5, 0.0), ("3", 0.0, -0.5)],
        &[("1", -0.5, 0.5), ("2", 0.5, -0.5)],
        &[("1", 0.0, 0.5), ("2", 0.5, 0.0)],
        &[("1", -0.5, -0.5), ("2", 0.5, 0.5)],
        &[("1", 0.5, 0.0), ("2", -0.5, 0.5), ("3", 0.0, 0.0)],
        &[("1", -0.5, 0.0), ("2", 0.0, -0.5)],
    ];
    let parts = (0..6)
        .map(|i| {
            part(
                &format!("P{}", i + 1),
                custom(pads[i], Some((2.0, 2.0))),
                None,
            )
        })
        .collect();
    // (net, weight, pins as (part index, pad number)).
    type NetSpec<'a> = (&'a str, f64, &'a [(usize, &'a str)]);
    let spec: [NetSpec; 6] = [
        ("N1", 1.0, &[(0, "1"), (1, "1"), (2, "1")]),
        ("N2", 2.0, &[(0, "2"), (3, "1")]),
        ("N3", 1.5, &[(1, "2"), (4, "1"), (5, "1")]),
        ("N4", 3.0, &[(2, "2"), (5, "2")]),
        ("N5", 1.0, &[(3, "2"), (4, "2")]),
        ("N6", 0.5, &[(4, "3"), (0, "3")]),
    ];
    let mut nets = Vec::new();
    let mut pins = Vec::new();
    let mut weights = Vec::new();
    for (name, w, list) in spec {
        let names: Vec<String> = list
            .iter()
            .map(|(i, n)| format!("P{}.{n}", i + 1))
            .collect();
        let refs: Vec<&str> = names.iter().map(String::as_str).collect();
        nets.push(net(name, &refs, w));
        pins.push(
            list.iter()
                .map(|&(i, n)| {
                    let &(_, x, y) = pads[i].iter().find(|p| p.0 == n).unwrap();
                    (i, Point::new(x, y))
                })
                .collect(),
        );
        weights.push(w);
    }
    let b = board(
        "six",
        rect_shape(-1.0, -1.0, 5.0, 3.0),
        rules(2.0, 0.0),
        parts,
        nets,
    );
    (b, pins, weights)
}

/// All permutations of 0..n (Heap's algorithm).
fn permutations(n: usize) -> Vec<Vec<usize>> {
    fn heap(k: usize, a: &mut Vec<usize>, out: &mut Vec<Vec<usize>>) {
        if k == 1 {
            out.push(a.clone());
            return;
        }
        for i in 0..k {
            heap(k - 1, a, out);
            let j = if k.is_multiple_of(2) { i } else { 0 };
            a.swap(j, k - 1);
        }
    }
    let mut out = Vec::new();
    heap(n, &mut (0..n).collect(), &mut out);
    out
}

#[test]
fn annealer_finds_the_exhaustive_optimum_of_six_parts() {
    let (b, pins, weights) = six_part_instance();
    let slots: Vec<Point> = [
        (0.0, 0.0),
        (2.0, 0.0),
        (4.0, 0.0),
        (0.0, 2.0),
        (2.0, 2.0),
        (4.0, 2.0),
    ]
    .map(Point::from)
    .to_vec();
    let cost = |slot_of: &[usize]| -> f64 {
        pins.iter()
            .zip(&weights)
            .map(|(net, w)| {
                let pts: Vec<Point> = net
                    .iter()
                    .map(|&(i, off)| slots[slot_of[i]].add(off))
                    .collect();
                w * box_half_perimeter(&pts)
            })
            .sum()
    };
    let perms = permutations(6);
    let mut distinct = perms.clone();
    distinct.sort();
    distinct.dedup();
    assert_eq!(distinct.len(), 720);
    let best = perms.iter().map(|p| cost(p)).fold(f64::MAX, f64::min);
    let worst = perms.iter().map(|p| cost(p)).fold(f64::MIN, f64::max);
    assert!(worst > best + 5.0, "the instance should discriminate");

    let d = design(b);
    for seed in [1u64, 2, 3] {
        // No turns: the enumeration covers positions only.
        let opts = AnnealOptions {
            seed,
            rotate_fraction: 0.0,
            ..AnnealOptions::default()
        };
        let placed = place::place(&d, &opts, |_| true).unwrap();
        assert!(placed.report.legal, "{:?}", placed.report.conflicts);
        let slot_of: Vec<usize> = placed
            .board
            .parts
            .iter()
            .map(|p| {
                assert_eq!(p.rotation, 0.0);
                let at = p.at.unwrap();
                slots.iter().position(|s| *s == at).expect("part on a slot")
            })
            .collect();
        let mine = cost(&slot_of);
        assert!(
            close(mine, best, 1e-12),
            "seed {seed}: {mine} vs optimum {best}"
        );
        // The engine's own energy of the result (weights 1 per mm, no violations).
        assert!(close(placed.report.energy, best, 1e-12));
    }
}

// ---------------------------------------------------------------------------------------
// 5. HPWL worked by hand, with a turned part and a bottom-side part.
//    Sources: CHECK-VALUES.md, "Placement" (HPWL); the pad transform is the convention of
//    docs/board-format.md (bottom side mirrored x -> -x, then turned counter-clockwise,
//    then moved).
// ---------------------------------------------------------------------------------------

#[test]
fn hpwl_of_a_hand_worked_example() {
    let parts = vec![
        // U1 at (10, 10), turned 90 degrees: (x, y) -> (-y, x).
        //   pad 1 (-2, 1) -> (-1, -2) -> (9, 8)
        //   pad 2 (2, -1) -> (1, 2)   -> (11, 12)
        Part {
            rotation: 90.0,
            ..part(
                "U1",
                custom(&[("1", -2.0, 1.0), ("2", 2.0, -1.0)], Some((6.0, 4.0))),
                Some((10.0, 10.0)),
            )
        },
        // J2 at (20, 5) on the bottom, turned 90: mirror (x, y) -> (-x, y), then turn.
        //   pad 1 (1.5, 0.5)  -> (-1.5, 0.5) -> (-0.5, -1.5) -> (19.5, 3.5)
        //   pad 2 (-1.5, 0.5) -> (1.5, 0.5)  -> (-0.5, 1.5)  -> (19.5, 6.5)
        //   (Turning before mirroring would give (20.5, 6.5) for pad 1; ignoring the side,
        //   (19.5, 6.5). Both change the totals below.)
        Part {
            rotation: 90.0,
            side: Side::Bottom,
            ..part(
                "J2",
                custom(&[("1", 1.5, 0.5), ("2", -1.5, 0.5)], Some((5.0, 3.0))),
                Some((20.0, 5.0)),
            )
        },
        // R3 at (14, 16), turned 180: (x, y) -> (-x, -y).
        //   pad 1 (-0.8, 0) -> (14.8, 16); pad 2 (0.8, 0) -> (13.2, 16)
        Part {
            rotation: 180.0,
            ..part(
                "R3",
                custom(&[("1", -0.8, 0.0), ("2", 0.8, 0.0)], None),
                Some((14.0, 16.0)),
            )
        },
    ];
    // N1 = U1.1 (9, 8), J2.1 (19.5, 3.5), R3.1 (14.8, 16):
    //   x 9 .. 19.5 = 10.5, y 3.5 .. 16 = 12.5, HPWL 23.0.
    // N2 = U1.2 (11, 12), R3.2 (13.2, 16), J2.2 (19.5, 6.5), weight 2:
    //   x 11 .. 19.5 = 8.5, y 6.5 .. 16 = 9.5, HPWL 18.0, weighted 36.0.
    // Raw total 41.0; weighted total 59.0.
    let nets = vec![
        net("N1", &["U1.1", "J2.1", "R3.1"], 1.0),
        net("N2", &["U1.2", "R3.2", "J2.2"], 2.0),
    ];
    let d = design(board(
        "hand",
        rect_shape(0.0, 0.0, 30.0, 25.0),
        Rules::default(),
        parts,
        nets,
    ));
    let n1 = [(9.0, 8.0), (19.5, 3.5), (14.8, 16.0)].map(Point::from);
    let n2 = [(11.0, 12.0), (13.2, 16.0), (19.5, 6.5)].map(Point::from);
    // The model places the pads where the hand computation does.
    for (pins, hand) in d.net_pins.iter().zip([&n1, &n2]) {
        for (pin, want) in pins.iter().zip(hand.iter()) {
            let got = d.pin_position(*pin).unwrap();
            assert!(
                (got.x - want.x).abs() < 1e-12 && (got.y - want.y).abs() < 1e-12,
                "{pin:?}: {got:?} vs {want:?}"
            );
        }
    }
    assert!((mst::hpwl(&n1) - 23.0).abs() < 1e-12);
    assert!((mst::hpwl(&n2) - 18.0).abs() < 1e-12);
    let layout = Layout::new(&d).unwrap();
    assert!((layout.terms().wirelength - 59.0).abs() < 1e-12);
    assert!((layout.full_terms().wirelength - 59.0).abs() < 1e-12);
    assert!((layout.wirelength_mm() - 41.0).abs() < 1e-12);
    // Three pins: the rectilinear MST joins U1.1-R3.1 (5.8 + 8 = 13.8) and U1.1-J2.1
    // (10.5 + 4.5 = 15.0): 28.8, between HPWL (23.0, the Steiner length for 3 pins) and
    // 1.5 x 23.0 = 34.5 (Hwang 1976).
    assert!((mst::spanning_length(&n1, Metric::Manhattan) - 28.8).abs() < 1e-12);
}

// ---------------------------------------------------------------------------------------
// 6. Minimum spanning trees against petgraph, and the Steiner bounds.
//    Sources: petgraph 0.8 `algo::min_spanning_tree` (Kruskal) on the complete graph;
//    CHECK-VALUES.md, "Placement": HPWL equals the rectilinear Steiner minimal tree (RSMT)
//    for 2 and 3 pins; Hwang, SIAM J. Appl. Math. 30(1), 1976: rectilinear MST <= 3/2
//    RSMT. The RSMT itself is computed here by Hanan's theorem (Hanan, SIAM J. Appl.
//    Math. 14, 1966; from memory, not in CHECK-VALUES.md): some RSMT uses only Steiner
//    points of the grid formed by the terminals' x and y coordinates, at most n - 2 of them.
// ---------------------------------------------------------------------------------------

fn petgraph_mst(pts: &[Point], metric: Metric) -> f64 {
    use petgraph::algo::min_spanning_tree;
    use petgraph::data::Element;
    use petgraph::graph::UnGraph;
    let mut g = UnGraph::<(), f64>::new_undirected();
    let nodes: Vec<_> = pts.iter().map(|_| g.add_node(())).collect();
    for i in 0..pts.len() {
        for j in i + 1..pts.len() {
            g.add_edge(nodes[i], nodes[j], metric.dist(pts[i], pts[j]));
        }
    }
    min_spanning_tree(&g)
        .filter_map(|e| match e {
            Element::Edge { weight, .. } => Some(weight),
            Element::Node { .. } => None,
        })
        .sum()
}

/// Rectilinear MST length by a plain O(n^2) Prim, written here.
fn manhattan_mst(pts: &[Point]) -> f64 {
    let n = pts.len();
    if n < 2 {
        return 0.0;
    }
    let mut best = vec![f64::INFINITY; n];
    let mut done = vec![false; n];
    best[0] = 0.0;
    let mut total = 0.0;
    for _ in 0..n {
        let k = (0..n)
            .filter(|&j| !done[j])
            .min_by(|&a, &b| best[a].total_cmp(&best[b]))
            .unwrap();
        done[k] = true;
        total += best[k];
        for j in 0..n {
            if !done[j] {
                best[j] = best[j].min(pts[k].manhattan(pts[j]));
            }
        }
    }
    total
}

/// Rectilinear Steiner minimal tree length by Hanan's theorem: the least MST over the
/// terminals plus at most n - 2 Hanan-grid points. Exponential; for n <= 5 only.
fn rsmt_length(pts: &[Point]) -> f64 {
    assert!(pts.len() <= 5);
    let mut cand = Vec::new();
    for a in pts {
        for b in pts {
            let h = Point::new(a.x, b.y);
            if !pts.contains(&h) && !cand.contains(&h) {
                cand.push(h);
            }
        }
    }
    let mut best = manhattan_mst(pts);
    let max_k = pts.len().saturating_sub(2);
    let mut chosen = Vec::new();
    fn go(
        start: usize,
        left: usize,
        cand: &[Point],
        pts: &[Point],
        chosen: &mut Vec<Point>,
        best: &mut f64,
    ) {
        if !chosen.is_empty() {
            let all: Vec<Point> = pts.iter().chain(chosen.iter()).copied().collect();
            *best = best.min(manhattan_mst(&all));
        }
        if left == 0 {
            return;
        }
        for i in start..cand.len() {
            chosen.push(cand[i]);
            go(i + 1, left - 1, cand, pts, chosen, best);
            chosen.pop();
        }
    }
    go(0, max_k, &cand, pts, &mut chosen, &mut best);
    best
}

fn point_set() -> impl Strategy<Value = Vec<Point>> {
    prop::collection::vec(
        prop_oneof![
            // On a coarse lattice: ties and collinear points.
            (0i32..6, 0i32..6).prop_map(|(x, y)| Point::new(f64::from(x), f64::from(y))),
            (-50.0f64..50.0, -50.0f64..50.0).prop_map(|(x, y)| Point::new(x, y)),
        ],
        1..40,
    )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    #[test]
    fn spanning_length_matches_petgraph(pts in point_set()) {
        for metric in [Metric::Manhattan, Metric::Euclidean] {
            let ours = mst::spanning_length(&pts, metric);
            let theirs = petgraph_mst(&pts, metric);
            prop_assert!(close(ours, theirs, 1e-12), "{:?}: {} vs petgraph {}", metric, ours, theirs);
            // The edges form a spanning tree: n - 1 edges joining every point.
            let edges = mst::spanning_tree(&pts, metric);
            prop_assert_eq!(edges.len(), pts.len().saturating_sub(1));
            let mut root: Vec<usize> = (0..pts.len()).collect();
            fn find(r: &mut [usize], mut i: usize) -> usize {
                while r[i] != i { r[i] = r[r[i]]; i = r[i]; }
                i
            }
            for &(a, b) in &edges {
                let (ra, rb) = (find(&mut root, a), find(&mut root, b));
                prop_assert_ne!(ra, rb, "edge {}-{} closes a cycle", a, b);
                root[ra] = rb;
            }
        }
    }

    #[test]
    fn steiner_bounds_hold(pts in prop::collection::vec(
        (0i32..8, 0i32..8).prop_map(|(x, y)| Point::new(f64::from(x), f64::from(y))), 2..6)
    ) {
        let h = mst::hpwl(&pts);
        let m = mst::spanning_length(&pts, Metric::Manhattan);
        let s = rsmt_length(&pts);
        // HPWL <= RSMT <= MST <= 1.5 RSMT (Hwang 1976).
        prop_assert!(h <= s + 1e-9 && s <= m + 1e-9 && m <= 1.5 * s + 1e-9, "{} {} {}", h, s, m);
        if pts.len() <= 3 {
            // CHECK-VALUES.md: for 2 and 3 pins HPWL is the RSMT length.
            prop_assert!((h - s).abs() < 1e-9, "hpwl {} vs rsmt {}", h, s);
            prop_assert!(m >= h - 1e-9 && m <= 1.5 * h + 1e-9);
        }
    }
}

#[test]
fn hwang_bound_is_reached_by_a_cross() {
    // Four pins around a centre, (+-1, 0) and (0, +-1): every pair is 2 apart, so the MST
    // is 3 x 2 = 6; a Steiner point at the centre gives 4. MST / RSMT = 3/2 exactly, the
    // bound of Hwang (1976) (its tightness: from memory).
    let pts = [(1.0, 0.0), (0.0, 1.0), (-1.0, 0.0), (0.0, -1.0)].map(Point::from);
    assert_eq!(mst::spanning_length(&pts, Metric::Manhattan), 6.0);
    assert_eq!(rsmt_length(&pts), 4.0);
    assert_eq!(mst::hpwl(&pts), 4.0);
}

// ---------------------------------------------------------------------------------------
// 7. Start temperature.
//    Source: Kirkpatrick, Gelatt and Vecchi, Science 220, 1983 (the rule as CHECK-VALUES.md
//    attributes it): T0 = mean(dE+) / ln(1/chi0); T0 / mean(dE+) = 4.48 for chi0 = 0.8 and
//    19.50 for chi0 = 0.95 (computed values in CHECK-VALUES.md). The engine solves
//    mean(exp(-dE/T0)) = chi0 over sampled uphill changes, which is the rule for equal
//    changes and the rate the Metropolis test then accepts for unequal ones.
// ---------------------------------------------------------------------------------------

/// A generated random board; its parts start unplaced, so the annealer scatters them.
fn random_design(count: u32, seed: u64) -> Design {
    design(generate::random_board(count, seed))
}

#[test]
fn start_temperature_follows_the_acceptance_rule() {
    // Kirkpatrick's rule for equal changes, which the solver must reproduce.
    assert!((1.0 / (1.0 / 0.8f64).ln() - 4.48).abs() < 0.005);
    assert!((1.0 / (1.0 / 0.95f64).ln() - 19.50).abs() < 0.005);
    for (chi, factor) in [(0.8, 4.48), (0.95, 19.50)] {
        let t = temperature_for_acceptance(&[3.0; 7], chi);
        assert!((t / 3.0 - factor).abs() < 0.005, "{chi}: {}", t / 3.0);
    }

    // The engine solves for the temperature at which the sampled uphill moves are
    // accepted at the rate asked for. Our own sample of the engine's proposals at the
    // start state (other draws than the engine's) must see that rate; then check what
    // the chain does: at each step, probe the proposals at the current state and
    // average min(1, exp(-dE/T0)) over the uphill ones, then take one Metropolis step.
    // The state improves as it goes, so the rate drifts down; what the chain accepts must
    // match what the probes predict.
    let d = random_design(200, 21);
    for chi0 in [0.3, 0.8] {
        let mut a = Annealer::new(
            &d,
            AnnealOptions {
                seed: 4,
                start_acceptance: chi0,
                max_moves: Some(1_000_000),
                ..AnnealOptions::default()
            },
        )
        .unwrap();
        let t0 = a.start_temperature();
        let (mut acc0, mut up0) = (0.0, 0u32);
        for _ in 0..20_000 {
            let de = a.probe(false);
            if de > 0.0 {
                acc0 += (-de / t0).exp();
                up0 += 1;
            }
        }
        let chi_start = acc0 / f64::from(up0);
        assert!(
            (chi_start - chi0).abs() < 0.03,
            "chi0 {chi0}: uphill acceptance at the start {chi_start:.3}"
        );
        let stage = a.moves_per_stage().min(5000);
        let (mut acc, mut up) = (0.0, 0u32);
        let (mut uphill_taken, mut e_prev) = (0u32, a.energy());
        for _ in 0..stage {
            for _ in 0..2 {
                let de = a.probe(false);
                if de > 0.0 {
                    acc += (-de / t0).exp();
                    up += 1;
                }
            }
            a.sample_at(t0, 1, |_| {});
            if a.energy() > e_prev {
                uphill_taken += 1;
            }
            e_prev = a.energy();
        }
        let chi = acc / f64::from(up);
        let uphill_share = f64::from(up) / (2.0 * stage as f64);
        // Cross-check with what the chain did: accepted uphill steps = steps x share x
        // rate.
        let taken = f64::from(uphill_taken) / stage as f64;
        assert!(
            chi <= chi_start + 0.02,
            "chi0 {chi0}: {chi:.3} over the stage"
        );
        assert!(
            (taken / (uphill_share * chi) - 1.0).abs() < 0.1,
            "chi0 {chi0}: taken {taken:.3}, predicted {:.3}",
            uphill_share * chi
        );
    }
}

// ---------------------------------------------------------------------------------------
// 8. Reproducibility. Source: the invariant in src/place/mod.rs (same design, options and
//    seed give the same result bit for bit); common practice for seeded annealers.
// ---------------------------------------------------------------------------------------

fn bits(b: &Board) -> Vec<(u64, u64, u64)> {
    b.parts
        .iter()
        .map(|p| {
            let at = p.at.unwrap();
            (at.x.to_bits(), at.y.to_bits(), p.rotation.to_bits())
        })
        .collect()
}

#[test]
fn same_seed_same_board_bit_for_bit() {
    let d = random_design(25, 3);
    let run = |seed| {
        place::place(
            &d,
            &AnnealOptions {
                seed,
                ..AnnealOptions::default()
            },
            |_| true,
        )
        .unwrap()
    };
    let (a, b) = (run(5), run(5));
    assert_eq!(bits(&a.board), bits(&b.board));
    assert_eq!(a.report.energy.to_bits(), b.report.energy.to_bits());
    assert_eq!(
        (a.report.moves, a.report.accepted),
        (b.report.moves, b.report.accepted)
    );
    assert_eq!(a.history, b.history);
    let ron = |b: &Board| ron::to_string(b).unwrap();
    assert_eq!(ron(&a.board), ron(&b.board));
    // Different seeds: different placements (each pair of three seeds).
    let (c, e) = (run(6), run(7));
    assert_ne!(bits(&a.board), bits(&c.board));
    assert_ne!(bits(&a.board), bits(&e.board));
    assert_ne!(bits(&c.board), bits(&e.board));
}

// ---------------------------------------------------------------------------------------
// 9. Locked parts and the legal finish. Source: the board format (locked parts never
//    move) and the definitions of the conflicts in src/place/legal.rs: a board gets a
//    conflict exactly when no placement of its unlocked parts can be legal.
// ---------------------------------------------------------------------------------------

#[test]
fn locked_parts_never_move() {
    let mut b = generate::random_board(40, 4);
    let side = b.outline.bounds().max.x;
    // At least 6 mm from the edges: the largest part (the 8-pin IC) fits turned either way.
    let spots = [
        (6.0, 6.0),
        (side - 6.0, 6.0),
        (6.0, side - 6.0),
        (side / 2.0, side / 2.0),
    ];
    for (k, &(x, y)) in spots.iter().enumerate() {
        let p = &mut b.parts[k * 7];
        p.at = Some(Point::new(x, y));
        p.rotation = 90.0 * k as f64;
        p.locked = true;
    }
    let d = design(b);
    let locked: Vec<usize> = (0..4).map(|k| k * 7).collect();
    let opts = AnnealOptions {
        seed: 8,
        ..AnnealOptions::default()
    };
    // Step by step: the locked parts stay put in every batch.
    let mut an = Annealer::new(&d, opts.clone()).unwrap();
    while !an.is_done() {
        an.run_moves(997);
        for &i in &locked {
            let want = d.board.parts[i].at.unwrap();
            assert_eq!(an.layout().position(i as u32), want);
            assert_eq!(an.layout().quarter(i as u32), d.board.parts[i].quarter());
        }
    }
    // And through the legal finish.
    let placed = place::place(&d, &opts, |_| true).unwrap();
    assert!(placed.report.legal, "{:?}", placed.report.conflicts);
    for &i in &locked {
        let (p, q) = (&placed.board.parts[i], &d.board.parts[i]);
        assert_eq!(p.at.unwrap().x.to_bits(), q.at.unwrap().x.to_bits());
        assert_eq!(p.at.unwrap().y.to_bits(), q.at.unwrap().y.to_bits());
        assert_eq!(p.rotation, q.rotation);
    }
}

/// A roomy 30 x 20 mm board with eight unlocked 0603 parts in a chain, plus `extra`.
fn roomy_board(extra: Vec<Part>) -> Board {
    let mut parts: Vec<Part> = (1..=8)
        .map(|i| part(&format!("R{i}"), FootprintSpec::Chip("0603".into()), None))
        .collect();
    parts.extend(extra);
    let nets = (1..8)
        .map(|i| {
            net(
                &format!("N{i}"),
                &[&format!("R{i}.2"), &format!("R{}.1", i + 1)],
                1.0,
            )
        })
        .collect();
    board(
        "roomy",
        rect_shape(0.0, 0.0, 30.0, 20.0),
        Rules::default(),
        parts,
        nets,
    )
}

fn locked_block(reference: &str, x: f64, y: f64) -> Part {
    Part {
        locked: true,
        ..part(
            reference,
            custom(&[("1", 0.0, 0.0)], Some((4.0, 4.0))),
            Some((x, y)),
        )
    }
}

fn place_default(b: Board) -> place::Placed {
    place::place(&design(b), &AnnealOptions::default(), |_| true).unwrap()
}

#[test]
fn legal_finish_reports_no_conflict_when_the_board_can_be_legal() {
    let placed = place_default(roomy_board(vec![locked_block("K1", 15.0, 10.0)]));
    assert!(placed.report.legal);
    assert!(placed.report.conflicts.is_empty());
    let t = Layout::new(&design(placed.board)).unwrap().full_terms();
    assert!(t.violation() <= AREA_EPS, "{t:?}");
}

#[test]
fn legal_finish_names_both_locked_overlapping_parts() {
    // Two locked 4 x 4 blocks whose centres are 3 mm apart in x: with the 0.2 mm default
    // clearance (0.1 mm each side) the grown courtyards overlap 1.2 x 4.2 = 5.04 mm^2.
    let placed = place_default(roomy_board(vec![
        locked_block("K1", 10.0, 10.0),
        locked_block("K2", 13.0, 10.0),
    ]));
    assert!(!placed.report.legal);
    let c = &placed.report.conflicts;
    assert_eq!(c.len(), 1, "{c:?}");
    assert_eq!(c[0].kind, ConflictKind::Overlap);
    assert_eq!(c[0].parts, vec!["K1".to_string(), "K2".to_string()]);
    assert!((c[0].area_mm2 - 5.04).abs() < 1e-9, "{}", c[0].area_mm2);
    let text = c[0].to_string();
    assert!(text.contains("K1") && text.contains("K2"), "{text}");
}

#[test]
fn legal_finish_reports_locked_parts_outside_but_not_in_keep_outs() {
    let mut b = roomy_board(vec![
        // Half of its 4 x 4 courtyard past the right edge (x = 30): 2 x 4 = 8 mm^2.
        locked_block("K1", 30.0, 10.0),
        // Wholly inside the keep-out below (16 mm^2), but locked: a keep-out is for the
        // parts the placer moves (a screw-head keep-out surrounds its own locked hole),
        // so the user's locked part is not flagged against it.
        locked_block("K2", 5.0, 15.0),
        // Unlocked and free to go: the finish moves it out of the keep-out.
        locked_block("U1", 5.0, 15.0),
    ]);
    b.keepouts.push(Keepout {
        name: "connector".into(),
        shape: rect_shape(2.0, 12.0, 9.0, 19.0),
        layers: Layers::Both,
        parts: true,
        copper: true,
    });
    let u1 = b.parts.iter_mut().find(|p| p.reference == "U1").unwrap();
    u1.locked = false;
    let placed = place_default(b);
    let c = &placed.report.conflicts;
    // K1 outside the board, and K1/U1 never overlapping again after the finish.
    let outside: Vec<_> = c
        .iter()
        .filter(|c| c.kind == ConflictKind::Outside)
        .collect();
    assert_eq!(outside.len(), 1, "{c:?}");
    assert_eq!(outside[0].parts, vec!["K1".to_string()]);
    assert!((outside[0].area_mm2 - 8.0).abs() < 1e-9);
    assert!(
        !c.iter().any(|c| matches!(c.kind, ConflictKind::Keepout(_))),
        "{c:?}"
    );
    // U1 was moved clear of the keep-out and of K2.
    assert!(
        c.iter().all(|c| !c.parts.contains(&"U1".to_string())),
        "{c:?}"
    );
}

#[test]
fn legal_finish_reports_a_board_that_cannot_be_legal() {
    // Two 2 x 2 squares on a 3 x 3 board (area 8 of 9): side by side they need 4 mm along
    // one axis, so every placement overlaps or leaves the board.
    let sq = custom(&[("1", 0.0, 0.0)], Some((2.0, 2.0)));
    let b = board(
        "tight",
        rect_shape(0.0, 0.0, 3.0, 3.0),
        rules(0.5, 0.0),
        vec![part("A", sq.clone(), None), part("B", sq, None)],
        Vec::new(),
    );
    let placed = place_default(b);
    assert!(!placed.report.legal);
    assert!(!placed.report.conflicts.is_empty());
    // Every reported conflict is real: recompute the areas of the placed board.
    let t = Layout::new(&design(placed.board.clone()))
        .unwrap()
        .full_terms();
    let reported: f64 = placed.report.conflicts.iter().map(|c| c.area_mm2).sum();
    assert!(close(reported, t.violation(), 1e-9), "{reported} vs {t:?}");
    // The same pair fits on a 4 x 2 board.
    let sq = custom(&[("1", 0.0, 0.0)], Some((2.0, 2.0)));
    let ok = place_default(board(
        "fits",
        rect_shape(0.0, 0.0, 4.0, 2.0),
        rules(0.5, 0.0),
        vec![part("A", sq.clone(), None), part("B", sq, None)],
        Vec::new(),
    ));
    assert!(ok.report.legal, "{:?}", ok.report.conflicts);
}

// ---------------------------------------------------------------------------------------
// 10. Annealing beats zero-temperature descent on the grid instance with the same moves.
//     Source: Kirkpatrick, Gelatt and Vecchi 1983 (the premise of annealing: accepting
//     uphill moves escapes the local minima a descent stops in); common practice.
// ---------------------------------------------------------------------------------------

/// The annealer runs from the scatter (`Start::Given`) until it freezes (about 80,000 to
/// 105,000 moves on this 8 x 8 grid); the descent then gets exactly as many moves from
/// the same start. Measured for seeds 1..8: annealing 112 to 168 mm, descent 194 to
/// 228 mm (optimum 112). Note: a geometric
/// schedule cut short by `max_moves` is not the comparison to make; it stops while still
/// hot (at 50,000 moves it ended at 277 to 366 mm, worse than descent).
#[test]
fn annealing_beats_descent_with_the_same_move_budget() {
    for seed in 1..=2u64 {
        let d = design(generate::grid_board(8, 1.0, seed));
        let anneal = place::place(
            &d,
            &AnnealOptions {
                seed,
                start: Start::Given,
                ..AnnealOptions::default()
            },
            |_| true,
        )
        .unwrap()
        .report;
        let opts = AnnealOptions {
            seed,
            schedule: Schedule::Descent,
            max_moves: Some(anneal.moves),
            start: Start::Given,
            ..AnnealOptions::default()
        };
        let descent = place::place(&d, &opts, |_| true).unwrap().report;
        assert_eq!(descent.moves, anneal.moves);
        assert!(anneal.legal && descent.legal);
        assert!(
            anneal.wirelength_mm < 0.9 * descent.wirelength_mm,
            "seed {seed}: anneal {} vs descent {}",
            anneal.wirelength_mm,
            descent.wirelength_mm
        );
    }
}

/// Moves of many parts at once (block moves exchange two windows' contents) keep the
/// incremental terms equal to a full recomputation too. Source: the layout invariant,
/// checked as in test 1.
#[test]
fn block_moves_keep_incremental_terms_exact() {
    let d = design(generate::random_board(150, 9));
    let opts = AnnealOptions {
        seed: 4,
        shift_fraction: 0.3,
        mirror_fraction: 0.3,
        scatter: true,
        ..AnnealOptions::default()
    };
    let mut an = Annealer::new(&d, opts).unwrap();
    let t0 = an.start_temperature();
    for round in 0..30 {
        an.sample_at(t0 * 0.3, 300, |_| {});
        let t = an.layout().terms();
        let f = an.layout().full_terms();
        for (a, b, what) in [
            (t.wirelength, f.wirelength, "wirelength"),
            (t.overlap, f.overlap, "overlap"),
            (t.outside, f.outside, "outside"),
            (t.keepout, f.keepout, "keepout"),
        ] {
            assert!(
                (a - b).abs() <= 1e-9 * b.abs().max(1.0),
                "round {round}: {what} {a} vs full {b}"
            );
        }
    }
}

// ---------------------------------------------------------------------------------------
// 12. Multilevel placement (clusters first, then parts). Sources: the known-optimal grid
//     netlist (CHECK-VALUES.md, "Placement") for legality and the wirelength bound, and
//     the board format (locked parts never move; same seed, same result).
// ---------------------------------------------------------------------------------------

/// The multilevel scheme keeps every promise of flat placement on the filled grid: the
/// result is a permutation of the cells, and the wirelength is at least the optimum.
#[test]
fn multilevel_grid_is_legal_and_above_the_bound() {
    let opts = AnnealOptions {
        seed: 2,
        multilevel: true,
        ..AnnealOptions::default()
    };
    let r = grid_ratio(12, 1.0, &opts, 3);
    // Measured 1.3-1.6 on 12 x 12 (seeds 1..3); a ratio near 2 would mean the levels
    // undo each other (a random arrangement is about 8).
    assert!((1.0..1.9).contains(&r), "ratio {r:.4}");
}

/// Locked parts stay themselves, in place, at every level; same seed, same board.
#[test]
fn multilevel_keeps_locked_parts_and_is_reproducible() {
    let mut b = generate::random_board(160, 5);
    let side = b.outline.bounds().max.x;
    for (k, &(x, y)) in [
        (6.0, 6.0),
        (side - 6.0, side / 2.0),
        (side / 2.0, side - 6.0),
    ]
    .iter()
    .enumerate()
    {
        let p = &mut b.parts[k * 11];
        p.at = Some(Point::new(x, y));
        p.locked = true;
    }
    let d = design(b);
    let opts = AnnealOptions {
        seed: 4,
        multilevel: true,
        ..AnnealOptions::default()
    };
    let a = place::place(&d, &opts, |_| true).unwrap();
    let again = place::place(&d, &opts, |_| true).unwrap();
    assert!(a.report.legal, "{:?}", a.report.conflicts);
    // More than one level ran: more stages than a flat run of the same board.
    let flat = place::place(
        &d,
        &AnnealOptions {
            multilevel: false,
            start: Start::Given,
            replicas: 1,
            ..opts.clone()
        },
        |_| true,
    )
    .unwrap();
    assert!(a.report.stages > flat.report.stages);
    for k in 0..3 {
        let i = k * 11;
        assert_eq!(a.board.parts[i].at, d.board.parts[i].at);
        assert_eq!(a.board.parts[i].rotation, d.board.parts[i].rotation);
    }
    for (p, q) in a.board.parts.iter().zip(&again.board.parts) {
        assert_eq!(
            p.at.map(|a| (a.x.to_bits(), a.y.to_bits())),
            q.at.map(|a| (a.x.to_bits(), a.y.to_bits()))
        );
        assert_eq!(p.rotation, q.rotation);
    }
    assert_eq!(a.report.moves, again.report.moves);
    // The history's move counts run on across the levels.
    assert!(a.history.windows(2).all(|w| w[0].moves <= w[1].moves));
    assert_eq!(a.history.last().unwrap().moves, a.report.moves);
}

/// Fan-out room: a TSSOP (0.65 mm pitch, JEDEC MO-153) keeps 2 (w + c) + c clear around
/// it for its widest net class; a SOIC (1.27 mm, JEDEC MS-012) and an unconnected
/// TSSOP keep nothing extra. The band is part of the overlap the energy counts.
#[test]
fn fine_pitch_parts_keep_a_fanout_band() {
    let mut b = board(
        "fan-out",
        rect_shape(0.0, 0.0, 40.0, 40.0),
        rules(0.5, 0.2),
        vec![
            part("U1", FootprintSpec::Tssop(8), Some((10.0, 10.0))),
            part("U2", FootprintSpec::Soic(8), Some((30.0, 10.0))),
            part("U3", FootprintSpec::Tssop(8), Some((10.0, 30.0))),
        ],
        vec![
            net("A", &["U1.1", "U2.1"], 1.0),
            Net {
                class: Some("power".into()),
                ..net("B", &["U1.2", "U2.2"], 1.0)
            },
        ],
    );
    b.classes.push(lehr_engine::model::board::NetClass {
        name: "power".into(),
        track_width: 0.5,
        clearance: 0.3,
        current: None,
        voltage: None,
        temp_rise: None,
    });
    let d = design(b);
    let m = lehr_engine::place::layout::fanout_margins(&d);
    // Widest of the default rules (track d.board.rules.track_width, clearance 0.2) and
    // the power class (0.5, 0.3).
    let w = d.board.rules.track_width.max(0.5);
    let c: f64 = 0.3;
    assert!((m[0] - (2.0 * (w + c) + c)).abs() < 1e-12, "{m:?}");
    assert_eq!(m[1], 0.0);
    assert_eq!(m[2], 0.0);
    let layout = Layout::new(&d).unwrap();
    let grown = layout.grown_courtyard(0);
    let court = layout.courtyard(0);
    assert!((grown.width() - court.width() - 2.0 * (0.1 + m[0])).abs() < 1e-9);
}

// ---------------------------------------------------------------------------------------
// Analytical start (`place::spectral`): the Laplacian's spectrum, quadratic placement,
// and the grid instance placed from the spectral start.
// ---------------------------------------------------------------------------------------

use lehr_engine::place::Start;
use lehr_engine::place::spectral::{self, Graph};

/// Laplacian eigenvalue of the path P_n: 2 - 2 cos(k pi / n), k = 0..n-1 (Brouwer and
/// Haemers, "Spectra of Graphs", section 1.4.4, from memory).
fn path_eigenvalue(n: usize, k: usize) -> f64 {
    2.0 - 2.0 * (k as f64 * std::f64::consts::PI / n as f64).cos()
}

fn path_edges(n: usize, first: u32) -> Vec<(u32, u32, f64)> {
    (0..n as u32 - 1)
        .map(|i| (first + i, first + i + 1, 1.0))
        .collect()
}

/// The grid graph P_m x P_n (Cartesian product): nodes r * n + c.
fn grid_edges(m: usize, n: usize) -> Vec<(u32, u32, f64)> {
    let mut e = Vec::new();
    for r in 0..m as u32 {
        for c in 0..n as u32 {
            let i = r * n as u32 + c;
            if c + 1 < n as u32 {
                e.push((i, i + 1, 1.0));
            }
            if r + 1 < m as u32 {
                e.push((i, i + n as u32, 1.0));
            }
        }
    }
    e
}

/// Checks a returned eigenpair: unit length, sums to zero, and L v = lambda v.
fn check_pair(g_edges: &[(u32, u32, f64)], n: usize, lambda: f64, v: &[f64]) {
    let norm: f64 = v.iter().map(|x| x * x).sum::<f64>().sqrt();
    assert!(close(norm, 1.0, 1e-9), "norm {norm}");
    let mut lv = vec![0.0; n];
    for &(a, b, w) in g_edges {
        let (a, b) = (a as usize, b as usize);
        lv[a] += w * (v[a] - v[b]);
        lv[b] += w * (v[b] - v[a]);
    }
    let res: f64 = lv
        .iter()
        .zip(v)
        .map(|(l, x)| (l - lambda * x).powi(2))
        .sum::<f64>()
        .sqrt();
    assert!(res < 1e-6, "residual {res}");
}

#[test]
fn spectral_path_eigenvalues_match_the_closed_form() {
    for n in [2usize, 3, 7, 20, 50] {
        let e = path_edges(n, 0);
        let g = Graph::from_edges(n, &e);
        let pairs = spectral::laplacian_eigenpairs(&g, 2);
        // P_n has n - 1 nonzero eigenvalues.
        assert_eq!(pairs.len(), 2.min(n - 1), "n = {n}");
        for (k, (lambda, v)) in pairs.iter().enumerate() {
            let want = path_eigenvalue(n, k + 1);
            assert!(close(*lambda, want, 1e-8), "P_{n}: {lambda} against {want}");
            check_pair(&e, n, *lambda, v);
            assert!(v.iter().sum::<f64>().abs() < 1e-9);
        }
    }
}

#[test]
fn spectral_grid_eigenvalues_are_sums_of_path_eigenvalues() {
    // The Laplacian of a Cartesian product has the sums of the factors' eigenvalues
    // (Brouwer and Haemers, section 1.4.6, from memory).
    for (m, n) in [(6usize, 4usize), (5, 5), (30, 30), (3, 11)] {
        let e = grid_edges(m, n);
        let g = Graph::from_edges(m * n, &e);
        let mut want: Vec<f64> = (0..m)
            .flat_map(|i| (0..n).map(move |j| path_eigenvalue(m, i) + path_eigenvalue(n, j)))
            .collect();
        want.sort_by(f64::total_cmp);
        let pairs = spectral::laplacian_eigenpairs(&g, 3);
        for (k, (lambda, v)) in pairs.iter().enumerate() {
            assert!(
                close(*lambda, want[k + 1], 1e-8),
                "{m} x {n}, #{}: {lambda} against {}",
                k + 2,
                want[k + 1]
            );
            check_pair(&e, m * n, *lambda, v);
        }
    }
}

#[test]
fn spectral_handles_disconnected_graphs_and_isolated_nodes() {
    // P_4 on nodes 0..3, P_6 on 4..9, node 10 alone: the nonzero spectrum is the union
    // of the two paths' spectra; every eigenvector sums to zero on each piece.
    let mut e = path_edges(4, 0);
    e.extend(path_edges(6, 4));
    let g = Graph::from_edges(11, &e);
    let mut want: Vec<f64> = (1..4)
        .map(|k| path_eigenvalue(4, k))
        .chain((1..6).map(|k| path_eigenvalue(6, k)))
        .collect();
    want.sort_by(f64::total_cmp);
    let pairs = spectral::laplacian_eigenpairs(&g, 4);
    assert_eq!(pairs.len(), 4);
    for (k, (lambda, v)) in pairs.iter().enumerate() {
        assert!(
            close(*lambda, want[k], 1e-8),
            "{lambda} against {}",
            want[k]
        );
        check_pair(&e, 11, *lambda, v);
        assert!(v[..4].iter().sum::<f64>().abs() < 1e-9);
        assert!(v[4..10].iter().sum::<f64>().abs() < 1e-9);
        assert_eq!(v[10], 0.0);
    }
    // At most n minus the number of pieces nonzero eigenvalues: 11 - 3 = 8.
    assert_eq!(spectral::laplacian_eigenpairs(&g, 20).len(), 8);
    // No edges at all: nothing to return, no NaN, no panic.
    assert!(spectral::laplacian_eigenpairs(&Graph::from_edges(5, &[]), 2).is_empty());
    assert!(spectral::laplacian_eigenpairs(&Graph::from_edges(0, &[]), 2).is_empty());
}

#[test]
fn quadratic_placement_spaces_a_chain_evenly_between_fixed_ends() {
    // The discrete Laplace equation on a chain: each free node at the mean of its two
    // neighbours, so the values are linear between the ends (handbook result).
    let n = 9;
    let g = Graph::from_edges(n, &path_edges(n, 0));
    let mut fixed = vec![None; n];
    fixed[0] = Some(2.0);
    fixed[n - 1] = Some(18.0);
    let x = spectral::quadratic(&g, &fixed);
    assert!(x[0].is_none() && x[n - 1].is_none());
    for (i, v) in x.iter().enumerate().take(n - 1).skip(1) {
        let want = 2.0 + 16.0 * i as f64 / (n - 1) as f64;
        assert!(
            close(v.unwrap(), want, 1e-10),
            "node {i}: {v:?} against {want}"
        );
    }
    // Weighted: one free node between ends held at 0 (weight 1) and 10 (weight 3) sits
    // at the weighted mean, 7.5.
    let g = Graph::from_edges(3, &[(0, 1, 1.0), (1, 2, 3.0)]);
    let x = spectral::quadratic(&g, &[Some(0.0), None, Some(10.0)]);
    assert!(close(x[1].unwrap(), 7.5, 1e-12));
    // A piece with no fixed node has no unique minimum: None.
    let g = Graph::from_edges(4, &[(0, 1, 1.0), (2, 3, 1.0)]);
    let x = spectral::quadratic(&g, &[Some(1.0), None, None, None]);
    assert_eq!(x, vec![None, Some(1.0), None, None]);
}

fn spectral_opts(seed: u64) -> AnnealOptions {
    AnnealOptions {
        seed,
        start: Start::Spectral,
        ..AnnealOptions::default()
    }
}

/// Issue 2's target on the smaller grid instances: within 10 % of 2N(N-1)p (the
/// optimum, reached by the array itself; CHECK-VALUES.md, "Placement").
#[test]
fn spectral_start_places_the_grid_within_ten_percent() {
    for (n, seed) in [(10u32, 1u64), (20, 1)] {
        let r = grid_ratio(n, 1.0, &spectral_opts(seed), 3);
        assert!(r <= 1.10, "N = {n}: ratio {r:.4}");
    }
    // Another pitch, other seeds.
    let r = grid_ratio(10, 2.54, &spectral_opts(2), 5);
    assert!(r <= 1.10, "N = 10, pitch 2.54: ratio {r:.4}");
}

/// The spread alone (before annealing) of the grid instance is the array itself: the
/// eigenvectors of the two smallest eigenvalues are cosines along the rows and columns
/// (Brouwer and Haemers, from memory), bisection by sorted coordinate cuts along grid
/// lines, and the angle search picks an axis-aligned rotation.
#[test]
fn spectral_start_of_the_grid_is_the_array() {
    for n in [4u32, 9, 16] {
        let d = design(generate::grid_board(n, 1.0, 7));
        let at = spectral::start_positions(&d);
        let mut b = d.board.clone();
        for (p, a) in b.parts.iter_mut().zip(&at) {
            p.at = Some(*a);
        }
        let layout = Layout::new(&design(b)).unwrap();
        let (_, raw) = independent_hpwl(&d, &layout);
        assert!(
            close(raw, generate::grid_optimum(n, 1.0), 1e-9),
            "N = {n}: {raw} against {}",
            generate::grid_optimum(n, 1.0)
        );
    }
}

/// On a sample board with locked parts (quadratic placement about them): a legal
/// result, locked parts untouched, and the same board bit for bit for the same seed.
#[test]
fn spectral_start_on_a_sample_board_is_legal_and_keeps_locked_parts() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-boards/soil-logger.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    assert!(d.board.parts.iter().any(|p| p.locked));
    let a = place::place(&d, &spectral_opts(3), |_| true).unwrap();
    let again = place::place(&d, &spectral_opts(3), |_| true).unwrap();
    assert!(a.report.legal, "{:?}", a.report.conflicts);
    for (p, q) in d.board.parts.iter().zip(&a.board.parts) {
        if p.locked {
            assert_eq!(p.at, q.at, "{}", p.reference);
            assert_eq!(p.rotation, q.rotation, "{}", p.reference);
        }
    }
    assert_eq!(bits(&a.board), bits(&again.board));
}

/// Odd input: one part, no nets, every part locked; no panic, finite positions.
#[test]
fn spectral_start_survives_odd_boards() {
    let one = board(
        "one",
        rect_shape(0.0, 0.0, 10.0, 10.0),
        rules(0.5, 0.2),
        vec![part(
            "A",
            custom(&[("1", 0.0, 0.0)], Some((2.0, 2.0))),
            None,
        )],
        vec![],
    );
    let r = place::place(&design(one), &spectral_opts(1), |_| true).unwrap();
    assert!(r.report.legal);
    let mut no_nets = generate::random_board(30, 2);
    no_nets.nets.clear();
    let r = place::place(&design(no_nets), &spectral_opts(1), |_| true).unwrap();
    assert!(r.report.legal, "{:?}", r.report.conflicts);
    assert!(
        r.board
            .parts
            .iter()
            .all(|p| p.at.is_some_and(|a| a.x.is_finite() && a.y.is_finite()))
    );
    let mut locked = generate::random_board(20, 3);
    for (k, p) in locked.parts.iter_mut().enumerate() {
        p.at = Some(Point::new(
            2.0 + 4.0 * (k % 5) as f64,
            2.0 + 4.0 * (k / 5) as f64,
        ));
        p.locked = true;
    }
    let d = design(locked);
    let r = place::place(&d, &spectral_opts(1), |_| true).unwrap();
    for (p, q) in d.board.parts.iter().zip(&r.board.parts) {
        assert_eq!(p.at, q.at);
    }
}

// ---------------------------------------------------------------------------------------
// The default start (`Start::Both`) keeps the better of the two single-start runs and
// counts the work of both. A check of the combination rule, not against an outside
// source.
// ---------------------------------------------------------------------------------------

#[test]
fn both_starts_keep_the_better_run_and_count_both() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-boards/signal-driver.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    // Both starts share the budget: the first gets the odd move.
    let budget = 400_001u64;
    for seed in 1..=2u64 {
        let with = |start, moves| AnnealOptions {
            seed,
            start,
            max_moves: Some(moves),
            ..AnnealOptions::default()
        };
        let given = place::place(&d, &with(Start::Given, budget / 2 + 1), |_| true).unwrap();
        let spectral = place::place(&d, &with(Start::Spectral, budget / 2), |_| true).unwrap();
        let both = place::place(&d, &with(Start::Both, budget), |_| true).unwrap();
        let better = if (spectral.report.legal && !given.report.legal)
            || (spectral.report.legal == given.report.legal
                && spectral.report.energy < given.report.energy)
        {
            &spectral
        } else {
            &given
        };
        assert_eq!(both.board.parts, better.board.parts, "seed {seed}");
        assert_eq!(both.report.start, better.report.start);
        assert_eq!(both.report.energy, better.report.energy);
        assert_eq!(both.report.moves, budget);
        assert_eq!(
            both.report.moves,
            given.report.moves + spectral.report.moves
        );
        assert_eq!(
            both.history.len(),
            given.history.len() + spectral.history.len()
        );
    }
}
