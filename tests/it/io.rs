//! Board files (`lehr_engine::io`): errors located by line and column, checked against marks
//! placed in the test text itself; the example of docs/board-format.md; atomic saving and
//! round trips; and no panic on arbitrary or damaged input.

use std::fs;
use std::path::Path;

use lehr_engine::io::{
    LoadError, Location, board_to_string, load_board, load_board_unchecked, parse_board,
    parse_board_unchecked, save_board,
};
use lehr_engine::model::board::{
    Copper, Keepout, Layers, Net, NetClass, Part, PlacementRecord, Rules, Track, Via,
};
use lehr_engine::model::footprint::{PadShape, PadSpec};
use lehr_engine::model::{Board, FootprintSpec, Layer, Point, Rect, Shape, Side, resolve};
use proptest::prelude::*;

const FILE: &str = "t.board.ron";

/// The marker placed in test texts where an error is expected.
const MARK: char = '§';

/// Removes the marker, returning the text and the `line:column` where the marker stood.
fn unmark(marked: &str) -> (String, String) {
    let offset = marked.find(MARK).expect("test text has a § mark");
    let before = &marked[..offset];
    let line = before.matches('\n').count() + 1;
    let column = before.rsplit('\n').next().unwrap().chars().count() + 1;
    (marked.replacen(MARK, "", 1), format!("{line}:{column}"))
}

/// Asserts that parsing fails with a line `t.board.ron:LINE:COL: ..MESSAGE..` where the
/// mark stands.
fn check_error(marked: &str, message: &str) {
    let (src, at) = unmark(marked);
    let err = match parse_board(&src, FILE) {
        Ok(_) => panic!("expected an error in\n{src}"),
        Err(e) => e.to_string(),
    };
    let prefix = format!("{FILE}:{at}: ");
    assert!(
        err.lines()
            .any(|l| l.starts_with(&prefix) && l.contains(message)),
        "expected `{prefix}..{message}..` in\n{err}\nfor\n{src}"
    );
}

/// A small board text around `body`; the outline is given separately.
fn board_text(outline: &str, body: &str) -> String {
    format!("(\n    name: \"t\",\n    outline: {outline},\n{body}\n)\n")
}

const RECT: &str = "Rect(min: (0, 0), max: (30, 20))";

#[test]
fn syntax_errors_are_located() {
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\" §footprint: Chip(\"0603\"))],",
        ),
        "Expected comma",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(\"0603\"), §rotaton: 90)],",
        ),
        "Unexpected field named `rotaton` in `Part`",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: §Chipp(\"0603\"))],",
        ),
        "Unexpected variant named `Chipp`",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Custom(pads: [], §size: 1))],",
        ),
        "Unexpected field named `size` in `Custom`",
    );
    check_error(
        &board_text(
            "Rect(min: (0, 0), max: (30, 20), §mid: (1, 1))",
            "    parts: [],",
        ),
        "Unexpected field named `mid` in `Rect`",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(§0603))],",
        ),
        "Expected string",
    );
    // Cut short: the error points at the last thing read.
    check_error(
        "(\n    name: \"t\",\n    outline: Rect(min: (0, 0), max: (1, 1)),\n    parts: [§]",
        "Expected comma",
    );
    check_error(
        "(name: \"t\", outline: Rect(min: (0, 0), max: (1, 1)), parts: []) §trailing",
        "trailing characters",
    );
    check_error(
        "(name: \"t\", /* §a comment that never ends",
        "Unclosed block comment",
    );
    check_error("§", "Expected opening `(`");
}

#[test]
fn unknown_footprint_size_code() {
    check_error(
        &board_text(
            RECT,
            "    parts: [\n        (reference: \"R1\", §footprint: Chip(\"0001\")),\n    ],",
        ),
        "parts[0].footprint: R1: unknown chip size code \"0001\"",
    );
}

