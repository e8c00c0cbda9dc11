//! The scale trial: for each piloted scale (and each saved collapse map), how much
//! agreement and ranker separation it buys per reviewer-minute, from the reviewers who
//! graded every compared scale, on the pairs they graded on every one, so the rows are
//! comparable. The README's "Scale trial" convention states every rule.

use std::collections::{BTreeMap, HashSet};

use serde::Serialize;

use crate::analysis::cautions::{Caution, Cautions, TrialCaution};

use crate::analysis::agreement;
use crate::analysis::judged::JudgedContexts;
use crate::analysis::judged::judgments::GradeSource;
use crate::analysis::scoring::scoreboard::ScoreSettings;
use crate::core::agreement::CollapseMap;
use crate::core::metric_table::{Metric, MetricKind};
use crate::core::metrics::Unjudged;
use crate::core::scale::{Level, Scale};
use crate::core::stats;
use crate::study::snapshot::Snapshot;

/// One piloted scale (or a collapsed copy of one), measured on the common pairs.
#[derive(Debug, Clone, Serialize)]
pub struct TrialRow {
    /// Name of the scale as the study holds it (also on a collapsed row).
    pub scale: String,
    /// The collapse map applied, if this row is a coarsened copy of a scale.
    pub collapse: Option<String>,
    /// Number of levels: the scale's, or the coarse scale's after the collapse map.
    pub levels: usize,
    /// Pairs this row is computed on (the common pairs, as graded on this scale).
    pub pairs: usize,
    /// Reviewers of the trial (`Trial::reviewer_names`) with a grade of this scale on
    /// those pairs.
    pub reviewers: usize,
    /// Krippendorff's alpha (Krippendorff 2011) with ordinal distances over those pairs.
    pub alpha_ordinal: f64,
    /// Lower end of the 95 % percentile bootstrap interval of `alpha_ordinal`
    /// (pairs resampled, at most 1000 resamples).
    pub alpha_ci_low: f64,
    /// Upper end of the same interval.
    pub alpha_ci_high: f64,
    /// Quadratic-weighted Cohen's kappa (Cohen 1968) averaged over every reviewer pair
    /// that shares a graded pair; NaN without one, and NaN when one such pair's kappa is
    /// undefined (both gave one and the same level throughout: chance agreement 1).
    pub kappa_quadratic_mean: f64,
    /// Gwet's AC1 (Gwet 2008) of each of the same reviewer pairs, averaged; NaN without
    /// one. Defined where a pair's kappa is not, so it can stand where kappa is NaN.
    pub ac1_mean: f64,
    /// Median time recorded per grade, in seconds (NaN when no grade has a time).
    pub median_seconds: f64,
    /// Interquartile range (75th − 25th percentile) of the time per grade, in seconds.
    pub iqr_seconds: f64,
    /// Share of this scale's grades on those pairs that are "can't judge", in 0..1.
    pub cant_judge_rate: f64,
    /// Rankers from best to worst by mean NDCG@10 on these pairs, over the contexts with
    /// a relevant item under this row's grades; empty when no context has one.
    pub ranker_order: Vec<String>,
    /// Kendall's tau-b of this row's ranker means against the finest scale's; NaN when
    /// either row has no ranker means or tau-b is undefined (all rankers tie in one).
    pub kendall_tau: f64,
    /// Share of ranker pairs separated at Holm-adjusted p < 0.05 (Sakai 2006), over the
    /// same contexts as the means; NaN without a context or with fewer than 2 rankers.
    pub discriminative_power: f64,
    /// alpha (ordinal) per reviewer-minute spent on one pair: alpha / (seconds per pair /
    /// 60), seconds per pair = the recorded times of the row's grades summed and divided
    /// by `pairs` (a grade without a time adds nothing); NaN without any recorded time.
    pub alpha_per_reviewer_minute: f64,
}

