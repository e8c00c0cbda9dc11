//! Agreement: does the panel agree, who drifts, and which disagreements matter. The model
//! is built on a job thread (study snapshot → `analysis::agreement` and
//! `analysis::agreement::panel_review`); `ui` only draws it. Settling lives in
//! `settling.rs`, the confusion heatmap of a reviewer pair in `heatmap.rs`.

use std::path::{Path, PathBuf};

use super::jobs::{JobError, JobResult, Task};
mod heatmap;
mod pair_items;
mod quality;
pub mod settling;

use crate::analysis::agreement::{AgreementReport, ReviewerPair};
use crate::analysis::defaults;
use crate::analysis::format::{fixed, percent_spaced as percent};
pub use crate::analysis::views::agreement_view::{AgreementModel, AgreementRequest};
use crate::study::Study;
use heatmap::heatmap;
pub use heatmap::heatmap_cell_label;
use settling::SettleForm;

/// Loads and computes the model (runs on a job thread).
pub fn load(path: &Path, request: AgreementRequest) -> JobResult<AgreementModel> {
    crate::analysis::views::agreement_view::build(&Study::open(path)?, request)?.ok_or_else(|| {
        JobError::Missing("The study has no scales yet: import scales.csv first.".into())
    })
}

/// The screen's state between frames.
pub struct AgreementScreen {
    pub model: Option<JobResult<AgreementModel>>,
    loading: Task<JobResult<AgreementModel>>,
    /// What the next load asks for (the selectors write here).
    pub wanted: AgreementRequest,
    loaded_path: Option<PathBuf>,
    /// Set by the workbench when the screen is entered: grades may have changed.
    entered: bool,
    /// The reviewer pair whose confusion heatmap is shown.
    pub selected_cell: Option<(String, String)>,
    /// Which half is shown: the panel figures (false) or the disagreements to settle.
    pub show_disagreements: bool,
    pub settle: SettleForm,
    /// Writes a reviewer-quality setting (training, machines in the panel).
    quality_write: Task<JobResult<()>>,
    /// A machine judge whose estimates the lead asked for (the workbench opens them).
    open_estimates: Option<String>,
}

impl Default for AgreementScreen {
    fn default() -> AgreementScreen {
        AgreementScreen {
            model: None,
            loading: Task::named("agreement-load"),
            wanted: AgreementRequest::default(),
            loaded_path: None,
            entered: false,
            selected_cell: None,
            show_disagreements: false,
            settle: SettleForm::default(),
            quality_write: Task::named("quality-setting"),
            open_estimates: None,
        }
    }
}

impl AgreementScreen {
    /// The workbench calls this when the screen is entered; the next frame recomputes.
    pub fn entered(&mut self) {
        self.entered = true;
    }

    /// The machine judge whose estimates the lead asked to see on the Scoreboard, once.
    pub fn take_open_estimates(&mut self) -> Option<String> {
        self.open_estimates.take()
    }

    /// Whether the model is being computed.
    pub fn is_loading(&self) -> bool {
        self.loading.is_running()
    }

    /// Writes a setting changed in the reviewer-quality section, then reloads.
    fn save_quality(&mut self, ctx: &egui::Context, path: &Path, change: quality::QualityChange) {
        use crate::study::settings::keys;
        let path = path.to_path_buf();
        self.quality_write.start(ctx, move || {
            let study = Study::open(&path)?;
            match change {
                quality::QualityChange::OpenEstimates(_) => {}
                quality::QualityChange::Training(list) => {
                    study.set_setting(keys::TRAINING_REVIEWERS, &list.join(","))?
                }
                quality::QualityChange::PanelRule(rule) => {
                    study.set_setting(keys::PANEL_RULE, rule.label())?
                }
                quality::QualityChange::MachinesInPanel(on) => {
                    study.set_setting(keys::MACHINES_IN_PANEL, if on { "true" } else { "false" })?
                }
            }
            Ok(())
        });
    }

    /// Computes the model for `wanted` in the background.
    pub fn start_loading(&mut self, ctx: &egui::Context, path: &Path) {
        let path_buf = path.to_path_buf();
        let request = self.wanted.clone();
        self.loaded_path = Some(path_buf.clone());
        self.entered = false;
        self.loading.start(ctx, move || load(&path_buf, request));
    }