#[test]
fn pin_the_footprint_lacks() {
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(\"0603\"))],\n    nets: [(name: \"A\", pins: [\"R1.1\", §\"R1.3\"])],",
        ),
        "nets[0].pins[1]: net \"A\": part R1 (0603) has no pin \"3\"",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(\"0603\"))],\n    nets: [(name: \"A\", pins: [§\"R1\"])],",
        ),
        "must be written REF.PIN",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(\"0603\"))],\n    nets: [(name: \"A\", pins: [§\"R2.1\"])],",
        ),
        "names unknown part \"R2\"",
    );
}

#[test]
fn duplicate_reference() {
    check_error(
        &board_text(
            RECT,
            "    parts: [\n        (reference: \"R1\", footprint: Chip(\"0603\")),\n        (§reference: \"R1\", footprint: Chip(\"0805\")),\n    ],",
        ),
        "parts[1].reference: duplicate reference \"R1\" (also parts[0])",
    );
}

#[test]
fn pin_on_two_nets() {
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(\"0603\"))],\n    nets: [\n        (name: \"A\", pins: [\"R1.1\"]),\n        (name: \"B\", pins: [\"R1.2\", §\"R1.1\"]),\n    ],",
        ),
        "pin R1.1 is on two nets: \"A\" and \"B\"",
    );
}

#[test]
fn nan_and_huge_numbers() {
    let part = |at: &str| {
        format!("    parts: [(reference: \"R1\", footprint: Chip(\"0603\"), §at: {at})],")
    };
    check_error(
        &board_text(RECT, &part("(NaN, 2)")),
        "parts[0].at: position x is not a finite number (NaN)",
    );
    check_error(
        &board_text(RECT, &part("(1, -inf)")),
        "position y is not a finite number (-inf)",
    );
    // Too large for f64 reads as infinity, which the checks reject.
    check_error(
        &board_text(RECT, &part("(1e999, 2)")),
        "position x is not a finite number (inf)",
    );
    check_error(
        &board_text(RECT, &part("(20000, 2)")),
        "position x 20000 is outside the sane range -10000 to 10000",
    );
    check_error(
        &board_text("Rect(min: (0, 0), §max: (1e999, 20))", "    parts: [],"),
        "outline.max: outline is not a finite number (inf)",
    );
    check_error(
        &board_text(
            "Polygon([(0, 0), (30, 0), §(NaN, 20), (0, 20)])",
            "    parts: [],",
        ),
        "outline[2]: outline is not a finite number (NaN)",
    );
    check_error(
        &board_text(RECT, "    parts: [],\n    rules: (§clearance: -0.1),"),
        "rules.clearance: clearance -0.1 is outside the sane range 0 to 100",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"U1\", footprint: Sot23(§99999999999))],",
        ),
        "Integer is out of bounds",
    );
}

#[test]
fn self_crossing_outline() {
    check_error(
        "(\n    name: \"bow tie\",\n    §outline: Polygon([(0, 0), (10, 10), (10, 0), (0, 10)]),\n    parts: [],\n)",
        "outline: outline polygon crosses itself (edge 0 meets edge 2)",
    );
    check_error(
        &board_text(
            RECT,
            "    keepouts: [(name: \"k\", §shape: Polygon([(1, 1), (2, 2), (3, 3)]))],\n    parts: [],",
        ),
        "keepouts[0].shape: keep-out polygon",
    );
}

#[test]
fn board_too_small() {
    check_error(
        "(\n    name: \"tiny\",\n    §outline: Rect(min: (0, 0), max: (3, 3)),\n    parts: [\n        (reference: \"R1\", footprint: Chip(\"2512\")),\n    ],\n)",
        "is smaller than the parts' total courtyard area",
    );
}

