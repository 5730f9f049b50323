//! Fabrication exports of a placed and routed sample board, read back by outside readers:
//! the Gerber files by the `gerber_parser` crate (with the image built from its commands
//! as the Ucamco Gerber Layer Format Specification, revision 2022.02, section 4.8, says:
//! D02 moves, D01 draws from the current point, D03 flashes, coordinates are modal), the
//! SVG by `roxmltree`, the drill program, centroid table and run log by small readers of
//! their documented formats; and the `lehr export` command on a real directory.

use std::collections::{BTreeMap, BTreeSet};
use std::io::BufReader;
use std::path::Path;
use std::process::Command as Process;
use std::sync::OnceLock;
use std::sync::atomic::AtomicBool;

use gerber_parser::gerber_types::{
    Aperture, AttributeDeletionCriterion, Command, DCode, ExtendedCode, FunctionCode, MacroContent,
    MacroDecimal, Net, ObjectAttribute, Operation,
};
use lehr_engine::fab::gerber::{GerberLayer, gerber};
use lehr_engine::fab::{FabOptions, centroid, drill, runlog};
use lehr_engine::model::board::Layer;
use lehr_engine::model::{Design, FootprintSpec, PadKind, PadShape, Point, Side, to_board};
use lehr_engine::place::{self, AnnealOptions, Placed};
use lehr_engine::route::{RouteOptions, route};

/// The 4.6 coordinate format's resolution, 1 nm (specification 4.2.2), plus rounding.
const RESOLUTION_MM: f64 = 1e-6;

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= RESOLUTION_MM
}

/// The LED dimmer sample (invented demo data) with two parts moved to the bottom side (D2
/// locked at rotation 0, C2 free), placed and routed.
struct Fixture {
    placed: Placed,
    design: Design,
}

fn fixture() -> &'static Fixture {
    static F: OnceLock<Fixture> = OnceLock::new();
    F.get_or_init(|| {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron");
        let mut board = lehr_engine::io::load_board(&path)
            .expect("sample loads")
            .board;
        for p in &mut board.parts {
            if p.reference == "D2" {
                p.side = Side::Bottom;
                p.at = Some(Point::new(24.0, 6.0));
                p.rotation = 0.0;
                p.locked = true;
            }
            if p.reference == "C2" {
                p.side = Side::Bottom;
            }
        }
        let design = lehr_engine::model::resolve(board).expect("resolves");
        let opts = AnnealOptions {
            seed: 5,
            max_moves: Some(30_000),
            ..AnnealOptions::default()
        };
        let placed = place::place(&design, &opts, |_| true).expect("places");
        assert!(placed.report.legal, "{:?}", placed.report.conflicts);
        let placed_design = lehr_engine::model::resolve(placed.board.clone()).expect("resolves");
        let cancel = AtomicBool::new(false);
        let r = route(
            &placed_design,
            &RouteOptions::default(),
            &cancel,
            &mut |_| {},
        )
        .expect("routes");
        assert!(r.unrouted.is_empty(), "{:?}", r.unrouted);
        let mut board = placed.board.clone();
        board.copper = r.copper;
        let design = lehr_engine::model::resolve(board).expect("routed board resolves");
        assert!(!design.board.copper.vias.is_empty(), "the test wants vias");
        Fixture { placed, design }
    })
}

// ----------------------------------------------------------------------------------------
// Gerber, read by gerber_parser
// ----------------------------------------------------------------------------------------

/// A flash as the file has it.
#[derive(Clone, Debug)]
struct Flash {
    at: Point,
    /// Extent of the aperture (width, height) and its kind.
    size: (f64, f64),
    kind: &'static str,
    /// Corner radius of a rounded rectangle (its macro's corner circles).
    corner: Option<f64>,
    /// The `.AperFunction` the aperture was defined under, as gerber-types names it.
    function: String,
    pin: Option<(String, String)>,
    net: Option<String>,
}

/// A straight draw as the file has it.
#[derive(Clone, Debug)]
struct Draw {
    from: Point,
    to: Point,
    width: f64,
    function: String,
    net: Option<String>,
}

#[derive(Debug, Default)]
struct Picture {
    flashes: Vec<Flash>,
    draws: Vec<Draw>,
    file_function: String,
    polarity: String,
    software: String,
}

fn value(d: &MacroDecimal) -> f64 {
    match d {
        MacroDecimal::Value(v) => *v,
        other => panic!("lehr writes literal macro values, got {other:?}"),
    }
}