    /// Reloads when the screen is entered again, the study or viewer changed, a
    /// selector changed, or a settlement was written.
    fn refresh(&mut self, ctx: &egui::Context, path: &Path, viewer: Option<&str>) {
        // Kept until a computation starts, so an entry during a run is not lost.
        let entered = self.entered;
        self.wanted.viewer = viewer.map(str::to_string);
        if let Some(result) = self.loading.poll() {
            self.model = Some(result);
        }
        if self.settle.poll_write() {
            self.start_loading(ctx, path);
        }
        if let Some(result) = self.quality_write.poll() {
            match result {
                Ok(()) => self.start_loading(ctx, path),
                Err(e) => self.model = Some(Err(e)),
            }
        }
        let stale = match &self.model {
            Some(Ok(m)) => {
                m.request.viewer != self.wanted.viewer
                    || (self.wanted.scale.is_some() && m.request.scale != self.wanted.scale)
                    || m.request.collapse != self.wanted.collapse
            }
            _ => false,
        };
        let other_study = self.loaded_path.as_deref() != Some(path);
        if !self.loading.is_running() && (entered || stale || other_study || self.model.is_none()) {
            if other_study {
                *self = AgreementScreen::default();
                self.wanted.viewer = viewer.map(str::to_string);
            }
            self.start_loading(ctx, path);
        }
    }

    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path, viewer: Option<&str>) {
        self.refresh(ui.ctx(), path, viewer);
        // Taken out for the frame (not cloned) so the sections can borrow self mutably.
        let model = match self.model.take() {
            None => {
                ui.horizontal(|ui| {
                    ui.spinner();
                    ui.label("Computing agreement…");
                });
                return;
            }
            Some(Err(error)) => {
                ui.colored_label(ui.visuals().error_fg_color, error.to_string());
                self.model = Some(Err(error));
                return;
            }
            Some(Ok(model)) => model,
        };
        egui::ScrollArea::vertical()
            .auto_shrink([false, false])
            .show(ui, |ui| {
                self.selectors(ui, &model);
                if model.viewer_is_grading() {
                    ui.colored_label(
                        super::palette::CAUTION,
                        format!(
                            "Blind rule: you still have {} ungraded pairs on this scale, so the other reviewers' grades for them are left out of everything below. Settling opens once your queue is done.",
                            model.hidden_pairs
                        ),
                    );
                }
                ui.horizontal(|ui| {
                    let figures = egui::Button::selectable(!self.show_disagreements, "Panel figures");
                    if ui.add(figures).clicked() {
                        self.show_disagreements = false;
                    }
                    let text = format!("Disagreements ({})", model.review.disagreements.len());
                    let list = egui::Button::selectable(self.show_disagreements, text);
                    if ui.add(list).clicked() {
                        self.show_disagreements = true;
                    }
                });
                ui.separator();
                if self.show_disagreements {
                    if let Some(change) = quality::panel_rule_choice(ui, &model) {
                        self.save_quality(ui.ctx(), path, change);
                    }
                    self.settle.ui(ui, &model, path);
                    return;
                }
                panel_summary(ui, &model.report);
                ui.add_space(10.0);
                ui.columns(2, |cols| {
                    self.matrix(&mut cols[0], &model.report);
                    heatmap(&mut cols[1], &model, self.selected_cell.as_ref());
                });
                ui.add_space(10.0);
                quality::strictness(ui, &model);
                ui.add_space(10.0);
                quality::drift(ui, &model.review);
                ui.add_space(10.0);
                match quality::gold_and_machines(ui, &model) {
                    Some(quality::QualityChange::OpenEstimates(machine)) => {
                        self.open_estimates = Some(machine);
                    }
                    Some(change) => self.save_quality(ui.ctx(), path, change),
                    None => {}
                }
            });
        self.model = Some(Ok(model));
    }

    fn selectors(&mut self, ui: &mut egui::Ui, model: &AgreementModel) {
        ui.horizontal(|ui| {
            let label = ui.label("Scale");
            let current = model.scale.name.clone();
            let combo = egui::ComboBox::from_id_salt("agreement_scale")
                .selected_text(&current)
                .show_ui(ui, |ui| {
                    for name in &model.scale_names {
                        if ui.selectable_label(*name == current, name).clicked() {
                            self.wanted.scale = Some(name.clone());
                            self.wanted.collapse = None;
                            self.selected_cell = None;
                        }
                    }
                });
            let _ = combo.response.labelled_by(label.id);
            ui.separator();
            let label = ui.label("Collapse map");
            let shown = model
                .request
                .collapse
                .clone()
                .unwrap_or("none (all levels)".into());
            let combo = egui::ComboBox::from_id_salt("agreement_collapse")
                .selected_text(shown)
                .show_ui(ui, |ui| {
                    if ui
                        .selectable_label(model.request.collapse.is_none(), "none (all levels)")
                        .clicked()
                    {
                        self.wanted.collapse = None;
                    }
                    for name in &model.collapse_names {
                        let on = model.request.collapse.as_deref() == Some(name);
                        if ui.selectable_label(on, name).clicked() {
                            self.wanted.collapse = Some(name.clone());
                        }
                    }
                });
            let _ = combo.response.labelled_by(label.id);
            if model.collapse_names.is_empty() {
                ui.weak("(no collapse maps saved for this scale)");
            }
            if self.loading.is_running() {
                ui.spinner();
                ui.weak("recomputing…");
            }
        });
    }

    fn matrix(&mut self, ui: &mut egui::Ui, report: &AgreementReport) {
        ui.heading("Reviewer pairs");
        ui.weak("Linear-weighted kappa per pair; hover for n, interval and band, click for the heatmap.");
        let names = &report.reviewer_names;
        egui::Grid::new("kappa_matrix")
            .spacing([4.0, 4.0])
            .show(ui, |ui| {
                ui.label("");
                for b in names {
                    ui.strong(b);
                }
                ui.end_row();
                for a in names {
                    ui.strong(a);
                    for b in names {
                        let pair = report.pairs.iter().find(|p| {
                            (&p.reviewer_a == a && &p.reviewer_b == b)
                                || (&p.reviewer_a == b && &p.reviewer_b == a)
                        });
                        match (a == b, pair) {
                            (true, _) => {
                                ui.weak("—");
                            }
                            (false, None) => {
                                ui.weak("no shared pairs");
                            }
                            (false, Some(p)) => {
                                let chosen = self.selected_cell.as_ref()
                                    == Some(&(p.reviewer_a.clone(), p.reviewer_b.clone()));
                                if kappa_cell(ui, a, b, p, chosen).clicked() {
                                    self.selected_cell =
                                        Some((p.reviewer_a.clone(), p.reviewer_b.clone()));
                                }
                            }
                        }
                    }
                    ui.end_row();
                }
            });
        ui.weak("Colour: red at kappa 0 or below, amber at 0.5, green at 1.");
        if report.pairs.iter().any(|p| p.thin) {
            let min = crate::analysis::defaults::kappa_min_shared(report.levels);
            ui.colored_label(
                super::palette::CAUTION,
                format!(
                    "Faded, outlined cells: fewer than {min} shared grades (2 × {}² for {} levels, Cicchetti & Fleiss 1977), too few for a Landis & Koch word.",
                    report.levels, report.levels
                ),
            );
        }
    }
}

