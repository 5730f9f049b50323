//! Connection-list import: a CSV or TSV text with a header row and one row per
//! connection (net, part reference, pin), and an optional parts table (reference, value,
//! footprint). The format is described in docs/import-formats.md.
//!
//! Fields follow RFC 4180 ("Common Format and MIME Type for Comma-Separated Values (CSV)
//! Files", 2005): fields are separated by the delimiter, records end with CRLF (a bare LF
//! is accepted too), a field may be enclosed in double quotes, and then may hold the
//! delimiter, line breaks and quotes written twice (`""`). Beyond the RFC, the delimiter
//! may be a comma, a tab or a semicolon (the one the header row uses most), blank lines
//! are skipped, and spaces around unquoted fields are trimmed.
//!
//! The reader is our own, about a hundred lines, rather than the `csv` crate: every field
//! must carry its line and column (also inside quoted fields that span lines) so that
//! each error points at the cell that causes it, and a small state machine over `char`s
//! gives that directly and cannot panic on any input.

use std::collections::HashMap;

use super::Location;
use super::import::{
    ImportError, ImportOptions, ImportProblem, Imported, Netlist, NetlistNet, NetlistPart,
    NetlistPin, Reason, Warning, check_pin, check_reference, decode,
};
use crate::model::names::parse_footprint_name;

/// One field with the position of its first character (the opening quote, if quoted).
#[derive(Clone, Debug, PartialEq)]
pub struct Field {
    pub text: String,
    pub at: Location,
}

/// One record (row): its fields, in order.
#[derive(Clone, Debug, PartialEq)]
pub struct Record {
    pub fields: Vec<Field>,
}

impl Record {
    /// Where the record starts.
    pub fn at(&self) -> Location {
        self.fields
            .first()
            .map_or(Location { line: 1, column: 1 }, |f| f.at)
    }
}

/// The delimiter the header row (the first non-blank line) uses most outside quotes:
/// tab, semicolon or comma; ties go in that order. A header with none is one column
/// (and then lacks the required columns).
pub fn detect_delimiter(text: &str) -> char {
    let header = text
        .split('\n')
        .find(|l| !l.trim().is_empty())
        .unwrap_or("");
    let mut counts = [('\t', 0usize), (';', 0), (',', 0)];
    let mut quoted = false;
    for c in header.chars() {
        if c == '"' {
            quoted = !quoted;
        } else if !quoted && let Some(e) = counts.iter_mut().find(|e| e.0 == c) {
            e.1 += 1;
        }
    }
    let best = counts.iter().map(|e| e.1).max().unwrap_or(0);
    counts
        .iter()
        .find(|e| e.1 == best && best > 0)
        .map_or(',', |e| e.0)
}

