//! Scoreboard: rank the rankers with intervals, compare candidates with the baseline,
//! see how much the answer depends on who graded, and queue the unjudged pairs that
//! could change it. Every number comes from `analysis::scoring::scoreboard::build` on a job
//! thread (see `analysis::views::scoreboard_view`), the same function `plumbline score` prints, so
//! screen and terminal agree.

mod controls;
mod estimates;
mod export;
pub mod plots;
mod tables;

use std::path::{Path, PathBuf};
use std::sync::Arc;

use super::jobs::{JobResult, Task};
use crate::analysis::scoring::scoreboard::{ScoreSettings, Scoreboard};
pub use crate::analysis::views::scoreboard_view::*;
use crate::study::Study;
use crate::study::snapshot::Snapshot;
use controls::pick;
use tables::{comparisons, coverage_warning, ranker_table, sensitivity};

/// Said while the figures after the table are computed.
const REST_PENDING: &str = "The table is ready; computing the NDCG curves with their bands, reviewer sensitivity, agreement and the gaps…";

/// What the screen asks the workbench to do.
pub enum ScoreboardAction {
    /// Open the Grading desk for this reviewer on this scale (their gap pairs, queued on
    /// that scale, now come first).
    OpenDesk { reviewer: String, scale: String },
}

/// Queues the gaps for a reviewer: (reviewer, scale, pairs queued, pairs new to their queue).
type GapJob = Task<JobResult<(String, String, usize, usize)>>;

/// The table's model and the snapshot it came from, kept for the rest of the model.
type TableJob = Task<JobResult<(ScoreboardModel, Arc<Snapshot>)>>;

/// Reads the study and builds the table's model for `settings` (the rest follows on
/// [`load_rest`]); runs on a job thread.
pub fn load(
    path: &Path,
    settings: ScoreSettings,
    lists_files: &[PathBuf],
) -> JobResult<(ScoreboardModel, Arc<Snapshot>)> {
    let mut snapshot = Study::open(path)?.snapshot()?;
    for file in lists_files {
        snapshot.add_rankings_file(file)?;
    }
    let model = build_table(&snapshot, settings)?;
    Ok((model, Arc::new(snapshot)))
}

/// Curves, sensitivity, agreement and gaps for a table's model; runs on a job thread.
pub fn load_rest(snapshot: &Snapshot, model: &ScoreboardModel) -> JobResult<RestOfModel> {
    Ok(build_rest(snapshot, model)?)
}

/// The screen's state: the settings being edited, the last model and running jobs.
pub struct ScoreboardScreen {
    /// Settings the controls edit; a change starts a new computation.
    pub wanted: ScoreSettings,
    pub focus_k: usize,
    pub model: Option<ScoreboardModel>,
    pub error: Option<String>,
    loading: TableJob,
    /// Curves, sensitivity, agreement and gaps, computed after the table.
    rest: Task<JobResult<RestOfModel>>,
    /// The settings the running computation was asked for.
    sent: Option<ScoreSettings>,
    computed_for: Option<ScoreSettings>,
    /// Set by the workbench when the screen is entered: grades may have changed.
    entered: bool,
    pub candidate: Option<String>,
    pub gap_reviewer: Option<String>,
    gap_job: GapJob,
    pub message: Option<String>,
    /// What the last export did, shown beside the export buttons.
    pub export_note: Option<String>,
    export_job: Task<JobResult<String>>,
    /// Rankings files scored beside the study's lists (nothing imported).
    pub lists_files: Vec<PathBuf>,
    /// The path typed for the next one.
    pub lists_path: String,
    /// Where "save … there" writes (no file dialog needed).
    pub export_path: String,
    /// Estimates from a machine judge corrected by the human sample.
    pub estimates: estimates::EstimatesSection,
}

impl Default for ScoreboardScreen {
    fn default() -> Self {
        ScoreboardScreen {
            wanted: ScoreSettings::default(),
            focus_k: 10,
            model: None,
            error: None,
            loading: Task::named("scoreboard-table"),
            rest: Task::named("scoreboard-rest"),
            sent: None,
            computed_for: None,
            entered: false,
            candidate: None,
            gap_reviewer: None,
            gap_job: Task::named("gap-queue"),
            message: None,
            export_note: None,
            export_job: Task::named("scoreboard-export"),
            lists_files: Vec::new(),
            lists_path: String::new(),
            export_path: String::new(),
            estimates: estimates::EstimatesSection::default(),
        }
    }
}

impl ScoreboardScreen {
    /// The workbench calls this when the screen is entered; the next frame recomputes.
    pub fn entered(&mut self) {
        self.entered = true;
    }

    /// Whether a computation (the table or the rest of the model) is in flight.
    pub fn is_loading(&self) -> bool {
        self.loading.is_running() || self.rest.is_running()
    }

    /// True when the model on screen was computed for the settings the controls show.
    pub fn is_current(&self) -> bool {
        self.model.is_some()
            && !self.is_loading()
            && self.computed_for.as_ref() == Some(&self.wanted)
    }

