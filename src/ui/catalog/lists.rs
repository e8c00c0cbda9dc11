//! The lead's context view: pick a context (and a scale) and read each ranker's list in
//! rank order with the panel grade and every reviewer's own grade of each item. Drawn
//! from `analysis::views::catalog_view`; the workbench never draws it for a reviewer.

use super::Catalog;
use super::tables::left_aligned;
use crate::analysis::views::catalog_view::{
    ContextLists, ContextName, ContextView, ListRow, Mark, PanelMark, ScaleName,
};

const RANK_W: f32 = 48.0;
const ITEM_W: f32 = 90.0;
const TITLE_W: f32 = 300.0;
const PANEL_W: f32 = 170.0;
const REVIEWER_W: f32 = 100.0;
const LIST_ROW: f32 = 22.0;

/// How the picker names a context: `q01 · tent`, `a03 · anchor fh-0001`.
fn context_name(c: &ContextName) -> String {
    match (&c.anchor_item, c.text.is_empty()) {
        (Some(anchor), true) => format!("{} · anchor {anchor}", c.id),
        _ => format!("{} · {}", c.id, c.text),
    }
}

fn panel_text(scale: Option<&ScaleName>, panel: Option<PanelMark>) -> String {
    match (scale, panel) {
        (Some(s), Some(p)) if p.settled => format!("{} (settled)", s.level_text(p.level)),
        (Some(s), Some(p)) => s.level_text(p.level),
        _ => "no panel grade".into(),
    }
}

fn mark_text(scale: Option<&ScaleName>, mark: Mark) -> String {
    match (scale, mark) {
        (Some(s), Mark::Level(v)) => s.level_text(v),
        (None, Mark::Level(v)) => v.to_string(),
        (_, Mark::CantJudge) => "can't judge".into(),
        (_, Mark::NotGraded) => "not graded".into(),
    }
}

/// The row in words, for screen readers: ranker, rank, item, panel and every reviewer.
fn row_words(ranker: &str, row: &ListRow, view: &ContextView, scale: Option<&ScaleName>) -> String {
    let mut words = format!(
        "{ranker} rank {}: {} {}; panel {}",
        row.rank,
        row.item_id,
        row.title,
        panel_text(scale, row.panel)
    );
    for (name, mark) in view.reviewers.iter().zip(&row.marks) {
        words.push_str(&format!("; {name} {}", mark_text(scale, *mark)));
    }
    words
}

impl Catalog {
    pub(super) fn lists_ui(&mut self, ui: &mut egui::Ui) {
        let Some(Ok(model)) = &self.model else { return };
        let Some(lists) = &model.lists else { return };
        if lists.contexts.is_empty() {
            ui.weak("No contexts yet: import contexts.csv and rankings.csv.");
            return;
        }
        let last = lists.contexts.len() - 1;
        let (mut context, mut scale) = (
            self.view_context.min(last),
            self.view_scale
                .filter(|&s| s < lists.scales.len())
                .or((!lists.scales.is_empty()).then_some(lists.active_scale)),
        );
        pickers(ui, lists, &mut context, &mut scale);
        if self
            .view
            .as_ref()
            .is_none_or(|v| (v.context, v.scale) != (context, scale))
        {
            // One binary search per listed pair, on a choice only: cheap enough to draw.
            self.view = lists.view(context, scale);
        }
        self.view_context = context;
        self.view_scale = scale;
        let Some(view) = &self.view else { return };
        let scale_name = scale.and_then(|s| lists.scales.get(s));
        ui.weak(format!(
            "Panel grade: the settled grade where one exists, else the {}; can't judge is \
             left out. Ranks 1 to {} of each list are in the pool.",
            lists.rule.words(),
            lists.pool_depth
        ));
        if scale_name.is_none() {
            ui.weak("No scale yet: grades show here once scales.csv is imported.");
        }
        egui::ScrollArea::vertical()
            .auto_shrink([false, false])
            .show(ui, |ui| {
                for list in &view.lists {
                    ui.add_space(6.0);
                    ui.horizontal(|ui| {
                        ui.strong(&list.ranker);
                        ui.weak(match list.rows.len() {
                            0 => "no list for this context".to_string(),
                            1 => "1 item".to_string(),
                            n => format!("{n} items"),
                        });
                    });
                    if list.rows.is_empty() {
                        continue;
                    }
                    list_header(ui, view);
                    for row in &list.rows {
                        list_row(ui, &list.ranker, row, view, scale_name);
                        if row.rank == lists.pool_depth && list.rows.len() > row.rank {
                            ui.weak(format!("below rank {}: outside the pool", row.rank));
                        }
                    }
                }
            });
    }
}

