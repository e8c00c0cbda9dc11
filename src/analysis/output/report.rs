//! The Markdown report: settings, rankers with intervals, comparisons against the
//! baseline, an agreement summary and the cautions, with SVG pictures beside it. Plain Markdown with pipe
//! tables and no HTML, so it reads the same on code-hosting sites and in a terminal.

use std::fmt::Write;
use std::path::{Path, PathBuf};

use crate::analysis::agreement::AgreementReport;
use crate::analysis::format::{num, p_value};
use crate::analysis::output::report_pictures::{Picture, PictureError, Place};
use crate::analysis::scoring::scoreboard::{OFFLINE_CAUTION, Scoreboard};
use crate::analysis::views::scoreboard_view::CurvePoint;
use crate::core::metrics::GainKind;

/// A table cell: pipes and line breaks would break the table.
fn cell(text: &str) -> String {
    text.replace('|', "\\|").replace(['\n', '\r'], " ")
}

fn table(out: &mut String, header: &[String], rows: &[Vec<String>]) {
    let line = |cells: &[String]| {
        let cells: Vec<String> = cells.iter().map(|c| cell(c)).collect();
        format!("| {} |\n", cells.join(" | "))
    };
    out.push_str(&line(header));
    let rule: Vec<String> = header
        .iter()
        .enumerate()
        .map(|(i, _)| if i == 0 { ":--" } else { "--:" }.to_string())
        .collect();
    out.push_str(&format!("|{}|\n", rule.join("|")));
    for row in rows {
        out.push_str(&line(row));
    }
    out.push('\n');
}

/// The counting rules a reader needs to reproduce the numbers; the README's Conventions
/// say the same in the same words.
pub const CONVENTION_RULES: &[&str] = &[
    "judged@k divides the judged items among the top k by min(k, list length).",
    "A reviewer's grade of a pair is their latest by graded_at, read with its offset (UTC), not by file order; on equal times the later row wins.",
    "A settled grade is a grades.csv row with settled_by filled in; an empty value undoes the settlement; the latest settlement wins.",
    "The segments new and established restrict gains in DCG, the ideal, precision, RR and ERR alike.",
    "A scale's own gains win over --gain.",
    "Comparisons exist for NDCG cut-offs only; Holm's correction runs over the randomization p-values, per metric and cut-off, across candidates.",
    "The baseline is the one asked for, else the study's stored baseline while it names a ranker, else the first ranker alphabetically.",
    "Agreement units are pairs with at least one grade, can't-judge-only pairs included.",
];

/// Names the settings in words a reader outside the team understands.
fn settings_lines(board: &Scoreboard) -> Vec<(String, String)> {
    let s = &board.settings;
    let ks: Vec<String> = s.ks.iter().map(usize::to_string).collect();
    vec![
        ("Study".into(), board.study.clone()),
        ("Scale".into(), board.scale.clone()),
        (
            "Grades".into(),
            match s.grades.label().as_str() {
                "panel" => format!("panel (settled grade, else the {})", s.panel_grade.words()),
                r => format!("reviewer {r} only"),
            },
        ),
        ("Cut-offs k".into(), ks.join(", ")),
        (
            "RBP persistence p".into(),
            format!(
                "{} (a reader goes on to the next item with this chance; RBP and its residual cover the whole list)",
                s.persistence
            ),
        ),
        (
            "Gain".into(),
            match s.gain {
                GainKind::Exponential => "exponential (2^level − 1)".into(),
                GainKind::Linear => "linear (level)".into(),
            },
        ),
        ("Unjudged items".into(), s.unjudged.words().into()),
        ("Segment".into(), s.segment.label()),
        (
            "Baseline".into(),
            board
                .comparisons
                .first()
                .map(|c| c.baseline.clone())
                .or_else(|| s.baseline.clone())
                .unwrap_or_else(|| "–".into()),
        ),
        (
            "Contexts".into(),
            format!(
                "{} scored; left out: {} graded with no relevant item, {} never graded on this scale",
                board.contexts_scored,
                board.contexts_without_relevant,
                board.contexts_without_grades
            ),
        ),
        ("Gains used".into(), board.gains_used.clone()),
        ("Rules".into(), CONVENTION_RULES.join(" ")),
        (
            "Intervals".into(),
            format!(
                "95 % percentile bootstrap over contexts, {} resamples; randomization tests with {} resamples; seed {}",
                s.bootstrap_resamples, s.randomization_resamples, s.seed
            ),
        ),
    ]
}

/// The metric columns of the report's ranker table: the metric table's columns, every
/// cut-off of each metric cut at k.
pub fn report_metric_keys(ks: &[usize]) -> Vec<String> {
    let focus = crate::analysis::defaults::focus_k(ks);
    crate::core::metric_table::table_columns(ks, focus, true)
        .into_iter()
        .map(crate::core::metric_table::Metric::key)
        .collect()
}

/// A report ready to write: the Markdown and the SVG pictures it links.
#[derive(Debug, Clone)]
pub struct ReportFiles {
    /// The Markdown text.
    pub markdown: String,
    /// The pictures, written beside the Markdown file under their own names.
    pub pictures: Vec<Picture>,
}

