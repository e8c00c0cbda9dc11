//! Estimates of every ranker's metrics for the whole study from a machine judge's grades
//! corrected by the human sample (prediction-powered inference, Angelopoulos et al.
//! 2023, Science 382; λ of PPI++, Angelopoulos, Duchi & Zrnic 2023; for ranking metrics
//! Oosterhuis et al. 2024, KDD). Shared by `score --machine` and the screens.
//!
//! Y is a context's metric on the panel grades, Ŷ the same metric on the machine judge's
//! grades alone, both from the scoreboard's scoring path (`per_context`). L is the drawn
//! contexts completely graded by people, U every other context with lists (in the
//! segment). A context with no relevant item under the grades used counts as NDCG 0.

use serde::Serialize;

use crate::analysis::cautions::{Caution, Cautions, EstimateCaution, EstimateCautions};
use crate::analysis::judged::JudgedContexts;
use crate::analysis::judged::judgments::GradeSource;
use crate::analysis::judged::per_context;
use crate::analysis::scoring::human_sample::{self, SampleStatus};
use crate::analysis::scoring::scoreboard::{Scoreboard, metric_keys};
use crate::core::ppi::{self, HumansNeeded, PpiEstimate};
use crate::study::sample::SampleDraw;
use crate::study::snapshot::Snapshot;

/// One estimate (of a ranker's metric, or of a difference against the baseline).
#[derive(Debug, Clone, Serialize)]
pub struct EstimateFigures {
    /// Upper end of the 95 % interval; the lower end and the estimate are beside it.
    pub ci_low: f64,
    /// Upper end of the 95 % interval.
    pub ci_high: f64,
    /// The PPI++ weight of the machine's values, in [0, 1].
    pub lambda: f64,
    /// n: complete sample contexts.
    pub n_human: usize,
    /// N: contexts with the machine's values only.
    pub n_machine: usize,
    /// Mean over the complete sample contexts, people's grades.
    pub human_only_mean: f64,
    /// Classical normal 95 % interval of that mean (standard deviation with divisor n).
    pub human_only_ci_low: f64,
    /// Upper end of the same interval.
    pub human_only_ci_high: f64,
    /// Mean over every context, machine's grades alone.
    pub machine_only_mean: f64,
    /// n × classical variance / combined variance (null when undefined).
    pub effective_human_contexts: f64,
    /// More sample contexts that bring the half-width to `--target-width`; 0 when it is
    /// met already; null without a target or when no number reaches it.
    pub humans_needed: Option<usize>,
    /// `humans_needed` in reviewer-hours at the panel's median seconds per grade.
    pub humans_needed_reviewer_hours: Option<f64>,
    /// Why `humans_needed` is null when a target was given.
    pub humans_needed_reason: Option<String>,
}

/// A ranker's metric estimated for the whole study.
#[derive(Debug, Clone, Serialize)]
pub struct Estimate {
    /// The ranker.
    pub ranker: String,
    /// Metric key (`ndcg@10`, …).
    pub metric: String,
    /// θ = mean_U(λŶ) + mean_L(Y − λŶ).
    pub estimate: f64,
    /// Interval and the figures beside it.
    #[serde(flatten)]
    pub figures: EstimateFigures,
}

/// A ranker's difference against the baseline, estimated from per-context differences.
#[derive(Debug, Clone, Serialize)]
pub struct EstimateComparison {
    /// The candidate ranker.
    pub ranker: String,
    /// The baseline ranker.
    pub baseline: String,
    /// Metric key (an `ndcg@k`).
    pub metric: String,
    /// Estimated mean of candidate − baseline.
    pub diff: f64,
    /// Interval and the figures beside it.
    #[serde(flatten)]
    pub figures: EstimateFigures,
}

/// Everything `score --machine` adds.
#[derive(Debug, Clone, Serialize)]
pub struct Estimates {
    /// The machine judge.
    pub machine: String,
    /// The half-width asked for, if any.
    pub target_width: Option<f64>,
    /// The human sample on the scored scale.
    pub sample: SampleStatus,
    /// Every ranker × metric.
    pub estimates: Vec<Estimate>,
    /// Every other ranker against the baseline on every `ndcg@k`.
    pub estimate_comparisons: Vec<EstimateComparison>,
    /// Why there are no estimates (fewer than 2 complete sample contexts), if so.
    pub estimate_reason: Option<String>,
    /// Cautions to show beside the estimates; in JSON `estimate_cautions` (words) and
    /// `estimate_caution_codes`.
    #[serde(flatten)]
    pub estimate_cautions: EstimateCautions,
}

