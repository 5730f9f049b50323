//! Window tests with egui_kittest: the real app, headless (no display, no GPU), driven
//! through its widgets found by their labels; assertions on the app's state.
//!
//! They live in the binary (not in tests/it) because the app is part of the binary: the
//! library stays free of egui, even in its default build.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;

use lehr_engine::model::resolve;
use lehr_engine::place::{Schedule, generate};

use super::{Action, LehrApp, Settings};

/// A slow animation speed, so a run lasts long enough to pause it.
fn slow() -> Settings {
    let mut s = Settings::default();
    s.controls.speed = 200;
    s
}

fn grid_app() -> LehrApp {
    let design = resolve(generate::grid_board(8, 2.54, 3)).expect("generated board is valid");
    LehrApp::new(design, None, "grid".into(), slow())
}

fn harness(app: LehrApp) -> Harness<'static, LehrApp> {
    Harness::builder()
        .with_size([1280.0, 800.0])
        .build_ui_state(|ui, app: &mut LehrApp| app.show(ui), app)
}

/// Steps frames (letting the worker run in between) until `f` holds, up to 20 s.
fn wait_until(h: &mut Harness<'static, LehrApp>, what: &str, f: impl Fn(&LehrApp) -> bool) {
    let end = Instant::now() + Duration::from_secs(20);
    while Instant::now() < end {
        h.step();
        if f(h.state()) {
            return;
        }
        std::thread::sleep(Duration::from_millis(15));
    }
    panic!("timed out waiting until {what}");
}

fn moves(app: &LehrApp) -> u64 {
    app.snapshot().map_or(0, |s| s.moves)
}

fn running(app: &LehrApp) -> bool {
    app.snapshot().is_some_and(|s| s.running)
}

#[derive(Debug)]
struct Dropped(PathBuf);

impl egui::DroppedFile for Dropped {
    fn path(&self) -> &Path {
        &self.0
    }

    fn bytes(&self) -> Result<Vec<u8>, String> {
        std::fs::read(&self.0).map_err(|e| e.to_string())
    }
}

fn drop_file(h: &mut Harness<'static, LehrApp>, path: &Path) {
    h.input_mut()
        .dropped_files
        .push(Arc::new(Dropped(path.to_path_buf())));
    h.step();
}

#[test]
fn the_sample_board_opens_with_its_controls() {
    let mut h = harness(LehrApp::sample(Settings::default()).expect("the sample board loads"));
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    let n = h.state().design().board.parts.len();
    assert_eq!(h.state().snapshot().unwrap().positions.len(), n);
    for label in [
        "Run",
        "Pause",
        "Step",
        "Reheat",
        "Reset",
        "Descent only",
        "Finish",
    ] {
        h.get_by_label(label);
    }
    h.get_by_label("File");
    assert!(!h.state().is_dirty());
}

#[test]
fn run_makes_moves_and_pause_stops_them() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    assert_eq!(moves(h.state()), 0);
    h.get_by_label("Run").click();
    wait_until(&mut h, "moves increase", |a| moves(a) > 0 && running(a));
    let m1 = moves(h.state());
    wait_until(&mut h, "moves keep increasing", |a| moves(a) > m1);
    assert!(!h.state().plots.history.is_empty(), "the plots get samples");
    h.get_by_label("Pause").click();
    wait_until(&mut h, "the run pauses", |a| !running(a));
    let paused = moves(h.state());
    for _ in 0..10 {
        std::thread::sleep(Duration::from_millis(20));
        h.step();
    }
    assert_eq!(moves(h.state()), paused);
    assert!(h.state().is_dirty(), "annealing changes the board");
}

#[test]
fn changing_the_schedule_reaches_the_engine() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    h.get_by_label("schedule").click();
    h.run();
    h.get_by_label("lam-delosme").click();
    h.run();
    assert_eq!(h.state().settings.controls.schedule(), Schedule::LamDelosme);
    wait_until(&mut h, "the engine uses the new schedule", |a| {
        a.snapshot().and_then(|s| s.schedule) == Some(Schedule::LamDelosme)
    });
}

