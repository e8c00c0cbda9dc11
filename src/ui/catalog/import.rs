//! The Catalog's import panel: a path field per CSV file (typed, or chosen in a dialog),
//! one import on a background thread with its progress, and the reports or every problem
//! found by file, line and column.

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use super::Catalog;
use crate::study::Study;
use crate::study::import::{FileReport, ImportSet, Source, import_with_progress};
use crate::ui::frame::study_picker::{Asked, NO_DIALOG, ask};
use crate::ui::jobs::{JobResult, Task};

/// The files the import panel takes, in its order; `gold` holds gold pairs (known levels).
const KINDS: [&str; 6] = ["items", "contexts", "rankings", "scales", "grades", "gold"];

/// Path fields are never narrower than this, however small the window.
const MIN_PATH_WIDTH: f32 = 320.0;
/// Room kept right of a path field for its "Choose …" button.
const CHOOSE_WIDTH: f32 = 170.0;

/// Shared between the import thread and the screen: (fraction, what is happening).
pub(super) type Progress = Arc<Mutex<(f32, String)>>;

/// The import running on its thread: per-file reports, or every problem found.
pub(super) type ImportJob = Task<JobResult<Vec<FileReport>>>;

fn run_import(
    path: &Path,
    files: [Option<PathBuf>; 6],
    progress: &Progress,
) -> JobResult<Vec<FileReport>> {
    let set_progress = |f: f32, text: String| {
        if let Ok(mut p) = progress.lock() {
            *p = (f, text);
        }
    };
    let total = files.iter().flatten().count().max(1) as f32;
    let mut sources: [Option<Source>; 6] = Default::default();
    let mut read = 0.0;
    for (k, file) in files.iter().enumerate() {
        if let Some(file) = file {
            set_progress(0.5 * read / total, format!("reading {}", file.display()));
            sources[k] = Some(Source::from_path(file)?);
            read += 1.0;
        }
    }
    set_progress(
        0.5,
        "checking and writing every row in one transaction".into(),
    );
    let [items, contexts, rankings, scales, grades, gold] = sources;
    let set = ImportSet {
        items,
        contexts,
        rankings,
        scales,
        grades,
        gold,
    };
    let mut study = Study::open(path)?;
    let reports = import_with_progress(&mut study, &set, &mut |step| {
        let file_share = match step.bytes_total {
            0 => 0.0,
            total => step.bytes_done.min(total) as f32 / total as f32,
        };
        let done = (step.files_done as f32 + file_share) / step.files_total.max(1) as f32;
        let what = if step.finishing {
            format!("{}: building indexes and current grades", step.file)
        } else {
            format!("reading and writing {}: {} rows", step.file, step.rows_done)
        };
        set_progress(0.5 + 0.5 * done, what);
    })?;
    set_progress(1.0, "done".into());
    Ok(reports)
}

