//! The confusion heatmap of one reviewer pair on the Agreement screen: how often each
//! level of one met each level of the other, with the prevalence caution.

use super::AgreementModel;

/// The accessible label of one heatmap cell (tests look cells up by it).
pub fn heatmap_cell_label(a: &str, level_a: usize, b: &str, level_b: usize, count: u64) -> String {
    format!("{a} level {level_a}, {b} level {level_b}: {count} pairs")
}

pub(super) fn heatmap(
    ui: &mut egui::Ui,
    model: &AgreementModel,
    selected: Option<&(String, String)>,
) {
    ui.heading("Where two reviewers differ");
    let Some((a, b)) = selected else {
        ui.weak("Pick a cell of the reviewer matrix to see how that pair's levels cross.");
        return;
    };
    let Some(p) = model.pair(a, b) else {
        ui.weak("This pair shares no graded pairs on the chosen scale.");
        return;
    };
    ui.label(format!(
        "Rows: {}'s level · columns: {}'s level · {} pairs",
        p.reviewer_a, p.reviewer_b, p.n
    ));
    let max = p
        .confusion
        .iter()
        .flatten()
        .copied()
        .max()
        .unwrap_or(0)
        .max(1);
    let level_name = |l: usize| match &model.request.collapse {
        Some(_) => format!("{l}"),
        None => model
            .scale
            .levels
            .get(l)
            .map_or(format!("{l}"), |x| format!("{l} {}", x.label)),
    };
    egui::Grid::new("confusion_heatmap")
        .spacing([3.0, 3.0])
        .show(ui, |ui| {
            ui.label("");
            for j in 0..p.confusion.len() {
                ui.add_sized(
                    [58.0, 18.0],
                    egui::Label::new(egui::RichText::new(level_name(j)).weak()).truncate(),
                )
                .on_hover_text(level_name(j));
            }
            ui.end_row();
            for (i, row) in p.confusion.iter().enumerate() {
                ui.weak(level_name(i));
                for (j, count) in row.iter().enumerate() {
                    let label = heatmap_cell_label(&p.reviewer_a, i, &p.reviewer_b, j, *count);
                    heat_cell(ui, *count, *count as f32 / max as f32, i == j, &label);
                }
                ui.end_row();
            }
        });
    if let Some(caution) = p.prevalence_caution() {
        ui.colored_label(crate::ui::palette::CAUTION, caution.words());
    }
}

/// One cell: `count` on a fill that deepens with `t` (its share of the largest cell), green
/// on the diagonal where the two agree, with `label` as its accessible name.
fn heat_cell(ui: &mut egui::Ui, count: u64, t: f32, diagonal: bool, label: &str) {
    let (rect, response) = ui.allocate_exact_size(egui::vec2(58.0, 30.0), egui::Sense::hover());
    let base = if diagonal {
        crate::ui::palette::GOOD
    } else {
        crate::ui::palette::DISAGREE
    };
    let fill = ui
        .visuals()
        .extreme_bg_color
        .lerp_to_gamma(base, 0.15 + 0.85 * t);
    ui.painter().rect_filled(rect, 3.0, fill);
    ui.painter().text(
        rect.center(),
        egui::Align2::CENTER_CENTER,
        count.to_string(),
        egui::FontId::monospace(14.0),
        if t > 0.5 {
            egui::Color32::WHITE
        } else {
            ui.visuals().text_color()
        },
    );
    response.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Label, true, label));
}