/// Splits the text into records per RFC 4180 (see the module docs). Blank lines are
/// skipped. Errors are located at the offending character.
pub fn read_records(text: &str, delimiter: char, file: &str) -> Result<Vec<Record>, ImportError> {
    let fail =
        |line, column, reason| Err(ImportError::one(file, Location { line, column }, reason));
    let mut records = Vec::new();
    let mut fields: Vec<Field> = Vec::new();
    let mut chars = text.chars().peekable();
    let (mut line, mut col) = (1usize, 1usize);
    loop {
        // At the start of a field. Spaces before an opening quote are dropped (a common
        // habit of writers, outside RFC 4180's grammar).
        let mut value = String::new();
        let mut ahead = chars.clone();
        let mut spaces = 0;
        while delimiter != ' ' && ahead.peek() == Some(&' ') {
            ahead.next();
            spaces += 1;
        }
        if spaces > 0 && ahead.peek() == Some(&'"') {
            chars = ahead;
            col += spaces;
        }
        let start = Location { line, column: col };
        let mut ended_record = false;
        if chars.peek() == Some(&'"') {
            chars.next();
            col += 1;
            loop {
                match chars.next() {
                    None => return fail(start.line, start.column, Reason::UnclosedQuote),
                    Some('"') => {
                        col += 1;
                        if chars.peek() == Some(&'"') {
                            chars.next();
                            col += 1;
                            value.push('"');
                        } else {
                            break;
                        }
                    }
                    Some('\n') => {
                        value.push('\n');
                        line += 1;
                        col = 1;
                    }
                    Some(c) => {
                        value.push(c);
                        col += 1;
                    }
                }
            }
            // After the closing quote: spaces, then a delimiter, a line end or the end.
            loop {
                match chars.peek() {
                    Some(&c) if c == delimiter => {
                        chars.next();
                        col += 1;
                        break;
                    }
                    Some('\r') | Some(' ') if delimiter != ' ' => {
                        chars.next();
                        col += 1;
                    }
                    Some('\n') => {
                        chars.next();
                        line += 1;
                        col = 1;
                        ended_record = true;
                        break;
                    }
                    None => {
                        ended_record = true;
                        break;
                    }
                    Some(_) => return fail(line, col, Reason::TextAfterQuote),
                }
            }
        } else {
            loop {
                match chars.next() {
                    Some(c) if c == delimiter => {
                        col += 1;
                        break;
                    }
                    Some('\n') => {
                        line += 1;
                        col = 1;
                        ended_record = true;
                        break;
                    }
                    None => {
                        ended_record = true;
                        break;
                    }
                    Some('"') => return fail(line, col, Reason::StrayQuote),
                    Some(c) => {
                        value.push(c);
                        col += 1;
                    }
                }
            }
            // Trim spaces (and the CR of a CRLF) around an unquoted field.
            let lead = value.len() - value.trim_start().len();
            let text = value.trim().to_string();
            let at = Location {
                line: start.line,
                column: start.column + value[..lead].chars().count(),
            };
            fields.push(Field { text, at });
            if ended_record {
                finish_record(&mut records, &mut fields);
                if chars.peek().is_none() {
                    return Ok(records);
                }
            }
            continue;
        }
        fields.push(Field {
            text: value,
            at: start,
        });
        if ended_record {
            finish_record(&mut records, &mut fields);
            if chars.peek().is_none() {
                return Ok(records);
            }
        }
    }
}

/// Ends a record; a blank line (one empty unquoted field) is dropped.
fn finish_record(records: &mut Vec<Record>, fields: &mut Vec<Field>) {
    let f = std::mem::take(fields);
    let blank = f.len() == 1 && f[0].text.is_empty();
    if !blank {
        records.push(Record { fields: f });
    }
}

/// The columns the reader knows, with the header names each accepts (compared without
/// case, spaces, `_`, `-` and `.`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Column {
    Net,
    Part,
    Pin,
    Value,
    Footprint,
    Class,
}

impl Column {
    const ALL: [Column; 6] = [
        Column::Net,
        Column::Part,
        Column::Pin,
        Column::Value,
        Column::Footprint,
        Column::Class,
    ];

    fn name(self) -> &'static str {
        match self {
            Column::Net => "net",
            Column::Part => "part",
            Column::Pin => "pin",
            Column::Value => "value",
            Column::Footprint => "footprint",
            Column::Class => "class",
        }
    }

    /// The accepted header names, as the error message lists them.
    fn accepted(self) -> &'static str {
        match self {
            Column::Net => "net, net name, signal, node",
            Column::Part => "part, reference, ref, refdes, designator, component",
            Column::Pin => "pin, pin number, pad, terminal",
            Column::Value => "value, val",
            Column::Footprint => "footprint, package",
            Column::Class => "class, net class",
        }
    }

    fn matches(self, header: &str) -> bool {
        let key: String = header
            .chars()
            .filter(|c| !matches!(c, ' ' | '_' | '-' | '.'))
            .flat_map(char::to_lowercase)
            .collect();
        self.accepted()
            .split(", ")
            .any(|a| a.replace(' ', "") == key)
    }
}

/// The header row: which field index holds each known column.
struct Header {
    index: HashMap<&'static str, usize>,
    width: usize,
}

