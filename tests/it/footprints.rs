//! Footprint packages: pitch, row spacing, body sizes, drills, pin counts, pin 1 and the
//! numbering direction against the package standards as collected in
//! ../shared/CHECK-VALUES.md ("Packages"), plus validation of bad parameters.
//!
//! Each check names its source. "From memory" marks values CHECK-VALUES.md (or this test)
//! recalls rather than read from the standard; "common practice" marks conventions of the
//! trade; "lehr's choice" marks values the package library picked itself, tested only so
//! that a change to them is deliberate.

use std::f64::consts::TAU;

use approx::assert_abs_diff_eq;
use lehr_engine::model::footprint::{COURTYARD_EXCESS, FootprintError, PadSpec};
use lehr_engine::model::names::parse_footprint_name;
use lehr_engine::model::{Footprint, FootprintSpec, Pad, PadKind, PadShape, Point, Rect};
use proptest::prelude::*;

/// Tolerance for positions computed from exact decimal dimensions.
const EPS: f64 = 1e-9;

fn build(spec: &FootprintSpec) -> Footprint {
    spec.build()
        .unwrap_or_else(|e| panic!("{spec:?} should build: {e}"))
}

fn pad<'a>(fp: &'a Footprint, number: &str) -> &'a Pad {
    let i = fp
        .pad_index(number)
        .unwrap_or_else(|| panic!("{} has no pad {number}", fp.name));
    &fp.pads[i]
}

fn at(fp: &Footprint, number: u32) -> Point {
    pad(fp, &number.to_string()).at
}

fn qfn(pins: u32, body: f64, pitch: f64, thermal: Option<f64>) -> FootprintSpec {
    FootprintSpec::Qfn {
        pins,
        body,
        pitch,
        thermal,
    }
}

fn qfp(pins: u32, body: f64, pitch: f64) -> FootprintSpec {
    FootprintSpec::Qfp { pins, body, pitch }
}

fn dip(pins: u32, wide: bool) -> FootprintSpec {
    FootprintSpec::Dip { pins, wide }
}

fn header(rows: u32, cols: u32) -> FootprintSpec {
    FootprintSpec::Header { rows, cols }
}

fn radial(pitch: f64, diameter: f64) -> FootprintSpec {
    FootprintSpec::Radial { pitch, diameter }
}

fn axial(pitch: f64, length: f64, diameter: f64) -> FootprintSpec {
    FootprintSpec::Axial {
        pitch,
        length,
        diameter,
    }
}

fn hole(drill: f64, pad: Option<f64>) -> FootprintSpec {
    FootprintSpec::MountingHole { hole: drill, pad }
}

/// Every variant with typical parameters, and the number of pads each should have.
fn typical() -> Vec<(FootprintSpec, usize)> {
    let mut v = Vec::new();
    for code in ["0402", "0603", "0805", "1206", "1210", "2512"] {
        v.push((FootprintSpec::Chip(code.into()), 2));
    }
    v.push((FootprintSpec::Sod123, 2));
    for n in [3, 5, 6] {
        v.push((FootprintSpec::Sot23(n), n as usize));
    }
    for n in [8, 14, 16] {
        v.push((FootprintSpec::Soic(n), n as usize));
    }
    for n in [8, 14, 16, 20, 24, 28] {
        v.push((FootprintSpec::Tssop(n), n as usize));
    }
    // Common QFN bodies (JEDEC MO-220, from memory): 3 x 3, 4 x 4, 5 x 5 at 0.5 pitch,
    // and a few other sizes and pitches.
    v.push((qfn(16, 3.0, 0.5, Some(1.7)), 17));
    v.push((qfn(20, 4.0, 0.5, Some(2.6)), 21));
    v.push((qfn(24, 4.0, 0.5, None), 24));
    v.push((qfn(32, 5.0, 0.5, Some(3.45)), 33));
    v.push((qfn(32, 4.0, 0.4, Some(2.7)), 33));
    v.push((qfn(48, 7.0, 0.5, Some(5.6)), 49));
    v.push((qfn(64, 9.0, 0.5, Some(7.15)), 65));
    // Common QFP bodies and pitches (from memory).
    v.push((qfp(32, 7.0, 0.8), 32));
    v.push((qfp(44, 10.0, 0.8), 44));
    v.push((qfp(48, 7.0, 0.5), 48));
    v.push((qfp(64, 10.0, 0.5), 64));
    v.push((qfp(100, 14.0, 0.5), 100));
    v.push((qfp(144, 20.0, 0.5), 144));
    for n in [4, 8, 14, 16, 20, 28] {
        v.push((dip(n, false), n as usize));
    }
    for n in [24, 28, 40, 64] {
        v.push((dip(n, true), n as usize));
    }
    for (r, c) in [(1, 1), (1, 4), (2, 5), (20, 2), (3, 3), (1, 40)] {
        v.push((header(r, c), (r * c) as usize));
    }
    for n in [1, 2, 3, 8] {
        v.push((FootprintSpec::TerminalBlock(n), n as usize));
    }
    v.push((FootprintSpec::To220, 3));
    // Electrolytic capacitors and a 5 mm LED (common sizes, from memory).
    v.push((radial(1.5, 4.0), 2));
    v.push((radial(2.0, 5.0), 2));
    v.push((radial(2.5, 6.3), 2));
    v.push((radial(5.0, 10.0), 2));
    v.push((radial(7.5, 18.0), 2));
    v.push((radial(2.54, 5.0), 2));
    // Quarter-watt resistors and a DO-41 diode lying flat (from memory).
    v.push((axial(10.16, 6.3, 2.5), 2));
    v.push((axial(7.62, 3.3, 1.8), 2));
    v.push((axial(10.16, 5.2, 2.7), 2));
    // M3 mounting holes (clearance drill 3.2, from memory).
    v.push((hole(3.2, None), 1));
    v.push((hole(3.2, Some(6.0)), 1));
    v.push((
        FootprintSpec::Custom {
            pads: vec![PadSpec {
                number: "1".into(),
                centre: Point::new(0.0, 0.0),
                width: 1.0,
                height: 1.0,
                shape: PadShape::Circle,
                hole: Some(0.5),
            }],
            courtyard: None,
        },
        1,
    ));
    v
}

