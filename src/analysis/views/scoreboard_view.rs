//! The Scoreboard screen's view model, built from one snapshot with the same
//! `scoreboard::build` that `plumbline score` prints, plus NDCG curves, reviewer
//! sensitivity, agreement, the gaps, and the text formats its cells and clipboard use.

use std::collections::BTreeMap;

pub use super::scoreboard_rest::{
    CurvePoint, RestOfModel, SensitivityRow, build_rest, curves, order_of,
};
use crate::analysis::agreement::AgreementReport;
use crate::analysis::scoring::gaps::GapPair;
use crate::analysis::scoring::scoreboard::{self, ScoreError, ScoreSettings, Scoreboard};
use crate::core::metric_table::{self, Metric};
use crate::study::snapshot::Snapshot;

/// Cut-offs offered as toggles; NDCG@k is also drawn for every k from 1 to `CURVE_MAX_K`.
pub const OFFERED_KS: [usize; 6] = [1, 3, 5, 10, 15, 20];
/// The largest k of the NDCG@k curves.
pub const CURVE_MAX_K: usize = 20;

/// What the controls can be set to, read from the study.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct Choices {
    /// Scales with their names.
    pub scales: Vec<String>,
    /// Rankers, for the baseline and candidate pickers.
    pub rankers: Vec<String>,
    /// Reviewers, for one-reviewer scoring and the gap queue.
    pub reviewers: Vec<String>,
    /// Segment labels as `Segment::parse` reads them.
    pub segments: Vec<String>,
}

/// One candidate against the baseline on one metric, per context.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct Differences {
    /// Candidate − baseline per context, ascending.
    pub sorted: Vec<f64>,
    /// Contexts where the candidate is better (by more than 1e-9).
    pub wins: usize,
    /// Contexts where it is worse (by more than 1e-9).
    pub losses: usize,
}

/// Histogram bins of width 0.1 over [0, 1]; the last bin includes 1; NaN is left out.
pub fn histogram(values: &[f64]) -> [usize; 10] {
    let mut bins = [0usize; 10];
    for v in values.iter().filter(|v| v.is_finite()) {
        bins[((v * 10.0).floor() as usize).min(9)] += 1;
    }
    bins
}

/// Per-context candidate − baseline values on `key`, sorted, with wins and losses.
pub fn differences(board: &Scoreboard, candidate: &str, key: &str) -> Differences {
    let find = |name: &str| board.rankers.iter().find(|r| r.ranker == name);
    let (Some(c), Some(b)) = (
        find(candidate),
        board.settings.baseline.as_deref().and_then(find),
    ) else {
        return Differences::default();
    };
    let mut sorted: Vec<f64> = c
        .per_context
        .iter()
        .zip(&b.per_context)
        .filter_map(|(x, y)| Some(x.values.get(key)? - y.values.get(key)?))
        .collect();
    sorted.sort_by(f64::total_cmp);
    Differences {
        wins: sorted.iter().filter(|x| **x > 1e-9).count(),
        losses: sorted.iter().filter(|x| **x < -1e-9).count(),
        sorted,
    }
}

/// Everything the screen shows; built on a job thread.
#[derive(Debug, Clone, serde::Serialize)]
pub struct ScoreboardModel {
    /// The settings as used (baseline filled in from the study when none was chosen).
    pub settings: ScoreSettings,
    /// The scoreboard as `plumbline score` prints it for these settings.
    pub board: Scoreboard,
    /// NDCG@1…CURVE_MAX_K per ranker.
    pub curves: Vec<(String, Vec<CurvePoint>)>,
    /// The panel's NDCG means per key (board order), what sensitivity rows compare with.
    pub panel_means: BTreeMap<String, Vec<f64>>,
    /// One row per reviewer who graded on the scale.
    pub sensitivity: Vec<SensitivityRow>,
    /// Agreement on the scale, for the report export.
    pub agreement: Option<AgreementReport>,
    /// Unjudged pairs in the top max(k), most decisive first.
    pub gaps: Vec<GapPair>,
    /// What the controls offer.
    pub choices: Choices,
    /// Per candidate, per NDCG key: its differences against the baseline (built once,
    /// not every frame).
    pub differences: BTreeMap<String, BTreeMap<String, Differences>>,
    /// Per NDCG key: each ranker's per-context histogram (board order).
    pub histograms: BTreeMap<String, Vec<[usize; 10]>>,
    /// True while curves, sensitivity, agreement and gaps are still being computed.
    #[serde(skip)]
    pub rest_pending: bool,
}

