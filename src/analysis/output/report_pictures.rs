//! The report's pictures, drawn as SVG with plotters: the NDCG@k curves with interval
//! bands, each candidate's sorted per-context differences against the baseline, and the
//! reviewer-pair agreement heatmap. The same figures, colours and wording as the
//! Scoreboard and Agreement screens; the report links each file written beside it.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use crate::analysis::agreement::AgreementReport;
use crate::analysis::colours;
use crate::analysis::scoring::scoreboard::Scoreboard;
use crate::analysis::views::scoreboard_view::{self, CurvePoint};

/// Where a picture belongs in the report.
#[derive(Debug, Clone, PartialEq)]
pub enum Place {
    /// Under the rankers table.
    Curves,
    /// Under the comparisons table, one per candidate (named).
    Differences(String),
    /// Under the reviewer agreement figures.
    Agreement,
    /// In the section on estimates from a machine judge.
    Estimates,
}

/// One SVG file of the report.
#[derive(Debug, Clone)]
pub struct Picture {
    /// The file name, relative to the report's folder (`report-ndcg-curves.svg`).
    pub file_name: String,
    /// What the picture shows, used as its caption and alt text.
    pub title: String,
    /// Where the report links it.
    pub place: Place,
    /// The SVG document.
    pub svg: String,
}

/// Drawing failed (plotters reports it; with a string backend it should not happen).
#[derive(Debug, thiserror::Error)]
#[error("drawing the report's picture {file_name}: {message}")]
pub struct PictureError {
    file_name: String,
    message: String,
}

impl PictureError {
    /// A drawing failure of the picture `file_name`.
    pub fn new(file_name: &str, message: String) -> PictureError {
        PictureError {
            file_name: file_name.into(),
            message,
        }
    }
}

const SIZE: (u32, u32) = (720, 420);
const FONT: &str = "sans-serif";

fn colour(c: [u8; 3]) -> RGBColor {
    RGBColor(c[0], c[1], c[2])
}

/// Keeps a file name portable whatever a ranker is called (names come from files).
fn file_safe(name: &str) -> String {
    let safe: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .take(40)
        .collect();
    if safe.is_empty() {
        "ranker".into()
    } else {
        safe
    }
}

/// Runs a drawing into a fresh SVG string, turning plotters' error into ours.
fn draw(
    file_name: &str,
    paint: impl FnOnce(&DrawingArea<SVGBackend, plotters::coord::Shift>) -> Result<(), String>,
) -> Result<String, PictureError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        paint(&root)
            .and_then(|()| root.present().map_err(|e| e.to_string()))
            .map_err(|message| PictureError {
                file_name: file_name.into(),
                message,
            })?;
    }
    Ok(svg)
}

fn curves_svg(
    file_name: &str,
    curves: &[(String, Vec<CurvePoint>)],
) -> Result<String, PictureError> {
    draw(file_name, |root| {
        let e = |e: DrawingAreaErrorKind<_>| e.to_string();
        root.fill(&WHITE).map_err(e)?;
        let max_k = scoreboard_view::CURVE_MAX_K as f64;
        let mut chart = ChartBuilder::on(root)
            .caption("NDCG@k for k = 1…20 (bands: 95 % CI)", (FONT, 18))
            .margin(12)
            .x_label_area_size(44)
            .y_label_area_size(48)
            .build_cartesian_2d(0.5f64..max_k + 0.5, 0f64..1.02f64)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_desc("k")
            .y_desc("NDCG@k")
            .x_labels(10)
            .x_label_formatter(&|k| format!("{k:.0}"))
            .y_label_formatter(&|v| format!("{v:.1}"))
            .bold_line_style(BLACK.mix(0.12))
            .light_line_style(WHITE)
            .draw()
            .map_err(e)?;
        let finite = |points: &[CurvePoint]| -> Vec<CurvePoint> {
            points
                .iter()
                .filter(|p| p.mean.is_finite() && p.low.is_finite() && p.high.is_finite())
                .cloned()
                .collect()
        };
        // Every band first, then every line on top, so no band hides a line.
        for (r, (_, points)) in curves.iter().enumerate() {
            let c = colour(colours::series(r));
            let points = finite(points);
            let band: Vec<(f64, f64)> = points
                .iter()
                .map(|p| (p.k as f64, p.high))
                .chain(points.iter().rev().map(|p| (p.k as f64, p.low)))
                .collect();
            chart
                .draw_series(std::iter::once(Polygon::new(band, c.mix(0.18).filled())))
                .map_err(e)?;
        }
        for (r, (name, points)) in curves.iter().enumerate() {
            let c = colour(colours::series(r));
            chart
                .draw_series(LineSeries::new(
                    finite(points).into_iter().map(|p| (p.k as f64, p.mean)),
                    c.stroke_width(2),
                ))
                .map_err(e)?
                .label(name.as_str())
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(3))
                });
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK.mix(0.3))
            .label_font((FONT, 13))
            .draw()
            .map_err(e)?;
        Ok(())
    })
}

