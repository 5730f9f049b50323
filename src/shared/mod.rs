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
/// The board's design name: [`board_stem`] without the stage suffixes lehr adds
/// (`.placed`, `.routed`), so names made from it do not stack
/// (`bike.placed.board.ron` -> `bike`).
pub fn design_stem(path: &Path) -> Option<&str> {
    let mut stem = board_stem(path)?;
    while let Some(s) = [".placed", ".routed"]
        .iter()
        .find_map(|suffix| stem.strip_suffix(suffix))
        .filter(|s| !s.is_empty())
    {
        stem = s;
    }
    Some(stem)
}

pub fn board_stem(path: &Path) -> Option<&str> {
    let file = path.file_name().and_then(|f| f.to_str())?;
    Some(
        file.strip_suffix(".board.ron")
            .or_else(|| file.strip_suffix(".ron"))
            .unwrap_or(file),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stage_suffixes_do_not_stack() {
        let stem = |p: &str| design_stem(Path::new(p)).map(str::to_string);
        assert_eq!(stem("a/bike.board.ron").as_deref(), Some("bike"));
        assert_eq!(stem("bike.placed.board.ron").as_deref(), Some("bike"));
        assert_eq!(
            stem("bike.placed.routed.board.ron").as_deref(),
            Some("bike")
        );
        assert_eq!(stem("v1.2.routed.ron").as_deref(), Some("v1.2"));
        // A name that is only a suffix keeps it.
        assert_eq!(stem(".placed.board.ron").as_deref(), Some(".placed"));
        assert_eq!(
            export_set::file_stem(Path::new("bike.placed.routed.board.ron")),
            "bike"
        );
    }
}