impl Header {
    fn read(
        rec: &Record,
        file: &str,
        required: &[Column],
        warnings: &mut Vec<Warning>,
    ) -> Result<Header, ImportError> {
        let mut index = HashMap::new();
        let mut problems = Vec::new();
        for (i, f) in rec.fields.iter().enumerate() {
            match Column::ALL.iter().find(|c| c.matches(&f.text)) {
                Some(c) => {
                    if index.insert(c.name(), i).is_some() {
                        problems.push(ImportProblem {
                            file: file.to_string(),
                            at: f.at,
                            reason: Reason::DuplicateColumn { column: c.name() },
                        });
                    }
                }
                None => warnings.push(Warning {
                    file: file.to_string(),
                    at: f.at,
                    message: format!("column \"{}\" is not one lehr reads; ignored", f.text),
                }),
            }
        }
        for c in required {
            if !index.contains_key(c.name()) {
                problems.push(ImportProblem {
                    file: file.to_string(),
                    at: rec.at(),
                    reason: Reason::MissingColumn {
                        column: c.name(),
                        accepted: c.accepted(),
                    },
                });
            }
        }
        if problems.is_empty() {
            Ok(Header {
                index,
                width: rec.fields.len(),
            })
        } else {
            Err(ImportError::Invalid { problems })
        }
    }

    fn get<'r>(&self, rec: &'r Record, c: Column) -> Option<&'r Field> {
        self.index.get(c.name()).and_then(|&i| rec.fields.get(i))
    }
}

/// Decodes, detects the delimiter, reads the records and the header.
fn table(
    bytes: &[u8],
    file: &str,
    required: &[Column],
    warnings: &mut Vec<Warning>,
) -> Result<(Header, Vec<Record>), ImportError> {
    let text = decode(bytes, file)?;
    let delimiter = detect_delimiter(text);
    let mut records = read_records(text, delimiter, file)?.into_iter();
    let Some(head) = records.next() else {
        return Err(ImportError::one(
            file,
            Location { line: 1, column: 1 },
            Reason::Empty,
        ));
    };
    let header = Header::read(&head, file, required, warnings)?;
    let rows: Vec<Record> = records.collect();
    let mut problems = Vec::new();
    for r in &rows {
        if r.fields.len() != header.width {
            problems.push(ImportProblem {
                file: file.to_string(),
                at: r.at(),
                reason: Reason::FieldCount {
                    found: r.fields.len(),
                    expected: header.width,
                },
            });
        }
    }
    if problems.is_empty() {
        Ok((header, rows))
    } else {
        Err(ImportError::Invalid { problems })
    }
}

/// Imports a connection list and, optionally, a parts table (`(file name, bytes)`).
/// `file` only labels errors and names the board. See the module docs for the format.
pub fn import_connections(
    bytes: &[u8],
    file: &str,
    parts: Option<(&str, &[u8])>,
    opts: &ImportOptions,
) -> Result<Imported, ImportError> {
    let mut reader = Reader {
        warnings: Vec::new(),
        problems: Vec::new(),
        net_list: Netlist {
            file: file.to_string(),
            footprint_hint: "give it a footprint column in the parts table or the connection list",
            ..Netlist::default()
        },
        part_index: HashMap::new(),
        from_table: Vec::new(),
        net_index: HashMap::new(),
        given_here: HashMap::new(),
    };
    if let Some((pfile, pbytes)) = parts {
        let (h, rows) = table(
            pbytes,
            pfile,
            &[Column::Part, Column::Footprint],
            &mut reader.warnings,
        )?;
        for r in &rows {
            reader.table_row(&h, r, pfile);
        }
    }
    let (h, rows) = table(
        bytes,
        file,
        &[Column::Net, Column::Part, Column::Pin],
        &mut reader.warnings,
    )?;
    for r in &rows {
        reader.connection_row(&h, r, file);
    }
    let Reader {
        warnings,
        problems,
        mut net_list,
        ..
    } = reader;
    if !problems.is_empty() {
        return Err(ImportError::Invalid { problems });
    }
    net_list.warnings = warnings;
    net_list.into_board(opts)
}

