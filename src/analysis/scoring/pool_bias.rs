//! Is the pool fair to a ranker that was not in it? The leave-one-out test of Zobel
//! (1998), SIGIR, "How reliable are the results of large-scale information retrieval
//! experiments?": score each ranker again as if the judged pairs only it found in its
//! top k had never been judged, and see how far its score and the ranker order move
//! (Büttcher, Clarke, Yeung & Soboroff 2007, SIGIR, compare the orders by rank
//! correlation). A large drop means a newcomer that finds different items than the
//! pooled rankers is likely scored low.

use std::collections::HashSet;

use serde::Serialize;

use crate::analysis::judged::JudgedContexts;
use crate::analysis::judged::judgments;
use crate::analysis::judged::per_context;
use crate::core::metric_table::{self, Metric, MetricKind};
use crate::core::metrics::JudgedList;
use crate::core::stats;
use crate::study::snapshot::Snapshot;

/// One ranker at one NDCG cut-off, with and without the pairs only it found.
#[derive(Debug, Clone, Serialize)]
pub struct PoolBias {
    /// Name of the ranker.
    pub ranker: String,
    /// The file its lists came from for this run; None for the study's own.
    pub from_file: Option<String>,
    /// Metric key (`ndcg@k`).
    pub metric: String,
    /// Its mean NDCG@k as scored (over the scored contexts).
    pub mean: f64,
    /// Its mean NDCG@k with its unique pairs treated as never judged, over `contexts`;
    /// None when no context keeps a relevant item.
    pub mean_left_out: Option<f64>,
    /// `mean − mean_left_out`: how much the pairs only it found are worth to it.
    pub drop: Option<f64>,
    /// Scored contexts that still have a relevant item without those pairs.
    pub contexts: usize,
    /// Judged pairs in its top k that no other pooled ranker has in its top k.
    pub unique_pairs: usize,
    /// Its judged@k as scored.
    pub judged: f64,
    /// Its judged@k with its unique pairs counted as unjudged (over the scored contexts;
    /// NaN, printed as null, without any).
    pub judged_left_out: f64,
    /// Kendall's tau-b (Kendall 1945) between every ranker's mean NDCG@k and the same
    /// with this ranker's mean replaced by `mean_left_out`; None when undefined.
    pub kendall_tau_b: Option<f64>,
}

/// What the scoreboard already resolved, reused here.
pub(super) struct Scored<'a> {
    pub snapshot: &'a Snapshot,
    pub judged: &'a JudgedContexts,
    /// `means[ranker][i]`: mean NDCG at `ks[i]`.
    pub means: Vec<Vec<f64>>,
    /// `judged[ranker][i]`: mean judged@k at `ks[i]`.
    pub judged_means: Vec<Vec<f64>>,
    pub ks: &'a [usize],
}

/// Sums over the scored contexts of one ranker at one cut-off with its own pairs left out.
#[derive(Default)]
struct LeftOut {
    ndcg_sum: f64,
    /// Contexts that keep a relevant item without the ranker's own pairs.
    kept: usize,
    unique_pairs: usize,
    judged_sum: f64,
}

/// Every ranker's pool-bias figures, by ranker then cut-off. The "other" rankers are
/// the pooled ones (the study's lists as stored) under a different name: a ranker from
/// a file never counts as pool.
pub(super) fn compute(s: &Scored) -> Vec<PoolBias> {
    let snapshot = s.snapshot;
    let pooled: Vec<(usize, &[Vec<u32>])> = (0..snapshot.rankers.len())
        .filter_map(|r| snapshot.pooled_lists(r).map(|lists| (r, lists)))
        .collect();
    let mut out = Vec::new();
    let mut scratch = Scratch::default();
    for (r, name) in snapshot.rankers.iter().enumerate() {
        for (ki, &k) in s.ks.iter().enumerate() {
            let mut sums = LeftOut::default();
            for &c in &s.judged.scored {
                let others: HashSet<u32> = pooled
                    .iter()
                    .filter(|(p, _)| *p != r)
                    .flat_map(|(_, lists)| lists[c].iter().take(k).copied())
                    .collect();
                scratch.add_context(s, &snapshot.lists[r][c], c, k, &others, &mut sums);
            }
            out.push(row(s, (r, name), (ki, k), sums));
        }
    }
    out
}

/// Buffers reused across contexts.
#[derive(Default)]
struct Scratch {
    levels: Vec<Option<u8>>,
    kept_pairs: Vec<(u32, u8)>,
    metric: Vec<Option<u8>>,
    values: Vec<f64>,
}

