//! The Scoreboard's tables and warnings, drawn from the cached model.

use crate::analysis::format::{fixed, p_value, percent_spaced as percent};
use crate::analysis::scoring::scoreboard::{OFFLINE_CAUTION, Scoreboard};
use crate::analysis::views::scoreboard_view::{
    COMPARISON_COLUMNS, ScoreboardModel, cautions_by_ranker, cell_text, column_title,
    column_tooltip, difference_text, is_low_coverage, low_coverage_warning, order_of, table_keys,
};

pub fn coverage_warning(ui: &mut egui::Ui, board: &Scoreboard) {
    if let Some(words) = low_coverage_warning(board) {
        ui.colored_label(ui.visuals().warn_fg_color, words);
    }
}

/// The rankers table. With many cut-offs one row would run off the right edge, so the
/// table then splits in two (NDCG first, then the other metrics and judged@k), each
/// with the ranker names; a horizontal scroll bar remains for very narrow windows.
pub fn ranker_table(ui: &mut egui::Ui, board: &Scoreboard, focus: usize) {
    let keys = table_keys(&board.settings.ks, focus);
    // Rough widths of an "0.000 [0.000, 0.000]" cell and a "100 %" cell, in points.
    let width_of = |keys: &[String]| {
        110.0
            + keys
                .iter()
                .map(|k| if k.starts_with("judged") { 80.0 } else { 150.0 })
                .sum::<f32>()
    };
    let parts: Vec<Vec<String>> = if width_of(&keys) > ui.available_width() {
        let (ndcg, rest): (Vec<String>, Vec<String>) =
            keys.into_iter().partition(|k| k.starts_with("ndcg"));
        vec![ndcg, rest]
    } else {
        vec![keys]
    };
    egui::ScrollArea::horizontal()
        .id_salt("sb_table_scroll")
        .show(ui, |ui| {
            for (n, keys) in parts.iter().enumerate() {
                egui::Grid::new(("sb_rankers", n))
                    .striped(true)
                    .spacing([14.0, 4.0])
                    .show(ui, |ui| ranker_rows(ui, board, keys));
                ui.add_space(6.0);
            }
        });
}

