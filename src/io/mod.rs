//! TEMPORARY minimal loader until the io branch lands (replaced by it on merge).
use std::path::Path;

use crate::model::{Board, Design};

#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct LoadError(String);

pub fn parse_board(source: &str, file: &str) -> Result<Design, LoadError> {
    let board: Board = ron::from_str(source).map_err(|e| LoadError(format!("{file}: {e}")))?;
    crate::model::resolve(board).map_err(|ps| {
        LoadError(
            ps.iter()
                .map(|p| format!("{file}: {}: {}", p.path, p.message))
                .collect::<Vec<_>>()
                .join("\n"),
        )
    })
}

pub fn load_board(path: &Path) -> Result<Design, LoadError> {
    let s =
        std::fs::read_to_string(path).map_err(|e| LoadError(format!("{}: {e}", path.display())))?;
    parse_board(&s, &path.display().to_string())
}

pub fn save_board(path: &Path, board: &Board) -> std::io::Result<()> {
    let s = ron::ser::to_string_pretty(board, ron::ser::PrettyConfig::default())
        .map_err(std::io::Error::other)?;
    std::fs::write(path, s)
}