/// Extent and kind of an aperture; a macro's extent is the bounding box of its
/// primitives (specification 4.5: centre line = code 21, circle = code 1).
fn extent(
    ap: &Aperture,
    macros: &BTreeMap<String, Vec<MacroContent>>,
) -> ((f64, f64), &'static str, Option<f64>) {
    match ap {
        Aperture::Circle(c) => ((c.diameter, c.diameter), "circle", None),
        Aperture::Rectangle(r) => ((r.x, r.y), "rectangle", None),
        Aperture::Obround(r) => ((r.x, r.y), "obround", None),
        Aperture::Macro(name, None) => {
            let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
            let mut circles = 0;
            let mut corner = f64::NAN;
            for c in &macros[name] {
                let (cx, cy, hw, hh) = match c {
                    MacroContent::CenterLine(l) => {
                        assert_eq!(value(&l.angle), 0.0);
                        (
                            value(&l.center.0),
                            value(&l.center.1),
                            value(&l.dimensions.0) / 2.0,
                            value(&l.dimensions.1) / 2.0,
                        )
                    }
                    MacroContent::Circle(c) => {
                        circles += 1;
                        let r = value(&c.diameter) / 2.0;
                        corner = r;
                        (value(&c.center.0), value(&c.center.1), r, r)
                    }
                    MacroContent::Comment(_) => continue,
                    other => panic!("unexpected primitive {other:?}"),
                };
                x0 = x0.min(cx - hw);
                x1 = x1.max(cx + hw);
                y0 = y0.min(cy - hh);
                y1 = y1.max(cy + hh);
            }
            assert_eq!(circles, 4, "a rounded rectangle has four corner circles");
            ((x1 - x0, y1 - y0), "rounded", Some(corner))
        }
        other => panic!("unexpected aperture {other:?}"),
    }
}

/// Parses a Gerber file with gerber_parser and plays its commands into flashes and draws.
fn read_gerber(text: &str) -> Picture {
    let doc = gerber_parser::parse(BufReader::new(text.as_bytes()))
        .unwrap_or_else(|(_, e)| panic!("gerber_parser refuses the file: {e:?}\n{text}"));
    let errors = doc.errors();
    assert!(errors.is_empty(), "gerber_parser errors: {errors:?}");
    assert_eq!(format!("{:?}", doc.units), "Some(Millimeters)");
    let fs = doc.format_specification.expect("a format statement");
    assert_eq!((fs.integer, fs.decimal), (4, 6), "%FSLAX46Y46*%");

    let mut pic = Picture::default();
    let mut macros = BTreeMap::new();
    let mut apertures: BTreeMap<i32, Aperture> = BTreeMap::new();
    // Aperture attributes in force when each aperture is defined (specification 5.3).
    let mut functions: BTreeMap<i32, String> = BTreeMap::new();
    let mut function = String::new();
    let mut current: Option<i32> = None;
    let mut point = (None::<f64>, None::<f64>);
    let mut pin = None;
    let mut net = None;
    let mut ended = false;
    for c in doc.commands() {
        assert!(!ended, "nothing may follow M02");
        match c {
            Command::ExtendedCode(ExtendedCode::ApertureMacro(m)) => {
                macros.insert(m.name.clone(), m.content.clone());
            }
            Command::ExtendedCode(ExtendedCode::ApertureDefinition(d)) => {
                if let Aperture::Macro(name, _) = &d.aperture {
                    assert!(macros.contains_key(name), "macro {name} defined before use");
                }
                apertures.insert(d.code, d.aperture.clone());
                functions.insert(d.code, function.clone());
            }
            Command::ExtendedCode(ExtendedCode::FileAttribute(a)) => {
                let s = format!("{a:?}");
                if s.starts_with("FileFunction") {
                    pic.file_function = s;
                } else if s.starts_with("FilePolarity") {
                    pic.polarity = s;
                } else if s.starts_with("GenerationSoftware") {
                    pic.software = s;
                }
            }
            Command::ExtendedCode(ExtendedCode::ApertureAttribute(a)) => {
                function = format!("{a:?}");
            }
            Command::ExtendedCode(ExtendedCode::DeleteAttribute(
                AttributeDeletionCriterion::SingleApertureAttribute(_),
            )) => function.clear(),
            Command::ExtendedCode(ExtendedCode::ObjectAttribute(a)) => match a {
                ObjectAttribute::Pin(p) => pin = Some((p.refdes.clone(), p.name.clone())),
                ObjectAttribute::Net(Net::Connected(n)) => net = n.first().cloned(),
                other => panic!("unexpected object attribute {other:?}"),
            },
            Command::ExtendedCode(ExtendedCode::DeleteAttribute(
                AttributeDeletionCriterion::AllApertureAndObjectAttributes,
            )) => {
                pin = None;
                net = None;
            }
            Command::FunctionCode(FunctionCode::DCode(DCode::SelectAperture(d))) => {
                assert!(
                    apertures.contains_key(d),
                    "D{d} selected before it is defined"
                );
                current = Some(*d);
            }
            Command::FunctionCode(FunctionCode::DCode(DCode::Operation(op))) => {
                let coords = match op {
                    Operation::Interpolate(c, _) | Operation::Move(c) | Operation::Flash(c) => c,
                };
                let before = point;
                if let Some(c) = coords {
                    if let Some(x) = c.x {
                        point.0 = Some(f64::from(x));
                    }
                    if let Some(y) = c.y {
                        point.1 = Some(f64::from(y));
                    }
                }
                let at = Point::new(point.0.expect("x set"), point.1.expect("y set"));
                let ap = &apertures[&current.expect("an aperture is selected")];
                match op {
                    Operation::Move(_) => {}
                    Operation::Flash(_) => {
                        let (size, kind, corner) = extent(ap, &macros);
                        pic.flashes.push(Flash {
                            at,
                            size,
                            kind,
                            corner,
                            function: functions[&current.unwrap()].clone(),
                            pin: pin.clone(),
                            net: net.clone(),
                        });
                    }
                    Operation::Interpolate(_, _) => {
                        let Aperture::Circle(c) = ap else {
                            panic!("draws use circular apertures")
                        };
                        pic.draws.push(Draw {
                            from: Point::new(before.0.unwrap(), before.1.unwrap()),
                            to: at,
                            width: c.diameter,
                            function: functions[&current.unwrap()].clone(),
                            net: net.clone(),
                        });
                    }
                }
            }
            Command::FunctionCode(FunctionCode::MCode(_)) => ended = true,
            _ => {}
        }
    }
    assert!(ended, "the file ends with M02");
    pic
}

