//! Footprints by their plain trade names (`0603`, `SOIC-8`, `QFN-32 5x5 0.5`, `header
//! 2x5`), as netlists and parts tables write them, turned into a [`FootprintSpec`].
//!
//! The names are matched case-insensitively; `-`, `_` and spaces separate words alike
//! (`SOT-23-5`, `sot23 5` and `SOT_23_5` are the same). Anything that is none of the
//! trade names is tried as the board file's own spelling of a [`FootprintSpec`] (RON,
//! e.g. `Qfn(pins: 20, body: 4, pitch: 0.5)`), so every footprint the board file knows
//! can be imported. The accepted forms are listed in [`ACCEPTED_FORMS`] and in
//! docs/import-formats.md.
//!
//! A name is only accepted when its footprint can be built: `SOIC-9` is refused here,
//! with the reason, rather than later.

use thiserror::Error;

use super::footprint::{FootprintError, FootprintSpec};

/// The accepted footprint names, one form per line, for error messages and `--help`.
pub const ACCEPTED_FORMS: &str = "\
0402, 0603, 0805, 1206, 1210, 2512 (chip sizes); SOD-123; SOT-23, SOT-23-5, SOT-23-6; \
SOIC-N; TSSOP-N; QFN-N [BxB] [PITCH] [EP SIDE]; QFP-N (also LQFP-N, TQFP-N) [BxB] [PITCH]; \
DIP-N [wide]; header AxB (A rows of B pins) or header N (one row); terminal block N; TO-220; \
radial PITCH DIAMETER; axial PITCH LENGTH DIAMETER; mounting hole HOLE [pad DIAMETER] \
or mounting hole M2/M2.5/M3/M4/M5/M6; or the board file's RON form, e.g. Soic(8)";

/// Why a footprint name was not accepted.
#[derive(Clone, Debug, PartialEq, Error)]
pub enum NameError {
    /// The name matches no accepted form.
    #[error("unknown footprint \"{name}\"{}; accepted: {ACCEPTED_FORMS}", hint(.why))]
    Unknown { name: String, why: String },
    /// The name has an accepted form but its footprint cannot be built (a pin count the
    /// package does not come in, a pitch too coarse for the body).
    #[error("footprint \"{name}\": {cause}")]
    Invalid { name: String, cause: FootprintError },
}

fn hint(why: &str) -> String {
    if why.is_empty() {
        String::new()
    } else {
        format!(" ({why})")
    }
}

/// Body side and pitch of QFN packages by pin count when the name gives neither
/// (JEDEC MO-220 sizes, from memory; common practice for the 0.5 mm pitch family).
const QFN_DEFAULTS: &[(u32, f64, f64)] = &[
    (8, 2.0, 0.5),
    (12, 3.0, 0.5),
    (16, 3.0, 0.5),
    (20, 4.0, 0.5),
    (24, 4.0, 0.5),
    (28, 5.0, 0.5),
    (32, 5.0, 0.5),
    (40, 6.0, 0.5),
    (48, 7.0, 0.5),
    (56, 8.0, 0.5),
    (64, 9.0, 0.5),
];

/// Body side and pitch of QFP packages by pin count when the name gives neither (JEDEC
/// MS-026 LQFP sizes, from memory).
const QFP_DEFAULTS: &[(u32, f64, f64)] = &[
    (32, 7.0, 0.8),
    (44, 10.0, 0.8),
    (48, 7.0, 0.5),
    (52, 10.0, 0.65),
    (64, 10.0, 0.5),
    (80, 12.0, 0.5),
    (100, 14.0, 0.5),
    (128, 14.0, 0.4),
    (144, 20.0, 0.5),
    (176, 24.0, 0.5),
];

/// Clearance holes for metric screws, medium fit (ISO 273, from memory).
const SCREW_HOLES: &[(&str, f64)] = &[
    ("m2", 2.4),
    ("m2.5", 2.9),
    ("m3", 3.4),
    ("m4", 4.5),
    ("m5", 5.5),
    ("m6", 6.6),
];

/// Parses a footprint name (see the module docs) and checks that it builds.
pub fn parse_footprint_name(name: &str) -> Result<FootprintSpec, NameError> {
    let trimmed = name.trim();
    let spec = match trade_name(trimmed) {
        Ok(spec) => spec,
        Err(why) => match ron_spec(trimmed) {
            Some(spec) => spec,
            None => {
                return Err(NameError::Unknown {
                    name: trimmed.to_string(),
                    why,
                });
            }
        },
    };
    match spec.build() {
        Ok(_) => Ok(spec),
        Err(cause) => Err(NameError::Invalid {
            name: trimmed.to_string(),
            cause,
        }),
    }
}

/// The board file's spelling, for names that look like it (an upper-case first letter).
fn ron_spec(s: &str) -> Option<FootprintSpec> {
    if !s.starts_with(|c: char| c.is_ascii_uppercase()) || s.len() > 10_000 {
        return None;
    }
    ron::Options::default()
        .with_default_extension(ron::extensions::Extensions::IMPLICIT_SOME)
        .from_str(s)
        .ok()
}

