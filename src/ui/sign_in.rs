//! Signing in: pick a reviewer of the panel or add a new name. Local, no passwords.

use std::path::{Path, PathBuf};

use super::jobs::Pending;
use crate::study::Study;

/// The panel as the sign-in list shows it, and a pending "add reviewer" job.
#[derive(Default)]
pub struct SignIn {
    panel: Option<Vec<String>>,
    loading: Option<Pending<Result<Vec<String>, String>>>,
    adding: Option<Pending<Result<String, String>>>,
    new_name: String,
    message: Option<String>,
}

fn load_panel(path: &Path) -> Result<Vec<String>, String> {
    let study = Study::open(path).map_err(|e| e.to_string())?;
    Ok(study.snapshot().map_err(|e| e.to_string())?.reviewers)
}

impl SignIn {
    /// Forgets the panel so the next draw reloads it (another study, a new reviewer).
    pub fn reset(&mut self) {
        *self = SignIn::default();
    }

    /// Draws the sign-in form; returns the reviewer once one is chosen.
    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path) -> Option<String> {
        let ctx = ui.ctx().clone();
        if self.panel.is_none() && self.loading.is_none() {
            let p: PathBuf = path.to_path_buf();
            self.loading = Some(Pending::spawn(&ctx, move || load_panel(&p)));
        }
        if let Some(result) = self.loading.as_ref().and_then(Pending::poll) {
            self.loading = None;
            match result {
                Ok(panel) => self.panel = Some(panel),
                Err(e) => {
                    self.panel = Some(Vec::new());
                    self.message = Some(e);
                }
            }
        }
        let mut chosen = None;
        if let Some(result) = self.adding.as_ref().and_then(Pending::poll) {
            self.adding = None;
            match result {
                Ok(name) => chosen = Some(name),
                Err(e) => self.message = Some(e),
            }
        }
        ui.heading("Who is grading?");
        ui.label("Pick your name, or add it to the panel. Grades are recorded under this name.");
        ui.add_space(8.0);
        match &self.panel {
            None => {
                ui.spinner();
            }
            Some(panel) => {
                for name in panel {
                    if ui
                        .add(
                            egui::Button::new(format!("Sign in as {name}"))
                                .min_size(egui::vec2(240.0, 28.0)),
                        )
                        .clicked()
                    {
                        chosen = Some(name.clone());
                    }
                }
                if panel.is_empty() {
                    ui.weak("Nobody is on the panel yet.");
                }
            }
        }
        ui.add_space(8.0);
        ui.horizontal(|ui| {
            let label = ui.label("New reviewer");
            let field = ui
                .add(
                    egui::TextEdit::singleline(&mut self.new_name)
                        .hint_text("name")
                        .desired_width(220.0),
                )
                .labelled_by(label.id);
            let enter = field.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
            let name = self.new_name.trim().to_string();
            let ok = !name.is_empty() && self.adding.is_none();
            if (ui
                .add_enabled(
                    ok,
                    egui::Button::new("Add and sign in").shortcut_text("Enter"),
                )
                .clicked()
                || enter)
                && ok
            {
                let p = path.to_path_buf();
                self.adding = Some(Pending::spawn(&ctx, move || {
                    let study = Study::open(&p).map_err(|e| e.to_string())?;
                    study.add_reviewer(&name).map_err(|e| e.to_string())?;
                    Ok(name)
                }));
            }
        });
        if let Some(m) = &self.message {
            ui.colored_label(ui.visuals().error_fg_color, m);
        }
        chosen
    }
}
