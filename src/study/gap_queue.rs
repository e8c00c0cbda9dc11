//! Putting chosen pairs at the front of a reviewer's queue ("judge the gaps" on the
//! Scoreboard). The rest of the queue keeps its order behind them, so nothing already
//! assigned is lost; positions stay 0..n as `ensure_queue` expects.

use std::collections::HashSet;

use rusqlite::params;

use super::queues::PairId;
use super::{Result, Study};

/// Rewrites `reviewer`'s queue on `scale` as `pairs` (in their order, each once) followed
/// by the other pairs of `before` (the stored queue) in their order, inside the caller's
/// write transaction. Returns how many of `pairs` were not in `before`.
pub(super) fn write_front(
    tx: &rusqlite::Transaction<'_>,
    reviewer: &str,
    scale: &str,
    before: &[PairId],
    pairs: &[PairId],
) -> Result<usize> {
    let front: Vec<&PairId> = {
        let mut seen = HashSet::new();
        pairs.iter().filter(|p| seen.insert(*p)).collect()
    };
    let front_set: HashSet<&PairId> = front.iter().copied().collect();
    let had: HashSet<&PairId> = before.iter().collect();
    let added = front.iter().filter(|p| !had.contains(*p)).count();
    tx.execute(
        "DELETE FROM queue_entries WHERE reviewer = ?1 AND scale = ?2",
        [reviewer, scale],
    )?;
    let mut insert = tx.prepare(
        "INSERT INTO queue_entries(reviewer, scale, position, context_id, item_id)
         VALUES (?1, ?2, ?3, ?4, ?5)",
    )?;
    let rest = before.iter().filter(|p| !front_set.contains(p));
    for (pos, (c, i)) in front.into_iter().chain(rest).enumerate() {
        insert.execute(params![reviewer, scale, pos as i64, c, i])?;
    }
    Ok(added)
}

impl Study {
    /// Makes `pairs` (in their order) the first pairs of `reviewer`'s queue on `scale`,
    /// followed by the reviewer's other queued pairs. The reviewer joins the panel if
    /// needed and gets their share of the pool first. One transaction; returns how many
    /// of `pairs` were not in the reviewer's queue before.
    pub fn queue_gaps_first(
        &mut self,
        reviewer: &str,
        scale: &str,
        pairs: &[PairId],
    ) -> Result<usize> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        self.add_reviewer(reviewer)?;
        let before = self.ensure_queue(reviewer, scale)?;
        let tx = self.begin_write()?;
        let added = write_front(&tx, reviewer, scale, &before, pairs)?;
        tx.commit()?;
        Ok(added)
    }
}
