//! Gerber RS-274X files with X2 attributes, one per image: top and bottom copper, top and
//! bottom solder mask openings, and the board outline (profile).
//!
//! Written to the Ucamco Gerber Layer Format Specification, revision 2022.02. The
//! section numbers below are that revision's (from memory where marked):
//! - 4.1 comments (`G04`); 4.2.1 unit (`%MOMM*%`); 4.2.2 coordinate format
//!   (`%FSLAX46Y46*%`: absolute, leading zeros omitted, 4 integer and 6 decimal digits, so
//!   `X1500000` is 1.5 mm and the resolution is 1 nm);
//! - 4.3 aperture definitions (`%ADD10C,0.25*%`), all written in the header, before any
//!   use; 4.4 the standard templates C (circle), R (rectangle) and O (obround);
//! - 4.5 aperture macros: a pad with rounded corners is a macro of our own per size
//!   (`ROUNDED1`, ...), made of two centre-line primitives (code 21) and four circle
//!   primitives (code 1), flashed like any aperture. lehr's pads are axis-aligned (parts
//!   turn in quarter turns and the turn is applied to the size), so no rotation is needed;
//! - 4.6 the current aperture (`D10*`); 4.7 linear plotting (`G01`); 4.8 operations:
//!   `D02` move, `D01` draw (tracks, the outline), `D03` flash (pads, vias, mask openings);
//! - 4.9.2 polarity (`%LPD*%`, dark); 4.13 end of file (`M02`);
//! - 5.2 file attributes (`%TF...*%`), 5.3 aperture attributes (`%TA...*%`), 5.4 object
//!   attributes (`%TO...*%`), 5.5 deleting attributes (`%TD*%`); the standard attributes of
//!   5.6: `.GenerationSoftware`, `.FileFunction` (Copper,L1,Top / Copper,L2,Bot /
//!   Soldermask,Top / Soldermask,Bot / Profile,NP), `.FilePolarity`, `.AperFunction`
//!   (5.6.10: SMDPad,CuDef / ComponentPad / ViaPad / Conductor / Profile), `.N` (5.6.13,
//!   net) and `.P` (5.6.14, pad: part and pin). Subsection numbers from memory; 5.6.10 and
//!   5.6.13 are also the numbers the gerber_parser crate cites for revision 2024.05.
//!
//! Copper is positive (dark = copper). Solder mask files are negative in the sense of
//! 5.6 `.FilePolarity`: what they draw is where the mask is absent, the openings. Each
//! opening is the pad grown by [`FabOptions::mask_expansion`] on every side; vias are
//! tented (no opening); an unplated hole gets an opening on both sides so the mask stays
//! off its wall.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use super::{BoardPad, FabError, FabOptions, board_pads, decimal};
use crate::model::board::Layer;
use crate::model::{Design, PadKind, PadShape, Point};

/// The largest coordinate the 4.6 format holds, mm.
pub const MAX_COORDINATE_MM: f64 = 9999.999999;

/// Units per millimetre of the 4.6 format.
const UNITS_PER_MM: f64 = 1e6;

/// One Gerber image of the board.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum GerberLayer {
    CopperTop,
    CopperBottom,
    MaskTop,
    MaskBottom,
    Outline,
}

impl GerberLayer {
    pub const ALL: [GerberLayer; 5] = [
        GerberLayer::CopperTop,
        GerberLayer::CopperBottom,
        GerberLayer::MaskTop,
        GerberLayer::MaskBottom,
        GerberLayer::Outline,
    ];

    /// lehr's short name of the image, used in file names (`NAME-copper-top.gbr`).
    pub fn name(self) -> &'static str {
        match self {
            GerberLayer::CopperTop => "copper-top",
            GerberLayer::CopperBottom => "copper-bottom",
            GerberLayer::MaskTop => "mask-top",
            GerberLayer::MaskBottom => "mask-bottom",
            GerberLayer::Outline => "outline",
        }
    }

    /// The value of the `.FileFunction` attribute (specification 5.6).
    pub fn file_function(self) -> &'static str {
        match self {
            GerberLayer::CopperTop => "Copper,L1,Top",
            GerberLayer::CopperBottom => "Copper,L2,Bot",
            GerberLayer::MaskTop => "Soldermask,Top",
            GerberLayer::MaskBottom => "Soldermask,Bot",
            GerberLayer::Outline => "Profile,NP",
        }
    }

    /// The value of the `.FilePolarity` attribute: mask images show the openings.
    pub fn polarity(self) -> &'static str {
        match self {
            GerberLayer::MaskTop | GerberLayer::MaskBottom => "Negative",
            _ => "Positive",
        }
    }

    /// The copper side the image belongs to (`None` for the outline).
    pub fn side(self) -> Option<Layer> {
        match self {
            GerberLayer::CopperTop | GerberLayer::MaskTop => Some(Layer::Top),
            GerberLayer::CopperBottom | GerberLayer::MaskBottom => Some(Layer::Bottom),
            GerberLayer::Outline => None,
        }
    }
}

