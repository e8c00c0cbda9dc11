//! Home: what the study holds, how far the pool is graded and what to do next.

use std::collections::HashSet;
use std::path::Path;

use crate::study::{Study, StudyCounts};

/// How much of one ranker's top k has a grade on the active scale.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Coverage {
    pub ranker: String,
    pub graded: usize,
    pub pairs: usize,
}

/// One reviewer's standing on the active scale.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ReviewerProgress {
    pub reviewer: String,
    /// Grades given on the active scale (queued or not).
    pub grades: usize,
    /// (done, total) of the reviewer's queue, once a queue exists.
    pub queue: Option<(u64, u64)>,
}

/// Everything Home shows, computed off the UI thread.
#[derive(Debug, Clone, Default)]
pub struct HomeModel {
    pub name: String,
    pub counts: StudyCounts,
    pub scale: Option<String>,
    pub depth: usize,
    pub pool_size: usize,
    pub pool_graded: usize,
    pub coverage: Vec<Coverage>,
    pub reviewers: Vec<ReviewerProgress>,
    pub read_only: bool,
}

pub fn load(path: &Path) -> Result<HomeModel, String> {
    let err = |e: crate::study::StudyError| e.to_string();
    let study = Study::open(path).map_err(err)?;
    let snapshot = study.snapshot().map_err(err)?;
    let depth = study.pool_depth().map_err(err)?;
    let scale = (!snapshot.scales.is_empty()).then(|| super::desk::active_scale(&study, &snapshot));
    let graded: HashSet<(u32, u32)> = snapshot
        .grades
        .iter()
        .filter(|g| Some(g.scale as usize) == scale && g.value.is_some())
        .map(|g| (g.context, g.item))
        .collect();
    let mut pool: HashSet<(u32, u32)> = HashSet::new();
    let mut coverage = Vec::new();
    for (r, lists) in snapshot.lists.iter().enumerate() {
        let mut cov = Coverage {
            ranker: snapshot.rankers[r].clone(),
            ..Coverage::default()
        };
        for (c, list) in lists.iter().enumerate() {
            for &item in list.iter().take(depth) {
                let pair = (c as u32, item);
                pool.insert(pair);
                cov.pairs += 1;
                cov.graded += graded.contains(&pair) as usize;
            }
        }
        coverage.push(cov);
    }
    let pool_graded = pool.iter().filter(|p| graded.contains(p)).count();
    let scale_name = scale.map(|s| snapshot.scales[s].name.clone());
    let queues = match &scale_name {
        Some(s) => study.queue_progress(s).map_err(err)?,
        None => Vec::new(),
    };
    let reviewers = snapshot
        .reviewers
        .iter()
        .enumerate()
        .map(|(r, name)| ReviewerProgress {
            reviewer: name.clone(),
            grades: snapshot
                .grades
                .iter()
                .filter(|g| g.reviewer as usize == r && Some(g.scale as usize) == scale)
                .count(),
            queue: queues
                .iter()
                .find(|q| &q.reviewer == name)
                .map(|q| (q.done, q.total)),
        })
        .collect();
    Ok(HomeModel {
        name: study.name(),
        counts: study.counts().map_err(err)?,
        scale: scale_name,
        depth,
        pool_size: pool.len(),
        pool_graded,
        coverage,
        reviewers,
        read_only: study.is_read_only(),
    })
}

fn fraction_bar(ui: &mut egui::Ui, done: usize, total: usize, width: f32) {
    let f = if total == 0 {
        0.0
    } else {
        done as f32 / total as f32
    };
    ui.add(
        egui::ProgressBar::new(f)
            .desired_width(width)
            .text(format!("{done} / {total} ({:.0} %)", f * 100.0)),
    );
}

pub fn ui(ui: &mut egui::Ui, model: &HomeModel) {
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show(ui, |ui| body(ui, model));
}

fn body(ui: &mut egui::Ui, model: &HomeModel) {
    ui.heading(&model.name);
    if model.read_only {
        ui.colored_label(
            ui.visuals().warn_fg_color,
            "This study is read-only: nothing can be saved.",
        );
    }
    ui.add_space(8.0);
    ui.strong("Next");
    ui.label(next_step(model));
    ui.add_space(12.0);
    ui.columns(2, |cols| {
        let ui = &mut cols[0];
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
        let ui = &mut cols[1];
        let scale = model.scale.as_deref().unwrap_or("no scale yet");
        ui.strong(format!("Pool coverage on {scale} (top {})", model.depth));
        egui::Grid::new("home_coverage")
            .num_columns(2)
            .show(ui, |ui| {
                ui.label("Whole pool");
                fraction_bar(ui, model.pool_graded, model.pool_size, 260.0);
                ui.end_row();
                for c in &model.coverage {
                    ui.label(&c.ranker);
                    fraction_bar(ui, c.graded, c.pairs, 260.0);
                    ui.end_row();
                }
            });
        if model.coverage.is_empty() {
            ui.weak("No rankers yet: import rankings.csv.");
        }
        ui.add_space(12.0);
        ui.strong(format!("Reviewers on {scale}"));
        egui::Grid::new("home_reviewers")
            .num_columns(3)
            .show(ui, |ui| {
                for r in &model.reviewers {
                    ui.label(&r.reviewer);
                    ui.label(format!("{} grades", r.grades));
                    match r.queue {
                        Some((done, total)) => {
                            fraction_bar(ui, done as usize, total as usize, 200.0)
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
    });
}

fn next_step(model: &HomeModel) -> String {
    let c = &model.counts;
    if c.items == 0 || c.contexts == 0 {
        "Import a catalog on the Catalog screen: items.csv and contexts.csv.".into()
    } else if c.rankers == 0 {
        "Import the rankers' lists on the Catalog screen: rankings.csv.".into()
    } else if c.scales == 0 {
        "Define a graded scale: import scales.csv on the Catalog screen.".into()
    } else if let Some(r) = model
        .reviewers
        .iter()
        .find(|r| r.queue.is_some_and(|(done, total)| done < total))
        .filter(|_| model.pool_graded == model.pool_size)
    {
        let (done, total) = r.queue.unwrap_or_default();
        format!(
            "Every pool pair has a grade; queues are still open ({} has {} of {total} to go). Shared pairs graded by everyone make agreement measurable: keep grading on the Grading desk.",
            r.reviewer,
            total - done
        )
    } else if model.pool_graded < model.pool_size {
        format!(
            "Grade the pool on the Grading desk: {} of {} pairs still have no grade.",
            model.pool_size - model.pool_graded,
            model.pool_size
        )
    } else {
        "The pool is graded: check agreement and settle disagreements on the Agreement screen, then compare the rankers on the Scoreboard.".into()
    }
}