/// Splits a lower-cased name into words at spaces, `-`, `_` and `,`, and splits a leading
/// run of letters off the digits that follow it (`soic8` -> `soic`, `8`).
fn words(s: &str) -> Vec<String> {
    let lower = s.to_lowercase();
    let mut out: Vec<String> = lower
        .split(|c: char| c.is_whitespace() || matches!(c, '-' | '_' | ','))
        .filter(|w| !w.is_empty())
        .map(str::to_string)
        .collect();
    if let Some(first) = out.first().cloned() {
        let letters = first.chars().take_while(char::is_ascii_alphabetic).count();
        if letters > 0
            && letters < first.len()
            && first[letters..].starts_with(|c: char| c.is_ascii_digit())
            && !first.starts_with('m')
        {
            out.splice(
                0..1,
                [first[..letters].to_string(), first[letters..].to_string()],
            );
        }
    }
    // A trailing "mm" unit on a number, or a separate "mm" word, says nothing new.
    out.retain(|w| w != "mm");
    for w in &mut out {
        if w.len() > 2 && w.ends_with("mm") && w.starts_with(|c: char| c.is_ascii_digit()) {
            w.truncate(w.len() - 2);
        }
    }
    out
}

fn count(w: Option<&String>, what: &str) -> Result<u32, String> {
    let w = w.ok_or_else(|| format!("{what} is missing"))?;
    w.parse::<u32>()
        .map_err(|_| format!("{what} \"{w}\" is not a whole number"))
}

fn number(w: Option<&String>, what: &str) -> Result<f64, String> {
    let w = w.ok_or_else(|| format!("{what} is missing"))?;
    match w.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        _ => Err(format!("{what} \"{w}\" is not a number")),
    }
}

fn no_more(rest: &[String]) -> Result<(), String> {
    match rest.first() {
        None => Ok(()),
        Some(w) => Err(format!("unexpected \"{w}\"")),
    }
}

/// Recognises the trade names; the error says why the name did not fit.
fn trade_name(s: &str) -> Result<FootprintSpec, String> {
    let w = words(s);
    let Some(family) = w.first() else {
        return Err("the name is empty".into());
    };
    let rest = &w[1..];
    match family.as_str() {
        "0402" | "0603" | "0805" | "1206" | "1210" | "2512" => {
            no_more(rest)?;
            Ok(FootprintSpec::Chip(family.clone()))
        }
        "chip" => {
            let code = rest.first().ok_or("chip size code is missing")?;
            no_more(&rest[1..])?;
            Ok(FootprintSpec::Chip(code.clone()))
        }
        "sod" => {
            if rest.first().map(String::as_str) != Some("123") {
                return Err("only SOD-123 is known".into());
            }
            no_more(&rest[1..])?;
            Ok(FootprintSpec::Sod123)
        }
        "sot" => {
            if rest.first().map(String::as_str) != Some("23") {
                return Err("only SOT-23 (3, 5 or 6 pins) is known".into());
            }
            let pins = if rest.len() > 1 {
                count(rest.get(1), "SOT-23 pin count")?
            } else {
                3
            };
            no_more(&rest[2.min(rest.len())..])?;
            Ok(FootprintSpec::Sot23(pins))
        }
        "soic" | "so" => {
            let pins = count(rest.first(), "SOIC pin count")?;
            no_more(&rest[1..])?;
            Ok(FootprintSpec::Soic(pins))
        }
        "tssop" => {
            let pins = count(rest.first(), "TSSOP pin count")?;
            no_more(&rest[1..])?;
            Ok(FootprintSpec::Tssop(pins))
        }
        "qfn" => quad(rest, true),
        "qfp" | "lqfp" | "tqfp" => quad(rest, false),
        "dip" | "pdip" => {
            let pins = count(rest.first(), "DIP pin count")?;
            let wide = match rest.get(1).map(String::as_str) {
                None => false,
                Some("wide") => true,
                Some(o) => return Err(format!("unexpected \"{o}\" (only \"wide\" may follow)")),
            };
            no_more(&rest[2.min(rest.len())..])?;
            Ok(FootprintSpec::Dip { pins, wide })
        }
        "pin" if rest.first().map(String::as_str) == Some("header") => header(&rest[1..]),
        "header" => header(rest),
        "terminal" => {
            let rest = match rest.first().map(String::as_str) {
                Some("block") => &rest[1..],
                _ => rest,
            };
            let ways = rest
                .first()
                .map(|w| w.strip_suffix("way").unwrap_or(w).to_string());
            let ways = count(ways.as_ref(), "terminal block ways")?;
            let rest = match rest.get(1).map(String::as_str) {
                Some("way" | "ways") => &rest[2..],
                _ => &rest[1.min(rest.len())..],
            };
            no_more(rest)?;
            Ok(FootprintSpec::TerminalBlock(ways))
        }
        "to" => {
            if rest.first().map(String::as_str) != Some("220") {
                return Err("only TO-220 is known".into());
            }
            no_more(&rest[1..])?;
            Ok(FootprintSpec::To220)
        }
        "radial" => {
            let pitch = number(rest.first(), "radial lead pitch")?;
            let diameter = number(rest.get(1), "radial body diameter")?;
            no_more(&rest[2.min(rest.len())..])?;
            Ok(FootprintSpec::Radial { pitch, diameter })
        }
        "axial" => {
            let pitch = number(rest.first(), "axial lead pitch")?;
            let length = number(rest.get(1), "axial body length")?;
            let diameter = number(rest.get(2), "axial body diameter")?;
            no_more(&rest[3.min(rest.len())..])?;
            Ok(FootprintSpec::Axial {
                pitch,
                length,
                diameter,
            })
        }
        "mounting" if rest.first().map(String::as_str) == Some("hole") => hole(&rest[1..]),
        "hole" => hole(rest),
        _ => Err(String::new()),
    }
}

