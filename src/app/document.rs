//! The document room: the board being edited and its files. Loading, saving, importing
//! a netlist and exporting pictures and fabrication files, with the file dialogs, the
//! recent files and the last folder (kept in [`super::Settings`]). Each step tells the
//! user how it went in the message line; none panics or blocks on the worker.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use anyhow::{Result, anyhow};

use lehr_engine::model::Design;
use lehr_engine::worker::{Command, EngineHandle};

use crate::shared::{self, export_set};

use super::{Action, Document, LehrApp, Message, caution, files};
use lehr_engine::drawing::{BoardFacts, Palette};

impl LehrApp {
    /// The board with the parts where the engine has them now.
    fn current_board(&self) -> lehr_engine::model::Board {
        let mut board = match self.snap.as_deref() {
            Some(s) => lehr_engine::place::board_at(&self.doc.design, &s.positions, &s.quarters),
            None => self.doc.design.board.clone(),
        };
        if let Some(s) = self.snap.as_deref() {
            for (p, l) in board.parts.iter_mut().zip(&s.locked) {
                p.locked = *l;
            }
        }
        board
    }

    /// Replaces the board and starts a new engine on it.
    fn load(&mut self, design: Design, path: Option<PathBuf>, name: String) {
        self.engine = EngineHandle::spawn(design.clone(), self.settings.controls.options(None));
        self.engine
            .send(Command::SetMovesPerTick(self.settings.controls.speed));
        self.st = BoardFacts::new(&design);
        self.caution = caution::caution(&design);
        self.doc = Document {
            design,
            path,
            name,
            dirty: false,
        };
        self.snap = None;
        self.epoch = 0;
        self.plots.history.clear();
        self.controls.weights = None;
        self.copper.reset();
        self.copper_version = None;
        self.undo.clear();
        self.canvas.reset();
        self.message = None;
        self.finishing = false;
        self.expect_until = Instant::now() + Duration::from_secs(2);
        self.check_board_copper();
        self.rebuild_geometry();
    }

    /// A board that comes with copper: the worker adopts it; a check on it tells which
    /// nets the copper connects, so those are drawn routed rather than with unrouted
    /// lines over every net.
    pub(super) fn check_board_copper(&mut self) {
        let c = &self.doc.design.board.copper;
        if !c.tracks.is_empty() || !c.vias.is_empty() {
            self.copper.checking = true;
            self.send(Command::Check);
        }
    }