/// The scale trial of a study: one row per piloted scale and saved collapse map, and a
/// verdict.
#[derive(Debug, Clone, Serialize)]
pub struct Trial {
    /// Name of the study.
    pub study: String,
    /// Pairs the trial's reviewers gave a level on every compared scale; every row is
    /// computed on these.
    pub common_pairs: usize,
    /// The reviewers every row uses: the panel's reviewers with a level on every compared
    /// scale (one who piloted only some scales is left out of every row, with a caution).
    pub reviewer_names: Vec<String>,
    /// The finest graded scale (most levels) first; then the other rows in the study's
    /// scale order, a scale's own row before its collapse maps (by map name).
    pub scales: Vec<TrialRow>,
    /// Plain-language verdict: the uncollapsed scale with the most alpha per
    /// reviewer-minute, or why the pilot cannot decide yet.
    pub recommendation: String,
    /// Warnings to read with the rows (kappa across level counts, shared sample, few
    /// common pairs or their interval width, overlapping intervals, offline only); in
    /// JSON `cautions` and `caution_codes`.
    #[serde(flatten)]
    pub cautions: Cautions,
}

/// What every row is computed on: the compared scales (those with a level from the
/// panel), the panel's reviewers who gave a level on every one of them, and the pairs
/// those reviewers gave a level on every compared scale.
struct Compared {
    scales: Vec<usize>,
    /// Snapshot indices of the reviewers every row uses, ascending.
    reviewers: Vec<u32>,
    /// Reviewers with a level on some compared scales but not on all, ascending.
    left_out: Vec<u32>,
    /// The common pairs.
    pairs: HashSet<(u32, u32)>,
}

fn compared(snapshot: &Snapshot) -> Compared {
    let levels = || snapshot.grades.iter().filter(|g| g.value.is_some());
    let scales: Vec<usize> = (0..snapshot.scales.len())
        .filter(|&s| levels().any(|g| g.scale as usize == s))
        .collect();
    let mut scales_of: BTreeMap<u32, HashSet<u32>> = BTreeMap::new();
    for g in levels() {
        scales_of.entry(g.reviewer).or_default().insert(g.scale);
    }
    let (reviewers, left_out): (Vec<u32>, Vec<u32>) = scales_of
        .keys()
        .partition(|r| scales_of[r].len() == scales.len());
    let mut pairs: Option<HashSet<(u32, u32)>> = None;
    for &s in &scales {
        let on_scale: HashSet<(u32, u32)> = levels()
            .filter(|g| g.scale as usize == s && reviewers.binary_search(&g.reviewer).is_ok())
            .map(|g| (g.context, g.item))
            .collect();
        pairs = Some(match pairs {
            None => on_scale,
            Some(p) => p.intersection(&on_scale).copied().collect(),
        });
    }
    Compared {
        scales,
        reviewers,
        left_out,
        pairs: pairs.unwrap_or_default(),
    }
}

/// A copy of the snapshot holding only `scale`'s grades of the compared reviewers on the
/// common pairs (and the settled grades of those pairs), with the collapse map applied
/// (as a new coarse scale) when given.
fn restricted(
    snapshot: &Snapshot,
    scale: usize,
    compared: &Compared,
    map: Option<&CollapseMap>,
) -> Snapshot {
    let common = &compared.pairs;
    let mut copy = snapshot.clone();
    copy.grades.retain(|g| {
        g.scale as usize == scale
            && common.contains(&(g.context, g.item))
            && compared.reviewers.binary_search(&g.reviewer).is_ok()
    });
    // Machine judges' grades follow the same restriction and collapse map, so their
    // levels stay within the (coarse) scale.
    copy.machine_grades
        .retain(|g| g.scale as usize == scale && common.contains(&(g.context, g.item)));
    copy.settled
        .retain(|s| s.scale as usize == scale && common.contains(&(s.context, s.item)));
    if let Some(map) = map {
        for g in copy.grades.iter_mut().chain(copy.machine_grades.iter_mut()) {
            g.value = map.apply(g.value);
        }
        for s in &mut copy.settled {
            s.value = map.targets[s.value as usize];
        }
        copy.scales[scale] = Scale {
            name: format!("{} ({})", snapshot.scales[scale].name, map.name),
            levels: (0..map.coarse_levels())
                .map(|v| Level {
                    value: v as u8,
                    label: v.to_string(),
                    gain: None,
                    key: v.to_string(),
                    rubric: String::new(),
                    colour: String::new(),
                })
                .collect(),
        };
    }
    copy
}