#[test]
fn other_checks_are_located() {
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"R1\", footprint: Chip(\"0603\"), §rotation: 45)],",
        ),
        "R1: rotation 45 is not a multiple of 90 degrees",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [],\n    nets: [(name: \"A\", §class: \"pwr\", pins: [])],",
        ),
        "net \"A\" names unknown class \"pwr\"",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [(reference: \"TP1\", §footprint: Custom(pads: [\n        (number: \"1\", centre: (0, 0), width: 1, height: 1),\n        (number: \"1\", centre: (2, 0), width: 1, height: 1),\n    ]))],",
        ),
        "TP1: custom footprint: pad number \"1\" appears twice",
    );
    check_error(
        &board_text(
            RECT,
            "    parts: [],\n    copper: (tracks: [(§net: \"GDN\", layer: Top, width: 0.3, points: [(1, 1), (2, 2)])]),",
        ),
        "copper.tracks[0].net: track on unknown net \"GDN\"",
    );
    // Written as `Some(..)` instead of bare: still found.
    check_error(
        &board_text(
            RECT,
            "    parts: [],\n    placement: None,\n    classes: [(name: \"p\", track_width: 0.3, clearance: 0.2, §current: Some(-1))],",
        ),
        "classes[0].current: current -1 is outside the sane range",
    );
}

#[test]
fn all_problems_are_listed_in_file_order_and_capped() {
    let parts: String = (0..25)
        .map(|i| format!("        (reference: \"R{i}\", footprint: Chip(\"9999\")),\n"))
        .collect();
    // The board-size check runs last but concerns the outline, near the top.
    let src = format!(
        "(\n    name: \"t\",\n    outline: Rect(min: (0, 0), max: (1, 1)),\n    parts: [\n        (reference: \"BIG\", footprint: Chip(\"2512\")),\n{parts}    ],\n)\n"
    );
    let err = parse_board(&src, FILE).unwrap_err();
    let LoadError::Problems { problems, .. } = &err else {
        panic!("expected problems, got {err}");
    };
    assert_eq!(problems.len(), 26);
    let text = err.to_string();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), lehr_engine::io::MAX_SHOWN_PROBLEMS + 1);
    assert!(
        lines[0].starts_with("t.board.ron:3:5: outline: "),
        "{}",
        lines[0]
    );
    assert!(lines[1].starts_with("t.board.ron:6:27: parts[1].footprint: R0: unknown chip size"));
    assert!(lines[19].starts_with("t.board.ron:24:28: parts[19].footprint: R18: "));
    assert_eq!(lines[20], "t.board.ron: and 6 more problems");
    assert!(problems.windows(2).all(|w| w[0].at <= w[1].at));
}

#[test]
fn io_errors_name_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("missing.board.ron");
    let err = load_board(&missing).unwrap_err();
    assert!(matches!(err, LoadError::Io { .. }));
    let text = err.to_string();
    assert!(
        text.starts_with(&format!("cannot read {}: ", missing.display())),
        "{text}"
    );

    let latin1 = dir.path().join("latin1.board.ron");
    fs::write(&latin1, b"(\n  name: \"K\xF6ln\",\n)").unwrap();
    let err = load_board(&latin1).unwrap_err();
    assert_eq!(
        err.to_string(),
        format!("{}:2:11: the file is not UTF-8 text", latin1.display())
    );
}

/// The example board of docs/board-format.md.
fn doc_example() -> &'static str {
    let doc = include_str!("../../docs/board-format.md");
    let start = doc
        .find("<!-- example-board")
        .expect("example marker in the doc");
    let body = &doc[start..];
    let open = body.find("```ron\n").unwrap() + "```ron\n".len();
    let close = body[open..].find("```").unwrap();
    &body[open..open + close]
}

/// Whether the package family of `spec` is implemented yet (all but `Chip` and `Custom`
/// are being written at the time of this test), so the example can be checked in full
/// before every family exists.
fn implemented(spec: &FootprintSpec) -> bool {
    !matches!(
        spec.build(),
        Err(lehr_engine::model::footprint::FootprintError::BadCustom(m)) if m.contains("not yet available")
    )
}

