//! Signing in: pick a reviewer of the panel or add a new name. Local, no passwords.

use std::path::{Path, PathBuf};

use crate::study::Study;
use crate::ui::jobs::{JobResult, Task};

/// The panel as the sign-in list shows it, and a pending "add reviewer" job.
pub struct SignIn {
    panel: Option<Vec<String>>,
    loading: Task<JobResult<Vec<String>>>,
    adding: Task<JobResult<String>>,
    new_name: String,
    message: Option<String>,
}

impl Default for SignIn {
    fn default() -> SignIn {
        SignIn {
            panel: None,
            loading: Task::named("panel-load"),
            adding: Task::named("reviewer-add"),
            new_name: String::new(),
            message: None,
        }
    }
}

fn load_panel(path: &Path) -> JobResult<Vec<String>> {
    Ok(Study::open(path)?.snapshot()?.reviewers)
}

impl SignIn {
    /// Forgets the panel so the next draw reloads it (another study, a new reviewer).
    pub fn reset(&mut self) {
        *self = SignIn::default();
    }

    /// Draws the sign-in form; returns the reviewer once one is chosen.
    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path) -> Option<String> {
        let ctx = ui.ctx().clone();
        if self.panel.is_none() && !self.loading.is_running() {
            let p: PathBuf = path.to_path_buf();
            self.loading.start(&ctx, move || load_panel(&p));
        }
        if let Some(result) = self.loading.poll() {
            match result {
                Ok(panel) => self.panel = Some(panel),
                Err(e) => {
                    self.panel = Some(Vec::new());
                    self.message = Some(e.to_string());
                }
            }
        }
        let mut chosen = None;
        if let Some(result) = self.adding.poll() {
            match result {
                Ok(name) => chosen = Some(name),
                Err(e) => self.message = Some(e.to_string()),
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
            let ok = !name.is_empty() && !self.adding.is_running();
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
                self.adding.start(&ctx, move || {
                    Study::open(&p)?.add_reviewer(&name)?;
                    Ok(name)
                });
            }
        });
        if let Some(m) = &self.message {
            ui.colored_label(ui.visuals().error_fg_color, m);
        }
        chosen
    }
}
