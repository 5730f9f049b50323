//! The command line: `lehr export` (and `place --log`), the SVG read by roxmltree.

use std::collections::BTreeSet;
use std::path::Path;
use std::process::Command as Process;

use lehr_engine::fab::gerber::{GerberLayer, gerber};
use lehr_engine::fab::{FabOptions, centroid, drill};
use lehr_engine::model::board::Layer;
use lehr_engine::model::{PadKind, Point, Side, to_board};

use super::{fixture, read_gerber};

// ----------------------------------------------------------------------------------------
// The command line: lehr export (and place --log), SVG read by roxmltree
// ----------------------------------------------------------------------------------------

fn lehr_cmd() -> Process {
    Process::new(env!("CARGO_BIN_EXE_lehr"))
}

fn listing(dir: &Path) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    for e in walk(dir) {
        out.insert(e.strip_prefix(dir).unwrap().display().to_string());
    }
    out
}

fn walk(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut v = Vec::new();
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            v.extend(walk(&p));
        } else {
            v.push(p);
        }
    }
    v
}

#[test]
fn export_writes_every_file_and_nothing_else() {
    let d = &fixture().design;
    let dir = tempfile::tempdir().unwrap();
    let board = dir.path().join("dimmer.routed.board.ron");
    lehr_engine::io::save_board(&board, &d.board).unwrap();
    std::fs::write(dir.path().join("keep.txt"), b"untouched").unwrap();
    let out = lehr_cmd()
        .arg("export")
        .arg(&board)
        .args([
            "--svg",
            "b.svg",
            "--png",
            "b.png",
            "--gerber",
            "gerber",
            "--drill",
            "b.drl",
            "--centroid",
            "b.csv",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        out.stderr.is_empty(),
        "a routed board has no warnings: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let want: BTreeSet<String> = [
        "dimmer.routed.board.ron",
        "keep.txt",
        "b.svg",
        "b.png",
        "b.drl",
        "b.csv",
        "gerber/dimmer-copper-top.gbr",
        "gerber/dimmer-copper-bottom.gbr",
        "gerber/dimmer-mask-top.gbr",
        "gerber/dimmer-mask-bottom.gbr",
        "gerber/dimmer-outline.gbr",
    ]
    .into_iter()
    .map(String::from)
    .collect();
    assert_eq!(listing(dir.path()), want);
    assert_eq!(
        std::fs::read(dir.path().join("keep.txt")).unwrap(),
        b"untouched"
    );
    // The files are the library's output, byte for byte.
    let text = |n: &str| std::fs::read_to_string(dir.path().join(n)).unwrap();
    assert_eq!(
        text("gerber/dimmer-copper-top.gbr"),
        gerber(d, GerberLayer::CopperTop, &FabOptions::default()).unwrap()
    );
    assert_eq!(text("b.drl"), drill::drill(d).unwrap());
    assert_eq!(text("b.csv"), centroid::centroid_csv(d));
    // PNG signature (ISO/IEC 15948, section 5.2).
    assert_eq!(
        &std::fs::read(dir.path().join("b.png")).unwrap()[..8],
        b"\x89PNG\r\n\x1a\n"
    );

    // The SVG is well-formed XML (roxmltree) and holds one element per pad, per track
    // segment, per via and per part reference.
    let svg = text("b.svg");
    let doc = roxmltree::Document::parse(&svg).expect("well-formed XML");
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    assert_eq!(
        root.tag_name().namespace(),
        Some("http://www.w3.org/2000/svg")
    );
    let count = |class: &str, tags: &[&str]| {
        doc.descendants()
            .filter(|n| n.attribute("class") == Some(class) && tags.contains(&n.tag_name().name()))
            .count()
    };
    for side in [Side::Top, Side::Bottom] {
        let pads: usize = d
            .board
            .parts
            .iter()
            .zip(&d.footprints)
            .filter(|(p, _)| p.side == side)
            .map(|(_, f)| f.pads.len())
            .sum();
        let class = if side == Side::Top {
            "pad-top"
        } else {
            "pad-bottom"
        };
        assert_eq!(count(class, &["rect", "circle"]), pads, "{class}");
    }
    for (layer, class) in [(Layer::Top, "track-top"), (Layer::Bottom, "track-bottom")] {
        let segs: usize = d
            .board
            .copper
            .tracks
            .iter()
            .filter(|t| t.layer == layer)
            .map(|t| t.points.len() - 1)
            .sum();
        assert_eq!(count(class, &["line"]), segs, "{class}");
    }
    assert_eq!(count("via", &["circle"]), d.board.copper.vias.len());
    let refs: BTreeSet<&str> = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "text" && n.attribute("class") == Some("reference"))
        .filter_map(|n| n.text())
        .collect();
    let parts: BTreeSet<&str> = d.board.parts.iter().map(|p| p.reference.as_str()).collect();
    assert_eq!(refs, parts);
    assert_eq!(
        count("outline", &["line"]),
        d.board.outline.vertices().len()
    );
    // Pads sit where the board has them: the board polygon's first point (the outline's
    // first vertex) fixes the offset of the SVG frame (y down, in mm).
    let num = |n: &roxmltree::Node, a: &str| n.attribute(a).unwrap().parse::<f64>().unwrap();
    let first = doc
        .descendants()
        .find(|n| n.attribute("class") == Some("board"))
        .and_then(|n| n.attribute("points"))
        .and_then(|p| p.split(' ').next())
        .and_then(|p| p.split_once(','))
        .map(|(x, y)| (x.parse::<f64>().unwrap(), y.parse::<f64>().unwrap()))
        .expect("the board polygon");
    let v0 = d.board.outline.vertices()[0];
    let to_board_mm = |x: f64, y: f64| Point::new(v0.x + (x - first.0), v0.y - (y - first.1));
    let mut centres: Vec<Point> = Vec::new();
    for n in doc
        .descendants()
        .filter(|n| matches!(n.attribute("class"), Some("pad-top" | "pad-bottom")))
    {
        centres.push(match n.tag_name().name() {
            "rect" => to_board_mm(
                num(&n, "x") + num(&n, "width") / 2.0,
                num(&n, "y") + num(&n, "height") / 2.0,
            ),
            _ => to_board_mm(num(&n, "cx"), num(&n, "cy")),
        });
    }
    // The SVG writes 4 decimals (0.1 micrometre).
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        for pad in &fp.pads {
            let at = to_board(pad.at, part.at.unwrap(), part.quarter(), part.side);
            assert!(
                centres
                    .iter()
                    .any(|c| (c.x - at.x).abs() < 2e-4 && (c.y - at.y).abs() < 2e-4),
                "{}.{} at {at:?} is not drawn",
                part.reference,
                pad.number
            );
        }
    }

    // Rendered by an independent SVG renderer (resvg), the picture shows the pad colour at
    // the centre of every top-side surface-mount pad and the hole colour at the centre of
    // every through-hole pad: the stacking puts pads over tracks and holes over pads.
    let tree = resvg::usvg::Tree::from_str(&svg, &resvg::usvg::Options::default()).unwrap();
    let view_w: f64 = root
        .attribute("viewBox")
        .unwrap()
        .split(' ')
        .nth(2)
        .unwrap()
        .parse()
        .unwrap();
    let k = 20.0 / (f64::from(tree.size().width()) / view_w); // 20 pixels per mm
    let (w, h) = (
        (f64::from(tree.size().width()) * k).ceil() as u32,
        (f64::from(tree.size().height()) * k).ceil() as u32,
    );
    let mut pix = resvg::tiny_skia::Pixmap::new(w, h).unwrap();
    resvg::render(
        &tree,
        resvg::tiny_skia::Transform::from_scale(k as f32, k as f32),
        &mut pix.as_mut(),
    );
    let colour_at = |p: Point| {
        let ux = first.0 + (p.x - v0.x);
        let uy = first.1 - (p.y - v0.y);
        let c = pix
            .pixel((ux * 20.0) as u32, (uy * 20.0) as u32)
            .unwrap()
            .demultiply();
        format!("#{:02x}{:02x}{:02x}", c.red(), c.green(), c.blue())
    };
    let fill_of = |class: &str| {
        doc.descendants()
            .find(|n| n.attribute("class") == Some(class))
            .and_then(|n| n.attribute("fill"))
            .unwrap()
            .to_string()
    };
    let (pad_top, hole) = (fill_of("pad-top"), fill_of("drill"));
    let mut checked = 0;
    for (part, fp) in d.board.parts.iter().zip(&d.footprints) {
        for pad in &fp.pads {
            let at = to_board(pad.at, part.at.unwrap(), part.quarter(), part.side);
            let want = match pad.kind {
                PadKind::ThroughHole { .. } => &hole,
                PadKind::Smd if part.side == Side::Top => &pad_top,
                PadKind::Smd => continue,
            };
            assert_eq!(&colour_at(at), want, "{}.{}", part.reference, pad.number);
            checked += 1;
        }
    }
    assert!(checked > 20);

    // Again: the files are replaced, nothing new appears.
    let again = lehr_cmd()
        .arg("export")
        .arg(&board)
        .args(["--drill", "b.drl"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(again.status.success());
    assert_eq!(listing(dir.path()), want);
}

#[test]
fn export_errors_are_one_line_and_exit_1() {
    let dir = tempfile::tempdir().unwrap();
    for args in [
        vec!["export", "missing.board.ron", "--svg", "a.svg"],
        vec!["export", "missing.board.ron"],
    ] {
        let out = lehr_cmd()
            .args(&args)
            .current_dir(dir.path())
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(1), "{args:?}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(err.trim_end().lines().count(), 1, "{err}");
        assert!(err.starts_with("lehr: error: "), "{err}");
    }
    assert!(listing(dir.path()).is_empty());
}

#[test]
fn unrouted_boards_are_refused_unless_allowed_and_place_writes_its_log() {
    let dir = tempfile::tempdir().unwrap();
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron");
    let out = lehr_cmd()
        .arg("place")
        .arg(&sample)
        .args([
            "--moves",
            "5000",
            "--out",
            "p.board.ron",
            "--log",
            "run.csv",
            "--json",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.code().is_some_and(|c| c == 0 || c == 3));
    let log = std::fs::read_to_string(dir.path().join("run.csv")).unwrap();
    assert!(log.starts_with("stage,moves,temperature,"));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let stages = v["stages"].as_u64().unwrap() as usize;
    assert_eq!(
        log.lines().count(),
        stages + 1,
        "one row per stage and a header"
    );

    // Unrouted nets break the design rules for the copper layers: the export is refused
    // with code 3, the broken rules listed one a line, nothing written.
    let out = lehr_cmd()
        .args(["export", "p.board.ron", "--gerber", "g"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(3));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("export refused") && err.contains("--allow-violations"),
        "{err}"
    );
    assert!(
        err.lines()
            .any(|l| l.starts_with("  ") && l.contains("Unconnected: ")),
        "{err}"
    );
    assert!(!dir.path().join("g").exists());
    // The same as JSON.
    let out = lehr_cmd()
        .args(["export", "p.board.ron", "--gerber", "g", "--json"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(3));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["refused"], true);
    let n = v["violations"].as_u64().unwrap() as usize;
    assert!(n > 0);
    assert_eq!(v["violation_items"].as_array().unwrap().len(), n);
    assert!(!dir.path().join("g").exists());
    // The centroid list alone is not held to the rules.
    let out = lehr_cmd()
        .args(["export", "p.board.ron", "--centroid", "p.csv"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(dir.path().join("p.csv").is_file());

    // Asked to anyway: written, with the broken rules and the usual warning.
    let out = lehr_cmd()
        .args([
            "export",
            "p.board.ron",
            "--gerber",
            "g",
            "--allow-violations",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("warning") && err.contains("not routed") && err.contains("exporting anyway"),
        "{err}"
    );
    assert!(dir.path().join("g/p-copper-top.gbr").is_file());
    let out = lehr_cmd()
        .args([
            "export",
            "p.board.ron",
            "--gerber",
            "g",
            "--allow-violations",
            "--json",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["refused"], false);
    assert_eq!(v["violations"].as_u64().unwrap() as usize, n);
}

#[test]
fn a_clean_board_exports_with_no_violations_in_json() {
    let dir = tempfile::tempdir().unwrap();
    let board = dir.path().join("clean.board.ron");
    lehr_engine::io::save_board(&board, &fixture().design.board).unwrap();
    let out = lehr_cmd()
        .arg("export")
        .arg(&board)
        .args(["--gerber", "g", "--json"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["refused"], false);
    assert_eq!(v["violations"], 0);
    assert_eq!(v["written"].as_array().unwrap().len(), 5);
}

#[test]
fn hazardous_boards_export_with_the_caution() {
    // Above 30 V (the usual extra-low-voltage limit for dry conditions, common practice)
    // the exports carry the caution that defers to IPC-2221, local codes and review.
    let mut board = fixture().design.board.clone();
    board.classes[0].voltage = Some(230.0);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("mains.board.ron");
    lehr_engine::io::save_board(&path, &board).unwrap();
    // The class's clearance is too small for 230 V: refused until allowed.
    let out = lehr_cmd()
        .arg("export")
        .arg(&path)
        .args(["--drill", "m.drl"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(3));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("ClassClearanceForVoltage: "), "{err}");
    let out = lehr_cmd()
        .arg("export")
        .arg(&path)
        .args(["--drill", "m.drl", "--allow-violations"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("IPC-2221") && err.contains("licensed"),
        "{err}"
    );
}

#[test]
fn unplaced_parts_are_left_out_and_named() {
    // The sample as written: only the four locked parts have positions.
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/led-dimmer.board.ron");
    let d = lehr_engine::io::load_board(&path).unwrap();
    let placed: Vec<&str> = d
        .board
        .parts
        .iter()
        .filter(|p| p.at.is_some())
        .map(|p| p.reference.as_str())
        .collect();
    assert_eq!(placed, ["J1", "RV1", "H1", "H2"]);
    let w = lehr_engine::fab::warnings(&d);
    assert!(
        w.iter()
            .any(|w| w.starts_with("6 unplaced parts") && w.ends_with("U1, C1, C2, D1, D2, Q1")),
        "{w:?}"
    );
    let pic = read_gerber(&gerber(&d, GerberLayer::CopperTop, &FabOptions::default()).unwrap());
    let refs: BTreeSet<String> = pic
        .flashes
        .iter()
        .filter_map(|f| f.pin.as_ref().map(|p| p.0.clone()))
        .collect();
    assert_eq!(refs, ["J1", "RV1"].map(String::from).into());
    let rows = centroid::centroids(&d);
    assert_eq!(
        rows.iter()
            .map(|r| r.reference.as_str())
            .collect::<Vec<_>>(),
        ["J1", "RV1"]
    );
}