/// The example with every footprint that cannot be built yet replaced by a custom one
/// holding the pins its nets use.
fn doc_example_buildable() -> Board {
    let mut board = parse_board_unchecked(doc_example(), "example").unwrap();
    for i in 0..board.parts.len() {
        if implemented(&board.parts[i].footprint) {
            continue;
        }
        let reference = board.parts[i].reference.clone();
        let mut pins: Vec<String> = board
            .nets
            .iter()
            .flat_map(|n| &n.pins)
            .filter_map(|p| p.strip_prefix(&format!("{reference}.")))
            .map(str::to_string)
            .collect();
        pins.sort();
        let pads: Vec<PadSpec> = pins
            .into_iter()
            .enumerate()
            .map(|(k, number)| PadSpec {
                number,
                centre: Point::new(2.0 * k as f64, 0.0),
                width: 1.0,
                height: 1.0,
                shape: PadShape::Rectangle,
                hole: None,
            })
            .collect();
        let courtyard = pads.is_empty().then_some(Rect::new(-2.0, -2.0, 2.0, 2.0));
        board.parts[i].footprint = FootprintSpec::Custom { pads, courtyard };
    }
    board
}

#[test]
fn doc_example_parses() {
    let board = parse_board_unchecked(doc_example(), "example").unwrap();
    assert_eq!(board.name, "frost-guard");
    assert_eq!(board.parts.len(), 11);
    assert_eq!(board.nets.len(), 7);
    assert_eq!(board.rules.track_width, 0.3);
    assert_eq!(board.rules.clearance, Rules::default().clearance);
    assert_eq!(board.nets[2].weight, 2.0);
    assert_eq!(board.nets[3].weight, 1.0);

    // Verbatim, the example passes every check except footprints whose package family
    // is not implemented yet (none once all packages exist).
    match parse_board(doc_example(), "example") {
        Ok(_) => {}
        Err(LoadError::Problems { problems, .. }) => {
            for p in &problems {
                let path = p.problem.path.to_string();
                assert!(
                    path.starts_with("parts[")
                        && path.ends_with("].footprint")
                        && p.problem.message.contains("not yet available"),
                    "unexpected problem in the doc example: {}",
                    p.problem
                );
            }
        }
        Err(e) => panic!("{e}"),
    }
}

#[test]
fn doc_example_resolves_and_follows_the_bottom_side_convention() {
    let design = resolve(doc_example_buildable()).unwrap();
    // docs/board-format.md, "The bottom side": C1 (0603, bottom, 180 degrees, at
    // (18, 6)) has pad 1 at (17.2, 6).
    let c1 = design.part_id("C1").unwrap();
    let pad1 = lehr_engine::model::PinRef { part: c1, pad: 0 };
    let p = design.pin_position(pad1).unwrap();
    assert!(
        (p.x - 17.2).abs() < 1e-9 && (p.y - 6.0).abs() < 1e-9,
        "{p:?}"
    );
    assert_eq!(design.part(c1).side, Side::Bottom);
}

#[test]
fn doc_error_examples_are_what_lehr_prints() {
    let doc = include_str!("../../docs/board-format.md");
    let file = "frost-guard.board.ron";
    let documented: Vec<&str> = doc
        .lines()
        .filter(|l| l.starts_with("frost-guard.board.ron:"))
        .collect();
    assert_eq!(documented.len(), 8);

    // The damage the doc describes, applied to its example.
    let damage: [&[(&str, &str)]; 5] = [
        &[("value: \"dual comparator\",", "value: \"dual comparator\"")],
        &[("value: \"10k\")", "value: \"10k\", rotaton: 90)")],
        &[("Soic(8)", "Soic8")],
        &[(
            "(reference: \"R4\", footprint: Chip(\"0603\"), value: \"4.7k\")",
            "(reference: \"R4\", value: \"4.7k\")",
        )],
        &[
            ("Chip(\"0805\")", "Chip(\"0806\")"),
            ("rotation: 180", "rotation: 45"),
            ("\"R2.1\"", "\"R2.3\""),
        ],
    ];
    let mut printed: Vec<String> = Vec::new();
    for edits in damage {
        let mut src = doc_example().to_string();
        for (from, to) in edits {
            assert!(src.contains(from), "{from}");
            src = src.replacen(from, to, 1);
        }
        let err = parse_board(&src, file).unwrap_err().to_string();
        printed.extend(err.lines().map(str::to_string));
    }
    // A name saved in Latin-1: "Frostwächter" with the umlaut as the single byte E4.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join(file);
    let mut bytes = doc_example()
        .replacen("\"frost-guard\"", "\"FrostwXchter\"", 1)
        .into_bytes();
    let x = bytes.iter().position(|&b| b == b'X').unwrap();
    bytes[x] = 0xE4;
    fs::write(&path, bytes).unwrap();
    let err = load_board(&path).unwrap_err().to_string();
    printed.push(err.replace(&path.display().to_string(), file));

    for line in documented {
        assert!(
            printed.iter().any(|p| p == line),
            "documented but not printed: {line}\nprinted:\n{}",
            printed.join("\n")
        );
    }
}

