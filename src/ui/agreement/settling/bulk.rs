//! Settling many pairs in one step: a rule over exactly the unsettled pairs the list
//! shows (never a pair the settler graded), asked for, confirmed, and undone as a batch.

use std::path::Path;

use super::{AgreementModel, SettleAction, SettleForm};
use crate::core::settle_rules::SettleRule;

impl SettleForm {
    /// The rule buttons, the confirmation of the chosen rule and the undo of the last batch.
    pub(super) fn bulk(
        &mut self,
        ui: &mut egui::Ui,
        model: &AgreementModel,
        path: &Path,
        who: &str,
        can_settle: bool,
    ) {
        let (shown, own) = self.bulk_pairs(model, who);
        ui.horizontal_wrapped(|ui| {
            ui.label(format!("The {} unsettled pairs shown, in one step:", shown.len()));
            for rule in SettleRule::ALL {
                let button = egui::Button::new(format!("Settle the shown pairs by {}", rule.method()));
                if ui
                    .add_enabled(can_settle && !who.is_empty() && !shown.is_empty(), button)
                    .on_hover_text(format!(
                        "Each pair the list shows without a settled grade gets the {}; asks first, and the batch can be undone in one step.",
                        rule.explain()
                    ))
                    .clicked()
                {
                    self.confirm = Some(rule);
                }
            }
        });
        if own > 0 {
            ui.colored_label(
                crate::ui::palette::CAUTION,
                format!("{own} shown pairs carry {who}'s own grade and are left out: another lead should settle them."),
            );
        }
        if let Some(rule) = self.confirm
            && let Some(action) = self.confirm_rule(ui, rule, &shown, can_settle)
        {
            self.start(ui.ctx(), path, model, who.to_string(), action);
        }
        if let Some((batch, n)) = self.last_batch.clone()
            && ui
                .add_enabled(
                    can_settle && !who.is_empty(),
                    egui::Button::new(format!("Undo the last batch ({n} pairs)")),
                )
                .clicked()
        {
            self.start(
                ui.ctx(),
                path,
                model,
                who.to_string(),
                SettleAction::UndoBatch(batch),
            );
        }
    }

    /// The shown pairs a rule would settle (no settled grade, none of `who`'s grades),
    /// and how many shown unsettled pairs are left out for carrying `who`'s own grade.
    fn bulk_pairs(&self, model: &AgreementModel, who: &str) -> (Vec<(String, String)>, usize) {
        let shown: Vec<(String, String)> = self
            .visible(model)
            .into_iter()
            .filter(|d| d.settled.is_none())
            .filter(|d| !d.grades.iter().any(|g| g.reviewer == who))
            .map(|d| (d.context_id.clone(), d.item_id.clone()))
            .collect();
        let own = self
            .visible(model)
            .into_iter()
            .filter(|d| d.settled.is_none() && d.grades.iter().any(|g| g.reviewer == who))
            .count();
        (shown, own)
    }

    /// "Settle these N pairs by RULE?" with yes and cancel; returns the rule's action on yes.
    fn confirm_rule(
        &mut self,
        ui: &mut egui::Ui,
        rule: SettleRule,
        shown: &[(String, String)],
        can_settle: bool,
    ) -> Option<SettleAction> {
        let mut action = None;
        ui.horizontal(|ui| {
            ui.colored_label(
                crate::ui::palette::CAUTION,
                format!(
                    "Settle these {} pairs by {} ({})?",
                    shown.len(),
                    rule.method(),
                    rule.explain()
                ),
            );
            if ui
                .add_enabled(
                    can_settle && !shown.is_empty(),
                    egui::Button::new(format!("Yes, settle {} pairs", shown.len())),
                )
                .clicked()
            {
                self.confirm = None;
                action = Some(SettleAction::Rule {
                    rule,
                    pairs: shown.to_vec(),
                });
            }
            if ui.button("Cancel").clicked() {
                self.confirm = None;
            }
        });
        action
    }
}
