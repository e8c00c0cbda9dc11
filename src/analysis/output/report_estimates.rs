//! The report's section on estimates from a machine judge corrected by the human sample
//! (prediction-powered inference): a table at the focus cut-off, the cautions, and a
//! picture of the three intervals per ranker (combined, human-only, machine-only).

use std::fmt::Write;

use plotters::prelude::*;

use crate::analysis::colours;
use crate::analysis::format::num;
use crate::analysis::output::report::ReportFiles;
use crate::analysis::output::report_pictures::{Picture, PictureError, Place};
use crate::analysis::scoring::estimates::Estimates;
use crate::analysis::scoring::scoreboard::Scoreboard;

const SIZE: (u32, u32) = (720, 420);
const FONT: &str = "sans-serif";

/// The heading the section is placed before (the report's last section).
const BEFORE: &str = "## Cautions\n\n";

/// One ranker's three figures at the focus metric.
struct Row<'a> {
    ranker: &'a str,
    estimate: (f64, f64, f64),
    human: (f64, f64, f64),
    machine: f64,
}

fn rows<'a>(est: &'a Estimates, metric: &str) -> Vec<Row<'a>> {
    est.estimates
        .iter()
        .filter(|e| e.metric == metric)
        .map(|e| Row {
            ranker: &e.ranker,
            estimate: (e.estimate, e.figures.ci_low, e.figures.ci_high),
            human: (
                e.figures.human_only_mean,
                e.figures.human_only_ci_low,
                e.figures.human_only_ci_high,
            ),
            machine: e.figures.machine_only_mean,
        })
        .collect()
}

fn interval_text((mean, low, high): (f64, f64, f64)) -> String {
    format!("{} [{}, {}]", num(mean), num(low), num(high))
}

/// The section's Markdown (the picture, when there is one, is linked by file name).
fn section(est: &Estimates, metric: &str, picture: Option<&Picture>) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "## Estimates from the machine judge {}\n", est.machine);
    let s = &est.sample;
    let _ = writeln!(
        out,
        "Prediction-powered inference (Angelopoulos et al. 2023, Science 382) with the PPI++ weight λ (Angelopoulos, Duchi & Zrnic 2023): the machine judge's grades on every context, corrected by the people's grades on the human sample drawn at random ({} contexts drawn, {} complete, {} pending). 95 % normal intervals.\n",
        s.drawn, s.complete, s.pending
    );
    if let Some(why) = &est.estimate_reason {
        let _ = writeln!(out, "{why}\n");
    }
    let rows = rows(est, metric);
    if !rows.is_empty() {
        let label = metric.replace("ndcg", "NDCG");
        let _ = writeln!(
            out,
            "| ranker | {label} estimate [95 % CI] | human only [95 % CI] | machine only | λ | effective human contexts |\n|:--|--:|--:|--:|--:|--:|"
        );
        for (row, e) in rows
            .iter()
            .zip(est.estimates.iter().filter(|e| e.metric == metric))
        {
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} | {} |",
                row.ranker.replace('|', "\\|"),
                interval_text(row.estimate),
                interval_text(row.human),
                num(row.machine),
                num(e.figures.lambda),
                crate::analysis::format::fixed(e.figures.effective_human_contexts, 1)
            );
        }
        out.push('\n');
    }
    if let Some(p) = picture {
        let alt = p.title.replace(['[', ']'], "");
        let _ = writeln!(out, "![{alt}]({})\n", p.file_name);
    }
    for c in est.estimate_cautions.0.words() {
        let _ = writeln!(out, "- Caution: {c}");
    }
    out.push('\n');
    out
}

/// The picture: per ranker the combined interval, the human-only interval and the
/// machine-only point, one above the other.
fn picture_svg(file_name: &str, title: &str, rows: &[Row<'_>]) -> Result<String, PictureError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        draw(&root, title, rows)
            .and_then(|()| root.present().map_err(|e| e.to_string()))
            .map_err(|message| PictureError::new(file_name, message))?;
    }
    Ok(svg)
}

