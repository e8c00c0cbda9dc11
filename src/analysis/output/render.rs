//! Text, CSV and JSON renderings of the view models, for the command line and exports.

use std::fmt::Write;

use crate::analysis::agreement::AgreementReport;
use crate::analysis::format::{aligned, num, p_value, percent};
use crate::analysis::scoring::scoreboard::Scoreboard;
use crate::analysis::scoring::trial::Trial;

/// Writes one CSV row with every text cell a spreadsheet would run as a formula
/// neutralised (a ranker or context named `=2+3`); numbers are written as they are.
fn write_guarded<W: std::io::Write, I, T>(w: &mut csv::Writer<W>, cells: I)
where
    I: IntoIterator<Item = T>,
    T: AsRef<str>,
{
    let row: Vec<String> = cells
        .into_iter()
        .map(|c| crate::study::export::neutralise_cell(c.as_ref()).into_owned())
        .collect();
    let _ = w.write_record(&row);
}

/// Plain-text scoreboard for a terminal: settings, one row per ranker with each mean and
/// its interval, the paired comparisons against the baseline, then the cautions.
pub fn scoreboard_text(board: &Scoreboard) -> String {
    let s = &board.settings;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "Study {} · scale {} · grades {} · gains {} · unjudged items {} · segment {}",
        board.study,
        board.scale,
        s.grades.label(),
        board.gains_used,
        s.unjudged.words(),
        s.segment.label()
    );
    let _ = writeln!(
        out,
        "{} contexts scored; left out: {} graded with no relevant item, {} never graded on this scale. Panel grade: {}. RBP persistence p = {}. 95 % percentile bootstrap intervals (B = {}).\n",
        board.contexts_scored,
        board.contexts_without_relevant,
        board.contexts_without_grades,
        s.panel_grade.label(),
        s.persistence,
        s.bootstrap_resamples
    );
    out.push_str(&rankings_files_text(board));
    if board.contexts_scored == 0 {
        let _ = writeln!(
            out,
            "{}\n",
            crate::analysis::scoring::scoreboard::NOTHING_TO_SCORE
        );
    }
    out.push_str(&ranker_table(board));
    out.push_str(&comparison_table(board));
    out.push_str(&super::pool_bias_text::table_text(board));
    out.push('\n');
    for c in board.cautions.words() {
        let _ = writeln!(out, "Caution: {c}");
    }
    out
}

/// One row per ranker: each metric of the text columns with its interval.
fn ranker_table(board: &Scoreboard) -> String {
    let s = &board.settings;
    let k_main = crate::analysis::defaults::focus_k(&s.ks);
    let columns = crate::core::metric_table::table_columns(&s.ks, k_main, false);
    let keys: Vec<String> = columns.iter().map(|m| m.key()).collect();
    let mut rows = vec![
        std::iter::once("ranker".to_string())
            .chain(keys.iter().cloned())
            .collect::<Vec<_>>(),
    ];
    for r in &board.rankers {
        let mut row = vec![match &r.from_file {
            Some(file) => format!("{} ({file})", r.ranker),
            None => r.ranker.clone(),
        }];
        for (key, metric) in keys.iter().zip(&columns) {
            row.push(match r.metrics.get(key) {
                Some(m) if metric.spec().is_share => percent(m.mean),
                Some(m) => crate::analysis::views::scoreboard_view::with_interval(
                    m.mean, m.ci_low, m.ci_high,
                ),
                None => "–".into(),
            });
        }
        rows.push(row);
    }
    aligned(&rows)
}

/// The paired comparisons against the baseline (empty without one).
fn comparison_table(board: &Scoreboard) -> String {
    let mut out = String::new();
    if !board.comparisons.is_empty() {
        out.push_str("\nPaired comparisons against the baseline (diff = candidate − baseline):\n");
        let mut rows = vec![
            crate::analysis::views::scoreboard_view::COMPARISON_COLUMNS
                .map(|(title, _)| title.to_string())
                .to_vec(),
        ];
        for c in &board.comparisons {
            rows.push(vec![
                format!("{} vs {}", c.ranker, c.baseline),
                c.metric.clone(),
                crate::analysis::views::scoreboard_view::difference_text(
                    c.diff, c.ci_low, c.ci_high,
                ),
                p_value(c.p_randomization),
                p_value(c.p_t),
                p_value(c.p_holm),
                format!("{}/{}/{}", c.wins, c.ties, c.losses),
                c.contexts_needed.map_or("–".into(), |n| n.to_string()),
            ]);
        }
        out.push_str(&aligned(&rows));
        out.push_str("Contexts needed: for 80 % power at two-sided α = 0.05, normal approximation with the observed mean and SD of the differences.\n");
    }
    out
}

