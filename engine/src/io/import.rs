//! Netlist import: what the importers share. Each reader ([`super::connections`] for
//! CSV/TSV connection lists, [`super::edif`] for EDIF 2 0 0) turns its file into a
//! [`Netlist`] (parts with footprints, nets with pins, each remembering where in the file
//! it was written); [`Netlist::into_board`] checks pins against footprints, sizes the
//! outline and returns a [`Board`] with unplaced parts that passes [`resolve`], ready for
//! `lehr place`. The formats are described in docs/import-formats.md.

use std::collections::HashMap;
use std::fmt;
use std::path::{Path, PathBuf};
use std::str::FromStr;

use thiserror::Error;

use super::Location;
use crate::model::board::{Copper, Net, NetClass, Part, Rules};
use crate::model::names::NameError;
use crate::model::validate::MAX_COORD_MM;
use crate::model::{Board, Footprint, FootprintSpec, Point, Problem, Shape, Side, resolve};

/// Name of the net class every imported net gets unless its file names another.
pub const DEFAULT_CLASS: &str = "default";

/// Share of the automatic outline's area that the parts' courtyards fill: the board is
/// sized to 2.5 times their total area (an assumption that leaves the annealer room; see
/// docs/import-formats.md).
pub const AUTO_OUTLINE_FILL: f64 = 0.4;

/// Width and height of a rectangular board outline, mm, written `W x H` (`50x30`,
/// `50 x 30`, `50x30mm`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OutlineSize {
    pub width: f64,
    pub height: f64,
}

impl FromStr for OutlineSize {
    type Err = String;

    fn from_str(s: &str) -> Result<Self, String> {
        let lower = s.trim().to_lowercase();
        let t = lower.strip_suffix("mm").unwrap_or(&lower);
        let Some((w, h)) = t.split_once(['x', '*']) else {
            return Err(format!(
                "outline \"{s}\" must be written W x H in mm, e.g. 50x30"
            ));
        };
        let dim = |v: &str| -> Result<f64, String> {
            let v = v.trim().strip_suffix("mm").unwrap_or(v.trim()).trim();
            match v.parse::<f64>() {
                Ok(x) if x.is_finite() && x > 0.0 && x <= MAX_COORD_MM => Ok(x),
                _ => Err(format!(
                    "outline \"{s}\": \"{v}\" is not a length between 0 and {MAX_COORD_MM} mm"
                )),
            }
        };
        Ok(OutlineSize {
            width: dim(w)?,
            height: dim(h)?,
        })
    }
}

/// Choices for an import.
#[derive(Clone, Debug, Default)]
pub struct ImportOptions {
    /// The board's display name; the file's stem when `None`.
    pub name: Option<String>,
    /// The outline; sized from the parts' courtyards when `None` (see [`auto_outline`]).
    pub outline: Option<OutlineSize>,
}

/// A finding tied to a spot in an input file, printed `file:line:column: message`.
#[derive(Clone, Debug, PartialEq)]
pub struct Warning {
    pub file: String,
    pub at: Location,
    pub message: String,
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let message = crate::model::text::escape_controls(&self.message);
        write!(f, "{}:{}: {message}", self.file, self.at)
    }
}

/// Why an input is refused, with where.
#[derive(Clone, Debug, PartialEq, Error)]
#[error("{file}:{at}: {}", crate::model::text::escape_controls(&.reason.to_string()))]
pub struct ImportProblem {
    pub file: String,
    pub at: Location,
    pub reason: Reason,
}

