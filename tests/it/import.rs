//! Netlist import: CSV/TSV connection lists read per RFC 4180, EDIF 2 0 0 netlists read
//! per EIA-548, footprint trade names, and imported boards placed by the annealer.
//!
//! Sources: RFC 4180 ("Common Format and MIME Type for Comma-Separated Values (CSV)
//! Files", 2005), whose section 2 examples are copied below; EIA-548 (EDIF 2 0 0), whose
//! constructs the hand-written netlists use as ../shared/CHECK-VALUES.md summarises them
//! (from memory: keywords case-insensitive, `(rename name "display")`, `&` escapes names
//! that start with a digit, `%n%` codes in strings, nested properties); package numbering
//! and sizes as noted per check. The netlists themselves are invented.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use lehr_engine::io::connections::{detect_delimiter, import_connections, read_records};
use lehr_engine::io::edif::{import_edif, read_mapping, read_sexprs};
use lehr_engine::io::import::{ImportProblem, Reason};
use lehr_engine::io::{ImportError, ImportFiles, ImportOptions, Imported, Location, OutlineSize};
use lehr_engine::model::names::{ACCEPTED_FORMS, NameError, parse_footprint_name};
use lehr_engine::model::{Board, FootprintSpec, resolve};
use lehr_engine::place::{self, AnnealOptions};
use proptest::prelude::*;

fn netlist_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/netlists")
}

fn read(name: &str) -> Vec<u8> {
    std::fs::read(netlist_dir().join(name)).expect("sample netlist is readable")
}

fn opts() -> ImportOptions {
    ImportOptions::default()
}

fn csv(conn: &str, parts: Option<&str>) -> Result<Imported, ImportError> {
    import_connections(
        conn.as_bytes(),
        "conn.csv",
        parts.map(|p| ("parts.csv", p.as_bytes())),
        &opts(),
    )
}

fn edif(text: &str, map: Option<&str>) -> Result<Imported, ImportError> {
    import_edif(
        text.as_bytes(),
        "net.edif",
        map.map(|m| ("map.txt", m.as_bytes())),
        &opts(),
    )
}

/// Nets as name -> sorted pins, for comparisons that ignore order.
fn nets(b: &Board) -> BTreeMap<String, Vec<String>> {
    b.nets
        .iter()
        .map(|n| {
            let mut p = n.pins.clone();
            p.sort();
            (n.name.clone(), p)
        })
        .collect()
}

fn parts(b: &Board) -> BTreeMap<String, (FootprintSpec, String)> {
    b.parts
        .iter()
        .map(|p| (p.reference.clone(), (p.footprint.clone(), p.value.clone())))
        .collect()
}

/// The one problem of a refused import: (file, line, column, reason).
fn only_problem(r: Result<Imported, ImportError>) -> (String, usize, usize, Reason) {
    match r {
        Err(ImportError::Invalid { problems }) => {
            assert_eq!(problems.len(), 1, "expected one problem, got {problems:?}");
            let ImportProblem { file, at, reason } = problems.into_iter().next().unwrap();
            (file, at.line, at.column, reason)
        }
        Err(e) => panic!("expected a located problem, got {e}"),
        Ok(i) => panic!("expected an error, imported {} parts", i.board.parts.len()),
    }
}

fn pins(list: &[&str]) -> Vec<String> {
    let mut v: Vec<String> = list.iter().map(|s| s.to_string()).collect();
    v.sort();
    v
}

// ---------------------------------------------------------------------------------------
// RFC 4180
// ---------------------------------------------------------------------------------------

#[test]
fn rfc4180_section2_examples() {
    // RFC 4180 section 2, rules 1 to 7, with their own example records.
    let cases: &[(&str, Vec<Vec<&str>>)] = &[
        // 2.1: records on separate lines, delimited by CRLF.
        (
            "aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n",
            vec![vec!["aaa", "bbb", "ccc"], vec!["zzz", "yyy", "xxx"]],
        ),
        // 2.2: the last record may or may not end with a line break.
        (
            "aaa,bbb,ccc\r\nzzz,yyy,xxx",
            vec![vec!["aaa", "bbb", "ccc"], vec!["zzz", "yyy", "xxx"]],
        ),
        // 2.3: an optional header line in the same format.
        (
            "field_name,field_name,field_name\r\naaa,bbb,ccc\r\n",
            vec![vec!["field_name"; 3], vec!["aaa", "bbb", "ccc"]],
        ),
        // 2.5: fields may be enclosed in double quotes.
        (
            "\"aaa\",\"bbb\",\"ccc\"\r\nzzz,yyy,xxx",
            vec![vec!["aaa", "bbb", "ccc"], vec!["zzz", "yyy", "xxx"]],
        ),
        // 2.6: quoted fields may hold line breaks, quotes and commas.
        (
            "\"aaa\",\"b\r\nbb\",\"ccc\"\r\nzzz,yyy,xxx",
            vec![vec!["aaa", "b\r\nbb", "ccc"], vec!["zzz", "yyy", "xxx"]],
        ),
        // 2.7: a quote inside a quoted field is written twice.
        (
            "\"aaa\",\"b\"\"bb\",\"ccc\"",
            vec![vec!["aaa", "b\"bb", "ccc"]],
        ),
    ];
    for (text, want) in cases {
        let got = read_records(text, ',', "rfc.csv").unwrap();
        let got: Vec<Vec<&str>> = got
            .iter()
            .map(|r| r.fields.iter().map(|f| f.text.as_str()).collect())
            .collect();
        assert_eq!(&got, want, "{text:?}");
    }
    // 2.6: the record after a quoted line break starts on line 3.
    let r = read_records("\"aaa\",\"b\r\nbb\",\"ccc\"\r\nzzz,yyy,xxx", ',', "rfc.csv").unwrap();
    assert_eq!(r[1].fields[1].at, Location { line: 3, column: 5 });
    assert_eq!(r[0].fields[2].at, Location { line: 2, column: 5 });
}