    /// Opens a board file; a problem is shown in the window with file, line and column.
    pub fn open_path(&mut self, path: &Path) {
        match lehr_engine::io::load_board(path) {
            Ok(design) => {
                files::remember(&mut self.settings.recent, path);
                self.settings.last_folder = path.parent().map(Path::to_path_buf);
                self.load(design, Some(path.to_path_buf()), files::short_name(path));
            }
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: format!("Could not open the board:\n{e}"),
                });
            }
        }
    }

    pub(super) fn save_to(&mut self, path: &Path) {
        let board = self.current_board();
        match lehr_engine::io::save_board(path, &board) {
            Ok(()) => {
                self.doc.dirty = false;
                self.doc.path = Some(path.to_path_buf());
                self.doc.name = files::short_name(path);
                files::remember(&mut self.settings.recent, path);
                self.settings.last_folder = path.parent().map(Path::to_path_buf);
                self.message = Some(Message {
                    error: false,
                    text: format!("Saved {}", path.display()),
                });
            }
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: format!("Could not save: {e}"),
                })
            }
        }
    }

    /// Writes a PNG picture of the board as it is now.
    pub fn export_png(&self, path: &Path, dark: bool) -> Result<()> {
        let pal = if dark {
            Palette::dark()
        } else {
            Palette::light()
        };
        let bytes = lehr_engine::drawing::png::to_png(
            &self.doc.design,
            &self.st,
            &self.geom,
            &pal,
            40.0,
            self.canvas.labels,
        )
        .map_err(|e| anyhow!(e))?;
        std::fs::write(path, bytes).map_err(|e| anyhow!("cannot write {}: {e}", path.display()))
    }

    /// Imports a netlist (with its parts table or footprint mapping when one lies beside
    /// it, see [`files::companion`]) as a new board that is not saved yet.
    fn import_netlist(&mut self, path: &Path) {
        use lehr_engine::io::{Format, ImportFiles, ImportOptions, import_file};
        let format = std::fs::read(path).map(|b| Format::detect(path, &b));
        let (parts, footprints) = match format {
            Ok(Format::Connections) => (files::companion(path, "parts.csv"), None),
            Ok(Format::Edif) => (None, files::companion(path, "footprints.txt")),
            Err(_) => (None, None),
        };
        let files = ImportFiles {
            netlist: path,
            parts: parts.as_deref(),
            footprints: footprints.as_deref(),
        };
        let result = import_file(&files, &ImportOptions::default())
            .map_err(|e| e.to_string())
            .and_then(|(_, imp)| {
                lehr_engine::model::resolve(imp.board)
                    .map(|d| (d, imp.warnings))
                    .map_err(|ps| {
                        format!(
                            "the imported board is not valid: {}",
                            lehr_engine::model::problems_line(&ps)
                        )
                    })
            });
        match result {
            Ok((design, warnings)) => {
                let name = path
                    .file_stem()
                    .and_then(|s| s.to_str())
                    .unwrap_or("imported")
                    .to_string();
                let (n_parts, n_nets) = (design.board.parts.len(), design.board.nets.len());
                self.load(design, None, name);
                // A new board: nothing on disk holds it yet.
                self.doc.dirty = true;
                self.settings.last_folder = path.parent().map(Path::to_path_buf);
                let mut text = format!(
                    "Imported {}: {n_parts} parts, {n_nets} nets. Press Run to place them, then save.",
                    path.display()
                );
                if let Some(w) = warnings.first() {
                    text.push_str(&format!(" {} warning(s), the first: {w}", warnings.len()));
                }
                self.message = Some(Message {
                    error: !warnings.is_empty(),
                    text,
                });
            }
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: format!("Could not import: {e}"),
                })
            }
        }
    }

    /// The board as it stands, checked as a design, for the fabrication files.
    fn fab_design(&self) -> Result<Design> {
        lehr_engine::model::resolve(self.current_board()).map_err(|ps| {
            anyhow!(
                "the board is not valid as placed: {}",
                lehr_engine::model::problems_line(&ps)
            )
        })
    }

    /// The export set of the board into `dir`: the file name stem and where each goes.
    fn fab_targets(&self, dir: &Path) -> (String, export_set::Targets) {
        let stem = export_set::file_stem(Path::new(&format!("{}.board.ron", self.doc.name)));
        let targets = export_set::Targets::all_in(dir, &stem);
        (stem, targets)
    }

    /// File > Export fabrication files into `dir`: written at once when the board keeps
    /// every design rule, else the user is asked first ([`Self::export_confirm_ui`]).
    fn export_fab_checked(&mut self, dir: &Path) {
        let broken = self.fab_design().map(|design| {
            let (_, targets) = self.fab_targets(dir);
            export_set::violations(&design, &targets)
        });
        match broken {
            Ok(v) if !v.is_empty() => {
                self.export_confirm = Some(ExportConfirm {
                    dir: dir.to_path_buf(),
                    count: v.len(),
                    first: v
                        .iter()
                        .take(ExportConfirm::SHOWN)
                        .map(export_set::violation_line)
                        .collect(),
                });
            }
            _ => self.export_fab_now(dir, 0),
        }
    }

    /// Writes the fabrication files and tells the user how it went; `broken` design rules
    /// the user agreed to export with.
    fn export_fab_now(&mut self, dir: &Path, broken: usize) {
        self.message = Some(match self.export_fab(dir) {
            Ok(mut text) => {
                if broken > 0 {
                    text.push_str(&format!(
                        " {broken} design rules are broken: exported anyway as asked."
                    ));
                }
                Message { error: false, text }
            }
            Err(e) => Message {
                error: true,
                text: format!("Could not export: {e:#}"),
            },
        });
    }

    /// Writes the Gerber files, the drill program, the centroid list and an SVG picture
    /// of the board as it stands into `dir`; returns what to tell the user.
    fn export_fab(&self, dir: &Path) -> Result<String> {
        let design = self.fab_design()?;
        let (stem, targets) = self.fab_targets(dir);
        let files = export_set::build_files(
            &design,
            &stem,
            &targets,
            &lehr_engine::fab::FabOptions::default(),
        )?;
        export_set::write_files(&targets, &files)?;
        let mut text = format!("Wrote {} files into {}.", files.len(), dir.display());
        for w in lehr_engine::fab::warnings(&design) {
            text.push(' ');
            text.push_str(&w);
            text.push('.');
        }
        Ok(text)
    }

    /// The question before fabrication files of a board that breaks design rules go out.
    pub(super) fn export_confirm_ui(&mut self, ctx: &egui::Context) {
        let Some(ask) = self.export_confirm.clone() else {
            return;
        };
        let mut answer = None;
        let modal = egui::Modal::new(egui::Id::unique("export-broken-rules")).show(ctx, |ui| {
            ui.heading("Design rules broken");
            ui.label(format!(
                "{} design rules are broken: export anyway?",
                ask.count
            ));
            for line in &ask.first {
                ui.label(line);
            }
            if ask.count > ask.first.len() {
                ui.label(format!("... and {} more", ask.count - ask.first.len()));
            }
            ui.horizontal(|ui| {
                if ui.button("Export anyway").clicked() {
                    answer = Some(true);
                }
                if ui.button("Cancel").clicked() {
                    answer = Some(false);
                }
            });
        });
        if modal.should_close() && answer.is_none() {
            answer = Some(false);
        }
        match answer {
            Some(true) => {
                self.export_confirm = None;
                self.export_fab_now(&ask.dir, ask.count);
            }
            Some(false) => {
                self.export_confirm = None;
                self.message = Some(Message {
                    error: false,
                    text: "Export cancelled: nothing written.".into(),
                });
            }
            None => {}
        }
    }

    /// Asks where to save the board (None when no file was chosen).
    pub(super) fn pick_save_path(&self) -> Option<PathBuf> {
        files::pick_save(self.folder().as_deref(), &self.doc.name)
    }

    fn folder(&self) -> Option<PathBuf> {
        self.settings.last_folder.clone()
    }

    /// The file actions (open, save, import, export), once any unsaved changes may go.
    pub(super) fn apply_file(&mut self, a: Action, ctx: &egui::Context) {
        match a {
            Action::Open(Some(path)) => self.open_path(&path),
            Action::Open(None) => match files::pick_board(self.folder().as_deref()) {
                Some(p) => self.open_path(&p),
                None => self.no_dialog(),
            },
            Action::OpenSample => self.open_sample(),
            Action::Save => match self.doc.path.clone() {
                Some(p) => self.save_to(&p),
                None => self.apply_file(Action::SaveAs, ctx),
            },
            Action::SaveAs => match files::pick_save(self.folder().as_deref(), &self.doc.name) {
                Some(p) => self.save_to(&p),
                None => self.no_dialog(),
            },
            Action::ExportPng => match files::pick_png(self.folder().as_deref(), &self.doc.name) {
                Some(p) => {
                    let dark = ctx.global_style().visuals.dark_mode;
                    self.message = Some(match self.export_png(&p, dark) {
                        Ok(()) => Message {
                            error: false,
                            text: format!("Wrote {}", p.display()),
                        },
                        Err(e) => Message {
                            error: true,
                            text: format!("Could not export: {e}"),
                        },
                    });
                }
                None => self.no_dialog(),
            },
            Action::Import(Some(path)) => self.import_netlist(&path),
            Action::Import(None) => match files::pick_netlist(self.folder().as_deref()) {
                Some(p) => self.import_netlist(&p),
                None => self.no_dialog(),
            },
            Action::ExportFab(Some(dir)) => self.export_fab_checked(&dir),
            Action::ExportFab(None) => match files::pick_folder(self.folder().as_deref()) {
                Some(d) => self.apply_file(Action::ExportFab(Some(d)), ctx),
                None => self.no_dialog(),
            },
            _ => {}
        }
    }

    /// Replaces the board with the built-in sample.
    fn open_sample(&mut self) {
        match lehr_engine::io::parse_board(shared::SAMPLE_BOARD, shared::SAMPLE_NAME) {
            Ok(d) => self.load(d, None, shared::SAMPLE_NAME.to_string()),
            Err(e) => {
                self.message = Some(Message {
                    error: true,
                    text: e.to_string(),
                })
            }
        }
    }

    /// A dialog gave no file: cancelled, or no dialog could be shown.
    fn no_dialog(&mut self) {
        self.message = Some(Message {
            error: false,
            text: "No file chosen. (If no dialog appeared, this desktop has no file-dialog service: open a board with `lehr open FILE` or drop it on the window.)".into(),
        });
    }
}

/// Fabrication files waiting for the user's answer: the board breaks design rules.
#[derive(Clone, Debug)]
pub(super) struct ExportConfirm {
    /// Where the files go.
    pub(super) dir: PathBuf,
    /// How many rules are broken.
    pub(super) count: usize,
    /// The first few, one line each.
    pub(super) first: Vec<String>,
}

impl ExportConfirm {
    /// How many broken rules the question lists.
    const SHOWN: usize = 8;
}
