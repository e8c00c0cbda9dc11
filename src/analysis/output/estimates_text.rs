//! Text, CSV and JSON renderings of the estimates from a machine judge (`score
//! --machine`): the same figures in each.

use std::fmt::Write;

use crate::analysis::format::{aligned, fixed};
use crate::analysis::scoring::estimates::{EstimateFigures, Estimates};
use crate::analysis::scoring::scoreboard::Scoreboard;
use crate::analysis::views::scoreboard_view::{difference_text, with_interval};

fn needed_text(f: &EstimateFigures) -> String {
    match (f.humans_needed, &f.humans_needed_reason) {
        (Some(0), _) => "0 (met)".into(),
        (Some(m), _) => match f.humans_needed_reviewer_hours {
            Some(h) => format!("{m} (about {} reviewer-hours)", fixed(h, 1)),
            None => m.to_string(),
        },
        (None, Some(why)) => format!("none: {why}"),
        (None, None) => "–".into(),
    }
}

fn figure_cells(f: &EstimateFigures, with_target: bool) -> Vec<String> {
    let mut cells = vec![
        fixed(f.lambda, 3),
        with_interval(f.human_only_mean, f.human_only_ci_low, f.human_only_ci_high),
        fixed(f.machine_only_mean, 3),
        fixed(f.effective_human_contexts, 1),
    ];
    if with_target {
        cells.push(needed_text(f));
    }
    cells
}

fn header(first: &[&str], with_target: bool, est: &Estimates) -> Vec<String> {
    let mut row: Vec<String> = first.iter().map(|s| s.to_string()).collect();
    row.extend(
        [
            "λ",
            "human only [95% CI]",
            "machine only",
            "effective human contexts",
        ]
        .iter()
        .map(|s| s.to_string()),
    );
    if with_target {
        row.push(format!(
            "more sample contexts for ±{}",
            est.target_width.map_or("–".into(), |w| w.to_string())
        ));
    }
    row
}

/// The estimates as plain text, after the scoreboard's own text.
pub fn text(est: &Estimates, board: &Scoreboard) -> String {
    let mut out = String::new();
    let s = &est.sample;
    let _ = writeln!(
        out,
        "\nEstimates from machine judge {} corrected by the human sample on {} (prediction-powered inference with the PPI++ λ; 95 % normal intervals).",
        est.machine, board.scale
    );
    let _ = writeln!(
        out,
        "Human sample: {} contexts drawn, {} complete, {} pending (seeds {}).",
        s.drawn,
        s.complete,
        s.pending,
        s.seeds
            .iter()
            .map(u64::to_string)
            .collect::<Vec<_>>()
            .join(", ")
    );
    if let Some(why) = &est.estimate_reason {
        let _ = writeln!(out, "{why}");
    }
    if let Some(first) = est.estimates.first() {
        let _ = writeln!(
            out,
            "n = {} complete sample contexts (people), N = {} contexts with the machine's grades only.\n",
            first.figures.n_human, first.figures.n_machine
        );
    }
    let with_target = est.target_width.is_some();
    let mut rows = vec![header(
        &["ranker", "metric", "estimate [95% CI]"],
        with_target,
        est,
    )];
    for e in &est.estimates {
        let mut row = vec![
            e.ranker.clone(),
            e.metric.clone(),
            with_interval(e.estimate, e.figures.ci_low, e.figures.ci_high),
        ];
        row.extend(figure_cells(&e.figures, with_target));
        rows.push(row);
    }
    if !est.estimates.is_empty() {
        out.push_str(&aligned(&rows));
    }
    if !est.estimate_comparisons.is_empty() {
        out.push_str(
            "\nEstimated differences against the baseline (diff = candidate − baseline):\n",
        );
        let mut rows = vec![header(
            &["ranker", "metric", "diff [95% CI]"],
            with_target,
            est,
        )];
        for c in &est.estimate_comparisons {
            let mut row = vec![
                format!("{} vs {}", c.ranker, c.baseline),
                c.metric.clone(),
                difference_text(c.diff, c.figures.ci_low, c.figures.ci_high),
            ];
            row.extend(figure_cells(&c.figures, with_target));
            rows.push(row);
        }
        out.push_str(&aligned(&rows));
    }
    out.push('\n');
    for c in est.estimate_cautions.0.words() {
        let _ = writeln!(out, "Caution: {c}");
    }
    out
}