#[test]
fn rfc4180_violations_are_located() {
    // 2.5: "If fields are not enclosed with double quotes, then double quotes may not
    // appear inside the fields."
    let e = read_records("net,part,pin\nA,R\"1,2\n", ',', "x.csv").unwrap_err();
    assert_eq!(
        e.to_string(),
        "x.csv:2:4: a double quote inside an unquoted field (RFC 4180 section 2.5: quote the whole field and write the quote twice)"
    );
    let e = read_records("net,part,pin\nA,\"R1,2\n", ',', "x.csv").unwrap_err();
    assert!(
        e.to_string()
            .starts_with("x.csv:2:3: a quoted field is not closed"),
        "{e}"
    );
    let e = read_records("net,part,pin\nA,\"R1\"x,2\n", ',', "x.csv").unwrap_err();
    assert!(
        e.to_string()
            .starts_with("x.csv:2:7: text after the closing quote"),
        "{e}"
    );
}

#[test]
fn spaces_around_fields() {
    // Outside RFC 4180 (which counts spaces as part of a field), spaces around unquoted
    // fields and before an opening quote are dropped; quoted text keeps its spaces.
    let r = read_records("a , \" b\" ,c\n", ',', "s.csv").unwrap();
    let got: Vec<&str> = r[0].fields.iter().map(|f| f.text.as_str()).collect();
    assert_eq!(got, ["a", " b", "c"]);
    assert_eq!(r[0].fields[1].at, Location { line: 1, column: 5 });
}

#[test]
fn delimiter_is_detected() {
    assert_eq!(detect_delimiter("net,part,pin\n"), ',');
    assert_eq!(detect_delimiter("net\tpart\tpin\n"), '\t');
    assert_eq!(detect_delimiter("net;part;pin\n"), ';');
    // A comma inside a quoted header name does not count.
    assert_eq!(detect_delimiter("\"net, name\";part;pin\n"), ';');
}

// ---------------------------------------------------------------------------------------
// Connection lists
// ---------------------------------------------------------------------------------------

const PARTS: &str = "Reference,Value,Footprint\r\n\
R1,\"10k, 1%\",0603\r\n\
U1,\"timer \"\"B\"\"\",soic-8\r\n\
J1,,Header 1x2\r\n";

const CONN: &str = "Net Name,Ref,Pin\r\n\
VCC,U1,8\r\n\
VCC,R1,1\r\n\
VCC,J1,1\r\n\
\"OUT, A\",U1,3\r\n\
\"OUT, A\",R1,2\r\n\
GND,U1,1\r\n\
GND,J1,2\r\n";

#[test]
fn connection_list_with_parts_table() {
    let imp = csv(CONN, Some(PARTS)).unwrap();
    let b = &imp.board;
    assert!(imp.warnings.is_empty(), "{:?}", imp.warnings);
    assert_eq!(
        nets(b),
        BTreeMap::from([
            ("VCC".to_string(), pins(&["U1.8", "R1.1", "J1.1"])),
            ("OUT, A".to_string(), pins(&["U1.3", "R1.2"])),
            ("GND".to_string(), pins(&["U1.1", "J1.2"])),
        ])
    );
    let p = parts(b);
    assert_eq!(
        p["R1"],
        (FootprintSpec::Chip("0603".into()), "10k, 1%".into())
    );
    assert_eq!(p["U1"], (FootprintSpec::Soic(8), "timer \"B\"".into()));
    // `header 1x2`: one row of two pins, standing upright in the board file.
    assert_eq!(p["J1"].0, FootprintSpec::Header { rows: 2, cols: 1 });
    // Unplaced, one default class, and the board passes every check.
    assert!(b.parts.iter().all(|p| p.at.is_none()));
    assert_eq!(b.classes.len(), 1);
    assert_eq!(b.classes[0].name, "default");
    assert!(b.nets.iter().all(|n| n.class.as_deref() == Some("default")));
    resolve(b.clone()).unwrap();
}

#[test]
fn tsv_and_semicolons_read_the_same() {
    let want = nets(&csv(CONN, Some(PARTS)).unwrap().board);
    let tsv: String = CONN
        .replace("\"OUT, A\"", "OUT@ A")
        .replace(',', "\t")
        .replace('@', ",");
    assert_eq!(nets(&csv(&tsv, Some(PARTS)).unwrap().board), want);
    let semi: String = CONN
        .replace("\"OUT, A\"", "OUT@ A")
        .replace(',', ";")
        .replace('@', ",");
    let semi_parts = "ref;value;package\nR1;10k;0603\nU1;;SOIC-8\nJ1;;header 1x2\n";
    assert_eq!(nets(&csv(&semi, Some(semi_parts)).unwrap().board), want);
}

