//! Scoreboard: rank the rankers with intervals, compare candidates with the baseline,
//! see how much the answer depends on who graded, and queue the unjudged pairs that
//! could change it. Every number comes from `analysis::scoreboard::build` on a job
//! thread, the same function `plumbline score` prints, so screen and terminal agree.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use super::jobs::Pending;
use super::scoreboard_plots as plots;
use super::study_picker::block_on;
use crate::analysis::agreement::{self, AgreementReport};
use crate::analysis::gaps::{GapPair, gap_pairs};
use crate::analysis::judgments::GradeSource;
use crate::analysis::scoreboard::{self, OFFLINE_CAUTION, ScoreSettings, Scoreboard, Segment};
use crate::analysis::{render, report};
use crate::core::metrics::{GainKind, Unjudged};
use crate::core::stats::kendall_tau_b;
use crate::study::Study;

/// Cut-offs offered as toggles; NDCG@k is also drawn for every k from 1 to `CURVE_MAX_K`.
pub const OFFERED_KS: [usize; 6] = [1, 3, 5, 10, 15, 20];
pub const CURVE_MAX_K: usize = 20;
/// judged@k below this share earns a coverage warning.
pub const COVERAGE_WARNING: f64 = 0.9;

/// What the controls can be set to, read from the study.
#[derive(Debug, Clone, Default)]
pub struct Choices {
    pub scales: Vec<String>,
    pub rankers: Vec<String>,
    pub reviewers: Vec<String>,
    /// Segment labels as `Segment::parse` reads them.
    pub segments: Vec<String>,
}

/// NDCG@k with its interval at one k, for the curve plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurvePoint {
    pub k: usize,
    pub mean: f64,
    pub low: f64,
    pub high: f64,
}

/// One reviewer's own grades scored alone, against the panel's ranker order.
#[derive(Debug, Clone)]
pub struct SensitivityRow {
    pub reviewer: String,
    pub contexts_scored: usize,
    /// Per NDCG key: mean per ranker (board order), Kendall's tau-b with the panel's means,
    /// and whether the ranker order is the same as the panel's.
    pub by_key: BTreeMap<String, (Vec<f64>, f64, bool)>,
}

/// Everything the screen shows; built on a job thread.
#[derive(Debug, Clone)]
pub struct ScoreboardModel {
    /// The settings as used (baseline filled in from the study when none was chosen).
    pub settings: ScoreSettings,
    pub board: Scoreboard,
    pub curves: Vec<(String, Vec<CurvePoint>)>,
    /// The panel's NDCG means per key (board order), what sensitivity rows compare with.
    pub panel_means: BTreeMap<String, Vec<f64>>,
    pub sensitivity: Vec<SensitivityRow>,
    pub agreement: Option<AgreementReport>,
    /// Unjudged pairs in the top max(k), most decisive first.
    pub gaps: Vec<GapPair>,
    pub choices: Choices,
}

fn ndcg_keys(ks: &[usize]) -> Vec<String> {
    ks.iter().map(|k| format!("ndcg@{k}")).collect()
}

fn means(board: &Scoreboard, key: &str) -> Vec<f64> {
    board
        .rankers
        .iter()
        .map(|r| r.metrics.get(key).map_or(f64::NAN, |m| m.mean))
        .collect()
}

/// Ranker indices from best to worst mean (ties keep board order).
pub fn order_of(means: &[f64]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..means.len()).collect();
    order.sort_by(|a, b| means[*b].total_cmp(&means[*a]));
    order
}