    /// Starts a computation when the settings changed (or on entering the screen, since
    /// grades may have changed); the last model stays drawn meanwhile.
    fn refresh(&mut self, ctx: &egui::Context, path: &Path) {
        // Kept until a computation starts, so an entry during a run is not lost.
        let entered = self.entered;
        if let Some(result) = self.loading.poll() {
            let sent = self.sent.take();
            match result {
                Ok((model, snapshot)) => {
                    let for_rest = model.clone();
                    self.rest
                        .start(ctx, move || load_rest(&snapshot, &for_rest));
                    if sent.as_ref() == Some(&self.wanted) {
                        // Adopt what the job filled in (scale, baseline) without recomputing.
                        self.wanted = model.settings.clone();
                        self.computed_for = Some(self.wanted.clone());
                    } else {
                        self.computed_for = sent;
                    }
                    if !self.wanted.ks.contains(&self.focus_k) {
                        self.focus_k = crate::analysis::defaults::focus_k(&self.wanted.ks);
                    }
                    self.error = None;
                    self.model = Some(model);
                    // Grades or settings may have changed: the estimates follow.
                    self.estimates.stale = true;
                }
                Err(e) => {
                    self.computed_for = sent;
                    self.error = Some(e.to_string());
                }
            }
        }
        self.collect_rest();
        if !self.loading.is_running()
            && (entered || self.computed_for.as_ref() != Some(&self.wanted))
        {
            let p = path.to_path_buf();
            let settings = self.wanted.clone();
            self.sent = Some(settings.clone());
            self.entered = false;
            let files = self.lists_files.clone();
            self.loading.start(ctx, move || load(&p, settings, &files));
        }
    }

    /// Adds the rest of the model when it lands for the model on screen.
    fn collect_rest(&mut self) {
        if let Some(result) = self.rest.poll() {
            match (result, self.model.as_mut()) {
                (Ok(rest), Some(model)) if model.rest_pending => model.add_rest(rest),
                (Err(e), _) => self.error = Some(e.to_string()),
                _ => {}
            }
        }
    }

    fn collect_side_jobs(&mut self) -> Option<ScoreboardAction> {
        if let Some(result) = self.export_job.poll() {
            self.export_note = Some(result.unwrap_or_else(|e| e.to_string()));
        }
        if let Some(result) = self.gap_job.poll() {
            match result {
                Ok((reviewer, scale, queued, added)) => {
                    self.message = Some(format!(
                        "{queued} unjudged pairs now lead {reviewer}'s queue ({added} of them new to it)."
                    ));
                    return Some(ScoreboardAction::OpenDesk { reviewer, scale });
                }
                Err(e) => self.message = Some(format!("The gaps were not queued: {e}")),
            }
        }
        None
    }

