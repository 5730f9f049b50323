//! EDIF 2 0 0 netlist import (EIA-548, "Electronic Design Interchange Format Version
//! 2 0 0", 1988): an s-expression reader that keeps every token's line and column, and
//! the subset a schematic netlist uses.
//!
//! Read: `edif`, `library` and `external` (both hold cells), `cell`, `view`, `interface`,
//! `port`, `contents`, `instance`, `viewRef`, `cellRef`, `libraryRef`, `net`, `joined`,
//! `portRef`, `instanceRef`, `rename`, `designator`, `property` (nested, with `string` and
//! `integer` values), and `design` (which names the top cell). Keywords are
//! case-insensitive, as the standard has them; names too (they are compared lower-cased),
//! while the display strings of `rename` keep their case. An identifier written with a
//! leading `&` (EDIF's escape for names that start with a digit) loses the `&`.
//! Bookkeeping constructs that say nothing about parts or nets (`status`, `edifLevel`,
//! `keywordMap`, `technology`, `cellType`, `viewType`, `direction`, `comment`,
//! `userData`, `written`) are skipped quietly; anything else unknown is skipped with a
//! warning.
//!
//! The parts are the instances in the top cell's `contents` (the cell the `design`
//! names, else the last cell whose contents hold instances). An instance's footprint is
//! the value of its property named `footprint` or `package` (searched in nested
//! properties too), else the mapping file's entry for its cell, else such a property on
//! the cell; its reference is its `designator`, else its `rename` string, else its name.
//! A pin is the port's `rename` string in the instance's cell, else the port's name.
//! Details and a worked example: docs/import-formats.md.

use std::collections::HashMap;

use super::Location;
use super::import::{
    ImportError, ImportOptions, ImportProblem, Imported, Netlist, NetlistNet, NetlistPart,
    NetlistPin, Reason, Warning, check_pin, check_reference, decode,
};
use crate::model::names::parse_footprint_name;
use crate::model::{Footprint, FootprintSpec};

/// Deepest nesting of lists accepted; real netlists nest about ten deep.
pub const MAX_DEPTH: usize = 200;

/// What an atom is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum AtomKind {
    /// A name or keyword (`&` escape removed).
    Ident,
    /// A quoted string (EDIF `%n%` character codes decoded).
    Str,
    /// A whole number.
    Int,
}

/// A token that is not a list.
#[derive(Clone, Debug, PartialEq)]
pub struct Atom {
    pub kind: AtomKind,
    pub text: String,
    pub at: Location,
}

/// A parenthesised list, positioned at its `(`.
#[derive(Clone, Debug, PartialEq)]
pub struct List {
    pub items: Vec<Node>,
    pub at: Location,
}

/// A node of the s-expression tree.
#[derive(Clone, Debug, PartialEq)]
pub enum Node {
    Atom(Atom),
    List(List),
}

impl Node {
    pub fn at(&self) -> Location {
        match self {
            Node::Atom(a) => a.at,
            Node::List(l) => l.at,
        }
    }
}

impl List {
    /// The keyword: the first item when it is a name, lower-cased.
    pub fn head(&self) -> Option<String> {
        match self.items.first() {
            Some(Node::Atom(a)) if a.kind == AtomKind::Ident => Some(a.text.to_lowercase()),
            _ => None,
        }
    }

    fn is(&self, keyword: &str) -> bool {
        self.head().as_deref() == Some(keyword)
    }

    /// The sub-lists after the keyword.
    fn lists(&self) -> impl Iterator<Item = &List> {
        self.items.iter().skip(1).filter_map(|n| match n {
            Node::List(l) => Some(l),
            Node::Atom(_) => None,
        })
    }

    /// The sub-lists after the keyword and the name, for named constructs (`cell`,
    /// `instance`, `net`...), whose name may itself be a `(rename ...)` list.
    fn body(&self) -> impl Iterator<Item = &List> {
        self.items.iter().skip(2).filter_map(|n| match n {
            Node::List(l) => Some(l),
            Node::Atom(_) => None,
        })
    }

    fn child(&self, keyword: &str) -> Option<&List> {
        self.lists().find(|l| l.is(keyword))
    }
}

