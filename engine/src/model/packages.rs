//! The standard package families behind [`FootprintSpec`]: pad geometry by package.
//!
//! Every builder here returns pads in footprint coordinates (millimetres, origin at the
//! centre of the land pattern, y up) and a body outline; [`finish`] then checks that no two
//! pads come too close and grows the courtyard around pads and body.
//!
//! Each dimension names where it comes from, so that a reader can check it:
//! - "CHECK-VALUES.md": the standard's value as collected in ../shared/CHECK-VALUES.md;
//! - "from memory": a standard's value recalled, not read from the standard;
//! - "common practice": a convention of the trade rather than a standard;
//! - "assumed": lehr's own choice, close to usual land patterns but not taken from any.
//!
//! Land patterns are of nominal density: pads reach a little past the lead tips (the toe)
//! and somewhat under the body (the heel), in the spirit of IPC-7351, but the numbers are
//! lehr's own and not computed from the standard's tolerance formulas.
//!
//! **Invariant**: building never panics. Bad parameters (pin counts, non-finite or absurd
//! dimensions, a pitch that does not fit the body) give a [`FootprintError`].

use super::footprint::{
    COURTYARD_EXCESS, Footprint, FootprintError, FootprintSpec, Pad, PadKind, PadShape, PadSpec,
};
use super::geom::{Point, Rect};

/// Smallest copper gap allowed between two pads of one footprint (assumed; fine-pitch
/// packages at 0.3 mm pitch still leave more than this).
const MIN_PAD_GAP: f64 = 0.1;

/// Smallest annular ring (copper from the hole's edge to the pad's edge) for pads that
/// lehr sizes from a parameter: radial leads and plated mounting holes (assumed; a value
/// most board makers accept).
const MIN_ANNULAR_RING: f64 = 0.15;

impl FootprintSpec {
    /// Expands the spec into pads and courtyard.
    pub fn build(&self) -> Result<Footprint, FootprintError> {
        match self {
            FootprintSpec::Custom { pads, courtyard } => build_custom(pads, *courtyard),
            other => build_package(other),
        }
    }
}

fn build_custom(specs: &[PadSpec], courtyard: Option<Rect>) -> Result<Footprint, FootprintError> {
    if specs.is_empty() && courtyard.is_none() {
        return Err(FootprintError::BadCustom(
            "needs at least one pad or a courtyard".into(),
        ));
    }
    let mut pads = Vec::with_capacity(specs.len());
    for s in specs {
        check_dim("pad centre x", s.centre.x, -500.0, 500.0)?;
        check_dim("pad centre y", s.centre.y, -500.0, 500.0)?;
        check_dim("pad width", s.width, 0.01, 100.0)?;
        check_dim("pad height", s.height, 0.01, 100.0)?;
        let kind = match s.hole {
            None => PadKind::Smd,
            Some(d) => {
                check_dim("pad hole", d, 0.05, 50.0)?;
                if d >= s.width.min(s.height) {
                    return Err(FootprintError::BadCustom(format!(
                        "pad {} hole {} mm is not smaller than the pad",
                        s.number, d
                    )));
                }
                PadKind::ThroughHole {
                    drill: d,
                    plated: true,
                }
            }
        };
        if pads.iter().any(|p: &Pad| p.number == s.number) {
            return Err(FootprintError::BadCustom(format!(
                "pad number \"{}\" appears twice",
                s.number
            )));
        }
        pads.push(Pad {
            number: s.number.clone(),
            at: s.centre,
            width: s.width,
            height: s.height,
            shape: s.shape,
            kind,
        });
    }
    let pad_extent = Rect::bounding(pads.iter().flat_map(|p| p.rect().corners()));
    let courtyard = match courtyard {
        Some(c) => {
            for v in [c.min.x, c.min.y, c.max.x, c.max.y] {
                check_dim("courtyard corner", v, -500.0, 500.0)?;
            }
            if c.width() <= 0.0 || c.height() <= 0.0 {
                return Err(FootprintError::BadCustom(
                    "courtyard has no area (min must be below and left of max)".into(),
                ));
            }
            c
        }
        None => pad_extent
            .expect("pads are not empty here")
            .inflate(COURTYARD_EXCESS),
    };
    let body = pad_extent.unwrap_or(courtyard);
    Ok(Footprint {
        name: "custom".into(),
        pads,
        body,
        courtyard,
    })
}

