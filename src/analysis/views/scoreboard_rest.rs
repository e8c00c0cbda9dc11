//! The Scoreboard's figures after the table: NDCG@1…CURVE_MAX_K curves with bands from
//! the board's own resamples, each reviewer's own grades scored alone (means only),
//! agreement and the gaps. Computed on a second job once the table is on screen.

use std::collections::BTreeMap;

use super::scoreboard_view::{CURVE_MAX_K, ScoreboardModel, means, ndcg_keys};
use crate::analysis::agreement::{self, AgreementReport};
use crate::analysis::judged::judgments::GradeSource;
use crate::analysis::scoring::gaps::{GapPair, gap_pairs};
use crate::analysis::scoring::scoreboard::{self, ScoreError, ScoreSettings, Scoreboard};
use crate::core::metric_table::{Metric, MetricKind};
use crate::core::stats::kendall_tau_b;
use crate::study::snapshot::Snapshot;

/// NDCG@k with its interval at one k, for the curve plot.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct CurvePoint {
    /// The cut-off.
    pub k: usize,
    /// Mean NDCG@k over the scored contexts.
    pub mean: f64,
    /// Lower end of its 95 % bootstrap interval.
    pub low: f64,
    /// Upper end of that interval.
    pub high: f64,
}

/// One reviewer's own grades scored alone, against the panel's ranker order.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SensitivityRow {
    /// The reviewer whose grades alone were scored.
    pub reviewer: String,
    /// Whether that reviewer is a machine judge (its order against the people's is the
    /// question: Voorhees 2000, IP&M 36, shows orders survive assessor disagreement).
    pub machine: bool,
    /// Contexts with a relevant item by this reviewer's grades.
    pub contexts_scored: usize,
    /// Per NDCG key: mean per ranker (board order), Kendall's tau-b with the panel's means,
    /// and whether the ranker order is the same as the panel's.
    pub by_key: BTreeMap<String, (Vec<f64>, f64, bool)>,
}

/// Ranker indices from best to worst mean (ties keep board order).
pub fn order_of(means: &[f64]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..means.len()).collect();
    order.sort_by(|a, b| means[*b].total_cmp(&means[*a]));
    order
}

/// NDCG at every k from 1 to `CURVE_MAX_K` per ranker (board order), with the bootstrap
/// interval from the board's own resamples: NDCG only, no tests, no pool bias. The screen's plot and the report's picture both come from here.
pub fn curves(
    snapshot: &Snapshot,
    settings: &ScoreSettings,
) -> Result<Vec<(String, Vec<CurvePoint>)>, ScoreError> {
    let metrics: Vec<Metric> = (1..=CURVE_MAX_K)
        .map(|k| Metric::at(MetricKind::Ndcg, k))
        .collect();
    let (_, per_ranker) = scoreboard::metric_intervals(snapshot, settings, &metrics)?;
    Ok(snapshot
        .rankers
        .iter()
        .zip(per_ranker)
        .map(|(ranker, intervals)| {
            let points = (1..=CURVE_MAX_K)
                .zip(intervals)
                .map(|(k, ci)| CurvePoint {
                    k,
                    mean: ci.mean,
                    low: ci.low,
                    high: ci.high,
                })
                .collect();
            (ranker.clone(), points)
        })
        .collect())
}

/// The figures the screen shows after the table.
#[derive(Debug, Clone)]
pub struct RestOfModel {
    pub(super) curves: Vec<(String, Vec<CurvePoint>)>,
    pub(super) panel_means: BTreeMap<String, Vec<f64>>,
    pub(super) sensitivity: Vec<SensitivityRow>,
    pub(super) agreement: Option<AgreementReport>,
    pub(super) gaps: Vec<GapPair>,
}

/// The NDCG curves with their bands, reviewer sensitivity, agreement and the gaps for
/// a model from [`build_table`] on the same snapshot.
pub fn build_rest(snapshot: &Snapshot, model: &ScoreboardModel) -> Result<RestOfModel, ScoreError> {
    let settings = &model.settings;
    let board = &model.board;
    let scale = snapshot
        .scale_index(&board.scale)
        .ok_or_else(|| ScoreError::UnknownScale(board.scale.clone()))?;
    let curves = curves(snapshot, settings)?;
    let (panel_means, sensitivity) = reviewer_sensitivity(snapshot, settings, board, scale)?;
    let gap_k = settings.ks.iter().copied().max().unwrap_or(10);
    Ok(RestOfModel {
        curves,
        panel_means,
        sensitivity,
        agreement: Some(agreement::with_defaults(snapshot, scale, None)),
        gaps: gap_pairs(snapshot, scale, &settings.grades, gap_k),
    })
}

/// Panel means per NDCG key, and each grader's own means with Kendall's tau-b against
/// the panel's ranker order: means only, so few resamples.
type Sensitivity = (BTreeMap<String, Vec<f64>>, Vec<SensitivityRow>);

fn reviewer_sensitivity(
    snapshot: &Snapshot,
    settings: &ScoreSettings,
    board: &Scoreboard,
    scale: usize,
) -> Result<Sensitivity, ScoreError> {
    let keys = ndcg_keys(&settings.ks);
    let metrics: Vec<Metric> = settings
        .ks
        .iter()
        .map(|&k| Metric::at(MetricKind::Ndcg, k))
        .collect();
    // Means only: no resamples, tests or pool bias.
    let quick = |grades: GradeSource| {
        let settings = ScoreSettings {
            grades,
            bootstrap_resamples: 0,
            ..settings.clone()
        };
        let (scored, per_ranker) = scoreboard::metric_intervals(snapshot, &settings, &metrics)?;
        let means: BTreeMap<String, Vec<f64>> = keys
            .iter()
            .enumerate()
            .map(|(m, key)| (key.clone(), per_ranker.iter().map(|r| r[m].mean).collect()))
            .collect();
        Ok::<_, ScoreError>((scored, means))
    };
    let panel_means: BTreeMap<String, Vec<f64>> = match settings.grades {
        GradeSource::Panel => keys.iter().map(|k| (k.clone(), means(board, k))).collect(),
        _ => quick(GradeSource::Panel)?.1,
    };
    let graders: Vec<&String> = snapshot
        .reviewers
        .iter()
        .enumerate()
        .filter(|(r, _)| snapshot.grades_of(*r).any(|g| g.scale as usize == scale))
        .map(|(_, name)| name)
        .collect();
    let mut sensitivity = Vec::new();
    for reviewer in graders {
        let (contexts_scored, own) = quick(GradeSource::Reviewer(reviewer.clone()))?;
        let by_key = keys
            .iter()
            .map(|k| {
                let mine = own[k].clone();
                let panel = &panel_means[k];
                let tau = kendall_tau_b(&mine, panel);
                let same = order_of(&mine) == order_of(panel);
                (k.clone(), (mine, tau, same))
            })
            .collect();
        sensitivity.push(SensitivityRow {
            machine: snapshot
                .reviewer_index(reviewer)
                .is_some_and(|r| snapshot.is_machine(r)),
            reviewer: reviewer.clone(),
            contexts_scored,
            by_key,
        });
    }

    Ok((panel_means, sensitivity))
}