/// Asserts that pins `1..=n` go once around the centre counter-clockwise: every step from
/// one pin to the next (and from the last back to the first) turns left by less than a
/// full turn, and the turns add up to exactly one revolution.
fn assert_counter_clockwise(fp: &Footprint, n: u32) {
    let angles: Vec<f64> = (1..=n)
        .map(|k| {
            let p = at(fp, k);
            p.y.atan2(p.x)
        })
        .collect();
    let mut total = 0.0;
    for k in 0..angles.len() {
        let step = (angles[(k + 1) % angles.len()] - angles[k]).rem_euclid(TAU);
        assert!(
            step > 0.0 && step < TAU / 2.0,
            "{}: pin {} to the next turns by {step} rad",
            fp.name,
            k + 1
        );
        total += step;
    }
    assert_abs_diff_eq!(total, TAU, epsilon = 1e-6);
}

/// The distance between consecutive pins `from..=to`, asserting it is the same all along.
fn uniform_step(fp: &Footprint, from: u32, to: u32) -> f64 {
    let step = |k: u32| {
        let (a, b) = (at(fp, k), at(fp, k + 1));
        (b.x - a.x).hypot(b.y - a.y)
    };
    let first = step(from);
    for k in from..to {
        assert_abs_diff_eq!(step(k), first, epsilon = EPS);
    }
    first
}

fn is_rect_inside(inner: &Rect, outer: &Rect) -> bool {
    inner.corners().iter().all(|&c| outer.contains(c))
}

// ----- every package --------------------------------------------------------------------

#[test]
fn every_variant_builds_with_typical_parameters() {
    for (spec, pads) in typical() {
        let fp = build(&spec);
        assert_eq!(fp.pads.len(), pads, "{spec:?}");
        assert!(!fp.name.is_empty(), "{spec:?}");
    }
}

#[test]
fn courtyard_is_pads_and_body_grown_by_the_excess() {
    // IPC-7351 nominal density courtyard excess 0.25 (from memory, via CHECK-VALUES.md).
    assert_abs_diff_eq!(COURTYARD_EXCESS, 0.25);
    for (spec, _) in typical() {
        let fp = build(&spec);
        for p in &fp.pads {
            assert!(
                is_rect_inside(&p.rect().inflate(COURTYARD_EXCESS - EPS), &fp.courtyard),
                "{}: pad {} sticks out of the courtyard",
                fp.name,
                p.number
            );
        }
        if !matches!(spec, FootprintSpec::Custom { .. }) {
            let extent = fp.pads.iter().fold(fp.body, |r, p| r.union(&p.rect()));
            let want = extent.inflate(COURTYARD_EXCESS);
            for (a, b) in fp.courtyard.corners().iter().zip(want.corners()) {
                assert_abs_diff_eq!(a.x, b.x, epsilon = EPS);
                assert_abs_diff_eq!(a.y, b.y, epsilon = EPS);
            }
        }
    }
}

#[test]
fn pad_numbers_are_unique_and_count_from_one() {
    for (spec, _) in typical() {
        let fp = build(&spec);
        let mut numbers: Vec<&str> = fp.pads.iter().map(|p| p.number.as_str()).collect();
        numbers.sort_unstable();
        numbers.dedup();
        assert_eq!(
            numbers.len(),
            fp.pads.len(),
            "{}: repeated pad number",
            fp.name
        );
        if matches!(spec, FootprintSpec::MountingHole { pad: None, .. }) {
            continue; // an unplated hole has no numbered pin
        }
        for (i, p) in fp.pads.iter().enumerate() {
            assert_eq!(p.number, (i + 1).to_string(), "{}", fp.name);
        }
    }
}

#[test]
fn pads_are_sane_and_holes_fit_their_pads() {
    for (spec, _) in typical() {
        let fp = build(&spec);
        for p in &fp.pads {
            assert!(p.width > 0.0 && p.height > 0.0 && p.at.is_finite());
            if let PadKind::ThroughHole { drill, plated } = p.kind {
                // An unplated hole has no copper: its "pad" is the hole itself.
                if plated {
                    assert!(drill < p.width.min(p.height), "{}: {}", fp.name, p.number);
                } else {
                    assert_abs_diff_eq!(drill, p.width);
                }
            }
        }
        // No two pads of one footprint touch.
        for (i, a) in fp.pads.iter().enumerate() {
            for b in &fp.pads[i + 1..] {
                assert!(
                    !a.rect().intersects(&b.rect()),
                    "{}: pads {} and {} overlap",
                    fp.name,
                    a.number,
                    b.number
                );
            }
        }
    }
}