/// Reads the s-expressions of a text (all top-level lists; atoms outside any list are
/// refused). No recursion: the nesting depth is bounded by [`MAX_DEPTH`].
pub fn read_sexprs(text: &str, file: &str) -> Result<Vec<List>, ImportError> {
    let fail =
        |at: Location, msg: &str| Err(ImportError::one(file, at, Reason::Syntax(msg.to_string())));
    let mut top = Vec::new();
    let mut stack: Vec<List> = Vec::new();
    let mut chars = text.chars().peekable();
    let (mut line, mut col) = (1usize, 1usize);
    while let Some(&c) = chars.peek() {
        let at = Location { line, column: col };
        match c {
            '\n' => {
                chars.next();
                line += 1;
                col = 1;
            }
            c if c.is_whitespace() => {
                chars.next();
                col += 1;
            }
            '(' => {
                chars.next();
                col += 1;
                if stack.len() >= MAX_DEPTH {
                    return fail(at, &format!("lists nest deeper than {MAX_DEPTH}"));
                }
                stack.push(List {
                    items: Vec::new(),
                    at,
                });
            }
            ')' => {
                chars.next();
                col += 1;
                let Some(done) = stack.pop() else {
                    return fail(at, "a \")\" closes no list");
                };
                match stack.last_mut() {
                    Some(parent) => parent.items.push(Node::List(done)),
                    None => top.push(done),
                }
            }
            '"' => {
                chars.next();
                col += 1;
                let mut raw = String::new();
                loop {
                    match chars.next() {
                        None => return fail(at, "a string is not closed"),
                        Some('"') => {
                            col += 1;
                            break;
                        }
                        Some('\n') => {
                            raw.push('\n');
                            line += 1;
                            col = 1;
                        }
                        Some(c) => {
                            raw.push(c);
                            col += 1;
                        }
                    }
                }
                let atom = Atom {
                    kind: AtomKind::Str,
                    text: decode_percent(&raw),
                    at,
                };
                match stack.last_mut() {
                    Some(parent) => parent.items.push(Node::Atom(atom)),
                    None => return fail(at, "a string outside any list"),
                }
            }
            _ => {
                let mut word = String::new();
                while let Some(&c) = chars.peek() {
                    if c.is_whitespace() || matches!(c, '(' | ')' | '"') {
                        break;
                    }
                    word.push(c);
                    chars.next();
                    col += 1;
                }
                let kind = if word.parse::<i64>().is_ok() {
                    AtomKind::Int
                } else {
                    AtomKind::Ident
                };
                let text = match word.strip_prefix('&') {
                    Some(rest) if kind == AtomKind::Ident && !rest.is_empty() => rest.to_string(),
                    _ => word,
                };
                let atom = Atom { kind, text, at };
                match stack.last_mut() {
                    Some(parent) => parent.items.push(Node::Atom(atom)),
                    None => return fail(at, "text outside any list"),
                }
            }
        }
    }
    if let Some(open) = stack.first() {
        let at = stack.last().map_or(open.at, |l| l.at);
        return fail(at, "a list is not closed (missing \")\")");
    }
    Ok(top)
}

/// EDIF strings write special characters as `%` decimal codes separated by blanks `%`
/// (e.g. `%34%` for a double quote); anything else between `%` signs is kept as written.
fn decode_percent(raw: &str) -> String {
    let mut out = String::with_capacity(raw.len());
    let mut rest = raw;
    while let Some(i) = rest.find('%') {
        out.push_str(&rest[..i]);
        let after = &rest[i + 1..];
        let decoded = after.find('%').and_then(|j| {
            let codes: Option<String> = after[..j]
                .split_whitespace()
                .map(|n| n.parse::<u32>().ok().and_then(char::from_u32))
                .collect();
            codes.filter(|s| !s.is_empty()).map(|s| (s, j))
        });
        match decoded {
            Some((s, j)) => {
                out.push_str(&s);
                rest = &after[j + 1..];
            }
            None => {
                out.push('%');
                rest = after;
            }
        }
    }
    out.push_str(rest);
    out
}

/// Constructs skipped without a warning: bookkeeping that says nothing about parts or
/// nets.
const QUIET: &[&str] = &[
    "status",
    "edifversion",
    "ediflevel",
    "keywordmap",
    "technology",
    "celltype",
    "viewtype",
    "direction",
    "comment",
    "userdata",
    "written",
    "documentation",
];