#[test]
fn a_locked_part_does_not_move() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    let part = 5u32;
    h.state_mut().canvas.selected = Some(part);
    h.step();
    h.get_by_label("Lock").click();
    wait_until(&mut h, "the part is locked", |a| {
        a.snapshot().is_some_and(|s| s.locked[part as usize])
    });
    let at = h.state().snapshot().unwrap().positions[part as usize];
    h.get_by_label("Unlock");
    h.get_by_label("Run").click();
    wait_until(&mut h, "many moves are made", |a| {
        moves(a) > 20_000 || a.snapshot().is_some_and(|s| s.done)
    });
    let s = h.state().snapshot().unwrap();
    assert_eq!(s.positions[part as usize], at);
    // Others did move.
    let before = resolve(generate::grid_board(8, 2.54, 3)).unwrap();
    let moved = before
        .board
        .parts
        .iter()
        .zip(&s.positions)
        .filter(|(p, q)| p.at != Some(**q))
        .count();
    assert!(moved > 10, "only {moved} parts moved");
}

#[test]
fn a_broken_file_shows_where_it_is_broken() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("broken.board.ron");
    std::fs::write(
        &path,
        "(\n    name: \"broken\",\n    outline: Rect(min: (0, 0), max: (10, 10)),\n    parts: [ oops ],\n)\n",
    )
    .unwrap();
    let mut h = harness(grid_app());
    drop_file(&mut h, &path);
    h.step();
    let text = h
        .state()
        .message_text()
        .expect("an error is shown")
        .to_string();
    let want = format!("{}:4:", path.display());
    assert!(text.contains(&want), "{text}");
    h.get_by_label_contains(&want);
    // The board that was open stays open.
    assert_eq!(h.state().design().board.parts.len(), 64);
}

#[test]
fn opening_asks_before_discarding_unsaved_changes_and_shows_cautions() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("mains.board.ron");
    let mut board = generate::grid_board(3, 2.54, 1);
    board.name = "mains".into();
    board.classes.push(lehr_engine::model::board::NetClass {
        name: "line".into(),
        track_width: 1.0,
        clearance: 2.5,
        current: None,
        voltage: Some(325.0),
        temp_rise: None,
    });
    lehr_engine::io::save_board(&path, &board).unwrap();

    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    h.state_mut().push(Action::Rotate(0));
    wait_until(&mut h, "the edit is made", |a| a.is_dirty());
    drop_file(&mut h, &path);
    // (A new window is laid out once before it shows.)
    h.run_steps(3);
    // Still the old board: the window asks first.
    assert_eq!(h.state().design().board.parts.len(), 64);
    h.get_by_label("Discard changes").click();
    h.step();
    h.step();
    assert_eq!(h.state().design().board.parts.len(), 9);
    assert!(!h.state().is_dirty());
    h.get_by_label_contains("licensed professional");
}

#[test]
fn the_unsaved_changes_prompt_can_save_first() {
    let dir = tempfile::tempdir().unwrap();
    let own = dir.path().join("grid.board.ron");
    let other = dir.path().join("other.board.ron");
    lehr_engine::io::save_board(&own, &generate::grid_board(8, 2.54, 3)).unwrap();
    lehr_engine::io::save_board(&other, &generate::grid_board(3, 2.54, 1)).unwrap();
    let before = std::fs::read(&own).unwrap();
    let design = resolve(generate::grid_board(8, 2.54, 3)).unwrap();
    let mut h = harness(LehrApp::new(
        design,
        Some(own.clone()),
        "grid".into(),
        slow(),
    ));
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    h.state_mut().push(Action::Rotate(0));
    wait_until(&mut h, "the edit is made", |a| a.is_dirty());
    drop_file(&mut h, &other);
    h.run_steps(3);
    assert_eq!(h.state().design().board.parts.len(), 64);
    h.get_by_label("Save").click();
    h.step();
    h.step();
    // Saved to its own file first (the turned part is in it), then the other board opened.
    assert_ne!(std::fs::read(&own).unwrap(), before);
    assert!(lehr_engine::io::load_board(&own).is_ok());
    assert_eq!(h.state().design().board.parts.len(), 9);
    assert!(!h.state().is_dirty());
}

#[test]
fn turning_a_part_can_be_undone_and_redone() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    let q0 = h.state().snapshot().unwrap().quarters[7];
    h.state_mut().canvas.selected = Some(7);
    h.key_press(egui::Key::R);
    wait_until(&mut h, "the part turns", |a| {
        a.snapshot().unwrap().quarters[7] != q0
    });
    let q1 = h.state().snapshot().unwrap().quarters[7];
    assert_eq!(q1.index(), (q0.index() + 1) % 4);
    h.key_press_modifiers(egui::Modifiers::COMMAND, egui::Key::Z);
    wait_until(&mut h, "the turn is undone", |a| {
        a.snapshot().unwrap().quarters[7] == q0
    });
    h.key_press_modifiers(
        egui::Modifiers::COMMAND | egui::Modifiers::SHIFT,
        egui::Key::Z,
    );
    wait_until(&mut h, "the turn is redone", |a| {
        a.snapshot().unwrap().quarters[7] == q1
    });
}