fn differences_svg(
    file_name: &str,
    title: &str,
    d: &scoreboard_view::Differences,
) -> Result<String, PictureError> {
    draw(file_name, |root| {
        let e = |e: DrawingAreaErrorKind<_>| e.to_string();
        root.fill(&WHITE).map_err(e)?;
        let low = d.sorted.iter().copied().fold(-0.05, f64::min);
        let high = d.sorted.iter().copied().fold(0.05, f64::max);
        let pad = (high - low) * 0.05;
        let mut chart = ChartBuilder::on(root)
            .caption(title, (FONT, 18))
            .margin(12)
            .x_label_area_size(44)
            .y_label_area_size(52)
            .build_cartesian_2d(-0.5f64..d.sorted.len() as f64 - 0.5, low - pad..high + pad)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_desc(format!(
                "contexts, sorted ({} better, {} worse)",
                d.wins, d.losses
            ))
            .y_desc("candidate − baseline")
            .x_label_formatter(&|i| format!("{:.0}", i + 1.0))
            .y_label_formatter(&|v| format!("{v:.2}"))
            .bold_line_style(BLACK.mix(0.12))
            .light_line_style(WHITE)
            .draw()
            .map_err(e)?;
        let (good, worse) = (colour(colours::GOOD), colour(colours::WORSE));
        chart
            .draw_series(d.sorted.iter().enumerate().map(|(i, v)| {
                // The same 1e-9 as the wins, ties and losses counts: a tie is grey.
                let fill = match *v {
                    v if v > 1e-9 => good,
                    v if v < -1e-9 => worse,
                    _ => RGBColor(0x99, 0x99, 0x99),
                };
                let x = i as f64;
                Rectangle::new([(x - 0.45, 0.0), (x + 0.45, *v)], fill.filled())
            }))
            .map_err(e)?;
        Ok(())
    })
}

/// Red through amber to green over kappa 0…1, as on the Agreement screen.
fn kappa_fill(k: f64) -> RGBColor {
    if !k.is_finite() {
        return RGBColor(0xbb, 0xbb, 0xbb);
    }
    let t = k.clamp(0.0, 1.0);
    let lerp = |a: [u8; 3], b: [u8; 3], t: f64| {
        let m = |x: u8, y: u8| (x as f64 + (y as f64 - x as f64) * t).round() as u8;
        RGBColor(m(a[0], b[0]), m(a[1], b[1]), m(a[2], b[2]))
    };
    if t < 0.5 {
        lerp(colours::KAPPA_LOW, colours::KAPPA_MID, t * 2.0)
    } else {
        lerp(colours::KAPPA_MID, colours::GOOD, (t - 0.5) * 2.0)
    }
}

/// A thin cell's fill: the kappa colour faded three quarters of the way to white.
fn faded(c: RGBColor) -> RGBColor {
    let m = |x: u8| (x as f64 + (255.0 - x as f64) * 0.65).round() as u8;
    RGBColor(m(c.0), m(c.1), m(c.2))
}

/// Diagonal hatching over the cell whose lower left corner is (x, y) and side `side`.
fn hatch(x: f64, y: f64, side: f64) -> Vec<PathElement<(f64, f64)>> {
    let style = ShapeStyle::from(&RGBColor(0x77, 0x77, 0x77)).stroke_width(1);
    (1..10)
        .map(|k| {
            let d = 2.0 * side * k as f64 / 10.0;
            let (from, to) = if d <= side {
                ((x + d, y), (x, y + d))
            } else {
                ((x + side, y + d - side), (x + d - side, y + side))
            };
            PathElement::new(vec![from, to], style)
        })
        .collect()
}

type HeatChart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

