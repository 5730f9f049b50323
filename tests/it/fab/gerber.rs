//! Gerber files read back by gerber_parser (the reader is in mod.rs).

use lehr_engine::fab::FabOptions;
use lehr_engine::fab::gerber::{GerberLayer, gerber};
use lehr_engine::model::board::Layer;
use lehr_engine::model::{PadShape, Point};

use super::{Flash, Picture, close, expected_pads, fixture, kind_of, read_gerber};

#[test]
fn copper_layers_read_back_as_the_board() {
    let f = fixture();
    let d = &f.design;
    for (glayer, layer) in [
        (GerberLayer::CopperTop, Layer::Top),
        (GerberLayer::CopperBottom, Layer::Bottom),
    ] {
        let text = gerber(d, glayer, &FabOptions::default()).unwrap();
        let pic = read_gerber(&text);
        assert!(
            pic.file_function.contains("Copper"),
            "{}",
            pic.file_function
        );
        assert!(
            pic.file_function
                .contains(if layer == Layer::Top { "Top" } else { "Bottom" }),
            "{}",
            pic.file_function
        );
        assert!(pic.polarity.contains("Positive"));
        assert!(pic.software.contains("lehr"), "{}", pic.software);

        // Pads: one flash per pad, found by its .P attribute, at the pad centre with the
        // pad's size and shape.
        let want = expected_pads(d, layer);
        assert!(want.len() > 10, "{glayer:?}: {} pads", want.len());
        let pads: Vec<&Flash> = pic.flashes.iter().filter(|f| f.pin.is_some()).collect();
        assert_eq!(pads.len(), want.len(), "{glayer:?}");
        for fl in &pads {
            let key = fl.pin.clone().unwrap();
            let (at, size, shape) = want
                .get(&key)
                .unwrap_or_else(|| panic!("{key:?} should not be on {glayer:?}"));
            assert!(
                close(fl.at.x, at.x) && close(fl.at.y, at.y),
                "{key:?}: {:?} vs {at:?}",
                fl.at
            );
            let got = fl.size;
            let expect = if *shape == PadShape::Circle {
                let m = size.0.min(size.1);
                (m, m)
            } else {
                *size
            };
            assert!(
                close(got.0, expect.0) && close(got.1, expect.1),
                "{key:?}: {got:?} vs {expect:?}"
            );
            assert_eq!(fl.kind, kind_of(*shape, *size), "{key:?}");
            let th = d.footprints[d.part_id(&key.0).unwrap().index()]
                .pads
                .iter()
                .find(|p| p.number == key.1)
                .unwrap()
                .is_through_hole();
            let f = if th {
                "ComponentPad"
            } else {
                "SmdPad(CopperDefined)"
            };
            assert!(fl.function.contains(f), "{key:?}: {}", fl.function);
            if *shape == PadShape::Rounded {
                // Corners rounded to 25 % of the smaller side (src/model/footprint.rs).
                let r = fl.corner.unwrap();
                assert!(close(r, 0.25 * size.0.min(size.1)), "{key:?}: corner {r}");
            }
        }
        // Every pad on a net carries the net's name.
        for (ni, pins) in d.net_pins.iter().enumerate() {
            for pin in pins {
                let part = &d.board.parts[pin.part.index()];
                let number = &d.footprints[pin.part.index()].pads[pin.pad as usize].number;
                if let Some(fl) = pads
                    .iter()
                    .find(|f| f.pin == Some((part.reference.clone(), number.clone())))
                {
                    assert_eq!(fl.net.as_deref(), Some(d.board.nets[ni].name.as_str()));
                }
            }
        }

        assert!(
            pic.flashes
                .iter()
                .filter(|f| f.pin.is_none())
                .all(|f| f.function.contains("ViaPad"))
        );
        // Vias: the remaining flashes, one per via, with the via's diameter.
        let mut vias: Vec<(i64, i64, i64)> = pic
            .flashes
            .iter()
            .filter(|f| f.pin.is_none())
            .map(|f| {
                (
                    (f.at.x * 1e6).round() as i64,
                    (f.at.y * 1e6).round() as i64,
                    (f.size.0 * 1e6).round() as i64,
                )
            })
            .collect();
        let mut want_vias: Vec<(i64, i64, i64)> = d
            .board
            .copper
            .vias
            .iter()
            .map(|v| {
                (
                    (v.at.x * 1e6).round() as i64,
                    (v.at.y * 1e6).round() as i64,
                    (v.diameter * 1e6).round() as i64,
                )
            })
            .collect();
        vias.sort();
        want_vias.sort();
        assert_eq!(vias, want_vias, "{glayer:?}");

        // Tracks: every segment drawn once with the track's width and net.
        let segments: Vec<(Point, Point, f64, &str)> = d
            .board
            .copper
            .tracks
            .iter()
            .filter(|t| t.layer == layer)
            .flat_map(|t| {
                t.points
                    .windows(2)
                    .map(move |w| (w[0], w[1], t.width, t.net.as_str()))
            })
            .collect();
        assert!(!segments.is_empty());
        assert_eq!(pic.draws.len(), segments.len(), "{glayer:?}");
        for (dr, (a, b, w, net)) in pic.draws.iter().zip(&segments) {
            assert!(
                close(dr.from.x, a.x) && close(dr.from.y, a.y),
                "{dr:?} vs {a:?}"
            );
            assert!(
                close(dr.to.x, b.x) && close(dr.to.y, b.y),
                "{dr:?} vs {b:?}"
            );
            assert!(close(dr.width, *w));
            assert_eq!(dr.net.as_deref(), Some(*net));
            assert!(dr.function.contains("Conductor"), "{}", dr.function);
        }
    }
}