pub(super) fn ndcg_keys(ks: &[usize]) -> Vec<String> {
    ks.iter().map(|k| format!("ndcg@{k}")).collect()
}

pub(super) fn means(board: &Scoreboard, key: &str) -> Vec<f64> {
    board
        .rankers
        .iter()
        .map(|r| r.metrics.get(key).map_or(f64::NAN, |m| m.mean))
        .collect()
}

/// The cautions sorted for reading: those about no ranker in particular (the offline
/// caution first), then each ranker's own, in board order, as each caution names its
/// ranker.
pub fn cautions_by_ranker(board: &Scoreboard) -> (Vec<String>, Vec<(String, Vec<String>)>) {
    let mut general = Vec::new();
    let mut own: Vec<(String, Vec<String>)> = board
        .rankers
        .iter()
        .map(|r| (r.ranker.clone(), Vec::new()))
        .collect();
    for caution in board.cautions.iter() {
        match own
            .iter_mut()
            .find(|(name, _)| Some(name.as_str()) == caution.ranker())
        {
            Some((_, list)) => list.push(caution.words()),
            None => general.push(caution.words()),
        }
    }
    own.retain(|(_, list)| !list.is_empty());
    (general, own)
}

/// The comparison table's columns on screen and in the text output: each title in the
/// report's words, with the method and its source for a tooltip.
pub const COMPARISON_COLUMNS: [(&str, &str); 8] = [
    (
        "candidate vs baseline",
        "Each candidate against the baseline chosen in the settings",
    ),
    ("metric", "The metric and cut-off compared"),
    (
        "difference [95 % CI]",
        "Mean of the per-context differences (candidate − baseline) with a 95 % percentile bootstrap interval over contexts (Efron & Tibshirani 1993, ch. 13)",
    ),
    (
        "p (randomization)",
        "Two-sided paired randomization (sign-flip) test of a mean difference of 0 over contexts (Smucker, Allan & Carterette 2007, CIKM)",
    ),
    (
        "p (paired t)",
        "Two-sided paired Student's t-test on the per-context differences (Student 1908; compared with the randomization test by Smucker et al. 2007)",
    ),
    (
        "p (Holm)",
        "The randomization p-value after Holm's step-down correction across the candidates on this metric (Holm 1979, Scand. J. Statist. 6)",
    ),
    (
        "wins / ties / losses",
        "Contexts where the candidate scores above / level with (within 1e-9) / below the baseline",
    ),
    (
        "contexts needed",
        "Contexts for 80 % power at two-sided α = 0.05, by the normal approximation with the observed mean and SD of the differences (common practice)",
    ),
];

/// Builds the whole model (what `plumbline view scoreboard` prints): the table first,
/// then the rest.
pub fn build(snapshot: &Snapshot, requested: ScoreSettings) -> Result<ScoreboardModel, ScoreError> {
    let mut model = build_table(snapshot, requested)?;
    let rest = build_rest(snapshot, &model)?;
    model.add_rest(rest);
    Ok(model)
}

/// What the screen shows first, at the cost of `plumbline score`: the board with its
/// tables, differences and histograms. Curves, reviewer sensitivity, agreement and gaps
/// are empty until [`build_rest`] fills them (`rest_pending`).
pub fn build_table(
    snapshot: &Snapshot,
    requested: ScoreSettings,
) -> Result<ScoreboardModel, ScoreError> {
    let mut settings = requested;
    // The screen offers no panel rule of its own: it scores under the study's.
    settings.panel_grade = snapshot.panel_rule;
    let board = scoreboard::build(snapshot, &settings)?;
    // The baseline as resolved by the one rule (`scoreboard::resolve_baseline`).
    settings.baseline = board.settings.baseline.clone();
    settings.scale = Some(board.scale.clone());
    let keys = ndcg_keys(&settings.ks);
    Ok(ScoreboardModel {
        differences: differences_by_ranker(&board, &keys),
        histograms: histograms(&board, &keys),
        choices: choices(snapshot),
        settings,
        board,
        curves: Vec::new(),
        panel_means: BTreeMap::new(),
        sensitivity: Vec::new(),
        agreement: None,
        gaps: Vec::new(),
        rest_pending: true,
    })
}

