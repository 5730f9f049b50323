//! Fabrication exports of a placed and routed sample board, read back by outside readers:
//! the Gerber files by the `gerber_parser` crate (with the image built from its commands
//! as the Ucamco Gerber Layer Format Specification, revision 2022.02, section 4.8, says:
//! D02 moves, D01 draws from the current point, D03 flashes, coordinates are modal), the
//! SVG by `roxmltree`, the drill program, centroid table and run log by small readers of
//! their documented formats; and the `lehr export` command on a real directory.

mod centroid;
mod drill;
mod export;
mod gerber;

use std::collections::BTreeMap;
use std::io::BufReader;
use std::path::Path;
use std::sync::OnceLock;
use std::sync::atomic::AtomicBool;

use gerber_parser::gerber_types::{
    Aperture, AttributeDeletionCriterion, Command, DCode, ExtendedCode, FunctionCode, MacroContent,
    MacroDecimal, Net, ObjectAttribute, Operation,
};
use lehr_engine::model::board::Layer;
use lehr_engine::model::{Design, PadKind, PadShape, Point, Side, to_board};
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