#[test]
fn save_then_load_gives_the_same_board() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("frost-guard.board.ron");
    let board = doc_example_buildable();
    save_board(&path, &board).unwrap();
    let design = load_board(&path).unwrap();
    assert_eq!(design.board, board);

    // Saving again over the file replaces it and reads back the same.
    let mut moved = board.clone();
    moved.parts[3].at = Some(Point::new(0.1, 1.0 / 3.0));
    save_board(&path, &moved).unwrap();
    assert_eq!(load_board(&path).unwrap().board, moved);

    let text = fs::read_to_string(&path).unwrap();
    assert!(text.starts_with("// lehr board file"));
    // One part per line.
    assert!(
        text.lines()
            .any(|l| l.trim_start().starts_with("(reference: \"R1\",")
                && l.contains("at: (0.1, 0.3333333333333333)")),
        "{text}"
    );
    assert_eq!(dir_entries(dir.path()), ["frost-guard.board.ron"]);

    // Unchecked boards round-trip too, packages not yet built included.
    let verbatim = parse_board_unchecked(doc_example(), "example").unwrap();
    save_board(&path, &verbatim).unwrap();
    assert_eq!(load_board_unchecked(&path).unwrap(), verbatim);
}

fn dir_entries(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn failed_save_leaves_everything_as_it_was() {
    let dir = tempfile::tempdir().unwrap();
    let board = doc_example_buildable();

    // The target is a directory.
    let target = dir.path().join("taken.board.ron");
    fs::create_dir(&target).unwrap();
    fs::write(target.join("inside"), b"keep me").unwrap();
    let err = save_board(&target, &board).unwrap_err();
    assert!(
        err.to_string()
            .starts_with(&format!("cannot write {}: ", target.display())),
        "{err}"
    );
    assert_eq!(fs::read(target.join("inside")).unwrap(), b"keep me");
    assert_eq!(dir_entries(dir.path()), ["taken.board.ron"]);

    // The directory does not exist.
    let nowhere = dir.path().join("no-such-dir").join("x.board.ron");
    assert!(save_board(&nowhere, &board).is_err());
    assert_eq!(dir_entries(dir.path()), ["taken.board.ron"]);
}

#[cfg(unix)]
#[test]
fn failed_save_in_a_read_only_directory_keeps_the_old_file() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let ro = dir.path().join("ro");
    fs::create_dir(&ro).unwrap();
    let target = ro.join("old.board.ron");
    fs::write(&target, b"old contents").unwrap();
    fs::set_permissions(&ro, fs::Permissions::from_mode(0o555)).unwrap();
    // Privileged users (root in containers) may write anyway; then there is nothing to
    // test here (the forced failure is covered by the unit tests of the atomic writer).
    let probe = ro.join("probe");
    let writable = fs::write(&probe, b"").is_ok();
    if !writable {
        let err = save_board(&target, &doc_example_buildable()).unwrap_err();
        assert!(err.to_string().contains("old.board.ron"), "{err}");
        assert_eq!(fs::read(&target).unwrap(), b"old contents");
        assert_eq!(dir_entries(&ro), ["old.board.ron"]);
    }
    fs::set_permissions(&ro, fs::Permissions::from_mode(0o755)).unwrap();
}

// --- arbitrary input ---------------------------------------------------------------

