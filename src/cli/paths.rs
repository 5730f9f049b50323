//! Output paths checked before the long work starts: the folder must exist and take new
//! files, and a target that exists already must be a regular file (or a symbolic link to
//! one). Devices, pipes, sockets and folders are refused with a clear message.

use std::fs;
use std::path::{Path, PathBuf};

use anyhow::{Result, bail};

/// The folder a file path is written into (`.` for a bare name).
fn folder_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Refuses `dir` unless it is an existing folder that takes new files (tried by making
/// and removing a small probe file, which the permission bits alone cannot tell).
fn writable_folder(dir: &Path, for_file: &Path) -> Result<()> {
    match fs::metadata(dir) {
        Err(_) => bail!(
            "cannot write {}: the folder {} does not exist",
            for_file.display(),
            dir.display()
        ),
        Ok(m) if !m.is_dir() => bail!(
            "cannot write {}: {} is not a folder",
            for_file.display(),
            dir.display()
        ),
        Ok(_) => {}
    }
    let probe = dir.join(format!(".lehr-write-test-{}", std::process::id()));
    match fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&probe)
    {
        Ok(f) => {
            drop(f);
            let _ = fs::remove_file(&probe);
            Ok(())
        }
        // Left over by a run that was killed: the folder takes files all the same.
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
            let _ = fs::remove_file(&probe);
            Ok(())
        }
        Err(e) => bail!(
            "cannot write {}: the folder {} does not take new files ({e})",
            for_file.display(),
            dir.display()
        ),
    }
}

/// What is at `path` when it exists and is not a regular file: "a folder", "a device"...
fn not_regular(path: &Path) -> Option<&'static str> {
    // `metadata` follows symbolic links: a link to a regular file is fine.
    let m = fs::metadata(path).ok()?;
    let t = m.file_type();
    if t.is_file() {
        return None;
    }
    if t.is_dir() {
        return Some("a folder");
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if t.is_fifo() {
            return Some("a named pipe (FIFO)");
        }
        if t.is_socket() {
            return Some("a socket");
        }
        if t.is_block_device() || t.is_char_device() {
            return Some("a device");
        }
    }
    Some("not a regular file")
}

/// Checks that a file can be written at `path`: its folder exists and takes files, and
/// what is there already (if anything) is a regular file or a link to one.
pub fn output_file(path: &Path) -> Result<()> {
    if let Some(what) = not_regular(path) {
        bail!(
            "cannot write {}: it is {what}, not a regular file",
            path.display()
        );
    }
    writable_folder(&folder_of(path), path)
}

/// Checks that files can be written into the folder `dir`, which is made if missing:
/// an existing `dir` must be a folder that takes files, else its nearest existing
/// ancestor must.
pub fn output_folder(dir: &Path) -> Result<()> {
    if let Ok(m) = fs::metadata(dir) {
        if !m.is_dir() {
            bail!("cannot write into {}: it is not a folder", dir.display());
        }
        return writable_folder(dir, dir);
    }
    let mut up = folder_of(dir);
    while fs::metadata(&up).is_err() {
        match up.parent() {
            Some(p) if !p.as_os_str().is_empty() => up = p.to_path_buf(),
            _ => {
                up = PathBuf::from(".");
                break;
            }
        }
    }
    writable_folder(&up, dir)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn missing_folders_folders_and_fifos_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        output_file(&d.join("new.ron")).unwrap();
        std::fs::write(d.join("old.ron"), b"x").unwrap();
        output_file(&d.join("old.ron")).unwrap();
        let e = output_file(&d.join("missing/new.ron")).unwrap_err();
        assert!(e.to_string().contains("does not exist"), "{e}");
        let e = output_file(d).unwrap_err();
        assert!(e.to_string().contains("a folder"), "{e}");
        output_folder(&d.join("a/b")).unwrap();
        let e = output_folder(&d.join("old.ron")).unwrap_err();
        assert!(e.to_string().contains("not a folder"), "{e}");
        #[cfg(unix)]
        {
            std::os::unix::fs::symlink(d.join("old.ron"), d.join("link.ron")).unwrap();
            output_file(&d.join("link.ron")).unwrap();
            let e = output_file(Path::new("/dev/null")).unwrap_err();
            assert!(e.to_string().contains("a device"), "{e}");
        }
        let names: Vec<_> = std::fs::read_dir(d).unwrap().collect();
        assert_eq!(names.len(), if cfg!(unix) { 2 } else { 1 }, "no probe left");
    }
}