/// Checks that a dimension is finite and within a sane range.
fn check_dim(what: &'static str, value: f64, min: f64, max: f64) -> Result<(), FootprintError> {
    if value.is_finite() && value >= min && value <= max {
        Ok(())
    } else {
        Err(FootprintError::BadDimension {
            what,
            value,
            min,
            max,
        })
    }
}

/// Expands every spec except `Custom`, which footprint.rs handles itself.
pub(crate) fn build_package(spec: &FootprintSpec) -> Result<Footprint, FootprintError> {
    match spec {
        FootprintSpec::Chip(code) => chip(code),
        FootprintSpec::Sod123 => sod123(),
        FootprintSpec::Sot23(pins) => sot23(*pins),
        FootprintSpec::Soic(pins) => soic(*pins),
        FootprintSpec::Tssop(pins) => tssop(*pins),
        FootprintSpec::Qfn {
            pins,
            body,
            pitch,
            thermal,
        } => qfn(*pins, *body, *pitch, *thermal),
        FootprintSpec::Qfp { pins, body, pitch } => qfp(*pins, *body, *pitch),
        FootprintSpec::Dip { pins, wide } => dip(*pins, *wide),
        FootprintSpec::Header { rows, cols } => header(*rows, *cols),
        FootprintSpec::TerminalBlock(ways) => terminal_block(*ways),
        FootprintSpec::To220 => to220(),
        FootprintSpec::Radial { pitch, diameter } => radial(*pitch, *diameter),
        FootprintSpec::Axial {
            pitch,
            length,
            diameter,
        } => axial(*pitch, *length, *diameter),
        FootprintSpec::MountingHole { hole, pad } => mounting_hole(*hole, *pad),
        FootprintSpec::Custom { .. } => Err(FootprintError::BadCustom(
            "custom footprints are built from their pad list".into(),
        )),
    }
}

// ---------------------------------------------------------------------------------------
// Two-terminal and small-outline surface-mount parts
// ---------------------------------------------------------------------------------------

/// EIA chip sizes: body length x width by inch code (CHECK-VALUES.md; 1210 and 2512 from
/// memory there). Pads are 45 % of the length wide and 110 % of the width tall, centred on
/// the body's ends (assumed).
fn chip(code: &str) -> Result<Footprint, FootprintError> {
    let (l, w) = match code {
        "0402" => (1.0, 0.5),
        "0603" => (1.6, 0.8),
        "0805" => (2.0, 1.25),
        "1206" => (3.2, 1.6),
        "1210" => (3.2, 2.5),
        "2512" => (6.4, 3.2),
        _ => return Err(FootprintError::UnknownChipSize(code.to_string())),
    };
    let (pw, ph) = (l * 0.45, w * 1.1);
    let pads = vec![
        smd(1, Point::new(-l / 2.0, 0.0), pw, ph),
        smd(2, Point::new(l / 2.0, 0.0), pw, ph),
    ];
    finish(code.to_string(), pads, origin_rect(l, w), "")
}

/// SOD-123 (from memory: body 2.7 x 1.6, lead tips 3.7 apart). Pin 1, the cathode, is on
/// the left. Pads 0.9 x 1.2 reach 0.35 past the lead tips (assumed).
fn sod123() -> Result<Footprint, FootprintError> {
    let (len, wid) = (0.9, 1.2);
    let x = land_centre(3.7 / 2.0, 0.35, len);
    let pads = vec![
        smd(1, Point::new(-x, 0.0), len, wid),
        smd(2, Point::new(x, 0.0), len, wid),
    ];
    finish("SOD-123".into(), pads, origin_rect(2.7, 1.6), "")
}