impl ScoreboardModel {
    /// Fills in what [`build_rest`] computed.
    pub fn add_rest(&mut self, rest: RestOfModel) {
        self.curves = rest.curves;
        self.panel_means = rest.panel_means;
        self.sensitivity = rest.sensitivity;
        self.agreement = rest.agreement;
        self.gaps = rest.gaps;
        self.rest_pending = false;
    }
}

/// What the Scoreboard's selectors offer.
fn choices(snapshot: &Snapshot) -> Choices {
    let mut segments = vec!["all".to_string(), "new".into(), "established".into()];
    for kind in ["query", "anchor"] {
        if snapshot.contexts.iter().any(|c| c.kind == kind) {
            segments.push(kind.into());
        }
    }
    let mut labels: Vec<&String> = snapshot
        .contexts
        .iter()
        .map(|c| &c.segment)
        .filter(|s| !s.is_empty())
        .collect();
    labels.sort();
    labels.dedup();
    segments.extend(labels.into_iter().map(|s| format!("segment:{s}")));
    Choices {
        scales: snapshot.scales.iter().map(|s| s.name.clone()).collect(),
        rankers: snapshot.rankers.clone(),
        reviewers: snapshot.reviewers.clone(),
        segments,
    }
}

/// Per ranker and NDCG key: its per-context differences from the baseline.
fn differences_by_ranker(
    board: &Scoreboard,
    keys: &[String],
) -> BTreeMap<String, BTreeMap<String, Differences>> {
    board
        .rankers
        .iter()
        .map(|r| {
            let by_key = keys
                .iter()
                .map(|k| (k.clone(), differences(board, &r.ranker, k)))
                .collect();
            (r.ranker.clone(), by_key)
        })
        .collect()
}

/// Per NDCG key: each ranker's histogram of per-context values.
fn histograms(board: &Scoreboard, keys: &[String]) -> BTreeMap<String, Vec<[usize; 10]>> {
    keys.iter()
        .map(|k| {
            let per_ranker = board
                .rankers
                .iter()
                .map(|r| {
                    let values: Vec<f64> = r
                        .per_context
                        .iter()
                        .filter_map(|c| c.values.get(k).copied())
                        .collect();
                    histogram(&values)
                })
                .collect();
            (k.clone(), per_ranker)
        })
        .collect()
}

/// "mean [low, high]" as the table shows it.
pub fn with_interval(mean: f64, low: f64, high: f64) -> String {
    if !mean.is_finite() {
        return "–".into();
    }
    let f = |x: f64| crate::analysis::format::fixed(x, 3);
    format!("{} [{}, {}]", f(mean), f(low), f(high))
}

/// "+diff [+low, +high]" as the comparison rows show it.
pub fn difference_text(diff: f64, low: f64, high: f64) -> String {
    if !diff.is_finite() {
        return "– (no paired contexts)".into();
    }
    let signed = |x: f64| {
        if x.is_finite() {
            format!("{x:+.3}")
        } else {
            "–".into()
        }
    };
    format!("{} [{}, {}]", signed(diff), signed(low), signed(high))
}

/// The ranker table's columns, from the metric table: NDCG at every k, P and ERR at
/// the focus k, RR, RBP and its residual, then judged@k at every k.
pub fn table_keys(ks: &[usize], focus: usize) -> Vec<String> {
    metric_table::table_columns(ks, focus, false)
        .into_iter()
        .map(Metric::key)
        .collect()
}

/// A metric key as a column title (`ndcg@10` → `NDCG@10`); an unknown key as it is.
pub fn column_title(key: &str) -> String {
    Metric::parse(key).map_or_else(|| key.to_string(), Metric::title)
}

/// What a column measures and its source, for the column's tooltip.
pub fn column_tooltip(key: &str) -> &'static str {
    Metric::parse(key).map_or("", |m| m.spec().tooltip)
}