#[test]
fn saving_writes_the_current_positions() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("grid.board.ron");
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    h.get_by_label("Step").click();
    wait_until(&mut h, "a stage is run", |a| {
        a.snapshot().is_some_and(|s| s.stage >= 1 && !s.running)
    });
    h.state_mut().save_to(&path);
    assert!(!h.state().is_dirty());
    let saved = lehr_engine::io::load_board(&path).expect("the saved board loads");
    let s = h.state().snapshot().unwrap();
    for (p, q) in saved.board.parts.iter().zip(&s.positions) {
        let at = p.at.unwrap();
        assert!((at.x - q.x).abs() < 1e-5 && (at.y - q.y).abs() < 1e-5);
    }
    // And a picture of it.
    let png = dir.path().join("grid.png");
    h.state().export_png(&png, true).unwrap();
    assert!(tiny_skia::Pixmap::load_png(&png).is_ok());
}

#[test]
fn dragging_a_part_moves_it_and_undo_puts_it_back() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    h.run_steps(2);
    let part = 9usize;
    let at0 = h.state().snapshot().unwrap().positions[part];
    let centre = h.state().geom.parts[part].court.center();
    let from = h
        .state()
        .canvas
        .screen_from_board(centre)
        .expect("the canvas was drawn");
    let scale = h.state().canvas.scale() as f32;
    // Three millimetres to the right, in a few pointer moves.
    let to = from + egui::vec2(3.0 * scale, 0.0);
    h.hover_at(from);
    h.step();
    h.drag_at(from);
    h.step();
    for k in 1..=4 {
        h.hover_at(from + (to - from) * (k as f32 / 4.0));
        h.step();
    }
    h.drop_at(to);
    h.step();
    assert_eq!(h.state().canvas.selected, Some(part as u32));
    wait_until(&mut h, "the part moves", |a| {
        a.snapshot().unwrap().positions[part] != at0
    });
    let at1 = h.state().snapshot().unwrap().positions[part];
    // Snapped to the placement grid (2.54 mm on this board): one pitch to the right.
    assert!((at1.x - at0.x - 2.54).abs() < 1e-9, "{at0:?} -> {at1:?}");
    assert!((at1.y - at0.y).abs() < 1e-9);
    h.state_mut().push(Action::Undo);
    wait_until(&mut h, "the move is undone", |a| {
        a.snapshot().unwrap().positions[part] == at0
    });
}

#[test]
fn finish_reports_in_the_window() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    h.get_by_label("Finish").click();
    wait_until(&mut h, "the finish is reported", |a| {
        a.message_text().is_some_and(|t| t.starts_with("Finished"))
    });
    h.step();
    h.get_by_label_contains("Finished");
    // The parts stand on the 2.54 mm placement grid afterwards.
    wait_until(
        &mut h,
        "the engine continues from the finished board",
        |a| {
            a.snapshot().is_some_and(|s| {
                s.positions
                    .iter()
                    .all(|p| ((p.x / 2.54).round() * 2.54 - p.x).abs() < 1e-6)
            })
        },
    );
}

/// The built-in sample board placed as `lehr place --seed 1` would place it.
fn placed_sample() -> lehr_engine::model::Design {
    let d = lehr_engine::io::parse_board(crate::shared::SAMPLE_BOARD, crate::shared::SAMPLE_NAME)
        .unwrap();
    let opts = lehr_engine::place::AnnealOptions {
        seed: 1,
        ..lehr_engine::place::AnnealOptions::default()
    };
    let placed = lehr_engine::place::place(&d, &opts, |_| true).expect("the sample places");
    resolve(placed.board).expect("a placed board is valid")
}

