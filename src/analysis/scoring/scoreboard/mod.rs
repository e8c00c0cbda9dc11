//! The scoreboard view model: every ranker's metrics with intervals, and paired
//! comparisons against a baseline. Shared by the Scoreboard screen and `plumbline score`.

use std::collections::BTreeMap;

use serde::Serialize;

use crate::analysis::cautions::{Caution, Cautions};
use crate::analysis::defaults;
use crate::analysis::judged::JudgedContexts;
use crate::analysis::judged::judgments::GradeSource;
use crate::analysis::scoring::pool_bias::{self, PoolBias};

mod coverage;

pub use crate::analysis::judged::segment::Segment;
pub use crate::analysis::judged::settings::ScoreSettings;
use crate::core::metric_table::{self, Metric, MetricKind};
use crate::core::metrics::GainKind;
use crate::core::stats;
use crate::study::outside_lists::FileLists;
use crate::study::snapshot::Snapshot;

/// One metric of one ranker over the scored contexts.
#[derive(Debug, Clone, Serialize)]
pub struct MetricSummary {
    /// Mean of the per-context values.
    pub mean: f64,
    /// Lower end of the 95 % percentile bootstrap interval of the mean (contexts
    /// resampled with replacement); NaN without contexts or resamples.
    pub ci_low: f64,
    /// Upper end of the same interval.
    pub ci_high: f64,
}

/// Every metric value of one ranker in one scored context.
#[derive(Debug, Clone, Serialize)]
pub struct ContextScores {
    /// Id of the context.
    pub context_id: String,
    /// Metric key (see [`metric_keys`]) → value in this context.
    #[serde(flatten)]
    pub values: BTreeMap<String, f64>,
}

/// One ranker's scores: summaries over contexts and the values behind them.
#[derive(Debug, Clone, Serialize)]
pub struct RankerScores {
    /// Name of the ranker.
    pub ranker: String,
    /// Metric key (`ndcg@10`, `judged@5`, `rr`, …; see [`metric_keys`]) → summary.
    pub metrics: BTreeMap<String, MetricSummary>,
    /// One entry per scored context, in the study's context order.
    pub per_context: Vec<ContextScores>,
    /// The file its lists came from for this run (`score --rankings`); None for the
    /// study's own lists.
    pub from_file: Option<String>,
}

/// A candidate ranker against the baseline on one NDCG cut-off, paired by context.
#[derive(Debug, Clone, Serialize)]
pub struct Comparison {
    /// Name of the candidate ranker.
    pub ranker: String,
    /// Name of the baseline ranker.
    pub baseline: String,
    /// Metric key compared (always an `ndcg@k`).
    pub metric: String,
    /// Number of paired contexts (the scored contexts).
    pub n: usize,
    /// Mean over contexts of candidate − baseline; above 0 = the candidate scores higher.
    pub diff: f64,
    /// Lower end of the 95 % percentile bootstrap interval of `diff` (contexts resampled,
    /// pairs kept together).
    pub ci_low: f64,
    /// Upper end of the same interval.
    pub ci_high: f64,
    /// Two-sided paired randomization (sign-flip) test of mean difference 0 (Smucker,
    /// Allan & Carterette 2007): exact for few non-zero differences, else Monte Carlo.
    pub p_randomization: f64,
    /// Two-sided paired t-test p-value (Student 1908); NaN with fewer than two contexts or
    /// when every difference is 0.
    pub p_t: f64,
    /// `p_randomization` after Holm's (1979) step-down correction across the candidates
    /// compared on the same metric.
    pub p_holm: f64,
    /// Contexts where the candidate scores higher by more than 1e-9.
    pub wins: usize,
    /// Contexts where the two differ by at most 1e-9.
    pub ties: usize,
    /// Contexts where the candidate scores lower by more than 1e-9.
    pub losses: usize,
    /// Contexts for 80 % power at two-sided α = 0.05 (normal approximation); None if diff = 0.
    pub contexts_needed: Option<u64>,
}

