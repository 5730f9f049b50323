//! The command line as a program among others: a closed standard output ends it quietly,
//! output paths are checked before the work, and each exit code means one thing
//! (README.md, "Exit codes").

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

fn lehr() -> Command {
    Command::new(env!("CARGO_BIN_EXE_lehr"))
}

fn sample() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron")
}

/// Runs `lehr ARGS` with its standard output a pipe whose reading end is closed before
/// it starts (as `lehr ... | head -c 0` would, at its earliest): no panic, code 141.
fn with_closed_stdout(args: &[&str], dir: &Path) {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let out = lehr()
        .args(args)
        .current_dir(dir)
        .stdout(writer)
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!err.contains("panicked"), "{args:?}: {err}");
    assert_eq!(out.status.code(), Some(141), "{args:?}: {err}");
}

#[test]
fn a_closed_standard_output_ends_quietly() {
    let dir = tempfile::tempdir().unwrap();
    let s = sample();
    let s = s.to_str().unwrap();
    with_closed_stdout(
        &[
            "place",
            s,
            "--moves",
            "2000",
            "--out",
            "p.board.ron",
            "--json",
        ],
        dir.path(),
    );
    with_closed_stdout(
        &["place", s, "--moves", "2000", "--out", "p.board.ron"],
        dir.path(),
    );
    with_closed_stdout(&["check", s], dir.path());
    with_closed_stdout(&["check", s, "--json"], dir.path());
    with_closed_stdout(
        &["width", "--current", "2", "--rise", "10", "--copper", "1"],
        dir.path(),
    );
}

/// Each command that writes a board refuses an output in a missing folder with code 1
/// and one line, before its work, and writes nothing.
#[test]
fn outputs_in_a_missing_folder_are_refused_before_the_work() {
    let dir = tempfile::tempdir().unwrap();
    let s = sample();
    let s = s.to_str().unwrap();
    let csv =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/netlists/vent-controller.csv");
    let runs: Vec<Vec<&str>> = vec![
        vec!["place", s, "--out", "missing/p.board.ron"],
        vec![
            "place",
            s,
            "--out",
            "p.board.ron",
            "--log",
            "missing/run.csv",
        ],
        vec!["route", s, "--out", "missing/r.board.ron"],
        vec![
            "import",
            csv.to_str().unwrap(),
            "--out",
            "missing/i.board.ron",
        ],
        vec!["export", s, "--svg", "missing/b.svg"],
        vec!["export", s, "--centroid", "missing/b.csv"],
        vec!["export", s, "--gerber", "g", "--drill", "missing/b.drl"],
    ];
    for args in runs {
        let t0 = std::time::Instant::now();
        let out = lehr().args(&args).current_dir(dir.path()).output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(1), "{args:?}: {err}");
        assert_eq!(err.trim_end().lines().count(), 1, "{args:?}: {err}");
        assert!(
            err.starts_with("lehr: error: ") && err.contains("does not exist"),
            "{args:?}: {err}"
        );
        // The default budget takes seconds: the refusal comes before it.
        assert!(t0.elapsed().as_secs_f64() < 5.0, "{args:?}");
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            0,
            "{args:?} wrote something"
        );
    }
}

/// A folder, a device or a named pipe where the board should go is refused by name.
#[cfg(unix)]
#[test]
fn outputs_that_are_not_regular_files_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("a-folder")).unwrap();
    let fifo = dir.path().join("a-fifo");
    let made = Command::new("mkfifo").arg(&fifo).status();
    let s = sample();
    let s = s.to_str().unwrap();
    let mut cases = vec![("a-folder", "a folder"), ("/dev/null", "a device")];
    if made.is_ok_and(|st| st.success()) {
        cases.push(("a-fifo", "named pipe"));
    }
    for (target, what) in cases {
        for cmd in ["place", "route"] {
            let out = lehr()
                .args([cmd, s, "--out", target])
                .current_dir(dir.path())
                .output()
                .unwrap();
            let err = String::from_utf8_lossy(&out.stderr);
            assert_eq!(out.status.code(), Some(1), "{cmd} {target}: {err}");
            assert!(err.contains(what), "{cmd} {target}: {err}");
        }
    }
}

/// Usage errors are clap's 2; a result with problems is 3 (`lehr check` on a board whose
/// nets are not routed).
#[test]
fn usage_is_2_and_problems_are_3() {
    let out = lehr().args(["place", "--no-such-flag"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = lehr().arg("check").arg(sample()).output().unwrap();
    assert_eq!(out.status.code(), Some(3));
}