#[test]
fn route_draws_copper_counts_the_nets_and_saves_it() {
    let design = placed_sample();
    let nets = design.net_pins.iter().filter(|p| p.len() >= 2).count();
    let mut h = harness(LehrApp::new(design, None, "dimmer".into(), slow()));
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    assert!(h.state().design().board.copper.tracks.is_empty());
    let lines_before = h.state().geom.unrouted.len();
    h.get_by_label("Route").click();
    wait_until(&mut h, "the copper arrives", |a| {
        !a.design().board.copper.tracks.is_empty() && !a.copper.routing
    });
    h.run_steps(2);
    let r = h.state().copper.routed.clone().expect("a route result");
    assert_eq!(r.result.nets, nets);
    let count = format!("{} of {} nets routed", r.result.routed, r.result.nets);
    // The panel and the status line both show the count.
    h.get_by_label_contains(&format!("{count}:"));
    h.get_by_label_contains(&format!("copper: {count}"));
    // Routed nets lose their straight unrouted lines.
    assert!(h.state().geom.unrouted.len() < lines_before);
    assert!(h.state().is_dirty());

    // Save writes the copper into the board file.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("dimmer.board.ron");
    h.state_mut().save_to(&path);
    let saved = lehr_engine::io::load_board(&path).expect("the saved board loads");
    assert_eq!(saved.board.copper, r.result.copper);

    // Annealing again moves parts: the copper goes, and the status line says so.
    h.get_by_label("Run").click();
    wait_until(&mut h, "the copper is removed", |a| {
        a.design().board.copper.tracks.is_empty()
    });
    h.get_by_label("Pause").click();
    h.run_steps(2);
    h.get_by_label_contains("copper removed: parts moved after routing");
}

#[test]
fn the_rule_panel_lists_a_broken_board_and_shows_where() {
    let design = placed_sample();
    let mut h = harness(LehrApp::new(design, None, "dimmer".into(), slow()));
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    // Break the board: an unlocked part dropped onto another.
    let d = h.state().design().clone();
    let free: Vec<u32> = (0..d.board.parts.len() as u32)
        .filter(|&i| !d.board.parts[i as usize].locked)
        .take(2)
        .collect();
    let (a, b) = (free[0], free[1]);
    let s = h.state().snapshot().unwrap();
    let (at_b, q) = (s.positions[b as usize], s.quarters[a as usize]);
    let before = h.state().part_state(a).unwrap();
    h.state_mut().push(Action::MovePart {
        part: a,
        before,
        at: at_b,
        quarter: q,
    });
    wait_until(&mut h, "the part moves", |app| {
        app.snapshot().unwrap().positions[a as usize] == at_b
    });
    h.get_by_label("Check").click();
    wait_until(&mut h, "the check answers", |app| {
        app.copper.checked.is_some()
    });
    h.run_steps(2);
    let c = h.state().copper.checked.clone().unwrap();
    let (ref_a, ref_b) = (
        d.board.parts[a as usize].reference.clone(),
        d.board.parts[b as usize].reference.clone(),
    );
    let k = c
        .violations
        .iter()
        .position(|v| {
            v.kind == lehr_engine::rules::ViolationKind::CourtyardOverlap
                && v.parts.contains(&ref_a)
                && v.parts.contains(&ref_b)
        })
        .expect("the overlap is listed");
    let at = c.violations[k].at.expect("an overlap has a place");
    let n = c.violations.len();
    // The count is in the status line; the list shows the overlap.
    assert!(n > 1);
    h.get_by_label(&format!("{n} broken rules"));
    let scale_before = h.state().canvas.scale();
    // Click the row of this violation (rows are labelled by kind, message, parts, nets).
    let row = format!("parts overlap: {}", c.violations[k].message);
    // (The row may be scrolled out of sight in the list: click it the way assistive
    // technology does.)
    h.get_by_label_contains(&row).click_accesskit();
    h.run_steps(2);
    let centre = h.state().canvas.center();
    assert!(
        (centre.x - at.x).abs() < 1e-9 && (centre.y - at.y).abs() < 1e-9,
        "{centre:?} vs {at:?}"
    );
    assert_ne!(h.state().canvas.scale(), scale_before, "the view zooms");
    assert_eq!(h.state().copper.selected, Some(k));
    assert!(h.state().canvas.marker.is_some());
}