/// Pads by (reference, pin): centre, size (width, height) and shape.
type PadTable = BTreeMap<(String, String), (Point, (f64, f64), PadShape)>;

/// The pads the board must show on a copper layer, computed here from the footprints
/// and the model's one transform (`to_board`): (reference, pin) -> (centre, size, shape).
fn expected_pads(d: &Design, layer: Layer) -> PadTable {
    let mut out = BTreeMap::new();
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        let at = part.at.expect("placed");
        let q = part.quarter();
        for pad in &fp.pads {
            let on = match pad.kind {
                PadKind::Smd => (part.side == Side::Top) == (layer == Layer::Top),
                PadKind::ThroughHole { plated, .. } => plated,
            };
            if on {
                out.insert(
                    (part.reference.clone(), pad.number.clone()),
                    (
                        to_board(pad.at, at, q, part.side),
                        q.apply_size(pad.width, pad.height),
                        pad.shape,
                    ),
                );
            }
        }
    }
    out
}

fn kind_of(shape: PadShape, size: (f64, f64)) -> &'static str {
    match shape {
        PadShape::Circle => "circle",
        PadShape::Rectangle => "rectangle",
        PadShape::Obround if close(size.0, size.1) => "circle",
        PadShape::Obround => "obround",
        PadShape::Rounded => "rounded",
    }
}

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

// ----------------------------------------------------------------------------------------
// NC drill
// ----------------------------------------------------------------------------------------

