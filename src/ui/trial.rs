//! Scale trial: one row per piloted scale and per saved collapse map, a plot of agreement
//! against time per grade, the recommendation and its cautions. The numbers come from
//! `analysis::scoring::trial::build` with the same settings as `plumbline trial`, computed on a
//! job thread. While the screen is shown it asks every few seconds whether grades
//! arrived (pilot grades from the desk, another workstation or a merge) and recomputes
//! when they did.

use std::path::Path;

use egui_plot::{Line, Plot, PlotPoint, Points, Text};

use super::jobs::{JobResult, Task};
use crate::analysis::format::{fixed, percent_spaced as percent};
use crate::analysis::scoring::trial::{self, Trial, TrialRow};
use crate::study::Study;
use crate::study::grades::GradesMark;
use crate::study::pilot::PilotStatus;

/// Seconds between two looks at whether grades arrived, while the screen is shown.
const WATCH_EVERY: f64 = 2.0;

/// The same trial as `plumbline trial` (`trial::of_study`); runs on a job thread.
pub fn load(path: &Path) -> JobResult<Trial> {
    Ok(trial::of_study(&Study::open(path)?)?)
}

/// The trial with where the grades stood before it was computed (so grades that arrive
/// meanwhile still cause one more recomputation).
fn load_marked(path: &Path) -> JobResult<Loaded> {
    let study = Study::open(path)?;
    let mark = study.grades_mark()?;
    let pilot = study.pilot_status()?;
    Ok((mark, trial::of_study(&study)?, pilot))
}

/// A computed trial with the grades' mark it was computed at and the running pilot.
type Loaded = (GradesMark, Trial, Option<PilotStatus>);

/// The row's name: the scale, and the collapse map when there is one.
pub fn row_name(row: &TrialRow) -> String {
    match &row.collapse {
        Some(map) => format!("{} ({map})", row.scale),
        None => row.scale.clone(),
    }
}

/// The screen's state: the last trial and the job computing the next.
pub struct TrialScreen {
    pub model: Option<JobResult<Trial>>,
    loading: Task<JobResult<Loaded>>,
    /// The running pilot when the trial was computed (None: no pilot runs).
    pub pilot: Option<PilotStatus>,
    /// The grades' mark the shown trial was computed at.
    computed_at: Option<GradesMark>,
    watching: Task<JobResult<GradesMark>>,
    /// egui time of the last look at the grades' mark.
    looked_at: Option<f64>,
}

impl Default for TrialScreen {
    fn default() -> TrialScreen {
        TrialScreen {
            model: None,
            loading: Task::named("trial-load"),
            pilot: None,
            computed_at: None,
            watching: Task::named("trial-watch"),
            looked_at: None,
        }
    }
}

impl TrialScreen {
    /// Recomputes in the background; the old table stays until the new one arrives.
    pub fn reload(&mut self, ctx: &egui::Context, path: &Path) {
        let p = path.to_path_buf();
        self.loading.start(ctx, move || load_marked(&p));
    }

    /// Whether a recomputation is in flight.
    pub fn is_loading(&self) -> bool {
        self.loading.is_running()
    }

    /// Recomputes when the grades moved on since the shown trial was computed; looks
    /// every `WATCH_EVERY` seconds, only while the screen is drawn and idle.
    fn watch(&mut self, ctx: &egui::Context, path: &Path) {
        // A look that failed changes nothing: the next one, or Recompute, tries again.
        if let Some(Ok(mark)) = self.watching.poll()
            && self.computed_at.is_some_and(|m| m != mark)
            && !self.loading.is_running()
        {
            self.reload(ctx, path);
        }
        let now = ctx.input(|i| i.time);
        let due = self.looked_at.is_none_or(|t| now - t >= WATCH_EVERY);
        if due && !self.loading.is_running() && !self.watching.is_running() {
            self.looked_at = Some(now);
            let p = path.to_path_buf();
            self.watching
                .start(ctx, move || Ok(Study::open(&p)?.grades_mark()?));
        }
        ctx.request_repaint_after_secs(WATCH_EVERY as f32);
    }