/// One off-diagonal cell: coloured by kappa, faded and hatched with its n when thin.
fn heat_cell(
    chart: &mut HeatChart,
    (x, y): (f64, f64),
    pair: Option<&crate::analysis::agreement::ReviewerPair>,
) -> Result<(), String> {
    let e = |e: DrawingAreaErrorKind<_>| e.to_string();
    let centred = TextStyle::from((FONT, 13).into_font()).pos(Pos::new(HPos::Center, VPos::Center));
    let (x0, y0, side) = (x + 0.03, y + 0.03, 0.94);
    let (fill, lines) = match pair {
        Some(p) if p.kappa_linear.is_finite() && p.thin => (
            faded(kappa_fill(p.kappa_linear)),
            vec![
                format!("{:.2}", p.kappa_linear),
                format!("n {}: too few", p.n),
            ],
        ),
        Some(p) if p.kappa_linear.is_finite() => (
            kappa_fill(p.kappa_linear),
            vec![format!("{:.2} (n {})", p.kappa_linear, p.n)],
        ),
        _ => (kappa_fill(f64::NAN), vec!["–".into()]),
    };
    chart
        .draw_series(std::iter::once(Rectangle::new(
            [(x0, y0), (x0 + side, y0 + side)],
            fill.filled(),
        )))
        .map_err(e)?;
    if pair.is_some_and(|p| p.thin) {
        chart.draw_series(hatch(x0, y0, side)).map_err(e)?;
    }
    let step = 0.16;
    let top = 0.5 + step * (lines.len() as f64 - 1.0) / 2.0;
    for (k, line) in lines.into_iter().enumerate() {
        let at = (x + 0.5, y + top - step * k as f64);
        chart
            .draw_series(std::iter::once(Text::new(line, at, centred.clone())))
            .map_err(e)?;
    }
    Ok(())
}

/// The colour scale (kappa 1 at the top, 0 or below at the bottom) and what a hatched
/// cell means, right of the grid starting at pixel (`left`, `top`).
fn heat_legend(
    root: &DrawingArea<SVGBackend, plotters::coord::Shift>,
    (left, top): (i32, i32),
    min_shared: u64,
    levels: usize,
) -> Result<(), String> {
    let e = |e: DrawingAreaErrorKind<_>| e.to_string();
    let text = TextStyle::from((FONT, 12).into_font()).pos(Pos::new(HPos::Left, VPos::Center));
    let (steps, height, width) = (20, 160, 18);
    for k in 0..steps {
        let kappa = 1.0 - k as f64 / (steps - 1) as f64;
        let y = top + k * height / steps;
        root.draw(&Rectangle::new(
            [(left, y), (left + width, y + height / steps + 1)],
            kappa_fill(kappa).filled(),
        ))
        .map_err(e)?;
    }
    for (label, at) in [
        ("1 (perfect)", 0),
        ("0.5", height / 2),
        ("0 or below", height),
    ] {
        root.draw(&Text::new(
            label,
            (left + width + 6, top + at),
            text.clone(),
        ))
        .map_err(e)?;
    }
    let swatch = top + height + 30;
    root.draw(&Rectangle::new(
        [(left, swatch), (left + width, swatch + width)],
        faded(kappa_fill(0.5)).filled(),
    ))
    .map_err(e)?;
    for k in 1..5 {
        let d = k * width / 5;
        let style = ShapeStyle::from(&RGBColor(0x77, 0x77, 0x77)).stroke_width(1);
        root.draw(&PathElement::new(
            vec![(left + d, swatch + width), (left, swatch + width - d)],
            style,
        ))
        .map_err(e)?;
        root.draw(&PathElement::new(
            vec![(left + width, swatch + width - d), (left + d, swatch)],
            style,
        ))
        .map_err(e)?;
    }
    for (k, line) in [
        format!("hatched: fewer than {min_shared}"),
        format!("shared grades (2 × {levels}²,"),
        "Cicchetti & Fleiss 1977)".to_string(),
    ]
    .into_iter()
    .enumerate()
    {
        let y = swatch + width / 2 + 15 * k as i32;
        root.draw(&Text::new(line, (left + width + 6, y), text.clone()))
            .map_err(e)?;
    }
    Ok(())
}