/// Reads the drill dialect (IPC-NC-349 lineage, common practice): `M48` header with
/// `T<n>C<diameter>` tools up to `%`, then tool selects and `X..Y..` hits to `M30`. The
/// `; plated holes` / `; non-plated holes` comments of lehr's header say each tool's
/// plating (docs/fabrication.md). Returns (x, y, diameter, plated) in micrometres.
fn read_drill(text: &str) -> Vec<(i64, i64, i64, bool)> {
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("M48"));
    let mut tools = BTreeMap::new();
    let mut plated = None;
    let mut metric = false;
    for l in lines.by_ref() {
        match l {
            "%" => break,
            "METRIC" => metric = true,
            "; plated holes" => plated = Some(true),
            "; non-plated holes" => plated = Some(false),
            l if l.starts_with(';') => {}
            l => {
                let (t, dia) = l
                    .strip_prefix('T')
                    .and_then(|r| r.split_once('C'))
                    .expect("a tool line");
                tools.insert(
                    t.parse::<u32>().unwrap(),
                    (dia.parse::<f64>().unwrap(), plated.expect("a section")),
                );
            }
        }
    }
    assert!(metric);
    let um = |v: f64| (v * 1000.0).round() as i64;
    let mut hits = Vec::new();
    let mut tool = None;
    let mut ended = false;
    for l in lines {
        assert!(!ended);
        match l {
            "G90" | "G05" => {}
            "M30" => ended = true,
            l if l.starts_with(';') => {}
            l if l.starts_with('T') => tool = Some(l[1..].parse::<u32>().unwrap()),
            l => {
                let (x, y) = l
                    .strip_prefix('X')
                    .and_then(|r| r.split_once('Y'))
                    .expect("a hit");
                let (d, p) = tools[&tool.expect("a tool is selected")];
                hits.push((um(x.parse().unwrap()), um(y.parse().unwrap()), um(d), p));
            }
        }
    }
    assert!(ended, "ends with M30");
    hits.sort();
    hits
}

#[test]
fn drill_hits_are_the_board_holes() {
    let d = &fixture().design;
    let got = read_drill(&drill::drill(d).unwrap());
    let um = |v: f64| (v * 1000.0).round() as i64;
    let mut want = Vec::new();
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        for pad in &fp.pads {
            if let PadKind::ThroughHole { drill, plated } = pad.kind {
                let at = to_board(pad.at, part.at.unwrap(), part.quarter(), part.side);
                want.push((um(at.x), um(at.y), um(drill), plated));
            }
        }
    }
    for v in &d.board.copper.vias {
        want.push((um(v.at.x), um(v.at.y), um(v.drill), true));
    }
    want.sort();
    assert_eq!(got, want);
    // The two M3 holes are the non-plated ones.
    assert_eq!(got.iter().filter(|h| !h.3).count(), 2);
    assert!(got.iter().filter(|h| !h.3).all(|h| h.2 == 3200));
}

// ----------------------------------------------------------------------------------------
// Centroid and run log
// ----------------------------------------------------------------------------------------

/// Splits one CSV record (RFC 4180: quoted fields, doubled quotes inside).
fn csv_record(line: &str) -> Vec<String> {
    let mut out = vec![String::new()];
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', false) => quoted = true,
            ('"', true) if chars.peek() == Some(&'"') => {
                chars.next();
                out.last_mut().unwrap().push('"');
            }
            ('"', true) => quoted = false,
            (',', false) => out.push(String::new()),
            (c, _) => out.last_mut().unwrap().push(c),
        }
    }
    out
}

#[test]
fn centroid_rows_are_the_parts() {
    let d = &fixture().design;
    let text = centroid::centroid_csv(d);
    let mut lines = text.lines();
    assert_eq!(
        csv_record(lines.next().unwrap()),
        centroid::COLUMNS.map(String::from)
    );
    let rows: Vec<Vec<String>> = lines.map(csv_record).collect();
    let parts: Vec<_> = d
        .board
        .parts
        .iter()
        .zip(&d.footprints)
        .filter(|(p, _)| !matches!(p.footprint, FootprintSpec::MountingHole { .. }))
        .collect();
    assert_eq!(rows.len(), parts.len());
    for (row, (p, fp)) in rows.iter().zip(&parts) {
        let at = p.at.unwrap();
        assert_eq!(row[0], p.reference);
        assert_eq!(row[1], p.value);
        assert_eq!(row[2], fp.name);
        assert!(close(row[3].parse().unwrap(), at.x) && close(row[4].parse().unwrap(), at.y));
        assert_eq!(row[5].parse::<f64>().unwrap(), p.quarter().degrees());
        assert_eq!(row[6], if p.side == Side::Top { "top" } else { "bottom" });
    }
    assert!(rows.iter().any(|r| r[0] == "D2" && r[6] == "bottom"));
    // A value with a comma and a quote survives the round trip.
    let mut b = d.board.clone();
    b.parts[0].value = "2,2 \"R\"".into();
    let d2 = lehr_engine::model::resolve(b).unwrap();
    let text = centroid::centroid_csv(&d2);
    assert_eq!(csv_record(text.lines().nth(1).unwrap())[1], "2,2 \"R\"");
}