/// The report and its pictures for a Markdown file at `path` (pictures are named after
/// its stem: `report.md` links `report-ndcg-curves.svg`).
pub fn files(
    path: &Path,
    board: &Scoreboard,
    curves: &[(String, Vec<CurvePoint>)],
    agreement: Option<&AgreementReport>,
) -> Result<ReportFiles, PictureError> {
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "report".into());
    let pictures =
        crate::analysis::output::report_pictures::pictures(&stem, board, curves, agreement)?;
    Ok(ReportFiles {
        markdown: markdown(board, agreement, &pictures),
        pictures,
    })
}

impl ReportFiles {
    /// Writes the pictures beside `path`, then the Markdown at `path`; returns every file
    /// written, the Markdown first.
    /// Each file goes through a temporary file renamed into place, and none may be a
    /// study (`study::file_guard`).
    pub fn write(&self, path: &Path) -> crate::study::Result<Vec<PathBuf>> {
        use crate::study::file_guard::{check_output, write_atomically};
        let folder = path.parent().unwrap_or(Path::new(""));
        let targets: Vec<PathBuf> = self
            .pictures
            .iter()
            .map(|p| folder.join(&p.file_name))
            .collect();
        check_output(path)?;
        for target in &targets {
            check_output(target)?;
        }
        for (p, target) in self.pictures.iter().zip(&targets) {
            write_atomically(target, |w| {
                Ok(std::io::Write::write_all(w, p.svg.as_bytes())?)
            })?;
        }
        write_atomically(path, |w| {
            Ok(std::io::Write::write_all(w, self.markdown.as_bytes())?)
        })?;
        let mut written = vec![path.to_path_buf()];
        written.extend(targets);
        Ok(written)
    }
}

/// Links the pictures that belong at `place`.
fn link_pictures(out: &mut String, pictures: &[Picture], place: &Place) {
    for p in pictures.iter().filter(|p| p.place == *place) {
        // Brackets in a ranker's name would end the alt text early.
        let alt = p.title.replace(['[', ']'], "");
        let _ = writeln!(out, "![{alt}]({})\n", p.file_name);
    }
}

/// Renders the report. `agreement` is left out (with a note) when the scale has too few
/// reviewers to measure it; `pictures` are linked where they belong.
pub fn markdown(
    board: &Scoreboard,
    agreement: Option<&AgreementReport>,
    pictures: &[Picture],
) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "# Scoreboard report: {}\n", board.study);
    let _ = writeln!(out, "> **Caution.** {OFFLINE_CAUTION}\n");

    out.push_str("## Settings\n\n");
    for (name, value) in settings_lines(board) {
        let _ = writeln!(out, "- **{name}:** {value}");
    }
    out.push('\n');
    rankers_section(&mut out, board, pictures);
    comparisons_section(&mut out, board, pictures);
    pool_bias_section(&mut out, board);
    out.push_str("## Reviewer agreement\n\n");
    match agreement {
        Some(a) if !a.pairs.is_empty() => agreement_section(&mut out, a, pictures),
        _ => out.push_str(
            "Not measurable yet: no two reviewers graded the same pairs on this scale.\n\n",
        ),
    }
    out.push_str("## Cautions\n\n");
    for c in board.cautions.words() {
        let _ = writeln!(out, "- {c}");
    }
    out
}

/// Every ranker's means with intervals, and the NDCG@k picture.
fn rankers_section(out: &mut String, board: &Scoreboard, pictures: &[Picture]) {
    out.push_str("## Rankers\n\n");
    out.push_str("Mean over contexts with the 95 % interval in brackets; judged@k is the share of the top k that has a grade.\n\n");
    let keys = report_metric_keys(&board.settings.ks);
    let header: Vec<String> = std::iter::once("ranker".to_string())
        .chain(keys.iter().map(|k| k.replace("ndcg", "NDCG")))
        .collect();
    let rows: Vec<Vec<String>> = board
        .rankers
        .iter()
        .map(|r| {
            std::iter::once(r.ranker.clone())
                .chain(keys.iter().map(|key| match r.metrics.get(key) {
                    // A mean without data is a dash alone, never NaN or "– [–, –]".
                    Some(m) if !m.mean.is_finite() => "–".into(),
                    Some(m) if crate::analysis::views::scoreboard_view::is_share(key) => {
                        format!("{:.0} %", m.mean * 100.0)
                    }
                    Some(m) => format!("{} [{}, {}]", num(m.mean), num(m.ci_low), num(m.ci_high)),
                    None => "–".into(),
                }))
                .collect()
        })
        .collect();
    table(out, &header, &rows);
    if pictures.iter().any(|p| p.place == Place::Curves) {
        link_pictures(out, pictures, &Place::Curves);
    } else {
        out.push_str("No NDCG@k picture: no context has a relevant item yet.\n\n");
    }
}