/// Builds the model. Heavy: runs on a job thread.
pub fn load(path: &Path, requested: ScoreSettings) -> Result<ScoreboardModel, String> {
    let err = |e: crate::study::StudyError| e.to_string();
    let study = Study::open(path).map_err(err)?;
    let snapshot = study.snapshot().map_err(err)?;
    let mut settings = requested;
    if settings.baseline.is_none() {
        settings.baseline = study
            .setting("baseline")
            .map_err(err)?
            .filter(|b| snapshot.ranker_index(b).is_some())
            .or_else(|| snapshot.rankers.first().cloned());
    }
    let board = scoreboard::build(&snapshot, &settings).map_err(|e| e.to_string())?;
    let scale = snapshot
        .scale_index(&board.scale)
        .ok_or("the scale vanished")?;
    settings.scale = Some(board.scale.clone());

    // NDCG at every k from 1 to 20: one more build, with few randomization resamples
    // because only the rankers' intervals are drawn.
    let curve_board = scoreboard::build(
        &snapshot,
        &ScoreSettings {
            ks: (1..=CURVE_MAX_K).collect(),
            randomization_resamples: 100,
            ..settings.clone()
        },
    )
    .map_err(|e| e.to_string())?;
    let curves = curve_board
        .rankers
        .iter()
        .map(|r| {
            let points = (1..=CURVE_MAX_K)
                .filter_map(|k| {
                    let m = r.metrics.get(&format!("ndcg@{k}"))?;
                    Some(CurvePoint {
                        k,
                        mean: m.mean,
                        low: m.ci_low,
                        high: m.ci_high,
                    })
                })
                .collect();
            (r.ranker.clone(), points)
        })
        .collect();

    // Reviewer sensitivity: means only, so few resamples.
    let quick = |grades: GradeSource| {
        scoreboard::build(
            &snapshot,
            &ScoreSettings {
                grades,
                bootstrap_resamples: 200,
                randomization_resamples: 100,
                ..settings.clone()
            },
        )
    };
    let panel_board = match settings.grades {
        GradeSource::Panel => board.clone(),
        _ => quick(GradeSource::Panel).map_err(|e| e.to_string())?,
    };
    let keys = ndcg_keys(&settings.ks);
    let panel_means: BTreeMap<String, Vec<f64>> = keys
        .iter()
        .map(|k| (k.clone(), means(&panel_board, k)))
        .collect();
    let graders: Vec<&String> = snapshot
        .reviewers
        .iter()
        .enumerate()
        .filter(|(r, _)| {
            snapshot
                .grades
                .iter()
                .any(|g| g.reviewer as usize == *r && g.scale as usize == scale)
        })
        .map(|(_, name)| name)
        .collect();
    let mut sensitivity = Vec::new();
    for reviewer in graders {
        let own = quick(GradeSource::Reviewer(reviewer.clone())).map_err(|e| e.to_string())?;
        let by_key = keys
            .iter()
            .map(|k| {
                let mine = means(&own, k);
                let panel = &panel_means[k];
                let tau = kendall_tau_b(&mine, panel);
                let same = order_of(&mine) == order_of(panel);
                (k.clone(), (mine, tau, same))
            })
            .collect();
        sensitivity.push(SensitivityRow {
            reviewer: reviewer.clone(),
            contexts_scored: own.contexts_scored,
            by_key,
        });
    }

    let agreement = Some(agreement::build(&snapshot, scale, None, 1000, 20_261_201));
    let gap_k = settings.ks.iter().copied().max().unwrap_or(10);
    let gaps = gap_pairs(&snapshot, scale, &settings.grades, gap_k);
    let mut segments = vec!["all".to_string(), "new".into(), "established".into()];
    for kind in ["query", "anchor"] {
        if snapshot.contexts.iter().any(|c| c.kind == kind) {
            segments.push(kind.into());
        }
    }
    let mut labels: Vec<&String> = snapshot
        .contexts
        .iter()
        .map(|c| &c.segment)
        .filter(|s| !s.is_empty())
        .collect();
    labels.sort();
    labels.dedup();
    segments.extend(labels.into_iter().map(|s| format!("segment:{s}")));
    let choices = Choices {
        scales: snapshot.scales.iter().map(|s| s.name.clone()).collect(),
        rankers: snapshot.rankers.clone(),
        reviewers: snapshot.reviewers.clone(),
        segments,
    };
    Ok(ScoreboardModel {
        settings,
        board,
        curves,
        panel_means,
        sensitivity,
        agreement,
        gaps,
        choices,
    })
}

/// The focus k of the plots and the sensitivity table: 10 when chosen, else the largest.
pub fn default_focus(ks: &[usize]) -> usize {
    if ks.contains(&10) {
        10
    } else {
        ks.iter().copied().max().unwrap_or(10)
    }
}

/// "mean [low, high]" as the table shows it.
pub fn with_interval(mean: f64, low: f64, high: f64) -> String {
    format!("{mean:.3} [{low:.3}, {high:.3}]")
}