/// SOT-23 family, long side of the body along x, leads leaving at top and bottom.
///
/// - 3 pins (TO-236AB, CHECK-VALUES.md): body 2.90 x 1.30, lead tips 2.40 apart, pitch
///   0.95. Pins 1 and 2 on the bottom, left to right, 1.90 apart; pin 3 alone on top.
/// - 5 and 6 pins (JEDEC MO-178, from memory): body 2.90 x 1.60, lead tips 2.80 apart.
///   Pins 1 to 3 along the bottom left to right, then counter-clockwise along the top
///   from the right: 4, (5,) and the last pin top left. SOT-23-5 has no middle top pin.
///
/// Pads 0.6 wide and 1.0 long reach 0.35 past the lead tips (assumed).
fn sot23(pins: u32) -> Result<Footprint, FootprintError> {
    const PITCH: f64 = 0.95;
    let (pad_w, pad_l, toe) = (0.6, 1.0, 0.35);
    let (body_h, span) = match pins {
        3 => (1.30, 2.40),
        5 | 6 => (1.60, 2.80),
        _ => {
            return Err(FootprintError::BadPinCount {
                package: "SOT-23",
                pins,
                why: "SOT-23 comes with 3, 5 or 6 pins",
            });
        }
    };
    let y = land_centre(span / 2.0, toe, pad_l);
    // (pin number, x, y): the order of the leads around the package.
    let places: Vec<(usize, f64, f64)> = match pins {
        3 => vec![(1, -PITCH, -y), (2, PITCH, -y), (3, 0.0, y)],
        5 => vec![
            (1, -PITCH, -y),
            (2, 0.0, -y),
            (3, PITCH, -y),
            (4, PITCH, y),
            (5, -PITCH, y),
        ],
        _ => vec![
            (1, -PITCH, -y),
            (2, 0.0, -y),
            (3, PITCH, -y),
            (4, PITCH, y),
            (5, 0.0, y),
            (6, -PITCH, y),
        ],
    };
    let pads = places
        .into_iter()
        .map(|(n, x, y)| smd(n, Point::new(x, y), pad_w, pad_l))
        .collect();
    let name = if pins == 3 {
        "SOT-23".to_string()
    } else {
        format!("SOT-23-{pins}")
    };
    finish(name, pads, origin_rect(2.90, body_h), "")
}

/// A dual-row gull-wing package: the lead rows run along y, pin 1 top left.
struct DualRowSmd {
    pitch: f64,
    /// Distance between the lead tips of the two rows.
    lead_span: f64,
    /// Body across the rows (x) and along them (y).
    body: (f64, f64),
    /// Pad size along the lead (x) and across it (y).
    pad_len: f64,
    pad_wid: f64,
    /// How far the pad reaches past the lead tip.
    toe: f64,
}

impl DualRowSmd {
    fn build(&self, name: String, pins: u32) -> Result<Footprint, FootprintError> {
        let x = land_centre(self.lead_span / 2.0, self.toe, self.pad_len);
        let pads = dual_row_positions(pins, self.pitch, 2.0 * x)
            .into_iter()
            .enumerate()
            .map(|(i, at)| smd(i + 1, at, self.pad_len, self.pad_wid))
            .collect();
        finish(name, pads, origin_rect(self.body.0, self.body.1), "")
    }
}

