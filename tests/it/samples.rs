//! The sample boards in sample-boards/: each loads and resolves, has about the size its
//! scenario promises, and has a netlist a real schematic could have (no one-pin nets, every
//! IC grounded, locked parts placed, room enough to place). Placement itself is tested
//! elsewhere.
//!
//! These are sanity checks of invented demo data, not of the engine against an outside
//! source; the part-count ranges and the area factor are lehr's choice.

use std::path::{Path, PathBuf};

use lehr_engine::model::{Design, FootprintSpec};

/// Expected part counts per sample, by file name (lehr's choice).
const EXPECTED: [(&str, usize, usize); 4] = [
    ("led-dimmer.board.ron", 5, 12),
    ("soil-logger.board.ron", 20, 30),
    ("signal-driver.board.ron", 50, 70),
    ("audio-preamp.board.ron", 130, 170),
];

/// The board must offer at least this multiple of the parts' total courtyard area, so that
/// the placer has room to make it legal (lehr's choice).
const ROOM_FACTOR: f64 = 2.5;

fn sample_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards")
}

/// Every file in sample-boards/, sorted.
fn sample_files() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(sample_dir())
        .expect("sample-boards/ is readable")
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    files
}

fn load(path: &Path) -> Design {
    lehr_engine::io::load_board(path)
        .unwrap_or_else(|e| panic!("{} does not load: {e}", path.display()))
}

/// The expected part range for a sample file; a placed copy (`x.placed.board.ron`) counts
/// as its original.
fn expected_range(path: &Path) -> (usize, usize) {
    let name = path
        .file_name()
        .and_then(|n| n.to_str())
        .unwrap_or_default()
        .replace(".placed.board.ron", ".board.ron");
    EXPECTED
        .iter()
        .find(|(n, _, _)| *n == name)
        .map(|&(_, lo, hi)| (lo, hi))
        .unwrap_or_else(|| {
            panic!(
                "{}: unknown sample; add its expected part count to EXPECTED",
                path.display()
            )
        })
}

/// Packages counted as ICs: the ones that carry a supply.
fn is_ic(spec: &FootprintSpec) -> bool {
    match spec {
        FootprintSpec::Soic(_)
        | FootprintSpec::Tssop(_)
        | FootprintSpec::Qfn { .. }
        | FootprintSpec::Qfp { .. }
        | FootprintSpec::Dip { .. } => true,
        FootprintSpec::Sot23(pins) => *pins > 3,
        _ => false,
    }
}

fn is_ground(net_name: &str) -> bool {
    net_name.to_ascii_uppercase().contains("GND")
}

#[test]
fn every_expected_sample_is_present() {
    let files = sample_files();
    for (name, _, _) in EXPECTED {
        assert!(
            files
                .iter()
                .any(|f| f.file_name().is_some_and(|n| n == name)),
            "sample-boards/{name} is missing"
        );
    }
}

#[test]
fn samples_resolve_with_the_expected_part_counts() {
    for path in sample_files() {
        let d = load(&path);
        let (lo, hi) = expected_range(&path);
        let n = d.board.parts.len();
        assert!(
            (lo..=hi).contains(&n),
            "{}: {n} parts, expected {lo} to {hi}",
            path.display()
        );
    }
}

#[test]
fn every_net_joins_at_least_two_pins() {
    for path in sample_files() {
        let d = load(&path);
        for (net, pins) in d.board.nets.iter().zip(&d.net_pins) {
            assert!(
                pins.len() >= 2,
                "{}: net {} has {} pin(s)",
                path.display(),
                net.name,
                pins.len()
            );
        }
    }
}

#[test]
fn every_ic_has_a_ground_pin() {
    for path in sample_files() {
        let d = load(&path);
        for (i, part) in d.board.parts.iter().enumerate() {
            if !is_ic(&part.footprint) {
                continue;
            }
            let grounded = d.board.nets.iter().zip(&d.net_pins).any(|(net, pins)| {
                is_ground(&net.name) && pins.iter().any(|p| p.part.index() == i)
            });
            assert!(
                grounded,
                "{}: IC {} ({:?}) has no pin on a ground net",
                path.display(),
                part.reference,
                part.footprint
            );
        }
    }
}

