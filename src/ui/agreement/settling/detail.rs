//! One open pair beside the list: its context and item, each reviewer's level, note
//! and time, the panel grade, the settlement and its history, and the form that settles
//! it by hand (never offered to a reviewer who graded the pair).

use std::path::Path;

use super::{AgreementModel, SettleAction, SettleForm, context_words, level_text, rankers_phrase};
use crate::analysis::agreement::panel_review::Disagreement;

impl SettleForm {
    pub(super) fn detail(
        &mut self,
        ui: &mut egui::Ui,
        model: &AgreementModel,
        path: &Path,
        can_settle: bool,
        who: &str,
    ) {
        let Some(open) = self.open.clone() else {
            ui.weak("Open a pair from the list to see each reviewer's level, note and time.");
            return;
        };
        let Some(d) = model
            .review
            .disagreements
            .iter()
            .find(|d| d.context_id == open.0 && d.item_id == open.1)
        else {
            ui.weak("This pair is no longer in disagreement on this scale (or is hidden by the blind rule).");
            return;
        };
        ui.strong(format!("Context {}: {}", d.context_id, context_words(d)));
        self.pictures.show(ui, model, &d.context_id, &d.item_id);
        ui.label(match d.best_rank {
            Some(r) => format!(
                "Best rank {r}; in {} top {}.",
                rankers_phrase(d.rankers_in_top_k),
                model.review.top_k
            ),
            None => "No ranker returns this item here.".into(),
        });
        grades_and_settlement(ui, model, d);
        history(ui, model, &open);
        if !can_settle {
            return;
        }
        if d.grades.iter().any(|g| g.reviewer == who) {
            ui.colored_label(
                crate::ui::palette::CAUTION,
                format!("{who} graded this pair: a settlement should come from someone who did not, so it is off here."),
            );
            return;
        }
        if let Some(action) = self.settle_by_hand(ui, model, d, who) {
            self.start(ui.ctx(), path, model, who.to_string(), action);
        }
    }

    /// The level buttons, the reason and the buttons that record or undo a settlement;
    /// returns the action asked for.
    fn settle_by_hand(
        &mut self,
        ui: &mut egui::Ui,
        model: &AgreementModel,
        d: &Disagreement,
        who: &str,
    ) -> Option<SettleAction> {
        let pair = (d.context_id.clone(), d.item_id.clone());
        let mut action = None;
        ui.add_space(6.0);
        ui.label("Settled level");
        ui.horizontal_wrapped(|ui| {
            for level in &model.scale.levels {
                let text = format!("Settle at {} {}", level.value, level.label);
                if ui
                    .selectable_label(self.level == Some(level.value), text)
                    .clicked()
                {
                    self.level = Some(level.value);
                }
            }
        });
        let label = ui.label("Why");
        ui.add(egui::TextEdit::singleline(&mut self.reason).desired_width(f32::INFINITY))
            .labelled_by(label.id);
        ui.horizontal(|ui| {
            let ready = self.level.is_some() && !who.is_empty();
            if ui
                .add_enabled(ready, egui::Button::new("Record settled level"))
                .clicked()
                && let Some(value) = self.level
            {
                action = Some(SettleAction::ByHand {
                    pair: pair.clone(),
                    value,
                    reason: self.reason.clone(),
                });
            }
            if d.settled.is_some()
                && ui
                    .add_enabled(!who.is_empty(), egui::Button::new("Undo settlement"))
                    .clicked()
            {
                action = Some(SettleAction::Undo {
                    pair: pair.clone(),
                    reason: self.reason.clone(),
                });
            }
        });
        if who.is_empty() {
            ui.weak("Type who settles (or sign in) to record a settled level.");
        }
        action
    }
}

/// Each reviewer's level, note and seconds; the panel grade; the settlement in force.
fn grades_and_settlement(ui: &mut egui::Ui, model: &AgreementModel, d: &Disagreement) {
    egui::Grid::new("pair_grades").striped(true).show(ui, |ui| {
        ui.strong("Reviewer");
        ui.strong("Level");
        ui.strong("Note");
        ui.strong("Seconds");
        ui.end_row();
        for g in &d.grades {
            ui.label(&g.reviewer);
            ui.label(match g.value {
                Some(v) => level_text(model, v),
                None => format!("can't judge: {}", g.reason),
            });
            ui.label(&g.note);
            ui.label(g.seconds.map_or("—".into(), |s| format!("{s:.1}")));
            ui.end_row();
        }
    });
    ui.label(format!(
        "Panel grade without settling ({}): {}",
        model.panel_rule.label(),
        level_text(model, d.panel_level)
    ));
    if let Some(s) = &d.settled {
        ui.label(format!(
            "Settled at {} by {} ({}) on {}{}",
            s.value.map_or("—".into(), |v| level_text(model, v)),
            s.settled_by,
            s.method,
            crate::study::time::readable_local(&s.settled_at),
            if s.reason.is_empty() {
                String::new()
            } else {
                format!(": {}", s.reason)
            }
        ));
    }
}

/// Every settlement and undo of the open pair, oldest first.
fn history(ui: &mut egui::Ui, model: &AgreementModel, open: &(String, String)) {
    let history: Vec<_> = model
        .settle_history
        .iter()
        .filter(|r| r.context_id == open.0 && r.item_id == open.1)
        .collect();
    if history.is_empty() {
        return;
    }
    ui.strong("Settlement history");
    for r in history {
        ui.label(format!(
            "{} · {} · {} by {}{}",
            crate::study::time::readable_local(&r.settled_at),
            r.value.map_or("undone".into(), |v| format!(
                "level {}",
                level_text(model, v)
            )),
            r.method,
            r.settled_by,
            if r.reason.is_empty() {
                String::new()
            } else {
                format!(": {}", r.reason)
            }
        ));
    }
}
