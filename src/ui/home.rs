//! Home: draws `analysis::views::home::HomeModel` (what the study holds, how far the pool is
//! graded and what to do next).

use std::path::Path;

use super::jobs::JobResult;
pub use crate::analysis::views::home::HomeModel;
use crate::analysis::views::home::{self, next_step};
use crate::study::Study;

/// The same model as `plumbline status` (`home::of_study`); runs on a job thread.
pub fn load(path: &Path) -> JobResult<HomeModel> {
    Ok(home::of_study(&Study::open(path)?)?)
}

/// A bar of `done` of `total` with its text: "12 / 50 (24 %)", or for a reviewer's
/// queue "queue 197 of 347 (57 %)", so it is not read as all they graded.
fn fraction_bar(ui: &mut egui::Ui, done: usize, total: usize, width: f32, queue: bool) {
    let f = if total == 0 {
        0.0
    } else {
        done as f32 / total as f32
    };
    let text = if queue {
        format!("queue {done} of {total} ({:.0} %)", f * 100.0)
    } else {
        format!("{done} / {total} ({:.0} %)", f * 100.0)
    };
    ui.add(egui::ProgressBar::new(f).desired_width(width).text(text));
}

pub fn ui(ui: &mut egui::Ui, model: &HomeModel) {
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show(ui, |ui| body(ui, model));
}

fn body(ui: &mut egui::Ui, model: &HomeModel) {
    ui.heading(model.title());
    if model.read_only {
        ui.colored_label(
            ui.visuals().warn_fg_color,
            "This study is read-only: nothing can be saved.",
        );
    }
    ui.add_space(8.0);
    ui.strong("Next");
    ui.label(next_step(model));
    if let Some(p) = &model.pilot {
        ui.add_space(6.0);
        ui.label(home::pilot_line(p));
    }
    ui.add_space(12.0);
    ui.columns(2, |cols| {
        counts(&mut cols[0], model);
        let ui = &mut cols[1];
        let scale = model.scale.as_deref().unwrap_or("no scale yet");
        coverage(ui, model, scale);
        ui.add_space(12.0);
        reviewers(ui, model, scale);
    });
}

/// Row counts of the main tables.
fn counts(ui: &mut egui::Ui, model: &HomeModel) {
    ui.strong("In this study");
    egui::Grid::new("home_counts")
        .num_columns(2)
        .striped(true)
        .show(ui, |ui| {
            let c = &model.counts;
            for (label, value) in [
                ("Items", c.items),
                ("Contexts", c.contexts),
                ("Rankers", c.rankers),
                ("Ranked entries", c.ranked_items),
                ("Scales", c.scales),
                ("Reviewers", c.reviewers),
                ("Grades in force", c.current_grades),
                ("Grade history rows", c.grade_events),
            ] {
                ui.label(label);
                ui.label(value.to_string());
                ui.end_row();
            }
        });
}

/// How much of the pool, of each ranker's top k and of the human sample is graded.
fn coverage(ui: &mut egui::Ui, model: &HomeModel, scale: &str) {
    ui.strong(format!("Pool coverage on {scale} (top {})", model.depth));
    egui::Grid::new("home_coverage")
        .num_columns(2)
        .show(ui, |ui| {
            ui.label("Whole pool");
            fraction_bar(ui, model.pool_graded, model.pool_size, 260.0, false);
            ui.end_row();
            for c in &model.coverage {
                ui.label(&c.ranker);
                fraction_bar(ui, c.graded, c.pairs, 260.0, false);
                ui.end_row();
            }
        });
    if model.coverage.is_empty() {
        ui.weak("No rankers yet: import rankings.csv.");
    }
    if let Some(sample) = &model.sample {
        ui.add_space(12.0);
        ui.strong(format!("Human sample on {scale}"));
        ui.label(format!(
            "{} contexts drawn · {} complete · {} pending",
            sample.drawn, sample.complete, sample.pending
        ));
        fraction_bar(ui, sample.complete, sample.drawn, 260.0, false);
    }
}

/// Each reviewer's grades on the scale and how far through their queue they are.
fn reviewers(ui: &mut egui::Ui, model: &HomeModel, scale: &str) {
    ui.strong(format!("Reviewers on {scale}"));
    egui::Grid::new("home_reviewers")
        .num_columns(3)
        .show(ui, |ui| {
            for r in &model.reviewers {
                if r.machine {
                    ui.label(format!("{} (machine judge)", r.reviewer))
                        .on_hover_text("Its grades are imported and kept outside the panel unless the lead counts them in on the Agreement screen");
                } else {
                    ui.label(&r.reviewer);
                }
                let outside = r.outside_queue();
                ui.label(format!("{} pairs graded", r.grades)).on_hover_text(format!(
                    "Pairs {} graded on {scale}, in the queue or not; {outside} of them lie \
                     outside the queue (a pilot block, an import, a gap)",
                    r.reviewer
                ));
                match r.queue {
                    Some((done, total)) => fraction_bar(ui, done as usize, total as usize, 220.0, true),
                    None if r.machine => {
                        ui.weak("no queue: a machine judge's grades are imported");
                    }
                    None => {
                        ui.weak("no queue yet (made at sign-in)");
                    }
                }
                ui.end_row();
            }
        });
    if model.reviewers.is_empty() {
        ui.weak("No reviewers yet: sign in on the Grading desk.");
    }
}