#[test]
fn surface_mount_and_through_hole_kinds() {
    for (spec, _) in typical() {
        let fp = build(&spec);
        let through_hole = matches!(
            spec,
            FootprintSpec::Dip { .. }
                | FootprintSpec::Header { .. }
                | FootprintSpec::TerminalBlock(_)
                | FootprintSpec::To220
                | FootprintSpec::Radial { .. }
                | FootprintSpec::Axial { .. }
                | FootprintSpec::MountingHole { .. }
                | FootprintSpec::Custom { .. }
        );
        assert_eq!(fp.has_through_holes(), through_hole, "{}", fp.name);
        assert!(
            fp.pads.iter().all(|p| p.is_through_hole() == through_hole),
            "{}",
            fp.name
        );
        if through_hole && !matches!(spec, FootprintSpec::Custom { .. }) {
            // Pin 1 square, the others round or oval (common practice); a mounting hole
            // is round.
            let hole = matches!(spec, FootprintSpec::MountingHole { .. });
            for p in &fp.pads {
                if p.number == "1" && !hole {
                    assert_eq!(p.shape, PadShape::Rectangle, "{}", fp.name);
                } else {
                    assert!(
                        matches!(p.shape, PadShape::Circle | PadShape::Obround),
                        "{}: pad {}",
                        fp.name,
                        p.number
                    );
                }
            }
        }
    }
}

#[test]
fn names_are_plain() {
    let cases = [
        (FootprintSpec::Chip("0603".into()), "0603"),
        (FootprintSpec::Sod123, "SOD-123"),
        (FootprintSpec::Sot23(3), "SOT-23"),
        (FootprintSpec::Sot23(5), "SOT-23-5"),
        (FootprintSpec::Sot23(6), "SOT-23-6"),
        (FootprintSpec::Soic(8), "SOIC-8"),
        (FootprintSpec::Tssop(14), "TSSOP-14"),
        (qfn(32, 5.0, 0.5, None), "QFN-32"),
        (qfp(48, 7.0, 0.5), "QFP-48"),
        (dip(8, false), "DIP-8"),
        (dip(40, true), "DIP-40 wide"),
        // Headers by the trade's "rows x pins per row"; a single line is 1xN either way.
        (header(1, 4), "header 1x4"),
        (header(4, 1), "header 1x4"),
        (header(5, 2), "header 2x5"),
        (header(2, 5), "header 5x2"),
        (FootprintSpec::TerminalBlock(3), "terminal block 3"),
        (FootprintSpec::To220, "TO-220"),
    ];
    for (spec, name) in cases {
        assert_eq!(build(&spec).name, name);
    }
}

/// Header and terminal block names are the import's own form: each reads back to the same
/// footprint (a single-row header to the same line of pins, standing upright).
#[test]
fn header_and_terminal_names_read_back() {
    let mut specs = vec![
        FootprintSpec::TerminalBlock(1),
        FootprintSpec::TerminalBlock(5),
    ];
    for (r, c) in [
        (1, 1),
        (1, 3),
        (3, 1),
        (1, 8),
        (2, 2),
        (3, 2),
        (5, 2),
        (2, 5),
        (4, 3),
    ] {
        specs.push(header(r, c));
    }
    for spec in specs {
        let name = build(&spec).name;
        let back = parse_footprint_name(&name).unwrap_or_else(|e| panic!("{name}: {e}"));
        let want = match spec {
            FootprintSpec::Header { rows: 1, cols } => header(cols, 1),
            ref other => other.clone(),
        };
        assert_eq!(back, want, "{name}");
    }
}

// ----- small-outline packages -----------------------------------------------------------

#[test]
fn soic8_matches_jedec_ms012() {
    let fp = build(&FootprintSpec::Soic(8));
    // Pitch 1.27 (JEDEC MS-012 AA, via CHECK-VALUES.md).
    assert_abs_diff_eq!(uniform_step(&fp, 1, 4), 1.27, epsilon = EPS);
    assert_abs_diff_eq!(uniform_step(&fp, 5, 8), 1.27, epsilon = EPS);
    // Body 4.90 long x 3.90 wide, rows of leads along the long side (MS-012 AA, via
    // CHECK-VALUES.md).
    assert_abs_diff_eq!(fp.body.width(), 3.90, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 4.90, epsilon = EPS);
    // Lead tips 6.00 apart (lead span, MS-012 AA, via CHECK-VALUES.md): every pad spans
    // the tip of its lead, reaching past it and under the lead.
    for p in &fp.pads {
        let r = p.rect();
        let tip = 3.00_f64.copysign(p.at.x);
        assert!(r.min.x < tip && tip < r.max.x, "pad {}", p.number);
        // The pad is wider than the widest lead, 0.51 (MS-012, via CHECK-VALUES.md).
        assert!(p.height >= 0.51, "pad {}", p.number);
        assert_eq!(p.kind, PadKind::Smd);
    }
    // lehr's choice: pad centres 5.40 apart, pads 1.55 x 0.60.
    assert_abs_diff_eq!(at(&fp, 8).x - at(&fp, 1).x, 5.40, epsilon = EPS);
    assert_abs_diff_eq!(pad(&fp, "1").width, 1.55, epsilon = EPS);
    assert_abs_diff_eq!(pad(&fp, "1").height, 0.60, epsilon = EPS);
}

