//! Disagreements and settling on the Agreement screen: the sorted, filtered list of
//! disagreeing pairs, one pair's grades side by side, a settled level chosen by hand
//! with a reason, bulk rules for the rest, and undo. Writes run on a job thread.
//! `bulk.rs` holds the rules over the shown pairs, `detail.rs` the open pair.

use std::path::Path;

use super::AgreementModel;
use crate::analysis::agreement::panel_review::Disagreement;
use crate::core::settle_rules::SettleRule;
use crate::study::Study;
use crate::ui::jobs::{JobResult, Task};

mod bulk;
mod detail;

/// A settling action waiting to be written.
#[derive(Debug, Clone, PartialEq)]
pub enum SettleAction {
    ByHand {
        pair: (String, String),
        value: u8,
        reason: String,
    },
    Undo {
        pair: (String, String),
        reason: String,
    },
    /// A rule over exactly these pairs (the ones the filtered list shows).
    Rule {
        rule: SettleRule,
        pairs: Vec<(String, String)>,
    },
    /// Takes back the bulk batch settled at this time.
    UndoBatch(String),
}

/// What a write did: the line to show, and the batch a rule wrote (for its undo).
#[derive(Debug, Clone, PartialEq)]
pub struct Written {
    pub message: String,
    pub batch: Option<(String, usize)>,
}

/// Writes one action as `settled_by`; returns the line to show afterwards.
pub fn write(
    path: &Path,
    scale: &str,
    settled_by: &str,
    action: SettleAction,
) -> JobResult<Written> {
    let mut study = Study::open(path)?;
    let said = |message: String| Written {
        message,
        batch: None,
    };
    match action {
        SettleAction::ByHand {
            pair,
            value,
            reason,
        } => {
            study.settle_pair(scale, &pair, value, settled_by, &reason)?;
            Ok(said(format!(
                "{} / {} settled at level {value}.",
                pair.0, pair.1
            )))
        }
        SettleAction::Undo { pair, reason } => {
            study.undo_settlement(scale, &pair, settled_by, &reason)?;
            Ok(said(format!(
                "Settlement of {} / {} undone.",
                pair.0, pair.1
            )))
        }
        SettleAction::Rule { rule, pairs } => {
            let only: std::collections::HashSet<(String, String)> = pairs.into_iter().collect();
            let done = study.settle_pairs_by_rule(scale, rule, settled_by, Some(&only))?;
            Ok(Written {
                message: format!(
                    "{} pairs settled by the {} rule, as one batch.",
                    done.pairs,
                    rule.method()
                ),
                batch: (done.pairs > 0).then_some((done.batch, done.pairs)),
            })
        }
        SettleAction::UndoBatch(batch) => {
            let n = study.undo_batch(scale, &batch, settled_by)?;
            Ok(said(format!(
                "Batch undone: {n} settlements taken back (the history keeps them)."
            )))
        }
    }
}

/// Filters, the open pair and the form, kept between frames.
pub struct SettleForm {
    pub filter_context: String,
    pub filter_reviewer: Option<String>,
    pub min_spread: u8,
    pub open: Option<(String, String)>,
    pub level: Option<u8>,
    pub reason: String,
    /// Who settles when nobody is signed in.
    pub settler: String,
    writing: Task<JobResult<Written>>,
    /// The last write's outcome: what happened, or why it did not.
    pub message: Option<JobResult<String>>,
    /// A rule waiting for the lead to confirm it on the shown pairs.
    pub confirm: Option<SettleRule>,
    /// The last bulk batch (its time and size), which one button takes back.
    pub last_batch: Option<(String, usize)>,
    pictures: super::pair_items::PairPictures,
}

impl Default for SettleForm {
    fn default() -> Self {
        SettleForm {
            filter_context: String::new(),
            filter_reviewer: None,
            min_spread: 1,
            open: None,
            level: None,
            reason: String::new(),
            settler: String::new(),
            writing: Task::named("settle-write"),
            message: None,
            confirm: None,
            last_batch: None,
            pictures: Default::default(),
        }
    }
}

impl SettleForm {
    /// Whether a settling write is in flight.
    pub fn is_writing(&self) -> bool {
        self.writing.is_running()
    }

    /// True once when a write has finished (the screen then reloads its model).
    pub fn poll_write(&mut self) -> bool {
        match self.writing.poll() {
            Some(result) => {
                if let Ok(w) = &result {
                    self.reason.clear();
                    self.level = None;
                    if w.batch.is_some() || w.message.starts_with("Batch undone") {
                        self.last_batch = w.batch.clone();
                    }
                }
                self.message = Some(result.map(|w| w.message));
                true
            }
            None => false,
        }
    }