    /// Draws the screen from the last trial.
    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path) {
        if self.model.is_none() && !self.loading.is_running() {
            self.reload(ui.ctx(), path);
        }
        if let Some(result) = self.loading.poll() {
            self.model = Some(result.map(|(mark, trial, pilot)| {
                self.computed_at = Some(mark);
                self.pilot = pilot;
                trial
            }));
        }
        self.watch(ui.ctx(), path);
        ui.horizontal(|ui| {
            ui.heading("Scale trial");
            if self.loading.is_running() {
                ui.spinner();
                ui.label("Computing (bootstrap and randomization tests)…");
            } else if ui.button("Recompute").clicked() {
                self.reload(ui.ctx(), path);
            }
        });
        match &self.model {
            None => {}
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
            }
            Some(Ok(t)) => {
                let pilot = self.pilot.as_ref();
                egui::ScrollArea::vertical().show(ui, |ui| {
                    pilot_progress(ui, pilot);
                    show(ui, t)
                });
            }
        }
    }
}

/// A running pilot's progress: the trial's rows grow as its grades arrive.
fn pilot_progress(ui: &mut egui::Ui, pilot: Option<&PilotStatus>) {
    let Some(p) = pilot else { return };
    let needed: usize = p.shares.iter().map(|s| s.pairs * p.scales.len()).sum();
    let graded: usize = p.shares.iter().map(|s| s.graded).sum();
    ui.group(|ui| {
        ui.strong(format!(
            "Pilot running on {}: {graded} of {needed} pilot grades given",
            p.scales.join(" and ")
        ));
        for share in &p.shares {
            let total = share.pairs * p.scales.len();
            let f = if total == 0 {
                0.0
            } else {
                share.graded as f32 / total as f32
            };
            ui.horizontal(|ui| {
                ui.label(&share.reviewer);
                ui.add(
                    egui::ProgressBar::new(f)
                        .desired_width(220.0)
                        .text(format!("{} of {total} pilot grades", share.graded)),
                );
            });
        }
    });
    ui.add_space(6.0);
}

/// A quadratic kappa, or why there is none.
fn kappa_or_reason(r: &TrialRow) -> (String, &'static str) {
    if r.kappa_quadratic_mean.is_finite() {
        (fixed(r.kappa_quadratic_mean, 3), "")
    } else if r.reviewers < 2 {
        (
            "– (one reviewer)".into(),
            "Kappa compares two reviewers; only one graded these pairs on this scale.",
        )
    } else {
        (
            "– (undefined)".into(),
            "No two reviewers share a graded pair here, or every shared grade is the same level (chance agreement is then 1 and kappa is undefined).",
        )
    }
}

fn show(ui: &mut egui::Ui, t: &Trial) {
    ui.label(format!(
        "Every row is computed on the {} pairs graded on every piloted scale.",
        t.common_pairs
    ));
    ui.add_space(6.0);
    ui.group(|ui| {
        ui.strong("Recommendation");
        ui.label(&t.recommendation);
    });
    ui.add_space(6.0);
    table(ui, &t.scales);
    ui.add_space(8.0);
    ui.strong("Agreement against time per grade");
    plot(ui, &t.scales);
    ui.add_space(6.0);
    ui.strong("Read with care");
    let warn = ui.visuals().warn_fg_color;
    for c in t.cautions.words() {
        ui.colored_label(warn, format!("- {c}"));
    }
}

/// Column heads with their meanings (on hover).
fn heads(ui: &mut egui::Ui, heads: &[(&str, &str)]) {
    for (head, meaning) in heads {
        ui.strong(*head).on_hover_text(*meaning);
    }
    ui.end_row();
}

/// The trial as two tables one above the other (agreement and effort; what each scale
/// does to the rankers), so every column reads at 1100 px without scrolling sideways.
fn table(ui: &mut egui::Ui, rows: &[TrialRow]) {
    ui.strong("Agreement and effort");
    egui::Grid::new("trial_table")
        .striped(true)
        .spacing([10.0, 4.0])
        .show(ui, |ui| {
            heads(
                ui,
                &[
                    (
                        "Scale",
                        "The scale, with the collapse map applied in brackets",
                    ),
                    ("Levels", "Number of levels"),
                    ("Pairs", "Common pairs this row is computed on"),
                    ("Reviewers", "Reviewers with grades on these pairs"),
                    (
                        "Alpha ordinal [95% CI]",
                        "Krippendorff's alpha (ordinal) with a bootstrap interval",
                    ),
                    (
                        "Kappa quad.",
                        "Mean quadratic weighted Cohen's kappa over reviewer pairs",
                    ),
                    ("AC1", "Mean Gwet's AC1 over reviewer pairs"),
                    (
                        "Median s (IQR)",
                        "Median and interquartile range of seconds per grade",
                    ),
                    ("Can't judge", "Share of grades marked can't judge"),
                ],
            );
            for r in rows {
                ui.label(row_name(r));
                ui.label(r.levels.to_string());
                ui.label(r.pairs.to_string());
                ui.label(r.reviewers.to_string());
                ui.label(crate::analysis::views::scoreboard_view::with_interval(
                    r.alpha_ordinal,
                    r.alpha_ci_low,
                    r.alpha_ci_high,
                ));
                let (kappa, why) = kappa_or_reason(r);
                let shown = ui.label(kappa);
                if !why.is_empty() {
                    shown.on_hover_text(why);
                }
                ui.label(fixed(r.ac1_mean, 3));
                ui.label(format!(
                    "{} ({})",
                    fixed(r.median_seconds, 1),
                    fixed(r.iqr_seconds, 1)
                ));
                ui.label(percent(r.cant_judge_rate));
                ui.end_row();
            }
        });
    ui.add_space(6.0);
    rankers_table(ui, rows);
}

