//! The Scoreboard's three plots, drawn from the cached model: NDCG@k for k = 1…20 with
//! interval bands, sorted per-context differences against the baseline, and a histogram
//! of per-context NDCG.

use egui_plot::{
    AxisHints, Bar, BarChart, FilledArea, GridInput, GridMark, Line, Plot, PlotPoints,
    uniform_grid_spacer,
};

use crate::analysis::views::scoreboard_view::{Differences, ScoreboardModel};

/// The colour of ranker `r` (board order), the same in every plot and legend.
pub fn colour(r: usize) -> egui::Color32 {
    crate::ui::palette::series(r)
}

/// One item of the NDCG@k plot, in drawing order.
#[derive(Debug, Clone, PartialEq)]
pub enum CurveItem {
    Line {
        name: String,
        colour: egui::Color32,
        points: Vec<[f64; 2]>,
    },
    Band {
        name: String,
        colour: egui::Color32,
        xs: Vec<f64>,
        lows: Vec<f64>,
        highs: Vec<f64>,
    },
}

/// The NDCG@k plot's items: every ranker's line first (in the ranker's colour, the one
/// the legend row shows), then its band, then the line again on top of the band.
pub fn curve_items(model: &ScoreboardModel) -> Vec<CurveItem> {
    let mut items = Vec::new();
    for (r, (name, points)) in model.curves.iter().enumerate() {
        let line = CurveItem::Line {
            name: name.clone(),
            colour: colour(r),
            points: points.iter().map(|c| [c.k as f64, c.mean]).collect(),
        };
        items.push(line.clone());
        items.push(CurveItem::Band {
            name: name.clone(),
            colour: colour(r).gamma_multiply(0.25),
            xs: points.iter().map(|c| c.k as f64).collect(),
            lows: points.iter().map(|c| c.low).collect(),
            highs: points.iter().map(|c| c.high).collect(),
        });
        items.push(line);
    }
    items
}

/// Grid steps of an NDCG axis (values 0…1): lines every 0.05 and 0.1, labels every 0.2,
/// so a value can be read to about ±0.05 (common practice: five to ten labelled ticks).
pub const NDCG_STEPS: [f64; 3] = [0.05, 0.1, 0.2];

/// Grid steps of the cut-off axis k = 1…20: a line at every k, labels every 5.
pub const K_STEPS: [f64; 3] = [1.0, 5.0, 10.0];

/// Grid marks of `steps` over `bounds` (what the plots draw), for tests and the plots.
pub fn marks(steps: [f64; 3], bounds: (f64, f64)) -> Vec<GridMark> {
    uniform_grid_spacer(move |_| steps)(GridInput {
        bounds,
        base_step_size: steps[0],
    })
}

/// Grid steps of a count axis from 0 to `top`: labels about five apart on a 1-2-5 step
/// (so a count can be read without guessing), lines at a fifth of that.
pub fn count_steps(top: f64) -> [f64; 3] {
    let rough = (top / 5.0).max(1.0);
    let power = 10f64.powf(rough.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|m| m * power)
        .find(|s| *s >= rough)
        .unwrap_or(10.0 * power);
    [(step / 5.0).max(1.0), step, step * 5.0]
}

/// Tick labels close enough for the steps above: labels from 18 px apart.
fn axis<'a>(hints: AxisHints<'a>, label: String) -> AxisHints<'a> {
    hints.label(label).label_spacing(18.0..=30.0)
}

/// A row of colour swatches with the rankers' names, drawn under a plot (never on it,
/// so it hides no data). Each entry's accessible label is "Legend: NAME".
pub fn legend_row(ui: &mut egui::Ui, names: &[String], extra: Option<&str>) {
    ui.horizontal_wrapped(|ui| {
        for (r, name) in names.iter().enumerate() {
            let (rect, response) =
                ui.allocate_exact_size(egui::vec2(22.0, 10.0), egui::Sense::hover());
            ui.painter().rect_filled(rect, 2.0, colour(r));
            let label = format!("Legend: {name}");
            response.widget_info(|| egui::WidgetInfo::labeled(egui::Role::Label, true, &label));
            ui.label(name);
        }
        if let Some(text) = extra {
            ui.weak(text);
        }
    });
}

pub fn plots(ui: &mut egui::Ui, model: &ScoreboardModel, focus: usize, candidate: Option<&str>) {
    let width = ((ui.available_width() - 24.0) / 3.0).max(220.0);
    let size = egui::vec2(width, 230.0);
    ui.horizontal_top(|ui| {
        ui.vertical(|ui| {
            ui.set_width(width);
            ndcg_curves(ui, model, size);
        });
        ui.vertical(|ui| {
            ui.set_width(width);
            differences(ui, model, focus, candidate, size);
        });
        ui.vertical(|ui| {
            ui.set_width(width);
            histogram(ui, model, focus, size);
        });
    });
}