#[test]
fn footprints_and_classes_in_the_connection_list() {
    let conn = "net,part,pin,footprint,value,class\n\
        VIN,J1,1,terminal block 2,,power\n\
        VIN,C1,1,0805,10u,\n\
        GND,J1,2,,,power\n\
        GND,C1,2,0805,,\n";
    let imp = csv(conn, None).unwrap();
    let b = &imp.board;
    assert_eq!(parts(b)["J1"].0, FootprintSpec::TerminalBlock(2));
    assert_eq!(
        parts(b)["C1"],
        (FootprintSpec::Chip("0805".into()), "10u".into())
    );
    let classes: Vec<&str> = b.classes.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(classes, ["default", "power"]);
    assert!(b.nets.iter().all(|n| n.class.as_deref() == Some("power")));
}

#[test]
fn connection_list_errors_name_file_line_and_column() {
    let parts = "reference,footprint\nR1,0603\nU1,SOIC-8\n";
    // Unknown footprint: at the footprint cell of the parts table.
    let (f, l, c, r) = only_problem(csv(
        "net,part,pin\nA,R1,1\n",
        Some("reference,footprint\nR1,0603\nU1,SOIC-9000\n"),
    ));
    assert_eq!((f.as_str(), l, c), ("parts.csv", 3, 4));
    assert!(
        matches!(r, Reason::Footprint(NameError::Invalid { .. })),
        "{r}"
    );
    let (f, l, c, r) = only_problem(csv(
        "net,part,pin\nA,R1,1\n",
        Some("reference,footprint\nR1,0603\nU1,gizmo\n"),
    ));
    assert_eq!((f.as_str(), l, c), ("parts.csv", 3, 4));
    assert!(r.to_string().contains("accepted: 0402, 0603"), "{r}");
    // A pin the footprint lacks: at the pin cell.
    let (f, l, c, r) = only_problem(csv("net,part,pin\nA,R1,1\nA, U1 , 9\n", Some(parts)));
    assert_eq!((f.as_str(), l, c), ("conn.csv", 3, 9));
    assert_eq!(r.to_string(), "part U1 (SOIC-8) has no pin \"9\"");
    // A pin on two nets: at its second mention, naming the first line.
    let (_, l, c, r) = only_problem(csv("net,part,pin\nA,R1,1\nB,U1,2\nB,R1,1\n", Some(parts)));
    assert_eq!((l, c), (4, 6));
    assert_eq!(
        r.to_string(),
        "pin R1.1 is on two nets: \"A\" (line 2) and \"B\""
    );
    // A part with no footprint: where it is first named.
    let (f, l, c, r) = only_problem(csv("net,part,pin\nA,R1,1\nA,C7,2\n", Some(parts)));
    assert_eq!((f.as_str(), l, c), ("conn.csv", 3, 3));
    assert!(
        matches!(r, Reason::NoFootprint { ref part, .. } if part == "C7"),
        "{r}"
    );
    // An empty net name.
    let (_, l, c, r) = only_problem(csv("net,part,pin\nA,R1,1\n,U1,2\n", Some(parts)));
    assert_eq!((l, c, r), (3, 1, Reason::EmptyField("net name")));
    // A row with too few fields (RFC 4180 section 2.4: the same number of fields).
    let (_, l, c, r) = only_problem(csv("net,part,pin\nA,R1\n", Some(parts)));
    assert_eq!(
        (l, c, r),
        (
            2,
            1,
            Reason::FieldCount {
                found: 2,
                expected: 3
            }
        )
    );
    // A missing column, at the header.
    let (_, l, c, r) = only_problem(csv("net,part\nA,R1\n", Some(parts)));
    assert_eq!((l, c), (1, 1));
    assert!(
        matches!(r, Reason::MissingColumn { column: "pin", .. }),
        "{r}"
    );
    // A part listed twice in the table.
    let (f, l, c, r) = only_problem(csv(
        "net,part,pin\nA,R1,1\n",
        Some("ref,footprint\nR1,0603\n\nR1,0805\n"),
    ));
    assert_eq!((f.as_str(), l, c), ("parts.csv", 4, 1));
    assert_eq!(
        r,
        Reason::DuplicatePart {
            part: "R1".into(),
            first_line: 2
        }
    );
    // A reference the board cannot hold.
    let (_, l, c, r) = only_problem(csv("net,part,pin\nA,R.1,1\n", Some(parts)));
    assert_eq!((l, c, r), (2, 3, Reason::BadReference("R.1".into())));
    // Two classes for one net.
    let (_, l, c, r) = only_problem(csv("net,part,pin,class\nA,R1,1,x\nA,R1,2,y\n", Some(parts)));
    assert_eq!((l, c), (3, 8));
    assert!(matches!(r, Reason::ClassConflict { .. }), "{r}");
    // Not UTF-8: at the first bad byte.
    let e = import_connections(b"net,part,pin\nA,R\xff,1\n", "bad.csv", None, &opts()).unwrap_err();
    assert_eq!(e.to_string(), "bad.csv:2:4: the file is not UTF-8 text");
    // Several problems: all kept, the message shows the first and counts the rest.
    let e = csv("net,part,pin\n,R1,1\n,R1,2\n", Some(parts)).unwrap_err();
    assert_eq!(
        e.to_string(),
        "conn.csv:2:1: empty net name (and 1 more problem)"
    );
}