/// What is wrong at an [`ImportProblem`]'s spot.
#[derive(Clone, Debug, PartialEq, Error)]
pub enum Reason {
    #[error("the file is not UTF-8 text")]
    NotUtf8,
    #[error("the file is empty")]
    Empty,
    // --- CSV/TSV structure (RFC 4180) ---
    #[error("a quoted field is not closed (RFC 4180 section 2.5)")]
    UnclosedQuote,
    #[error(
        "a double quote inside an unquoted field (RFC 4180 section 2.5: quote the whole field and write the quote twice)"
    )]
    StrayQuote,
    #[error("text after the closing quote of a field (RFC 4180 section 2.7)")]
    TextAfterQuote,
    #[error("this row has {found} fields, the header has {expected} (RFC 4180 section 2.4)")]
    FieldCount { found: usize, expected: usize },
    #[error("the header names no \"{column}\" column (accepted names: {accepted})")]
    MissingColumn {
        column: &'static str,
        accepted: &'static str,
    },
    #[error("the header names the {column} column twice")]
    DuplicateColumn { column: &'static str },
    #[error("empty {0}")]
    EmptyField(&'static str),
    // --- EDIF structure ---
    #[error("{0}")]
    Syntax(String),
    // --- the netlist ---
    #[error("reference \"{0}\" must not contain spaces or dots")]
    BadReference(String),
    #[error("pin \"{0}\" must not be empty or contain spaces")]
    BadPin(String),
    #[error("{0}")]
    Footprint(NameError),
    #[error("part {part} has no footprint ({hint})")]
    NoFootprint { part: String, hint: &'static str },
    #[error("part {part} ({footprint}) has no pin \"{pin}\"")]
    NoSuchPin {
        part: String,
        footprint: String,
        pin: String,
    },
    #[error("pin {pin} is on two nets: \"{first}\" (line {first_line}) and \"{second}\"")]
    PinOnTwoNets {
        pin: String,
        first: String,
        first_line: usize,
        second: String,
    },
    #[error("part {part} is given twice (first at line {first_line})")]
    DuplicatePart { part: String, first_line: usize },
    #[error("part {part}: {what} \"{second}\" here but \"{first}\" at line {first_line}")]
    Conflict {
        part: String,
        what: &'static str,
        first: String,
        first_line: usize,
        second: String,
    },
    #[error("net \"{net}\": class \"{second}\" here but \"{first}\" at line {first_line}")]
    ClassConflict {
        net: String,
        first: String,
        first_line: usize,
        second: String,
    },
    #[error("the netlist has no parts")]
    NoParts,
}

/// At most this many problems are written out by [`ImportError`]'s one-line message; all
/// are kept in the error.
pub const MAX_SHOWN: usize = 1;

/// Why an import failed.
#[derive(Debug, Error)]
pub enum ImportError {
    /// An input could not be read. (The cause is part of the message.)
    #[error("cannot read {}: {cause}", path.display())]
    Io {
        path: PathBuf,
        cause: std::io::Error,
    },
    /// The input is refused; every problem found, in file order. The message shows the
    /// first and counts the rest.
    #[error("{}", first_and_count(.problems))]
    Invalid { problems: Vec<ImportProblem> },
    /// The board built from a sound netlist fails the board checks (for instance an
    /// `--outline` smaller than the parts' courtyards).
    #[error("the imported board fails its checks: {}", first_problem(.problems))]
    Board { problems: Vec<Problem> },
}

impl ImportError {
    pub(crate) fn one(file: &str, at: Location, reason: Reason) -> ImportError {
        ImportError::Invalid {
            problems: vec![ImportProblem {
                file: file.to_string(),
                at,
                reason,
            }],
        }
    }
}

fn first_and_count(problems: &[ImportProblem]) -> String {
    match problems.split_first() {
        None => "the input is refused".to_string(),
        Some((p, [])) => p.to_string(),
        Some((p, rest)) => format!(
            "{p} (and {} more problem{})",
            rest.len(),
            if rest.len() == 1 { "" } else { "s" }
        ),
    }
}

fn first_problem(problems: &[Problem]) -> String {
    match problems.split_first() {
        None => "no problem listed".to_string(),
        Some((p, [])) => p.to_string(),
        Some((p, rest)) => format!("{p} (and {} more)", rest.len()),
    }
}

/// An imported board and what the reader skipped or doubted on the way.
#[derive(Clone, Debug)]
pub struct Imported {
    pub board: Board,
    pub warnings: Vec<Warning>,
}

/// A part as a reader found it.
#[derive(Clone, Debug)]
pub(crate) struct NetlistPart {
    pub reference: String,
    pub value: String,
    /// `None` when the input gave none: [`Netlist::into_board`] refuses it, naming `hint`.
    pub footprint: Option<(FootprintSpec, Footprint)>,
    /// The file and spot where the part is defined.
    pub file: String,
    pub at: Location,
}

/// A connection of a net to a part's pin.
#[derive(Clone, Debug)]
pub(crate) struct NetlistPin {
    pub reference: String,
    pub pin: String,
    pub at: Location,
}

/// A net as a reader found it.
#[derive(Clone, Debug)]
pub(crate) struct NetlistNet {
    pub name: String,
    pub class: Option<String>,
    pub pins: Vec<NetlistPin>,
    pub at: Location,
}

/// Everything a reader found, positions included.
#[derive(Clone, Debug, Default)]
pub(crate) struct Netlist {
    /// The file the parts and nets were read from (pins and nets).
    pub file: String,
    pub parts: Vec<NetlistPart>,
    pub nets: Vec<NetlistNet>,
    pub warnings: Vec<Warning>,
    /// What to tell the user about a part without a footprint.
    pub footprint_hint: &'static str,
}

impl Netlist {
    fn problem(&self, file: &str, at: Location, reason: Reason) -> ImportProblem {
        ImportProblem {
            file: file.to_string(),
            at,
            reason,
        }
    }

    /// Checks every pin against its part's footprint and every pin against the other
    /// nets, then builds and checks the board.
    pub fn into_board(mut self, opts: &ImportOptions) -> Result<Imported, ImportError> {
        let mut problems = Vec::new();
        let by_ref: HashMap<&str, usize> = self
            .parts
            .iter()
            .enumerate()
            .map(|(i, p)| (p.reference.as_str(), i))
            .collect();
        for p in &self.parts {
            if p.footprint.is_none() {
                problems.push(self.problem(
                    &p.file,
                    p.at,
                    Reason::NoFootprint {
                        part: p.reference.clone(),
                        hint: self.footprint_hint,
                    },
                ));
            }
        }
        // (part, pad) -> (net index, line of its first mention)
        let mut owner: HashMap<(usize, usize), (usize, usize)> = HashMap::new();
        let mut nets = Vec::with_capacity(self.nets.len());
        let mut warnings = std::mem::take(&mut self.warnings);
        for (ni, net) in self.nets.iter().enumerate() {
            let mut pins = Vec::with_capacity(net.pins.len());
            for pin in &net.pins {
                let Some(&pi) = by_ref.get(pin.reference.as_str()) else {
                    problems.push(self.problem(
                        &self.file,
                        pin.at,
                        Reason::NoFootprint {
                            part: pin.reference.clone(),
                            hint: self.footprint_hint,
                        },
                    ));
                    continue;
                };
                let Some((_, fp)) = &self.parts[pi].footprint else {
                    continue; // reported once, at the part
                };
                let Some(pad) = fp.pad_index(&pin.pin) else {
                    problems.push(self.problem(
                        &self.file,
                        pin.at,
                        Reason::NoSuchPin {
                            part: pin.reference.clone(),
                            footprint: fp.name.clone(),
                            pin: pin.pin.clone(),
                        },
                    ));
                    continue;
                };
                let name = format!("{}.{}", pin.reference, pin.pin);
                match owner.get(&(pi, pad)) {
                    Some(&(other, _)) if other == ni => {
                        warnings.push(Warning {
                            file: self.file.clone(),
                            at: pin.at,
                            message: format!(
                                "net \"{}\" lists pin {name} again; kept once",
                                net.name
                            ),
                        });
                    }
                    Some(&(other, line)) => problems.push(self.problem(
                        &self.file,
                        pin.at,
                        Reason::PinOnTwoNets {
                            pin: name,
                            first: self.nets[other].name.clone(),
                            first_line: line,
                            second: net.name.clone(),
                        },
                    )),
                    None => {
                        owner.insert((pi, pad), (ni, pin.at.line));
                        pins.push(name);
                    }
                }
            }
            if net.pins.is_empty() {
                warnings.push(Warning {
                    file: self.file.clone(),
                    at: net.at,
                    message: format!("net \"{}\" joins no pins; left out", net.name),
                });
                continue;
            }
            nets.push(Net {
                name: net.name.clone(),
                class: Some(net.class.clone().unwrap_or_else(|| DEFAULT_CLASS.into())),
                pins,
                weight: 1.0,
            });
        }
        if self.parts.is_empty() {
            problems.push(self.problem(
                &self.file,
                Location { line: 1, column: 1 },
                Reason::NoParts,
            ));
        }
        if !problems.is_empty() {
            problems.sort_by_key(|p| (p.file != self.file, p.at));
            return Err(ImportError::Invalid { problems });
        }

        let rules = Rules::default();
        let mut class_names = vec![DEFAULT_CLASS.to_string()];
        for n in &nets {
            if let Some(c) = &n.class
                && !class_names.contains(c)
            {
                class_names.push(c.clone());
            }
        }
        let classes = class_names
            .into_iter()
            .map(|name| NetClass {
                name,
                track_width: rules.track_width,
                clearance: rules.clearance,
                current: None,
                voltage: None,
                temp_rise: None,
            })
            .collect();
        let footprints: Vec<&Footprint> = self
            .parts
            .iter()
            .filter_map(|p| p.footprint.as_ref().map(|f| &f.1))
            .collect();
        let size = opts
            .outline
            .unwrap_or_else(|| auto_outline(footprints.iter().copied(), &rules));
        let parts = self
            .parts
            .into_iter()
            .filter_map(|p| {
                let (spec, _) = p.footprint?;
                Some(Part {
                    reference: p.reference,
                    footprint: spec,
                    value: p.value,
                    at: None,
                    rotation: 0.0,
                    side: Side::Top,
                    locked: false,
                })
            })
            .collect();
        let name = opts.name.clone().unwrap_or_else(|| stem(&self.file));
        let board = Board {
            name,
            outline: Shape::Rect {
                min: Point::new(0.0, 0.0),
                max: Point::new(size.width, size.height),
            },
            keepouts: Vec::new(),
            rules,
            classes,
            parts,
            nets,
            copper: Copper::default(),
            placement: None,
            optimum: None,
        };
        match resolve(board) {
            Ok(design) => Ok(Imported {
                board: design.board,
                warnings,
            }),
            Err(problems) => Err(ImportError::Board { problems }),
        }
    }
}

/// The automatic outline: a square whose area is the parts' total courtyard area divided
/// by [`AUTO_OUTLINE_FILL`], no smaller than the longest courtyard side plus twice the
/// edge clearance plus 1 mm, and at least 10 mm; rounded up to a whole millimetre.
pub fn auto_outline<'a>(
    footprints: impl IntoIterator<Item = &'a Footprint>,
    rules: &Rules,
) -> OutlineSize {
    let mut area = 0.0;
    let mut longest: f64 = 0.0;
    for f in footprints {
        area += f.courtyard.area();
        longest = longest.max(f.courtyard.width()).max(f.courtyard.height());
    }
    let side = (area / AUTO_OUTLINE_FILL)
        .sqrt()
        .max(longest + 2.0 * rules.edge_clearance + 1.0)
        .max(10.0)
        .ceil();
    OutlineSize {
        width: side,
        height: side,
    }
}

/// The file name without its directory and its last extension, for the board's name.
fn stem(file: &str) -> String {
    Path::new(file)
        .file_stem()
        .and_then(|s| s.to_str())
        .filter(|s| !s.is_empty())
        .unwrap_or("imported")
        .to_string()
}

/// The bytes as text (without a byte-order mark), or a problem at the first byte that is
/// not UTF-8.
pub(crate) fn decode<'a>(bytes: &'a [u8], file: &str) -> Result<&'a str, ImportError> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    std::str::from_utf8(bytes).map_err(|e| {
        let text = std::str::from_utf8(&bytes[..e.valid_up_to()]).unwrap_or_default();
        ImportError::one(file, Location::of_offset(text, text.len()), Reason::NotUtf8)
    })
}

/// A reference designator as the board accepts it: non-empty, no spaces, no dots.
pub(crate) fn check_reference(r: &str) -> Result<(), Reason> {
    if r.is_empty() {
        Err(Reason::EmptyField("part reference"))
    } else if r.contains(char::is_whitespace) || r.contains('.') {
        Err(Reason::BadReference(r.to_string()))
    } else {
        Ok(())
    }
}

/// A pin number as footprints name them: non-empty, no spaces.
pub(crate) fn check_pin(p: &str) -> Result<(), Reason> {
    if p.is_empty() || p.contains(char::is_whitespace) {
        Err(Reason::BadPin(p.to_string()))
    } else {
        Ok(())
    }
}
