//! "Bring in grades": merge studies graded on other machines from the workbench. The
//! lead picks files, sees what would come in (a dry run), confirms, and sees the result.
//! Every step runs on a background thread.

use std::path::{Path, PathBuf};

use super::jobs::{JobError, JobResult, Task};
use crate::study::Study;
use crate::study::merge::{MergeOptions, MergeReport};
use crate::ui::frame::study_picker::{Asked, NO_DIALOG, ask};

/// One file's outcome: what came (or would come) in, or why it was refused.
pub type MergeOutcome = (PathBuf, JobResult<MergeReport>);

impl super::jobs::JobOutput for Vec<MergeOutcome> {
    fn from_failure(message: String) -> Self {
        vec![(PathBuf::new(), Err(JobError::Stopped(message)))]
    }
}

/// The panel's state: typed paths, the dialog, the preview and merge runs.
pub struct MergePanel {
    /// Paths, one per line (typed, or filled in by the dialog).
    pub paths: String,
    dialog: Task<Asked<Vec<PathBuf>>>,
    /// Said when no file dialog could open.
    dialog_note: Option<String>,
    previewing: Task<Vec<MergeOutcome>>,
    merging: Task<Vec<MergeOutcome>>,
    /// The last dry run (not yet confirmed).
    pub preview: Vec<MergeOutcome>,
    /// The last real merge.
    pub merged: Vec<MergeOutcome>,
    /// Set when a merge changed the study, so the workbench reloads its screens.
    pub study_changed: bool,
    /// Names the lead ticked in the preview: their events come in although the copy
    /// was not handed out to them.
    pub accepted: std::collections::BTreeSet<String>,
}

impl Default for MergePanel {
    fn default() -> MergePanel {
        MergePanel {
            paths: String::new(),
            dialog: Task::named("merge-dialog"),
            dialog_note: None,
            previewing: Task::named("merge-preview"),
            merging: Task::named("merge"),
            preview: Vec::new(),
            merged: Vec::new(),
            study_changed: false,
            accepted: Default::default(),
        }
    }
}

/// Previews or merges each file; a study that cannot be opened is one outcome naming it.
fn run(study: &Path, files: Vec<PathBuf>, commit: bool, accept: Vec<String>) -> Vec<MergeOutcome> {
    let options = MergeOptions { accept };
    let mut target = match Study::open(study) {
        Ok(s) => s,
        Err(e) => return vec![(study.to_path_buf(), Err(e.into()))],
    };
    files
        .into_iter()
        .map(|f| {
            let r = if commit {
                target.merge_with(&f, &options)
            } else {
                target.merge_preview_with(&f, &MergeOptions::default())
            };
            (f, r.map_err(JobError::from))
        })
        .collect()
}

impl MergePanel {
    fn files(&self) -> Vec<PathBuf> {
        self.paths
            .lines()
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .map(PathBuf::from)
            .collect()
    }

    pub fn ui(&mut self, ui: &mut egui::Ui, study: &Path) {
        self.poll();
        egui::CollapsingHeader::new("Bring in grades from other studies")
            .default_open(false)
            .show(ui, |ui| {
                ui.label("Studies graded on other machines (reviewer copies or whole studies), one path per line:");
                let label = ui.label("Studies to merge");
                ui.add(
                    egui::TextEdit::multiline(&mut self.paths)
                        .desired_rows(2)
                        .desired_width(520.0)
                        .hint_text("/path/to/rev-birch-copy.plumb"),
                )
                .labelled_by(label.id);
                self.buttons(ui, study);
                if let Some(note) = &self.dialog_note {
                    ui.colored_label(ui.visuals().warn_fg_color, note);
                }
                outcome_list(ui, "Would come in", &self.preview);
                acceptance(ui, &self.preview, &mut self.accepted);
                outcome_list(ui, "Merged", &self.merged);
            });
    }

    /// Takes in finished jobs: files picked in the dialog, a merge, a preview.
    fn poll(&mut self) {
        if let Some(asked) = self.dialog.poll() {
            let picked = match asked {
                Asked::Chosen(paths) => paths,
                Asked::Cancelled => Vec::new(),
                Asked::Unavailable => {
                    self.dialog_note = Some(NO_DIALOG.to_string());
                    Vec::new()
                }
            };
            for p in picked {
                if !self.paths.is_empty() && !self.paths.ends_with('\n') {
                    self.paths.push('\n');
                }
                self.paths.push_str(&p.display().to_string());
            }
        }
        if let Some(outcomes) = self.merging.poll() {
            self.study_changed |= outcomes.iter().any(|(_, r)| r.is_ok());
            self.merged = outcomes;
            self.preview.clear();
        }
        if let Some(outcomes) = self.previewing.poll() {
            self.preview = outcomes;
        }
    }