/// A name definition: `name` or `(rename name "display")`. Returns the key (lower-cased
/// name) and the display text.
fn name_def(node: Option<&Node>) -> Option<(String, String, Location)> {
    match node? {
        Node::Atom(a) if a.kind != AtomKind::Str => {
            Some((a.text.to_lowercase(), a.text.clone(), a.at))
        }
        Node::List(l) if l.is("rename") || l.is("name") => {
            let Some(Node::Atom(id)) = l.items.get(1) else {
                return None;
            };
            let display = l
                .items
                .iter()
                .skip(2)
                .find_map(|n| match n {
                    Node::Atom(s) if s.kind == AtomKind::Str => Some(s.text.clone()),
                    _ => None,
                })
                .unwrap_or_else(|| id.text.clone());
            Some((id.text.to_lowercase(), display, l.at))
        }
        _ => None,
    }
}

/// A property: its name (key and display) and value, and its nested properties.
#[derive(Clone, Debug)]
struct Property {
    key: String,
    display: String,
    value: Option<String>,
    at: Location,
    nested: Vec<Property>,
}

/// Where a footprint came from, for messages.
struct Reader<'a> {
    file: &'a str,
    warnings: Vec<Warning>,
}

impl Reader<'_> {
    fn warn(&mut self, at: Location, message: String) {
        self.warnings.push(Warning {
            file: self.file.to_string(),
            at,
            message,
        });
    }

    /// Warns about a construct this reader does not use (quietly for bookkeeping).
    fn skip(&mut self, l: &List, inside: &str) {
        match l.head() {
            Some(h) if QUIET.contains(&h.as_str()) => {}
            Some(h) => self.warn(l.at, format!("({h} ...) in {inside} is not read; skipped")),
            None => self.warn(
                l.at,
                format!("a list without a keyword in {inside}; skipped"),
            ),
        }
    }

    fn property(&mut self, l: &List) -> Option<Property> {
        let Some((key, display, _)) = name_def(l.items.get(1)) else {
            self.warn(l.at, "a property without a name; skipped".into());
            return None;
        };
        let mut value = None;
        let mut nested = Vec::new();
        for v in l.body() {
            match v.head().as_deref() {
                Some("string") | Some("integer") => {
                    let text: Vec<String> = v
                        .items
                        .iter()
                        .skip(1)
                        .filter_map(|n| match n {
                            Node::Atom(a) => Some(a.text.clone()),
                            Node::List(_) => None,
                        })
                        .collect();
                    value = Some(text.join(" "));
                }
                Some("property") => nested.extend(self.property(v)),
                Some("owner") | Some("unit") => {}
                _ => self.skip(v, &format!("property {display}")),
            }
        }
        Some(Property {
            key,
            display,
            value,
            at: l.at,
            nested,
        })
    }
}

/// The first value of a property with one of `names` (by name or display name,
/// case-insensitive), searched breadth-first through nested properties.
fn find_property<'p>(props: &'p [Property], names: &[&str]) -> Option<&'p Property> {
    let mut level: Vec<&Property> = props.iter().collect();
    while !level.is_empty() {
        if let Some(p) = level.iter().find(|p| {
            p.value.is_some()
                && names
                    .iter()
                    .any(|n| p.key == *n || p.display.eq_ignore_ascii_case(n))
        }) {
            return Some(p);
        }
        level = level.iter().flat_map(|p| p.nested.iter()).collect();
    }
    None
}

/// A cell: its ports (key -> display name), properties and the list holding its contents.
struct Cell<'t> {
    display: String,
    ports: HashMap<String, String>,
    props: Vec<Property>,
    contents: Option<&'t List>,
}

impl<'t> Reader<'_> {
    fn cell(&mut self, l: &'t List) -> Option<(String, Cell<'t>)> {
        let Some((key, display, _)) = name_def(l.items.get(1)) else {
            self.warn(l.at, "a cell without a name; skipped".into());
            return None;
        };
        let mut cell = Cell {
            display,
            ports: HashMap::new(),
            props: Vec::new(),
            contents: None,
        };
        for c in l.body() {
            match c.head().as_deref() {
                Some("view") => {
                    for v in c.body() {
                        match v.head().as_deref() {
                            Some("interface") => {
                                for p in v.lists() {
                                    match p.head().as_deref() {
                                        Some("port") => match name_def(p.items.get(1)) {
                                            Some((k, d, _)) => {
                                                cell.ports.insert(k, d);
                                            }
                                            None => self.warn(
                                                p.at,
                                                "a port without a plain name (arrays are not read); skipped".into(),
                                            ),
                                        },
                                        Some("property") => cell.props.extend(self.property(p)),
                                        _ => self.skip(p, "interface"),
                                    }
                                }
                            }
                            Some("contents") => {
                                if cell.contents.is_none() {
                                    cell.contents = Some(v);
                                } else {
                                    self.warn(
                                        v.at,
                                        "a second view with contents; only the first is read"
                                            .into(),
                                    );
                                }
                            }
                            Some("property") => cell.props.extend(self.property(v)),
                            _ => self.skip(v, "view"),
                        }
                    }
                }
                Some("property") => cell.props.extend(self.property(c)),
                _ => self.skip(c, "cell"),
            }
        }
        Some((key, cell))
    }
}