/// NDCG@k of every ranker for k = 1 to 20 with its 95 % band.
fn ndcg_curves(ui: &mut egui::Ui, model: &ScoreboardModel, size: egui::Vec2) {
    let (width, height) = (size.x, size.y);
    ui.strong("NDCG@k for k = 1…20 (bands: 95 % CI)");
    Plot::new("sb_curve")
        .width(width)
        .height(height)
        .include_y(0.0)
        .include_y(1.0)
        .include_x(1.0)
        .x_grid_spacer(uniform_grid_spacer(|_| K_STEPS))
        .y_grid_spacer(uniform_grid_spacer(|_| NDCG_STEPS))
        .custom_x_axes(vec![axis(AxisHints::new_x(), "k".into())])
        .custom_y_axes(vec![axis(AxisHints::new_y(), "NDCG@k".into())])
        .allow_scroll(false)
        .show(ui, |p| {
            for item in curve_items(model) {
                match item {
                    CurveItem::Line {
                        name,
                        colour,
                        points,
                    } => {
                        let line: PlotPoints = points.into_iter().collect();
                        p.line(Line::new(name, line).color(colour).width(2.0));
                    }
                    CurveItem::Band {
                        name,
                        colour,
                        xs,
                        lows,
                        highs,
                    } => p.add(FilledArea::new(name, &xs, &lows, &highs).fill_color(colour)),
                }
            }
        });
    let names: Vec<String> = model.curves.iter().map(|(n, _)| n.clone()).collect();
    legend_row(ui, &names, Some("shaded: 95 % CI"));
}

/// The candidate's difference from the baseline per context, sorted, better in green.
fn differences(
    ui: &mut egui::Ui,
    model: &ScoreboardModel,
    focus: usize,
    candidate: Option<&str>,
    size: egui::Vec2,
) {
    let (width, height) = (size.x, size.y);
    let key = format!("ndcg@{focus}");
    let baseline = model.board.settings.baseline.clone().unwrap_or_default();
    match candidate {
        Some(c) => {
            ui.strong(format!("{c} − {baseline}, NDCG@{focus} per context"));
            let empty = Differences::default();
            let d = model
                .differences
                .get(c)
                .and_then(|by_key| by_key.get(&key))
                .unwrap_or(&empty);
            let (wins, losses) = (d.wins, d.losses);
            let bars: Vec<Bar> = d
                .sorted
                .iter()
                .enumerate()
                .map(|(i, v)| {
                    let fill = if *v >= 0.0 {
                        crate::ui::palette::GOOD
                    } else {
                        crate::ui::palette::WORSE
                    };
                    Bar::new(i as f64, *v).width(0.9).fill(fill)
                })
                .collect();
            Plot::new("sb_differences")
                .width(width)
                .height(height)
                .x_axis_label(format!("contexts, sorted ({wins} better, {losses} worse)"))
                .allow_scroll(false)
                .show(ui, |p| p.bar_chart(BarChart::new("difference", bars)));
        }
        None => {
            ui.weak("One ranker only: no differences to draw.");
        }
    }
}

/// How many contexts each ranker has in each 0.1 bin of NDCG@focus.
fn histogram(ui: &mut egui::Ui, model: &ScoreboardModel, focus: usize, size: egui::Vec2) {
    let (width, height) = (size.x, size.y);
    let key = format!("ndcg@{focus}");
    ui.strong(format!("Per-context NDCG@{focus}, contexts per 0.1 bin"));
    let n = model.board.rankers.len().max(1) as f64;
    let bar_width = 0.1 / n * 0.9;
    Plot::new("sb_histogram")
        .width(width)
        .height(height)
        .include_y(0.0)
        .x_grid_spacer(uniform_grid_spacer(|_| NDCG_STEPS))
        .custom_x_axes(vec![axis(AxisHints::new_x(), format!("NDCG@{focus}"))])
        .y_grid_spacer(uniform_grid_spacer(|input| count_steps(input.bounds.1)))
        .custom_y_axes(vec![axis(AxisHints::new_y(), "contexts".into())])
        .allow_scroll(false)
        .show(ui, |p| {
            let none = Vec::new();
            let bins = model.histograms.get(&key).unwrap_or(&none);
            for (r, ranker) in model.board.rankers.iter().enumerate() {
                let Some(counts) = bins.get(r) else { continue };
                let bars: Vec<Bar> = counts
                    .iter()
                    .enumerate()
                    .map(|(b, count)| {
                        let x = b as f64 * 0.1 + 0.1 / n * (r as f64 + 0.5);
                        Bar::new(x, *count as f64).width(bar_width)
                    })
                    .collect();
                p.bar_chart(BarChart::new(ranker.ranker.clone(), bars).color(colour(r)));
            }
        });
    let names: Vec<String> = model
        .board
        .rankers
        .iter()
        .map(|r| r.ranker.clone())
        .collect();
    legend_row(ui, &names, None);
}