#[test]
fn outline_given_or_sized_from_courtyards() {
    let parts = "reference,footprint\nR1,0603\nU1,SOIC-8\nJ1,header 1x2\n";
    let given = import_connections(
        CONN.as_bytes(),
        "c.csv",
        Some(("p.csv", parts.as_bytes())),
        &ImportOptions {
            name: Some("given".into()),
            outline: Some("40 x 25".parse().unwrap()),
        },
    )
    .unwrap();
    assert_eq!(given.board.name, "given");
    let bb = given.board.outline.bounds();
    assert_eq!((bb.width(), bb.height()), (40.0, 25.0));
    // Automatic: the square of 2.5 x the courtyard area, at least 10 mm (the rule in
    // docs/import-formats.md), and the board checks pass.
    let auto = csv(CONN, Some(parts)).unwrap().board;
    let d = resolve(auto.clone()).unwrap();
    let area: f64 = d.footprints.iter().map(|f| f.courtyard.area()).sum();
    let longest = d
        .footprints
        .iter()
        .map(|f| f.courtyard.width().max(f.courtyard.height()))
        .fold(0.0, f64::max);
    let side = auto.outline.bounds().width();
    let want = (area / 0.4)
        .sqrt()
        .max(longest + 2.0 * 0.3 + 1.0)
        .max(10.0)
        .ceil();
    assert_eq!((side, auto.outline.bounds().height()), (want, want));
    assert!(side * side >= 2.5 * area);
    // A given outline too small for the courtyards fails the board checks.
    let small = import_connections(
        CONN.as_bytes(),
        "c.csv",
        Some(("p.csv", parts.as_bytes())),
        &ImportOptions {
            name: None,
            outline: Some(OutlineSize {
                width: 2.0,
                height: 2.0,
            }),
        },
    );
    assert!(matches!(small, Err(ImportError::Board { .. })));
    assert!("50x".parse::<OutlineSize>().is_err());
    assert!("0x5".parse::<OutlineSize>().is_err());
    assert_eq!(
        "50X30mm".parse::<OutlineSize>().unwrap(),
        OutlineSize {
            width: 50.0,
            height: 30.0
        }
    );
}

// ---------------------------------------------------------------------------------------
// EDIF 2 0 0
// ---------------------------------------------------------------------------------------

/// A hand-written EDIF 2 0 0 netlist (EIA-548 syntax): mixed-case keywords, `rename` on
/// ports, instances and nets, `&` names, nested properties with string and integer values,
/// a `designator`, a `%34%` string code, the design's own port on a net, and constructs
/// outside the subset (`figure`, `portInstance`) that must be skipped with a warning.
const SMALL_EDIF: &str = r#"(EDIF blinker
  (edifVersion 2 0 0) (EDIFLEVEL 0) (keywordMap (keywordLevel 0))
  (status (written (timeStamp 2026 1 2 3 4 5)))
  (Library lib (edifLevel 0) (technology (numberDefinition))
    (cell LED (cellType GENERIC)
      (view v (viewType NETLIST)
        (interface (port (rename ANODE "1") (direction INPUT)) (port (rename CATHODE "2")))))
    (cell RES (cellType GENERIC)
      (view v (viewType NETLIST) (interface (port &1) (port &2))
        (property Footprint (string "0805"))))
    (cell TOP (cellType GENERIC)
      (View v (viewType NETLIST)
        (interface (port VBAT (direction INPUT)))
        (Contents
          (Instance (rename d_1 "D1") (viewRef v (cellRef LED (libraryRef lib)))
            (property PCB (string "")
              (property Layout (integer 1)
                (property Footprint (string "radial 2.54 5"))))
            (property value (string "red %34%5 mm%34%"))
            (portInstance ANODE))
          (instance rx (designator "R7") (viewRef v (cellRef res (libraryRef LIB)))
            (property Value (integer 470)))
          (Net (rename vbat_net "+BAT")
            (Joined (PortRef VBAT) (portRef &1 (instanceRef RX)))
            (figure wire (path (pointList (pt 0 0) (pt 1 1)))))
          (net LED_A (joined (portRef &2 (instanceRef rx)) (portRef anode (instanceRef D_1))))
          (net GND (joined (portRef CATHODE (instanceRef d_1))))))))
  (design blinker (cellRef TOP (libraryRef lib))))
"#;

