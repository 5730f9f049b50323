//! Bad input that must be refused or reported plainly: writes to targets that are not
//! regular files, leftovers of killed saves, numbers out of range, one-pin nets, and
//! messages that stay one readable line.

use std::fs;
use std::path::Path;
use std::time::{Duration, SystemTime};

use lehr_engine::io::{load_board, parse_board, save_board, write_file};
use lehr_engine::model::{self, Shape};

const FILE: &str = "t.board.ron";

/// A board text with the given outline, parts and nets.
fn board(outline: &str, parts: &str, nets: &str) -> String {
    format!(
        "(\n    name: \"t\",\n    outline: {outline},\n    parts: [{parts}],\n    nets: [{nets}],\n)\n"
    )
}

const RECT: &str = "Rect(min: (0, 0), max: (30, 20))";

/// The message of a board text that must fail to load.
fn error_of(src: &str) -> String {
    match parse_board(src, FILE) {
        Ok(_) => panic!("expected an error for\n{src}"),
        Err(e) => e.to_string(),
    }
}

fn dir_entries(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn small_board() -> lehr_engine::model::Board {
    parse_board(&board(RECT, "", ""), FILE).unwrap().board
}

// --- writes to targets that are not regular files -----------------------------------

#[test]
fn a_directory_target_is_refused_by_name() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("out.gbr");
    fs::create_dir(&target).unwrap();
    let err = write_file(&target, b"x").unwrap_err().to_string();
    assert!(err.contains(&target.display().to_string()), "{err}");
    assert!(err.contains("is a directory"), "{err}");
    assert!(target.is_dir());
    assert_eq!(dir_entries(dir.path()), ["out.gbr"]);
}

#[cfg(target_os = "linux")]
#[test]
fn a_fifo_target_is_refused_and_left_a_fifo() {
    use std::os::unix::fs::{FileTypeExt, symlink};
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe.board.ron");
    let c_path = std::ffi::CString::new(fifo.to_str().unwrap()).unwrap();
    // SAFETY: a valid NUL-terminated path; mkfifo only creates a file system entry.
    assert_eq!(unsafe { libc::mkfifo(c_path.as_ptr(), 0o644) }, 0);
    let err = save_board(&fifo, &small_board()).unwrap_err().to_string();
    assert!(err.contains(&fifo.display().to_string()), "{err}");
    assert!(err.contains("named pipe (FIFO)"), "{err}");
    assert!(fs::metadata(&fifo).unwrap().file_type().is_fifo());

    // Through a symbolic link: refused too, and the link named.
    let link = dir.path().join("link.board.ron");
    symlink(&fifo, &link).unwrap();
    let err = save_board(&link, &small_board()).unwrap_err().to_string();
    assert!(err.contains("named pipe (FIFO)"), "{err}");
    assert!(err.contains("link.board.ron leads there"), "{err}");
    assert!(fs::metadata(&fifo).unwrap().file_type().is_fifo());
    assert_eq!(
        dir_entries(dir.path()),
        ["link.board.ron", "pipe.board.ron"]
    );
}

#[cfg(unix)]
#[test]
fn device_files_are_refused() {
    use std::os::unix::fs::FileTypeExt;
    for dev in ["/dev/null", "/dev/full"] {
        let path = Path::new(dev);
        if !fs::metadata(path).is_ok_and(|m| m.file_type().is_char_device()) {
            continue;
        }
        let err = write_file(path, b"x").unwrap_err().to_string();
        assert!(
            err.contains(dev) && err.contains("a character device"),
            "{err}"
        );
        assert!(fs::metadata(path).unwrap().file_type().is_char_device());
    }
}

// --- leftovers of killed saves ------------------------------------------------------

/// Creates `name` in `dir`, last modified `age` ago.
fn leftover(dir: &Path, name: &str, age: Duration) {
    let path = dir.join(name);
    fs::write(&path, b"half a board").unwrap();
    let file = fs::File::options().write(true).open(&path).unwrap();
    file.set_modified(SystemTime::now() - age).unwrap();
}