/// The instance's cell: `(viewRef V (cellRef C (libraryRef L)))`, as (library, cell)
/// keys (library empty when not given).
fn cell_ref(inst: &List) -> Option<(String, String)> {
    let cr = inst.child("viewref")?.child("cellref")?;
    let (cell, _, _) = name_def(cr.items.get(1))?;
    let lib = cr
        .child("libraryref")
        .and_then(|l| name_def(l.items.get(1)))
        .map(|n| n.0)
        .unwrap_or_default();
    Some((lib, cell))
}

/// The footprint mapping file: `CELL = FOOTPRINT NAME` per line, `#` starts a comment.
/// Cell names are compared without case.
pub fn read_mapping(
    bytes: &[u8],
    file: &str,
) -> Result<HashMap<String, (FootprintSpec, Footprint)>, ImportError> {
    let text = decode(bytes, file)?;
    let mut map = HashMap::new();
    let mut first_line = HashMap::new();
    let mut problems = Vec::new();
    for (i, raw) in text.split('\n').enumerate() {
        let line = i + 1;
        let content = raw.split('#').next().unwrap_or("");
        if content.trim().is_empty() {
            continue;
        }
        let lead = |s: &str| {
            content[..content.len() - s.trim_start().len()]
                .chars()
                .count()
        };
        let at = |column| Location { line, column };
        let Some((cell, name)) = content.split_once('=') else {
            problems.push(ImportProblem {
                file: file.to_string(),
                at: at(1 + lead(content)),
                reason: Reason::Syntax("expected CELL = FOOTPRINT".into()),
            });
            continue;
        };
        let key = cell.trim().to_lowercase();
        let name_col = cell.chars().count() + 2 + (name.len() - name.trim_start().len());
        if key.is_empty() {
            problems.push(ImportProblem {
                file: file.to_string(),
                at: at(1 + lead(content)),
                reason: Reason::EmptyField("cell name"),
            });
            continue;
        }
        if let Some(first) = first_line.insert(key.clone(), line) {
            problems.push(ImportProblem {
                file: file.to_string(),
                at: at(1 + lead(content)),
                reason: Reason::Syntax(format!(
                    "cell \"{}\" is mapped twice (first at line {first})",
                    cell.trim()
                )),
            });
            continue;
        }
        match parse_footprint_name(name) {
            Ok(spec) => {
                if let Ok(fp) = spec.build() {
                    map.insert(key, (spec, fp));
                }
            }
            Err(e) => problems.push(ImportProblem {
                file: file.to_string(),
                at: at(name_col),
                reason: Reason::Footprint(e),
            }),
        }
    }
    if problems.is_empty() {
        Ok(map)
    } else {
        Err(ImportError::Invalid { problems })
    }
}