/// Why estimates cannot be made (bad input: the study stays as it is).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EstimateError {
    /// No reviewer has this name.
    #[error("no reviewer is called \"{0}\"; --machine names a machine judge of the study")]
    UnknownMachine(String),
    /// The name is a person's.
    #[error("{0} is a person, not a machine judge; --machine names a reviewer of kind machine")]
    NotMachine(String),
    /// `sample` never ran.
    #[error(
        "no human sample is drawn yet; draw one with `plumbline sample STUDY --contexts N` and have people grade it"
    )]
    NoDraw,
    /// The machine judge has no grade on the scale.
    #[error("the machine judge {0} graded no pair on scale {1}")]
    NoGrades(String, String),
    /// The target width is not a number above 0.
    #[error("--target-width must be a number above 0")]
    BadWidth,
}

/// What is asked for besides the scoreboard's settings.
#[derive(Debug, Clone)]
pub struct EstimateRequest {
    /// The machine judge's name.
    pub machine: String,
    /// Target half-width for `humans_needed`.
    pub target_width: Option<f64>,
}

/// The sets and values behind every estimate.
struct Sets {
    /// Complete drawn contexts in the segment, in draw order.
    labelled: Vec<usize>,
    /// Every other context with lists in the segment.
    unlabelled: Vec<usize>,
    /// Drawn contexts in the segment that are not complete.
    pending: usize,
}

fn sets(snapshot: &Snapshot, board: &Scoreboard, draws: &[SampleDraw], scale: usize) -> Sets {
    let graded = human_sample::graded_by_people(snapshot, scale);
    let in_population = |c: usize| {
        per_context::context_included(snapshot, &board.settings.segment, c)
            && snapshot.lists.iter().any(|l| !l[c].is_empty())
    };
    let drawn: Vec<usize> = human_sample::drawn_indices(snapshot, draws)
        .into_iter()
        .filter(|&c| in_population(c))
        .collect();
    let (labelled, pending): (Vec<usize>, Vec<usize>) = drawn
        .iter()
        .partition(|&&c| human_sample::is_complete(snapshot, &graded, c));
    let in_l: std::collections::HashSet<usize> = labelled.iter().copied().collect();
    let unlabelled = (0..snapshot.contexts.len())
        .filter(|&c| in_population(c) && !in_l.contains(&c))
        .collect();
    Sets {
        labelled,
        unlabelled,
        pending: pending.len(),
    }
}

/// Checks the request against the study: a machine judge with grades, a drawn sample.
fn check(
    snapshot: &Snapshot,
    draws: &[SampleDraw],
    request: &EstimateRequest,
    scale: usize,
) -> Result<usize, EstimateError> {
    let m = snapshot
        .reviewer_index(&request.machine)
        .ok_or_else(|| EstimateError::UnknownMachine(request.machine.clone()))?;
    if !snapshot.is_machine(m) {
        return Err(EstimateError::NotMachine(request.machine.clone()));
    }
    if request
        .target_width
        .is_some_and(|w| !(w > 0.0 && w.is_finite()))
    {
        return Err(EstimateError::BadWidth);
    }
    if draws.is_empty() {
        return Err(EstimateError::NoDraw);
    }
    if !snapshot.grades_of(m).any(|g| g.scale as usize == scale) {
        return Err(EstimateError::NoGrades(
            request.machine.clone(),
            snapshot.scales[scale].name.clone(),
        ));
    }
    Ok(m)
}

/// Per ranker, per metric: (Y over L, Ŷ over L, Ŷ over U).
type Values = Vec<Vec<(Vec<f64>, Vec<f64>, Vec<f64>)>>;

fn values(
    snapshot: &Snapshot,
    board: &Scoreboard,
    scale: usize,
    sets: &Sets,
    machine: &str,
) -> Values {
    let settings = &board.settings;
    let people = JudgedContexts::build(snapshot, scale, settings, &settings.grades);
    let machine = GradeSource::Reviewer(machine.to_string());
    let machine = JudgedContexts::build(snapshot, scale, settings, &machine);
    let ks = &crate::core::metric_table::scored_metrics(&settings.ks);
    snapshot
        .lists
        .iter()
        .map(|lists| {
            let y = people.ranker_values(lists, ks, &sets.labelled);
            let yl = machine.ranker_values(lists, ks, &sets.labelled);
            let yu = machine.ranker_values(lists, ks, &sets.unlabelled);
            y.into_iter()
                .zip(yl)
                .zip(yu)
                .map(|((a, b), c)| (a, b, c))
                .collect()
        })
        .collect()
}