/// Every ranker's metrics with intervals and the comparisons against the baseline.
#[derive(Debug, Clone, Serialize)]
pub struct Scoreboard {
    /// Name of the study.
    pub study: String,
    /// Name of the scale scored (the one asked for, or the scale with the most grades).
    pub scale: String,
    /// The settings used, with `baseline` set to the baseline actually compared against.
    pub settings: ScoreSettings,
    /// The gains actually used, in words: a scale's own gains win over `--gain`.
    pub gains_used: String,
    /// Contexts scored (with at least one relevant item in the segment).
    pub contexts_scored: usize,
    /// Contexts left out because graded, but no item in them is above level 0.
    pub contexts_without_relevant: usize,
    /// Contexts left out because no pair of them has a grade on this scale yet.
    pub contexts_without_grades: usize,
    /// Every ranker of the study, in the study's ranker order (by name).
    pub rankers: Vec<RankerScores>,
    /// Each other ranker against the baseline on every `ndcg@k`; empty without a baseline.
    pub comparisons: Vec<Comparison>,
    /// Every ranker at every NDCG cut-off without the judged pairs only it found
    /// (Zobel 1998): how fair the pool is to a ranker that was not in it.
    pub pool_bias: Vec<PoolBias>,
    /// The rankings files scored beside the study's lists, without importing them.
    pub rankings_files: Vec<FileLists>,
    /// Warnings to show beside the numbers: [`Caution::OfflineOnly`] first, then any
    /// about the baseline, few contexts, low judged@k coverage, pool bias or missing
    /// lists; in JSON `cautions` (words) and `caution_codes`.
    #[serde(flatten)]
    pub cautions: Cautions,
}

/// Says which gains scored the lists: the scale's own gains win over the gain rule.
fn describe_gains(own: &[Option<f64>], used: &[f64], kind: GainKind) -> String {
    let rule = match kind {
        GainKind::Exponential => "exponential (2^v − 1)",
        GainKind::Linear => "linear (v)",
    };
    let list = used
        .iter()
        .map(|g| g.to_string())
        .collect::<Vec<_>>()
        .join(", ");
    let set = own.iter().filter(|g| g.is_some()).count();
    if set == 0 {
        format!("{rule}: {list}")
    } else if set == own.len() {
        format!("the scale's own gains ({list}); the {rule} rule does not apply")
    } else {
        format!("the scale's own gains where set, else {rule}: {list}")
    }
}

/// The metric keys scored at the cut-offs `ks`, in the metric table's order.
pub fn metric_keys(ks: &[usize]) -> Vec<String> {
    metric_table::scored_metrics(ks)
        .into_iter()
        .map(Metric::key)
        .collect()
}

/// Why every figure is "–" when no context can be scored.
pub const NOTHING_TO_SCORE: &str = crate::analysis::cautions::NOTHING_TO_SCORE_WORDS;

/// Standard caution printed with every comparison.
pub const OFFLINE_CAUTION: &str = crate::analysis::cautions::OFFLINE_WORDS;

/// Why the scoreboard could not be built.
#[derive(Debug, thiserror::Error)]
pub enum ScoreError {
    /// No scale was asked for and the study has no scale to fall back on.
    #[error("the study has no scale with grades; import or give grades first")]
    NoScale,
    /// The scale asked for (named here) is not in the study.
    #[error("unknown scale \"{0}\"")]
    UnknownScale(String),
    /// The baseline asked for (named here) is not among the rankers.
    #[error("unknown ranker \"{0}\" for --baseline")]
    UnknownRanker(String),
    /// The reviewer whose grades were asked for (named here) is not in the study.
    #[error("unknown reviewer \"{0}\" for --grades")]
    UnknownReviewer(String),
    /// No cut-off was given, or one of them is 0.
    #[error("k must be at least 1")]
    BadK,
    /// RBP's persistence is not strictly between 0 and 1 (the value is given).
    #[error("the persistence must be above 0 and below 1, not {0}")]
    BadPersistence(f64),
}

/// Derives a seed per purpose from names, so adding a ranker leaves others' intervals alone.
fn seed_for(base: u64, parts: &[&str]) -> u64 {
    let uid = crate::core::digest::content_uid(parts);
    base ^ u64::from_str_radix(&uid[..16], 16).unwrap_or(0)
}

