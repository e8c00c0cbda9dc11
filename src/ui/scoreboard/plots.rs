//! The Scoreboard's three plots, drawn from the cached model: NDCG@k for k = 1…20 with
//! interval bands, sorted per-context differences against the baseline, and a histogram
//! of per-context NDCG.

use egui_plot::{
    Bar, BarChart, ColorConflictHandling, Corner, FilledArea, Legend, Line, Plot, PlotPoints,
};

use crate::analysis::scoreboard_view::{Differences, ScoreboardModel};

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

/// The NDCG@k plot's items. The legend takes each name's colour from its first item
/// (`ColorConflictHandling::PickFirst`), so every ranker's line comes first (its swatch
/// is the line's colour, not the faint band's), then its band, then the line again on
/// top of the band.
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

pub fn plots(ui: &mut egui::Ui, model: &ScoreboardModel, focus: usize, candidate: Option<&str>) {
    let key = format!("ndcg@{focus}");
    let width = ((ui.available_width() - 24.0) / 3.0).max(220.0);
    let height = 230.0;
    ui.horizontal_top(|ui| {
        ui.vertical(|ui| {
            ui.set_width(width);
            ui.strong("NDCG@k for k = 1…20 (bands: 95 % CI)");
            Plot::new("sb_curve")
                .width(width)
                .height(height)
                // A name's band and line differ in colour; egui_plot's default then
                // greys the legend swatch, so the first item's (the line's) colour wins.
                .legend(
                    Legend::default()
                        .position(Corner::RightBottom)
                        .color_conflict_handling(ColorConflictHandling::PickFirst),
                )
                .include_y(1.0)
                .x_axis_label("k")
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
                            } => {
                                p.add(FilledArea::new(name, &xs, &lows, &highs).fill_color(colour))
                            }
                        }
                    }
                });
        });
        ui.vertical(|ui| {
            ui.set_width(width);
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
        });
        ui.vertical(|ui| {
            ui.set_width(width);
            ui.strong(format!("Per-context NDCG@{focus}, contexts per 0.1 bin"));
            let n = model.board.rankers.len().max(1) as f64;
            let bar_width = 0.1 / n * 0.9;
            Plot::new("sb_histogram")
                .width(width)
                .height(height)
                .legend(Legend::default().position(Corner::LeftTop))
                .x_axis_label(format!("NDCG@{focus}"))
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
        });
    });
}