#[test]
fn dual_row_numbering_is_counter_clockwise_from_top_left() {
    // Pin 1 top left, down the left row, up the right row (JEDEC numbering as the brief
    // and the FootprintSpec docs state it; common practice).
    for spec in [
        FootprintSpec::Soic(8),
        FootprintSpec::Soic(16),
        FootprintSpec::Tssop(14),
        dip(8, false),
        dip(40, true),
    ] {
        let fp = build(&spec);
        let n = fp.pads.len() as u32;
        let half = n / 2;
        let p1 = at(&fp, 1);
        assert!(p1.x < 0.0, "{}", fp.name);
        assert!(fp.pads.iter().all(|p| p.at.y <= p1.y + EPS), "{}", fp.name);
        for k in 1..half {
            let (a, b) = (at(&fp, k), at(&fp, k + 1));
            assert_abs_diff_eq!(a.x, b.x, epsilon = EPS);
            assert!(
                b.y < a.y,
                "{}: pin {} should be below pin {k}",
                fp.name,
                k + 1
            );
        }
        for k in half + 1..n {
            let (a, b) = (at(&fp, k), at(&fp, k + 1));
            assert!(a.x > 0.0);
            assert!(
                b.y > a.y,
                "{}: pin {} should be above pin {k}",
                fp.name,
                k + 1
            );
        }
        // The last pin faces pin 1; pin n/2 + 1 faces pin n/2.
        assert_abs_diff_eq!(at(&fp, n).y, p1.y, epsilon = EPS);
        assert_abs_diff_eq!(at(&fp, n).x, -p1.x, epsilon = EPS);
        assert_abs_diff_eq!(at(&fp, half + 1).y, at(&fp, half).y, epsilon = EPS);
        assert_counter_clockwise(&fp, n);
        // Centred land pattern.
        let c = Rect::bounding(fp.pads.iter().map(|p| p.at))
            .unwrap()
            .center();
        assert_abs_diff_eq!(c.x, 0.0, epsilon = EPS);
        assert_abs_diff_eq!(c.y, 0.0, epsilon = EPS);
    }
}

#[test]
fn soic_body_lengths() {
    // SOIC-8 4.90 (MS-012 AA, via CHECK-VALUES.md); SOIC-14 8.65 and SOIC-16 9.90
    // (MS-012 AB and AC, from memory). Width 3.90 for all (CHECK-VALUES.md).
    for (n, len) in [(8, 4.90), (14, 8.65), (16, 9.90)] {
        let fp = build(&FootprintSpec::Soic(n));
        assert_abs_diff_eq!(fp.body.height(), len, epsilon = EPS);
        assert_abs_diff_eq!(fp.body.width(), 3.90, epsilon = EPS);
        assert_abs_diff_eq!(uniform_step(&fp, 1, n / 2), 1.27, epsilon = EPS);
    }
}

#[test]
fn tssop_matches_jedec_mo153() {
    // Not in CHECK-VALUES.md: pitch 0.65 and body width 4.40 as the FootprintSpec docs
    // state them; lead tips 6.40 apart and body lengths (JEDEC MO-153, from memory).
    for (n, len) in [
        (8, 3.0),
        (14, 5.0),
        (16, 5.0),
        (20, 6.5),
        (24, 7.8),
        (28, 9.7),
    ] {
        let fp = build(&FootprintSpec::Tssop(n));
        assert_abs_diff_eq!(uniform_step(&fp, 1, n / 2), 0.65, epsilon = EPS);
        assert_abs_diff_eq!(uniform_step(&fp, n / 2 + 1, n), 0.65, epsilon = EPS);
        assert_abs_diff_eq!(fp.body.width(), 4.40, epsilon = EPS);
        assert_abs_diff_eq!(fp.body.height(), len, epsilon = EPS);
        for p in &fp.pads {
            let r = p.rect();
            let tip = 3.20_f64.copysign(p.at.x);
            assert!(
                r.min.x < tip && tip < r.max.x,
                "{} pad {}",
                fp.name,
                p.number
            );
        }
    }
}

#[test]
fn sot23_three_pins_match_to236() {
    let fp = build(&FootprintSpec::Sot23(3));
    // TO-236AB via CHECK-VALUES.md: pitch 0.95, outer leads 1.90 apart, body 2.90 x
    // 1.30, lead tips 2.40 apart.
    let (p1, p2, p3) = (at(&fp, 1), at(&fp, 2), at(&fp, 3));
    assert_abs_diff_eq!(p2.x - p1.x, 1.90, epsilon = EPS);
    assert_abs_diff_eq!(p3.x - p1.x, 0.95, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.width(), 2.90, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 1.30, epsilon = EPS);
    // Pins 1 and 2 on one side, left to right; pin 3 alone opposite (JEDEC TO-236
    // numbering, common practice).
    assert_abs_diff_eq!(p1.y, p2.y, epsilon = EPS);
    assert!(p1.y < 0.0 && p3.y > 0.0);
    assert_abs_diff_eq!(p3.y, -p1.y, epsilon = EPS);
    assert_counter_clockwise(&fp, 3);
    for p in &fp.pads {
        let r = p.rect();
        let tip = 1.20_f64.copysign(p.at.y);
        assert!(r.min.y < tip && tip < r.max.y, "pad {}", p.number);
    }
}