    /// Choose, preview and merge, with the run's progress.
    fn buttons(&mut self, ui: &mut egui::Ui, study: &Path) {
        let ctx = &ui.ctx().clone();
        ui.horizontal(|ui| {
            let busy = self.previewing.is_running() || self.merging.is_running();
            if ui
                .add_enabled(
                    !self.dialog.is_running() && !busy,
                    egui::Button::new("Choose studies…"),
                )
                .clicked()
            {
                self.dialog.start(ctx, || {
                    let dialog = rfd::AsyncFileDialog::new()
                        .add_filter("Plumbline study", &["plumb"])
                        .pick_files();
                    ask(async {
                        dialog
                            .await
                            .map(|hs| hs.iter().map(|h| h.path().to_path_buf()).collect())
                    })
                });
            }
            let files = self.files();
            if ui
                .add_enabled(
                    !files.is_empty() && !busy,
                    egui::Button::new("Show what would come in"),
                )
                .clicked()
            {
                let s = study.to_path_buf();
                self.merged.clear();
                self.accepted.clear();
                self.previewing
                    .start(ctx, move || run(&s, files, false, Vec::new()));
            }
            let ready = !self.preview.is_empty() && self.preview.iter().any(|(_, r)| r.is_ok());
            if ui
                .add_enabled(ready && !busy, egui::Button::new("Merge now"))
                .clicked()
            {
                let s = study.to_path_buf();
                let files: Vec<PathBuf> = self
                    .preview
                    .iter()
                    .filter(|(_, r)| r.is_ok())
                    .map(|(f, _)| f.clone())
                    .collect();
                let accept: Vec<String> = self.accepted.iter().cloned().collect();
                self.merging
                    .start(ctx, move || run(&s, files, true, accept));
            }
            if busy {
                ui.add(
                    egui::ProgressBar::new(0.0)
                        .animate(true)
                        .text("merging…")
                        .desired_width(200.0),
                );
                ctx.request_repaint_after_secs(0.1);
            }
        });
    }
}

/// The names a previewed file holds events from beyond its own reviewer, each with a
/// box to tick: unticked, the file is refused when merged.
fn acceptance(
    ui: &mut egui::Ui,
    outcomes: &[MergeOutcome],
    accepted: &mut std::collections::BTreeSet<String>,
) {
    for (file, result) in outcomes {
        let Ok(report) = result else { continue };
        if report.needs_acceptance.is_empty() {
            continue;
        }
        let name = file.file_name().map_or_else(
            || file.display().to_string(),
            |n| n.to_string_lossy().into_owned(),
        );
        let whose = match &report.handed_out_to {
            Some(r) => format!("{name} was handed out to {r}; it also holds events by:"),
            None => format!("{name} is not a copy this study handed out; it holds events by:"),
        };
        ui.colored_label(ui.visuals().warn_fg_color, whose);
        for n in &report.needs_acceptance {
            let mut on = accepted.contains(&n.name);
            let text = format!(
                "bring in {} ({} grade events, {} settled grades)",
                n.name, n.grades, n.settled
            );
            if ui.checkbox(&mut on, text).changed() {
                if on {
                    accepted.insert(n.name.clone());
                } else {
                    accepted.remove(&n.name);
                }
            }
        }
        ui.weak("Unticked names keep the whole file out. Tick only reviewers you trust.");
    }
}

fn outcome_list(ui: &mut egui::Ui, title: &str, outcomes: &[MergeOutcome]) {
    if outcomes.is_empty() {
        return;
    }
    ui.strong(title);
    for (file, result) in outcomes {
        let name = file.file_name().map_or_else(
            || file.display().to_string(),
            |n| n.to_string_lossy().into_owned(),
        );
        match result {
            Ok(r) => {
                ui.label(format!(
                    "{name}: {} grades, {} settled grades, {} reviewers",
                    r.grades_added, r.settled_added, r.reviewers_added
                ));
            }
            Err(e) => {
                ui.colored_label(
                    ui.visuals().error_fg_color,
                    format!("{name}: refused — {e}"),
                );
            }
        }
    }
}