#[test]
fn the_run_log_has_one_row_per_stage() {
    let placed = &fixture().placed;
    let text = runlog::run_log(&placed.history);
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap().split(',').collect::<Vec<_>>(),
        runlog::COLUMNS
    );
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|v| v.parse().unwrap()).collect())
        .collect();
    assert!(placed.history.len() > 5);
    assert_eq!(rows.len(), placed.history.len());
    for (row, r) in rows.iter().zip(&placed.history) {
        // Shortest round-trip notation: the numbers read back exactly.
        assert_eq!(
            row,
            &vec![
                f64::from(r.stage),
                r.moves as f64,
                r.temperature,
                r.energy,
                r.best_energy,
                r.terms.wirelength,
                r.terms.overlap,
                r.terms.outside,
                r.terms.keepout,
                r.acceptance,
                r.window
            ]
        );
    }
}

// ----------------------------------------------------------------------------------------
// The command line: lehr export (and place --log), SVG read by roxmltree
// ----------------------------------------------------------------------------------------

fn lehr_cmd() -> Process {
    Process::new(env!("CARGO_BIN_EXE_lehr"))
}

fn listing(dir: &Path) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    for e in walk(dir) {
        out.insert(e.strip_prefix(dir).unwrap().display().to_string());
    }
    out
}

fn walk(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut v = Vec::new();
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            v.extend(walk(&p));
        } else {
            v.push(p);
        }
    }
    v
}