#[test]
fn sot23_five_and_six_pins_number_counter_clockwise() {
    // Pins 1 to 3 along the bottom, left to right, then on along the top from the right
    // (JEDEC numbering, common practice); pitch 0.95 (CHECK-VALUES.md).
    for n in [5, 6] {
        let fp = build(&FootprintSpec::Sot23(n));
        let bottom = at(&fp, 1).y;
        assert!(bottom < 0.0);
        for k in 1..=3 {
            assert_abs_diff_eq!(at(&fp, k).y, bottom, epsilon = EPS);
        }
        assert_abs_diff_eq!(uniform_step(&fp, 1, 3), 0.95, epsilon = EPS);
        for k in 4..=n {
            assert_abs_diff_eq!(at(&fp, k).y, -bottom, epsilon = EPS);
        }
        // Pin 4 faces pin 3; the last pin faces pin 1.
        assert_abs_diff_eq!(at(&fp, 4).x, at(&fp, 3).x, epsilon = EPS);
        assert_abs_diff_eq!(at(&fp, n).x, at(&fp, 1).x, epsilon = EPS);
        assert_counter_clockwise(&fp, n);
        // Body 2.90 long (CHECK-VALUES.md); 1.60 wide for the 5/6-lead outline (JEDEC
        // MO-178, from memory).
        assert_abs_diff_eq!(fp.body.width(), 2.90, epsilon = EPS);
        assert_abs_diff_eq!(fp.body.height(), 1.60, epsilon = EPS);
    }
    // SOT-23-5 has no middle pin on top.
    let fp = build(&FootprintSpec::Sot23(5));
    assert!(fp.pads.iter().all(|p| p.at.y < 0.0 || p.at.x.abs() > 0.5));
}

#[test]
fn sod123_has_two_pads_across_the_body() {
    let fp = build(&FootprintSpec::Sod123);
    // Body 2.7 x 1.6 and lead tips 3.7 apart (from memory, not in CHECK-VALUES.md).
    assert_abs_diff_eq!(fp.body.width(), 2.7, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 1.6, epsilon = EPS);
    let (p1, p2) = (pad(&fp, "1"), pad(&fp, "2"));
    assert!(p1.at.x < 0.0 && p2.at.x > 0.0);
    assert!(p1.rect().min.x < -1.85 && p1.rect().max.x > -1.85);
}

#[test]
fn chip_sizes_match_eia() {
    // EIA chip sizes, length x width (CHECK-VALUES.md; 1210 and 2512 from memory there).
    for (code, l, w) in [
        ("0402", 1.0, 0.5),
        ("0603", 1.6, 0.8),
        ("0805", 2.0, 1.25),
        ("1206", 3.2, 1.6),
        ("1210", 3.2, 2.5),
        ("2512", 6.4, 3.2),
    ] {
        let fp = build(&FootprintSpec::Chip(code.into()));
        assert_abs_diff_eq!(fp.body.width(), l, epsilon = EPS);
        assert_abs_diff_eq!(fp.body.height(), w, epsilon = EPS);
        // The pads sit on the body's ends.
        assert_abs_diff_eq!(at(&fp, 2).x - at(&fp, 1).x, l, epsilon = EPS);
    }
}

// ----- quad packages --------------------------------------------------------------------

/// Checks a quad package's numbering: `per_side` pins per side, pin 1 at the top of the
/// left side, then counter-clockwise side by side.
fn check_quad_numbering(fp: &Footprint, pins: u32, pitch: f64) {
    let s = pins / 4;
    let left = at(fp, 1).x;
    let bottom = at(fp, s + 1).y;
    assert!(left < 0.0 && bottom < 0.0, "{}", fp.name);
    // The four sides: x or y fixed, the other coordinate moving the right way.
    for k in 1..=s {
        assert_abs_diff_eq!(at(fp, k).x, left, epsilon = EPS);
        assert_abs_diff_eq!(at(fp, s + k).y, bottom, epsilon = EPS);
        assert_abs_diff_eq!(at(fp, 2 * s + k).x, -left, epsilon = EPS);
        assert_abs_diff_eq!(at(fp, 3 * s + k).y, -bottom, epsilon = EPS);
    }
    for side in 0..4 {
        let first = side * s + 1;
        assert_abs_diff_eq!(uniform_step(fp, first, first + s - 1), pitch, epsilon = EPS);
    }
    // Pin 1 is the topmost pin of the left side; the left side runs downwards.
    assert!(at(fp, 1).y > at(fp, 2).y);
    assert!(at(fp, s + 1).x < at(fp, s + 2).x);
    assert_counter_clockwise(fp, pins);
}