/// What each scale does to the rankers: their order, its agreement with the finest
/// scale's, how many ranker pairs it separates, alpha per reviewer-minute.
fn rankers_table(ui: &mut egui::Ui, rows: &[TrialRow]) {
    // The rows come finest scale first; tau-b compares every order with that one's.
    let finest = rows.first().map_or(String::new(), row_name);
    let tau_head = format!("Tau-b vs {finest}");
    let tau_meaning = format!(
        "Kendall's tau-b of this row's ranker order against the order on {finest}, the scale with the most levels (1: the same order)"
    );
    ui.strong("What each scale does to the rankers");
    egui::Grid::new("trial_rankers")
        .striped(true)
        .spacing([10.0, 4.0])
        .show(ui, |ui| {
            heads(
                ui,
                &[
                    ("Scale", "The scale, with the collapse map applied in brackets"),
                    (
                        "Rankers by NDCG@10",
                        "Ranker order by mean NDCG@10 on these pairs",
                    ),
                    (tau_head.as_str(), tau_meaning.as_str()),
                    (
                        "Discriminative power",
                        "Share of ranker pairs separated at Holm-adjusted p < 0.05 (Sakai 2006, SIGIR)",
                    ),
                    (
                        "Alpha per reviewer-minute",
                        "Ordinal Krippendorff's alpha divided by the reviewer-minutes one pair costs: the recorded times of every grade on the common pairs, summed and divided by the pairs (Krippendorff 2004 for alpha; the ratio is common practice)",
                    ),
                ],
            );
            for r in rows {
                ui.label(row_name(r));
                ui.label(r.ranker_order.join(" > "));
                ui.label(fixed(r.kendall_tau, 3));
                ui.label(percent(r.discriminative_power));
                ui.label(fixed(r.alpha_per_reviewer_minute, 3));
                ui.end_row();
            }
        });
}

fn plot(ui: &mut egui::Ui, rows: &[TrialRow]) {
    // Room on the right of the slowest point for its label.
    let right = rows.iter().map(|r| r.median_seconds).fold(1.0, f64::max) * 1.3;
    Plot::new("trial_plot")
        .height(260.0)
        .width(ui.available_width().min(900.0))
        .include_x(right)
        .show_x(false)
        .show_y(false)
        .x_axis_label("median seconds per grade")
        .y_axis_label("Krippendorff's alpha (ordinal)")
        .include_x(0.0)
        .include_y(0.0)
        .include_y(1.0)
        .allow_zoom(false)
        .allow_drag(false)
        .show(ui, |p| {
            for (n, r) in rows.iter().enumerate() {
                let colour = super::palette::series(n);
                let name = row_name(r);
                let x = r.median_seconds;
                p.line(
                    Line::new(
                        format!("{name} interval"),
                        vec![[x, r.alpha_ci_low], [x, r.alpha_ci_high]],
                    )
                    .color(colour)
                    .width(1.5),
                );
                p.points(
                    Points::new(name.clone(), vec![[x, r.alpha_ordinal]])
                        .radius(5.0)
                        .color(colour),
                );
                p.text(
                    Text::new(
                        format!("{name} label"),
                        PlotPoint::new(x, r.alpha_ordinal),
                        format!("  {name}"),
                    )
                    .anchor(egui::Align2::LEFT_CENTER)
                    .color(colour),
                );
            }
        });
}
