//! The human sample's standing: which drawn contexts are completely graded by people on
//! a scale (every pair of every ranker's top d, d = the study's pool depth; a can't-judge
//! counts as graded) and which are pending. Shared by Home, `status` and the estimates.

use std::collections::{HashMap, HashSet};

use serde::Serialize;

use crate::study::sample::SampleDraw;
use crate::study::snapshot::Snapshot;

/// The sample as `status`, Home and `score --machine` report it.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct SampleStatus {
    /// The seed of each run of `sample`, in order.
    pub seeds: Vec<u64>,
    /// Contexts drawn.
    pub drawn: usize,
    /// Drawn contexts completely graded by people on the scale.
    pub complete: usize,
    /// Drawn contexts not completely graded yet.
    pub pending: usize,
    /// The drawn contexts in draw order.
    pub context_ids: Vec<String>,
}

/// Pairs (context, item) some person (not a machine judge) graded on `scale`.
pub fn graded_by_people(snapshot: &Snapshot, scale: usize) -> HashSet<(u32, u32)> {
    snapshot
        .grades
        .iter()
        .filter(|g| g.scale as usize == scale && !snapshot.is_machine(g.reviewer as usize))
        .map(|g| (g.context, g.item))
        .collect()
}

/// The pool pairs of context `c`: every ranker's top d, each item once.
pub fn pool_items(snapshot: &Snapshot, c: usize) -> Vec<u32> {
    let mut items: Vec<u32> = Vec::new();
    for lists in &snapshot.lists {
        for &item in lists[c].iter().take(snapshot.pool_depth) {
            if !items.contains(&item) {
                items.push(item);
            }
        }
    }
    items
}

/// Whether every pool pair of context `c` is in `graded`.
pub fn is_complete(snapshot: &Snapshot, graded: &HashSet<(u32, u32)>, c: usize) -> bool {
    pool_items(snapshot, c)
        .iter()
        .all(|&i| graded.contains(&(c as u32, i)))
}

/// The drawn contexts as snapshot indices, in draw order (draws of contexts the study no
/// longer has are skipped).
pub fn drawn_indices(snapshot: &Snapshot, draws: &[SampleDraw]) -> Vec<usize> {
    let index: HashMap<&str, usize> = snapshot
        .contexts
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    draws
        .iter()
        .filter_map(|d| index.get(d.context_id.as_str()).copied())
        .collect()
}

/// The sample's standing on `scale`.
pub fn status(snapshot: &Snapshot, draws: &[SampleDraw], scale: usize) -> SampleStatus {
    let graded = graded_by_people(snapshot, scale);
    let drawn = drawn_indices(snapshot, draws);
    let complete = drawn
        .iter()
        .filter(|&&c| is_complete(snapshot, &graded, c))
        .count();
    let mut seeds: Vec<u64> = Vec::new();
    let mut last_draw = 0;
    for d in draws {
        if d.draw != last_draw {
            seeds.push(d.seed);
            last_draw = d.draw;
        }
    }
    SampleStatus {
        seeds,
        drawn: draws.len(),
        complete,
        pending: draws.len() - complete,
        context_ids: draws.iter().map(|d| d.context_id.clone()).collect(),
    }
}

/// One line for Home and `status`: drawn, complete, pending.
pub fn status_line(status: &SampleStatus, scale: &str) -> String {
    format!(
        "Human sample on {scale}: {} contexts drawn, {} complete, {} pending",
        status.drawn, status.complete, status.pending
    )
}
