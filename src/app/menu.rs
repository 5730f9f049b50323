//! The menu bar and the keyboard shortcuts. One table, [`SHORTCUTS`], names each shortcut
//! with the command it gives and its label: the keys are handled from it and the menu
//! draws its entries (label and shortcut text) from it, so the two cannot disagree.

use egui::{Key, KeyboardShortcut, Modifiers};

use super::{Action, LehrApp, ThemeChoice};

/// A command a shortcut gives; [`LehrApp::command_action`] turns it into an [`Action`]
/// for the state the window is in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Cmd {
    Redo,
    Undo,
    SaveAs,
    Save,
    Open,
    ExportPng,
    Reset,
    Finish,
    Route,
    Check,
    RunOrPause,
    Step,
    Reheat,
    Fit,
    Turn,
    Lock,
}

/// A keyboard shortcut: its keys (the first is the one the menu shows), its command and
/// the label of its menu entry.
pub(super) struct Shortcut {
    pub keys: &'static [KeyboardShortcut],
    pub cmd: Cmd,
    pub label: &'static str,
}

const CMD: Modifiers = Modifiers::COMMAND;
const CMD_SHIFT: Modifiers = Modifiers::COMMAND.plus(Modifiers::SHIFT);
const NONE: Modifiers = Modifiers::NONE;

const fn key(modifiers: Modifiers, key: Key) -> KeyboardShortcut {
    KeyboardShortcut::new(modifiers, key)
}

/// Every shortcut, in the order keys are tried: a shortcut with Shift comes before the
/// same key without it, and Ctrl+R (reset) before R (turn the part).
pub(super) const SHORTCUTS: &[Shortcut] = &[
    Shortcut {
        keys: &[key(CMD_SHIFT, Key::Z), key(CMD, Key::Y)],
        cmd: Cmd::Redo,
        label: "Redo",
    },
    Shortcut {
        keys: &[key(CMD, Key::Z)],
        cmd: Cmd::Undo,
        label: "Undo",
    },
    Shortcut {
        keys: &[key(CMD_SHIFT, Key::S)],
        cmd: Cmd::SaveAs,
        label: "Save as...",
    },
    Shortcut {
        keys: &[key(CMD, Key::S)],
        cmd: Cmd::Save,
        label: "Save",
    },
    Shortcut {
        keys: &[key(CMD, Key::O)],
        cmd: Cmd::Open,
        label: "Open...",
    },
    Shortcut {
        keys: &[key(CMD, Key::E)],
        cmd: Cmd::ExportPng,
        label: "Export picture (PNG)...",
    },
    Shortcut {
        keys: &[key(CMD, Key::R)],
        cmd: Cmd::Reset,
        label: "Reset the run",
    },
    Shortcut {
        keys: &[key(CMD, Key::Enter)],
        cmd: Cmd::Finish,
        label: "Finish (legal placement)",
    },
    Shortcut {
        keys: &[key(CMD, Key::T)],
        cmd: Cmd::Route,
        label: "Route",
    },
    Shortcut {
        keys: &[key(CMD, Key::K)],
        cmd: Cmd::Check,
        label: "Check the design rules",
    },
    Shortcut {
        keys: &[key(NONE, Key::Space)],
        cmd: Cmd::RunOrPause,
        label: "Run or pause",
    },
    Shortcut {
        keys: &[key(NONE, Key::Period)],
        cmd: Cmd::Step,
        label: "One stage",
    },
    Shortcut {
        keys: &[key(NONE, Key::H)],
        cmd: Cmd::Reheat,
        label: "Reheat",
    },
    Shortcut {
        keys: &[key(NONE, Key::F)],
        cmd: Cmd::Fit,
        label: "Fit board",
    },
    Shortcut {
        keys: &[key(NONE, Key::R)],
        cmd: Cmd::Turn,
        label: "Turn part",
    },
    Shortcut {
        keys: &[key(NONE, Key::L)],
        cmd: Cmd::Lock,
        label: "Lock or unlock part",
    },
];

/// The table's entry for a command.
fn shortcut(cmd: Cmd) -> &'static Shortcut {
    SHORTCUTS
        .iter()
        .find(|s| s.cmd == cmd)
        .expect("every command has a shortcut")
}

impl LehrApp {
    /// What a command does now; `None` when it does nothing (turn or lock with no part
    /// selected).
    pub(super) fn command_action(&self, cmd: Cmd) -> Option<Action> {
        let running = self.snap.as_deref().is_some_and(|s| s.running);
        let sel = self.canvas.selected;
        Some(match cmd {
            Cmd::Redo => Action::Redo,
            Cmd::Undo => Action::Undo,
            Cmd::SaveAs => Action::SaveAs,
            Cmd::Save => Action::Save,
            Cmd::Open => Action::Open(None),
            Cmd::ExportPng => Action::ExportPng,
            Cmd::Reset => Action::Reset,
            Cmd::Finish => Action::Finish,
            Cmd::Route => Action::Route,
            Cmd::Check => Action::Check,
            Cmd::RunOrPause if running => Action::Pause,
            Cmd::RunOrPause => Action::Run,
            Cmd::Step => Action::Step,
            Cmd::Reheat => Action::Reheat(self.settings.controls.reheat),
            Cmd::Fit => Action::Fit,
            Cmd::Turn => Action::Rotate(sel?),
            Cmd::Lock => Action::ToggleLock(sel?),
        })
    }