/// Where each rankings file's lists went, in words (empty without files).
pub fn rankings_files_text(board: &Scoreboard) -> String {
    let mut out = String::new();
    for f in &board.rankings_files {
        let rankers: Vec<String> = f
            .rankers
            .iter()
            .map(|r| match f.replaced.contains(r) {
                true => format!("{r} (replaces the study's lists of {r} for this run)"),
                false => format!("{r} (not in the study)"),
            })
            .collect();
        let _ = write!(
            out,
            "Lists from {} (not imported): {}; {} lists, {} entries",
            f.file,
            rankers.join(", "),
            f.lists,
            f.entries
        );
        if f.lists_left_out > 0 {
            let _ = write!(
                out,
                "; {} {} left out (context not in the study)",
                f.lists_left_out,
                if f.lists_left_out == 1 {
                    "list"
                } else {
                    "lists"
                }
            );
        }
        if f.unknown_items > 0 {
            let _ = write!(
                out,
                "; {} {} of items not in the catalog count as unjudged",
                f.unknown_items,
                if f.unknown_items == 1 {
                    "entry"
                } else {
                    "entries"
                }
            );
        }
        out.push_str(".\n");
    }
    out
}

/// Tidy CSV: one row per ranker × context × metric, plus the settings used.
pub fn scoreboard_csv(board: &Scoreboard) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    write_guarded(
        &mut w,
        [
            "ranker",
            "context_id",
            "metric",
            "value",
            "scale",
            "grades",
            "gain",
            "unjudged",
            "segment",
            "persistence",
        ],
    );
    let s = &board.settings;
    let persistence = s.persistence.to_string();
    let gain = format!("{:?}", s.gain).to_lowercase();
    let unjudged = format!("{:?}", s.unjudged).to_lowercase();
    let grades = s.grades.label();
    let segment = s.segment.label();
    for r in &board.rankers {
        for c in &r.per_context {
            for (metric, value) in &c.values {
                write_guarded(
                    &mut w,
                    [
                        r.ranker.as_str(),
                        c.context_id.as_str(),
                        metric.as_str(),
                        &value.to_string(),
                        &board.scale,
                        &grades,
                        &gain,
                        &unjudged,
                        &segment,
                        &persistence,
                    ],
                );
            }
        }
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

/// The whole scoreboard as pretty-printed JSON (an `{"error": …}` object if it cannot be
/// serialised).
pub fn scoreboard_json(board: &Scoreboard) -> String {
    serde_json::to_string_pretty(board).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}

/// Plain-text agreement report for a terminal: one row per reviewer pair, then the panel
/// coefficients, the band source and the cautions.
pub fn agreement_text(report: &AgreementReport) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "Study {} · scale {}{} · {} levels · reviewers {}",
        report.study,
        report.scale,
        report
            .collapse
            .as_ref()
            .map(|c| format!(" (collapsed by {c})"))
            .unwrap_or_default(),
        report.levels,
        report.reviewer_names.join(", ")
    );
    let _ = writeln!(
        out,
        "{} pairs graded; {} can't-judge grades left out.\n",
        report.units, report.cant_judge
    );
    let mut rows = vec![
        [
            "reviewers",
            "n",
            "kappa [95% CI]",
            "band",
            "linear",
            "quadratic",
            "AC1",
            "p_o",
        ]
        .map(String::from)
        .to_vec(),
    ];
    for p in &report.pairs {
        rows.push(vec![
            format!("{} × {}", p.reviewer_a, p.reviewer_b),
            p.n.to_string(),
            format!(
                "{} [{}, {}]",
                num(p.kappa),
                num(p.kappa_ci_low),
                num(p.kappa_ci_high)
            ),
            p.band.to_string(),
            num(p.kappa_linear),
            num(p.kappa_quadratic),
            num(p.ac1),
            num(p.observed_agreement),
        ]);
    }
    out.push_str(&aligned(&rows));
    let _ = writeln!(
        out,
        "\nPanel: Fleiss' kappa {} (n = {} pairs with {} grades each; {} over the {} pairs graded by everyone), Krippendorff's alpha nominal {} · ordinal {} [{}, {}] · interval {} (n = {}), Gwet's AC1 {}",
        num(report.fleiss_kappa),
        report.fleiss_n,
        report.fleiss_grades_per_pair,
        num(report.fleiss_kappa_complete),
        report.fleiss_n_complete,
        num(report.alpha_nominal),
        num(report.alpha_ordinal),
        num(report.alpha_ordinal_ci_low),
        num(report.alpha_ordinal_ci_high),
        num(report.alpha_interval),
        report.alpha_n,
        num(report.ac1)
    );
    let _ = writeln!(out, "Bands: {}", report.band_source);
    out.push_str(&super::quality_text::text(report));
    for c in report.cautions.words() {
        let _ = writeln!(out, "Caution: {c}");
    }
    out
}

