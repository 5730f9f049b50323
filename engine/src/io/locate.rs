//! Finds where an item of a board file starts in the RON text, so that problems found by
//! the checks (which only know an [`ItemPath`] such as `parts[3].footprint`) can be shown
//! as `file:line:column`.
//!
//! The scanner is deliberately forgiving: it tokenizes just enough RON (comments, strings
//! with escapes, raw strings, char literals, brackets, commas and colons) to walk struct
//! fields, list elements and enum or `Some` payloads. It never fails and never panics: when
//! it cannot follow the whole path it returns the deepest enclosing item it found.

use std::fmt;

use crate::model::validate::{ItemPath, PathSeg};

/// A position in a text: 1-based line and column, columns counted in characters.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Location {
    pub line: usize,
    pub column: usize,
}

impl Location {
    /// The location of the character starting at byte `offset` of `source` (clamped to the
    /// end of the text and to a character boundary).
    pub(crate) fn of_offset(source: &str, offset: usize) -> Location {
        let mut end = offset.min(source.len());
        while !source.is_char_boundary(end) {
            end -= 1;
        }
        let before = &source[..end];
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        Location {
            line: 1 + before.matches('\n').count(),
            column: 1 + before[line_start..].chars().count(),
        }
    }

    /// The byte offset of this location in `source`, clamped to the end of its line and
    /// of the text.
    pub(crate) fn offset_in(self, source: &str) -> usize {
        let line_start: usize = source
            .split_inclusive('\n')
            .take(self.line.saturating_sub(1))
            .map(str::len)
            .sum();
        let line = source[line_start..].split('\n').next().unwrap_or("");
        line_start
            + line
                .char_indices()
                .nth(self.column.saturating_sub(1))
                .map_or(line.len(), |(i, _)| i)
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}", self.line, self.column)
    }
}

/// Where the item named by `path` starts in the RON `source`: a field's name, a list
/// element's first character. Falls back to the nearest enclosing item that could be found
/// (the whole document at worst). To locate many items of one text, use a [`Locator`].
pub fn locate(source: &str, path: &ItemPath) -> Location {
    Locator::new(source).locate(path)
}

/// Locates items of one RON text by their paths; the text is scanned once, up front.
pub struct Locator<'a> {
    source: &'a str,
    toks: Vec<Token>,
    /// Byte offset where each line starts.
    line_starts: Vec<usize>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    /// `(`, `[` or `{`.
    Open(u8),
    /// `)`, `]` or `}`.
    Close,
    Comma,
    Colon,
    /// A string, byte string, raw string or char literal.
    Literal,
    /// Anything else that is not whitespace: identifiers, numbers, `#!` of attributes.
    Atom,
}

#[derive(Clone, Copy, Debug)]
struct Token {
    kind: Kind,
    start: usize,
    end: usize,
}

/// Whitespace as RON defines it.
fn is_ws(c: char) -> bool {
    matches!(
        c,
        ' ' | '\t'
            | '\n'
            | '\r'
            | '\x0B'
            | '\x0C'
            | '\u{85}'
            | '\u{200E}'
            | '\u{200F}'
            | '\u{2028}'
            | '\u{2029}'
    )
}

fn ends_atom(c: char) -> bool {
    is_ws(c) || matches!(c, '(' | ')' | '[' | ']' | '{' | '}' | ',' | ':' | '"' | '/')
}

/// Splits RON text into tokens. Unterminated comments and strings run to the end.
fn tokenize(src: &str) -> Vec<Token> {
    let b = src.as_bytes();
    let mut toks = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let c = b[i];
        let start = i;
        let raw_end = match c {
            b'r' => raw_string_at(b, i),
            b'b' if b.get(i + 1) == Some(&b'r') => raw_string_at(b, i + 1),
            _ => None,
        };
        let kind = match c {
            _ if raw_end.is_some() => {
                i = raw_end.unwrap_or(b.len());
                Kind::Literal
            }
            b'/' if b.get(i + 1) == Some(&b'/') => {
                i = src[i..].find('\n').map_or(b.len(), |k| i + k + 1);
                continue;
            }
            b'/' if b.get(i + 1) == Some(&b'*') => {
                i = skip_block_comment(b, i);
                continue;
            }
            b'(' | b'[' | b'{' => {
                i += 1;
                Kind::Open(c)
            }
            b')' | b']' | b'}' => {
                i += 1;
                Kind::Close
            }
            b',' => {
                i += 1;
                Kind::Comma
            }
            b':' => {
                i += 1;
                Kind::Colon
            }
            b'"' => {
                i = skip_quoted(b, i + 1, b'"');
                Kind::Literal
            }
            b'\'' => {
                i = skip_quoted(b, i + 1, b'\'');
                Kind::Literal
            }
            b'b' if b.get(i + 1) == Some(&b'"') => {
                i = skip_quoted(b, i + 2, b'"');
                Kind::Literal
            }
            b'b' if b.get(i + 1) == Some(&b'\'') => {
                i = skip_quoted(b, i + 2, b'\'');
                Kind::Literal
            }
            _ => {
                let ch = src[i..].chars().next().unwrap_or(' ');
                if is_ws(ch) {
                    i += ch.len_utf8();
                    continue;
                }
                // An atom holds at least this one character, so the scan always advances.
                i += ch.len_utf8();
                while let Some(ch) = src[i..].chars().next() {
                    if ends_atom(ch) {
                        break;
                    }
                    i += ch.len_utf8();
                }
                Kind::Atom
            }
        };
        toks.push(Token {
            kind,
            start,
            end: i,
        });
    }
    toks
}

