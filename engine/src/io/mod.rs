//! Board files on disk: reading them with errors a user can act on, and writing them so
//! that a failed save never destroys the previous file.
//!
//! A board file is RON text holding one [`Board`] (the format is described in
//! docs/board-format.md); the recommended name ends in [`BOARD_EXTENSION`]. Reading has two
//! layers of errors, both reported as `file:line:column: message`:
//! - syntax and type errors found by the RON parser (a missing comma, a string where a
//!   number belongs, an unknown field);
//! - problems found by [`resolve`] (an unknown footprint size, a pin on two nets, a board
//!   too small), which name an item path that [`locate`] turns into a line and column.
//!
//! Optional values may be written bare (`at: (10, 5)`) or as `Some(..)`; `None` or leaving
//! the field out means absent.

mod atomic;
pub mod connections;
pub mod edif;
pub mod formats;
pub mod import;
mod locate;

use std::fmt::Write as _;
use std::io;
use std::path::{Path, PathBuf};

use ron::extensions::Extensions;
use thiserror::Error;

use crate::model::validate::resolve;
use crate::model::{Board, Design, Problem};

pub use formats::{Format, ImportFiles, import_file};
pub use import::{ImportError, ImportOptions, Imported, OutlineSize};
pub use locate::{Location, Locator, locate};

/// The recommended ending of a board file's name, as in `thermostat.board.ron`. (File
/// dialogs that filter by the last extension only should offer `ron`.)
pub const BOARD_EXTENSION: &str = "board.ron";

/// At most this many problems are listed when a [`LoadError::Problems`] is displayed; the
/// rest are counted. The error itself keeps them all.
pub const MAX_SHOWN_PROBLEMS: usize = 20;

/// The comment written at the top of every saved board file.
const HEADER: &str = "// lehr board file, format described in docs/board-format.md.\n\
// Lengths in mm; angles in degrees counter-clockwise, multiples of 90.\n";

/// A problem found by the board checks, with where its item starts in the file.
#[derive(Clone, Debug, PartialEq)]
pub struct LocatedProblem {
    pub at: Location,
    pub problem: Problem,
}

/// Why a board file could not be loaded.
#[derive(Debug, Error)]
pub enum LoadError {
    /// The file could not be read at all. (The cause is part of the message, so it is
    /// not repeated as the error's source.)
    #[error("cannot read {}: {cause}", path.display())]
    Io { path: PathBuf, cause: io::Error },
    /// The text is not a well-formed board file (RON syntax, wrong types, unknown or
    /// missing fields, not UTF-8).
    #[error("{file}:{at}: {message}")]
    Syntax {
        file: String,
        at: Location,
        message: String,
    },
    /// The file is well-formed but the board fails its checks; all problems, in file order.
    #[error("{}", list_problems(.file, .problems))]
    Problems {
        file: String,
        problems: Vec<LocatedProblem>,
    },
}

/// One line per problem, `file:line:col: path: message`, then how many were left out.
fn list_problems(file: &str, problems: &[LocatedProblem]) -> String {
    let mut out = String::new();
    for (i, p) in problems.iter().take(MAX_SHOWN_PROBLEMS).enumerate() {
        if i > 0 {
            out.push('\n');
        }
        let _ = write!(out, "{file}:{}: {}", p.at, p.problem);
    }
    let hidden = problems.len().saturating_sub(MAX_SHOWN_PROBLEMS);
    if hidden > 0 {
        let _ = write!(
            out,
            "\n{file}: and {hidden} more problem{}",
            if hidden == 1 { "" } else { "s" }
        );
    }
    out
}

/// Why a board could not be saved. The previous file, if any, is unchanged.
#[derive(Debug, Error)]
pub enum SaveError {
    /// (The cause is part of the message, so it is not repeated as the error's source.)
    #[error("cannot write {}: {cause}", path.display())]
    Io { path: PathBuf, cause: io::Error },
    #[error("cannot write the board as RON: {0}")]
    Format(ron::Error),
}

/// The RON options of board files: bare optional values allowed, RON's default nesting
/// limit (so hostile input cannot overflow the stack).
fn ron_options() -> ron::Options {
    ron::Options::default().with_default_extension(Extensions::IMPLICIT_SOME)
}

/// Reads, parses and checks a board file.
pub fn load_board(path: impl AsRef<Path>) -> Result<Design, LoadError> {
    let path = path.as_ref();
    let bytes = read(path)?;
    let file = path.display().to_string();
    parse_board(decode(&bytes, &file)?, &file)
}