fn ranker_rows(ui: &mut egui::Ui, board: &Scoreboard, keys: &[String]) {
    ui.strong("ranker");
    for key in keys {
        ui.strong(column_title(key))
            .on_hover_text(column_tooltip(key));
    }
    ui.end_row();
    for r in &board.rankers {
        ui.label(&r.ranker);
        for key in keys {
            match r.metrics.get(key) {
                Some(m) if is_low_coverage(key, m) => {
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
}

pub fn comparisons(ui: &mut egui::Ui, board: &Scoreboard) {
    if board.comparisons.is_empty() {
        ui.weak("One ranker only: nothing to compare.");
        return;
    }
    // Beside the table where the window has room for both (the table is about 860 px
    // wide, the cautions at least 240), else under it: never squeezed to "Before ac…".
    let beside = ui.available_width() >= 1140.0;
    let table = |ui: &mut egui::Ui| {
        egui::Grid::new("sb_comparisons")
            .striped(true)
            .spacing([12.0, 4.0])
            .show(ui, |ui| {
                for (title, method) in COMPARISON_COLUMNS {
                    ui.strong(title).on_hover_text(method);
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
                    ui.label(p_value(c.p_randomization));
                    ui.label(p_value(c.p_t));
                    ui.label(p_value(c.p_holm));
                    ui.label(format!("{} / {} / {}", c.wins, c.ties, c.losses));
                    ui.label(c.contexts_needed.map_or("–".into(), |n| n.to_string()))
                        .on_hover_text(COMPARISON_COLUMNS[7].1);
                    ui.end_row();
                }
            });
    };
    if beside {
        ui.horizontal_top(|ui| {
            table(ui);
            caution_box(ui, board);
        });
    } else {
        table(ui);
        ui.add_space(6.0);
        caution_box(ui, board);
    }
}

/// The cautions that stand beside every comparison: the general ones in full, then one
/// folded group per ranker, so a small study's many cautions do not bury the table.
fn caution_box(ui: &mut egui::Ui, board: &Scoreboard) {
    let (general, per_ranker) = cautions_by_ranker(board);
    egui::Frame::group(ui.style())
        .fill(ui.visuals().faint_bg_color)
        .show(ui, |ui| {
            ui.vertical(|ui| {
                ui.set_max_width(ui.available_width().clamp(240.0, 380.0));
                ui.strong("Before acting on these numbers");
                ui.label(OFFLINE_CAUTION);
                for c in general.iter().filter(|c| c.as_str() != OFFLINE_CAUTION) {
                    ui.colored_label(ui.visuals().warn_fg_color, c);
                }
                for (ranker, list) in &per_ranker {
                    let n = list.len();
                    let title = format!("{ranker}: {n} caution{}", if n == 1 { "" } else { "s" });
                    egui::CollapsingHeader::new(
                        egui::RichText::new(title).color(ui.visuals().warn_fg_color),
                    )
                    .id_salt(("sb_cautions", ranker))
                    .default_open(per_ranker.len() == 1)
                    .show(ui, |ui| {
                        for c in list {
                            ui.label(c);
                        }
                    });
                }
            });
        });
}

pub fn sensitivity(ui: &mut egui::Ui, model: &ScoreboardModel, focus: usize) {
    let key = format!("ndcg@{focus}");
    ui.strong(format!("Reviewer sensitivity (NDCG@{focus})"));
    ui.label("Each reviewer's own grades scored alone. Kendall's tau-b compares the ranker order with the panel's; a changed order means the ranking rests on whose judgment counts. A reviewer who graded only a share of the pool leaves the rest unjudged (counted by the unjudged setting), so compare orders here, not levels. A machine judge is scored on its grades alone too: the ranker order it gives, against the panel's, is what tells whether it could take over part of the work (Voorhees 2000, IP&M 36).");
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
                ui.label(fixed(*m, 3));
            }
            ui.label(model.board.contexts_scored.to_string());
            ui.label("–");
            ui.label(order_text(&model.board, panel));
            ui.end_row();
            for row in &model.sensitivity {
                let Some((means, tau, same)) = row.by_key.get(&key) else {
                    continue;
                };
                ui.label(match row.machine {
                    true => format!("{} (machine judge)", row.reviewer),
                    false => row.reviewer.clone(),
                });
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
                if row.contexts_scored == 0 || !means.iter().any(|m| m.is_finite()) {
                    ui.weak("no order: no context scored on this reviewer's grades");
                } else if *same {
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

/// Pool bias at the focus k: each ranker with and without the pairs only it found.
pub fn pool_bias(ui: &mut egui::Ui, board: &Scoreboard, focus: usize) {
    let metric = format!("ndcg@{focus}");
    let rows: Vec<_> = board
        .pool_bias
        .iter()
        .filter(|p| p.metric == metric)
        .collect();
    if rows.is_empty() {
        return;
    }
    ui.strong(format!("Is the pool fair to a newcomer? (pool bias at k = {focus})"))
        .on_hover_text("Leave-one-out test of Zobel (1998), SIGIR: each ranker scored again as if the judged pairs only it found in its top k had never been judged. A large drop means a ranker that finds different items than the pooled ones is likely scored low.");
    egui::Grid::new("sb_pool_bias")
        .striped(true)
        .show(ui, |ui| {
            for title in [
                "Ranker",
                "NDCG as scored",
                "Without its own pairs",
                "Drop",
                "Pairs only it found",
                "Judged",
                "Judged without them",
            ] {
                ui.strong(title);
            }
            ui.end_row();
            for p in &rows {
                ui.label(match &p.from_file {
                    Some(file) => format!("{} (from {file})", p.ranker),
                    None => p.ranker.clone(),
                });
                ui.label(fixed(p.mean, 3));
                ui.label(p.mean_left_out.map_or("–".into(), |m| fixed(m, 3)));
                ui.label(p.drop.map_or("–".into(), |d| format!("{d:+.3}")));
                ui.label(p.unique_pairs.to_string());
                ui.label(percent(p.judged));
                ui.label(percent(p.judged_left_out));
                ui.end_row();
            }
        });
    for p in &rows {
        ui.label(crate::analysis::scoring::pool_bias::in_words(p));
    }
}