/// File > Import netlist: the invented demo connection list (with its parts table beside
/// it) becomes a new, unsaved board of its 15 parts and 9 nets; File > Export
/// fabrication files asks first (its nets are not routed: design rules are broken), then
/// writes the Gerber set, the drill program, the centroid list and the picture into one
/// folder. A broken netlist shows its file, line and column.
#[test]
fn a_netlist_imports_and_the_board_exports_fabrication_files() {
    let netlists = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-boards/netlists");
    let mut h = harness(grid_app());
    h.state_mut()
        .actions
        .push(Action::Import(Some(netlists.join("vent-controller.csv"))));
    h.step();
    let app = h.state();
    assert_eq!(
        app.doc.design.board.parts.len(),
        15,
        "{:?}",
        app.message.as_ref().map(|m| &m.text)
    );
    assert_eq!(app.doc.design.board.nets.len(), 9);
    assert!(app.is_dirty(), "an imported board is not saved yet");
    assert!(app.doc.path.is_none());
    wait_until(&mut h, "the imported board's first snapshot", |a| {
        a.snapshot().is_some()
    });
    let dir = tempfile::tempdir().unwrap();
    // The board is not routed: the export asks first, and Cancel writes nothing.
    h.state_mut()
        .actions
        .push(Action::ExportFab(Some(dir.path().to_path_buf())));
    h.run_steps(3);
    h.get_by_label_contains("design rules are broken: export anyway?");
    let ask = h
        .state()
        .export_confirm
        .clone()
        .expect("the question is up");
    // The first broken rules are listed, one line each, as `lehr check` prints them.
    h.get_by_label(&ask.first[0]);
    h.get_by_label("Cancel").click();
    h.run_steps(2);
    assert!(h.state().export_confirm.is_none());
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    // Asked again and agreed: the files are written.
    h.state_mut()
        .actions
        .push(Action::ExportFab(Some(dir.path().to_path_buf())));
    h.run_steps(3);
    h.get_by_label("Export anyway").click();
    h.run_steps(2);
    assert!(h.state().export_confirm.is_none());
    let m = h.state().message.as_ref().expect("the export reports");
    assert!(!m.error, "{}", m.text);
    assert!(m.text.contains("exported anyway"), "{}", m.text);
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            "vent-controller-centroid.csv",
            "vent-controller-copper-bottom.gbr",
            "vent-controller-copper-top.gbr",
            "vent-controller-mask-bottom.gbr",
            "vent-controller-mask-top.gbr",
            "vent-controller-outline.gbr",
            "vent-controller.drl",
            "vent-controller.svg",
        ]
    );

    // A connection row without its pin: refused with where.
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "net,part,pin\nGND,R1\n").unwrap();
    h.state_mut().doc.dirty = false;
    h.state_mut()
        .actions
        .push(Action::Import(Some(bad.clone())));
    h.step();
    let m = h.state().message.as_ref().unwrap();
    assert!(m.error);
    assert!(
        m.text.contains(&format!("{}:2:", bad.display())),
        "{}",
        m.text
    );
    assert_eq!(
        h.state().doc.design.board.parts.len(),
        15,
        "the board is kept"
    );
}

/// Large boards are drawn once into a texture and shown as one textured rectangle; the
/// picture must show the board where the vector drawing would, at the display's pixel
/// density, and be drawn again only when the board, the view or the marks change.
#[test]
fn the_cached_board_picture_matches_the_view_and_redraws_only_on_change() {
    let mut app = grid_app();
    // 64 parts: below the default threshold, so force the picture.
    app.canvas.picture_parts = 0;
    let pal = lehr_engine::drawing::Palette::dark();
    let mut h = Harness::builder()
        .with_size([1280.0, 800.0])
        .with_pixels_per_point(2.0)
        .build_ui_state(|ui, app: &mut LehrApp| app.show(ui), app);
    h.run_steps(3);
    let size = h
        .state()
        .canvas
        .last_rect()
        .expect("the canvas was drawn")
        .size();
    let (_, px) = h.state().canvas.picture().expect("a cached picture");
    // Two pixels per point (HiDPI): the texture has twice the canvas's size in points.
    assert_eq!(px[0], (size.x * 2.0).round() as usize);
    assert_eq!(px[1], (size.y * 2.0).round() as usize);
    // Pads show in the pad colour where the view puts them (a point between a pad's
    // centre and its corner). Unrouted lines run through pad centres and the labels
    // over the parts: leave them out for this (a new geometry number draws it again).
    h.state_mut().canvas.labels = false;
    h.state_mut().geom.unrouted.clear();
    h.state_mut().geom.generation = u64::MAX;
    h.step();
    let (mut hits, mut total) = (0, 0);
    let parts = h.state().geom.parts.clone();
    for part in &parts {
        for pad in &part.pads {
            let r = pad.rect;
            let p = lehr_engine::model::Point::new(
                r.center().x + 0.3 * r.width() / 2.0,
                r.center().y + 0.3 * r.height() / 2.0,
            );
            let at = h.state().canvas.screen_from_board(p).unwrap();
            let c = h.state().canvas.picture_pixel(at, 2.0).expect("inside");
            total += 1;
            if c == pal.pad_top {
                hits += 1;
            }
        }
    }
    assert!(
        total > 0 && hits * 10 >= total * 9,
        "{hits} of {total} pads"
    );
    // Off the board, the background.
    let corner = h.state().canvas.last_rect().unwrap().min + egui::vec2(1.0, 1.0);
    assert_eq!(
        h.state().canvas.picture_pixel(corner, 2.0),
        Some(pal.background)
    );
    // Nothing changed: no new drawing.
    let renders0 = h.state().canvas.picture().unwrap().0;
    h.run_steps(3);
    assert_eq!(h.state().canvas.picture().unwrap().0, renders0);
    // Hovering a part marks it: drawn again, once.
    let at = h
        .state()
        .canvas
        .screen_from_board(parts[10].court.center())
        .unwrap();
    h.hover_at(at);
    h.run_steps(3);
    assert_eq!(h.state().canvas.picture().unwrap().0, renders0 + 1);
    // Below the threshold the board is a mesh again and the picture is dropped.
    h.state_mut().canvas.picture_parts = usize::MAX;
    h.step();
    assert!(h.state().canvas.picture().is_none());
}