/// What [`import_connections`] gathers, row by row.
struct Reader {
    warnings: Vec<Warning>,
    problems: Vec<ImportProblem>,
    net_list: Netlist,
    /// Reference -> index into `net_list.parts`.
    part_index: HashMap<String, usize>,
    /// Whether each part had a row of its own in the parts table.
    from_table: Vec<bool>,
    net_index: HashMap<String, usize>,
    /// Where each part's footprint and value were given in the connection list.
    given_here: HashMap<String, Given>,
}

impl Reader {
    /// One row of the parts table.
    fn table_row(&mut self, h: &Header, r: &Record, pfile: &str) {
        let Some(rf) = h.get(r, Column::Part) else {
            return;
        };
        if let Err(reason) = check_reference(&rf.text) {
            self.problems.push(problem(pfile, rf.at, reason));
            return;
        }
        if let Some(&i) = self.part_index.get(&rf.text) {
            self.problems.push(problem(
                pfile,
                rf.at,
                Reason::DuplicatePart {
                    part: rf.text.clone(),
                    first_line: self.net_list.parts[i].at.line,
                },
            ));
            return;
        }
        let fp = h.get(r, Column::Footprint);
        let footprint = match fp {
            Some(f) if f.text.is_empty() => None,
            Some(f) => match parse_footprint_name(&f.text) {
                Ok(spec) => spec.build().ok().map(|b| (spec, b)),
                Err(e) => {
                    self.problems
                        .push(problem(pfile, f.at, Reason::Footprint(e)));
                    return;
                }
            },
            None => None,
        };
        let value = h
            .get(r, Column::Value)
            .map(|f| f.text.clone())
            .unwrap_or_default();
        self.part_index
            .insert(rf.text.clone(), self.net_list.parts.len());
        self.from_table.push(true);
        self.net_list.parts.push(NetlistPart {
            reference: rf.text.clone(),
            value,
            footprint,
            file: pfile.to_string(),
            at: rf.at,
        });
    }

    /// One row of the connection list: a pin on a net, perhaps with the part's
    /// footprint, value and the net's class.
    fn connection_row(&mut self, h: &Header, r: &Record, file: &str) {
        let (Some(nf), Some(rf), Some(pf)) = (
            h.get(r, Column::Net),
            h.get(r, Column::Part),
            h.get(r, Column::Pin),
        ) else {
            return;
        };
        if nf.text.is_empty() {
            self.problems
                .push(problem(file, nf.at, Reason::EmptyField("net name")));
            return;
        }
        if let Err(reason) = check_reference(&rf.text) {
            self.problems.push(problem(file, rf.at, reason));
            return;
        }
        if let Err(reason) = check_pin(&pf.text) {
            let reason = if pf.text.is_empty() {
                Reason::EmptyField("pin")
            } else {
                reason
            };
            self.problems.push(problem(file, pf.at, reason));
            return;
        }
        let pi = self.part_of(rf, file);
        self.footprint_and_value(h, r, rf, pi, file);
        self.pin_on_net(h, r, nf, rf, pf, file);
    }

    /// The part a row names: from the table, or first seen here.
    fn part_of(&mut self, rf: &Field, file: &str) -> usize {
        match self.part_index.get(&rf.text) {
            Some(&i) => i,
            None => {
                self.part_index
                    .insert(rf.text.clone(), self.net_list.parts.len());
                self.from_table.push(false);
                self.net_list.parts.push(NetlistPart {
                    reference: rf.text.clone(),
                    value: String::new(),
                    footprint: None,
                    file: file.to_string(),
                    at: rf.at,
                });
                self.net_list.parts.len() - 1
            }
        }
    }