#[test]
fn leftovers_of_killed_saves_are_removed() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("x.board.ron");
    let hour = Duration::from_secs(3600);
    // No process has these ids (Linux allows at most 2^22).
    let gone = 999_999_999u32;
    leftover(dir.path(), &format!(".x.board.ron.lehr-tmp-{gone}-0"), hour);
    leftover(dir.path(), &format!(".x.board.ron.{gone}-3.tmp"), hour);
    // Kept: another target's, a name of another pattern, one just written (perhaps by a
    // save on another machine) and one of a live process (this one).
    let kept = [
        format!(".x.board.ron.lehr-tmp-{}-99", std::process::id()),
        format!(".x.board.ron.lehr-tmp-{gone}-1"),
        format!(".y.board.ron.lehr-tmp-{gone}-0"),
        ".x.board.ron.lehr-tmp-notes".to_string(),
    ];
    leftover(dir.path(), &kept[0], hour);
    leftover(dir.path(), &kept[1], Duration::ZERO);
    leftover(dir.path(), &kept[2], hour);
    leftover(dir.path(), &kept[3], hour);

    let board = small_board();
    save_board(&target, &board).unwrap();
    assert_eq!(load_board(&target).unwrap().board, board);
    let mut expected: Vec<String> = kept.to_vec();
    expected.push("x.board.ron".to_string());
    expected.sort();
    assert_eq!(dir_entries(dir.path()), expected);
}

// --- every number checked -----------------------------------------------------------

#[test]
fn huge_rotations_are_refused_where_they_stand() {
    for (rotation, message) in [
        (
            "1e20",
            "R1: rotation 1e20 is outside the sane range -360000 to 360000 degrees",
        ),
        ("-1e20", "rotation -1e20 is outside the sane range"),
        ("1e16", "rotation 1e16 is outside the sane range"),
        ("360090", "rotation 360090 is outside the sane range"),
        ("1e308", "rotation 1e308 is outside the sane range"),
        ("45", "R1: rotation 45 is not a multiple of 90 degrees"),
        ("NaN", "R1: rotation NaN is not a multiple of 90 degrees"),
        ("inf", "R1: rotation inf is not a multiple of 90 degrees"),
    ] {
        let src = board(
            RECT,
            &format!("(reference: \"R1\", footprint: Chip(\"0603\"), rotation: {rotation})"),
            "",
        );
        let err = error_of(&src);
        assert!(
            err.starts_with(&format!("{FILE}:4:56: parts[0].rotation: ")),
            "{err}"
        );
        assert!(err.contains(message), "{rotation}: {err}");
    }
    for rotation in ["360000", "-90", "270.0000000001"] {
        let src = board(
            RECT,
            &format!("(reference: \"R1\", footprint: Chip(\"0603\"), rotation: {rotation})"),
            "",
        );
        assert!(parse_board(&src, FILE).is_ok(), "{rotation}");
    }
}

/// Every number of the board file, set to values out of range, is refused with its
/// item named.
#[test]
fn every_number_is_checked() {
    let part = |at: &str, fp: &str| format!("(reference: \"R1\", footprint: {fp}, at: {at})");
    let chip = "Chip(\"0603\")";
    let bad = ["1e20", "-1e20", "NaN", "inf", "1e308"];
    for v in bad {
        let cases: Vec<(String, &str)> = vec![
            (
                board(&format!("Rect(min: (0, 0), max: ({v}, 20))"), "", ""),
                "outline",
            ),
            (
                board(&format!("Polygon([(0, 0), ({v}, 0), (0, 9)])"), "", ""),
                "outline[1]",
            ),
            (
                board(RECT, &part(&format!("({v}, 1)"), chip), ""),
                "parts[0].at",
            ),
            (
                board(
                    RECT,
                    &part("(5, 5)", &format!("Radial(pitch: {v}, diameter: 5)")),
                    "",
                ),
                "parts[0].footprint",
            ),
            (
                board(
                    RECT,
                    &part(
                        "(5, 5)",
                        &format!(
                            "Custom(pads: [(number: \"1\", centre: (0, 0), width: {v}, height: 1)])"
                        ),
                    ),
                    "",
                ),
                "parts[0].footprint",
            ),
            (
                board(RECT, "", &format!("(name: \"N\", pins: [], weight: {v})")),
                "nets[0].weight",
            ),
        ];
        for (src, path) in cases {
            let err = error_of(&src);
            assert!(err.contains(&format!(": {path}")), "{v}: {path}: {err}");
        }
        for field in [
            "clearance",
            "track_width",
            "via_drill",
            "via_diameter",
            "routing_grid",
            "placement_grid",
            "edge_clearance",
            "copper_oz",
        ] {
            let src = format!("(name: \"t\", outline: {RECT}, parts: [], rules: ({field}: {v}))");
            let err = error_of(&src);
            assert!(
                err.contains(&format!("rules.{field}")),
                "{field} {v}: {err}"
            );
        }
        let copper = format!(
            "(name: \"t\", outline: {RECT}, parts: [], nets: [(name: \"N\", pins: [])], \
             copper: (tracks: [(net: \"N\", layer: Top, width: 0.25, points: [(1, 1), ({v}, 1)])], \
             vias: [(net: \"N\", at: (1, {v}), drill: 0.3, diameter: 0.6)]))"
        );
        let err = error_of(&copper);
        assert!(err.contains("copper.tracks[0].points"), "{v}: {err}");
        assert!(err.contains("copper.vias[0].at"), "{v}: {err}");
        let record = format!(
            "(name: \"t\", outline: {RECT}, parts: [], placement: (seed: 1, schedule: \"s\", \
             moves: 1, energy: {v}, wirelength_mm: {v}, legal: true))"
        );
        let err = error_of(&record);
        assert!(err.contains("placement.wirelength_mm"), "{v}: {err}");
    }
}