#[test]
fn the_status_line_names_the_move_range_and_hides_frame_times_until_asked() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot", |a| a.snapshot().is_some());
    h.get_by_label_contains("move range ");
    h.get_by_label("outside the board");
    assert!(h.query_by_label_contains("window ").is_none());
    assert!(!h.state().settings.diagnostics, "off by default");
    assert!(h.query_by_label_contains("ui ").is_none());
    h.get_by_label("View").click();
    h.run();
    h.get_by_label("diagnostics").click();
    h.run();
    assert!(h.state().settings.diagnostics);
    h.get_by_label_contains("ui ");
}

#[test]
fn the_menu_shows_the_shortcut_table_and_the_keys_follow_it() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot", |a| a.snapshot().is_some());
    h.get_by_label("File").click();
    h.run();
    // The entry's label and its shortcut text both come from menu::SHORTCUTS.
    h.get_by_label_contains("Ctrl+Shift+S");
    h.key_press(egui::Key::Escape);
    h.step();
    // Space runs, and pauses a run.
    h.key_press(egui::Key::Space);
    wait_until(&mut h, "Space starts the run", running);
    h.key_press(egui::Key::Space);
    wait_until(&mut h, "Space pauses the run", |a| !running(a));
}

#[test]
fn a_routed_board_opens_drawn_as_routed() {
    let d = lehr_engine::io::parse_board(crate::shared::SAMPLE_BOARD, "sample").unwrap();
    let opts = lehr_engine::place::AnnealOptions {
        max_moves: Some(50_000),
        ..Default::default()
    };
    let placed = lehr_engine::place::place(&d, &opts, |_| true).unwrap();
    let d = resolve(placed.board).unwrap();
    let cancel = std::sync::atomic::AtomicBool::new(false);
    let r = lehr_engine::route::route(&d, &Default::default(), &cancel, &mut |_| {}).unwrap();
    assert!(r.unrouted.is_empty(), "{:?}", r.unrouted);
    let mut board = d.board.clone();
    board.copper = r.copper;
    let mut h = harness(LehrApp::new(
        resolve(board).unwrap(),
        None,
        "routed".into(),
        slow(),
    ));
    wait_until(&mut h, "the check of the board's copper answers", |a| {
        a.copper.checked.is_some()
    });
    h.step();
    assert!(h.state().st.routed.iter().all(|&r| r));
    assert!(
        h.state().geom.unrouted.is_empty(),
        "no unrouted lines over routed nets"
    );
}

#[test]
fn restart_with_these_settings_runs() {
    let mut h = harness(grid_app());
    wait_until(&mut h, "the first snapshot arrives", |a| {
        a.snapshot().is_some()
    });
    assert!(!h.state().snapshot().unwrap().running);
    h.get_by_label("Restart with these settings").click();
    wait_until(&mut h, "the restarted run anneals", |a| {
        a.snapshot().is_some_and(|s| s.running && s.moves > 0)
    });
}