/// Each candidate against the baseline with its tests, and the difference pictures.
fn comparisons_section(out: &mut String, board: &Scoreboard, pictures: &[Picture]) {
    out.push_str("## Comparisons against the baseline\n\n");
    if board.comparisons.is_empty() {
        out.push_str("No comparisons: the study has a single ranker.\n\n");
    } else {
        out.push_str("Difference = candidate − baseline, per context, then averaged. Holm's correction runs over the candidates on each metric.\n\n");
        let header: Vec<String> = [
            "candidate",
            "baseline",
            "metric",
            "difference [95 % CI]",
            "p (randomization)",
            "p (paired t)",
            "p (Holm)",
            "wins / ties / losses",
            "contexts needed",
        ]
        .map(String::from)
        .to_vec();
        let rows: Vec<Vec<String>> = board
            .comparisons
            .iter()
            .map(|c| {
                vec![
                    c.ranker.clone(),
                    c.baseline.clone(),
                    c.metric.replace("ndcg", "NDCG"),
                    crate::analysis::views::scoreboard_view::difference_text(
                        c.diff, c.ci_low, c.ci_high,
                    ),
                    p_value(c.p_randomization),
                    p_value(c.p_t),
                    p_value(c.p_holm),
                    format!("{} / {} / {}", c.wins, c.ties, c.losses),
                    c.contexts_needed.map_or("–".into(), |n| n.to_string()),
                ]
            })
            .collect();
        table(out, &header, &rows);
        for c in board.rankers.iter() {
            link_pictures(out, pictures, &Place::Differences(c.ranker.clone()));
        }
        out.push_str("Contexts needed: for 80 % power at two-sided α = 0.05, by the normal approximation with the observed mean and SD of the differences.\n\n");
        let _ = writeln!(out, "> {OFFLINE_CAUTION}\n");
    }
}

/// Pool bias at the focus cut-off, in words.
fn pool_bias_section(out: &mut String, board: &Scoreboard) {
    if !board.pool_bias.is_empty() {
        out.push_str("## Is the pool fair to a newcomer?\n\n");
        out.push_str("Each ranker scored again as if the judged pairs only it found in its top k had never been judged (the leave-one-out test of Zobel 1998, SIGIR). A large drop warns that a ranker finding different items than the pooled ones is likely scored low; judge its gaps before trusting its score.\n\n");
        let focus = crate::analysis::defaults::focus_k(&board.settings.ks);
        for p in board
            .pool_bias
            .iter()
            .filter(|p| p.metric == format!("ndcg@{focus}"))
        {
            let _ = writeln!(
                out,
                "- {}",
                crate::analysis::scoring::pool_bias::in_words(p)
            );
        }
        out.push('\n');
    }
}

/// Reviewer pairs and the panel's coefficients, with their picture and cautions.
fn agreement_section(out: &mut String, a: &AgreementReport, pictures: &[Picture]) {
    let _ = writeln!(
        out,
        "Scale {} · reviewers {} · {} pairs graded, {} can't-judge grades left out.\n",
        a.scale,
        a.reviewer_names.join(", "),
        a.units,
        a.cant_judge
    );
    let header: Vec<String> = [
        "reviewers",
        "n",
        "Cohen's kappa [95 % CI]",
        "band",
        "Gwet's AC1",
    ]
    .map(String::from)
    .to_vec();
    let rows: Vec<Vec<String>> = a
        .pairs
        .iter()
        .map(|p| {
            vec![
                format!("{} × {}", p.reviewer_a, p.reviewer_b),
                p.n.to_string(),
                format!(
                    "{} [{}, {}]",
                    num(p.kappa),
                    num(p.kappa_ci_low),
                    num(p.kappa_ci_high)
                ),
                p.band.to_string(),
                num(p.ac1),
            ]
        })
        .collect();
    table(out, &header, &rows);
    agreement_lines(out, a, pictures);
}

/// Fleiss, Krippendorff and AC1 over the panel, the bands' source and the cautions.
fn agreement_lines(out: &mut String, a: &AgreementReport, pictures: &[Picture]) {
    let _ = writeln!(
        out,
        "- **Fleiss' kappa:** {} over the {} pairs with {} grades each (the most common number); {} over the {} pairs graded by every reviewer",
        num(a.fleiss_kappa),
        a.fleiss_n,
        a.fleiss_grades_per_pair,
        num(a.fleiss_kappa_complete),
        a.fleiss_n_complete
    );
    let _ = writeln!(
        out,
        "- **Krippendorff's alpha:** nominal {}, ordinal {} [{}, {}], interval {} (pairs with two or more grades: {})",
        num(a.alpha_nominal),
        num(a.alpha_ordinal),
        num(a.alpha_ordinal_ci_low),
        num(a.alpha_ordinal_ci_high),
        num(a.alpha_interval),
        a.alpha_n
    );
    let _ = writeln!(out, "- **Gwet's AC1 (panel):** {}", num(a.ac1));
    let _ = writeln!(out, "- **Bands:** {}\n", a.band_source);
    link_pictures(out, pictures, &Place::Agreement);
    for c in a.cautions.words() {
        let _ = writeln!(out, "- Caution: {c}");
    }
    if !a.cautions.is_empty() {
        out.push('\n');
    }
}
