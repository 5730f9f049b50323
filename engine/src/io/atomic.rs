//! Replacing a file atomically: the new contents go to a temporary file in the same
//! directory, which is flushed to disk and then renamed over the target. A crash or an
//! error at any point leaves either the old file or the new one, never a torn mix.
//!
//! Only regular files are replaced: a target that is a directory, a device, a named pipe
//! or a socket is refused (a rename would put a regular file in its place). A symbolic
//! link is followed and its target replaced.
//!
//! The temporary file is named `.NAME.lehr-tmp-PID-N` (hidden, beside `NAME`). A save
//! killed between writing and renaming leaves it behind; the next save of the same
//! target removes such leftovers once the process that wrote them is gone.

use std::ffi::{OsStr, OsString};
use std::fs::{self, File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU32, Ordering};
use std::time::{Duration, SystemTime};

/// The marker between the target's name and the process id in a temporary file's name.
const TEMP_MARK: &str = ".lehr-tmp-";

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
    let resolved = fs::canonicalize(target).unwrap_or_else(|_| target.to_path_buf());
    let existing = match fs::metadata(&resolved) {
        Ok(meta) => Some(meta),
        Err(e) if e.kind() == io::ErrorKind::NotFound => None,
        Err(e) => return Err(e),
    };
    if let Some(meta) = &existing
        && !meta.is_file()
    {
        return Err(not_regular(target, &resolved, meta));
    }
    remove_stale_temps(&resolved);
    let (tmp_path, mut file) = create_temp_beside(&resolved)?;
    let result = (|| {
        write(&mut file)?;
        file.flush()?;
        if let Some(meta) = &existing {
            file.set_permissions(meta.permissions())?;
        }
        file.sync_all()?;
        drop(file);
        fs::rename(&tmp_path, &resolved)
    })();
    match result {
        Ok(()) => {
            sync_dir(&resolved);
            Ok(())
        }
        Err(e) => {
            // Best effort: the temporary file is ours and useless now.
            let _ = fs::remove_file(&tmp_path);
            Err(e)
        }
    }
}

/// The error for an existing target that is not a regular file: what it is, and where a
/// symbolic link led.
fn not_regular(target: &Path, resolved: &Path, meta: &fs::Metadata) -> io::Error {
    let what = kind_of(meta);
    let via = if resolved == target {
        String::new()
    } else {
        format!(" ({} leads there)", target.display())
    };
    let kind = if meta.is_dir() {
        io::ErrorKind::IsADirectory
    } else {
        io::ErrorKind::InvalidInput
    };
    io::Error::new(
        kind,
        format!(
            "{} is {what}{via}, not a regular file; only regular files are written",
            resolved.display()
        ),
    )
}

/// What kind of file system entry `meta` describes, with an article ("a directory").
fn kind_of(meta: &fs::Metadata) -> &'static str {
    let ft = meta.file_type();
    if ft.is_dir() {
        return "a directory";
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_char_device() {
            return "a character device";
        }
        if ft.is_block_device() {
            return "a block device";
        }
        if ft.is_fifo() {
            return "a named pipe (FIFO)";
        }
        if ft.is_socket() {
            return "a socket";
        }
    }
    "a special file"
}