/// SOIC, narrow body (JEDEC MS-012): pitch 1.27, body width 3.90, lead tips 6.00 apart,
/// SOIC-8 body length 4.90 (CHECK-VALUES.md); SOIC-14 and SOIC-16 bodies 8.65 and 9.90
/// long (from memory). MS-012 has no 10- or 12-lead variant (from memory). Pads 1.55 x
/// 0.60 reaching 0.475 past the lead tips, so their centres sit 5.40 apart (assumed, close
/// to common land patterns).
fn soic(pins: u32) -> Result<Footprint, FootprintError> {
    let length = match pins {
        8 => 4.90,
        14 => 8.65,
        16 => 9.90,
        _ => {
            return Err(FootprintError::BadPinCount {
                package: "SOIC",
                pins,
                why: "narrow SOIC comes with 8, 14 or 16 pins",
            });
        }
    };
    DualRowSmd {
        pitch: 1.27,
        lead_span: 6.00,
        body: (3.90, length),
        pad_len: 1.55,
        pad_wid: 0.60,
        toe: 0.475,
    }
    .build(format!("SOIC-{pins}"), pins)
}

/// TSSOP with 0.65 pitch, body width 4.40, lead tips 6.40 apart; body lengths 3.0 (8
/// pins), 5.0 (14, 16), 6.5 (20), 7.8 (24), 9.7 (28) (JEDEC MO-153, all from memory).
/// Pads 1.45 x 0.45 reaching 0.475 past the lead tips (assumed).
fn tssop(pins: u32) -> Result<Footprint, FootprintError> {
    let length = match pins {
        8 => 3.0,
        14 | 16 => 5.0,
        20 => 6.5,
        24 => 7.8,
        28 => 9.7,
        _ => {
            return Err(FootprintError::BadPinCount {
                package: "TSSOP",
                pins,
                why: "TSSOP with 0.65 mm pitch comes with 8, 14, 16, 20, 24 or 28 pins",
            });
        }
    };
    DualRowSmd {
        pitch: 0.65,
        lead_span: 6.40,
        body: (4.40, length),
        pad_len: 1.45,
        pad_wid: 0.45,
        toe: 0.475,
    }
    .build(format!("TSSOP-{pins}"), pins)
}

// ---------------------------------------------------------------------------------------
// Quad packages
// ---------------------------------------------------------------------------------------

/// A square package with leads on four sides.
struct QuadSmd {
    pins: u32,
    pitch: f64,
    /// Distance of every pad centre from the footprint's centre line.
    pad_centre: f64,
    /// Pad size along the lead (outwards) and across it.
    pad_len: f64,
    pad_wid: f64,
}

impl QuadSmd {
    /// Pads numbered from the top of the left side counter-clockwise: down the left side,
    /// left to right along the bottom, up the right side, right to left along the top.
    fn pads(&self) -> Vec<Pad> {
        let per_side = (self.pins / 4) as usize;
        let half = (per_side - 1) as f64 * self.pitch / 2.0;
        let c = self.pad_centre;
        let mut pads = Vec::with_capacity(self.pins as usize + 1);
        for side in 0..4 {
            for k in 0..per_side {
                let along = half - k as f64 * self.pitch;
                let (at, w, h) = match side {
                    0 => (Point::new(-c, along), self.pad_len, self.pad_wid),
                    1 => (Point::new(-along, -c), self.pad_wid, self.pad_len),
                    2 => (Point::new(c, -along), self.pad_len, self.pad_wid),
                    _ => (Point::new(along, c), self.pad_wid, self.pad_len),
                };
                pads.push(smd(side * per_side + k + 1, at, w, h));
            }
        }
        pads
    }
}

/// Checks a quad package's pin count and that its pins, at `pitch`, fit along a side of
/// `body`.
fn check_quad(
    package: &'static str,
    pins: u32,
    body: f64,
    pitch: f64,
) -> Result<(), FootprintError> {
    if !(8..=256).contains(&pins) || !pins.is_multiple_of(4) {
        return Err(FootprintError::BadPinCount {
            package,
            pins,
            why: "needs a multiple of 4 from 8 to 256",
        });
    }
    let per_side = pins / 4;
    if per_side as f64 * pitch > body {
        return Err(FootprintError::BadFit {
            package: format!("{package}-{pins}"),
            why: format!(
                "{per_side} pins per side at {pitch} mm pitch need {} mm, more than the {body} mm body",
                per_side as f64 * pitch
            ),
        });
    }
    Ok(())
}