impl Scratch {
    /// Scores one context's `list` at `k` as if the judged items of its top k that no
    /// other pooled ranker put in its top k (`others`) had never been judged.
    fn add_context(
        &mut self,
        s: &Scored,
        list: &[u32],
        c: usize,
        k: usize,
        others: &HashSet<u32>,
        sums: &mut LeftOut,
    ) {
        let judged = &s.judged.judged[c];
        let top = &list[..list.len().min(k)];
        let unique: HashSet<u32> = top
            .iter()
            .copied()
            .filter(|item| !others.contains(item) && judgments::level_of(judged, *item).is_some())
            .collect();
        sums.unique_pairs += unique.len();
        self.levels.clear();
        self.levels
            .extend(list.iter().map(|item| match unique.contains(item) {
                true => None,
                false => judgments::level_of(judged, *item),
            }));
        self.kept_pairs.clear();
        self.kept_pairs
            .extend(judged.iter().filter(|(item, _)| !unique.contains(item)));
        let ideal = per_context::ideal_gains(&self.kept_pairs, &s.judged.list_settings);
        let has_relevant = self.kept_pairs.iter().any(|(_, level)| *level > 0);
        let judged_list = JudgedList {
            levels: &self.levels,
            ideal_gains: &ideal,
            has_relevant,
        };
        let wanted = [
            Metric::at(MetricKind::Ndcg, k),
            Metric::at(MetricKind::Judged, k),
        ];
        metric_table::score_list(
            &judged_list,
            &s.judged.list_settings,
            &wanted,
            &mut self.metric,
            &mut self.values,
        );
        sums.judged_sum += self.values[1];
        if has_relevant {
            sums.ndcg_sum += self.values[0];
            sums.kept += 1;
        }
    }
}

/// One ranker's row at one cut-off from its sums.
fn row(s: &Scored, (r, name): (usize, &str), (ki, k): (usize, usize), sums: LeftOut) -> PoolBias {
    let mean = s.means[r][ki];
    let mean_left_out = (sums.kept > 0).then(|| sums.ndcg_sum / sums.kept as f64);
    let kendall_tau_b = mean_left_out.and_then(|left_out| {
        let before: Vec<f64> = s.means.iter().map(|m| m[ki]).collect();
        let mut after = before.clone();
        after[r] = left_out;
        let tau = stats::kendall_tau_b(&before, &after);
        tau.is_finite().then_some(tau)
    });
    let scored = s.judged.scored.len();
    PoolBias {
        ranker: name.to_string(),
        from_file: s.snapshot.ranker_file(r).map(str::to_string),
        metric: format!("ndcg@{k}"),
        mean,
        mean_left_out,
        drop: mean_left_out.map(|m| mean - m),
        contexts: sums.kept,
        unique_pairs: sums.unique_pairs,
        judged: s.judged_means[r][ki],
        judged_left_out: if scored == 0 {
            f64::NAN
        } else {
            sums.judged_sum / scored as f64
        },
        kendall_tau_b,
    }
}

/// Cautions for rankers from files whose judged@k falls below the lowest judged@k any
/// pooled ranker keeps with its own pairs left out: the pool knows less of their top k
/// than it would of a pooled ranker's, so their scores are likely biased low.
pub(super) fn cautions(rows: &[PoolBias]) -> Vec<crate::analysis::cautions::Caution> {
    let mut out = Vec::new();
    let metrics: Vec<&str> = {
        let mut m: Vec<&str> = rows.iter().map(|r| r.metric.as_str()).collect();
        m.dedup();
        m.sort();
        m.dedup();
        m
    };
    for metric in metrics {
        let floor = rows
            .iter()
            .filter(|r| r.metric == metric && r.from_file.is_none())
            .map(|r| r.judged_left_out)
            .min_by(f64::total_cmp);
        let Some(floor) = floor else { continue };
        let k = Metric::parse(metric).and_then(|m| m.cutoff).unwrap_or(0);
        for row in rows
            .iter()
            .filter(|r| r.metric == metric && r.from_file.is_some())
        {
            if row.judged < floor - 1e-12 {
                out.push(crate::analysis::cautions::Caution::PoolBiasLow {
                    ranker: row.ranker.clone(),
                    file: row.from_file.clone().unwrap_or_default(),
                    k,
                    judged: row.judged,
                    floor,
                });
            }
        }
    }
    out
}

/// The finding in plain words, for the text output, the report and the Scoreboard.
pub fn in_words(row: &PoolBias) -> String {
    let k = row.metric.trim_start_matches("ndcg@");
    let who = match &row.from_file {
        Some(file) => format!("{} (from {file})", row.ranker),
        None => row.ranker.clone(),
    };
    if row.unique_pairs == 0 {
        return format!(
            "{who} has no judged pair in its top {k} that the other pooled rankers lack; leaving its own pairs out changes nothing."
        );
    }
    let pairs = match row.unique_pairs {
        1 => "the one judged pair".to_string(),
        n => format!("the {n} judged pairs"),
    };
    match (row.mean_left_out, row.drop) {
        (Some(left_out), Some(drop)) => format!(
            "Without {pairs} only it found in its top {k}, {who} would score {left_out:.3} instead of {:.3} {} ({} {:.3}, over the {} contexts that keep a relevant item).",
            row.mean,
            row.metric,
            if drop >= 0.0 { "down" } else { "up" },
            drop.abs(),
            row.contexts
        ),
        _ => format!(
            "Without {pairs} only it found in its top {k}, no context keeps a relevant item for {who}: its {} rests on those pairs alone.",
            row.metric
        ),
    }
}