#[test]
fn edif_subset_with_rename_and_nested_properties() {
    // EIA-548 (EDIF 2 0 0), from memory: keywords and names are case-insensitive, so
    // `Instance`/`instance`, `RX`/`rx` and `D_1`/`d_1` are the same; `(rename a "b")`
    // displays `b`; `&1` is the name `1`; `%34%` is a double quote.
    let imp = edif(SMALL_EDIF, None).unwrap();
    let b = &imp.board;
    assert_eq!(
        nets(b),
        BTreeMap::from([
            ("+BAT".to_string(), pins(&["R7.1"])),
            ("LED_A".to_string(), pins(&["R7.2", "D1.1"])),
            ("GND".to_string(), pins(&["D1.2"])),
        ])
    );
    let p = parts(b);
    assert_eq!(
        p["D1"],
        (
            FootprintSpec::Radial {
                pitch: 2.54,
                diameter: 5.0
            },
            "red \"5 mm\"".to_string()
        )
    );
    // The resistor's footprint comes from its cell's property, its value from an integer.
    assert_eq!(p["R7"], (FootprintSpec::Chip("0805".into()), "470".into()));
    // Skipped with warnings, at their positions: the portInstance, the design's own port
    // on +BAT, and the figure.
    let w: Vec<(usize, usize)> = imp
        .warnings
        .iter()
        .map(|w| (w.at.line, w.at.column))
        .collect();
    assert_eq!(w, [(20, 13), (24, 21), (25, 13)], "{:#?}", imp.warnings);
    assert!(imp.warnings[0].message.contains("portinstance"));
    assert!(imp.warnings[1].message.contains("VBAT"));
}

#[test]
fn edif_sample_matches_its_connection_list() {
    // The demo pair in sample-boards/netlists/ describes one invented circuit twice; both
    // readers must give the same board. The EDIF file uses a mapping file for four cells,
    // a cell property, nested instance properties and renamed instances and nets.
    let from_csv = import_connections(
        &read("vent-controller.csv"),
        "vent-controller.csv",
        Some((
            "vent-controller.parts.csv",
            &read("vent-controller.parts.csv"),
        )),
        &opts(),
    )
    .unwrap();
    let from_edif = import_edif(
        &read("vent-controller.edif"),
        "vent-controller.edif",
        Some((
            "vent-controller.footprints.txt",
            &read("vent-controller.footprints.txt"),
        )),
        &opts(),
    )
    .unwrap();
    assert!(from_csv.warnings.is_empty(), "{:?}", from_csv.warnings);
    assert!(from_edif.warnings.is_empty(), "{:?}", from_edif.warnings);
    assert_eq!(from_csv.board, from_edif.board);
    let b = &from_edif.board;
    assert_eq!(b.parts.len(), 15);
    // Expected nets, written out from the netlist by hand.
    let n = nets(b);
    assert_eq!(
        n["3V3"],
        pins(&["U2.5", "C1.1", "C2.1", "U1.8", "R1.1", "J3.1"])
    );
    assert_eq!(n["MOTOR_N"], pins(&["Q1.3", "D1.2", "J2.2"]));
    assert_eq!(n["REF"], pins(&["R1.2", "R2.1", "U1.3"]));
    assert_eq!(n.len(), 9);
    let p = parts(b);
    assert_eq!(p["U1"].0, FootprintSpec::Soic(8));
    assert_eq!(p["U2"].0, FootprintSpec::Sot23(5));
    assert_eq!(p["J3"].0, FootprintSpec::Header { rows: 3, cols: 1 });
    assert_eq!(p["C3"].1, "47u 25V \"low ESR\"");
    assert_eq!(p["R1"].1, "100k, 1%");
    let power: Vec<&str> = b
        .nets
        .iter()
        .filter(|n| n.class.as_deref() == Some("power"))
        .map(|n| n.name.as_str())
        .collect();
    assert_eq!(power, ["VIN", "GND", "MOTOR_N"]);
}

#[test]
fn edif_hierarchy_is_not_flattened() {
    // A cell whose contents hold instances of its own is a sheet, not a part: it is left
    // out with a warning, and so are its pins.
    let text = "(edif h (library l\n\
        (cell R (view v (interface (port &1) (port &2)) (property footprint (string \"0603\"))))\n\
        (cell SHEET (view v (interface (port a)) (contents (instance R9 (viewRef v (cellRef R))))))\n\
        (cell TOP (view v (contents\n\
          (instance S1 (viewRef v (cellRef SHEET)))\n\
          (instance R1 (viewRef v (cellRef R)))\n\
          (net N (joined (portRef &1 (instanceRef R1)) (portRef a (instanceRef S1)))))))))";
    let imp = edif(text, None).unwrap();
    assert_eq!(imp.board.parts.len(), 1);
    assert_eq!(nets(&imp.board)["N"], pins(&["R1.1"]));
    assert_eq!(imp.warnings.len(), 1, "{:?}", imp.warnings);
    assert_eq!((imp.warnings[0].at.line, imp.warnings[0].at.column), (5, 1));
    assert!(imp.warnings[0].message.contains("not flattened"));
}