/// Imports an EDIF 2 0 0 netlist and, optionally, a footprint mapping file
/// (`(file name, bytes)`, see [`read_mapping`]). `file` only labels errors and names the
/// board.
pub fn import_edif(
    bytes: &[u8],
    file: &str,
    mapping: Option<(&str, &[u8])>,
    opts: &ImportOptions,
) -> Result<Imported, ImportError> {
    let map = match mapping {
        Some((f, b)) => read_mapping(b, f)?,
        None => HashMap::new(),
    };
    let text = decode(bytes, file)?;
    let tops = read_sexprs(text, file)?;
    let origin = Location { line: 1, column: 1 };
    let mut rd = Reader {
        file,
        warnings: Vec::new(),
    };
    let Some(edif) = tops.iter().find(|l| l.is("edif")) else {
        let at = tops.first().map_or(origin, |l| l.at);
        return Err(ImportError::one(
            file,
            at,
            Reason::Syntax("not an EDIF netlist: expected (edif ...)".into()),
        ));
    };
    for other in tops.iter().filter(|l| !std::ptr::eq(*l, edif)) {
        rd.warn(other.at, "text after the (edif ...) list; skipped".into());
    }
    let (cells, design) = library_cells(&mut rd, edif);
    let Some(top) = top_cell(&cells, design.as_ref()) else {
        return Err(ImportError::one(
            file,
            edif.at,
            Reason::Syntax("no cell has contents with instances: nothing to import".into()),
        ));
    };
    let contents = cells[top].2.contents.expect("chosen for its contents");

    let mut netlist = Netlist {
        file: file.to_string(),
        footprint_hint: "give the instance a footprint property or map its cell in a footprint mapping file",
        ..Netlist::default()
    };
    let mut problems = Vec::new();
    let instances = read_instances(&mut rd, contents, &cells, &map, &mut netlist, &mut problems);
    read_nets(
        &mut rd,
        contents,
        &cells,
        &instances,
        &mut netlist,
        &mut problems,
    );
    if !problems.is_empty() {
        problems.sort_by_key(|p| p.at);
        return Err(ImportError::Invalid { problems });
    }
    netlist.warnings = rd.warnings;
    netlist.into_board(opts)
}

/// Cells by (library, cell name, cell), in file order.
type Cells<'t> = Vec<(String, String, Cell<'t>)>;
/// Instance key -> (reference, index of its cell in [`Cells`]).
type Instances = HashMap<String, (String, Option<usize>)>;

/// The libraries' cells, in file order, and the design's (library, cell), if named.
fn library_cells<'t>(rd: &mut Reader<'_>, edif: &'t List) -> (Cells<'t>, Option<(String, String)>) {
    let mut cells: Cells<'t> = Vec::new();
    let mut design: Option<(String, String)> = None;
    for c in edif.body() {
        match c.head().as_deref() {
            Some("library") | Some("external") => {
                let lib = name_def(c.items.get(1)).map(|n| n.0).unwrap_or_default();
                for l in c.body() {
                    if l.is("cell") {
                        if let Some((k, cell)) = rd.cell(l) {
                            cells.push((lib.clone(), k, cell));
                        }
                    } else {
                        rd.skip(l, "library");
                    }
                }
            }
            Some("design") => {
                if let Some(cr) = c.child("cellref")
                    && let Some((cell, _, _)) = name_def(cr.items.get(1))
                {
                    let lib = cr
                        .child("libraryref")
                        .and_then(|l| name_def(l.items.get(1)))
                        .map(|n| n.0)
                        .unwrap_or_default();
                    design = Some((lib, cell));
                }
            }
            Some("edifversion") => {
                let v: Vec<&str> = c
                    .items
                    .iter()
                    .skip(1)
                    .filter_map(|n| match n {
                        Node::Atom(a) => Some(a.text.as_str()),
                        Node::List(_) => None,
                    })
                    .collect();
                if v != ["2", "0", "0"] {
                    rd.warn(
                        c.at,
                        format!("EDIF version {} (this reader follows 2 0 0)", v.join(" ")),
                    );
                }
            }
            _ => rd.skip(c, "edif"),
        }
    }
    (cells, design)
}

/// The index of cell `cell` of library `lib` (any library when not found there, or when
/// `lib` is empty).
fn find_cell(cells: &Cells<'_>, lib: &str, cell: &str) -> Option<usize> {
    cells
        .iter()
        .position(|(l, c, _)| c == cell && (lib.is_empty() || l == lib))
        .or_else(|| cells.iter().position(|(_, c, _)| c == cell))
}

/// The cell to import: the design's, when it has contents, else the last cell with
/// instances.
fn top_cell(cells: &Cells<'_>, design: Option<&(String, String)>) -> Option<usize> {
    design
        .and_then(|(l, c)| find_cell(cells, l, c))
        .filter(|&i| cells[i].2.contents.is_some())
        .or_else(|| {
            cells.iter().rposition(|(_, _, c)| {
                c.contents
                    .is_some_and(|l| l.lists().any(|i| i.is("instance")))
            })
        })
}

/// A problem of the netlist file at `at`.
fn problem(file: &str, at: Location, reason: Reason) -> ImportProblem {
    ImportProblem {
        file: file.to_string(),
        at,
        reason,
    }
}