/// The scale to score, once the settings are checked.
fn checked_scale(snapshot: &Snapshot, settings: &ScoreSettings) -> Result<usize, ScoreError> {
    if settings.ks.is_empty() || settings.ks.contains(&0) {
        return Err(ScoreError::BadK);
    }
    if !(settings.persistence > 0.0 && settings.persistence < 1.0) {
        return Err(ScoreError::BadPersistence(settings.persistence));
    }
    if let GradeSource::Reviewer(r) = &settings.grades
        && snapshot.reviewer_index(r).is_none()
    {
        return Err(ScoreError::UnknownReviewer(r.clone()));
    }
    match &settings.scale {
        Some(name) => snapshot
            .scale_index(name)
            .ok_or_else(|| ScoreError::UnknownScale(name.clone())),
        None => snapshot.busiest_scale().ok_or(ScoreError::NoScale),
    }
}

/// What every comparison and interval is computed from: per ranker `[metric][context]`
/// values, the (candidate, metric) pairs compared with the baseline and their
/// per-context differences.
struct Paired {
    values: Vec<Vec<Vec<f64>>>,
    jobs: Vec<(usize, usize)>,
    diffs: Vec<Vec<f64>>,
}

fn paired(values: Vec<Vec<Vec<f64>>>, metrics: &[Metric], baseline: Option<usize>) -> Paired {
    let jobs: Vec<(usize, usize)> = match baseline {
        Some(b) => (0..values.len())
            .filter(|r| *r != b)
            .flat_map(|r| {
                metrics
                    .iter()
                    .enumerate()
                    .filter(|(_, m)| m.kind == MetricKind::Ndcg)
                    .map(move |(m, _)| (r, m))
            })
            .collect(),
        None => Vec::new(),
    };
    let diffs = jobs
        .iter()
        .map(|&(r, m)| {
            let b = baseline.expect("jobs exist only with a baseline");
            values[r][m]
                .iter()
                .zip(&values[b][m])
                .map(|(x, y)| x - y)
                .collect()
        })
        .collect();
    Paired {
        values,
        jobs,
        diffs,
    }
}

/// One ranker's summaries and per-context values; `intervals` holds its metrics'
/// intervals in the order of `keys`.
fn ranker_scores(
    snapshot: &Snapshot,
    r: usize,
    keys: &[String],
    intervals: &[stats::Interval],
    values: &[Vec<f64>],
    scored: &[usize],
) -> RankerScores {
    RankerScores {
        ranker: snapshot.rankers[r].clone(),
        metrics: keys
            .iter()
            .zip(intervals)
            .map(|(key, ci)| {
                let summary = MetricSummary {
                    mean: ci.mean,
                    ci_low: ci.low,
                    ci_high: ci.high,
                };
                (key.clone(), summary)
            })
            .collect(),
        per_context: scored
            .iter()
            .enumerate()
            .map(|(i, &c)| ContextScores {
                context_id: snapshot.contexts[c].id.clone(),
                values: keys
                    .iter()
                    .zip(values)
                    .map(|(key, v)| (key.clone(), v[i]))
                    .collect(),
            })
            .collect(),
        from_file: snapshot.ranker_file(r).map(str::to_string),
    }
}

/// A candidate against the baseline on one metric from its per-context differences `d`
/// and their bootstrap interval `ci`.
fn comparison(
    settings: &ScoreSettings,
    ranker: &str,
    baseline: &str,
    metric: &str,
    d: &[f64],
    ci: &stats::Interval,
) -> Comparison {
    let wins = d.iter().filter(|x| **x > 1e-9).count();
    let losses = d.iter().filter(|x| **x < -1e-9).count();
    let all_finite = d.iter().all(|x| x.is_finite());
    Comparison {
        ranker: ranker.to_string(),
        baseline: baseline.to_string(),
        metric: metric.to_string(),
        n: d.len(),
        diff: ci.mean,
        ci_low: ci.low,
        ci_high: ci.high,
        // No paired context, no test: a p-value without data would read as "no
        // difference found"; nor on a difference that is not a finite number.
        p_randomization: if d.is_empty() || !all_finite {
            f64::NAN
        } else {
            stats::randomization_test(
                d,
                settings.randomization_resamples,
                seed_for(settings.seed, &["randomization", ranker, metric]),
            )
        },
        p_t: if all_finite {
            stats::paired_t_test(d).p
        } else {
            f64::NAN
        },
        p_holm: f64::NAN,
        wins,
        ties: d.len() - wins - losses,
        losses,
        contexts_needed: stats::contexts_needed(ci.mean, stats::sample_sd(d)),
    }
}