#[test]
fn edif_errors_are_located() {
    let e = edif("(edif x\n  (library l\n", None).unwrap_err();
    assert_eq!(
        e.to_string(),
        "net.edif:2:3: a list is not closed (missing \")\")"
    );
    let e = edif("(edif x))", None).unwrap_err();
    assert_eq!(e.to_string(), "net.edif:1:9: a \")\" closes no list");
    let e = edif("(edif x (status \"open", None).unwrap_err();
    assert_eq!(e.to_string(), "net.edif:1:17: a string is not closed");
    let e = edif("(netlist x)", None).unwrap_err();
    assert!(
        e.to_string()
            .starts_with("net.edif:1:1: not an EDIF netlist"),
        "{e}"
    );
    let deep = format!("(edif x {}{})", "(".repeat(300), ")".repeat(300));
    assert!(
        edif(&deep, None)
            .unwrap_err()
            .to_string()
            .contains("nest deeper")
    );
    // An instanceRef to no instance, a pin the footprint lacks, a missing footprint.
    let body = |net: &str, fp: &str| {
        format!(
            "(edif x (library l (cell R (view v (interface (port &1) (port &2))))\n\
             (cell T (view v (contents (instance R1 (viewRef v (cellRef R)){fp})\n\
             {net})))))"
        )
    };
    let fp = " (property footprint (string \"0603\"))";
    let (_, l, c, r) = only_problem(edif(
        &body("(net N (joined (portRef &1 (instanceRef R9))))", fp),
        None,
    ));
    assert_eq!((l, c), (3, 28));
    assert!(r.to_string().contains("no instance is named \"r9\""), "{r}");
    let (_, l, c, r) = only_problem(edif(
        &body("(net N (joined (portRef &3 (instanceRef R1))))", fp),
        None,
    ));
    assert_eq!((l, c), (3, 16));
    assert_eq!(r.to_string(), "part R1 (0603) has no pin \"3\"");
    let (_, l, c, r) = only_problem(edif(
        &body("(net N (joined (portRef &1 (instanceRef R1))))", ""),
        None,
    ));
    assert_eq!((l, c), (2, 27));
    assert!(matches!(r, Reason::NoFootprint { .. }), "{r}");
    // The mapping file fills it in; a bad mapping line is located.
    let ok = edif(
        &body("(net N (joined (portRef &1 (instanceRef R1))))", ""),
        Some("# cells\nr = 1206\n"),
    )
    .unwrap();
    assert_eq!(
        ok.board.parts[0].footprint,
        FootprintSpec::Chip("1206".into())
    );
    let e = read_mapping(b"R = 0603\nC 0805\nU =  SOIC-99\n", "m.txt").unwrap_err();
    let ImportError::Invalid { problems } = e else {
        panic!()
    };
    let at: Vec<(usize, usize)> = problems.iter().map(|p| (p.at.line, p.at.column)).collect();
    assert_eq!(at, [(2, 1), (3, 6)]);
}

#[test]
fn import_file_picks_the_format() {
    let dir = netlist_dir();
    let files = ImportFiles {
        netlist: &dir.join("vent-controller.edif"),
        parts: None,
        footprints: Some(&dir.join("vent-controller.footprints.txt")),
    };
    let (format, imp) = lehr_engine::io::import_file(&files, &opts()).unwrap();
    assert_eq!(format, lehr_engine::io::Format::Edif);
    assert_eq!(imp.board.name, "vent-controller");
    // Content decides for an unknown extension.
    assert_eq!(
        lehr_engine::io::Format::detect(Path::new("n.net"), b"  (edif"),
        lehr_engine::io::Format::Edif
    );
    assert_eq!(
        lehr_engine::io::Format::detect(Path::new("n.net"), b"net,part"),
        lehr_engine::io::Format::Connections
    );
    let missing = ImportFiles {
        netlist: &dir.join("no-such-file.csv"),
        parts: None,
        footprints: None,
    };
    assert!(matches!(
        lehr_engine::io::import_file(&missing, &opts()),
        Err(ImportError::Io { .. })
    ));
}

// ---------------------------------------------------------------------------------------
// Footprint names
// ---------------------------------------------------------------------------------------

#[test]
fn footprint_trade_names() {
    use FootprintSpec as F;
    let cases: &[(&str, F)] = &[
        ("0603", F::Chip("0603".into())),
        ("chip 1206", F::Chip("1206".into())),
        ("SOD-123", F::Sod123),
        ("sot23", F::Sot23(3)),
        ("SOT-23-5", F::Sot23(5)),
        ("sot_23_6", F::Sot23(6)),
        ("SOIC-8", F::Soic(8)),
        ("so-14", F::Soic(14)),
        ("TSSOP-20", F::Tssop(20)),
        // Default QFN-32 body 5 x 5, pitch 0.5 (JEDEC MO-220, from memory).
        (
            "QFN-32",
            F::Qfn {
                pins: 32,
                body: 5.0,
                pitch: 0.5,
                thermal: None,
            },
        ),
        (
            "qfn-20 4x4mm 0.5 ep 2.5",
            F::Qfn {
                pins: 20,
                body: 4.0,
                pitch: 0.5,
                thermal: Some(2.5),
            },
        ),
        // Default QFP-44 body 10 x 10, pitch 0.8 (JEDEC MS-026, from memory).
        (
            "QFP-44",
            F::Qfp {
                pins: 44,
                body: 10.0,
                pitch: 0.8,
            },
        ),
        (
            "LQFP-64 10x10 0.5",
            F::Qfp {
                pins: 64,
                body: 10.0,
                pitch: 0.5,
            },
        ),
        (
            "DIP-14",
            F::Dip {
                pins: 14,
                wide: false,
            },
        ),
        (
            "dip-40 wide",
            F::Dip {
                pins: 40,
                wide: true,
            },
        ),
        ("header 2x5", F::Header { rows: 5, cols: 2 }),
        ("pin header 8", F::Header { rows: 8, cols: 1 }),
        ("terminal block 3", F::TerminalBlock(3)),
        ("Terminal-Block-2", F::TerminalBlock(2)),
        ("TO-220", F::To220),
        (
            "radial 2.5 6.3",
            F::Radial {
                pitch: 2.5,
                diameter: 6.3,
            },
        ),
        (
            "axial 10.16 6.3 2.5",
            F::Axial {
                pitch: 10.16,
                length: 6.3,
                diameter: 2.5,
            },
        ),
        // M3 clearance hole 3.4 mm, medium fit (ISO 273, from memory).
        (
            "mounting hole M3",
            F::MountingHole {
                hole: 3.4,
                pad: None,
            },
        ),
        (
            "mounting hole 3.2 pad 6",
            F::MountingHole {
                hole: 3.2,
                pad: Some(6.0),
            },
        ),
        // The board file's own spelling.
        (
            "Qfn(pins: 16, body: 3, pitch: 0.5)",
            F::Qfn {
                pins: 16,
                body: 3.0,
                pitch: 0.5,
                thermal: None,
            },
        ),
        ("Soic(14)", F::Soic(14)),
    ];
    for (name, want) in cases {
        assert_eq!(&parse_footprint_name(name).unwrap(), want, "{name}");
    }
}