/// Skips a (nested) block comment starting at `i` (the `/`); returns the index after it.
fn skip_block_comment(b: &[u8], mut i: usize) -> usize {
    let mut level = 0usize;
    while i < b.len() {
        if b[i] == b'/' && b.get(i + 1) == Some(&b'*') {
            level += 1;
            i += 2;
        } else if b[i] == b'*' && b.get(i + 1) == Some(&b'/') {
            level -= 1;
            i += 2;
            if level == 0 {
                return i;
            }
        } else {
            i += 1;
        }
    }
    b.len()
}

/// Skips the body of a quoted literal from `i` (after the opening quote) to after the
/// closing `quote`, honouring backslash escapes.
fn skip_quoted(b: &[u8], mut i: usize, quote: u8) -> usize {
    while i < b.len() {
        match b[i] {
            b'\\' => i += 2,
            c if c == quote => return i + 1,
            _ => i += 1,
        }
    }
    b.len()
}

/// If a raw string `r#.."..."#..` starts at `i` (the `r`), the index after it.
fn raw_string_at(b: &[u8], i: usize) -> Option<usize> {
    let hashes = b[i + 1..].iter().take_while(|&&c| c == b'#').count();
    let quote = i + 1 + hashes;
    if b.get(quote) != Some(&b'"') {
        return None;
    }
    let mut k = quote + 1;
    while k < b.len() {
        if b[k] == b'"' && b[k + 1..].iter().take_while(|&&c| c == b'#').count() >= hashes {
            return Some(k + 1 + hashes);
        }
        k += 1;
    }
    Some(b.len())
}

/// An element of a bracketed group: the token index where it starts and, for a struct
/// field `name: value`, the name.
struct Element<'a> {
    start: usize,
    name: Option<&'a str>,
}

impl Element<'_> {
    /// Token index of the element's value (after `name:` for a field).
    fn value(&self) -> usize {
        if self.name.is_some() {
            self.start + 2
        } else {
            self.start
        }
    }
}

impl<'a> Locator<'a> {
    pub fn new(source: &'a str) -> Self {
        let line_starts = std::iter::once(0)
            .chain(source.match_indices('\n').map(|(i, _)| i + 1))
            .collect();
        Locator {
            source,
            toks: tokenize(source),
            line_starts,
        }
    }

    /// See [`locate`].
    pub fn locate(&self, path: &ItemPath) -> Location {
        let offset = self.follow(path);
        // `offset` is a token start, so a character boundary.
        let line = self.line_starts.partition_point(|&s| s <= offset);
        let start = self.line_starts[line - 1];
        Location {
            line,
            column: 1 + self.source[start..offset].chars().count(),
        }
    }