/// Per-context NDCG@10 per ranker on the restricted snapshot (condensed lists, so only
/// the common pairs count), over contexts with a relevant item: the scoreboard's own
/// judged contexts and scoring path with the trial's fixed settings.
fn ndcg_by_ranker(snapshot: &Snapshot, scale: usize) -> Vec<Vec<f64>> {
    let settings = ScoreSettings {
        ks: vec![10],
        unjudged: Unjudged::Condense,
        ..ScoreSettings::default()
    };
    let judged = JudgedContexts::build(snapshot, scale, &settings, &GradeSource::Panel);
    let ndcg_at_10 = [Metric::at(MetricKind::Ndcg, 10)];
    snapshot
        .lists
        .iter()
        .map(|lists| {
            judged
                .ranker_values(lists, &ndcg_at_10, &judged.scored)
                .swap_remove(0)
        })
        .collect()
}

fn discriminative_power(per_ranker: &[Vec<f64>], resamples: usize, seed: u64) -> f64 {
    let mut p = Vec::new();
    for a in 0..per_ranker.len() {
        for b in (a + 1)..per_ranker.len() {
            let diffs: Vec<f64> = per_ranker[a]
                .iter()
                .zip(&per_ranker[b])
                .map(|(x, y)| x - y)
                .collect();
            p.push(stats::randomization_test(
                &diffs,
                resamples,
                seed ^ (a * 31 + b) as u64,
            ));
        }
    }
    if p.is_empty() {
        return f64::NAN;
    }
    let adjusted = stats::holm(&p);
    adjusted.iter().filter(|q| **q < 0.05).count() as f64 / adjusted.len() as f64
}

/// The trial as `plumbline trial` and the Scale trial screen show it: the study's saved
/// collapse maps and the resampling defaults of `analysis::defaults`.
pub fn of_study(study: &crate::study::Study) -> Result<Trial, crate::study::StudyError> {
    let snapshot = study.snapshot()?;
    let maps = study.collapse_maps()?;
    Ok(build(
        &snapshot,
        &maps,
        crate::analysis::defaults::TRIAL_BOOTSTRAP,
        crate::analysis::defaults::SEED,
    ))
}

/// The rows to compute: every compared scale and every saved collapse map of one, the
/// finest scale (most levels) first, then the study's scale order, a scale's own row
/// before its maps (by map name).
fn variants<'m>(
    snapshot: &Snapshot,
    scales: &[usize],
    maps: &'m [(String, CollapseMap)],
) -> Vec<(usize, Option<&'m CollapseMap>)> {
    let mut variants: Vec<(usize, Option<&CollapseMap>)> =
        scales.iter().map(|s| (*s, None)).collect();
    for (scale, map) in maps {
        if let Some(s) = snapshot.scale_index(scale).filter(|s| scales.contains(s)) {
            variants.push((s, Some(map)));
        }
    }
    let finest = scales
        .iter()
        .copied()
        .max_by_key(|s| (snapshot.scales[*s].levels.len(), usize::MAX - s));
    variants.sort_by_key(|(s, m)| {
        (
            Some(*s) != finest || m.is_some(),
            *s,
            m.map(|m| m.name.clone()),
        )
    });
    variants
}