/// Whether a column is a share shown as a percentage (judged@k).
pub fn is_share(key: &str) -> bool {
    Metric::parse(key).is_some_and(|m| m.spec().is_share)
}

/// The line above the Scoreboard's tables: what was scored and how.
pub fn summary_line(board: &Scoreboard) -> String {
    format!(
        "{} contexts scored on scale {}; {} left out with no relevant item. Means over contexts with 95 % percentile bootstrap intervals ({} resamples). RBP with persistence p = {}.",
        board.contexts_scored,
        board.scale,
        board.contexts_without_relevant,
        board.settings.bootstrap_resamples,
        board.settings.persistence
    )
}

/// Whether a cell is a judged@k share below [`defaults::COVERAGE_CAUTION`] (drawn in
/// the caution colour).
pub fn is_low_coverage(key: &str, m: &scoreboard::MetricSummary) -> bool {
    is_share(key) && m.mean < crate::analysis::defaults::COVERAGE_CAUTION
}

/// The Scoreboard's coverage line: every ranker and cut-off whose judged@k is below
/// [`crate::analysis::defaults::COVERAGE_CAUTION`]; None when every one is above.
pub fn low_coverage_warning(board: &Scoreboard) -> Option<String> {
    let low: Vec<String> = board
        .rankers
        .iter()
        .flat_map(|r| {
            board.settings.ks.iter().filter_map(move |k| {
                let j = r.metrics.get(&format!("judged@{k}"))?;
                (j.mean < crate::analysis::defaults::COVERAGE_CAUTION).then(|| {
                    format!(
                        "{} at k={k}: {}",
                        r.ranker,
                        crate::analysis::format::percent_spaced(j.mean)
                    )
                })
            })
        })
        .collect();
    (!low.is_empty()).then(|| {
        format!(
            "Coverage warning: below {:.0} % of the top k judged for {}. Unjudged items pull scores toward 0 (or vanish when condensed); judge the gaps below.",
            crate::analysis::defaults::COVERAGE_CAUTION * 100.0,
            low.join("; ")
        )
    })
}

/// A table cell: shares (judged@k) as a percentage, the rest as mean with interval.
pub fn cell_text(key: &str, m: &scoreboard::MetricSummary) -> String {
    if is_share(key) {
        crate::analysis::format::percent_spaced(m.mean)
    } else {
        with_interval(m.mean, m.ci_low, m.ci_high)
    }
}

/// The ranker table as tab-separated text (header row first), for the clipboard.
pub fn table_tsv(board: &Scoreboard, focus: usize) -> String {
    let keys = table_keys(&board.settings.ks, focus);
    let mut out = String::from("ranker");
    for key in &keys {
        out.push_str(&format!("\t{key}\t{key} low\t{key} high"));
    }
    out.push('\n');
    for r in &board.rankers {
        out.push_str(&r.ranker);
        for key in &keys {
            match r.metrics.get(key) {
                Some(m) => out.push_str(&format!("\t{}\t{}\t{}", m.mean, m.ci_low, m.ci_high)),
                None => out.push_str("\t\t\t"),
            }
        }
        out.push('\n');
    }
    out
}

/// The comparison rows as tab-separated text, for the clipboard.
pub fn comparisons_tsv(board: &Scoreboard) -> String {
    let mut out = String::from(
        "candidate\tbaseline\tmetric\tdifference\tci_low\tci_high\tp_randomization\tp_t\tp_holm\twins\tties\tlosses\tcontexts_needed\n",
    );
    for c in &board.comparisons {
        out.push_str(&format!(
            "{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\n",
            c.ranker,
            c.baseline,
            c.metric,
            c.diff,
            c.ci_low,
            c.ci_high,
            c.p_randomization,
            c.p_t,
            c.p_holm,
            c.wins,
            c.ties,
            c.losses,
            c.contexts_needed.map_or(String::new(), |n| n.to_string())
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn histogram_puts_one_in_the_last_bin() {
        let bins = histogram(&[0.0, 0.05, 0.1, 0.99, 1.0, f64::NAN]);
        assert_eq!(bins[0], 2);
        assert_eq!(bins[1], 1);
        assert_eq!(bins[9], 2);
        assert_eq!(bins.iter().sum::<usize>(), 5);
    }
}