/// Tidy CSV: one row per reviewer pair and coefficient, then the panel coefficients.
pub fn agreement_csv(report: &AgreementReport) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    write_guarded(
        &mut w,
        [
            "scope",
            "reviewer_a",
            "reviewer_b",
            "coefficient",
            "value",
            "n",
        ],
    );
    for p in &report.pairs {
        for (name, value) in [
            ("kappa", p.kappa),
            ("kappa_se", p.kappa_se),
            ("kappa_linear", p.kappa_linear),
            ("kappa_quadratic", p.kappa_quadratic),
            ("ac1", p.ac1),
        ] {
            write_guarded(
                &mut w,
                [
                    "pair",
                    &p.reviewer_a,
                    &p.reviewer_b,
                    name,
                    &value.to_string(),
                    &p.n.to_string(),
                ],
            );
        }
    }
    for (name, value, n) in [
        ("fleiss_kappa", report.fleiss_kappa, report.fleiss_n),
        (
            "fleiss_kappa_complete",
            report.fleiss_kappa_complete,
            report.fleiss_n_complete,
        ),
        ("alpha_nominal", report.alpha_nominal, report.alpha_n),
        ("alpha_ordinal", report.alpha_ordinal, report.alpha_n),
        ("alpha_interval", report.alpha_interval, report.alpha_n),
        ("ac1", report.ac1, report.units),
    ] {
        write_guarded(
            &mut w,
            ["panel", "", "", name, &value.to_string(), &n.to_string()],
        );
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

/// The whole agreement report as pretty-printed JSON (an `{"error": …}` object if it
/// cannot be serialised).
pub fn agreement_json(report: &AgreementReport) -> String {
    serde_json::to_string_pretty(report).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}

/// Plain-text scale trial for a terminal: one row per trial row, then the recommendation
/// and the cautions.
pub fn trial_text(trial: &Trial) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "Study {} · scale trial on {} pairs graded on every scale\n",
        trial.study, trial.common_pairs
    );
    let mut rows = vec![
        [
            "scale",
            "levels",
            "pairs",
            "alpha ord. [95% CI]",
            "κ quad.",
            "AC1",
            "median s (IQR)",
            "can't judge",
            "τ vs finest",
            "disc. power",
            "alpha / rev-min",
        ]
        .map(String::from)
        .to_vec(),
    ];
    for r in &trial.scales {
        rows.push(vec![
            match &r.collapse {
                Some(c) => format!("{} → {c}", r.scale),
                None => r.scale.clone(),
            },
            r.levels.to_string(),
            r.pairs.to_string(),
            format!(
                "{} [{}, {}]",
                num(r.alpha_ordinal),
                num(r.alpha_ci_low),
                num(r.alpha_ci_high)
            ),
            num(r.kappa_quadratic_mean),
            num(r.ac1_mean),
            format!("{:.1} ({:.1})", r.median_seconds, r.iqr_seconds),
            format!("{:.1}%", r.cant_judge_rate * 100.0),
            num(r.kendall_tau),
            num(r.discriminative_power),
            num(r.alpha_per_reviewer_minute),
        ]);
    }
    out.push_str(&aligned(&rows));
    let _ = writeln!(out, "\n{}", trial.recommendation);
    for c in trial.cautions.words() {
        let _ = writeln!(out, "Caution: {c}");
    }
    out
}

/// Tidy CSV: one row per trial row and measure.
pub fn trial_csv(trial: &Trial) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    write_guarded(&mut w, ["scale", "collapse", "measure", "value"]);
    for r in &trial.scales {
        let collapse = r.collapse.clone().unwrap_or_default();
        for (name, value) in [
            ("pairs", r.pairs as f64),
            ("alpha_ordinal", r.alpha_ordinal),
            ("alpha_ci_low", r.alpha_ci_low),
            ("alpha_ci_high", r.alpha_ci_high),
            ("kappa_quadratic_mean", r.kappa_quadratic_mean),
            ("ac1_mean", r.ac1_mean),
            ("median_seconds", r.median_seconds),
            ("cant_judge_rate", r.cant_judge_rate),
            ("kendall_tau", r.kendall_tau),
            ("discriminative_power", r.discriminative_power),
            ("alpha_per_reviewer_minute", r.alpha_per_reviewer_minute),
        ] {
            write_guarded(
                &mut w,
                [r.scale.as_str(), &collapse, name, &value.to_string()],
            );
        }
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

/// The whole scale trial as pretty-printed JSON (an `{"error": …}` object if it cannot
/// be serialised).
pub fn trial_json(trial: &Trial) -> String {
    serde_json::to_string_pretty(trial).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}