/// QFN (JEDEC MO-220, from memory: pitch 0.5 typical, terminals about 0.4 long). Pads run
/// from 0.4 inside the body edge to 0.3 outside it and are 0.55 x pitch wide (assumed).
/// The exposed thermal pad, if any, is a centred square numbered `pins + 1`; it must leave
/// [`MIN_PAD_GAP`] to the inner ends of the pins.
fn qfn(
    pins: u32,
    body: f64,
    pitch: f64,
    thermal: Option<f64>,
) -> Result<Footprint, FootprintError> {
    const INSIDE: f64 = 0.4;
    const OUTSIDE: f64 = 0.3;
    check_dim("QFN body side", body, 1.0, 15.0)?;
    check_dim("QFN pitch", pitch, 0.3, 1.27)?;
    check_quad("QFN", pins, body, pitch)?;
    let name = format!("QFN-{pins}");
    let quad = QuadSmd {
        pins,
        pitch,
        pad_centre: body / 2.0 + (OUTSIDE - INSIDE) / 2.0,
        pad_len: INSIDE + OUTSIDE,
        pad_wid: 0.55 * pitch,
    };
    let mut pads = quad.pads();
    if let Some(t) = thermal {
        check_dim("QFN thermal pad side", t, 0.3, body)?;
        let max = body - 2.0 * (INSIDE + MIN_PAD_GAP);
        if t > max {
            return Err(FootprintError::BadFit {
                package: name,
                why: format!(
                    "a {t} mm thermal pad would touch the pins of a {body} mm body (at most {max:.2} mm)"
                ),
            });
        }
        pads.push(Pad {
            number: (pins + 1).to_string(),
            at: Point::new(0.0, 0.0),
            width: t,
            height: t,
            shape: PadShape::Rectangle,
            kind: PadKind::Smd,
        });
    }
    finish(
        name,
        pads,
        origin_rect(body, body),
        "the pitch is too coarse for the body",
    )
}

/// QFP with gull-wing leads whose tips stand 1.0 outside the body on every side (JEDEC
/// MS-026 thin and low-profile QFP, from memory: lead span = body + 2.0). Pads 1.5 long
/// reach 0.45 past the lead tips and are 0.6 x pitch wide (assumed).
fn qfp(pins: u32, body: f64, pitch: f64) -> Result<Footprint, FootprintError> {
    check_dim("QFP body side", body, 2.0, 40.0)?;
    check_dim("QFP pitch", pitch, 0.3, 1.27)?;
    check_quad("QFP", pins, body, pitch)?;
    let pad_len = 1.5;
    let quad = QuadSmd {
        pins,
        pitch,
        pad_centre: land_centre(body / 2.0 + 1.0, 0.45, pad_len),
        pad_len,
        pad_wid: 0.6 * pitch,
    };
    finish(
        format!("QFP-{pins}"),
        quad.pads(),
        origin_rect(body, body),
        "the pitch is too coarse for the body",
    )
}

// ---------------------------------------------------------------------------------------
// Through-hole parts
// ---------------------------------------------------------------------------------------

/// DIP (JEDEC MS-001, CHECK-VALUES.md): pitch 2.54, rows 7.62 apart, 15.24 for wide bodies
/// (from memory). Body 6.35 wide, 13.97 when wide (from memory), and (pins + 1) x 1.27
/// long (assumed: nominal for DIP-14 and DIP-40, from memory, a little long for DIP-8).
/// Drill 0.8 for leads about 0.46 wide, pads 1.6 (common practice).
fn dip(pins: u32, wide: bool) -> Result<Footprint, FootprintError> {
    if !(4..=64).contains(&pins) || !pins.is_multiple_of(2) {
        return Err(FootprintError::BadPinCount {
            package: "DIP",
            pins,
            why: "needs an even number from 4 to 64",
        });
    }
    let (rows, body_w) = if wide { (15.24, 13.97) } else { (7.62, 6.35) };
    let pads = dual_row_positions(pins, 2.54, rows)
        .into_iter()
        .enumerate()
        .map(|(i, at)| tht(i + 1, at, 1.6, 1.6, PadShape::Circle, 0.8))
        .collect();
    let name = if wide {
        format!("DIP-{pins} wide")
    } else {
        format!("DIP-{pins}")
    };
    finish(
        name,
        pads,
        origin_rect(body_w, (pins + 1) as f64 * 1.27),
        "",
    )
}