/// Reads and parses a board file without checking it (for tools that show or repair a
/// board with problems). [`resolve`] the result before handing it to the engine.
pub fn load_board_unchecked(path: impl AsRef<Path>) -> Result<Board, LoadError> {
    let path = path.as_ref();
    let bytes = read(path)?;
    let file = path.display().to_string();
    parse_board_unchecked(decode(&bytes, &file)?, &file)
}

/// Parses and checks board file text; `file_name` only labels the errors.
pub fn parse_board(source: &str, file_name: &str) -> Result<Design, LoadError> {
    let board = parse_board_unchecked(source, file_name)?;
    resolve(board).map_err(|problems| {
        let locator = Locator::new(source);
        let mut located: Vec<LocatedProblem> = problems
            .into_iter()
            .map(|problem| LocatedProblem {
                at: locator.locate(&problem.path),
                problem,
            })
            .collect();
        // Stable: problems at the same spot keep the checks' order.
        located.sort_by_key(|p| p.at);
        LoadError::Problems {
            file: file_name.to_string(),
            problems: located,
        }
    })
}

/// Parses board file text without checking it; `file_name` only labels the errors.
pub fn parse_board_unchecked(source: &str, file_name: &str) -> Result<Board, LoadError> {
    ron_options()
        .from_str(source)
        .map_err(|e: ron::error::SpannedError| LoadError::Syntax {
            file: file_name.to_string(),
            at: syntax_error_location(source, &e),
            message: crate::model::text::escape_controls(&e.code.to_string()).into_owned(),
        })
}

/// Where a RON error starts, moved past whitespace so that it points at the offending
/// text (`parts: [] garbage` points at `garbage`, not at the space before it).
fn syntax_error_location(source: &str, e: &ron::error::SpannedError) -> Location {
    let at = Location {
        line: e.span.start.line,
        column: e.span.start.col,
    };
    let offset = at.offset_in(source);
    let rest = &source[offset..];
    let next = rest.trim_start();
    if next.is_empty() {
        at
    } else {
        Location::of_offset(source, offset + rest.len() - next.len())
    }
}

/// The board as board file text: a header comment, then RON with one line per top-level
/// field and per list element.
pub fn board_to_string(board: &Board) -> Result<String, SaveError> {
    // Two levels of line breaks: one line per top-level field and per list element (a
    // part, a net), so that moving a part changes one line of a diff.
    let config = ron::ser::PrettyConfig::new()
        .indentor("    ")
        .depth_limit(2);
    let body = ron_options()
        .to_string_pretty(board, config)
        .map_err(SaveError::Format)?;
    Ok(format!("{HEADER}{body}\n"))
}

/// Writes the board to `path` atomically: the text goes to a temporary file beside it,
/// is synced to disk, then renamed over `path`. On any error the old file is untouched.
pub fn save_board(path: impl AsRef<Path>, board: &Board) -> Result<(), SaveError> {
    let path = path.as_ref();
    let text = board_to_string(board)?;
    atomic::write_atomically(path, text.as_bytes()).map_err(|cause| SaveError::Io {
        path: path.to_path_buf(),
        cause,
    })
}

/// Writes any file atomically, as [`save_board`] does (for the fabrication exports and
/// other outputs): on any error the old file, if any, is untouched.
pub fn write_file(path: impl AsRef<Path>, contents: &[u8]) -> Result<(), SaveError> {
    let path = path.as_ref();
    atomic::write_atomically(path, contents).map_err(|cause| SaveError::Io {
        path: path.to_path_buf(),
        cause,
    })
}

fn read(path: &Path) -> Result<Vec<u8>, LoadError> {
    std::fs::read(path).map_err(|cause| LoadError::Io {
        path: path.to_path_buf(),
        cause,
    })
}

/// The file's bytes as text (without a byte-order mark), or a syntax error at the first
/// byte that is not UTF-8.
fn decode<'a>(bytes: &'a [u8], file: &str) -> Result<&'a str, LoadError> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    std::str::from_utf8(bytes).map_err(|e| {
        let valid = &bytes[..e.valid_up_to()];
        // The prefix is valid UTF-8 by the error's own account.
        let text = std::str::from_utf8(valid).unwrap_or_default();
        LoadError::Syntax {
            file: file.to_string(),
            at: Location::of_offset(text, text.len()),
            message: "the file is not UTF-8 text".to_string(),
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn invalid_utf8_is_located() {
        let err = decode(b"(name: \"ok\",\n  value: \"\xFF\")", "x.board.ron").unwrap_err();
        assert_eq!(
            err.to_string(),
            "x.board.ron:2:11: the file is not UTF-8 text"
        );
        assert_eq!(decode(b"\xEF\xBB\xBF()", "x").unwrap(), "()");
    }
}
