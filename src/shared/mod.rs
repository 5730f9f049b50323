//! What the command line and the window both use, kept below both so that neither
//! imports the other for it: the built-in sample board, board file names, and the export
//! set (which files a board's export writes, and their bytes).
//!
//! **Invariant**: this module imports neither `crate::cli` nor `crate::app`; the one thing
//! it needs from the window's drawing code (the pictures) is handed in by the caller.

pub mod export_set;

use std::path::Path;

/// The board shown when no file is given: an invented bench LED dimmer.
pub const SAMPLE_BOARD: &str = include_str!("../../sample-boards/led-dimmer.board.ron");
/// The name the built-in sample board goes by in messages and the window's title.
pub const SAMPLE_NAME: &str = "led-dimmer.board.ron (built in)";

/// A board file's name without `.board.ron` (or `.ron`); `None` if it has no name that
/// is text.
pub fn board_stem(path: &Path) -> Option<&str> {
    let file = path.file_name().and_then(|f| f.to_str())?;
    Some(
        file.strip_suffix(".board.ron")
            .or_else(|| file.strip_suffix(".ron"))
            .unwrap_or(file),
    )
}