#[test]
fn every_part_with_pins_is_connected() {
    for path in sample_files() {
        let d = load(&path);
        for (i, part) in d.board.parts.iter().enumerate() {
            if matches!(part.footprint, FootprintSpec::MountingHole { .. }) {
                continue;
            }
            let connected = d
                .net_pins
                .iter()
                .any(|pins| pins.iter().any(|p| p.part.index() == i));
            assert!(
                connected,
                "{}: part {} is on no net",
                path.display(),
                part.reference
            );
        }
    }
}

#[test]
fn locked_parts_have_positions() {
    for path in sample_files() {
        let d = load(&path);
        let locked: Vec<_> = d.board.parts.iter().filter(|p| p.locked).collect();
        assert!(
            !locked.is_empty(),
            "{}: no locked parts (mounting holes and edge connectors should be)",
            path.display()
        );
        for part in locked {
            assert!(
                part.at.is_some(),
                "{}: locked part {} has no position",
                path.display(),
                part.reference
            );
        }
    }
}

#[test]
fn boards_leave_room_to_place() {
    for path in sample_files() {
        let d = load(&path);
        let courtyards: f64 = d.footprints.iter().map(|f| f.courtyard.area()).sum();
        let board = d.board.outline.area();
        assert!(
            board >= ROOM_FACTOR * courtyards,
            "{}: board {board:.0} mm² is less than {ROOM_FACTOR} x the courtyards' {courtyards:.0} mm²",
            path.display()
        );
    }
}

/// Places a sample board with `lehr place`'s defaults and the given seed, routes it with
/// the router's defaults and checks the copper with the design-rule checker.
fn place_route_check(
    path: &Path,
    seed: u64,
) -> (
    lehr_engine::route::RouteResult,
    Vec<lehr_engine::rules::Violation>,
) {
    let d = load(path);
    let opts = lehr_engine::place::AnnealOptions {
        seed,
        ..lehr_engine::place::AnnealOptions::default()
    };
    let placed = lehr_engine::place::place(&d, &opts, |_| true)
        .unwrap_or_else(|e| panic!("{}: placement failed: {e}", path.display()));
    let placed = lehr_engine::model::resolve(placed.board).expect("a placed board stays valid");
    let cancel = std::sync::atomic::AtomicBool::new(false);
    let r = lehr_engine::route::route(
        &placed,
        &lehr_engine::route::RouteOptions::default(),
        &cancel,
        &mut |_| {},
    )
    .expect("the sample boards fit the routing grid");
    let mut board = placed.board.clone();
    board.copper = r.copper.clone();
    let routed = lehr_engine::model::resolve(board).expect("routed copper keeps a board valid");
    (r.clone(), lehr_engine::rules::check(&routed))
}

/// The routing target of the routing issue: every sample board, placed by `lehr place`
/// (seeds 1 to 3), routes completely, and the independent design-rule checker (exact
/// geometry, not the router's grid) finds nothing on it. (Before the placer kept a
/// fan-out band around fine-pitch parts, the soil logger's QFN-32 was packed in and 18
/// to 21 of its 22 nets routed.)
#[test]
fn placed_samples_route_completely_and_pass_the_checker() {
    for path in sample_files() {
        let name = path
            .file_name()
            .and_then(|n| n.to_str())
            .unwrap_or_default();
        for seed in [1u64, 2, 3] {
            let (r, violations) = place_route_check(&path, seed);
            let what = format!(
                "{name}, seed {seed}: {} of {} nets routed; unrouted: {:#?}; violations: {:#?}",
                r.routed, r.nets, r.unrouted, violations
            );
            for v in &violations {
                assert!(
                    v.kind == lehr_engine::rules::ViolationKind::Unconnected
                        && v.nets
                            .iter()
                            .all(|n| r.unrouted.iter().any(|u| &u.net == n)),
                    "{what}"
                );
            }
            assert_eq!(violations.len(), r.unrouted.len(), "{what}");
            assert!(r.unrouted.is_empty(), "{what}");
        }
    }
}