fn draw(
    root: &DrawingArea<SVGBackend, plotters::coord::Shift>,
    title: &str,
    rows: &[Row<'_>],
) -> Result<(), String> {
    let e = |e: DrawingAreaErrorKind<_>| e.to_string();
    root.fill(&WHITE).map_err(e)?;
    let values = rows
        .iter()
        .flat_map(|r| [r.estimate.1, r.estimate.2, r.human.1, r.human.2, r.machine])
        .filter(|v| v.is_finite());
    let (low, high) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| {
        (l.min(v), h.max(v))
    });
    let pad = ((high - low) * 0.1).max(0.01);
    let n = rows.len() as f64;
    let mut chart = ChartBuilder::on(root)
        .caption(title, (FONT, 18))
        .margin(12)
        .x_label_area_size(44)
        .y_label_area_size(110)
        .build_cartesian_2d(low - pad..high + pad, -0.6f64..n - 0.4)
        .map_err(e)?;
    let names: Vec<String> = rows.iter().map(|r| r.ranker.to_string()).collect();
    chart
        .configure_mesh()
        .y_labels(rows.len().max(1))
        .y_label_formatter(&|y| {
            let i = y.round();
            if (y - i).abs() < 1e-6 && i >= 0.0 {
                names.get(i as usize).cloned().unwrap_or_default()
            } else {
                String::new()
            }
        })
        .x_label_formatter(&|v| format!("{v:.2}"))
        .bold_line_style(BLACK.mix(0.12))
        .light_line_style(WHITE)
        .draw()
        .map_err(e)?;
    let combined = RGBColor(
        colours::SERIES[0][0],
        colours::SERIES[0][1],
        colours::SERIES[0][2],
    );
    let grey = RGBColor(0x77, 0x77, 0x77);
    for (i, r) in rows.iter().enumerate() {
        let y = i as f64;
        for ((mean, lo, hi), dy, c) in [(r.estimate, 0.2, combined), (r.human, -0.05, grey)] {
            if [mean, lo, hi].iter().all(|v| v.is_finite()) {
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(lo, y + dy), (hi, y + dy)],
                        c.stroke_width(3),
                    )))
                    .map_err(e)?;
                chart
                    .draw_series(std::iter::once(Circle::new((mean, y + dy), 4, c.filled())))
                    .map_err(e)?;
            }
        }
        if r.machine.is_finite() {
            chart
                .draw_series(std::iter::once(Cross::new(
                    (r.machine, y - 0.25),
                    5,
                    BLACK.stroke_width(2),
                )))
                .map_err(e)?;
        }
    }
    Ok(())
}

/// Adds the estimates section (before the report's cautions) and its picture to a
/// report whose Markdown file is `stem.md`. The picture is at the focus NDCG cut-off.
pub fn add_to(
    files: &mut ReportFiles,
    stem: &str,
    board: &Scoreboard,
    est: &Estimates,
) -> Result<(), PictureError> {
    let focus = crate::analysis::defaults::focus_k(&board.settings.ks);
    let metric = format!("ndcg@{focus}");
    let rows = rows(est, &metric);
    let picture = if rows.is_empty() {
        None
    } else {
        let file_name = format!("{stem}-estimates.svg");
        let title = format!("NDCG@{focus}: estimate (blue), human only (grey), machine only (×)");
        Some(Picture {
            svg: picture_svg(&file_name, &title, &rows)?,
            title,
            place: Place::Estimates,
            file_name,
        })
    };
    let text = section(est, &metric, picture.as_ref());
    match files.markdown.rfind(BEFORE) {
        Some(at) => files.markdown.insert_str(at, &text),
        None => files.markdown.push_str(&text),
    }
    files.pictures.extend(picture);
    Ok(())
}