/// An aperture shape in whole nanometres (the 4.6 format's unit), so equal shapes share
/// one D code.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
enum Template {
    Circle {
        d: i64,
    },
    Rect {
        w: i64,
        h: i64,
    },
    Obround {
        w: i64,
        h: i64,
    },
    /// Rectangle `w` x `h` with corners of radius `r` (an aperture macro).
    Rounded {
        w: i64,
        h: i64,
        r: i64,
    },
}

/// An aperture: its shape and the `.AperFunction` it is defined under (if any).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
struct Aperture {
    function: Option<&'static str>,
    template: Template,
}

/// What a graphical object is, for its object attributes.
#[derive(Clone, Debug)]
enum Object {
    Flash {
        at: Point,
        pad: Option<(String, String)>,
        net: Option<String>,
    },
    /// A polyline drawn with the aperture (two points at least).
    Draw {
        points: Vec<Point>,
        net: Option<String>,
    },
}

/// A Gerber file under construction: the objects in drawing order, each with its
/// aperture. D codes are given when the file is written, in aperture order (by function,
/// then shape), so apertures of one function are defined together under one `%TA`.
struct Image {
    objects: Vec<(Aperture, Object)>,
}

impl Image {
    fn new() -> Image {
        Image {
            objects: Vec::new(),
        }
    }

    fn push(&mut self, a: Aperture, o: Object) {
        self.objects.push((a, o));
    }

    /// The D code of every aperture used (D codes start at 10, specification 4.3).
    fn codes(&self) -> BTreeMap<Aperture, u32> {
        let mut codes: BTreeMap<Aperture, u32> =
            self.objects.iter().map(|(a, _)| (*a, 0)).collect();
        for (i, d) in codes.values_mut().enumerate() {
            *d = 10 + i as u32;
        }
        codes
    }
}

fn nm(what: &str, v: f64) -> Result<i64, FabError> {
    if v.is_finite() && v.abs() <= MAX_COORDINATE_MM {
        Ok((v * UNITS_PER_MM).round() as i64)
    } else {
        Err(FabError::OutOfRange {
            what: what.to_string(),
            value: v,
            format: "Gerber 4.6",
            limit: MAX_COORDINATE_MM,
        })
    }
}

/// The shape of a pad grown by `grow` on every side.
fn pad_template(p: &BoardPad, grow: f64) -> Result<Template, FabError> {
    let what = format!("pad {}.{} size", p.reference, p.number);
    let (w, h) = (p.width + 2.0 * grow, p.height + 2.0 * grow);
    Ok(match p.shape {
        PadShape::Circle => Template::Circle {
            d: nm(&what, w.min(h))?,
        },
        PadShape::Rectangle => Template::Rect {
            w: nm(&what, w)?,
            h: nm(&what, h)?,
        },
        PadShape::Obround if (w - h).abs() < 1e-9 => Template::Circle { d: nm(&what, w)? },
        PadShape::Obround => Template::Obround {
            w: nm(&what, w)?,
            h: nm(&what, h)?,
        },
        PadShape::Rounded => Template::Rounded {
            w: nm(&what, w)?,
            h: nm(&what, h)?,
            r: nm(&what, p.corner_radius() + grow)?,
        },
    })
}