/// The top cell's instances, as parts of `netlist`.
fn read_instances(
    rd: &mut Reader<'_>,
    contents: &List,
    cells: &Cells<'_>,
    map: &HashMap<String, (FootprintSpec, Footprint)>,
    netlist: &mut Netlist,
    problems: &mut Vec<ImportProblem>,
) -> Instances {
    let file = rd.file;
    let problem = |at: Location, reason: Reason| problem(file, at, reason);
    let mut instances: Instances = HashMap::new();
    let mut first_ref: HashMap<String, usize> = HashMap::new();
    for inst in contents.lists().filter(|l| l.is("instance")) {
        let Some((key, display, _)) = name_def(inst.items.get(1)) else {
            rd.warn(inst.at, "an instance without a name; skipped".into());
            continue;
        };
        let mut props = Vec::new();
        let mut designator = None;
        for c in inst.body() {
            match c.head().as_deref() {
                Some("property") => props.extend(rd.property(c)),
                Some("designator") => {
                    designator = c.items.get(1).and_then(|n| match n {
                        Node::Atom(a) => Some(a.text.clone()),
                        Node::List(_) => None,
                    });
                }
                Some("viewref") => {}
                _ => rd.skip(c, &format!("instance {display}")),
            }
        }
        let reference = designator.unwrap_or(display);
        if let Err(reason) = check_reference(&reference) {
            problems.push(problem(inst.at, reason));
            continue;
        }
        if let Some(&line) = first_ref.get(&reference) {
            problems.push(problem(
                inst.at,
                Reason::DuplicatePart {
                    part: reference,
                    first_line: line,
                },
            ));
            continue;
        }
        first_ref.insert(reference.clone(), inst.at.line);
        let cref = cell_ref(inst);
        let ci = cref.as_ref().and_then(|(l, c)| find_cell(cells, l, c));
        if cref.is_none() {
            rd.warn(
                inst.at,
                format!("instance {reference} has no (viewRef (cellRef ...))"),
            );
        }
        if let Some(i) = ci
            && cells[i]
                .2
                .contents
                .is_some_and(|l| l.lists().any(|x| x.is("instance")))
        {
            rd.warn(
                inst.at,
                format!(
                    "instance {reference} is a sheet of the hierarchy (cell {} has instances of its own); hierarchies are not flattened, so it is left out",
                    cells[i].2.display
                ),
            );
            continue;
        }
        let footprint = match instance_footprint(&props, cref.as_ref(), ci, cells, map) {
            Ok(f) => f,
            Err((at, reason)) => {
                problems.push(problem(at, reason));
                continue;
            }
        };
        let value = find_property(&props, &["value"])
            .and_then(|p| p.value.clone())
            .or_else(|| ci.map(|i| cells[i].2.display.clone()))
            .unwrap_or_default();
        instances.insert(key, (reference.clone(), ci));
        netlist.parts.push(NetlistPart {
            reference,
            value,
            footprint,
            file: file.to_string(),
            at: inst.at,
        });
    }
    instances
}

/// An instance's footprint: its own footprint property, else the mapping file's entry
/// for its cell, else the cell's property; `Err` with the spot of a bad footprint name.
fn instance_footprint(
    props: &[Property],
    cref: Option<&(String, String)>,
    ci: Option<usize>,
    cells: &Cells<'_>,
    map: &HashMap<String, (FootprintSpec, Footprint)>,
) -> Result<Option<(FootprintSpec, Footprint)>, (Location, Reason)> {
    let cell_props: &[Property] = ci.map_or(&[], |i| cells[i].2.props.as_slice());
    let names = ["footprint", "package"];
    Ok(if let Some(p) = find_property(props, &names) {
        let text = p.value.as_deref().unwrap_or_default();
        match parse_footprint_name(text) {
            Ok(spec) => spec.build().ok().map(|b| (spec, b)),
            Err(e) => return Err((p.at, Reason::Footprint(e))),
        }
    } else if let Some(m) = cref.and_then(|(_, c)| map.get(c)) {
        Some(m.clone())
    } else if let Some(p) = find_property(cell_props, &names) {
        let text = p.value.as_deref().unwrap_or_default();
        match parse_footprint_name(text) {
            Ok(spec) => spec.build().ok().map(|b| (spec, b)),
            Err(e) => return Err((p.at, Reason::Footprint(e))),
        }
    } else {
        None
    })
}