#[test]
fn header_numbering_and_footprint_errors() {
    // Two-row headers number odd pins on one side and even on the other, 1 and 2 side by
    // side 2.54 mm apart (common practice).
    let fp = parse_footprint_name("header 2x5").unwrap().build().unwrap();
    let p1 = fp.pads[fp.pad_index("1").unwrap()].at;
    let p2 = fp.pads[fp.pad_index("2").unwrap()].at;
    let p3 = fp.pads[fp.pad_index("3").unwrap()].at;
    assert!(((p2.x - p1.x).abs() - 2.54).abs() < 1e-9 && (p2.y - p1.y).abs() < 1e-9);
    assert!((p3.x - p1.x).abs() < 1e-9 && ((p3.y - p1.y).abs() - 2.54).abs() < 1e-9);
    // SOIC-8: 8 pads, 1.27 mm pitch (JEDEC MS-012, CHECK-VALUES.md).
    let soic = parse_footprint_name("soic-8").unwrap().build().unwrap();
    assert_eq!(soic.pads.len(), 8);
    let d = soic.pads[1].at.y - soic.pads[0].at.y;
    assert!((d.abs() - 1.27).abs() < 1e-9);
    // Errors: unknown names list the accepted forms; impossible ones say why.
    let e = parse_footprint_name("sprocket-7").unwrap_err();
    assert!(e.to_string().ends_with(ACCEPTED_FORMS), "{e}");
    assert!(matches!(
        parse_footprint_name("SOIC-9"),
        Err(NameError::Invalid { .. })
    ));
    assert!(matches!(
        parse_footprint_name("QFN-36"),
        Err(NameError::Unknown { .. })
    ));
    assert!(parse_footprint_name("QFN-36 6x6 0.5").is_ok());
    assert!(
        parse_footprint_name("QFN-32 5x6")
            .unwrap_err()
            .to_string()
            .contains("square")
    );
    assert!(parse_footprint_name("").is_err());
    assert!(parse_footprint_name("0603 extra").is_err());
}

// ---------------------------------------------------------------------------------------
// Placement and round trip
// ---------------------------------------------------------------------------------------

#[test]
fn imported_board_places_legally_and_round_trips() {
    let imp = import_connections(
        &read("vent-controller.csv"),
        "vent-controller.csv",
        Some((
            "vent-controller.parts.csv",
            &read("vent-controller.parts.csv"),
        )),
        &opts(),
    )
    .unwrap();
    let design = resolve(imp.board.clone()).unwrap();
    let placed = place::place(&design, &AnnealOptions::default(), |_| true).unwrap();
    assert!(
        placed.report.legal,
        "conflicts: {:?}",
        placed.report.conflicts
    );
    // Independently of the placer's bookkeeping: every courtyard inside the outline and
    // no two overlapping (plain rectangle arithmetic).
    let d = resolve(placed.board.clone()).unwrap();
    let outline = d.board.outline.bounds();
    let rects: Vec<_> = (0..d.board.parts.len())
        .map(|i| {
            d.courtyard(lehr_engine::model::PartId(i as u32))
                .expect("placed")
        })
        .collect();
    for (i, a) in rects.iter().enumerate() {
        assert!(
            a.min.x >= outline.min.x - 1e-9
                && a.min.y >= outline.min.y - 1e-9
                && a.max.x <= outline.max.x + 1e-9
                && a.max.y <= outline.max.y + 1e-9,
            "{} sticks out",
            d.board.parts[i].reference
        );
        for b in &rects[i + 1..] {
            assert!(a.overlap_area(b) <= 1e-9);
        }
    }
    // Save and load: the same board.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("vent.board.ron");
    lehr_engine::io::save_board(&path, &imp.board).unwrap();
    assert_eq!(lehr_engine::io::load_board(&path).unwrap().board, imp.board);
    lehr_engine::io::save_board(&path, &placed.board).unwrap();
    assert_eq!(
        lehr_engine::io::load_board(&path).unwrap().board,
        placed.board
    );
}