    fn text(&self, t: usize) -> &'a str {
        let tok = self.toks[t];
        &self.source[tok.start..tok.end]
    }

    fn kind(&self, t: usize) -> Option<Kind> {
        self.toks.get(t).map(|tok| tok.kind)
    }

    fn offset(&self, t: usize) -> usize {
        self.toks.get(t).map_or(self.source.len(), |tok| tok.start)
    }

    /// Token index of the document's value, after any `#![enable(..)]` attributes.
    fn root(&self) -> usize {
        let mut t = 0;
        while self.kind(t) == Some(Kind::Atom) && self.text(t).starts_with('#') {
            t += 1;
            if let Some(Kind::Open(_)) = self.kind(t) {
                t = self.skip_group(t);
            }
        }
        t
    }

    /// Index after the group whose opening bracket is at `open`.
    fn skip_group(&self, open: usize) -> usize {
        let mut depth = 0usize;
        let mut t = open;
        while let Some(k) = self.kind(t) {
            match k {
                Kind::Open(_) => depth += 1,
                Kind::Close => {
                    depth = depth.saturating_sub(1);
                    if depth == 0 {
                        return t + 1;
                    }
                }
                _ => {}
            }
            t += 1;
        }
        t
    }

    /// The opening bracket of the value at `v`: `(..)`, `[..]`, or the payload of a named
    /// value such as `Some(..)`, `Polygon(..)` or `Board(..)`.
    fn group_of(&self, v: usize) -> Option<usize> {
        match self.kind(v)? {
            Kind::Open(_) => Some(v),
            Kind::Atom if matches!(self.kind(v + 1), Some(Kind::Open(_))) => Some(v + 1),
            _ => None,
        }
    }

    /// The elements of the group opened at `open`, split at its top-level commas.
    fn elements(&self, open: usize) -> Vec<Element<'a>> {
        let mut out = Vec::new();
        let mut t = open + 1;
        loop {
            match self.kind(t) {
                None | Some(Kind::Close) => return out,
                Some(Kind::Comma) => {
                    t += 1;
                    continue;
                }
                _ => {}
            }
            let name = (self.kind(t) == Some(Kind::Atom) && self.kind(t + 1) == Some(Kind::Colon))
                .then(|| {
                    let n = self.text(t);
                    n.strip_prefix("r#").unwrap_or(n)
                });
            out.push(Element { start: t, name });
            // Skip to the next top-level comma or the group's end.
            while let Some(k) = self.kind(t) {
                match k {
                    Kind::Open(_) => t = self.skip_group(t),
                    Kind::Comma | Kind::Close => break,
                    _ => t += 1,
                }
            }
        }
    }

    /// The single unnamed element of a newtype-like payload (`Some(x)`, `Polygon([..])`),
    /// if the group at `open` is one and `x` is itself bracketed.
    fn newtype_payload(&self, open: usize) -> Option<usize> {
        if self.kind(open) != Some(Kind::Open(b'(')) {
            return None;
        }
        match self.elements(open).as_slice() {
            [only] if only.name.is_none() && self.group_of(only.start).is_some() => {
                Some(only.start)
            }
            _ => None,
        }
    }

    /// From the value at `v`, one step along the path: the token where the item starts
    /// (a field's name, an element's value) and the token of its value.
    fn step(&self, mut v: usize, seg: &PathSeg) -> Option<(usize, usize)> {
        // Each loop turn unwraps one newtype payload, so it ends within the token count.
        loop {
            let open = self.group_of(v)?;
            let elements = self.elements(open);
            match seg {
                PathSeg::Field(name) => {
                    if let Some(e) = elements.iter().find(|e| e.name == Some(name)) {
                        return Some((e.start, e.value()));
                    }
                }
                PathSeg::Index(i) => {
                    if self.kind(open) == Some(Kind::Open(b'[')) {
                        let e = elements.get(*i)?;
                        return Some((e.start, e.value()));
                    }
                    if self.newtype_payload(open).is_none() {
                        let e = elements.get(*i).filter(|e| e.name.is_none())?;
                        return Some((e.start, e.value()));
                    }
                }
            }
            v = self.newtype_payload(open)?;
        }
    }

    /// Byte offset of the item at `path`, or of the deepest enclosing item found.
    fn follow(&self, path: &ItemPath) -> usize {
        let mut value = self.root();
        let mut found = self.offset(value);
        for seg in &path.0 {
            match self.step(value, seg) {
                Some((item, v)) => {
                    found = self.offset(item);
                    value = v;
                }
                None => break,
            }
        }
        if found == self.source.len() { 0 } else { found }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn path(s: &str) -> ItemPath {
        // A tiny parser for test paths such as `parts[2].footprint`; field names must live
        // for 'static, so they are leaked (tests only).
        let mut p = ItemPath::default();
        for part in s.split('.') {
            let (name, rest) = part.split_once('[').unwrap_or((part, ""));
            if !name.is_empty() {
                p = p.field(Box::leak(name.to_string().into_boxed_str()));
            }
            for idx in rest.split('[') {
                if let Some(n) = idx.strip_suffix(']') {
                    p = p.index(n.parse().unwrap());
                }
            }
        }
        p
    }

    /// Checks that `path` is located at the `^` under line `line` of the text: the text
    /// marks the expected spot by a line holding only spaces and a `^`, which is removed.
    fn check(marked: &str, p: &str) {
        let mut src = String::new();
        let mut want = None;
        for l in marked.lines() {
            if l.trim() == "^" {
                let line = src.lines().count();
                want = Some(Location {
                    line,
                    column: l.find('^').unwrap() + 1,
                });
            } else {
                src.push_str(l);
                src.push('\n');
            }
        }
        assert_eq!(locate(&src, &path(p)), want.unwrap(), "path {p} in\n{src}");
    }

    #[test]
    fn fields_and_indices() {
        check(
            "(name: \"x\", parts: [\n  (reference: \"R1\"),\n  (reference: \"R2\", footprint: Chip(\"0001\")),\n                    ^\n])",
            "parts[1].footprint",
        );
        check(
            "(parts: [\n  (reference: \"R1\"),\n  (reference: \"R2\"),\n  ^\n])",
            "parts[1]",
        );
        check(
            "Board(\n  name: \"x\",\n  rules: (clearance: -1),\n          ^\n)",
            "rules.clearance",
        );
    }

    #[test]
    fn enum_and_some_payloads() {
        check(
            "(outline: Polygon([(0, 0), (1, 0),\n (2, 2)]))\n ^",
            "outline[2]",
        );
        check(
            "(outline: Rect(min: (0, 0),\n max: (1, 1)))\n ^",
            "outline.max",
        );
        check("(p: Some((seed: 1,\n  energy: 2)))\n  ^", "p.energy");
        check(
            "(nets: [(name: \"a\", pins: [\"R1.1\",\n \"R9.1\"])])\n ^",
            "nets[0].pins[1]",
        );
        check("(pair: (1.0,\n  2.0))\n  ^", "pair[1]");
    }

    #[test]
    fn comments_strings_and_attributes_are_skipped() {
        let src = concat!(
            "#![enable(implicit_some)]\n",
            "// parts: [ (reference: \"X\") ]\n",
            "( /* nested /* parts: [ */ still comment */\n",
            "  name: \"tricky \\\" , parts: [\",\n",
            "  value: r#\"raw \" ], ( \"#,\n",
            "  c: '\\'', d: ')', e: b\"x)\", f: br#\"(\"#, g: b'(',\n",
            "  parts: [ (reference: \"R1\"), (reference: \"R2\") ],\n",
            ")\n",
        );
        assert_eq!(
            locate(src, &path("parts[1].reference")),
            Location {
                line: 7,
                column: 32
            }
        );
    }

    #[test]
    fn falls_back_to_the_enclosing_item() {
        let src = "(\n  parts: [\n    (reference: \"R1\"),\n  ],\n)";
        // parts[5] does not exist: the `parts` field is the nearest item found.
        assert_eq!(
            locate(src, &path("parts[5].footprint")),
            Location { line: 2, column: 3 }
        );
        // rules are not written at all: the document start.
        assert_eq!(
            locate(src, &path("rules.clearance")),
            Location { line: 1, column: 1 }
        );
        assert_eq!(locate("", &path("a.b")), Location { line: 1, column: 1 });
    }

    #[test]
    fn offsets_and_locations_agree() {
        let src = "ab\nçd\n\nlast";
        for (i, _) in src.char_indices() {
            assert_eq!(Location::of_offset(src, i).offset_in(src), i);
        }
        assert_eq!(Location { line: 9, column: 9 }.offset_in(src), src.len());
        assert_eq!(Location { line: 1, column: 9 }.offset_in(src), 2);
    }

    #[test]
    fn columns_count_characters() {
        let src = "(name: \"Ølçü\", x: 1)";
        assert_eq!(
            locate(src, &path("x")),
            Location {
                line: 1,
                column: 16
            }
        );
    }

    proptest::proptest! {
        #[test]
        fn any_text_and_path_give_a_location_inside_the_text(
            src in "[(){}\\[\\],:\"'#/*rb a-z0-9\n\\\\]{0,120}",
            segs in proptest::collection::vec((proptest::bool::ANY, 0usize..4), 0..5),
        ) {
            let mut p = ItemPath::default();
            for (field, i) in segs {
                p = if field { p.field(["a", "b", "r", "parts"][i]) } else { p.index(i) };
            }
            let at = locate(&src, &p);
            let lines: Vec<&str> = src.split('\n').collect();
            proptest::prop_assert!(at.line >= 1 && at.line <= lines.len());
            proptest::prop_assert!(at.column >= 1);
            proptest::prop_assert!(at.column <= lines[at.line - 1].chars().count() + 1);
        }
    }

    #[test]
    fn unterminated_input_does_not_panic() {
        for src in [
            "(a: \"unterminated",
            "(a: r##\"raw",
            "/* open",
            "(a: [(b: 1, ",
            "b",
            "r#",
            "(a: '\\",
            "))))(((",
        ] {
            let _ = locate(src, &path("a[0].b"));
        }
    }
}