    /// Footprint and value columns of the connection list, when present and filled.
    fn footprint_and_value(&mut self, h: &Header, r: &Record, rf: &Field, pi: usize, file: &str) {
        let seen = self.given_here.entry(rf.text.clone()).or_default();
        if let Some(f) = h.get(r, Column::Footprint).filter(|f| !f.text.is_empty()) {
            match &seen.0 {
                Some((first, line)) if !first.eq_ignore_ascii_case(&f.text) => {
                    self.problems.push(problem(
                        file,
                        f.at,
                        Reason::Conflict {
                            part: rf.text.clone(),
                            what: "footprint",
                            first: first.clone(),
                            first_line: *line,
                            second: f.text.clone(),
                        },
                    ));
                }
                Some(_) => {}
                None => {
                    seen.0 = Some((f.text.clone(), f.at.line));
                    if self.from_table[pi] && self.net_list.parts[pi].footprint.is_some() {
                        self.warnings.push(Warning {
                            file: file.to_string(),
                            at: f.at,
                            message: format!(
                                "part {}: the parts table's footprint is kept, this one ignored",
                                rf.text
                            ),
                        });
                    } else {
                        match parse_footprint_name(&f.text) {
                            Ok(spec) => {
                                self.net_list.parts[pi].footprint =
                                    spec.build().ok().map(|b| (spec, b));
                            }
                            Err(e) => self
                                .problems
                                .push(problem(file, f.at, Reason::Footprint(e))),
                        }
                    }
                }
            }
        }
        if let Some(v) = h.get(r, Column::Value).filter(|f| !f.text.is_empty()) {
            match &seen.1 {
                Some((first, line)) if *first != v.text => self.problems.push(problem(
                    file,
                    v.at,
                    Reason::Conflict {
                        part: rf.text.clone(),
                        what: "value",
                        first: first.clone(),
                        first_line: *line,
                        second: v.text.clone(),
                    },
                )),
                Some(_) => {}
                None => {
                    seen.1 = Some((v.text.clone(), v.at.line));
                    if self.net_list.parts[pi].value.is_empty() {
                        self.net_list.parts[pi].value = v.text.clone();
                    }
                }
            }
        }
    }

    /// The row's pin, added to its net (made when first seen), and the net's class.
    fn pin_on_net(
        &mut self,
        h: &Header,
        r: &Record,
        nf: &Field,
        rf: &Field,
        pf: &Field,
        file: &str,
    ) {
        let class = h
            .get(r, Column::Class)
            .filter(|f| !f.text.is_empty())
            .map(|f| (f.text.clone(), f.at));
        let ni = match self.net_index.get(&nf.text) {
            Some(&i) => i,
            None => {
                self.net_index
                    .insert(nf.text.clone(), self.net_list.nets.len());
                self.net_list.nets.push(NetlistNet {
                    name: nf.text.clone(),
                    class: None,
                    pins: Vec::new(),
                    at: nf.at,
                });
                self.net_list.nets.len() - 1
            }
        };
        let net = &mut self.net_list.nets[ni];
        if let Some((c, at)) = class {
            match &net.class {
                Some(first) if *first != c => self.problems.push(problem(
                    file,
                    at,
                    Reason::ClassConflict {
                        net: nf.text.clone(),
                        first: first.clone(),
                        first_line: net.at.line,
                        second: c,
                    },
                )),
                Some(_) => {}
                None => net.class = Some(c),
            }
        }
        net.pins.push(NetlistPin {
            reference: rf.text.clone(),
            pin: pf.text.clone(),
            at: pf.at,
        });
    }
}

/// The footprint and value a connection list gave a part, each with the line where it
/// was first given.
type Given = (Option<(String, usize)>, Option<(String, usize)>);

fn problem(file: &str, at: Location, reason: Reason) -> ImportProblem {
    ImportProblem {
        file: file.to_string(),
        at,
        reason,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn texts(r: &[Record]) -> Vec<Vec<&str>> {
        r.iter()
            .map(|r| r.fields.iter().map(|f| f.text.as_str()).collect())
            .collect()
    }

    #[test]
    fn records_and_positions() {
        let r = read_records("a,\"b\"\"c\",d\r\n\n x ,\"y\nz\",w", ',', "f").unwrap();
        assert_eq!(texts(&r), [vec!["a", "b\"c", "d"], vec!["x", "y\nz", "w"]]);
        assert_eq!(r[1].fields[0].at, Location { line: 3, column: 2 });
        assert_eq!(r[1].fields[2].at, Location { line: 4, column: 4 });
    }
}
