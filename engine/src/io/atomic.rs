//! Replacing a file atomically: the new contents go to a temporary file in the same
//! directory, which is flushed to disk and then renamed over the target. A crash or an
//! error at any point leaves either the old file or the new one, never a torn mix.

use std::fs::{self, File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU32, Ordering};

/// Writes `contents` to `target` atomically (see the module docs).
pub(crate) fn write_atomically(target: &Path, contents: &[u8]) -> io::Result<()> {
    write_atomically_with(target, |file| file.write_all(contents))
}

/// [`write_atomically`] with the writing step passed in, so tests can make it fail.
pub(crate) fn write_atomically_with(
    target: &Path,
    write: impl FnOnce(&mut File) -> io::Result<()>,
) -> io::Result<()> {
    // Replace what a symbolic link points to, not the link itself.
    let target = fs::canonicalize(target).unwrap_or_else(|_| target.to_path_buf());
    let existing = fs::metadata(&target).ok();
    if existing.as_ref().is_some_and(|m| m.is_dir()) {
        return Err(io::Error::new(
            io::ErrorKind::IsADirectory,
            "the target is a directory",
        ));
    }
    let (tmp_path, mut file) = create_temp_beside(&target)?;
    let result = (|| {
        write(&mut file)?;
        file.flush()?;
        if let Some(meta) = &existing {
            file.set_permissions(meta.permissions())?;
        }
        file.sync_all()?;
        drop(file);
        fs::rename(&tmp_path, &target)
    })();
    match result {
        Ok(()) => {
            sync_dir(&target);
            Ok(())
        }
        Err(e) => {
            // Best effort: the temporary file is ours and useless now.
            let _ = fs::remove_file(&tmp_path);
            Err(e)
        }
    }
}

/// The directory holding `target` ("." for a bare file name).
fn parent_dir(target: &Path) -> &Path {
    match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

/// Creates a new, uniquely named hidden file next to `target`.
fn create_temp_beside(target: &Path) -> io::Result<(PathBuf, File)> {
    static COUNTER: AtomicU32 = AtomicU32::new(0);
    let name = target
        .file_name()
        .ok_or_else(|| io::Error::new(io::ErrorKind::InvalidInput, "the path names no file"))?;
    let dir = parent_dir(target);
    let mut last_err = None;
    for _ in 0..16 {
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let mut tmp_name = std::ffi::OsString::from(".");
        tmp_name.push(name);
        tmp_name.push(format!(".{}-{n}.tmp", std::process::id()));
        let tmp_path = dir.join(tmp_name);
        match OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp_path)
        {
            Ok(f) => return Ok((tmp_path, f)),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => last_err = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last_err.unwrap_or_else(|| io::Error::other("no free temporary file name")))
}

/// Flushes the directory entry of the rename to disk where the platform allows it. Errors
/// are ignored: the data itself is already synced and some file systems refuse this.
fn sync_dir(target: &Path) {
    #[cfg(unix)]
    if let Ok(dir) = File::open(parent_dir(target)) {
        let _ = dir.sync_all();
    }
    #[cfg(not(unix))]
    let _ = target;
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dir_entries(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn replaces_contents_and_leaves_no_temporary_file() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("a.board.ron");
        write_atomically(&target, b"first").unwrap();
        write_atomically(&target, b"second").unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"second");
        assert_eq!(dir_entries(dir.path()), ["a.board.ron"]);
    }

    #[test]
    fn a_failed_write_keeps_the_old_file() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("a.board.ron");
        fs::write(&target, b"old contents").unwrap();
        let err = write_atomically_with(&target, |f| {
            f.write_all(b"half of the new")?;
            Err(io::Error::other("disk full (simulated)"))
        })
        .unwrap_err();
        assert_eq!(err.to_string(), "disk full (simulated)");
        assert_eq!(fs::read(&target).unwrap(), b"old contents");
        assert_eq!(dir_entries(dir.path()), ["a.board.ron"]);
    }

    #[cfg(unix)]
    #[test]
    fn keeps_permissions_and_follows_symlinks() {
        use std::os::unix::fs::{PermissionsExt, symlink};
        let dir = tempfile::tempdir().unwrap();
        let real = dir.path().join("real.board.ron");
        let link = dir.path().join("link.board.ron");
        fs::write(&real, b"old").unwrap();
        fs::set_permissions(&real, fs::Permissions::from_mode(0o640)).unwrap();
        symlink(&real, &link).unwrap();
        write_atomically(&link, b"new").unwrap();
        assert!(
            fs::symlink_metadata(&link)
                .unwrap()
                .file_type()
                .is_symlink()
        );
        assert_eq!(fs::read(&real).unwrap(), b"new");
        let mode = fs::metadata(&real).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o640);
    }
}
