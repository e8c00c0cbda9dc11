//! The scoreboard's cautions about coverage and lists: which rankers are judged too
//! thinly, and which file rankers lack lists (typed values of `cautions::Caution`).

use super::{RankerScores, ScoreSettings};
use crate::analysis::cautions::Caution;
use crate::analysis::defaults;
use crate::core::metric_table::{Metric, MetricKind};
use crate::study::snapshot::Snapshot;

/// A caution per ranker and cut-off whose mean judged@k is below
/// [`defaults::COVERAGE_CAUTION`], saying what judged@k divides by when lists are short.
pub(super) fn low_coverage(
    snapshot: &Snapshot,
    rankers: &[RankerScores],
    scored_contexts: &[usize],
    settings: &ScoreSettings,
) -> Vec<Caution> {
    let mut out = Vec::new();
    for (ri, r) in rankers.iter().enumerate() {
        for &k in &settings.ks {
            let Some(j) = r.metrics.get(&Metric::at(MetricKind::Judged, k).key()) else {
                continue;
            };
            if j.mean.is_nan() || j.mean >= defaults::COVERAGE_CAUTION {
                continue;
            }
            let returned: Vec<usize> = scored_contexts
                .iter()
                .map(|&c| snapshot.lists[ri][c].len().min(k))
                .collect();
            let of = match (returned.first(), returned.iter().all(|&n| n == k)) {
                (_, true) | (None, _) => format!("its top {k}"),
                (Some(&n), false) if returned.iter().all(|&m| m == n) => {
                    format!("its {n} returned items (fewer than {k})")
                }
                _ => format!(
                    "the items it returned in its top {k} ({:.1} on average)",
                    returned.iter().sum::<usize>() as f64 / returned.len() as f64
                ),
            };
            out.push(Caution::LowCoverage {
                ranker: r.ranker.clone(),
                k,
                judged: j.mean,
                of,
                unjudged: settings.unjudged,
            });
        }
    }
    out
}

/// A caution per ranker from a file that has no list for some scored contexts: such a
/// context is scored as an empty list (every metric 0), which a reader must know.
pub(super) fn missing_lists(snapshot: &Snapshot, scored_contexts: &[usize]) -> Vec<Caution> {
    (0..snapshot.rankers.len())
        .filter_map(|r| {
            let file = snapshot.ranker_file(r)?;
            let missing = scored_contexts
                .iter()
                .filter(|&&c| snapshot.lists[r][c].is_empty())
                .count();
            (missing > 0).then(|| Caution::MissingLists {
                ranker: snapshot.rankers[r].clone(),
                file: file.to_string(),
                contexts: missing,
                scored: scored_contexts.len(),
            })
        })
        .collect()
}