// --- one-pin nets ---------------------------------------------------------------------

#[test]
fn one_pin_nets_load_with_a_warning() {
    let parts = "(reference: \"R1\", footprint: Chip(\"0603\")), \
                 (reference: \"R2\", footprint: Chip(\"0603\"))";
    let nets = "(name: \"A\", pins: [\"R1.1\", \"R2.1\"]), (name: \"B\", pins: [\"R1.2\"]), \
                (name: \"C\", pins: [\"R2.2\"])";
    let design = parse_board(&board(RECT, parts, nets), FILE).unwrap();
    assert_eq!(
        model::warnings(&design),
        ["2 nets with a single pin need no wiring and are skipped by the router: \"B\", \"C\""]
    );
    let nets = "(name: \"A\", pins: [\"R1.1\", \"R2.1\"]), (name: \"B\", pins: [\"R1.2\"])";
    let design = parse_board(&board(RECT, parts, nets), FILE).unwrap();
    assert_eq!(
        model::warnings(&design),
        ["1 net with a single pin needs no wiring and is skipped by the router: \"B\""]
    );
    let nets = "(name: \"A\", pins: [\"R1.1\", \"R2.1\"])";
    let design = parse_board(&board(RECT, parts, nets), FILE).unwrap();
    assert!(model::warnings(&design).is_empty());
}

// --- messages for people --------------------------------------------------------------

#[test]
fn huge_numbers_are_shown_short() {
    let src = board(
        RECT,
        "(reference: \"R1\", footprint: Chip(\"0603\"), at: (1e308, 1))",
        "",
    );
    let err = error_of(&src);
    assert!(
        err.contains("position x 1e308 is outside the sane range -10000 to 10000"),
        "{err}"
    );
    assert!(!err.contains("00000000"), "{err}");
}

#[test]
fn control_characters_in_names_are_escaped() {
    let src = board(
        RECT,
        "(reference: \"R\\n1\", footprint: Chip(\"0603\")), \
         (reference: \"R\\u{1b}2\\t\", footprint: Chip(\"0603\"))",
        "",
    );
    let err = error_of(&src);
    assert_eq!(err.lines().count(), 2, "{err}");
    assert!(err.contains("reference \"R\\n1\" must be"), "{err}");
    assert!(err.contains("reference \"R\\u{1b}2\\t\" must be"), "{err}");
    assert!(!err.contains('\u{1b}'), "{err}");
}

#[test]
fn an_outline_closed_by_repeating_its_first_vertex_is_accepted() {
    let open = "Polygon([(0, 0), (30, 0), (30, 20), (0, 20)])";
    let closed = "Polygon([(0, 0), (30, 0), (30, 20), (0, 20), (0, 0)])";
    let a = parse_board(&board(open, "", ""), FILE).unwrap();
    let b = parse_board(&board(closed, "", ""), FILE).unwrap();
    assert_eq!(a.board.outline, b.board.outline);
    let Shape::Polygon(pts) = &b.board.outline else {
        panic!("a polygon")
    };
    assert_eq!(pts.len(), 4);
    // A keep-out the same way.
    let src = format!("(name: \"t\", outline: {RECT}, parts: [], keepouts: [(shape: {closed})])");
    let d = parse_board(&src, FILE).unwrap();
    assert_eq!(d.board.keepouts[0].shape, a.board.outline);
    // A real crossing is still reported.
    let bow = "Polygon([(0, 0), (30, 20), (30, 0), (0, 20)])";
    let err = error_of(&board(bow, "", ""));
    assert!(err.contains("crosses itself"), "{err}");
}