/// Red (poor) through amber to green (almost perfect) for a kappa value.
fn kappa_colour(k: f64) -> egui::Color32 {
    if k.is_nan() {
        return egui::Color32::GRAY;
    }
    let t = k.clamp(0.0, 1.0) as f32;
    let red = super::palette::KAPPA_LOW;
    let amber = super::palette::KAPPA_MID;
    let green = super::palette::GOOD;
    if t < 0.5 {
        red.lerp_to_gamma(amber, t * 2.0)
    } else {
        amber.lerp_to_gamma(green, (t - 0.5) * 2.0)
    }
}

fn kappa_cell(
    ui: &mut egui::Ui,
    a: &str,
    b: &str,
    p: &ReviewerPair,
    chosen: bool,
) -> egui::Response {
    let (rect, response) = ui.allocate_exact_size(egui::vec2(92.0, 34.0), egui::Sense::click());
    let fill = kappa_colour(p.kappa_linear);
    // A pair with too few shared grades is drawn faded, with its n, so it is not read
    // as firmly as the others.
    let (fill, ink, text) = if p.thin {
        let faded = ui.visuals().extreme_bg_color.lerp_to_gamma(fill, 0.35);
        let text = format!("{:.2} · n {}", p.kappa_linear, p.n);
        (faded, ui.visuals().text_color(), text)
    } else {
        let text = format!("{:.2}", p.kappa_linear);
        (fill, egui::Color32::WHITE, text)
    };
    ui.painter().rect_filled(rect, 4.0, fill);
    if p.thin {
        let stroke = egui::Stroke::new(1.0, super::palette::CAUTION);
        ui.painter()
            .rect_stroke(rect, 4.0, stroke, egui::StrokeKind::Inside);
    }
    if chosen || response.hovered() {
        let stroke = egui::Stroke::new(2.0, ui.visuals().strong_text_color());
        ui.painter()
            .rect_stroke(rect, 4.0, stroke, egui::StrokeKind::Inside);
    }
    ui.painter().text(
        rect.center(),
        egui::Align2::CENTER_CENTER,
        text,
        egui::FontId::proportional(if p.thin { 13.0 } else { 15.0 }),
        ink,
    );
    let label = if p.thin {
        format!(
            "Reviewers {a} and {b}: only {} shared grades, too few for a band",
            p.n
        )
    } else {
        format!("Reviewers {a} and {b}")
    };
    response.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Button, true, &label));
    let weighted_band = if p.thin {
        "none: too few shared grades for a Landis & Koch word".to_string()
    } else {
        format!(
            "{} (Landis & Koch 1977)",
            crate::core::agreement::landis_koch_band(p.kappa_linear)
        )
    };
    response.on_hover_text(format!(
        "{} and {}: {} pairs graded by both\nweighted kappa (linear) {}, quadratic {}\nkappa {}, 95 % CI {} to {} ({})\nAC1 {}; observed agreement {}, chance {}\nband of the weighted value: {}",
        p.reviewer_a,
        p.reviewer_b,
        p.n,
        fixed(p.kappa_linear, 3),
        fixed(p.kappa_quadratic, 3),
        fixed(p.kappa, 3),
        fixed(p.kappa_ci_low, 3),
        fixed(p.kappa_ci_high, 3),
        p.band,
        fixed(p.ac1, 3),
        percent(p.observed_agreement),
        percent(p.chance_agreement),
        weighted_band
    ))
}