#[test]
fn bottom_parts_are_seen_mirrored_from_the_top() {
    // Physics of a flipped part: seen from the top, a part on the bottom has left and
    // right swapped. D2 (SOD-123, pad 1 on the left of the land pattern seen from its own
    // side, see src/model/packages.rs) sits on the bottom at rotation 0, so its pad 1 must
    // be right of its origin, and its SMD pads only in the bottom copper.
    let d = &fixture().design;
    let bottom =
        read_gerber(&gerber(d, GerberLayer::CopperBottom, &FabOptions::default()).unwrap());
    let top = read_gerber(&gerber(d, GerberLayer::CopperTop, &FabOptions::default()).unwrap());
    let d2 = |pic: &Picture, n: &str| {
        pic.flashes
            .iter()
            .find(|f| f.pin == Some(("D2".into(), n.into())))
            .map(|f| f.at)
    };
    let p1 = d2(&bottom, "1").expect("D2.1 in the bottom copper");
    let p2 = d2(&bottom, "2").expect("D2.2 in the bottom copper");
    assert!(
        p1.x > 24.0 && p2.x < 24.0,
        "pad 1 at {p1:?}, pad 2 at {p2:?}"
    );
    assert!(close(p1.y, 6.0) && close(p2.y, 6.0));
    assert!(d2(&top, "1").is_none());
}

#[test]
fn mask_openings_are_the_pads_grown_by_the_expansion() {
    let d = &fixture().design;
    let opts = FabOptions {
        mask_expansion: 0.07,
        ..FabOptions::default()
    };
    for (glayer, layer) in [
        (GerberLayer::MaskTop, Layer::Top),
        (GerberLayer::MaskBottom, Layer::Bottom),
    ] {
        let pic = read_gerber(&gerber(d, glayer, &opts).unwrap());
        assert!(
            pic.file_function.contains("SolderMask"),
            "{}",
            pic.file_function
        );
        assert!(pic.polarity.contains("Negative"));
        assert!(pic.draws.is_empty());
        let want = expected_pads(d, layer);
        let pads: Vec<&Flash> = pic.flashes.iter().filter(|f| f.pin.is_some()).collect();
        assert_eq!(pads.len(), want.len());
        for fl in pads {
            let (at, size, shape) = &want[fl.pin.as_ref().unwrap()];
            let m = if *shape == PadShape::Circle {
                size.0.min(size.1)
            } else {
                0.0
            };
            let expect = if m > 0.0 {
                (m + 0.14, m + 0.14)
            } else {
                (size.0 + 0.14, size.1 + 0.14)
            };
            assert!(close(fl.at.x, at.x) && close(fl.at.y, at.y));
            assert!(
                close(fl.size.0, expect.0) && close(fl.size.1, expect.1),
                "{:?} {:?} vs {expect:?}",
                fl.pin,
                fl.size
            );
            if *shape == PadShape::Rounded {
                // The outline grown by e keeps its corner centres: radius r + e.
                let r = fl.corner.unwrap();
                assert!(
                    close(r, 0.25 * size.0.min(size.1) + 0.07),
                    "{:?}: corner {r}",
                    fl.pin
                );
            }
        }
        // The unplated mounting holes (H1, H2, 3.2 mm) get openings on both sides; vias
        // are tented.
        let holes: Vec<&Flash> = pic.flashes.iter().filter(|f| f.pin.is_none()).collect();
        assert_eq!(holes.len(), 2);
        assert!(holes.iter().all(|h| close(h.size.0, 3.2 + 0.14)));
    }
}

#[test]
fn the_outline_is_one_closed_profile() {
    let d = &fixture().design;
    let pic = read_gerber(&gerber(d, GerberLayer::Outline, &FabOptions::default()).unwrap());
    assert!(
        pic.file_function.contains("Profile"),
        "{}",
        pic.file_function
    );
    assert!(pic.flashes.is_empty());
    assert!(pic.draws.iter().all(|dr| dr.function.contains("Profile")));
    let v = d.board.outline.vertices();
    assert_eq!(pic.draws.len(), v.len());
    for (i, dr) in pic.draws.iter().enumerate() {
        let (a, b) = (v[i], v[(i + 1) % v.len()]);
        assert!(
            close(dr.from.x, a.x)
                && close(dr.from.y, a.y)
                && close(dr.to.x, b.x)
                && close(dr.to.y, b.y)
        );
    }
}

#[test]
fn an_unrouted_board_gives_pads_only_and_a_warning() {
    let d = lehr_engine::model::resolve({
        let mut b = fixture().design.board.clone();
        b.copper = Default::default();
        b
    })
    .unwrap();
    let pic = read_gerber(&gerber(&d, GerberLayer::CopperTop, &FabOptions::default()).unwrap());
    assert!(pic.draws.is_empty());
    assert_eq!(pic.flashes.len(), expected_pads(&d, Layer::Top).len());
    let w = lehr_engine::fab::warnings(&d);
    assert!(w.iter().any(|w| w.contains("not routed")), "{w:?}");
    assert!(lehr_engine::fab::warnings(&fixture().design).is_empty());
}

#[test]
fn bad_options_are_refused() {
    let d = &fixture().design;
    let opts = FabOptions {
        mask_expansion: f64::NAN,
        ..FabOptions::default()
    };
    assert!(gerber(d, GerberLayer::MaskTop, &opts).is_err());
}