/// Asserts that an error's locations lie within the text (a line that exists, a column
/// at most one past its end).
fn assert_located_within(src: &str, err: &LoadError) {
    let lines: Vec<&str> = src.split('\n').collect();
    let inside = |at: &Location| {
        at.line >= 1
            && at.line <= lines.len()
            && at.column >= 1
            && at.column <= lines[at.line - 1].chars().count() + 1
    };
    match err {
        LoadError::Io { .. } => {}
        LoadError::Syntax { at, .. } => assert!(inside(at), "{at} outside the text"),
        LoadError::Problems { problems, .. } => {
            for p in problems {
                assert!(inside(&p.at), "{} outside the text", p.at);
            }
        }
    }
    let _ = err.to_string();
}

/// Text made of RON's building blocks, so the parser gets past the first character.
fn ron_like() -> impl Strategy<Value = String> {
    let token = prop_oneof![
        Just("(".to_string()),
        Just(")".to_string()),
        Just("[".to_string()),
        Just("]".to_string()),
        Just(",".to_string()),
        Just(":".to_string()),
        Just("\n".to_string()),
        Just("// c\n".to_string()),
        Just("/* /* */".to_string()),
        Just("r#\"".to_string()),
        Just("\"".to_string()),
        Just("'".to_string()),
        Just("\\".to_string()),
        Just("Some".to_string()),
        Just("NaN".to_string()),
        Just("-inf".to_string()),
        Just("1e999".to_string()),
        Just("18446744073709551616".to_string()),
        "[a-z_]{1,9}",
        "-?[0-9]{1,4}(\\.[0-9]{1,3})?",
        "\"[A-Z0-9.]{0,4}\"",
        "[ \t]{1,3}",
    ];
    prop::collection::vec(token, 0..80).prop_map(|v| v.concat())
}

/// One edit of a text: delete, duplicate or insert at byte positions (made valid).
#[derive(Clone, Debug)]
enum Edit {
    Delete(usize, usize),
    Duplicate(usize, usize),
    Insert(usize, String),
    /// Replace the k-th number of the text, to reach the checks more often.
    Number(usize, &'static str),
}

fn edit() -> impl Strategy<Value = Edit> {
    prop_oneof![
        (any::<usize>(), 0usize..40).prop_map(|(a, n)| Edit::Delete(a, n)),
        (any::<usize>(), 0usize..200).prop_map(|(a, n)| Edit::Duplicate(a, n)),
        (any::<usize>(), ron_like()).prop_map(|(a, s)| Edit::Insert(a, s)),
        (any::<usize>(), "[(){}\\[\\],:\"'#/*.0-9eE+-]").prop_map(|(a, s)| Edit::Insert(a, s)),
        (
            any::<usize>(),
            prop::sample::select(
                &[
                    "NaN",
                    "inf",
                    "-inf",
                    "1e999",
                    "-1e308",
                    "0",
                    "-0.0",
                    "1e-300",
                    "99999",
                    "-5",
                    "45",
                    "4294967296",
                ][..]
            )
        )
            .prop_map(|(k, v)| Edit::Number(k, v)),
    ]
}

fn apply(text: &str, edits: &[Edit]) -> String {
    let mut s = text.to_string();
    let floor = |s: &str, mut i: usize| {
        i %= s.len() + 1;
        while !s.is_char_boundary(i) {
            i -= 1;
        }
        i
    };
    for e in edits {
        match e {
            Edit::Delete(a, n) => {
                let a = floor(&s, *a);
                let b = floor(&s, (a + n).min(s.len()));
                s.replace_range(a..b, "");
            }
            Edit::Duplicate(a, n) => {
                let a = floor(&s, *a);
                let b = floor(&s, (a + n).min(s.len()));
                let piece = s[a..b].to_string();
                s.insert_str(b, &piece);
            }
            Edit::Insert(a, t) => {
                let a = floor(&s, *a);
                s.insert_str(a, t);
            }
            Edit::Number(k, v) => {
                let b = s.as_bytes();
                let mut numbers = Vec::new();
                let mut i = 0;
                while i < b.len() {
                    if b[i].is_ascii_digit() {
                        let start = i;
                        while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
                            i += 1;
                        }
                        numbers.push(start..i);
                    } else {
                        i += 1;
                    }
                }
                if !numbers.is_empty() {
                    let r = numbers[k % numbers.len()].clone();
                    s.replace_range(r, v);
                }
            }
        }
    }
    s
}