/// Builds the trial over every compared scale and every saved collapse map.
pub fn build(
    snapshot: &Snapshot,
    maps: &[(String, CollapseMap)],
    resamples: usize,
    seed: u64,
) -> Trial {
    let compared = compared(snapshot);
    let mut finest_means: Option<Vec<f64>> = None;
    let mut rows = Vec::new();
    for (s, map) in variants(snapshot, &compared.scales, maps) {
        let (row, means) = row(
            snapshot,
            &compared,
            (s, map),
            resamples,
            seed,
            &finest_means,
        );
        finest_means.get_or_insert(means);
        rows.push(row);
    }
    let common = compared.pairs.len();
    let (recommendation, mut cautions) = recommend(&rows, common);
    if !compared.left_out.is_empty() {
        cautions.push(TrialCaution::ReviewersLeftOut {
            reviewers: names(snapshot, &compared.left_out),
        });
    }
    if !rows.is_empty() && common >= 100 {
        let half_width = rows
            .iter()
            .map(|r| (r.alpha_ci_high - r.alpha_ci_low) / 2.0)
            .sum::<f64>()
            / rows.len() as f64;
        cautions.push(TrialCaution::AlphaIntervalWidth {
            pairs: common,
            half_width,
        });
    }
    if intervals_overlap(&rows) {
        cautions.push(TrialCaution::AlphaIntervalsOverlap);
    }
    cautions.push(TrialCaution::SeparationIsOffline);
    Trial {
        study: snapshot.name.clone(),
        common_pairs: common,
        reviewer_names: names(snapshot, &compared.reviewers),
        scales: rows,
        recommendation,
        cautions: Cautions(cautions.into_iter().map(Caution::Trial).collect()),
    }
}

fn names(snapshot: &Snapshot, reviewers: &[u32]) -> Vec<String> {
    reviewers
        .iter()
        .map(|r| snapshot.reviewers[*r as usize].clone())
        .collect()
}

/// One row (a scale, or a scale under a collapse map) and its rankers' mean NDCG@10
/// (NaN without a context with a relevant item). `finest` holds the finest row's means
/// once it is computed (None while computing that row itself).
fn row(
    snapshot: &Snapshot,
    compared: &Compared,
    (s, map): (usize, Option<&CollapseMap>),
    resamples: usize,
    seed: u64,
    finest: &Option<Vec<f64>>,
) -> (TrialRow, Vec<f64>) {
    let view = restricted(snapshot, s, compared, map);
    let table = agreement::unit_table(&view, s);
    // The agreement view model already holds alpha (ordinal) and its interval.
    let report = agreement::build(&view, s, None, resamples.min(1000), seed);
    let alpha = report.alpha_ordinal;
    let mut seconds = table.seconds.clone();
    seconds.sort_by(f64::total_cmp);
    let graded_count = table.units.iter().flatten().flatten().count();
    let seconds_per_pair = seconds.iter().sum::<f64>() / table.units.len().max(1) as f64;
    let per_ranker = ndcg_by_ranker(&view, s);
    let scored = per_ranker.first().is_some_and(|v| !v.is_empty());
    let means: Vec<f64> = per_ranker.iter().map(|v| stats::mean(v)).collect();
    let mut order: Vec<usize> = if scored {
        (0..means.len()).collect()
    } else {
        Vec::new()
    };
    order.sort_by(|a, b| means[*b].total_cmp(&means[*a]));
    let finest_means = finest.as_deref().unwrap_or(&means);
    let comparable = scored && finest_means.iter().all(|m| m.is_finite());
    let mean_of = |f: &dyn Fn(&agreement::ReviewerPair) -> f64| {
        stats::mean(&report.pairs.iter().map(f).collect::<Vec<_>>())
    };
    let row = TrialRow {
        scale: snapshot.scales[s].name.clone(),
        collapse: map.map(|m| m.name.clone()),
        levels: view.scales[s].levels.len(),
        pairs: table.units.len(),
        reviewers: table.reviewers.len(),
        alpha_ordinal: alpha,
        alpha_ci_low: report.alpha_ordinal_ci_low,
        alpha_ci_high: report.alpha_ordinal_ci_high,
        kappa_quadratic_mean: mean_of(&|p| p.kappa_quadratic),
        ac1_mean: mean_of(&|p| p.ac1),
        median_seconds: stats::quantile_sorted(&seconds, 0.5),
        iqr_seconds: stats::quantile_sorted(&seconds, 0.75)
            - stats::quantile_sorted(&seconds, 0.25),
        cant_judge_rate: table.cant_judge as f64 / (table.cant_judge + graded_count).max(1) as f64,
        ranker_order: order.iter().map(|r| snapshot.rankers[*r].clone()).collect(),
        kendall_tau: if comparable {
            stats::kendall_tau_b(finest_means, &means)
        } else {
            f64::NAN
        },
        discriminative_power: if scored {
            discriminative_power(&per_ranker, resamples, seed)
        } else {
            f64::NAN
        },
        alpha_per_reviewer_minute: alpha / (seconds_per_pair / 60.0),
    };
    (row, means)
}