/// Builds the scoreboard. Heavy statistics run on all cores.
pub fn build(snapshot: &Snapshot, settings: &ScoreSettings) -> Result<Scoreboard, ScoreError> {
    let scale_index = checked_scale(snapshot, settings)?;
    let (baseline, baseline_note) = resolve_baseline(snapshot, settings.baseline.as_deref())?;
    let scale = &snapshot.scales[scale_index];
    let judged = JudgedContexts::build(snapshot, scale_index, settings, &settings.grades);
    let metrics = metric_table::scored_metrics(&settings.ks);
    let keys: Vec<String> = metrics.iter().map(|m| m.key()).collect();
    let values = snapshot
        .lists
        .iter()
        .map(|lists| judged.ranker_values(lists, &metrics, &judged.scored))
        .collect();
    let paired = paired(values, &metrics, baseline);
    // One bootstrap over contexts serves every ranker, metric and paired difference.
    let series: Vec<&[f64]> = paired
        .values
        .iter()
        .flat_map(|per_metric| per_metric.iter().map(Vec::as_slice))
        .chain(paired.diffs.iter().map(Vec::as_slice))
        .collect();
    let intervals = stats::bootstrap_means(
        &series,
        settings.bootstrap_resamples,
        0.95,
        seed_for(settings.seed, &["bootstrap"]),
    );
    let (per_ranker, diff_intervals) = intervals.split_at(snapshot.rankers.len() * keys.len());
    let rankers: Vec<RankerScores> = per_ranker
        .chunks(keys.len().max(1))
        .zip(&paired.values)
        .enumerate()
        .map(|(r, (cis, v))| ranker_scores(snapshot, r, &keys, cis, v, &judged.scored))
        .collect();
    let pool_bias = pool_bias::compute(&pool_bias::Scored {
        snapshot,
        judged: &judged,
        means: means_at(&rankers, &settings.ks, MetricKind::Ndcg),
        judged_means: means_at(&rankers, &settings.ks, MetricKind::Judged),
        ks: &settings.ks,
    });
    let baseline_name = baseline.map(|b| snapshot.rankers[b].as_str());
    let mut comparisons: Vec<Comparison> = (paired.jobs.iter().zip(&paired.diffs))
        .zip(diff_intervals)
        .map(|((&(r, m), d), ci)| {
            let base = baseline_name.unwrap_or_default();
            comparison(settings, &snapshot.rankers[r], base, &keys[m], d, ci)
        })
        .collect();
    apply_holm(&mut comparisons);
    let cautions = board_cautions(
        snapshot,
        settings,
        &judged,
        (&rankers, &pool_bias),
        baseline_note,
    );
    let mut settings = settings.clone();
    settings.baseline = baseline_name.map(str::to_string);
    Ok(Scoreboard {
        gains_used: describe_gains(&scale.gains(), &judged.list_settings.gains, settings.gain),
        study: snapshot.name.clone(),
        scale: scale.name.clone(),
        settings,
        contexts_scored: judged.scored.len(),
        contexts_without_relevant: judged.without_relevant,
        contexts_without_grades: judged.without_grades,
        rankers,
        comparisons,
        pool_bias,
        rankings_files: snapshot.outside.files.clone(),
        cautions: Cautions(cautions),
    })
}

/// The scoreboard's cautions in order: offline only, the baseline, few contexts, low
/// coverage, missing lists, pool bias.
fn board_cautions(
    snapshot: &Snapshot,
    settings: &ScoreSettings,
    judged: &JudgedContexts,
    (rankers, pool_bias): (&[RankerScores], &[PoolBias]),
    baseline_note: Option<Caution>,
) -> Vec<Caution> {
    let mut cautions = vec![Caution::OfflineOnly];
    cautions.extend(baseline_note);
    match judged.scored.len() {
        0 => cautions.push(Caution::NothingToScore),
        n if n < defaults::FEW_CONTEXTS => cautions.push(Caution::FewContexts { scored: n }),
        _ => {}
    }
    cautions.extend(coverage::low_coverage(
        snapshot,
        rankers,
        &judged.scored,
        settings,
    ));
    cautions.extend(coverage::missing_lists(snapshot, &judged.scored));
    cautions.extend(pool_bias::cautions(pool_bias));
    cautions
}