/// `QFN-N [BxB] [PITCH] [EP SIDE]` and `QFP-N [BxB] [PITCH]`.
fn quad(rest: &[String], qfn: bool) -> Result<FootprintSpec, String> {
    let family = if qfn { "QFN" } else { "QFP" };
    let pins = count(rest.first(), &format!("{family} pin count"))?;
    let mut body = None;
    let mut pitch = None;
    let mut thermal = None;
    let mut i = 1;
    while i < rest.len() {
        let w = &rest[i];
        if let Some((a, b)) = w.split_once('x') {
            let a = number(Some(&a.to_string()), "body side")?;
            let b = number(Some(&b.to_string()), "body side")?;
            if a != b {
                return Err(format!("only square bodies are known, not {a} x {b}"));
            }
            body = Some(a);
        } else if qfn && (w == "ep" || w.starts_with("ep")) {
            let side = if w == "ep" {
                i += 1;
                rest.get(i).cloned()
            } else {
                Some(w[2..].trim_start_matches('=').to_string())
            };
            thermal = Some(number(side.as_ref(), "exposed pad side")?);
        } else if pitch.is_none() {
            pitch = Some(number(Some(w), &format!("{family} pitch"))?);
        } else {
            return Err(format!("unexpected \"{w}\""));
        }
        i += 1;
    }
    let table = if qfn { QFN_DEFAULTS } else { QFP_DEFAULTS };
    let default = table.iter().find(|d| d.0 == pins);
    let (body, pitch) = match (body, pitch, default) {
        (Some(b), Some(p), _) => (b, p),
        (None, None, Some(d)) => (d.1, d.2),
        (Some(b), None, Some(d)) => (b, d.2),
        (None, Some(p), Some(d)) => (d.1, p),
        _ => {
            return Err(format!(
                "no standard body for {family}-{pins}: give it, e.g. {family}-{pins} 7x7 0.5"
            ));
        }
    };
    Ok(if qfn {
        FootprintSpec::Qfn {
            pins,
            body,
            pitch,
            thermal,
        }
    } else {
        FootprintSpec::Qfp { pins, body, pitch }
    })
}

/// `header N` (one row) or `header AxB`: A rows of B pins as the trade reads it, numbered
/// across the rows, so `header 2x5` is the usual two-row header with odd pins in one row.
/// The board file's `Header` rows run the other way: `header 2x5` is `rows: 5, cols: 2`.
fn header(rest: &[String]) -> Result<FootprintSpec, String> {
    let w = rest
        .first()
        .ok_or("header size is missing (e.g. header 2x5)")?;
    no_more(&rest[1..])?;
    let (cols, rows) = match w.split_once('x') {
        Some((a, b)) => (
            count(Some(&a.to_string()), "header rows")?,
            count(Some(&b.to_string()), "header pins per row")?,
        ),
        None => (1, count(Some(w), "header pin count")?),
    };
    Ok(FootprintSpec::Header { rows, cols })
}

/// `mounting hole HOLE [pad DIAMETER]` or `mounting hole M3` (unplated, screw clearance).
fn hole(rest: &[String]) -> Result<FootprintSpec, String> {
    let w = rest.first().ok_or("hole diameter is missing")?;
    if let Some(&(_, drill)) = SCREW_HOLES.iter().find(|s| s.0 == w) {
        no_more(&rest[1..])?;
        return Ok(FootprintSpec::MountingHole {
            hole: drill,
            pad: None,
        });
    }
    let drill = number(Some(w), "hole diameter")?;
    let pad = match rest.get(1).map(String::as_str) {
        None => None,
        Some("pad") => Some(number(rest.get(2), "hole pad diameter")?),
        Some(o) => return Err(format!("unexpected \"{o}\" (only \"pad D\" may follow)")),
    };
    no_more(&rest[if pad.is_some() { 3 } else { 1 }.min(rest.len())..])?;
    Ok(FootprintSpec::MountingHole { hole: drill, pad })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words_split() {
        assert_eq!(words("SOT-23-5"), ["sot", "23", "5"]);
        assert_eq!(words("soic8"), ["soic", "8"]);
        assert_eq!(words("QFN-32 5x5mm 0.5 mm"), ["qfn", "32", "5x5", "0.5"]);
        assert_eq!(words("M3"), ["m3"]);
    }
}