fn coefficient_row(ui: &mut egui::Ui, name: &str, value: f64, extra: String, source: &str) {
    ui.label(name);
    if value.is_finite() {
        ui.monospace(format!("{value:.3}"));
        ui.label(extra);
    } else {
        ui.monospace("–");
        ui.label(format!(
            "{extra}: not defined yet (too few pairs with two grades, or a single level used)"
        ));
    }
    ui.label(crate::core::agreement::landis_koch_band(value))
        .on_hover_text(source);
    ui.end_row();
}

fn panel_summary(ui: &mut egui::Ui, r: &AgreementReport) {
    ui.heading("Panel");
    ui.label(format!(
        "Scale {}{} · {} reviewers · {} pairs graded · {} can't-judge left out",
        r.scale,
        r.collapse
            .as_ref()
            .map_or(String::new(), |c| format!(" collapsed by {c}")),
        r.reviewer_names.len(),
        r.units,
        r.cant_judge
    ));
    egui::Grid::new("panel_coefficients")
        .num_columns(4)
        .striped(true)
        .show(ui, |ui| {
            ui.strong("Coefficient");
            ui.strong("Value");
            ui.strong("Based on");
            ui.strong("Band (hover for source)");
            ui.end_row();
            let s = r.band_source;
            coefficient_row(
                ui,
                "Fleiss' kappa",
                r.fleiss_kappa,
                format!(
                    "{} pairs with {} grades each (the most common number; {} over the {} pairs graded by everyone)",
                    r.fleiss_n,
                    r.fleiss_grades_per_pair,
                    crate::analysis::format::fixed(r.fleiss_kappa_complete, 3),
                    r.fleiss_n_complete
                ),
                s,
            );
            coefficient_row(
                ui,
                "Krippendorff's alpha (nominal)",
                r.alpha_nominal,
                format!("{} pairs with two or more grades", r.alpha_n),
                s,
            );
            coefficient_row(
                ui,
                "Krippendorff's alpha (ordinal)",
                r.alpha_ordinal,
                format!(
                    "95 % CI {} to {} (bootstrap, {} resamples)",
                    fixed(r.alpha_ordinal_ci_low, 3),
                    fixed(r.alpha_ordinal_ci_high, 3),
                    defaults::AGREEMENT_BOOTSTRAP
                ),
                s,
            );
            coefficient_row(
                ui,
                "Krippendorff's alpha (interval)",
                r.alpha_interval,
                format!("{} pairs", r.alpha_n),
                s,
            );
            coefficient_row(
                ui,
                "Gwet's AC1",
                r.ac1,
                "less swayed by one dominant level".into(),
                s,
            );
        });
    for caution in r.cautions.words() {
        ui.colored_label(super::palette::CAUTION, format!("Caution: {caution}"));
    }
    ui.weak(
        "Kappa-type numbers mislead when one level dominates; small samples give wide intervals.",
    );
}