    /// Draws the screen; returns a request for the workbench (e.g. open the desk).
    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        path: &Path,
        signed_in: Option<&str>,
    ) -> Option<ScoreboardAction> {
        let ctx = ui.ctx().clone();
        self.refresh(&ctx, path);
        let action = self.collect_side_jobs();
        if self.gap_reviewer.is_none() {
            self.gap_reviewer = signed_in.map(str::to_string);
        }
        ui.horizontal(|ui| {
            ui.heading("Scoreboard");
            if self.loading.is_running() {
                ui.spinner();
                ui.weak("Computing…");
            } else if self.rest.is_running() {
                ui.spinner();
                ui.weak(REST_PENDING);
            }
        });
        let Some(model) = self.model.take() else {
            match &self.error {
                Some(e) => {
                    ui.colored_label(ui.visuals().error_fg_color, e);
                }
                None => {
                    ui.weak("Scoring the rankers…");
                }
            }
            return action;
        };
        self.controls(ui, &model);
        if let Some(e) = &self.error {
            ui.colored_label(
                ui.visuals().error_fg_color,
                format!("{e} (showing the last result)"),
            );
        }
        egui::ScrollArea::vertical()
            .auto_shrink([false, false])
            .show(ui, |ui| self.body(ui, &ctx, path, &model));
        self.model = Some(model);
        action
    }

    fn body(
        &mut self,
        ui: &mut egui::Ui,
        ctx: &egui::Context,
        path: &Path,
        model: &ScoreboardModel,
    ) {
        let board = &model.board;
        let focus = if board.settings.ks.contains(&self.focus_k) {
            self.focus_k
        } else {
            crate::analysis::defaults::focus_k(&board.settings.ks)
        };
        ui.label(crate::analysis::views::scoreboard_view::summary_line(board));
        coverage_warning(ui, board);
        ui.add_space(6.0);
        self.tables(ui, ctx, board, focus);
        ui.add_space(10.0);
        self.lists_from_files(ui);
        let files_text = crate::analysis::output::render::rankings_files_text(board);
        if !files_text.is_empty() {
            ui.label(files_text.trim_end());
        }
        tables::pool_bias(ui, board, focus);
        ui.add_space(10.0);
        if model.rest_pending {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.weak(REST_PENDING);
            });
        } else {
            self.plots_and_candidate(ui, model, focus);
            ui.add_space(10.0);
            sensitivity(ui, model, focus);
            ui.add_space(10.0);
            self.gaps(ui, ctx, path, model);
            ui.add_space(10.0);
            self.export(ui, ctx, model);
        }
        if let Some(m) = &self.message {
            ui.add_space(6.0);
            ui.label(m);
        }
        // Last, so that its figures arriving later never move the controls above.
        ui.add_space(10.0);
        self.estimates.ui(ui, path, &board.settings);
    }

    /// The ranker table and the comparisons with the baseline, each with its copy button.
    fn tables(&mut self, ui: &mut egui::Ui, ctx: &egui::Context, board: &Scoreboard, focus: usize) {
        ui.horizontal(|ui| {
            ui.strong("Rankers");
            if ui.button("Copy table (tab-separated)").clicked() {
                ctx.copy_text(table_tsv(board, focus));
                self.message = Some("The ranker table is on the clipboard.".into());
            }
        });
        ranker_table(ui, board, focus);
        ui.add_space(10.0);
        ui.horizontal(|ui| {
            ui.strong("Against the baseline");
            if ui.button("Copy comparisons (tab-separated)").clicked() {
                ctx.copy_text(comparisons_tsv(board));
                self.message = Some("The comparisons are on the clipboard.".into());
            }
        });
        comparisons(ui, board);
    }

    /// The plots with the candidate the differences plot shows (a choice once there are
    /// two or more).
    fn plots_and_candidate(&mut self, ui: &mut egui::Ui, model: &ScoreboardModel, focus: usize) {
        let board = &model.board;
        let candidates: Vec<String> = board
            .rankers
            .iter()
            .map(|r| r.ranker.clone())
            .filter(|r| Some(r) != board.settings.baseline.as_ref())
            .collect();
        if self
            .candidate
            .as_ref()
            .is_none_or(|c| !candidates.contains(c))
        {
            self.candidate = candidates.first().cloned();
        }
        plots::plots(ui, model, focus, self.candidate.as_deref());
        if candidates.len() > 1 {
            let current = self.candidate.clone().unwrap_or_default();
            if let Some(c) = pick(
                ui,
                "Candidate in the differences plot",
                "sb_candidate",
                &current,
                &candidates,
                |c| c.clone(),
            ) {
                self.candidate = Some(c);
            }
        }
    }

    /// "Score lists from a file": a typed path (no file dialog needed), scored beside the
    /// study's lists on the next computation; nothing is imported.
    fn lists_from_files(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
            let label = ui.label("Score lists from a file (nothing imported):");
            ui.add(
                egui::TextEdit::singleline(&mut self.lists_path)
                    .hint_text("path to a rankings CSV")
                    .desired_width(320.0),
            )
            .labelled_by(label.id);
            let path = PathBuf::from(self.lists_path.trim());
            if ui
                .add_enabled(
                    !self.lists_path.trim().is_empty(),
                    egui::Button::new("Score it"),
                )
                .clicked()
                && !self.lists_files.contains(&path)
            {
                self.lists_files.push(path);
                self.lists_path.clear();
                self.entered = true;
            }
            if !self.lists_files.is_empty() && ui.button("Back to the study's lists").clicked() {
                self.lists_files.clear();
                self.entered = true;
            }
        });
        for file in &self.lists_files {
            ui.label(format!(
                "Scoring {} beside the study's lists.",
                file.display()
            ));
        }
    }

    fn gaps(
        &mut self,
        ui: &mut egui::Ui,
        ctx: &egui::Context,
        path: &Path,
        model: &ScoreboardModel,
    ) {
        let k = model.settings.ks.iter().copied().max().unwrap_or(10);
        ui.strong("Judge the gaps");
        ui.label(format!(
            "{} pairs in the rankers' top {k} have no grade ({}). Pairs one ranker places high and another low or not at all come first: they can move the comparison most.",
            model.gaps.len(),
            model.settings.grades.label()
        ));
        if model.gaps.is_empty() {
            return;
        }
        ui.horizontal(|ui| {
            let current = self.gap_reviewer.clone().unwrap_or_default();
            if let Some(r) = pick(
                ui,
                "Reviewer for the gaps",
                "sb_gap_reviewer",
                &current,
                &model.choices.reviewers,
                |r| r.clone(),
            ) {
                self.gap_reviewer = Some(r);
            }
            let enabled = self.gap_reviewer.is_some() && !self.gap_job.is_running();
            let label = format!("Queue {} gaps and open the desk", model.gaps.len());
            if ui.add_enabled(enabled, egui::Button::new(label)).clicked()
                && let Some(reviewer) = self.gap_reviewer.clone()
            {
                let pairs: Vec<(String, String)> = model
                    .gaps
                    .iter()
                    .map(|g| (g.context_id.clone(), g.item_id.clone()))
                    .collect();
                let scale = model.board.scale.clone();
                let p: PathBuf = path.to_path_buf();
                self.gap_job.start(ctx, move || {
                    let mut study = Study::open(&p)?;
                    let added = study.queue_gaps_first(&reviewer, &scale, &pairs)?;
                    Ok((reviewer, scale, pairs.len(), added))
                });
            }
            if self.gap_job.is_running() {
                ui.spinner();
            }
        });
    }
}