/// Pin header on a 2.54 grid (common practice): `rows` rows of `cols` pins, pin 1 top
/// left, numbered left to right along each row, rows from top to bottom. The familiar
/// two-row numbering (odd pins on one side, even on the other) is therefore
/// `Header { rows: n, cols: 2 }`. Square 0.64 pins: drill 1.0, pads 1.7 (common practice).
/// The body is one 2.54 square per pin.
///
/// The name is the trade's "rows x pins per row", the rows being the lines the numbering
/// crosses (`cols` here): `Header { rows: 5, cols: 2 }` is "header 2x5", the form
/// [`super::names`] reads. A single line is "header 1xN" whichever way it lies.
fn header(rows: u32, cols: u32) -> Result<Footprint, FootprintError> {
    const PITCH: f64 = 2.54;
    let pins = rows.saturating_mul(cols);
    if rows == 0 || cols == 0 || pins > 200 {
        return Err(FootprintError::BadPinCount {
            package: "pin header",
            pins,
            why: "needs at least one row and one column, at most 200 pins",
        });
    }
    let x0 = -((cols - 1) as f64) * PITCH / 2.0;
    let y0 = (rows - 1) as f64 * PITCH / 2.0;
    let mut pads = Vec::with_capacity(pins as usize);
    for r in 0..rows {
        for c in 0..cols {
            let at = Point::new(x0 + c as f64 * PITCH, y0 - r as f64 * PITCH);
            let n = (r * cols + c + 1) as usize;
            pads.push(tht(n, at, 1.7, 1.7, PadShape::Circle, 1.0));
        }
    }
    let body = origin_rect(cols as f64 * PITCH, rows as f64 * PITCH);
    let name = if rows == 1 || cols == 1 {
        format!("header 1x{pins}")
    } else {
        format!("header {cols}x{rows}")
    };
    finish(name, pads, body, "")
}

/// Screw terminal block, 5.08 pitch (common practice), ways numbered left to right. Drill
/// 1.3 and pads 2.6 for pins of about 1 mm; body 8.0 deep centred on the pins (assumed:
/// real blocks are 7 to 10 deep and often sit off-centre).
fn terminal_block(ways: u32) -> Result<Footprint, FootprintError> {
    const PITCH: f64 = 5.08;
    if ways == 0 || ways > 24 {
        return Err(FootprintError::BadPinCount {
            package: "terminal block",
            pins: ways,
            why: "needs 1 to 24 ways",
        });
    }
    let x0 = -((ways - 1) as f64) * PITCH / 2.0;
    let pads = (0..ways)
        .map(|i| {
            let at = Point::new(x0 + i as f64 * PITCH, 0.0);
            tht(i as usize + 1, at, 2.6, 2.6, PadShape::Circle, 1.3)
        })
        .collect();
    let body = origin_rect(ways as f64 * PITCH, 8.0);
    finish(format!("terminal block {ways}"), pads, body, "")
}

/// TO-220 standing upright, leads 2.54 apart (JEDEC TO-220AB, from memory), numbered 1 to
/// 3 left to right seen from the front, which faces -y. Drill 1.2 for leads about 0.8 x
/// 0.5, oval pads 1.8 x 2.6 (common practice). Body 10.0 wide and 4.5 deep with the tab at
/// the back (+y), the leads 2.5 in front of the tab's back face (assumed).
fn to220() -> Result<Footprint, FootprintError> {
    let pads = (0..3)
        .map(|i| {
            let at = Point::new((i as f64 - 1.0) * 2.54, 0.0);
            tht(i + 1, at, 1.8, 2.6, PadShape::Obround, 1.2)
        })
        .collect();
    finish("TO-220".into(), pads, Rect::new(-5.0, -2.0, 5.0, 2.5), "")
}