#[test]
fn qfn32_5x5_with_thermal_pad() {
    // QFN 5 x 5, pitch 0.5, exposed thermal pad (JEDEC MO-220, from memory via
    // CHECK-VALUES.md).
    let fp = build(&qfn(32, 5.0, 0.5, Some(3.45)));
    assert_eq!(fp.pads.len(), 33);
    check_quad_numbering(&fp, 32, 0.5);
    assert_abs_diff_eq!(fp.body.width(), 5.0, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 5.0, epsilon = EPS);
    // Every terminal pad straddles the body edge (the terminals end flush with it).
    for k in 1..=32 {
        let p = pad(&fp, &k.to_string());
        let r = p.rect();
        if p.at.x.abs() > p.at.y.abs() {
            let edge = 2.5_f64.copysign(p.at.x);
            assert!(r.min.x < edge && edge < r.max.x, "pad {k}");
        } else {
            let edge = 2.5_f64.copysign(p.at.y);
            assert!(r.min.y < edge && edge < r.max.y, "pad {k}");
        }
    }
    // The thermal pad is numbered pins + 1, centred, square, surface mount (FootprintSpec
    // docs).
    let t = pad(&fp, "33");
    assert_abs_diff_eq!(t.at.x, 0.0);
    assert_abs_diff_eq!(t.at.y, 0.0);
    assert_abs_diff_eq!(t.width, 3.45);
    assert_abs_diff_eq!(t.height, 3.45);
    assert_eq!(t.kind, PadKind::Smd);
}

#[test]
fn qfn_common_bodies() {
    // 3 x 3, 4 x 4 and 5 x 5 at 0.5 pitch (MO-220, from memory via CHECK-VALUES.md).
    for (pins, body) in [(16, 3.0), (24, 4.0), (32, 5.0)] {
        let fp = build(&qfn(pins, body, 0.5, None));
        assert_eq!(fp.pads.len(), pins as usize);
        check_quad_numbering(&fp, pins, 0.5);
    }
}

#[test]
fn qfp_leads_reach_one_millimetre_past_the_body() {
    // Low-profile QFP: lead span = body + 2.0 (JEDEC MS-026, from memory).
    for (pins, body, pitch) in [(48, 7.0, 0.5), (44, 10.0, 0.8), (100, 14.0, 0.5)] {
        let fp = build(&qfp(pins, body, pitch));
        check_quad_numbering(&fp, pins, pitch);
        let tip = body / 2.0 + 1.0;
        for p in &fp.pads {
            let r = p.rect();
            if p.at.x.abs() > p.at.y.abs() {
                assert!(r.min.x.abs().min(r.max.x.abs()) < tip, "{}", p.number);
                assert!(r.min.x.abs().max(r.max.x.abs()) > tip, "{}", p.number);
            } else {
                assert!(r.min.y.abs().min(r.max.y.abs()) < tip, "{}", p.number);
                assert!(r.min.y.abs().max(r.max.y.abs()) > tip, "{}", p.number);
            }
        }
    }
}

// ----- through-hole parts ---------------------------------------------------------------

#[test]
fn dip_matches_jedec_ms001() {
    // Pitch 2.54, rows 7.62 apart; wide bodies 15.24 (JEDEC MS-001 via CHECK-VALUES.md,
    // the wide spacing from memory).
    for (pins, wide, rows) in [(8, false, 7.62), (16, false, 7.62), (40, true, 15.24)] {
        let fp = build(&dip(pins, wide));
        assert_abs_diff_eq!(uniform_step(&fp, 1, pins / 2), 2.54, epsilon = EPS);
        assert_abs_diff_eq!(uniform_step(&fp, pins / 2 + 1, pins), 2.54, epsilon = EPS);
        assert_abs_diff_eq!(at(&fp, pins).x - at(&fp, 1).x, rows, epsilon = EPS);
        for p in &fp.pads {
            // Drill 0.8, pads 1.6 (common practice).
            assert_eq!(
                p.kind,
                PadKind::ThroughHole {
                    drill: 0.8,
                    plated: true
                }
            );
            assert_abs_diff_eq!(p.width, 1.6);
        }
        // The body sits between the rows.
        assert!(fp.body.width() < rows);
    }
}

#[test]
fn header_pins_on_a_tenth_inch_grid_numbered_along_rows() {
    // 2.54 pitch (common practice, via CHECK-VALUES.md).
    let fp = build(&header(1, 4));
    assert_abs_diff_eq!(uniform_step(&fp, 1, 4), 2.54, epsilon = EPS);
    for k in 1..4 {
        assert!(at(&fp, k + 1).x > at(&fp, k).x);
        assert_abs_diff_eq!(at(&fp, k).y, 0.0, epsilon = EPS);
    }
    // Rows from the top: in a 2 x 3 header pin 4 is under pin 1.
    let fp = build(&header(2, 3));
    assert_abs_diff_eq!(at(&fp, 4).x, at(&fp, 1).x, epsilon = EPS);
    assert_abs_diff_eq!(at(&fp, 1).y - at(&fp, 4).y, 2.54, epsilon = EPS);
    assert!(at(&fp, 1).x < 0.0 && at(&fp, 1).y > 0.0);
    // Two columns give the usual odd/even numbering: pin 2 beside pin 1, pin 3 under it.
    let fp = build(&header(5, 2));
    assert_abs_diff_eq!(at(&fp, 2).x - at(&fp, 1).x, 2.54, epsilon = EPS);
    assert_abs_diff_eq!(at(&fp, 1).y - at(&fp, 3).y, 2.54, epsilon = EPS);
    // Body one 2.54 square per pin; drill 1.0 for 0.64 square pins (common practice).
    assert_abs_diff_eq!(fp.body.width(), 2.0 * 2.54, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 5.0 * 2.54, epsilon = EPS);
    assert!(matches!(
        pad(&fp, "7").kind,
        PadKind::ThroughHole { drill, plated: true } if drill == 1.0
    ));
}

