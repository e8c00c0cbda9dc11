//! Gold pairs on the Scales screen: the scale's pairs with a known level, a form to add
//! or change one (context, item, level, rationale) and a button to remove one. Writes go
//! through the screen's job thread like every other change here.

use super::{Change, ScalesModel};
use crate::core::scale::Level;

/// The form's text between frames.
#[derive(Debug, Clone, Default)]
pub struct GoldForm {
    pub scale: String,
    pub context: String,
    pub item: String,
    pub value: u8,
    pub rationale: String,
}

impl GoldForm {
    /// Draws the list and the form; returns the change asked for.
    pub fn ui(&mut self, ui: &mut egui::Ui, model: &ScalesModel, busy: bool) -> Option<Change> {
        ui.heading("Gold pairs");
        ui.label("Pairs with a known level, mixed into every new queue at the study's gold share and never marked on the desk (a reviewer in training sees the level after grading). Files of them go in through Import on the Catalog screen (gold.csv).");
        if model.scales.is_empty() {
            return None;
        }
        if model.entry(&self.scale).is_none() {
            self.scale = model.active.clone().unwrap_or_default();
        }
        let entry = model.entry(&self.scale)?;
        let levels = entry.scale.levels.clone();
        let mut change = self.pairs_grid(ui, model, &levels, busy);
        ui.add_space(6.0);
        self.form_grid(ui, model, &levels);
        let ready = !self.context.trim().is_empty() && !self.item.trim().is_empty();
        if ui
            .add_enabled(
                ready && !busy && !model.read_only,
                egui::Button::new("Save gold pair"),
            )
            .clicked()
        {
            change = Some(Change::SaveGold {
                scale: self.scale.clone(),
                context: self.context.trim().to_string(),
                item: self.item.trim().to_string(),
                value: self.value,
                rationale: self.rationale.trim().to_string(),
            });
        }
        change
    }

    /// The scale's gold pairs, each with buttons to edit it in the form or remove it.
    fn pairs_grid(
        &mut self,
        ui: &mut egui::Ui,
        model: &ScalesModel,
        levels: &[Level],
        busy: bool,
    ) -> Option<Change> {
        let mut change = None;
        let pairs: Vec<_> = model.gold.iter().filter(|g| g.0 == self.scale).collect();
        if pairs.is_empty() {
            ui.weak(format!("Scale {} has no gold pairs yet.", self.scale));
        }
        egui::Grid::new("gold_pairs").striped(true).show(ui, |ui| {
            if !pairs.is_empty() {
                for title in ["Context", "Item", "Known level", "", "Rationale"] {
                    ui.strong(title);
                }
                ui.end_row();
            }
            for (scale, context, item, value, rationale) in &pairs {
                ui.label(context);
                ui.label(item);
                ui.label(
                    levels
                        .get(*value as usize)
                        .map_or(value.to_string(), |l| format!("{value} {}", l.label)),
                );
                ui.horizontal(|ui| {
                    if ui.button(format!("Edit {context} {item}")).clicked() {
                        *self = GoldForm {
                            scale: scale.clone(),
                            context: context.clone(),
                            item: item.clone(),
                            value: *value,
                            rationale: rationale.clone(),
                        };
                    }
                    if ui
                        .add_enabled(
                            !busy && !model.read_only,
                            egui::Button::new(format!("Remove {context} {item}")),
                        )
                        .clicked()
                    {
                        change = Some(Change::RemoveGold {
                            scale: scale.clone(),
                            context: context.clone(),
                            item: item.clone(),
                        });
                    }
                });
                // Last and cut to the room left, so the buttons before it always show;
                // the whole rationale on hover and in the form.
                ui.add(egui::Label::new(rationale.as_str()).truncate())
                    .on_hover_text(rationale.as_str());
                ui.end_row();
            }
        });
        change
    }

    /// The form's fields: scale, context, item, known level, rationale.
    fn form_grid(&mut self, ui: &mut egui::Ui, model: &ScalesModel, levels: &[Level]) {
        egui::Grid::new("gold_form").num_columns(2).show(ui, |ui| {
            let label = ui.label("Gold pair scale");
            egui::ComboBox::from_id_salt("gold_scale")
                .selected_text(self.scale.clone())
                .width(200.0)
                .show_ui(ui, |ui| {
                    for e in &model.scales {
                        ui.selectable_value(&mut self.scale, e.scale.name.clone(), &e.scale.name);
                    }
                })
                .response
                .labelled_by(label.id);
            ui.end_row();
            let label = ui.label("Gold context id");
            ui.add(egui::TextEdit::singleline(&mut self.context).desired_width(260.0))
                .labelled_by(label.id);
            ui.end_row();
            let label = ui.label("Gold item id");
            ui.add(egui::TextEdit::singleline(&mut self.item).desired_width(260.0))
                .labelled_by(label.id);
            ui.end_row();
            let label = ui.label("Known level");
            egui::ComboBox::from_id_salt("gold_level")
                .selected_text(
                    levels
                        .get(self.value as usize)
                        .map_or(self.value.to_string(), |l| {
                            format!("{} {}", self.value, l.label)
                        }),
                )
                .width(200.0)
                .show_ui(ui, |ui| {
                    for (v, l) in levels.iter().enumerate() {
                        ui.selectable_value(&mut self.value, v as u8, format!("{v} {}", l.label));
                    }
                })
                .response
                .labelled_by(label.id);
            ui.end_row();
            let label = ui.label("Rationale");
            ui.add(
                egui::TextEdit::multiline(&mut self.rationale)
                    .desired_rows(2)
                    .desired_width(260.0),
            )
            .labelled_by(label.id);
            ui.end_row();
        });
    }
}