/// Radial part: two leads `pitch` apart on the x axis (pin 1, square, on the left) under a
/// round body. Drill 0.8 for the 0.5 to 0.6 leads of bodies under 10 mm, 1.0 for the 0.8
/// leads of larger ones (from memory). Pads are the drill + 0.8, shrunk if needed to keep
/// 0.3 between them; a pitch that leaves less than [`MIN_ANNULAR_RING`] is an error.
fn radial(pitch: f64, diameter: f64) -> Result<Footprint, FootprintError> {
    check_dim("radial lead pitch", pitch, 1.0, 30.0)?;
    check_dim("radial body diameter", diameter, 1.5, 50.0)?;
    let drill: f64 = if diameter < 10.0 { 0.8 } else { 1.0 };
    let pad = (drill + 0.8).min(pitch - 0.3);
    let name = format!("radial {pitch} mm pitch, {diameter} mm body");
    if pad < drill + 2.0 * MIN_ANNULAR_RING {
        return Err(FootprintError::BadFit {
            package: name,
            why: format!("a {pitch} mm pitch leaves no room for two pads around {drill} mm holes"),
        });
    }
    two_leads(name, pitch, pad, drill, origin_rect(diameter, diameter))
}

/// Axial part lying flat: leads `pitch` apart on the x axis (pin 1, square, on the left),
/// body `length` x `diameter` between them. Each lead must run at least 0.5 straight out
/// of the body before it bends down (assumed), so `pitch >= length + 1.0`. Drill 1.0 for
/// leads up to 0.8, pads 1.8 (common practice).
fn axial(pitch: f64, length: f64, diameter: f64) -> Result<Footprint, FootprintError> {
    check_dim("axial lead pitch", pitch, 2.5, 100.0)?;
    check_dim("axial body length", length, 1.0, 80.0)?;
    check_dim("axial body diameter", diameter, 0.5, 30.0)?;
    let name = format!("axial {pitch} mm pitch");
    if pitch < length + 1.0 {
        return Err(FootprintError::BadFit {
            package: name,
            why: format!(
                "a {length} mm body needs a lead pitch of at least {} mm to bend the leads",
                length + 1.0
            ),
        });
    }
    two_leads(name, pitch, 1.8, 1.0, origin_rect(length, diameter))
}

/// Two plated round leads on the x axis, pin 1 square on the left.
fn two_leads(
    name: String,
    pitch: f64,
    pad: f64,
    drill: f64,
    body: Rect,
) -> Result<Footprint, FootprintError> {
    let pads = vec![
        tht(
            1,
            Point::new(-pitch / 2.0, 0.0),
            pad,
            pad,
            PadShape::Circle,
            drill,
        ),
        tht(
            2,
            Point::new(pitch / 2.0, 0.0),
            pad,
            pad,
            PadShape::Circle,
            drill,
        ),
    ];
    finish(name, pads, body, "")
}

/// Mounting hole. With `pad` it is plated with a ring of that diameter and has one pin,
/// "1", which a net (ground, usually) may use. Without, it is an unplated hole: a pad with
/// an empty number, which no net can name.
fn mounting_hole(drill: f64, pad: Option<f64>) -> Result<Footprint, FootprintError> {
    check_dim("mounting hole diameter", drill, 0.3, 12.0)?;
    let (number, size, plated, name) = match pad {
        Some(p) => {
            check_dim("mounting hole pad", p, drill + 2.0 * MIN_ANNULAR_RING, 30.0)?;
            (
                "1".to_string(),
                p,
                true,
                format!("plated mounting hole {drill} mm"),
            )
        }
        None => (
            String::new(),
            drill,
            false,
            format!("mounting hole {drill} mm"),
        ),
    };
    let pads = vec![Pad {
        number,
        at: Point::new(0.0, 0.0),
        width: size,
        height: size,
        shape: PadShape::Circle,
        kind: PadKind::ThroughHole { drill, plated },
    }];
    finish(name, pads, origin_rect(size, size), "")
}