fn agreement_svg(file_name: &str, report: &AgreementReport) -> Result<String, PictureError> {
    let names = &report.reviewer_names;
    let n = names.len().max(1) as f64;
    draw(file_name, |root| {
        let e = |e: DrawingAreaErrorKind<_>| e.to_string();
        root.fill(&WHITE).map_err(e)?;
        let mut chart = ChartBuilder::on(root)
            .caption(
                format!(
                    "Linear-weighted kappa per reviewer pair, scale {}",
                    report.scale
                ),
                (FONT, 18),
            )
            .margin(12)
            .margin_left(110)
            .margin_right(210)
            .margin_top(20)
            // Room for the column names between the caption and the grid.
            .set_label_area_size(LabelAreaPosition::Top, 26)
            .build_cartesian_2d(0f64..n, 0f64..n)
            .map_err(e)?;
        let centred =
            TextStyle::from((FONT, 13).into_font()).pos(Pos::new(HPos::Center, VPos::Center));
        let right =
            TextStyle::from((FONT, 13).into_font()).pos(Pos::new(HPos::Right, VPos::Center));
        for (i, a) in names.iter().enumerate() {
            for (j, b) in names.iter().enumerate() {
                let (x, y) = (j as f64, n - 1.0 - i as f64);
                if i == j {
                    chart
                        .draw_series(std::iter::once(Rectangle::new(
                            [(x + 0.03, y + 0.03), (x + 0.97, y + 0.97)],
                            RGBColor(0xee, 0xee, 0xee).filled(),
                        )))
                        .map_err(e)?;
                    continue;
                }
                let pair = report.pairs.iter().find(|p| {
                    (p.reviewer_a == *a && p.reviewer_b == *b)
                        || (p.reviewer_a == *b && p.reviewer_b == *a)
                });
                heat_cell(&mut chart, (x, y), pair)?;
            }
            // Row names left of the grid, column names above it.
            let (px, py) = chart.backend_coord(&(0.0, n - 0.5 - i as f64));
            root.draw(&Text::new(a.clone(), (px - 6, py), right.clone()))
                .map_err(e)?;
            let (cx, cy) = chart.backend_coord(&(i as f64 + 0.5, n));
            root.draw(&Text::new(a.clone(), (cx, cy - 10), centred.clone()))
                .map_err(e)?;
        }
        let (gx, gy) = chart.backend_coord(&(n, n));
        let min_shared = crate::analysis::defaults::kappa_min_shared(report.levels);
        heat_legend(root, (gx + 24, gy), min_shared, report.levels)
    })
}

/// The pictures of a report whose Markdown file is `stem.md`. A picture is left out when
/// it would be empty: no curve with a relevant item, a single ranker, or fewer than two
/// reviewers sharing pairs (the report says why in words).
pub fn pictures(
    stem: &str,
    board: &Scoreboard,
    curves: &[(String, Vec<CurvePoint>)],
    agreement: Option<&AgreementReport>,
) -> Result<Vec<Picture>, PictureError> {
    let mut out = Vec::new();
    let any_curve = curves
        .iter()
        .any(|(_, points)| points.iter().any(|p| p.mean.is_finite()));
    if any_curve {
        let file_name = format!("{stem}-ndcg-curves.svg");
        out.push(Picture {
            svg: curves_svg(&file_name, curves)?,
            title: "NDCG@k for k = 1…20 with 95 % bootstrap bands".into(),
            place: Place::Curves,
            file_name,
        });
    }
    let focus = crate::analysis::defaults::focus_k(&board.settings.ks);
    let key = format!("ndcg@{focus}");
    let baseline = board.settings.baseline.clone().unwrap_or_default();
    for (n, ranker) in board.rankers.iter().enumerate() {
        if ranker.ranker == baseline {
            continue;
        }
        let d = scoreboard_view::differences(board, &ranker.ranker, &key);
        if d.sorted.is_empty() {
            continue;
        }
        let file_name = format!(
            "{stem}-differences-{}-{}.svg",
            n + 1,
            file_safe(&ranker.ranker)
        );
        let title = format!("{} − {baseline}, NDCG@{focus} per context", ranker.ranker);
        out.push(Picture {
            svg: differences_svg(&file_name, &title, &d)?,
            title,
            place: Place::Differences(ranker.ranker.clone()),
            file_name,
        });
    }
    if let Some(report) = agreement.filter(|a| !a.pairs.is_empty()) {
        let file_name = format!("{stem}-agreement.svg");
        out.push(Picture {
            svg: agreement_svg(&file_name, report)?,
            title: format!(
                "Agreement heatmap: linear-weighted kappa per reviewer pair, scale {}",
                report.scale
            ),
            place: Place::Agreement,
            file_name,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn file_names_stay_portable_whatever_the_ranker_is_called() {
        assert_eq!(file_safe("../etc/passwd"), "___etc_passwd");
        assert_eq!(file_safe("bm25-v2"), "bm25-v2");
        assert_eq!(file_safe(""), "ranker");
    }

    #[test]
    fn kappa_colours_run_from_red_to_green() {
        assert_eq!(kappa_fill(0.0), colour(colours::KAPPA_LOW));
        assert_eq!(kappa_fill(0.5), colour(colours::KAPPA_MID));
        assert_eq!(kappa_fill(1.0), colour(colours::GOOD));
    }
}