/// "+diff [+low, +high]" as the comparison rows show it.
pub fn difference_text(diff: f64, low: f64, high: f64) -> String {
    format!("{diff:+.3} [{low:+.3}, {high:+.3}]")
}

pub fn p_text(p: f64) -> String {
    if !p.is_finite() {
        "–".into()
    } else if p < 0.001 {
        "< 0.001".into()
    } else {
        format!("{p:.3}")
    }
}

/// The ranker table's columns: NDCG at every k, P, ERR and judged at the focus k, then RR.
pub fn table_keys(ks: &[usize], focus: usize) -> Vec<String> {
    let mut keys = ndcg_keys(ks);
    keys.push(format!("precision@{focus}"));
    keys.push(format!("err@{focus}"));
    keys.push("rr".into());
    keys.extend(ks.iter().map(|k| format!("judged@{k}")));
    keys
}

fn column_title(key: &str) -> String {
    key.replace("ndcg", "NDCG")
        .replace("precision", "P")
        .replace("err", "ERR")
        .replace("rr", "RR")
}

fn cell_text(key: &str, m: &scoreboard::MetricSummary) -> String {
    if key.starts_with("judged") {
        format!("{:.0} %", m.mean * 100.0)
    } else {
        with_interval(m.mean, m.ci_low, m.ci_high)
    }
}

/// The ranker table as tab-separated text (header row first), for the clipboard.
pub fn table_tsv(board: &Scoreboard, focus: usize) -> String {
    let keys = table_keys(&board.settings.ks, focus);
    let mut out = String::from("ranker");
    for key in &keys {
        out.push_str(&format!("\t{key}\t{key} low\t{key} high"));
    }
    out.push('\n');
    for r in &board.rankers {
        out.push_str(&r.ranker);
        for key in &keys {
            match r.metrics.get(key) {
                Some(m) => out.push_str(&format!("\t{}\t{}\t{}", m.mean, m.ci_low, m.ci_high)),
                None => out.push_str("\t\t\t"),
            }
        }
        out.push('\n');
    }
    out
}

/// The comparison rows as tab-separated text, for the clipboard.
pub fn comparisons_tsv(board: &Scoreboard) -> String {
    let mut out = String::from(
        "candidate\tbaseline\tmetric\tdifference\tci_low\tci_high\tp_randomization\tp_t\tp_holm\twins\tties\tlosses\tcontexts_needed\n",
    );
    for c in &board.comparisons {
        out.push_str(&format!(
            "{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\n",
            c.ranker,
            c.baseline,
            c.metric,
            c.diff,
            c.ci_low,
            c.ci_high,
            c.p_randomization,
            c.p_t,
            c.p_holm,
            c.wins,
            c.ties,
            c.losses,
            c.contexts_needed.map_or(String::new(), |n| n.to_string())
        ));
    }
    out
}

/// What the screen asks the workbench to do.
pub enum ScoreboardAction {
    /// Open the Grading desk for this reviewer (their gap pairs now come first).
    OpenDesk(String),
}

/// Queues the gaps for a reviewer: (reviewer, pairs queued, pairs new to their queue).
type GapJob = Pending<Result<(String, usize, usize), String>>;

/// The screen's state: the settings being edited, the last model and running jobs.
pub struct ScoreboardScreen {
    /// Settings the controls edit; a change starts a new computation.
    pub wanted: ScoreSettings,
    pub focus_k: usize,
    pub model: Option<ScoreboardModel>,
    pub error: Option<String>,
    loading: Option<(String, Pending<Result<ScoreboardModel, String>>)>,
    computed_for: Option<String>,
    last_frame: u64,
    pub candidate: Option<String>,
    pub gap_reviewer: Option<String>,
    gap_job: Option<GapJob>,
    pub message: Option<String>,
    export_job: Option<Pending<Result<String, String>>>,
}

impl Default for ScoreboardScreen {
    fn default() -> Self {
        ScoreboardScreen {
            wanted: ScoreSettings::default(),
            focus_k: 10,
            model: None,
            error: None,
            loading: None,
            computed_for: None,
            last_frame: 0,
            candidate: None,
            gap_reviewer: None,
            gap_job: None,
            message: None,
            export_job: None,
        }
    }
}

