//! The unjudged pairs in the rankers' top k, ordered so those that can move the comparison
//! most come first (see `core::gaps`). Shared by the Scoreboard's "judge the gaps" button
//! and its tests.

use crate::analysis::judged::judgments::{self, GradeSource};
use crate::core::gaps::order_gaps;
use crate::study::snapshot::Snapshot;

/// One pair to grade, by id, with why it is where it is.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct GapPair {
    /// Id of the context the item has no grade in.
    pub context_id: String,
    /// Id of the ungraded item.
    pub item_id: String,
    /// Highest minus lowest DCG rank weight 1/log2(rank + 1) the rankers give the item
    /// (0 outside the top k), in 0..1; 0 means every ranker places it alike.
    pub spread: f64,
    /// Best (smallest, 1-based) rank any ranker gives the item within the top k.
    pub best_rank: usize,
}

/// Unjudged pairs (by `grades` on `scale`) in any ranker's top `k`, most decisive first.
pub fn gap_pairs(
    snapshot: &Snapshot,
    scale: usize,
    grades: &GradeSource,
    k: usize,
) -> Vec<GapPair> {
    let judged = judgments::resolve(snapshot, scale, grades);
    let contexts: Vec<(u32, Vec<Vec<u32>>)> = (0..snapshot.contexts.len())
        .map(|c| {
            let lists = snapshot.lists.iter().map(|l| l[c].clone()).collect();
            (c as u32, lists)
        })
        .collect();
    order_gaps(&contexts, k, |c, i| {
        judgments::level_of(&judged[*c as usize], *i).is_some()
    })
    .into_iter()
    .map(|g| GapPair {
        context_id: snapshot.contexts[g.context as usize].id.clone(),
        item_id: snapshot.items[g.item as usize].id.clone(),
        spread: g.spread,
        best_rank: g.best_rank,
    })
    .collect()
}