/// The directory holding `target` ("." for a bare file name).
fn parent_dir(target: &Path) -> &Path {
    match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

/// The file name of `target`, or an error for a path that names no file (`/`, `..`).
fn file_name(target: &Path) -> io::Result<&OsStr> {
    target
        .file_name()
        .ok_or_else(|| io::Error::new(io::ErrorKind::InvalidInput, "the path names no file"))
}

/// The start of every temporary file name for `name`: `.NAME.lehr-tmp-`.
fn temp_prefix(name: &OsStr) -> OsString {
    let mut prefix = OsString::from(".");
    prefix.push(name);
    prefix.push(TEMP_MARK);
    prefix
}

/// Creates a new, uniquely named hidden file next to `target`.
fn create_temp_beside(target: &Path) -> io::Result<(PathBuf, File)> {
    static COUNTER: AtomicU32 = AtomicU32::new(0);
    let prefix = temp_prefix(file_name(target)?);
    let dir = parent_dir(target);
    let mut last_err = None;
    for _ in 0..16 {
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let mut tmp_name = prefix.clone();
        tmp_name.push(format!("{}-{n}", std::process::id()));
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

/// The process id in a temporary file name of `target`, when `entry` is one: lehr's own
/// pattern `.NAME.lehr-tmp-PID-N`, or the earlier `.NAME.PID-N.tmp`.
fn temp_owner(entry: &OsStr, name: &OsStr) -> Option<u32> {
    let entry = entry.to_str()?;
    let name = name.to_str()?;
    let rest = entry.strip_prefix('.')?.strip_prefix(name)?;
    let ids = if let Some(ids) = rest.strip_prefix(TEMP_MARK) {
        ids
    } else {
        rest.strip_prefix('.')?.strip_suffix(".tmp")?
    };
    let (pid, n) = ids.split_once('-')?;
    let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    if digits(pid) && digits(n) {
        pid.parse().ok()
    } else {
        None
    }
}

/// Whether process `pid` may still be running (and so may still be writing its
/// temporary file). `true` when it cannot be told.
fn may_be_running(pid: u32) -> bool {
    if pid == std::process::id() {
        return true;
    }
    let proc = Path::new("/proc");
    if proc.join("self").exists() {
        proc.join(pid.to_string()).exists()
    } else {
        true
    }
}

/// How long a leftover of a finished process is kept anyway (a save over a network file
/// system may be seen by a process whose id this machine does not know).
const STALE_AFTER_DEAD: Duration = Duration::from_secs(60);
/// How long a leftover is kept when its process cannot be told dead.
const STALE_AFTER: Duration = Duration::from_secs(24 * 3600);

/// Removes temporary files of earlier saves of `target` that were killed before their
/// rename: only names of lehr's own pattern for this target, only regular files, and
/// only when their process is gone (or they are a day old). Best effort: errors are
/// ignored, since the save itself does not depend on it.
fn remove_stale_temps(target: &Path) {
    let Ok(name) = file_name(target) else {
        return;
    };
    let Ok(entries) = fs::read_dir(parent_dir(target)) else {
        return;
    };
    let now = SystemTime::now();
    for entry in entries.flatten() {
        let Some(pid) = temp_owner(&entry.file_name(), name) else {
            continue;
        };
        let Ok(meta) = entry.metadata() else {
            continue;
        };
        if !meta.is_file() {
            continue;
        }
        let age = meta
            .modified()
            .ok()
            .and_then(|m| now.duration_since(m).ok())
            .unwrap_or_default();
        let stale = if may_be_running(pid) {
            age > STALE_AFTER
        } else {
            age > STALE_AFTER_DEAD
        };
        if stale {
            let _ = fs::remove_file(entry.path());
        }
    }
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

    #[test]
    fn recognises_only_its_own_temporary_names() {
        let name = OsStr::new("a.board.ron");
        let owner = |e: &str| temp_owner(OsStr::new(e), name);
        assert_eq!(owner(".a.board.ron.lehr-tmp-123-4"), Some(123));
        assert_eq!(owner(".a.board.ron.123-4.tmp"), Some(123));
        assert_eq!(owner(".a.board.ron.lehr-tmp-123-"), None);
        assert_eq!(owner(".a.board.ron.lehr-tmp-x-4"), None);
        assert_eq!(owner(".b.board.ron.lehr-tmp-123-4"), None);
        assert_eq!(owner("a.board.ron"), None);
        assert_eq!(owner(".a.board.ron.lehr-tmp-123-4.bak"), None);
        assert_eq!(owner(".a.board.ron.123-4.tmp.keep"), None);
    }
}