/// The top cell's nets, with the pins they join, as nets of `netlist`.
fn read_nets(
    rd: &mut Reader<'_>,
    contents: &List,
    cells: &Cells<'_>,
    instances: &Instances,
    netlist: &mut Netlist,
    problems: &mut Vec<ImportProblem>,
) {
    let file = rd.file;
    let problem = |at: Location, reason: Reason| problem(file, at, reason);
    let mut net_lines: HashMap<String, usize> = HashMap::new();
    for c in contents.lists() {
        match c.head().as_deref() {
            Some("instance") => {}
            Some("net") => {
                let Some((_, name, _)) = name_def(c.items.get(1)) else {
                    rd.warn(c.at, "a net without a name; skipped".into());
                    continue;
                };
                let mut net = NetlistNet {
                    name: name.clone(),
                    class: None,
                    pins: Vec::new(),
                    at: c.at,
                };
                if name.trim().is_empty() {
                    problems.push(problem(c.at, Reason::EmptyField("net name")));
                    continue;
                }
                if let Some(first) = net_lines.insert(name.clone(), c.at.line) {
                    problems.push(problem(
                        c.at,
                        Reason::Syntax(format!(
                            "net \"{name}\" is defined twice (first at line {first})"
                        )),
                    ));
                    continue;
                }
                for j in c.body() {
                    match j.head().as_deref() {
                        Some("joined") => {
                            joined_pins(rd, j, contents, cells, instances, &mut net, problems);
                        }
                        Some("property") => {
                            if let Some(p) = rd.property(j)
                                && let Some(v) = find_property(
                                    std::slice::from_ref(&p),
                                    &["class", "netclass", "net class"],
                                )
                            {
                                net.class = v.value.clone().filter(|s| !s.is_empty());
                            }
                        }
                        _ => rd.skip(j, &format!("net {name}")),
                    }
                }
                netlist.nets.push(net);
            }
            _ => rd.skip(c, "contents"),
        }
    }
}

/// The pins of one `(joined ...)` list, added to `net`.
fn joined_pins(
    rd: &mut Reader<'_>,
    j: &List,
    contents: &List,
    cells: &Cells<'_>,
    instances: &Instances,
    net: &mut NetlistNet,
    problems: &mut Vec<ImportProblem>,
) {
    let file = rd.file;
    let problem = |at: Location, reason: Reason| problem(file, at, reason);
    let name = net.name.clone();
    for pr in j.lists() {
        if !pr.is("portref") {
            rd.skip(pr, &format!("net {name}"));
            continue;
        }
        let Some((port, port_text, port_at)) = name_def(pr.items.get(1)) else {
            rd.warn(
                pr.at,
                "a portRef without a plain port name (bus members are not read); skipped".into(),
            );
            continue;
        };
        let Some(ir) = pr.child("instanceref") else {
            rd.warn(
                    pr.at,
                    format!(
                        "net {name} joins the design's own port {port_text}, which is no part's pin; left out"
                    ),
                );
            continue;
        };
        let Some((ik, _, _)) = name_def(ir.items.get(1)) else {
            rd.warn(ir.at, "an instanceRef without a name; skipped".into());
            continue;
        };
        let Some((reference, ci)) = instances.get(&ik) else {
            if !contents
                .lists()
                .any(|i| i.is("instance") && name_def(i.items.get(1)).is_some_and(|n| n.0 == ik))
            {
                problems.push(problem(
                    ir.at,
                    Reason::Syntax(format!("net {name}: no instance is named \"{ik}\"")),
                ));
            }
            continue;
        };
        let pin = ci
            .and_then(|i| cells[i].2.ports.get(&port).cloned())
            .unwrap_or(port_text);
        if let Err(reason) = check_pin(&pin) {
            problems.push(problem(port_at, reason));
            continue;
        }
        net.pins.push(NetlistPin {
            reference: reference.clone(),
            pin,
            at: pr.at,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percent_codes() {
        assert_eq!(decode_percent("a%34%b"), "a\"b");
        assert_eq!(decode_percent("100%"), "100%");
        assert_eq!(decode_percent("%72 105%!"), "Hi!");
    }

    #[test]
    fn positions() {
        let t = read_sexprs("(edif x\n  (rename &1 \"R 1\"))", "f").unwrap();
        let Node::List(r) = &t[0].items[2] else {
            panic!()
        };
        assert_eq!(r.at, Location { line: 2, column: 3 });
        let Node::Atom(a) = &r.items[1] else { panic!() };
        assert_eq!(a.text, "1");
        assert_eq!(a.kind, AtomKind::Ident);
    }
}