/// The Gerber file of one image of the board (see the module docs for what each holds).
/// Unplaced parts are left out; a board without copper gives pads only.
pub fn gerber(design: &Design, layer: GerberLayer, opts: &FabOptions) -> Result<String, FabError> {
    opts.check()?;
    let mut img = Image::new();
    let pads = board_pads(design);
    match layer {
        GerberLayer::CopperTop | GerberLayer::CopperBottom => {
            let side = layer.side().unwrap_or_default();
            copper(design, side, &pads, &mut img)?;
        }
        GerberLayer::MaskTop | GerberLayer::MaskBottom => {
            let side = layer.side().unwrap_or_default();
            for p in pads.iter().filter(|p| p.opens_mask_on(side)) {
                let template = match p.kind {
                    // An unplated hole's opening follows the hole.
                    PadKind::ThroughHole {
                        drill,
                        plated: false,
                    } => Template::Circle {
                        d: nm("mask opening", drill + 2.0 * opts.mask_expansion)?,
                    },
                    _ => pad_template(p, opts.mask_expansion)?,
                };
                img.push(
                    Aperture {
                        function: None,
                        template,
                    },
                    Object::Flash {
                        at: p.at,
                        pad: pad_id(p),
                        net: p.net.clone(),
                    },
                );
            }
        }
        GerberLayer::Outline => {
            let mut points = design.board.outline.vertices();
            if let Some(first) = points.first().copied() {
                points.push(first);
            }
            img.push(
                Aperture {
                    function: Some("Profile"),
                    template: Template::Circle {
                        d: nm("outline width", opts.outline_width)?,
                    },
                },
                Object::Draw { points, net: None },
            );
        }
    }
    write(design, layer, &img)
}

/// Pad of part and pin, for the `.P` attribute (holes that are not pins have none).
fn pad_id(p: &BoardPad) -> Option<(String, String)> {
    (!p.number.is_empty()).then(|| (p.reference.clone(), p.number.clone()))
}

fn copper(
    design: &Design,
    side: Layer,
    pads: &[BoardPad],
    img: &mut Image,
) -> Result<(), FabError> {
    for p in pads.iter().filter(|p| p.has_copper_on(side)) {
        let function = match p.kind {
            PadKind::Smd => "SMDPad,CuDef",
            PadKind::ThroughHole { .. } => "ComponentPad",
        };
        img.push(
            Aperture {
                function: Some(function),
                template: pad_template(p, 0.0)?,
            },
            Object::Flash {
                at: p.at,
                pad: pad_id(p),
                net: p.net.clone(),
            },
        );
    }
    let copper = &design.board.copper;
    for t in copper.tracks.iter().filter(|t| t.layer == side) {
        if t.points.len() < 2 {
            continue;
        }
        img.push(
            Aperture {
                function: Some("Conductor"),
                template: Template::Circle {
                    d: nm("track width", t.width)?,
                },
            },
            Object::Draw {
                points: t.points.clone(),
                net: Some(t.net.clone()),
            },
        );
    }
    for v in &copper.vias {
        img.push(
            Aperture {
                function: Some("ViaPad"),
                template: Template::Circle {
                    d: nm("via diameter", v.diameter)?,
                },
            },
            Object::Flash {
                at: v.at,
                pad: None,
                net: Some(v.net.clone()),
            },
        );
    }
    Ok(())
}

/// A field of an attribute or a comment, with the characters the syntax reserves
/// (`%`, `*`, `,` and the escape `\` itself) and control characters written as `\uXXXX`
/// (specification 3.4.3, from memory).
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if matches!(c, '%' | '*' | ',' | '\\') || c.is_control() {
            let _ = write!(out, "\\u{:04X}", c as u32);
        } else {
            out.push(c);
        }
    }
    out
}

/// A length in mm as the decimal numbers of aperture definitions use.
fn mm(units: i64) -> String {
    decimal(units as f64 / UNITS_PER_MM, 6)
}