impl Catalog {
    pub(super) fn import_panel(&mut self, ui: &mut egui::Ui, path: &Path) {
        let ctx = ui.ctx().clone();
        for k in 0..KINDS.len() {
            match self.dialogs[k].poll() {
                Some(Asked::Chosen(p)) => {
                    self.files[k] = p.display().to_string();
                    self.dialog_note = None;
                }
                Some(Asked::Unavailable) => self.dialog_note = Some((k, NO_DIALOG.to_string())),
                Some(Asked::Cancelled) | None => {}
            }
        }
        if let Some(result) = self.importing.poll() {
            match result {
                Ok(reports) => {
                    self.reports = reports;
                    self.problems.clear();
                    self.study_changed = true;
                    self.reload(&ctx, path);
                }
                Err(error) => {
                    self.reports.clear();
                    self.problems = error.problems();
                }
            }
        }
        let mut panel = egui::CollapsingHeader::new("Import CSV files").default_open(false);
        if std::mem::take(&mut self.open_import) {
            panel = panel.open(Some(true));
        }
        panel.show(ui, |ui| {
            self.path_fields(ui, &ctx);
            let chosen: [Option<PathBuf>; 6] = std::array::from_fn(|k| {
                let t = self.files[k].trim();
                (!t.is_empty()).then(|| PathBuf::from(t))
            });
            let any = chosen.iter().any(Option::is_some);
            ui.horizontal(|ui| {
                if ui
                    .add_enabled(
                        any && !self.importing.is_running(),
                        egui::Button::new("Import"),
                    )
                    .clicked()
                {
                    self.progress = Arc::new(Mutex::new((0.0, "starting".into())));
                    let p = path.to_path_buf();
                    let shared = self.progress.clone();
                    self.importing
                        .start(&ctx, move || run_import(&p, chosen, &shared));
                }
                if self.importing.is_running() {
                    let (f, text) = self.progress.lock().map(|p| p.clone()).unwrap_or_default();
                    ui.add(
                        egui::ProgressBar::new(f)
                            .animate(true)
                            .text(text)
                            .desired_width(420.0),
                    );
                    ctx.request_repaint_after_secs(0.1);
                }
            });
            for r in &self.reports {
                ui.label(format!(
                    "{} ({}): {} added, {} updated, {} unchanged",
                    r.file, r.kind, r.added, r.updated, r.unchanged
                ));
            }
            self.problems_table(ui);
        });
    }

    /// One row per file: its name, a path field as wide as the panel allows, a dialog.
    fn path_fields(&mut self, ui: &mut egui::Ui, ctx: &egui::Context) {
        for (k, kind) in KINDS.iter().enumerate() {
            ui.horizontal(|ui| {
                let label = ui.allocate_ui_with_layout(
                    egui::vec2(100.0, 20.0),
                    egui::Layout::left_to_right(egui::Align::Center),
                    |ui| {
                        ui.set_min_width(100.0);
                        ui.label(format!("{kind}.csv"))
                    },
                );
                let width = (ui.available_width() - CHOOSE_WIDTH).max(MIN_PATH_WIDTH);
                ui.add(
                    egui::TextEdit::singleline(&mut self.files[k])
                        .hint_text("path, or choose…")
                        .desired_width(width)
                        .min_size(egui::vec2(MIN_PATH_WIDTH, 0.0)),
                )
                .labelled_by(label.inner.id);
                if ui
                    .add_enabled(
                        !self.dialogs[k].is_running(),
                        egui::Button::new(format!("Choose {kind}.csv…")),
                    )
                    .clicked()
                {
                    self.dialogs[k].start(ctx, || {
                        let dialog = rfd::AsyncFileDialog::new()
                            .add_filter("CSV", &["csv"])
                            .pick_file();
                        ask(async { dialog.await.map(|h| h.path().to_path_buf()) })
                    });
                }
            });
            // Right under the button that asked, not below the form.
            if let Some((_, note)) = self.dialog_note.as_ref().filter(|(row, _)| *row == k) {
                ui.colored_label(ui.visuals().warn_fg_color, note);
            }
        }
    }

    fn problems_table(&self, ui: &mut egui::Ui) {
        if self.problems.is_empty() {
            return;
        }
        ui.colored_label(
            ui.visuals().error_fg_color,
            format!("Nothing was imported: {} problem(s).", self.problems.len()),
        );
        egui::ScrollArea::vertical()
            .max_height(160.0)
            .show(ui, |ui| {
                egui::Grid::new("import_problems")
                    .striped(true)
                    .num_columns(4)
                    .show(ui, |ui| {
                        ui.strong("File");
                        ui.strong("Line");
                        ui.strong("Column");
                        ui.strong("Problem");
                        ui.end_row();
                        for p in &self.problems {
                            let (line, column) = match p.line {
                                0 => (String::new(), String::new()),
                                l => (l.to_string(), p.column.to_string()),
                            };
                            ui.label(&p.file);
                            ui.label(line);
                            ui.label(column);
                            ui.label(&p.message);
                            ui.end_row();
                        }
                    });
            });
    }
}