#[test]
fn terminal_block_pitch() {
    // 5.08 pitch (common practice, via CHECK-VALUES.md), ways left to right.
    let fp = build(&FootprintSpec::TerminalBlock(4));
    assert_abs_diff_eq!(uniform_step(&fp, 1, 4), 5.08, epsilon = EPS);
    assert!(at(&fp, 1).x < at(&fp, 2).x);
    assert_abs_diff_eq!(fp.body.width(), 4.0 * 5.08, epsilon = EPS);
}

#[test]
fn to220_leads() {
    // Leads 2.54 apart in one row (FootprintSpec docs; TO-220, from memory).
    let fp = build(&FootprintSpec::To220);
    assert_abs_diff_eq!(uniform_step(&fp, 1, 3), 2.54, epsilon = EPS);
    assert!(at(&fp, 1).x < at(&fp, 2).x);
    assert_abs_diff_eq!(at(&fp, 2).x, 0.0, epsilon = EPS);
    assert!(fp.pads.iter().all(|p| p.at.y == 0.0));
    // Body about 10 wide (from memory).
    assert_abs_diff_eq!(fp.body.width(), 10.0, epsilon = EPS);
}

#[test]
fn radial_and_axial_leads_are_pitch_apart() {
    let fp = build(&radial(2.5, 6.3));
    assert_abs_diff_eq!(at(&fp, 2).x - at(&fp, 1).x, 2.5, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.width(), 6.3, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 6.3, epsilon = EPS);
    // lehr's choice: drill 0.8 under a 10 mm body, 1.0 from 10 mm.
    let drill = |fp: &Footprint| match fp.pads[0].kind {
        PadKind::ThroughHole { drill, .. } => drill,
        PadKind::Smd => panic!("radial pads go through"),
    };
    assert_abs_diff_eq!(drill(&fp), 0.8);
    assert_abs_diff_eq!(drill(&build(&radial(5.0, 10.0))), 1.0);
    // Fine pitch shrinks the pads so that they stay apart.
    let fp = build(&radial(1.5, 4.0));
    assert!(fp.pads[0].rect().max.x < fp.pads[1].rect().min.x);

    let fp = build(&axial(10.16, 6.3, 2.5));
    assert_abs_diff_eq!(at(&fp, 2).x - at(&fp, 1).x, 10.16, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.width(), 6.3, epsilon = EPS);
    assert_abs_diff_eq!(fp.body.height(), 2.5, epsilon = EPS);
    // The leads leave the body before they bend down.
    assert!(fp.pads.iter().all(|p| !fp.body.contains(p.at)));
}

#[test]
fn mounting_holes() {
    // Unplated: a bare hole that no net can name.
    let fp = build(&hole(3.2, None));
    assert_eq!(fp.pads.len(), 1);
    assert_eq!(
        fp.pads[0].kind,
        PadKind::ThroughHole {
            drill: 3.2,
            plated: false
        }
    );
    assert_eq!(fp.pad_index(""), None);
    assert_eq!(fp.pad_index("1"), None);
    assert!(fp.has_through_holes());
    // Plated: one pin "1" with a ring.
    let fp = build(&hole(3.2, Some(6.0)));
    let p = pad(&fp, "1");
    assert_eq!(
        p.kind,
        PadKind::ThroughHole {
            drill: 3.2,
            plated: true
        }
    );
    assert_abs_diff_eq!(p.width, 6.0);
    assert_eq!(p.shape, PadShape::Circle);
}

// ----- bad parameters -------------------------------------------------------------------

/// What kind of error a spec should give.
#[derive(Debug)]
enum Want {
    PinCount,
    Dimension,
    Fit,
    ChipSize,
}

fn check_error(spec: FootprintSpec, want: Want) {
    let err = match spec.build() {
        Ok(fp) => panic!("{spec:?} should fail but built {}", fp.name),
        Err(e) => e,
    };
    let ok = matches!(
        (&err, &want),
        (FootprintError::BadPinCount { .. }, Want::PinCount)
            | (FootprintError::BadDimension { .. }, Want::Dimension)
            | (FootprintError::BadFit { .. }, Want::Fit)
            | (FootprintError::UnknownChipSize(_), Want::ChipSize)
    );
    assert!(ok, "{spec:?}: wanted {want:?}, got {err:?}");
    // A sentence a user can read.
    assert!(
        err.to_string().len() > 20,
        "{spec:?}: terse message \"{err}\""
    );
}