/// Per ranker (study order), per metric of `metrics`: the mean over the scored contexts
/// with its bootstrap interval, drawn from the very resamples `build` draws (same seed,
/// same contexts), so a figure here equals the board's; with `bootstrap_resamples` 0,
/// means only. Also returns the number of contexts scored. For the curves and the
/// reviewer sensitivity, which need no tests, pool bias or other metrics.
pub fn metric_intervals(
    snapshot: &Snapshot,
    settings: &ScoreSettings,
    metrics: &[Metric],
) -> Result<(usize, Vec<Vec<stats::Interval>>), ScoreError> {
    let scale_index = checked_scale(snapshot, settings)?;
    let judged = JudgedContexts::build(snapshot, scale_index, settings, &settings.grades);
    let values: Vec<Vec<Vec<f64>>> = snapshot
        .lists
        .iter()
        .map(|lists| judged.ranker_values(lists, metrics, &judged.scored))
        .collect();
    let series: Vec<&[f64]> = values.iter().flatten().map(Vec::as_slice).collect();
    let intervals = stats::bootstrap_means(
        &series,
        settings.bootstrap_resamples,
        0.95,
        seed_for(settings.seed, &["bootstrap"]),
    );
    let per_ranker = intervals
        .chunks(metrics.len().max(1))
        .map(<[stats::Interval]>::to_vec)
        .collect();
    Ok((judged.scored.len(), per_ranker))
}

/// Every ranker's mean of `kind` at each cut-off of `ks` (NaN where not scored).
fn means_at(rankers: &[RankerScores], ks: &[usize], kind: MetricKind) -> Vec<Vec<f64>> {
    rankers
        .iter()
        .map(|r| {
            ks.iter()
                .map(|&k| {
                    r.metrics
                        .get(&Metric::at(kind, k).key())
                        .map_or(f64::NAN, |m| m.mean)
                })
                .collect()
        })
        .collect()
}

/// The baseline, by one rule everywhere (command line, Scoreboard, report): the ranker
/// asked for (an unknown name is an error); else the study's stored baseline when it
/// still names a ranker; else the first ranker in alphabetical order. A stored
/// baseline that no longer exists comes back with a caution saying what was used.
pub fn resolve_baseline(
    snapshot: &Snapshot,
    asked: Option<&str>,
) -> Result<(Option<usize>, Option<Caution>), ScoreError> {
    if let Some(name) = asked {
        return snapshot
            .ranker_index(name)
            .map(|i| (Some(i), None))
            .ok_or_else(|| ScoreError::UnknownRanker(name.to_string()));
    }
    // Rankers are sorted by name in the snapshot, so index 0 is the first alphabetically.
    let first = (!snapshot.rankers.is_empty()).then_some(0);
    match snapshot.stored_baseline.as_deref() {
        Some(stored) => match snapshot.ranker_index(stored) {
            Some(i) => Ok((Some(i), None)),
            None => Ok((
                first,
                first.map(|f| Caution::BaselineReplaced {
                    stored: stored.to_string(),
                    used: snapshot.rankers[f].clone(),
                }),
            )),
        },
        None => Ok((first, None)),
    }
}

/// Holm's correction across the candidates compared on one metric.
fn apply_holm(comparisons: &mut [Comparison]) {
    let metrics: std::collections::BTreeSet<String> =
        comparisons.iter().map(|c| c.metric.clone()).collect();
    for metric in metrics {
        // Only tests that ran are corrected; one without data keeps its undefined p.
        let idx: Vec<usize> = (0..comparisons.len())
            .filter(|i| {
                comparisons[*i].metric == metric && comparisons[*i].p_randomization.is_finite()
            })
            .collect();
        let p: Vec<f64> = idx
            .iter()
            .map(|i| comparisons[*i].p_randomization)
            .collect();
        for (i, adjusted) in idx.iter().zip(stats::holm(&p)) {
            comparisons[*i].p_holm = adjusted;
        }
    }
}