/// True when some two uncollapsed rows have overlapping alpha intervals.
fn intervals_overlap(rows: &[TrialRow]) -> bool {
    let plain: Vec<&TrialRow> = rows.iter().filter(|r| r.collapse.is_none()).collect();
    plain.iter().enumerate().any(|(i, a)| {
        plain[i + 1..]
            .iter()
            .any(|b| a.alpha_ci_low <= b.alpha_ci_high && b.alpha_ci_low <= a.alpha_ci_high)
    })
}

/// A plain-language verdict: the scale whose agreement per reviewer-minute is highest,
/// unless its alpha interval overlaps the runner-up's, in which case the pilot cannot
/// decide yet and a rough count of further pairs is given (interval width ∝ 1/√n).
fn recommend(rows: &[TrialRow], pairs: usize) -> (String, Vec<TrialCaution>) {
    let mut cautions = vec![
        TrialCaution::KappaAcrossLevelCounts,
        TrialCaution::SharedPilotSample,
    ];
    if pairs < 100 {
        cautions.push(TrialCaution::FewCommonPairs { pairs });
    }
    let candidates: Vec<&TrialRow> = rows
        .iter()
        .filter(|r| r.collapse.is_none() && r.alpha_per_reviewer_minute.is_finite())
        .collect();
    let mut ranked = candidates.clone();
    ranked.sort_by(|a, b| {
        b.alpha_per_reviewer_minute
            .total_cmp(&a.alpha_per_reviewer_minute)
    });
    let text = match ranked.as_slice() {
        [] => "No scale has enough grades on shared pairs to compare yet.".to_string(),
        [only] => format!(
            "Only \"{}\" has been piloted; pilot a second scale on the same pairs to compare.",
            only.scale
        ),
        [best, second, ..] => {
            let overlap = best.alpha_ci_low <= second.alpha_ci_high
                && second.alpha_ci_low <= best.alpha_ci_high;
            let gap = (best.alpha_ordinal - second.alpha_ordinal).abs();
            let half_width = (best.alpha_ci_high - best.alpha_ci_low)
                .max(second.alpha_ci_high - second.alpha_ci_low)
                / 2.0;
            if overlap && gap > 0.0 {
                let factor = (2.0 * half_width / gap).powi(2);
                let more = ((factor - 1.0) * pairs as f64).ceil().max(1.0) as u64;
                format!(
                    "The pilot cannot decide yet: the alpha intervals of \"{}\" ({:.2}) and \"{}\" ({:.2}) overlap. Roughly {more} more common pairs would separate a gap this size.",
                    best.scale, best.alpha_ordinal, second.scale, second.alpha_ordinal
                )
            } else {
                format!(
                    "Adopt \"{}\": it buys the most agreement per reviewer-minute (alpha {:.2} at a median {:.1} s per grade, against {:.2} at {:.1} s for \"{}\"), and it orders the rankers {}.",
                    best.scale,
                    best.alpha_ordinal,
                    best.median_seconds,
                    second.alpha_ordinal,
                    second.median_seconds,
                    second.scale,
                    if best.kendall_tau >= 0.999 {
                        "as the finest scale does"
                    } else {
                        "differently from the finest scale; check why"
                    }
                )
            }
        }
    };
    (text, cautions)
}