#[test]
fn bad_parameters_give_errors() {
    use FootprintSpec as S;
    use Want::*;
    let cases = [
        (S::Chip("0201x".into()), ChipSize),
        (S::Sot23(4), PinCount),
        (S::Sot23(0), PinCount),
        (S::Soic(7), PinCount),
        (S::Soic(10), PinCount),
        (S::Soic(0), PinCount),
        (S::Tssop(9), PinCount),
        (S::Tssop(u32::MAX), PinCount),
        (qfn(30, 5.0, 0.5, None), PinCount),
        (qfn(4, 5.0, 0.5, None), PinCount),
        (qfn(0, 5.0, 0.5, None), PinCount),
        (qfn(32, f64::NAN, 0.5, None), Dimension),
        (qfn(32, 5.0, f64::INFINITY, None), Dimension),
        (qfn(32, -5.0, 0.5, None), Dimension),
        (qfn(32, 5.0, 0.0, None), Dimension),
        (qfn(32, 5.0, 0.5, Some(f64::NAN)), Dimension),
        // 8 pins per side at 0.8 pitch need 6.4, more than the body.
        (qfn(32, 5.0, 0.8, None), Fit),
        // Fits along the side but the corner pads of adjacent sides would touch.
        (qfn(40, 4.0, 0.4, None), Fit),
        // The thermal pad would touch the pins.
        (qfn(32, 5.0, 0.5, Some(4.5)), Fit),
        (qfp(48, 7.0, 0.8), Fit),
        (qfp(50, 7.0, 0.5), PinCount),
        (qfp(48, 1e9, 0.5), Dimension),
        (dip(3, false), PinCount),
        (dip(0, true), PinCount),
        (dip(66, true), PinCount),
        (header(0, 4), PinCount),
        (header(4, 0), PinCount),
        (header(u32::MAX, u32::MAX), PinCount),
        (S::TerminalBlock(0), PinCount),
        (S::TerminalBlock(100), PinCount),
        (radial(f64::NAN, 5.0), Dimension),
        (radial(2.0, -1.0), Dimension),
        (radial(1.0, 4.0), Fit),
        (axial(5.0, 6.3, 2.5), Fit),
        (axial(10.0, 0.0, 2.5), Dimension),
        (axial(f64::NEG_INFINITY, 6.3, 2.5), Dimension),
        (hole(0.0, None), Dimension),
        (hole(3.2, Some(3.2)), Dimension),
        (hole(3.2, Some(f64::NAN)), Dimension),
    ];
    for (spec, want) in cases {
        check_error(spec, want);
    }
}

#[test]
fn error_messages_name_the_problem() {
    let msg = |spec: FootprintSpec| spec.build().unwrap_err().to_string();
    let m = msg(FootprintSpec::Soic(7));
    assert!(m.contains("SOIC") && m.contains('7'), "{m}");
    let m = msg(qfn(32, 5.0, 0.8, None));
    assert!(m.contains("QFN-32") && m.contains("pitch"), "{m}");
    let m = msg(qfn(32, 5.0, 0.5, Some(4.5)));
    assert!(m.contains("thermal"), "{m}");
    let m = msg(qfn(32, f64::NAN, 0.5, None));
    assert!(m.contains("QFN body"), "{m}");
}

// ----- any parameters -------------------------------------------------------------------

/// Any spec at all, sane or not, including non-finite numbers.
fn any_spec() -> impl Strategy<Value = FootprintSpec> {
    let dim = prop_oneof![
        8 => -1.0..60.0_f64,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(0.0),
    ];
    let pins = prop_oneof![0..80_u32, Just(u32::MAX)];
    prop_oneof![
        pins.clone().prop_map(FootprintSpec::Sot23),
        pins.clone().prop_map(FootprintSpec::Soic),
        pins.clone().prop_map(FootprintSpec::Tssop),
        (
            pins.clone(),
            dim.clone(),
            0.2..1.5_f64,
            prop::option::of(dim.clone())
        )
            .prop_map(|(p, b, pi, t)| qfn(p, b, pi, t)),
        (pins.clone(), dim.clone(), 0.2..1.5_f64).prop_map(|(p, b, pi)| qfp(p, b, pi)),
        (pins.clone(), any::<bool>()).prop_map(|(p, w)| dip(p, w)),
        (0..30_u32, 0..30_u32).prop_map(|(r, c)| header(r, c)),
        pins.prop_map(FootprintSpec::TerminalBlock),
        (dim.clone(), dim.clone()).prop_map(|(p, d)| radial(p, d)),
        (dim.clone(), dim.clone(), dim.clone()).prop_map(|(p, l, d)| axial(p, l, d)),
        (dim.clone(), prop::option::of(dim)).prop_map(|(d, p)| hole(d, p)),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(500))]

    /// Building never panics; whatever builds has unique numbers, separate pads and a
    /// courtyard around all of them.
    #[test]
    fn any_parameters_build_or_fail_cleanly(spec in any_spec()) {
        if let Ok(fp) = spec.build() {
            let mut numbers: Vec<&str> = fp.pads.iter().map(|p| p.number.as_str()).collect();
            numbers.sort_unstable();
            numbers.dedup();
            prop_assert_eq!(numbers.len(), fp.pads.len());
            prop_assert!(!fp.pads.is_empty());
            for (i, a) in fp.pads.iter().enumerate() {
                prop_assert!(a.at.is_finite() && a.width > 0.0 && a.height > 0.0);
                prop_assert!(is_rect_inside(&a.rect(), &fp.courtyard));
                for b in &fp.pads[i + 1..] {
                    prop_assert!(!a.rect().intersects(&b.rect()));
                }
            }
            prop_assert!(is_rect_inside(&fp.body, &fp.courtyard));
        }
    }
}