fn finite() -> impl Strategy<Value = f64> {
    use prop::num::f64::{NEGATIVE, NORMAL, POSITIVE, SUBNORMAL, ZERO};
    prop_oneof![
        (-4000i32..4000).prop_map(|v| f64::from(v) / 8.0),
        POSITIVE | NEGATIVE | NORMAL | SUBNORMAL | ZERO,
    ]
}

fn point() -> impl Strategy<Value = Point> {
    (finite(), finite()).prop_map(Point::from)
}

fn rect() -> impl Strategy<Value = Rect> {
    (point(), point()).prop_map(|(min, max)| Rect { min, max })
}

fn shape() -> impl Strategy<Value = Shape> {
    prop_oneof![
        (point(), point()).prop_map(|(min, max)| Shape::Rect { min, max }),
        prop::collection::vec(point(), 0..6).prop_map(Shape::Polygon),
    ]
}

fn text() -> impl Strategy<Value = String> {
    prop_oneof![any::<String>(), "[A-Z]{1,2}[0-9]{1,2}(\\.[0-9])?"]
}

fn footprint() -> impl Strategy<Value = FootprintSpec> {
    let pad = (
        text(),
        point(),
        (finite(), finite()),
        prop_oneof![
            Just(PadShape::Rectangle),
            Just(PadShape::Rounded),
            Just(PadShape::Circle),
            Just(PadShape::Obround),
        ],
        prop::option::of(finite()),
    )
        .prop_map(|(number, centre, (width, height), shape, hole)| PadSpec {
            number,
            centre,
            width,
            height,
            shape,
            hole,
        });
    prop_oneof![
        text().prop_map(FootprintSpec::Chip),
        Just(FootprintSpec::Sod123),
        any::<u32>().prop_map(FootprintSpec::Sot23),
        any::<u32>().prop_map(FootprintSpec::Soic),
        any::<u32>().prop_map(FootprintSpec::Tssop),
        (any::<u32>(), finite(), finite(), prop::option::of(finite())).prop_map(
            |(pins, body, pitch, thermal)| FootprintSpec::Qfn {
                pins,
                body,
                pitch,
                thermal
            }
        ),
        (any::<u32>(), finite(), finite()).prop_map(|(pins, body, pitch)| FootprintSpec::Qfp {
            pins,
            body,
            pitch
        }),
        (any::<u32>(), any::<bool>()).prop_map(|(pins, wide)| FootprintSpec::Dip { pins, wide }),
        (any::<u32>(), any::<u32>()).prop_map(|(rows, cols)| FootprintSpec::Header { rows, cols }),
        any::<u32>().prop_map(FootprintSpec::TerminalBlock),
        Just(FootprintSpec::To220),
        (finite(), finite())
            .prop_map(|(pitch, diameter)| FootprintSpec::Radial { pitch, diameter }),
        (finite(), finite(), finite()).prop_map(|(pitch, length, diameter)| {
            FootprintSpec::Axial {
                pitch,
                length,
                diameter,
            }
        }),
        (finite(), prop::option::of(finite()))
            .prop_map(|(hole, pad)| FootprintSpec::MountingHole { hole, pad }),
        (prop::collection::vec(pad, 0..3), prop::option::of(rect()))
            .prop_map(|(pads, courtyard)| FootprintSpec::Custom { pads, courtyard }),
    ]
}