/// Builds the estimates beside a scoreboard built with the same settings (its scale and
/// resolved baseline are used). `draws` is the study's sample in draw order.
pub fn build(
    snapshot: &Snapshot,
    board: &Scoreboard,
    draws: &[SampleDraw],
    request: &EstimateRequest,
) -> Result<Estimates, EstimateError> {
    let scale = snapshot.scale_index(&board.scale).unwrap_or(0);
    check(snapshot, draws, request, scale)?;
    let sets = sets(snapshot, board, draws, scale);
    let hours = HoursPerContext::of(snapshot, scale, &sets.unlabelled);
    let mut out = Estimates {
        machine: request.machine.clone(),
        target_width: request.target_width,
        sample: human_sample::status(snapshot, draws, scale),
        estimates: Vec::new(),
        estimate_comparisons: Vec::new(),
        estimate_reason: None,
        estimate_cautions: EstimateCautions::default(),
    };
    let n = sets.labelled.len();
    if n < ppi::MIN_HUMAN {
        out.estimate_reason = Some(format!(
            "No estimate: {}. Grade the drawn contexts completely (every pair of every ranker's top {}), or draw more with `plumbline sample`.",
            ppi::PpiError::TooFewHuman(n),
            snapshot.pool_depth
        ));
        out.estimate_cautions = cautions(snapshot, board, &sets, &out, &request.machine);
        return Ok(out);
    }
    let values = values(snapshot, board, scale, &sets, &request.machine);
    let keys = metric_keys(&board.settings.ks);
    let figures = |y: &[f64], yl: &[f64], yu: &[f64]| -> Option<(f64, EstimateFigures)> {
        let e = ppi::estimate(y, yl, yu).ok()?;
        Some((e.estimate, figures_of(&e, request.target_width, &hours)))
    };
    for (r, per_metric) in values.iter().enumerate() {
        for (m, (y, yl, yu)) in per_metric.iter().enumerate() {
            if let Some((estimate, figures)) = figures(y, yl, yu) {
                out.estimates.push(Estimate {
                    ranker: snapshot.rankers[r].clone(),
                    metric: keys[m].clone(),
                    estimate,
                    figures,
                });
            }
        }
    }
    if let Some(b) = board
        .settings
        .baseline
        .as_deref()
        .and_then(|b| snapshot.ranker_index(b))
    {
        out.estimate_comparisons = comparisons(snapshot, &values, &keys, b, &figures);
    }
    out.estimate_cautions = cautions(snapshot, board, &sets, &out, &request.machine);
    Ok(out)
}

/// An estimate and its figures from (Y over L, Ŷ over L, Ŷ over U), if one can be made.
type FiguresOf<'a> = dyn Fn(&[f64], &[f64], &[f64]) -> Option<(f64, EstimateFigures)> + 'a;

/// Every other ranker against the baseline `b` on every `ndcg@k`, from the per-context
/// differences of Y and of Ŷ.
fn comparisons(
    snapshot: &Snapshot,
    values: &Values,
    keys: &[String],
    b: usize,
    figures: &FiguresOf<'_>,
) -> Vec<EstimateComparison> {
    let diff = |a: &[f64], z: &[f64]| -> Vec<f64> { a.iter().zip(z).map(|(x, y)| x - y).collect() };
    let mut out = Vec::new();
    for (r, per_metric) in values.iter().enumerate().filter(|(r, _)| *r != b) {
        for (m, key) in keys
            .iter()
            .enumerate()
            .filter(|(_, k)| k.starts_with("ndcg@"))
        {
            let (y, yl, yu) = &per_metric[m];
            let (by, byl, byu) = &values[b][m];
            if let Some((d, figures)) = figures(&diff(y, by), &diff(yl, byl), &diff(yu, byu)) {
                out.push(EstimateComparison {
                    ranker: snapshot.rankers[r].clone(),
                    baseline: snapshot.rankers[b].clone(),
                    metric: key.clone(),
                    diff: d,
                    figures,
                });
            }
        }
    }
    out
}

/// Reviewer-hours one more sample context costs: the mean number of pool pairs per
/// unlabelled context that no person has graded, times the panel's median seconds per
/// grade (people's grades on the scale with a time).
struct HoursPerContext(Option<f64>);

impl HoursPerContext {
    fn of(snapshot: &Snapshot, scale: usize, unlabelled: &[usize]) -> HoursPerContext {
        let mut seconds: Vec<f64> = snapshot
            .grades
            .iter()
            .filter(|g| g.scale as usize == scale && !snapshot.is_machine(g.reviewer as usize))
            .filter_map(|g| g.seconds)
            .filter(|s| *s > 0.0 && s.is_finite())
            .collect();
        if seconds.is_empty() || unlabelled.is_empty() {
            return HoursPerContext(None);
        }
        seconds.sort_by(f64::total_cmp);
        let median = crate::core::stats::quantile_sorted(&seconds, 0.5);
        let graded = human_sample::graded_by_people(snapshot, scale);
        let pairs: usize = unlabelled
            .iter()
            .map(|&c| {
                human_sample::pool_items(snapshot, c)
                    .iter()
                    .filter(|&&i| !graded.contains(&(c as u32, i)))
                    .count()
            })
            .sum();
        let per_context = pairs as f64 / unlabelled.len() as f64;
        HoursPerContext(Some(per_context * median / 3600.0))
    }
}