fn key_of(settings: &ScoreSettings) -> String {
    format!("{settings:?}")
}

impl ScoreboardScreen {
    pub fn is_loading(&self) -> bool {
        self.loading.is_some()
    }

    /// True when the model on screen was computed for the settings the controls show.
    pub fn is_current(&self) -> bool {
        self.model.is_some()
            && self.loading.is_none()
            && self.computed_for.as_deref() == Some(key_of(&self.wanted).as_str())
    }

    /// Starts a computation when the settings changed (or on entering the screen, since
    /// grades may have changed); the last model stays drawn meanwhile.
    fn refresh(&mut self, ctx: &egui::Context, path: &Path) {
        let frame = ctx.cumulative_frame_nr();
        let entered = frame > self.last_frame + 1;
        self.last_frame = frame;
        if let Some((sent, job)) = &self.loading
            && let Some(result) = job.poll()
        {
            let sent = sent.clone();
            self.loading = None;
            match result {
                Ok(model) => {
                    if sent == key_of(&self.wanted) {
                        // Adopt what the job filled in (scale, baseline) without recomputing.
                        self.wanted = model.settings.clone();
                        self.computed_for = Some(key_of(&self.wanted));
                    } else {
                        self.computed_for = Some(sent);
                    }
                    if !self.wanted.ks.contains(&self.focus_k) {
                        self.focus_k = default_focus(&self.wanted.ks);
                    }
                    self.error = None;
                    self.model = Some(model);
                }
                Err(e) => {
                    self.computed_for = Some(sent);
                    self.error = Some(e);
                }
            }
        }
        let key = key_of(&self.wanted);
        if self.loading.is_none() && (entered || self.computed_for.as_ref() != Some(&key)) {
            let p = path.to_path_buf();
            let settings = self.wanted.clone();
            self.loading = Some((key, Pending::spawn(ctx, move || load(&p, settings))));
        }
    }

