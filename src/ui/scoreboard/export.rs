//! The Scoreboard's export: the scores CSV or the Markdown report, through a native
//! dialog where the desktop has one, or to a typed path where it has none.

use std::path::PathBuf;

use super::ScoreboardScreen;
use crate::analysis::views::scoreboard_view::ScoreboardModel;
use crate::analysis::{output::render, output::report};
use crate::ui::frame::study_picker::{Asked, NO_DIALOG, ask};
use crate::ui::jobs::JobError;

impl ScoreboardScreen {
    pub(super) fn export(
        &mut self,
        ui: &mut egui::Ui,
        ctx: &egui::Context,
        model: &ScoreboardModel,
    ) {
        ui.strong("Export");
        let busy = self.export_job.is_running();
        let Some((report_wanted, typed)) = self.export_choice(ui, busy) else {
            return;
        };
        // Rendering and writing happen on the job thread with a copy of the model.
        let board = model.board.clone();
        let agreement = model.agreement.clone();
        let curves = model.curves.clone();
        self.export_job.start(ctx, move || {
            let target = match typed {
                Some(path) => path,
                None => match ask_target(report_wanted) {
                    Asked::Chosen(path) => path,
                    Asked::Cancelled => return Ok("Nothing saved: no file chosen.".into()),
                    Asked::Unavailable => return Ok(NO_DIALOG.into()),
                },
            };
            let write_error = |source| JobError::Write {
                path: target.display().to_string(),
                source,
            };
            if report_wanted {
                let files = report::files(&target, &board, &curves, agreement.as_ref())
                    .map_err(|e| write_error(std::io::Error::other(e)))?;
                let written = files
                    .write(&target)
                    .map_err(|e| write_error(std::io::Error::other(e.to_string())))?;
                Ok(format!(
                    "Saved {} and {} pictures beside it.",
                    target.display(),
                    written.len() - 1
                ))
            } else {
                let csv = render::scoreboard_csv(&board);
                crate::study::file_guard::write_atomically(&target, |out| {
                    Ok(out.write_all(csv.as_bytes())?)
                })
                .map(|_| format!("Saved {}.", target.display()))
                .map_err(|e| write_error(std::io::Error::other(e.to_string())))
            }
        });
    }

    /// The export buttons (to a dialog, or to the typed path); returns (report wanted,
    /// typed path or None for the dialog) when one was pressed.
    fn export_choice(&mut self, ui: &mut egui::Ui, busy: bool) -> Option<(bool, Option<PathBuf>)> {
        let mut wanted: Option<(bool, Option<PathBuf>)> = None;
        ui.horizontal(|ui| {
            if ui
                .add_enabled(!busy, egui::Button::new("Save scores CSV…"))
                .clicked()
            {
                wanted = Some((false, None));
            }
            if ui
                .add_enabled(!busy, egui::Button::new("Save report (Markdown)…"))
                .clicked()
            {
                wanted = Some((true, None));
            }
            // What the last export did (or why no dialog opened), beside its buttons.
            if let Some(note) = &self.export_note {
                ui.label(note);
            }
        });
        ui.horizontal(|ui| {
            let label = ui.label("Or save to this path:");
            ui.add(
                egui::TextEdit::singleline(&mut self.export_path)
                    .hint_text("/path/to/scores.csv or report.md")
                    .desired_width(320.0),
            )
            .labelled_by(label.id);
            let typed = self.export_path.trim();
            let ready = !typed.is_empty() && !busy;
            if ui
                .add_enabled(ready, egui::Button::new("Save scores CSV there"))
                .clicked()
            {
                wanted = Some((false, Some(PathBuf::from(typed))));
            }
            if ui
                .add_enabled(ready, egui::Button::new("Save report there"))
                .clicked()
            {
                wanted = Some((true, Some(PathBuf::from(typed))));
            }
        });
        wanted
    }
}

/// Asks where to save through the native dialog.
fn ask_target(report_wanted: bool) -> Asked<PathBuf> {
    let (name, filter) = if report_wanted {
        ("report.md", ("Markdown", "md"))
    } else {
        ("scores.csv", ("CSV", "csv"))
    };
    let dialog = rfd::AsyncFileDialog::new()
        .add_filter(filter.0, &[filter.1])
        .set_file_name(name)
        .save_file();
    ask(async { dialog.await.map(|h| h.path().to_path_buf()) })
}