    /// The rows that pass the filters, in the model's order.
    pub fn visible<'m>(&self, model: &'m AgreementModel) -> Vec<&'m Disagreement> {
        let needle = self.filter_context.trim().to_lowercase();
        model
            .review
            .disagreements
            .iter()
            .filter(|d| d.spread >= self.min_spread)
            .filter(|d| {
                needle.is_empty()
                    || d.context_id.to_lowercase().contains(&needle)
                    || d.context_text.to_lowercase().contains(&needle)
            })
            .filter(|d| {
                self.filter_reviewer
                    .as_ref()
                    .is_none_or(|r| d.grades.iter().any(|g| &g.reviewer == r))
            })
            .collect()
    }

    fn start(
        &mut self,
        ctx: &egui::Context,
        path: &Path,
        model: &AgreementModel,
        who: String,
        action: SettleAction,
    ) {
        let path = path.to_path_buf();
        let scale = model.scale.name.clone();
        self.message = None;
        self.writing
            .start(ctx, move || write(&path, &scale, &who, action));
    }

    pub fn ui(&mut self, ui: &mut egui::Ui, model: &AgreementModel, path: &Path) {
        let review = &model.review;
        let settled = review
            .disagreements
            .iter()
            .filter(|d| d.settled.is_some())
            .count();
        ui.heading("Disagreements");
        ui.label(format!(
            "{} pairs where reviewers chose different levels, {settled} of them settled. Widest spread first, then pairs inside more rankers' top {}, since those can move a ranker comparison.",
            review.disagreements.len(),
            review.top_k
        ));
        self.filters(ui, model);
        let who = model
            .request
            .viewer
            .clone()
            .unwrap_or_else(|| self.settler.trim().to_string());
        let can_settle =
            !model.viewer_is_grading() && !model.read_only && !self.writing.is_running();
        if model.viewer_is_grading() {
            ui.colored_label(
                crate::ui::palette::CAUTION,
                "Settling is for after grading: finish your queue on the Grading desk first.",
            );
        } else if model.read_only {
            ui.colored_label(
                ui.visuals().warn_fg_color,
                "This study is open read-only; settling is off.",
            );
        } else {
            ui.horizontal(|ui| {
                if model.request.viewer.is_some() {
                    ui.label(format!("Settling as {who}"));
                } else {
                    let label = ui.label("Who settles");
                    ui.add(egui::TextEdit::singleline(&mut self.settler).desired_width(140.0))
                        .labelled_by(label.id);
                }
                ui.separator();
            });
            self.bulk(ui, model, path, &who, can_settle);
        }
        if self.writing.is_running() {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label("Saving…");
            });
        }
        match &self.message {
            Some(Ok(m)) => {
                ui.label(m);
            }
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
            }
            None => {}
        }
        ui.columns(2, |cols| {
            self.list(&mut cols[0], model);
            self.detail(&mut cols[1], model, path, can_settle, &who);
        });
    }

    fn filters(&mut self, ui: &mut egui::Ui, model: &AgreementModel) {
        ui.horizontal(|ui| {
            let label = ui.label("Context contains");
            ui.add(egui::TextEdit::singleline(&mut self.filter_context).desired_width(160.0))
                .labelled_by(label.id);
            let label = ui.label("Reviewer");
            let shown = self.filter_reviewer.clone().unwrap_or("anyone".into());
            let combo = egui::ComboBox::from_id_salt("disagreement_reviewer")
                .selected_text(shown)
                .show_ui(ui, |ui| {
                    if ui
                        .selectable_label(self.filter_reviewer.is_none(), "anyone")
                        .clicked()
                    {
                        self.filter_reviewer = None;
                    }
                    for r in &model.report.reviewer_names {
                        let on = self.filter_reviewer.as_ref() == Some(r);
                        if ui.selectable_label(on, r).clicked() {
                            self.filter_reviewer = Some(r.clone());
                        }
                    }
                });
            let _ = combo.response.labelled_by(label.id);
            let label = ui.label("Smallest spread");
            let top = model.scale.levels.len().saturating_sub(1).max(1) as u8;
            ui.add(egui::Slider::new(&mut self.min_spread, 1..=top))
                .labelled_by(label.id);
        });
    }

    fn list(&mut self, ui: &mut egui::Ui, model: &AgreementModel) {
        let rows = self.visible(model);
        ui.label(format!("{} shown", rows.len()));
        let height = ui.text_style_height(&egui::TextStyle::Body) * 2.6;
        egui::ScrollArea::vertical()
            .id_salt("disagreement_list")
            .max_height(ui.available_height().max(240.0) - 8.0)
            .auto_shrink([false, true])
            .show_rows(ui, height, rows.len(), |ui, range| {
                for d in &rows[range] {
                    let pair = (d.context_id.clone(), d.item_id.clone());
                    let levels: Vec<String> = d
                        .grades
                        .iter()
                        .map(|g| g.value.map_or("?".into(), |v| v.to_string()))
                        .collect();
                    let settled = d
                        .settled
                        .as_ref()
                        .and_then(|s| s.value)
                        .map_or(String::new(), |v| format!(" · settled {v}"));
                    let text = format!(
                        "spread {} · levels {} · in {} top {}{}\n{} — {}",
                        d.spread,
                        levels.join(" "),
                        rankers_phrase(d.rankers_in_top_k),
                        model.review.top_k,
                        settled,
                        context_words(d),
                        d.item_title
                    );
                    let open = self.open.as_ref() == Some(&pair);
                    let response = ui.add(
                        egui::Button::selectable(open, text)
                            .min_size(egui::vec2(ui.available_width(), height - 4.0)),
                    );
                    let label = format!("Open pair {} / {}", d.context_id, d.item_id);
                    response.widget_info(|| {
                        egui::WidgetInfo::labeled(egui::Role::Button, true, &label)
                    });
                    if response.clicked() {
                        self.open = Some(pair);
                        self.level = d.settled.as_ref().and_then(|s| s.value);
                        self.reason.clear();
                    }
                }
            });
    }
}

fn context_words(d: &Disagreement) -> String {
    if d.context_text.is_empty() {
        d.context_id.clone()
    } else if d.context_text.starts_with("more like ") {
        d.context_text.clone()
    } else {
        format!("“{}”", d.context_text)
    }
}

fn level_text(model: &AgreementModel, v: u8) -> String {
    model
        .scale
        .levels
        .iter()
        .find(|l| l.value == v)
        .map_or(v.to_string(), |l| format!("{v} {}", l.label))
}

/// "1 ranker's", "3 rankers'": the possessive that reads right for the count.
fn rankers_phrase(n: usize) -> String {
    match n {
        1 => "1 ranker's".into(),
        n => format!("{n} rankers'"),
    }
}