    fn collect_side_jobs(&mut self) -> Option<ScoreboardAction> {
        if let Some(result) = self.export_job.as_ref().and_then(Pending::poll) {
            self.export_job = None;
            self.message = Some(result.unwrap_or_else(|e| e));
        }
        if let Some(result) = self.gap_job.as_ref().and_then(Pending::poll) {
            self.gap_job = None;
            match result {
                Ok((reviewer, queued, added)) => {
                    self.message = Some(format!(
                        "{queued} unjudged pairs now lead {reviewer}'s queue ({added} of them new to it)."
                    ));
                    return Some(ScoreboardAction::OpenDesk(reviewer));
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
            if self.loading.is_some() {
                ui.spinner();
                ui.weak("Computing…");
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

    fn controls(&mut self, ui: &mut egui::Ui, model: &ScoreboardModel) {
        let c = &model.choices;
        ui.horizontal_wrapped(|ui| {
            let scale = self.wanted.scale.clone().unwrap_or_default();
            if let Some(s) = pick(ui, "Scale", "sb_scale", &scale, &c.scales, |s| s.clone()) {
                self.wanted.scale = Some(s);
            }
            let mut sources = vec!["panel".to_string()];
            sources.extend(c.reviewers.iter().cloned());
            let grades = self.wanted.grades.label();
            if let Some(g) = pick(ui, "Grades", "sb_grades", &grades, &sources, |g| {
                if g == "panel" {
                    "panel (settled, else median)".into()
                } else {
                    format!("{g} only")
                }
            }) {
                self.wanted.grades = GradeSource::parse(&g);
            }
            let gain = match self.wanted.gain {
                GainKind::Exponential => "exponential",
                GainKind::Linear => "linear",
            };
            let gains = ["exponential".to_string(), "linear".to_string()];
            if let Some(g) = pick(ui, "Gain", "sb_gain", gain, &gains, |g| {
                if g == "exponential" {
                    "exponential (2^level − 1)".into()
                } else {
                    "linear (level)".into()
                }
            }) {
                self.wanted.gain = GainKind::parse(&g).unwrap_or(GainKind::Exponential);
            }
            let unjudged = match self.wanted.unjudged {
                Unjudged::Zero => "zero",
                Unjudged::Condense => "condense",
            };
            let policies = ["zero".to_string(), "condense".to_string()];
            if let Some(u) = pick(ui, "Unjudged", "sb_unjudged", unjudged, &policies, |u| {
                if u == "zero" {
                    "count as gain 0".into()
                } else {
                    "condense (drop)".into()
                }
            }) {
                self.wanted.unjudged = Unjudged::parse(&u).unwrap_or(Unjudged::Zero);
            }
            let segment = self.wanted.segment.label();
            if let Some(s) = pick(
                ui,
                "Segment",
                "sb_segment",
                &segment,
                &c.segments,
                |s| match s.as_str() {
                    "all" => "all contexts".into(),
                    "new" => "new items carry gain".into(),
                    "established" => "established items carry gain".into(),
                    "query" => "query contexts".into(),
                    "anchor" => "anchor contexts".into(),
                    other => other.replace("segment:", "segment "),
                },
            ) {
                self.wanted.segment = Segment::parse(&s);
            }
            let baseline = self.wanted.baseline.clone().unwrap_or_default();
            if let Some(b) = pick(ui, "Baseline", "sb_baseline", &baseline, &c.rankers, |b| {
                b.clone()
            }) {
                self.wanted.baseline = Some(b);
            }
        });
        ui.horizontal_wrapped(|ui| {
            ui.label("Cut-offs");
            let mut offered: Vec<usize> = OFFERED_KS.to_vec();
            offered.extend(self.wanted.ks.iter().copied());
            offered.sort_unstable();
            offered.dedup();
            for k in offered {
                let mut on = self.wanted.ks.contains(&k);
                let response = ui
                    .toggle_value(&mut on, format!("k={k}"))
                    .on_hover_text(format!("Score at cut-off {k}"));
                if response.changed() {
                    if on {
                        self.wanted.ks.push(k);
                        self.wanted.ks.sort_unstable();
                    } else if self.wanted.ks.len() > 1 {
                        self.wanted.ks.retain(|x| *x != k);
                    }
                }
            }
            ui.separator();
            let focus = self.focus_k.to_string();
            let ks: Vec<String> = self.wanted.ks.iter().map(usize::to_string).collect();
            if let Some(f) = pick(
                ui,
                "Focus k (plots, sensitivity)",
                "sb_focus",
                &focus,
                &ks,
                |k| format!("k={k}"),
            ) {
                self.focus_k = f.parse().unwrap_or(10);
            }
        });
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
            default_focus(&board.settings.ks)
        };
        ui.label(format!(
            "{} contexts scored on scale {}; {} left out with no relevant item. Means over contexts with 95 % percentile bootstrap intervals ({} resamples).",
            board.contexts_scored,
            board.scale,
            board.contexts_without_relevant,
            board.settings.bootstrap_resamples
        ));
        coverage_warning(ui, board);
        ui.add_space(6.0);
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
        ui.add_space(10.0);
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
        ui.add_space(10.0);
        sensitivity(ui, model, focus);
        ui.add_space(10.0);
        self.gaps(ui, ctx, path, model);
        ui.add_space(10.0);
        self.export(ui, ctx, model);
        if let Some(m) = &self.message {
            ui.add_space(6.0);
            ui.label(m);
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
            let enabled = self.gap_reviewer.is_some() && self.gap_job.is_none();
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
                self.gap_job = Some(Pending::spawn(ctx, move || {
                    let mut study = Study::open(&p).map_err(|e| e.to_string())?;
                    let added = study
                        .queue_gaps_first(&reviewer, &scale, &pairs)
                        .map_err(|e| e.to_string())?;
                    Ok((reviewer, pairs.len(), added))
                }));
            }
            if self.gap_job.is_some() {
                ui.spinner();
            }
        });
    }

    fn export(&mut self, ui: &mut egui::Ui, ctx: &egui::Context, model: &ScoreboardModel) {
        ui.strong("Export");
        ui.horizontal(|ui| {
            let busy = self.export_job.is_some();
            let csv = ui.add_enabled(!busy, egui::Button::new("Save scores CSV…"));
            let md = ui.add_enabled(!busy, egui::Button::new("Save report (Markdown)…"));
            let report_wanted = if csv.clicked() {
                false
            } else if md.clicked() {
                true
            } else {
                return;
            };
            // Rendering and writing happen on the job thread with a copy of the model.
            let board = model.board.clone();
            let agreement = model.agreement.clone();
            self.export_job = Some(Pending::spawn(ctx, move || {
                let (name, filter) = if report_wanted {
                    ("report.md", ("Markdown", "md"))
                } else {
                    ("scores.csv", ("CSV", "csv"))
                };
                let dialog = rfd::AsyncFileDialog::new()
                    .add_filter(filter.0, &[filter.1])
                    .set_file_name(name)
                    .save_file();
                let Some(handle) = block_on(dialog) else {
                    return Err("Nothing saved.".to_string());
                };
                let target = handle.path().to_path_buf();
                let text = if report_wanted {
                    report::markdown(&board, agreement.as_ref())
                } else {
                    render::scoreboard_csv(&board)
                };
                std::fs::write(&target, text)
                    .map(|_| format!("Saved {}.", target.display()))
                    .map_err(|e| format!("{}: {e}", target.display()))
            }));
        });
    }
}

/// A labelled combo box over `options`; returns the option picked this frame, if any.
fn pick(
    ui: &mut egui::Ui,
    label: &str,
    id: &str,
    current: &str,
    options: &[String],
    shown: impl Fn(&String) -> String,
) -> Option<String> {
    let mut chosen = None;
    let label_response = ui.label(label);
    let current_text = options
        .iter()
        .find(|o| o.as_str() == current)
        .map_or(current.to_string(), &shown);
    let combo = egui::ComboBox::from_id_salt(id)
        .selected_text(current_text)
        .show_ui(ui, |ui| {
            for option in options {
                let response = ui.selectable_label(option == current, shown(option));
                // Screen readers (and tests) hear which control the option belongs to.
                response.widget_info(|| {
                    egui::WidgetInfo::selected(
                        egui::Role::Button,
                        true,
                        option == current,
                        format!("{label}: {}", shown(option)),
                    )
                });
                if response.clicked() && option != current {
                    chosen = Some(option.clone());
                }
            }
        });
    let _ = combo.response.labelled_by(label_response.id);
    chosen
}

fn coverage_warning(ui: &mut egui::Ui, board: &Scoreboard) {
    let mut low: Vec<String> = Vec::new();
    for r in &board.rankers {
        for k in &board.settings.ks {
            if let Some(j) = r.metrics.get(&format!("judged@{k}"))
                && j.mean < COVERAGE_WARNING
            {
                low.push(format!("{} at k={k}: {:.0} %", r.ranker, j.mean * 100.0));
            }
        }
    }
    if !low.is_empty() {
        ui.colored_label(
            ui.visuals().warn_fg_color,
            format!(
                "Coverage warning: below 90 % of the top k judged for {}. Unjudged items pull scores toward 0 (or vanish when condensed); judge the gaps below.",
                low.join("; ")
            ),
        );
    }
}

fn ranker_table(ui: &mut egui::Ui, board: &Scoreboard, focus: usize) {
    let keys = table_keys(&board.settings.ks, focus);
    egui::ScrollArea::horizontal()
        .id_salt("sb_table_scroll")
        .show(ui, |ui| {
            egui::Grid::new("sb_rankers")
                .striped(true)
                .spacing([14.0, 4.0])
                .show(ui, |ui| {
                    ui.strong("ranker");
                    for key in &keys {
                        ui.strong(column_title(key));
                    }
                    ui.end_row();
                    for r in &board.rankers {
                        ui.label(&r.ranker);
                        for key in &keys {
                            match r.metrics.get(key) {
                                Some(m)
                                    if key.starts_with("judged") && m.mean < COVERAGE_WARNING =>
                                {
                                    ui.colored_label(ui.visuals().warn_fg_color, cell_text(key, m));
                                }
                                Some(m) => {
                                    ui.label(cell_text(key, m));
                                }
                                None => {
                                    ui.label("–");
                                }
                            }
                        }
                        ui.end_row();
                    }
                });
        });
}

fn comparisons(ui: &mut egui::Ui, board: &Scoreboard) {
    if board.comparisons.is_empty() {
        ui.weak("One ranker only: nothing to compare.");
        return;
    }
    ui.horizontal_top(|ui| {
        egui::Grid::new("sb_comparisons")
            .striped(true)
            .spacing([12.0, 4.0])
            .show(ui, |ui| {
                for title in [
                    "candidate vs baseline",
                    "metric",
                    "difference [95 % CI]",
                    "p randomization",
                    "p t",
                    "p Holm",
                    "W / T / L",
                    "contexts needed",
                ] {
                    ui.strong(title);
                }
                ui.end_row();
                for c in &board.comparisons {
                    ui.label(format!("{} vs {}", c.ranker, c.baseline));
                    ui.label(column_title(&c.metric));
                    let text = difference_text(c.diff, c.ci_low, c.ci_high);
                    if c.ci_low > 0.0 || c.ci_high < 0.0 {
                        ui.strong(text);
                    } else {
                        ui.label(text);
                    }
                    ui.label(p_text(c.p_randomization));
                    ui.label(p_text(c.p_t));
                    ui.label(p_text(c.p_holm));
                    ui.label(format!("{} / {} / {}", c.wins, c.ties, c.losses));
                    ui.label(c.contexts_needed.map_or("–".into(), |n| n.to_string()))
                        .on_hover_text("Contexts for 80 % power at two-sided α = 0.05 (normal approximation with the observed differences).");
                    ui.end_row();
                }
            });
        caution_box(ui, board);
    });
}

/// The cautions that stand beside every comparison.
fn caution_box(ui: &mut egui::Ui, board: &Scoreboard) {
    egui::Frame::group(ui.style())
        .fill(ui.visuals().faint_bg_color)
        .show(ui, |ui| {
            ui.vertical(|ui| {
                ui.set_max_width(ui.available_width().clamp(240.0, 380.0));
                ui.strong("Before acting on these numbers");
                ui.label(OFFLINE_CAUTION);
                for c in board
                    .cautions
                    .iter()
                    .filter(|c| c.as_str() != OFFLINE_CAUTION)
                {
                    ui.colored_label(ui.visuals().warn_fg_color, c);
                }
            });
        });
}

fn sensitivity(ui: &mut egui::Ui, model: &ScoreboardModel, focus: usize) {
    let key = format!("ndcg@{focus}");
    ui.strong(format!("Reviewer sensitivity (NDCG@{focus})"));
    ui.label("Each reviewer's own grades scored alone. Kendall's tau-b compares the ranker order with the panel's; a changed order means the ranking rests on whose judgment counts. A reviewer who graded only a share of the pool leaves the rest unjudged (counted by the unjudged setting), so compare orders here, not levels.");
    let Some(panel) = model.panel_means.get(&key) else {
        return;
    };
    egui::Grid::new("sb_sensitivity")
        .striped(true)
        .spacing([14.0, 4.0])
        .show(ui, |ui| {
            ui.strong("grades");
            for r in &model.board.rankers {
                ui.strong(&r.ranker);
            }
            ui.strong("contexts");
            ui.strong("tau-b vs panel");
            ui.strong("ranker order");
            ui.end_row();
            ui.label("panel");
            for m in panel {
                ui.label(format!("{m:.3}"));
            }
            ui.label(model.board.contexts_scored.to_string());
            ui.label("–");
            ui.label(order_text(&model.board, panel));
            ui.end_row();
            for row in &model.sensitivity {
                let Some((means, tau, same)) = row.by_key.get(&key) else {
                    continue;
                };
                ui.label(&row.reviewer);
                for m in means {
                    ui.label(if m.is_finite() {
                        format!("{m:.3}")
                    } else {
                        "–".into()
                    });
                }
                ui.label(row.contexts_scored.to_string());
                ui.label(if tau.is_finite() {
                    format!("{tau:.2}")
                } else {
                    "–".into()
                });
                let order = order_text(&model.board, means);
                if *same {
                    ui.label(format!("{order} (same)"));
                } else {
                    ui.colored_label(ui.visuals().warn_fg_color, format!("{order} (changed)"));
                }
                ui.end_row();
            }
        });
}

fn order_text(board: &Scoreboard, means: &[f64]) -> String {
    order_of(means)
        .iter()
        .map(|&r| board.rankers[r].ranker.as_str())
        .collect::<Vec<_>>()
        .join(" > ")
}