fn any_board() -> impl Strategy<Value = Board> {
    let keepout = (text(), shape(), 0..3u8, any::<bool>(), any::<bool>()).prop_map(
        |(name, shape, l, parts, copper)| Keepout {
            name,
            shape,
            layers: [Layers::Both, Layers::Top, Layers::Bottom][l as usize],
            parts,
            copper,
        },
    );
    let rules = prop::collection::vec(finite(), 8).prop_map(|v| Rules {
        clearance: v[0],
        track_width: v[1],
        via_drill: v[2],
        via_diameter: v[3],
        routing_grid: v[4],
        placement_grid: v[5],
        edge_clearance: v[6],
        copper_oz: v[7],
    });
    let class = (
        text(),
        finite(),
        finite(),
        prop::option::of(finite()),
        prop::option::of(finite()),
        prop::option::of(finite()),
    )
        .prop_map(
            |(name, track_width, clearance, current, voltage, temp_rise)| NetClass {
                name,
                track_width,
                clearance,
                current,
                voltage,
                temp_rise,
            },
        );
    let part = (
        text(),
        footprint(),
        text(),
        prop::option::of(point()),
        finite(),
        any::<bool>(),
        any::<bool>(),
    )
        .prop_map(
            |(reference, footprint, value, at, rotation, bottom, locked)| Part {
                reference,
                footprint,
                value,
                at,
                rotation,
                side: if bottom { Side::Bottom } else { Side::Top },
                locked,
            },
        );
    let net = (
        text(),
        prop::option::of(text()),
        prop::collection::vec(text(), 0..4),
        finite(),
    )
        .prop_map(|(name, class, pins, weight)| Net {
            name,
            class,
            pins,
            weight,
        });
    let layer = any::<bool>().prop_map(|b| if b { Layer::Bottom } else { Layer::Top });
    let track = (
        text(),
        layer,
        finite(),
        prop::collection::vec(point(), 0..4),
    )
        .prop_map(|(net, layer, width, points)| Track {
            net,
            layer,
            width,
            points,
        });
    let via = (text(), point(), finite(), finite()).prop_map(|(net, at, drill, diameter)| Via {
        net,
        at,
        drill,
        diameter,
    });
    let copper = (
        prop::collection::vec(track, 0..2),
        prop::collection::vec(via, 0..2),
    )
        .prop_map(|(tracks, vias)| Copper { tracks, vias });
    let record = (
        any::<u64>(),
        text(),
        any::<u64>(),
        finite(),
        finite(),
        any::<bool>(),
    )
        .prop_map(
            |(seed, schedule, moves, energy, wirelength_mm, legal)| PlacementRecord {
                seed,
                schedule,
                moves,
                energy,
                wirelength_mm,
                legal,
                start: String::new(),
                replicas: 1,
            },
        );
    (
        text(),
        shape(),
        prop::collection::vec(keepout, 0..2),
        rules,
        prop::collection::vec(class, 0..2),
        prop::collection::vec(part, 0..4),
        prop::collection::vec(net, 0..3),
        copper,
        prop::option::of(record),
    )
        .prop_map(
            |(name, outline, keepouts, rules, classes, parts, nets, copper, placement)| Board {
                name,
                outline,
                keepouts,
                rules,
                classes,
                parts,
                nets,
                copper,
                placement,
                optimum: None,
            },
        )
}

proptest! {
    #[test]
    fn random_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        let src = String::from_utf8_lossy(&bytes);
        if let Err(e) = parse_board(&src, FILE) {
            assert_located_within(&src, &e);
        }
    }

    #[test]
    fn ron_like_text_never_panics(src in ron_like()) {
        if let Err(e) = parse_board(&src, FILE) {
            assert_located_within(&src, &e);
        }
    }

    #[test]
    fn damaged_example_never_panics(
        saved in any::<bool>(),
        edits in prop::collection::vec(edit(), 1..4),
    ) {
        // The example as written by hand, or as lehr writes it (which resolves).
        let base = if saved {
            board_to_string(&doc_example_buildable()).unwrap()
        } else {
            doc_example().to_string()
        };
        let src = apply(&base, &edits);
        if let Err(e) = parse_board(&src, FILE) {
            assert_located_within(&src, &e);
        }
    }

    #[test]
    fn any_board_round_trips(board in any_board()) {
        let text = board_to_string(&board).unwrap();
        let back = parse_board_unchecked(&text, FILE);
        prop_assert_eq!(back.as_ref().ok(), Some(&board), "{}\n{:?}", text, back.as_ref().err());
    }
}
