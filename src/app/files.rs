//! Files: the native open, save and export dialogs, and the list of recent boards. The
//! dialogs may be unavailable (no desktop portal and no helper installed): then they
//! return `None` and the window says so.

use std::path::{Path, PathBuf};

/// How many recent boards the File menu lists.
pub const RECENT: usize = 8;

/// Puts `path` at the top of the recent list, without duplicates, at most [`RECENT`].
/// The path is kept absolute (against the current folder, `..` left as it is), so the
/// list works when lehr is started from another folder.
pub fn remember(recent: &mut Vec<PathBuf>, path: &Path) {
    let path = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    recent.retain(|p| *p != path);
    recent.insert(0, path);
    recent.truncate(RECENT);
}

/// Asks for a board file to open.
pub fn pick_board(folder: Option<&Path>) -> Option<PathBuf> {
    let mut d = rfd::FileDialog::new()
        .set_title("Open a board")
        .add_filter("board files", &["ron"])
        .add_filter("all files", &["*"]);
    if let Some(f) = folder {
        d = d.set_directory(f);
    }
    d.pick_file()
}

/// Asks where to save a board.
pub fn pick_save(folder: Option<&Path>, name: &str) -> Option<PathBuf> {
    let mut d = rfd::FileDialog::new()
        .set_title("Save the board")
        .add_filter("board files", &["ron"])
        .set_file_name(format!("{name}.{}", lehr_engine::io::BOARD_EXTENSION));
    if let Some(f) = folder {
        d = d.set_directory(f);
    }
    d.save_file()
}

/// Asks where to write a PNG picture.
pub fn pick_png(folder: Option<&Path>, name: &str) -> Option<PathBuf> {
    let mut d = rfd::FileDialog::new()
        .set_title("Export a picture of the board")
        .add_filter("PNG pictures", &["png"])
        .set_file_name(format!("{name}.png"));
    if let Some(f) = folder {
        d = d.set_directory(f);
    }
    d.save_file()
}

/// Asks for a netlist to import (a connection list or an EDIF file).
pub fn pick_netlist(folder: Option<&Path>) -> Option<PathBuf> {
    let mut d = rfd::FileDialog::new()
        .set_title("Import a netlist")
        .add_filter("netlists", &["csv", "tsv", "txt", "edif", "edf", "edn"])
        .add_filter("all files", &["*"]);
    if let Some(f) = folder {
        d = d.set_directory(f);
    }
    d.pick_file()
}

/// Asks for a folder to write the fabrication files into.
pub fn pick_folder(folder: Option<&Path>) -> Option<PathBuf> {
    let mut d = rfd::FileDialog::new().set_title("Export fabrication files into a folder");
    if let Some(f) = folder {
        d = d.set_directory(f);
    }
    d.pick_folder()
}

/// A file beside `netlist` with the same name up to its last extension and `suffix`
/// instead (`net.csv` and `parts.csv` give `net.parts.csv`), if it exists: the window
/// imports a connection list with its parts table, and an EDIF file with its footprint
/// mapping, when they lie beside it named so (docs/import-formats.md).
pub fn companion(netlist: &Path, suffix: &str) -> Option<PathBuf> {
    let stem = netlist.file_stem()?.to_str()?;
    let p = netlist.with_file_name(format!("{stem}.{suffix}"));
    p.is_file().then_some(p)
}

/// A short name for a board file: `dir/dimmer.board.ron` gives `dimmer`.
pub fn short_name(path: &Path) -> String {
    let file = path.file_name().and_then(|f| f.to_str()).unwrap_or("board");
    file.strip_suffix(".board.ron")
        .or_else(|| file.strip_suffix(".ron"))
        .unwrap_or(file)
        .to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recent_files_are_unique_newest_first_and_bounded() {
        let mut r = Vec::new();
        for i in 0..12 {
            remember(&mut r, Path::new(&format!("b{i}.board.ron")));
        }
        remember(&mut r, Path::new("b5.board.ron"));
        let here = std::env::current_dir().unwrap();
        assert_eq!(r.len(), RECENT);
        assert_eq!(r[0], here.join("b5.board.ron"));
        assert_eq!(r[1], here.join("b11.board.ron"));
        assert!(r.iter().all(|p| p.is_absolute()), "{r:?}");
        assert_eq!(r.iter().filter(|p| p.ends_with("b5.board.ron")).count(), 1);
    }

    #[test]
    fn companions_lie_beside_the_netlist() {
        let dir = std::env::temp_dir().join(format!("lehr-companion-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let net = dir.join("net.csv");
        std::fs::write(&net, "net,part,pin\n").unwrap();
        assert_eq!(companion(&net, "parts.csv"), None);
        std::fs::write(dir.join("net.parts.csv"), "reference,footprint\n").unwrap();
        assert_eq!(
            companion(&net, "parts.csv"),
            Some(dir.join("net.parts.csv"))
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn short_names_drop_the_board_extension() {
        assert_eq!(short_name(Path::new("/x/dimmer.board.ron")), "dimmer");
        assert_eq!(short_name(Path::new("a.ron")), "a");
        assert_eq!(short_name(Path::new("pic")), "pic");
    }
}
