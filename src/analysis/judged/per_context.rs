//! The one scoring path from grades to per-context metric values, shared by the
//! scoreboard (`scoreboard::build`) and the estimates from a machine judge
//! (`estimates::build`): the same judgments, segment, gains, cut-offs and unjudged rule.

use super::segment::Segment;
use super::settings::ScoreSettings;
use crate::analysis::judged::judgments::{self, ContextJudgments, GradeSource};
use crate::core::metric_table::{self, Metric};
use crate::core::metrics::{self, JudgedList, ListSettings};
use crate::study::snapshot::Snapshot;

/// Gains, top level, relevance threshold and unjudged rule of one scoring pass.
pub fn list_settings(snapshot: &Snapshot, scale: usize, settings: &ScoreSettings) -> ListSettings {
    let scale = &snapshot.scales[scale];
    ListSettings {
        gains: metrics::gain_table(scale.levels.len(), &scale.gains(), settings.gain),
        max_level: scale.max_level(),
        relevant_from: settings.relevant_from,
        unjudged: settings.unjudged,
        persistence: settings.persistence,
    }
}

/// One level per judged pair from `source`'s grades on `scale`, with the items outside
/// the segment kept judged but at level 0 (they carry no gain).
pub fn judgments(
    snapshot: &Snapshot,
    scale: usize,
    settings: &ScoreSettings,
    source: &GradeSource,
) -> ContextJudgments {
    let mut judged = judgments::resolve_with(snapshot, scale, source, settings.panel_grade);
    let carries_gain = |item: u32| -> bool {
        let is_new = snapshot.items[item as usize].is_new;
        match settings.segment {
            Segment::New => is_new,
            Segment::Established => !is_new,
            _ => true,
        }
    };
    for list in &mut judged {
        for (item, level) in list.iter_mut() {
            if !carries_gain(*item) {
                *level = 0;
            }
        }
    }
    judged
}

/// Whether context `c` counts under the segment (by context kind or label).
pub fn context_included(snapshot: &Snapshot, segment: &Segment, c: usize) -> bool {
    let info = &snapshot.contexts[c];
    match segment {
        Segment::Kind(kind) => info.kind == *kind,
        Segment::ContextSegment(s) => info.segment == *s,
        _ => true,
    }
}

/// The gains of every judged item of a context, highest first (the ideal ordering).
pub fn ideal_gains(judged: &[(u32, u8)], list_settings: &ListSettings) -> Vec<f64> {
    let mut gains: Vec<f64> = judged
        .iter()
        .map(|(_, level)| list_settings.gains[*level as usize])
        .collect();
    gains.sort_by(|a, b| b.total_cmp(a));
    gains
}

/// One ranker's values `[metric][context]` over `contexts`, metrics in the order of
/// `metrics`. `ideal[c]` holds the context's ideal gains. A context with no judged item
/// above level 0 gets NDCG 0 (its NDCG is undefined: the scoreboard never passes such a
/// context, the estimates count it as 0).
pub fn ranker_values(
    lists: &[Vec<u32>],
    judged: &ContextJudgments,
    ideal: &[Vec<f64>],
    list_settings: &ListSettings,
    metrics: &[Metric],
    contexts: &[usize],
) -> Vec<Vec<f64>> {
    let mut per_metric = vec![Vec::with_capacity(contexts.len()); metrics.len()];
    let mut levels: Vec<Option<u8>> = Vec::new();
    let mut scratch = Vec::new();
    let mut values: Vec<f64> = Vec::new();
    for &c in contexts {
        levels.clear();
        levels.extend(
            lists[c]
                .iter()
                .map(|item| judgments::level_of(&judged[c], *item)),
        );
        let list = JudgedList {
            levels: &levels,
            ideal_gains: &ideal[c],
            has_relevant: judged[c].iter().any(|(_, level)| *level > 0),
        };
        metric_table::score_list(&list, list_settings, metrics, &mut scratch, &mut values);
        for (column, value) in per_metric.iter_mut().zip(&values) {
            column.push(*value);
        }
    }
    per_metric
}
