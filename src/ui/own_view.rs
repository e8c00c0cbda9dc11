//! The two screens a signed-in reviewer has besides the desk: "My progress" (their own
//! queue on every scale and their pilot share) and "Rubric" (every scale's levels, read
//! only). Both draw `analysis::views::own_progress::OwnProgress`, loaded on a job thread.

use std::path::Path;

use super::jobs::{JobResult, Task};
use crate::analysis::views::own_progress::{self, OwnProgress, OwnScale};
use crate::study::Study;

/// The reviewer's own model and the job that loads it.
pub struct OwnView {
    /// The last model loaded, for the reviewer it names.
    pub model: Option<JobResult<OwnProgress>>,
    loading: Task<JobResult<OwnProgress>>,
}

impl Default for OwnView {
    fn default() -> OwnView {
        OwnView {
            model: None,
            loading: Task::named("own-progress-load"),
        }
    }
}

impl OwnView {
    /// Loads the reviewer's own progress again (on entering a screen, after grading).
    pub fn reload(&mut self, ctx: &egui::Context, path: &Path, reviewer: &str) {
        let path = path.to_path_buf();
        let reviewer = reviewer.to_string();
        self.loading.start(ctx, move || {
            Ok(own_progress::of_study(&Study::open(&path)?, &reviewer)?)
        });
    }

    /// Whether a load is running.
    pub fn is_loading(&self) -> bool {
        self.loading.is_running()
    }

    fn collect(&mut self) -> Option<&OwnProgress> {
        if let Some(result) = self.loading.poll() {
            self.model = Some(result);
        }
        match &self.model {
            Some(Ok(m)) => Some(m),
            _ => None,
        }
    }

    fn waiting(&self, ui: &mut egui::Ui) {
        match &self.model {
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
            }
            _ => {
                ui.horizontal(|ui| {
                    ui.spinner();
                    ui.label("Reading your progress…");
                });
            }
        }
    }

    /// "My progress": the reviewer's queue on each scale and their pilot share.
    /// `desk_scale` is the scale the desk grades on now.
    pub fn progress_ui(&mut self, ui: &mut egui::Ui, desk_scale: Option<&str>) {
        let Some(model) = self.collect().cloned() else {
            self.waiting(ui);
            return;
        };
        ui.heading(format!("My progress — {}", model.reviewer));
        ui.label("Only your own grades are counted here.");
        ui.add_space(8.0);
        if let Some(p) = &model.pilot {
            let total = p.pairs_per_scale * p.scales.len();
            ui.strong("Pilot");
            ui.label(format!(
                "A pilot is running; your blocks, in order: {}. Your {} pilot pairs are \
                 graded once on each scale. Done: {} of {} grades.",
                p.scales.join(", then "),
                p.pairs_per_scale,
                p.graded,
                total
            ));
            ui.add_space(8.0);
        }
        egui::Grid::new("own_progress")
            .num_columns(3)
            .striped(true)
            .show(ui, |ui| {
                ui.strong("Scale");
                ui.strong("Your queue");
                ui.strong("Pairs you graded on the scale");
                ui.end_row();
                for s in &model.scales {
                    scale_row(ui, s, desk_scale == Some(s.scale.as_str()));
                }
            });
        if model.scales.is_empty() {
            ui.weak("This study has no scale yet.");
        }
    }

    /// "Rubric": every scale's levels with their keys and guidance, the desk's first.
    pub fn rubric_ui(&mut self, ui: &mut egui::Ui, desk_scale: Option<&str>) {
        let Some(model) = self.collect().cloned() else {
            self.waiting(ui);
            return;
        };
        ui.heading("Rubric");
        ui.label("What each level means, scale by scale. The keys are the desk's.");
        let mut scales: Vec<&OwnScale> = model.scales.iter().collect();
        scales.sort_by_key(|s| desk_scale != Some(s.scale.as_str()));
        egui::ScrollArea::vertical()
            .auto_shrink([false, false])
            .show(ui, |ui| {
                for s in scales {
                    let on_desk = desk_scale == Some(s.scale.as_str());
                    ui.add_space(10.0);
                    ui.strong(if on_desk {
                        format!("{} (the desk grades on it now)", s.scale)
                    } else {
                        s.scale.clone()
                    });
                    egui::Grid::new(("rubric", &s.scale))
                        .num_columns(3)
                        .striped(true)
                        .show(ui, |ui| {
                            for l in &s.levels {
                                ui.label(format!("Key {}", l.key));
                                ui.strong(format!("{} {}", l.value, l.label));
                                ui.add(egui::Label::new(&l.rubric).wrap());
                                ui.end_row();
                            }
                        });
                }
            });
    }
}

fn scale_row(ui: &mut egui::Ui, s: &OwnScale, on_desk: bool) {
    ui.label(if on_desk {
        format!("{} (on the desk now)", s.scale)
    } else {
        s.scale.clone()
    });
    match s.queue {
        Some((done, total)) => {
            let f = if total == 0 {
                1.0
            } else {
                done as f32 / total as f32
            };
            ui.add(
                egui::ProgressBar::new(f)
                    .desired_width(260.0)
                    .text(format!("{done} of {total} pairs graded")),
            );
        }
        None => {
            ui.weak("no queue yet (made when you open the desk on this scale)");
        }
    }
    match s.outside_queue() {
        0 => ui.label(s.marked.to_string()),
        outside => ui.label(format!(
            "{} ({outside} of them outside your queue: a pilot block or an import)",
            s.marked
        )),
    };
    ui.end_row();
}