// ---------------------------------------------------------------------------------------
// Shared helpers
// ---------------------------------------------------------------------------------------

/// Centre distance of a pad that reaches `toe` past a lead tip at distance `tip` from the
/// footprint's centre line and is `len` long.
fn land_centre(tip: f64, toe: f64, len: f64) -> f64 {
    tip + toe - len / 2.0
}

/// A `w` x `h` rectangle centred on the origin.
fn origin_rect(w: f64, h: f64) -> Rect {
    Rect::centered(Point::new(0.0, 0.0), w, h)
}

/// Pin positions of a dual-row package whose rows run along y, `span` apart: pin 1 top
/// left, counter-clockwise seen from the top (down the left row, then up the right).
fn dual_row_positions(pins: u32, pitch: f64, span: f64) -> Vec<Point> {
    let per_row = (pins / 2) as usize;
    let top = (per_row - 1) as f64 * pitch / 2.0;
    (0..pins as usize)
        .map(|i| {
            if i < per_row {
                Point::new(-span / 2.0, top - i as f64 * pitch)
            } else {
                Point::new(span / 2.0, -top + (i - per_row) as f64 * pitch)
            }
        })
        .collect()
}

/// A surface-mount pad with rounded corners (common practice for SMD lands).
fn smd(number: usize, at: Point, width: f64, height: f64) -> Pad {
    Pad {
        number: number.to_string(),
        at,
        width,
        height,
        shape: PadShape::Rounded,
        kind: PadKind::Smd,
    }
}

/// A plated through-hole pad. Pin 1 gets a square (`Rect`) pad of the same size to mark
/// it (common practice); the others get `shape`.
fn tht(number: usize, at: Point, width: f64, height: f64, shape: PadShape, drill: f64) -> Pad {
    Pad {
        number: number.to_string(),
        at,
        width,
        height,
        shape: if number == 1 {
            PadShape::Rectangle
        } else {
            shape
        },
        kind: PadKind::ThroughHole {
            drill,
            plated: true,
        },
    }
}

/// Checks that no two pads come closer than [`MIN_PAD_GAP`] (judged on their bounding
/// rectangles, which errs on the safe side for round pads) and grows the courtyard around
/// pads and body. `hint` says what to change when pads collide.
fn finish(
    name: String,
    pads: Vec<Pad>,
    body: Rect,
    hint: &str,
) -> Result<Footprint, FootprintError> {
    let rects: Vec<Rect> = pads.iter().map(Pad::rect).collect();
    for (i, a) in rects.iter().enumerate() {
        for (j, b) in rects.iter().enumerate().skip(i + 1) {
            let gap = rect_gap(a, b);
            if gap < MIN_PAD_GAP {
                let hint = if hint.is_empty() {
                    String::new()
                } else {
                    format!(": {hint}")
                };
                return Err(FootprintError::BadFit {
                    package: name,
                    why: format!(
                        "pads \"{}\" and \"{}\" would be {gap:.2} mm apart, less than {MIN_PAD_GAP} mm{hint}",
                        pads[i].number, pads[j].number
                    ),
                });
            }
        }
    }
    let extent = rects.iter().fold(body, |r, p| r.union(p));
    Ok(Footprint {
        name,
        pads,
        body,
        courtyard: extent.inflate(COURTYARD_EXCESS),
    })
}

/// Euclidean distance between two rectangles; zero when they touch or overlap.
fn rect_gap(a: &Rect, b: &Rect) -> f64 {
    let dx = (a.min.x - b.max.x).max(b.min.x - a.max.x).max(0.0);
    let dy = (a.min.y - b.max.y).max(b.min.y - a.max.y).max(0.0);
    dx.hypot(dy)
}
