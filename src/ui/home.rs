//! Home: what the study holds and what to do next.

use std::path::Path;

use crate::study::{Study, StudyCounts};

/// Everything Home shows, computed off the UI thread.
#[derive(Debug, Clone, Default)]
pub struct HomeModel {
    pub name: String,
    pub counts: StudyCounts,
    pub rankers: Vec<String>,
    /// (reviewer, grades given on any scale).
    pub reviewer_grades: Vec<(String, usize)>,
    pub read_only: bool,
}

pub fn load(path: &Path) -> Result<HomeModel, String> {
    let study = Study::open(path).map_err(|e| e.to_string())?;
    let snapshot = study.snapshot().map_err(|e| e.to_string())?;
    let mut reviewer_grades: Vec<(String, usize)> =
        snapshot.reviewers.iter().map(|r| (r.clone(), 0)).collect();
    for g in &snapshot.grades {
        reviewer_grades[g.reviewer as usize].1 += 1;
    }
    Ok(HomeModel {
        name: study.name(),
        counts: study.counts().map_err(|e| e.to_string())?,
        rankers: snapshot.rankers.clone(),
        reviewer_grades,
        read_only: study.is_read_only(),
    })
}

pub fn ui(ui: &mut egui::Ui, model: &HomeModel) {
    ui.heading(format!("Study {}", model.name));
    if model.read_only {
        ui.colored_label(
            ui.visuals().warn_fg_color,
            "This study is read-only: nothing can be saved.",
        );
    }
    ui.add_space(8.0);
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
    ui.add_space(12.0);
    ui.strong("Rankers");
    ui.label(if model.rankers.is_empty() {
        "None yet: import rankings.csv.".to_string()
    } else {
        model.rankers.join(", ")
    });
    ui.add_space(12.0);
    ui.strong("Reviewers");
    for (name, count) in &model.reviewer_grades {
        ui.label(format!("{name}: {count} grades"));
    }
    ui.add_space(12.0);
    ui.strong("Next");
    ui.label(next_step(model));
}

fn next_step(model: &HomeModel) -> &'static str {
    let c = &model.counts;
    if c.items == 0 || c.contexts == 0 {
        "Import a catalog: items.csv and contexts.csv."
    } else if c.rankers == 0 {
        "Import the rankers' lists: rankings.csv."
    } else if c.scales == 0 {
        "Define a graded scale: scales.csv."
    } else if c.current_grades == 0 {
        "Grade the pool, or import grades.csv."
    } else {
        "Check agreement (plumbline agree) and score the rankers (plumbline score)."
    }
}
