//! The Scoreboard's section on estimates from a machine judge corrected by the human
//! sample: per ranker the combined interval, the human-only interval, the machine-only
//! point, the machine's bias and the effective human contexts; a target width gives how
//! many more sample contexts to grade, and a button draws them into a person's queue.
//! The model comes from `analysis::views::estimates_view::build` on a job thread.

use std::path::Path;

use crate::analysis::scoring::scoreboard::ScoreSettings;
use crate::analysis::views::estimates_view::{self, EstimatesPanel};
use crate::study::Study;
use crate::study::sample::DrawRequest;
use crate::ui::jobs::{JobResult, Task};

/// What a computation was asked for: the scoreboard's settings, the machine judge, the
/// target width and how many draws the section has made (a draw changes the figures).
type Asked = (ScoreSettings, Option<String>, Option<f64>, u64);

/// The section between frames.
pub struct EstimatesSection {
    /// The machine judge chosen (None: the first one).
    pub machine: Option<String>,
    /// The target half-width as typed (empty: none).
    pub target_width: String,
    /// The person whose queue gets the drawn contexts.
    pub reviewer: Option<String>,
    /// Set when the scoreboard adopted a new model (grades or settings may have changed).
    pub stale: bool,
    panel: Option<EstimatesPanel>,
    error: Option<String>,
    job: Task<JobResult<EstimatesPanel>>,
    sent: Option<Asked>,
    computed_for: Option<Asked>,
    draws: u64,
    draw_job: Task<JobResult<String>>,
    /// What the last draw did, or why it failed.
    pub message: Option<String>,
}

impl Default for EstimatesSection {
    fn default() -> Self {
        EstimatesSection {
            machine: None,
            target_width: String::new(),
            reviewer: None,
            stale: false,
            panel: None,
            error: None,
            job: Task::named("estimates-load"),
            sent: None,
            computed_for: None,
            draws: 0,
            draw_job: Task::named("sample-draw"),
            message: None,
        }
    }
}

impl EstimatesSection {
    fn width(&self) -> Option<f64> {
        self.target_width
            .trim()
            .parse::<f64>()
            .ok()
            .filter(|w| *w > 0.0 && w.is_finite())
    }

    fn refresh(&mut self, ctx: &egui::Context, path: &Path, settings: &ScoreSettings) {
        if let Some(result) = self.job.poll() {
            self.computed_for = self.sent.take();
            match result {
                Ok(panel) => {
                    self.error = None;
                    self.panel = Some(panel);
                }
                Err(e) => self.error = Some(e.to_string()),
            }
        }
        if let Some(result) = self.draw_job.poll() {
            self.message = Some(result.unwrap_or_else(|e| format!("Nothing was drawn: {e}")));
            self.draws += 1;
        }
        let asked: Asked = (
            settings.clone(),
            self.machine.clone(),
            self.width(),
            self.draws,
        );
        if !self.job.is_running() && (self.stale || self.computed_for.as_ref() != Some(&asked)) {
            self.stale = false;
            self.sent = Some(asked.clone());
            let p = path.to_path_buf();
            let (settings, machine, width, _) = asked;
            self.job.start(ctx, move || {
                let study = Study::open(&p)?;
                Ok(estimates_view::build(
                    &study,
                    &settings,
                    machine.as_deref(),
                    width,
                )?)
            });
        }
    }

    /// Draws the section under the scoreboard's other figures.
    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path, settings: &ScoreSettings) {
        let ctx = ui.ctx().clone();
        self.refresh(&ctx, path, settings);
        ui.horizontal(|ui| {
            ui.strong("Estimates from a machine judge (prediction-powered inference)");
            if self.job.is_running() {
                ui.spinner();
            }
        });
        if let Some(e) = &self.error {
            ui.colored_label(ui.visuals().error_fg_color, e);
        }
        let Some(panel) = self.panel.take() else {
            ui.weak("Computing the estimates…");
            return;
        };
        self.choices(ui, &panel);
        if !panel.sample.is_empty() {
            ui.label(&panel.sample);
        }
        if let Some(note) = &panel.note {
            ui.label(note);
        }
        if !panel.lines.is_empty() {
            lines_table(ui, &panel);
        }
        self.more(ui, path, &panel);
        for c in panel.cautions.words() {
            ui.weak(format!("Caution: {c}"));
        }
        if let Some(m) = &self.message {
            ui.label(m);
        }
        self.panel = Some(panel);
    }

    fn choices(&mut self, ui: &mut egui::Ui, panel: &EstimatesPanel) {
        if panel.machines.is_empty() {
            return;
        }
        ui.horizontal(|ui| {
            let current = panel.machine.clone().unwrap_or_default();
            let shown = |m: &String| m.clone();
            if let Some(m) = super::pick(
                ui,
                "Machine judge",
                "sb_machine",
                &current,
                &panel.machines,
                shown,
            ) {
                self.machine = Some(m);
            }
            let label = ui.label("Target half-width:");
            ui.add(egui::TextEdit::singleline(&mut self.target_width).desired_width(60.0))
                .labelled_by(label.id);
        });
    }

    fn more(&mut self, ui: &mut egui::Ui, path: &Path, panel: &EstimatesPanel) {
        let Some(more) = &panel.more else { return };
        ui.label(more);
        if panel.more_contexts == 0 || panel.people.is_empty() {
            return;
        }
        if self
            .reviewer
            .as_ref()
            .is_none_or(|r| !panel.people.contains(r))
        {
            self.reviewer = panel.people.first().cloned();
        }
        let reviewer = self.reviewer.clone().unwrap_or_default();
        ui.horizontal(|ui| {
            let shown = |p: &String| p.clone();
            if let Some(p) = super::pick(
                ui,
                "Into the queue of",
                "sb_sample_reviewer",
                &reviewer,
                &panel.people,
                shown,
            ) {
                self.reviewer = Some(p);
            }
            let button = format!("Draw {} more contexts", panel.more_contexts);
            if ui
                .add_enabled(!self.draw_job.is_running(), egui::Button::new(button))
                .clicked()
            {
                let request = DrawRequest {
                    contexts: panel.more_contexts,
                    seed: None,
                    reviewers: vec![reviewer.clone()],
                    scale: Some(panel.scale.clone()),
                };
                let p = path.to_path_buf();
                self.draw_job.start(ui.ctx(), move || {
                    let outcome = Study::open(&p)?.draw_sample(&request)?;
                    Ok(format!(
                        "Drew {} contexts (seed {}); {} of their pairs lead {}'s queue.",
                        outcome.drawn.len(),
                        outcome.seed,
                        outcome.pairs_to_grade,
                        request.reviewers.join(", ")
                    ))
                });
            }
        });
    }
}

fn lines_table(ui: &mut egui::Ui, panel: &EstimatesPanel) {
    let metric = panel.metric.replace("ndcg", "NDCG");
    egui::Grid::new("sb_estimates")
        .striped(true)
        .show(ui, |ui| {
            for title in [
                "ranker",
                &format!("{metric} estimate [95 % CI]"),
                "human only [95 % CI]",
                "machine only",
                "machine bias",
                "λ",
                "effective human contexts",
            ] {
                ui.strong(title);
            }
            ui.end_row();
            for l in &panel.lines {
                for cell in [
                    &l.ranker,
                    &l.combined,
                    &l.human_only,
                    &l.machine_only,
                    &l.bias,
                    &l.lambda,
                    &l.effective,
                ] {
                    ui.label(cell);
                }
                ui.end_row();
            }
        });
}