    /// Keyboard shortcuts (not while a text field has the keyboard).
    pub(super) fn shortcuts(&mut self, ctx: &egui::Context) {
        if ctx.egui_wants_keyboard_input() {
            return;
        }
        let mut out = Vec::new();
        ctx.input_mut(|i| {
            for s in SHORTCUTS {
                let Some(action) = self.command_action(s.cmd) else {
                    continue;
                };
                // The first of its keys that was pressed is taken.
                if s.keys.iter().any(|k| i.consume_shortcut(k)) {
                    out.push(action);
                }
            }
        });
        self.actions.extend(out);
    }

    /// A menu entry for a command of the shortcut table: its label and shortcut text.
    fn command_button(&mut self, ui: &mut egui::Ui, cmd: Cmd, enabled: bool) {
        let s = shortcut(cmd);
        let text = ui.ctx().format_shortcut(&s.keys[0]);
        if ui
            .add_enabled(enabled, egui::Button::new(s.label).shortcut_text(text))
            .clicked()
            && let Some(a) = self.command_action(cmd)
        {
            self.actions.push(a);
        }
    }

    pub(super) fn menu_ui(&mut self, ui: &mut egui::Ui) {
        egui::MenuBar::new().ui(ui, |ui| {
            ui.menu_button("File", |ui| self.file_menu_ui(ui));
            ui.menu_button("Edit", |ui| self.edit_menu_ui(ui));
            ui.menu_button("View", |ui| self.view_menu_ui(ui));
        });
    }

    fn file_menu_ui(&mut self, ui: &mut egui::Ui) {
        self.command_button(ui, Cmd::Open, true);
        ui.menu_button("Open recent", |ui| {
            if self.settings.recent.is_empty() {
                ui.label("nothing yet");
            }
            for p in self.settings.recent.clone() {
                if ui.button(p.display().to_string()).clicked() {
                    self.actions.push(Action::Open(Some(p)));
                }
            }
        });
        if ui.button("Open the sample board").clicked() {
            self.actions.push(Action::OpenSample);
        }
        if ui
            .button("Import netlist (CSV, TSV, EDIF)...")
            .on_hover_text(
                "A connection list with NAME.parts.csv beside it, or an EDIF netlist \
                 with NAME.footprints.txt beside it (docs/import-formats.md)",
            )
            .clicked()
        {
            self.actions.push(Action::Import(None));
        }
        ui.separator();
        self.command_button(ui, Cmd::Save, true);
        self.command_button(ui, Cmd::SaveAs, true);
        self.command_button(ui, Cmd::ExportPng, true);
        if ui
            .button("Export fabrication files...")
            .on_hover_text(
                "Gerber (copper, mask, outline), NC drill, centroid CSV and an SVG picture, into a folder",
            )
            .clicked()
        {
            self.actions.push(Action::ExportFab(None));
        }
        ui.separator();
        if ui.button("Quit").clicked() {
            self.actions.push(Action::Quit);
        }
    }

    fn edit_menu_ui(&mut self, ui: &mut egui::Ui) {
        self.command_button(ui, Cmd::Undo, self.undo.can_undo());
        self.command_button(ui, Cmd::Redo, self.undo.can_redo());
        ui.separator();
        let selected = self.canvas.selected.is_some();
        self.command_button(ui, Cmd::Turn, selected);
        self.command_button(ui, Cmd::Lock, selected);
    }

    fn view_menu_ui(&mut self, ui: &mut egui::Ui) {
        self.command_button(ui, Cmd::Fit, true);
        ui.checkbox(&mut self.canvas.labels, "part references");
        ui.checkbox(&mut self.settings.diagnostics, "diagnostics")
            .on_hover_text(
                "Show the time lehr's frame code and a whole frame take in the status line",
            );
        ui.separator();
        for (t, name) in [
            (ThemeChoice::System, "theme of the system"),
            (ThemeChoice::Dark, "dark"),
            (ThemeChoice::Light, "light"),
        ] {
            if ui.radio_value(&mut self.settings.theme, t, name).changed() {
                apply_theme(ui.ctx(), t);
            }
        }
    }
}

pub(super) fn apply_theme(ctx: &egui::Context, t: ThemeChoice) {
    ctx.set_theme(match t {
        ThemeChoice::System => egui::ThemePreference::System,
        ThemeChoice::Dark => egui::ThemePreference::Dark,
        ThemeChoice::Light => egui::ThemePreference::Light,
    });
}
