//! `lehr sweep`: the tables it writes agree with each other and with `lehr place` run
//! alone, and its pictures are well-formed SVG.

use std::path::Path;
use std::process::Command;

fn lehr(args: &[&str]) -> std::process::Output {
    let out = Command::new(env!("CARGO_BIN_EXE_lehr"))
        .args(args)
        .output()
        .expect("run lehr");
    assert!(
        out.status.success(),
        "lehr {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

fn csv(path: &Path) -> Vec<Vec<String>> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

#[test]
fn sweep_tables_agree_with_single_runs_and_pictures_parse() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let board = d.join("g.board.ron");
    let b = board.to_str().unwrap();
    lehr(&["generate", "grid", "--size", "4", "--out", b]);
    let out = d.join("sweep");
    let o = out.to_str().unwrap();
    lehr(&[
        "sweep",
        b,
        "--schedules",
        "geometric,descent",
        "--seeds",
        "1-2",
        "--param",
        "alpha=0.9,0.99",
        "--moves",
        "30000",
        "--out",
        o,
    ]);
    let runs = csv(&out.join("runs.csv"));
    assert_eq!(
        runs[0].join(","),
        "board,schedule,parameters,start,seed,moves,wirelength_mm,legal,seconds,moves_per_second"
    );
    // geometric at two alphas and descent (no alpha), two seeds each.
    assert_eq!(runs.len() - 1, 6);
    assert!(
        runs[1..].iter().all(|r| r[5] == "30000"),
        "exact equal budget"
    );
    assert_eq!(runs[1..].iter().filter(|r| r[2] == "alpha=0.9").count(), 2);

    // A run of the sweep is the same placement as `lehr place` with its settings.
    let placed = d.join("p.board.ron");
    let p = lehr(&[
        "place",
        b,
        "--schedule",
        "geometric",
        "--param",
        "alpha=0.99",
        "--seed",
        "2",
        "--moves",
        "30000",
        "--json",
        "--out",
        placed.to_str().unwrap(),
    ]);
    let j: serde_json::Value = serde_json::from_slice(&p.stdout).unwrap();
    let row = runs[1..]
        .iter()
        .find(|r| r[1] == "geometric" && r[2] == "alpha=0.99" && r[4] == "2")
        .expect("the run");
    let wl: f64 = row[6].parse().unwrap();
    assert!((wl - j["wirelength_mm"].as_f64().unwrap()).abs() < 1e-3);

    // The summary's mean and best are those of its runs.
    let summary = csv(&out.join("summary.csv"));
    assert_eq!(summary.len() - 1, 3);
    for s in &summary[1..] {
        let (label, start) = (&s[1], &s[2]);
        let wls: Vec<f64> = runs[1..]
            .iter()
            .filter(|r| {
                let l = if r[2].is_empty() {
                    r[1].clone()
                } else {
                    format!("{} {}", r[1], r[2])
                };
                &l == label && &r[3] == start
            })
            .map(|r| r[6].parse().unwrap())
            .collect();
        assert_eq!(wls.len(), 2, "{label}");
        let mean = wls.iter().sum::<f64>() / 2.0;
        let best = wls.iter().copied().fold(f64::INFINITY, f64::min);
        assert!(
            (s[5].parse::<f64>().unwrap() - mean).abs() < 1e-3,
            "{label}"
        );
        assert!(
            (s[7].parse::<f64>().unwrap() - best).abs() < 1e-3,
            "{label}"
        );
    }

    // Pictures: SVG that an independent XML parser reads, and PNG signatures.
    for name in ["g-wirelength", "g-best"] {
        let svg = std::fs::read_to_string(out.join(format!("{name}.svg"))).unwrap();
        let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
        assert_eq!(doc.root_element().tag_name().name(), "svg");
        let png = std::fs::read(out.join(format!("{name}.png"))).unwrap();
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    }
}

#[test]
fn sweep_refuses_a_parameter_no_schedule_has() {
    let out = Command::new(env!("CARGO_BIN_EXE_lehr"))
        .args([
            "sweep",
            "sample-boards/led-dimmer.board.ron",
            "--schedules",
            "descent",
            "--param",
            "alpha=0.9",
            "--out",
            "/nonexistent-never-made",
        ])
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap();
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("no schedule of the sweep has a parameter \"alpha\""),
        "{err}"
    );
}