/// The columns of the estimates CSV (a contract: add, never rename).
pub const CSV_COLUMNS: [&str; 22] = [
    "row",
    "ranker",
    "baseline",
    "metric",
    "estimate",
    "ci_low",
    "ci_high",
    "lambda",
    "n_human",
    "n_machine",
    "human_only_mean",
    "human_only_ci_low",
    "human_only_ci_high",
    "machine_only_mean",
    "effective_human_contexts",
    "humans_needed",
    "humans_needed_reviewer_hours",
    "humans_needed_reason",
    "machine",
    "scale",
    "sample_seeds",
    "sample_context_ids",
];

fn csv_number(x: f64) -> String {
    if x.is_finite() {
        x.to_string()
    } else {
        String::new()
    }
}

/// One CSV row per estimate (`row` = `estimate`) and per difference (`row` =
/// `comparison`, the difference in `estimate`); the sample's seeds and drawn contexts
/// (`;`-separated) on every row. Empty cells where a figure is undefined.
pub fn csv(est: &Estimates, board: &Scoreboard) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    let _ = w.write_record(CSV_COLUMNS);
    let seeds = est
        .sample
        .seeds
        .iter()
        .map(u64::to_string)
        .collect::<Vec<_>>()
        .join(";");
    let contexts = est.sample.context_ids.join(";");
    let rows = est
        .estimates
        .iter()
        .map(|e| ("estimate", &e.ranker, "", &e.metric, e.estimate, &e.figures))
        .chain(est.estimate_comparisons.iter().map(|c| {
            let baseline = c.baseline.as_str();
            (
                "comparison",
                &c.ranker,
                baseline,
                &c.metric,
                c.diff,
                &c.figures,
            )
        }));
    for (kind, ranker, baseline, metric, value, f) in rows {
        let record = [
            kind.to_string(),
            crate::study::export::neutralise(ranker).into_owned(),
            crate::study::export::neutralise(baseline).into_owned(),
            metric.clone(),
            csv_number(value),
            csv_number(f.ci_low),
            csv_number(f.ci_high),
            csv_number(f.lambda),
            f.n_human.to_string(),
            f.n_machine.to_string(),
            csv_number(f.human_only_mean),
            csv_number(f.human_only_ci_low),
            csv_number(f.human_only_ci_high),
            csv_number(f.machine_only_mean),
            csv_number(f.effective_human_contexts),
            f.humans_needed.map_or(String::new(), |m| m.to_string()),
            f.humans_needed_reviewer_hours
                .map_or(String::new(), csv_number),
            f.humans_needed_reason.clone().unwrap_or_default(),
            crate::study::export::neutralise(&est.machine).into_owned(),
            board.scale.clone(),
            seeds.clone(),
            crate::study::export::neutralise(&contexts).into_owned(),
        ];
        let _ = w.write_record(&record);
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

/// The scoreboard's JSON object with the estimates' fields after its own.
#[derive(serde::Serialize)]
struct WithEstimates<'a> {
    #[serde(flatten)]
    board: &'a Scoreboard,
    #[serde(flatten)]
    estimates: &'a Estimates,
}

/// The scoreboard's JSON object with `machine`, `target_width`, `sample`, `estimates`,
/// `estimate_comparisons`, `estimate_reason`, `estimate_cautions` and
/// `estimate_caution_codes` added.
pub fn json(est: &Estimates, board: &Scoreboard) -> String {
    let both = WithEstimates {
        board,
        estimates: est,
    };
    serde_json::to_string_pretty(&both).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}
