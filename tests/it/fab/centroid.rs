//! The centroid table and the run log read back.

use lehr_engine::fab::{centroid, runlog};
use lehr_engine::model::{FootprintSpec, Side};

use super::{close, fixture};

// ----------------------------------------------------------------------------------------
// Centroid and run log
// ----------------------------------------------------------------------------------------

/// Splits one CSV record (RFC 4180: quoted fields, doubled quotes inside).
fn csv_record(line: &str) -> Vec<String> {
    let mut out = vec![String::new()];
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', false) => quoted = true,
            ('"', true) if chars.peek() == Some(&'"') => {
                chars.next();
                out.last_mut().unwrap().push('"');
            }
            ('"', true) => quoted = false,
            (',', false) => out.push(String::new()),
            (c, _) => out.last_mut().unwrap().push(c),
        }
    }
    out
}

#[test]
fn centroid_rows_are_the_parts() {
    let d = &fixture().design;
    let text = centroid::centroid_csv(d);
    let mut lines = text.lines();
    assert_eq!(
        csv_record(lines.next().unwrap()),
        centroid::COLUMNS.map(String::from)
    );
    let rows: Vec<Vec<String>> = lines.map(csv_record).collect();
    let parts: Vec<_> = d
        .board
        .parts
        .iter()
        .zip(&d.footprints)
        .filter(|(p, _)| !matches!(p.footprint, FootprintSpec::MountingHole { .. }))
        .collect();
    assert_eq!(rows.len(), parts.len());
    for (row, (p, fp)) in rows.iter().zip(&parts) {
        let at = p.at.unwrap();
        assert_eq!(row[0], p.reference);
        assert_eq!(row[1], p.value);
        assert_eq!(row[2], fp.name);
        assert!(close(row[3].parse().unwrap(), at.x) && close(row[4].parse().unwrap(), at.y));
        assert_eq!(row[5].parse::<f64>().unwrap(), p.quarter().degrees());
        assert_eq!(row[6], if p.side == Side::Top { "top" } else { "bottom" });
    }
    assert!(rows.iter().any(|r| r[0] == "D2" && r[6] == "bottom"));
    // A value with a comma and a quote survives the round trip.
    let mut b = d.board.clone();
    b.parts[0].value = "2,2 \"R\"".into();
    let d2 = lehr_engine::model::resolve(b).unwrap();
    let text = centroid::centroid_csv(&d2);
    assert_eq!(csv_record(text.lines().nth(1).unwrap())[1], "2,2 \"R\"");
}

#[test]
fn the_run_log_has_one_row_per_stage() {
    let placed = &fixture().placed;
    let text = runlog::run_log(&placed.history);
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap().split(',').collect::<Vec<_>>(),
        runlog::COLUMNS
    );
    let fields: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    // The last two columns name the run: its start and its chain.
    let rows: Vec<Vec<f64>> = fields
        .iter()
        .map(|f| f[..11].iter().map(|v| v.parse().unwrap()).collect())
        .collect();
    assert!(placed.history.len() > 5);
    assert_eq!(rows.len(), placed.history.len());
    for (f, r) in fields.iter().zip(&placed.history) {
        assert_eq!(f[11], r.start.name());
        assert_eq!(f[12], r.chain.to_string());
    }
    // The default placement runs both starts: the log says which rows are which, the
    // given start's first, and the chain is one of the replicas.
    let starts: Vec<&str> = fields.iter().map(|f| f[11]).collect();
    assert!(
        starts
            .windows(2)
            .all(|w| w[0] == w[1] || (w[0] == "given" && w[1] == "spectral"))
    );
    assert!(fields.iter().all(|f| f[12].parse::<u32>().unwrap() < 8));
    for (row, r) in rows.iter().zip(&placed.history) {
        // Shortest round-trip notation: the numbers read back exactly.
        assert_eq!(
            row,
            &vec![
                f64::from(r.stage),
                r.moves as f64,
                r.temperature,
                r.energy,
                r.best_energy,
                r.terms.wirelength,
                r.terms.overlap,
                r.terms.outside,
                r.terms.keepout,
                r.acceptance,
                r.window
            ]
        );
    }
}
