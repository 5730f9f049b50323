//! Locked parts and the legal finish.

use lehr_engine::model::board::{Board, Keepout, Layers, Part, Rules};
use lehr_engine::model::{FootprintSpec, Point};
use lehr_engine::place::layout::Layout;
use lehr_engine::place::{self, AnnealOptions, Annealer, ConflictKind, generate, legal::AREA_EPS};

use super::close;
use crate::boards::{
    custom_footprint, design, outlined_board, part, rect_shape, rules, weighted_net,
};

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
            weighted_net(
                &format!("N{i}"),
                &[&format!("R{i}.2"), &format!("R{}.1", i + 1)],
                1.0,
            )
        })
        .collect();
    outlined_board(
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
            custom_footprint(&[("1", 0.0, 0.0)], Some((4.0, 4.0))),
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
    let sq = custom_footprint(&[("1", 0.0, 0.0)], Some((2.0, 2.0)));
    let b = outlined_board(
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
    let sq = custom_footprint(&[("1", 0.0, 0.0)], Some((2.0, 2.0)));
    let ok = place_default(outlined_board(
        "fits",
        rect_shape(0.0, 0.0, 4.0, 2.0),
        rules(0.5, 0.0),
        vec![part("A", sq.clone(), None), part("B", sq, None)],
        Vec::new(),
    ));
    assert!(ok.report.legal, "{:?}", ok.report.conflicts);
}