fn figures_of(e: &PpiEstimate, target: Option<f64>, hours: &HoursPerContext) -> EstimateFigures {
    let needed = target.map(|w| ppi::humans_needed(e, w));
    let (humans_needed, humans_needed_reason) = match needed {
        Some(HumansNeeded::More(m)) => (Some(m), None),
        Some(HumansNeeded::Impossible(why)) => (None, Some(why)),
        None => (None, None),
    };
    EstimateFigures {
        ci_low: e.ci_low,
        ci_high: e.ci_high,
        lambda: e.lambda,
        n_human: e.n_human,
        n_machine: e.n_machine,
        human_only_mean: e.human_only_mean,
        human_only_ci_low: e.human_only_ci_low,
        human_only_ci_high: e.human_only_ci_high,
        machine_only_mean: e.machine_only_mean,
        effective_human_contexts: e.effective_human_contexts,
        humans_needed_reviewer_hours: humans_needed.and_then(|m| hours.0.map(|h| m as f64 * h)),
        humans_needed,
        humans_needed_reason,
    }
}

/// λ below this earns a "the machine adds little" caution.
pub const SMALL_LAMBDA: f64 = 0.1;

/// Fewer complete sample contexts than this earn the "rough normal approximation" caution.
pub const FEW_HUMAN: usize = 30;

fn cautions(
    snapshot: &Snapshot,
    board: &Scoreboard,
    sets: &Sets,
    out: &Estimates,
    machine: &str,
) -> EstimateCautions {
    use EstimateCaution::*;
    let mut c = vec![
        UntunedJudge {
            machine: machine.to_string(),
        },
        NoRelevantCountsZero,
    ];
    if sets.pending > 0 {
        c.push(SamplePending {
            pending: sets.pending,
        });
    }
    let n = sets.labelled.len();
    if (ppi::MIN_HUMAN..FEW_HUMAN).contains(&n) {
        c.push(FewSampleContexts {
            complete: n,
            few: FEW_HUMAN,
        });
    }
    if n >= ppi::MIN_HUMAN && sets.unlabelled.is_empty() {
        c.push(WholeStudySampled);
    }
    let small: Vec<(String, String)> = out
        .estimates
        .iter()
        .filter(|e| e.metric.starts_with("ndcg@") && e.figures.n_machine > 0)
        .filter(|e| e.figures.lambda < SMALL_LAMBDA)
        .map(|e| (e.ranker.clone(), e.metric.clone()))
        .collect();
    if !small.is_empty() {
        c.push(SmallLambda {
            estimates: small,
            below: SMALL_LAMBDA,
        });
    }
    if let Some(&k) = board
        .settings
        .ks
        .iter()
        .filter(|&&k| k > snapshot.pool_depth)
        .min()
    {
        c.push(CutoffAbovePoolDepth {
            depth: snapshot.pool_depth,
            k,
        });
    }
    let (graded, pool) = machine_coverage(snapshot, board, sets, machine);
    if graded < pool {
        c.push(MachineMissedPairs {
            machine: machine.to_string(),
            graded,
            pool,
        });
    }
    if snapshot.machines_in_panel {
        c.push(MachinesInPanel);
    }
    EstimateCautions(Cautions(c.into_iter().map(Caution::Estimate).collect()))
}

/// (pool pairs the machine judge graded, pool pairs) over L ∪ U on the scored scale.
fn machine_coverage(
    snapshot: &Snapshot,
    board: &Scoreboard,
    sets: &Sets,
    machine: &str,
) -> (usize, usize) {
    let (Some(m), Some(scale)) = (
        snapshot.reviewer_index(machine),
        snapshot.scale_index(&board.scale),
    ) else {
        return (0, 0);
    };
    let graded: std::collections::HashSet<(u32, u32)> = snapshot
        .grades_of(m)
        .filter(|g| g.scale as usize == scale)
        .map(|g| (g.context, g.item))
        .collect();
    let mut counts = (0, 0);
    for &c in sets.labelled.iter().chain(&sets.unlabelled) {
        for i in human_sample::pool_items(snapshot, c) {
            counts.1 += 1;
            counts.0 += usize::from(graded.contains(&(c as u32, i)));
        }
    }
    counts
}