#[test]
fn export_writes_every_file_and_nothing_else() {
    let d = &fixture().design;
    let dir = tempfile::tempdir().unwrap();
    let board = dir.path().join("dimmer.routed.board.ron");
    lehr_engine::io::save_board(&board, &d.board).unwrap();
    std::fs::write(dir.path().join("keep.txt"), b"untouched").unwrap();
    let out = lehr_cmd()
        .arg("export")
        .arg(&board)
        .args([
            "--svg",
            "b.svg",
            "--png",
            "b.png",
            "--gerber",
            "gerber",
            "--drill",
            "b.drl",
            "--centroid",
            "b.csv",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        out.stderr.is_empty(),
        "a routed board has no warnings: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let want: BTreeSet<String> = [
        "dimmer.routed.board.ron",
        "keep.txt",
        "b.svg",
        "b.png",
        "b.drl",
        "b.csv",
        "gerber/dimmer.routed-copper-top.gbr",
        "gerber/dimmer.routed-copper-bottom.gbr",
        "gerber/dimmer.routed-mask-top.gbr",
        "gerber/dimmer.routed-mask-bottom.gbr",
        "gerber/dimmer.routed-outline.gbr",
    ]
    .into_iter()
    .map(String::from)
    .collect();
    assert_eq!(listing(dir.path()), want);
    assert_eq!(
        std::fs::read(dir.path().join("keep.txt")).unwrap(),
        b"untouched"
    );
    // The files are the library's output, byte for byte.
    let text = |n: &str| std::fs::read_to_string(dir.path().join(n)).unwrap();
    assert_eq!(
        text("gerber/dimmer.routed-copper-top.gbr"),
        gerber(d, GerberLayer::CopperTop, &FabOptions::default()).unwrap()
    );
    assert_eq!(text("b.drl"), drill::drill(d).unwrap());
    assert_eq!(text("b.csv"), centroid::centroid_csv(d));
    // PNG signature (ISO/IEC 15948, section 5.2).
    assert_eq!(
        &std::fs::read(dir.path().join("b.png")).unwrap()[..8],
        b"\x89PNG\r\n\x1a\n"
    );

    // The SVG is well-formed XML (roxmltree) and holds one element per pad, per track
    // segment, per via and per part reference.
    let svg = text("b.svg");
    let doc = roxmltree::Document::parse(&svg).expect("well-formed XML");
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    assert_eq!(
        root.tag_name().namespace(),
        Some("http://www.w3.org/2000/svg")
    );
    let count = |class: &str, tags: &[&str]| {
        doc.descendants()
            .filter(|n| n.attribute("class") == Some(class) && tags.contains(&n.tag_name().name()))
            .count()
    };
    for side in [Side::Top, Side::Bottom] {
        let pads: usize = d
            .board
            .parts
            .iter()
            .zip(&d.footprints)
            .filter(|(p, _)| p.side == side)
            .map(|(_, f)| f.pads.len())
            .sum();
        let class = if side == Side::Top {
            "pad-top"
        } else {
            "pad-bottom"
        };
        assert_eq!(count(class, &["rect", "circle"]), pads, "{class}");
    }
    for (layer, class) in [(Layer::Top, "track-top"), (Layer::Bottom, "track-bottom")] {
        let segs: usize = d
            .board
            .copper
            .tracks
            .iter()
            .filter(|t| t.layer == layer)
            .map(|t| t.points.len() - 1)
            .sum();
        assert_eq!(count(class, &["line"]), segs, "{class}");
    }
    assert_eq!(count("via", &["circle"]), d.board.copper.vias.len());
    let refs: BTreeSet<&str> = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "text" && n.attribute("class") == Some("reference"))
        .filter_map(|n| n.text())
        .collect();
    let parts: BTreeSet<&str> = d.board.parts.iter().map(|p| p.reference.as_str()).collect();
    assert_eq!(refs, parts);
    assert_eq!(
        count("outline", &["line"]),
        d.board.outline.vertices().len()
    );
    // Pads sit where the board has them: the board polygon's first point (the outline's
    // first vertex) fixes the offset of the SVG frame (y down, in mm).
    let num = |n: &roxmltree::Node, a: &str| n.attribute(a).unwrap().parse::<f64>().unwrap();
    let first = doc
        .descendants()
        .find(|n| n.attribute("class") == Some("board"))
        .and_then(|n| n.attribute("points"))
        .and_then(|p| p.split(' ').next())
        .and_then(|p| p.split_once(','))
        .map(|(x, y)| (x.parse::<f64>().unwrap(), y.parse::<f64>().unwrap()))
        .expect("the board polygon");
    let v0 = d.board.outline.vertices()[0];
    let to_board_mm = |x: f64, y: f64| Point::new(v0.x + (x - first.0), v0.y - (y - first.1));
    let mut centres: Vec<Point> = Vec::new();
    for n in doc
        .descendants()
        .filter(|n| matches!(n.attribute("class"), Some("pad-top" | "pad-bottom")))
    {
        centres.push(match n.tag_name().name() {
            "rect" => to_board_mm(
                num(&n, "x") + num(&n, "width") / 2.0,
                num(&n, "y") + num(&n, "height") / 2.0,
            ),
            _ => to_board_mm(num(&n, "cx"), num(&n, "cy")),
        });
    }
    // The SVG writes 4 decimals (0.1 micrometre).
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        for pad in &fp.pads {
            let at = to_board(pad.at, part.at.unwrap(), part.quarter(), part.side);
            assert!(
                centres
                    .iter()
                    .any(|c| (c.x - at.x).abs() < 2e-4 && (c.y - at.y).abs() < 2e-4),
                "{}.{} at {at:?} is not drawn",
                part.reference,
                pad.number
            );
        }
    }

    // Rendered by an independent SVG renderer (resvg), the picture shows the pad colour at
    // the centre of every top-side surface-mount pad and the hole colour at the centre of
    // every through-hole pad: the stacking puts pads over tracks and holes over pads.
    let tree = resvg::usvg::Tree::from_str(&svg, &resvg::usvg::Options::default()).unwrap();
    let view_w: f64 = root
        .attribute("viewBox")
        .unwrap()
        .split(' ')
        .nth(2)
        .unwrap()
        .parse()
        .unwrap();
    let k = 20.0 / (f64::from(tree.size().width()) / view_w); // 20 pixels per mm
    let (w, h) = (
        (f64::from(tree.size().width()) * k).ceil() as u32,
        (f64::from(tree.size().height()) * k).ceil() as u32,
    );
    let mut pix = resvg::tiny_skia::Pixmap::new(w, h).unwrap();
    resvg::render(
        &tree,
        resvg::tiny_skia::Transform::from_scale(k as f32, k as f32),
        &mut pix.as_mut(),
    );
    let colour_at = |p: Point| {
        let ux = first.0 + (p.x - v0.x);
        let uy = first.1 - (p.y - v0.y);
        let c = pix
            .pixel((ux * 20.0) as u32, (uy * 20.0) as u32)
            .unwrap()
            .demultiply();
        format!("#{:02x}{:02x}{:02x}", c.red(), c.green(), c.blue())
    };
    let fill_of = |class: &str| {
        doc.descendants()
            .find(|n| n.attribute("class") == Some(class))
            .and_then(|n| n.attribute("fill"))
            .unwrap()
            .to_string()
    };
    let (pad_top, hole) = (fill_of("pad-top"), fill_of("drill"));
    let mut checked = 0;
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        for pad in &fp.pads {
            let at = to_board(pad.at, part.at.unwrap(), part.quarter(), part.side);
            let want = match pad.kind {
                PadKind::ThroughHole { .. } => &hole,
                PadKind::Smd if part.side == Side::Top => &pad_top,
                PadKind::Smd => continue,
            };
            assert_eq!(&colour_at(at), want, "{}.{}", part.reference, pad.number);
            checked += 1;
        }
    }
    assert!(checked > 20);

    // Again: the files are replaced, nothing new appears.
    let again = lehr_cmd()
        .arg("export")
        .arg(&board)
        .args(["--drill", "b.drl"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(again.status.success());
    assert_eq!(listing(dir.path()), want);
}

#[test]
fn export_errors_are_one_line_and_exit_1() {
    let dir = tempfile::tempdir().unwrap();
    for args in [
        vec!["export", "missing.board.ron", "--svg", "a.svg"],
        vec!["export", "missing.board.ron"],
    ] {
        let out = lehr_cmd()
            .args(&args)
            .current_dir(dir.path())
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(1), "{args:?}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(err.trim_end().lines().count(), 1, "{err}");
        assert!(err.starts_with("lehr: error: "), "{err}");
    }
    assert!(listing(dir.path()).is_empty());
}

#[test]
fn unrouted_boards_export_with_a_warning_and_place_writes_its_log() {
    let dir = tempfile::tempdir().unwrap();
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron");
    let out = lehr_cmd()
        .arg("place")
        .arg(&sample)
        .args([
            "--moves",
            "5000",
            "--out",
            "p.board.ron",
            "--log",
            "run.csv",
            "--json",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.code().is_some_and(|c| c == 0 || c == 2));
    let log = std::fs::read_to_string(dir.path().join("run.csv")).unwrap();
    assert!(log.starts_with("stage,moves,temperature,"));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let stages = v["stages"].as_u64().unwrap() as usize;
    assert_eq!(
        log.lines().count(),
        stages + 1,
        "one row per stage and a header"
    );

    let out = lehr_cmd()
        .args(["export", "p.board.ron", "--gerber", "g"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("warning") && err.contains("not routed"),
        "{err}"
    );
    assert!(dir.path().join("g/p-copper-top.gbr").is_file());
}

#[test]
fn hazardous_boards_export_with_the_caution() {
    // Above 30 V (the usual extra-low-voltage limit for dry conditions, common practice)
    // the exports carry the caution that defers to IPC-2221, local codes and review.
    let mut board = fixture().design.board.clone();
    board.classes[0].voltage = Some(230.0);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("mains.board.ron");
    lehr_engine::io::save_board(&path, &board).unwrap();
    let out = lehr_cmd()
        .arg("export")
        .arg(&path)
        .args(["--drill", "m.drl"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("IPC-2221") && err.contains("licensed"),
        "{err}"
    );
}

#[test]
fn unplaced_parts_are_left_out_and_named() {
    // The sample as written: only the four locked parts have positions.
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    let placed: Vec<&str> = d
        .board
        .parts
        .iter()
        .filter(|p| p.at.is_some())
        .map(|p| p.reference.as_str())
        .collect();
    assert_eq!(placed, ["J1", "RV1", "H1", "H2"]);
    let w = lehr_engine::fab::warnings(&d);
    assert!(
        w.iter()
            .any(|w| w.starts_with("6 unplaced parts") && w.ends_with("U1, C1, C2, D1, D2, Q1")),
        "{w:?}"
    );
    let pic = read_gerber(&gerber(&d, GerberLayer::CopperTop, &FabOptions::default()).unwrap());
    let refs: BTreeSet<String> = pic
        .flashes
        .iter()
        .filter_map(|f| f.pin.as_ref().map(|p| p.0.clone()))
        .collect();
    assert_eq!(refs, ["J1", "RV1"].map(String::from).into());
    let rows = centroid::centroids(&d);
    assert_eq!(
        rows.iter()
            .map(|r| r.reference.as_str())
            .collect::<Vec<_>>(),
        ["J1", "RV1"]
    );
}