fn write(design: &Design, layer: GerberLayer, img: &Image) -> Result<String, FabError> {
    let mut s = String::new();
    let name = escape(&design.board.name);
    let _ = writeln!(s, "G04 {name}: {}*", layer.name());
    let _ = writeln!(
        s,
        "%TF.GenerationSoftware,lehr,lehr,{}*%",
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(s, "%TF.FileFunction,{}*%", layer.file_function());
    let _ = writeln!(s, "%TF.FilePolarity,{}*%", layer.polarity());
    s.push_str("%MOMM*%\n%FSLAX46Y46*%\n%LPD*%\n");

    // Apertures in D-code order, grouped by function; the macros they use first.
    let codes = img.codes();
    let by_code: Vec<(&Aperture, u32)> = codes.iter().map(|(a, d)| (a, *d)).collect();
    let mut macro_names = BTreeMap::new();
    for (a, _) in &by_code {
        if let Template::Rounded { w, h, r } = a.template
            && !macro_names.contains_key(&(w, h, r))
        {
            let name = format!("ROUNDED{}", macro_names.len() + 1);
            s.push_str(&rounded_macro(&name, w, h, r));
            macro_names.insert((w, h, r), name);
        }
    }
    let mut current: Option<&'static str> = None;
    for (a, d) in &by_code {
        if a.function != current {
            if current.is_some() {
                s.push_str("%TD.AperFunction*%\n");
            }
            if let Some(f) = a.function {
                let _ = writeln!(s, "%TA.AperFunction,{f}*%");
            }
            current = a.function;
        }
        let def = match a.template {
            Template::Circle { d } => format!("C,{}", mm(d)),
            Template::Rect { w, h } => format!("R,{}X{}", mm(w), mm(h)),
            Template::Obround { w, h } => format!("O,{}X{}", mm(w), mm(h)),
            Template::Rounded { w, h, r } => macro_names[&(w, h, r)].clone(),
        };
        let _ = writeln!(s, "%ADD{d}{def}*%");
    }
    if current.is_some() {
        s.push_str("%TD.AperFunction*%\n");
    }

    s.push_str("G01*\n");
    let mut selected = None;
    for (a, o) in &img.objects {
        let d = &codes[a];
        if selected != Some(*d) {
            let _ = writeln!(s, "D{d}*");
            selected = Some(*d);
        }
        match o {
            Object::Flash { at, pad, net } => {
                let attributed = object_attributes(&mut s, pad.as_ref(), net.as_deref());
                let _ = writeln!(s, "{}D03*", xy(*at)?);
                if attributed {
                    s.push_str("%TD*%\n");
                }
            }
            Object::Draw { points, net } => {
                let attributed = object_attributes(&mut s, None, net.as_deref());
                for (i, p) in points.iter().enumerate() {
                    let op = if i == 0 { "D02" } else { "D01" };
                    let _ = writeln!(s, "{}{op}*", xy(*p)?);
                }
                if attributed {
                    s.push_str("%TD*%\n");
                }
            }
        }
    }
    s.push_str("M02*\n");
    Ok(s)
}

/// Writes `.P` and `.N`; true when anything was written (and must be deleted after).
fn object_attributes(s: &mut String, pad: Option<&(String, String)>, net: Option<&str>) -> bool {
    if let Some((part, pin)) = pad {
        let _ = writeln!(s, "%TO.P,{},{}*%", escape(part), escape(pin));
    }
    if let Some(n) = net {
        let _ = writeln!(s, "%TO.N,{}*%", escape(n));
    }
    pad.is_some() || net.is_some()
}

fn xy(p: Point) -> Result<String, FabError> {
    Ok(format!(
        "X{}Y{}",
        nm("x coordinate", p.x)?,
        nm("y coordinate", p.y)?
    ))
}

/// An aperture macro (specification 4.5) for a `w` x `h` rectangle with corners of radius
/// `r`, centred on the origin: two centre-line rectangles (primitive 21: exposure, width,
/// height, centre x, centre y, rotation) make the cross, four circles (primitive 1:
/// exposure, diameter, centre x, centre y) round the corners.
fn rounded_macro(name: &str, w: i64, h: i64, r: i64) -> String {
    let r = r.clamp(0, w.min(h) / 2);
    let (cx, cy) = (w / 2 - r, h / 2 - r);
    let mut s = format!("%AM{name}*\n");
    let _ = writeln!(s, "21,1,{},{},0,0,0*", mm(w), mm(h - 2 * r));
    let _ = writeln!(s, "21,1,{},{},0,0,0*", mm(w - 2 * r), mm(h));
    for (sx, sy) in [(1, 1), (-1, 1), (-1, -1), (1, -1)] {
        let _ = writeln!(s, "1,1,{},{},{}*", mm(2 * r), mm(sx * cx), mm(sy * cy));
    }
    s.push_str("%\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reserved_characters_are_escaped() {
        assert_eq!(escape("GND"), "GND");
        assert_eq!(escape("A,B*C%D\\"), "A\\u002CB\\u002AC\\u0025D\\u005C");
    }

    #[test]
    fn a_rounded_macro_spans_the_pad() {
        let m = rounded_macro("ROUNDED1", 1_000_000, 400_000, 100_000);
        assert!(m.starts_with("%AMROUNDED1*\n"));
        assert!(m.contains("21,1,1,0.2,0,0,0*"));
        assert!(m.contains("21,1,0.8,0.4,0,0,0*"));
        assert!(m.contains("1,1,0.2,-0.4,-0.1*"));
        assert!(m.ends_with("%\n"));
    }
}