/// `lehr import` itself: the format from the extension, JSON output, the board written;
/// on error exit code 1, one line on stderr, and an existing output file left alone.
#[test]
fn command_line_import() {
    let exe = env!("CARGO_BIN_EXE_lehr");
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("vent.board.ron");
    let n = netlist_dir();
    let run =
        |args: &[&std::ffi::OsStr]| std::process::Command::new(exe).args(args).output().unwrap();
    let ok = run(&[
        "import".as_ref(),
        n.join("vent-controller.edif").as_os_str(),
        "--footprints".as_ref(),
        n.join("vent-controller.footprints.txt").as_os_str(),
        "--outline".as_ref(),
        "40x35".as_ref(),
        "--out".as_ref(),
        out.as_os_str(),
        "--json".as_ref(),
    ]);
    assert!(
        ok.status.success(),
        "{}",
        String::from_utf8_lossy(&ok.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&ok.stdout).unwrap();
    assert_eq!(v["format"], "EDIF");
    assert_eq!(v["parts"], 15);
    assert_eq!(v["outline_mm"], serde_json::json!([40.0, 35.0]));
    let saved = std::fs::read(&out).unwrap();
    assert_eq!(
        lehr_engine::io::load_board(&out).unwrap().board.parts.len(),
        15
    );
    // Without the mapping file: refused, one line, the old file untouched.
    let bad = run(&[
        "import".as_ref(),
        n.join("vent-controller.edif").as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ]);
    assert_eq!(bad.status.code(), Some(1));
    let err = String::from_utf8_lossy(&bad.stderr);
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.contains("vent-controller.edif:69:11: part R1 has no footprint"),
        "{err}"
    );
    assert_eq!(std::fs::read(&out).unwrap(), saved);
    let bad = run(&[
        "import".as_ref(),
        n.join("vent-controller.csv").as_os_str(),
        "--outline".as_ref(),
        "wide".as_ref(),
        "--out".as_ref(),
        out.as_os_str(),
    ]);
    assert_eq!(bad.status.code(), Some(1));
    assert_eq!(String::from_utf8_lossy(&bad.stderr).lines().count(), 1);
}

// ---------------------------------------------------------------------------------------
// Never a panic
// ---------------------------------------------------------------------------------------

/// Applies byte edits (position, action, byte) to a valid input.
fn mutate(base: &[u8], edits: &[(usize, u8, u8)]) -> Vec<u8> {
    let mut v = base.to_vec();
    for &(pos, action, byte) in edits {
        if v.is_empty() {
            v.push(byte);
            continue;
        }
        let i = pos % v.len();
        match action % 3 {
            0 => v[i] = byte,
            1 => v.insert(i, byte),
            _ => {
                v.remove(i);
            }
        }
    }
    v
}

/// Bytes that matter to the readers, so mutations hit the interesting paths.
fn syntax_byte() -> impl Strategy<Value = u8> {
    prop_oneof![
        Just(b'('),
        Just(b')'),
        Just(b'"'),
        Just(b','),
        Just(b'\t'),
        Just(b';'),
        Just(b'\n'),
        Just(b'\r'),
        Just(b'&'),
        Just(b'%'),
        Just(b'='),
        Just(b'#'),
        any::<u8>(),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let _ = import_connections(&bytes, "r.csv", Some(("p.csv", &bytes)), &opts());
        let _ = import_edif(&bytes, "r.edif", Some(("m.txt", &bytes)), &opts());
        let _ = read_sexprs(&String::from_utf8_lossy(&bytes), "r.edif");
        let _ = parse_footprint_name(&String::from_utf8_lossy(&bytes));
    }

    #[test]
    fn mutated_netlists_never_panic(
        edits in proptest::collection::vec((any::<usize>(), any::<u8>(), syntax_byte()), 1..8)
    ) {
        let conn = mutate(&read("vent-controller.csv"), &edits);
        let parts = mutate(&read("vent-controller.parts.csv"), &edits);
        let _ = import_connections(&conn, "c.csv", Some(("p.csv", &parts)), &opts());
        let e = mutate(SMALL_EDIF.as_bytes(), &edits);
        let _ = import_edif(&e, "n.edif", None, &opts());
        let e = mutate(&read("vent-controller.edif"), &edits);
        let m = mutate(&read("vent-controller.footprints.txt"), &edits);
        let _ = import_edif(&e, "n.edif", Some(("m.txt", &m)), &opts());
    }

    #[test]
    fn mutated_footprint_names_never_panic(
        i in 0usize..8,
        edits in proptest::collection::vec((any::<usize>(), any::<u8>(), syntax_byte()), 0..5)
    ) {
        let names = ["QFN-32 5x5 0.5 ep 3", "header 2x5", "SOT-23-5", "axial 10 6 2",
            "mounting hole 3 pad 6", "Qfn(pins: 16, body: 3, pitch: 0.5)", "terminal block 3",
            "dip-8 wide"];
        let s = mutate(names[i].as_bytes(), &edits);
        if let Ok(spec) = parse_footprint_name(&String::from_utf8_lossy(&s)) {
            // An accepted name always builds.
            prop_assert!(spec.build().is_ok());
        }
    }
}