/// The context and scale pickers, with previous / next context buttons.
fn pickers(
    ui: &mut egui::Ui,
    lists: &ContextLists,
    context: &mut usize,
    scale: &mut Option<usize>,
) {
    let last = lists.contexts.len() - 1;
    ui.horizontal(|ui| {
        let label = ui.label("Context");
        let combo = egui::ComboBox::from_id_salt("catalog_view_context")
            .width(320.0)
            .height(420.0)
            .selected_text(context_name(&lists.contexts[*context]))
            .show_ui(ui, |ui| {
                for (i, c) in lists.contexts.iter().enumerate() {
                    let name = context_name(c);
                    let response = ui.selectable_label(i == *context, &name);
                    response.widget_info(|| {
                        egui::WidgetInfo::selected(
                            egui::Role::Button,
                            true,
                            i == *context,
                            format!("Context: {name}"),
                        )
                    });
                    if response.clicked() {
                        *context = i;
                    }
                }
            });
        let _ = combo.response.labelled_by(label.id);
        if ui
            .add_enabled(*context > 0, egui::Button::new("Previous context"))
            .clicked()
        {
            *context -= 1;
        }
        if ui
            .add_enabled(*context < last, egui::Button::new("Next context"))
            .clicked()
        {
            *context += 1;
        }
        let Some(current) = *scale else { return };
        ui.separator();
        let label = ui.label("Scale");
        let combo = egui::ComboBox::from_id_salt("catalog_view_scale")
            .selected_text(&lists.scales[current].name)
            .show_ui(ui, |ui| {
                for (i, s) in lists.scales.iter().enumerate() {
                    let response = ui.selectable_label(i == current, &s.name);
                    response.widget_info(|| {
                        egui::WidgetInfo::selected(
                            egui::Role::Button,
                            true,
                            i == current,
                            format!("Scale: {}", s.name),
                        )
                    });
                    if response.clicked() {
                        *scale = Some(i);
                    }
                }
            });
        let _ = combo.response.labelled_by(label.id);
    });
}

fn list_header(ui: &mut egui::Ui, view: &ContextView) {
    ui.horizontal(|ui| {
        let strong = |t: &str| egui::RichText::new(t).strong();
        left_aligned(ui, RANK_W, LIST_ROW, strong("Rank"));
        left_aligned(ui, ITEM_W, LIST_ROW, strong("Item"));
        left_aligned(ui, TITLE_W, LIST_ROW, strong("Title"));
        left_aligned(ui, PANEL_W, LIST_ROW, strong("Panel"));
        for (name, machine) in view.reviewers.iter().zip(&view.machine) {
            let text = match machine {
                true => format!("{name} (machine)"),
                false => name.clone(),
            };
            left_aligned(ui, REVIEWER_W, LIST_ROW, strong(&text));
        }
    });
}

fn list_row(
    ui: &mut egui::Ui,
    ranker: &str,
    row: &ListRow,
    view: &ContextView,
    scale: Option<&ScaleName>,
) {
    ui.horizontal(|ui| {
        let size = egui::vec2(RANK_W, LIST_ROW);
        let layout = egui::Layout::left_to_right(egui::Align::Center);
        ui.allocate_ui_with_layout(size, layout, |ui| {
            ui.set_min_size(size);
            let rank = ui.label(row.rank.to_string());
            // The rank cell speaks for the whole row.
            let words = row_words(ranker, row, view, scale);
            rank.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Label, true, &words));
        });
        left_aligned(ui, ITEM_W, LIST_ROW, &row.item_id);
        left_aligned(ui, TITLE_W, LIST_ROW, &row.title);
        let panel = panel_text(scale, row.panel);
        let panel = match row.panel {
            Some(_) => egui::RichText::new(panel).strong(),
            None => egui::RichText::new(panel).weak(),
        };
        left_aligned(ui, PANEL_W, LIST_ROW, panel);
        for mark in &row.marks {
            let text = match mark {
                Mark::Level(v) => egui::RichText::new(v.to_string()),
                Mark::CantJudge => egui::RichText::new("can't judge").weak(),
                Mark::NotGraded => egui::RichText::new("–").weak(),
            };
            left_aligned(ui, REVIEWER_W, LIST_ROW, text);
        }
    });
}
