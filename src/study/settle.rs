//! Settling disagreements: by hand, by a bulk rule, and undoing. Every change is a new
//! row in `settle_events` (the latest row per pair and scale is in force, a NULL value
//! undoes), so a settled grade keeps who settled it, when, how and why.

use std::collections::{HashMap, HashSet};

use rusqlite::{Transaction, params};

use super::import::content_uid;
use super::queues::PairId;
use super::{Result, Study, StudyError, time};
use crate::core::settle_rules::{SettleRule, spread};

/// `settle_events.method` of a settlement chosen by hand.
pub const BY_HAND: &str = "hand";
/// `settle_events.method` of an undo.
pub const UNDONE: &str = "undo";

/// One row of settle history.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SettleRecord {
    pub context_id: String,
    pub item_id: String,
    /// None = this row undid the settlement.
    pub value: Option<u8>,
    pub method: String,
    pub settled_by: String,
    pub settled_at: String,
    pub reason: String,
}

/// What one bulk settling wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct SettledBatch {
    /// Pairs settled.
    pub pairs: usize,
    /// The batch's time, shared by its rows; what `undo_batch` takes back.
    pub batch: String,
}

/// A reviewer's current grade with what the desk recorded beside it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct GradeDetail {
    pub reviewer: String,
    pub context_id: String,
    pub item_id: String,
    /// None = can't judge.
    pub value: Option<u8>,
    pub reason: String,
    pub seconds: Option<f64>,
    pub graded_at: String,
    pub note: String,
}

/// Inserts one settle event; the uid counts earlier events of the pair so that settling
/// the same level again after an undo (even in the same millisecond) is a new row.
fn insert_event(tx: &Transaction, scale: &str, record: &SettleRecord) -> Result<()> {
    let earlier: i64 = tx.query_row(
        "SELECT COUNT(*) FROM settle_events WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3",
        params![scale, record.context_id, record.item_id],
        |r| r.get(0),
    )?;
    let value_text = record.value.map(|v| v.to_string()).unwrap_or_default();
    let uid = content_uid(&[
        "settle",
        scale,
        &record.context_id,
        &record.item_id,
        &value_text,
        &record.method,
        &record.settled_by,
        &record.settled_at,
        &record.reason,
        &earlier.to_string(),
    ]);
    tx.execute(
        "INSERT INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
        params![
            uid,
            record.context_id,
            record.item_id,
            scale,
            record.value,
            record.method,
            record.settled_by,
            record.settled_at,
            record.reason
        ],
    )?;
    Ok(())
}

impl Study {
    fn check_writable_settler(&self, settled_by: &str) -> Result<()> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        if settled_by.trim().is_empty() {
            return Err(StudyError::input(
                "a settlement needs the name of who settled it",
            ));
        }
        Ok(())
    }

    /// Settles one pair at `value` by hand, with who and why. One transaction.
    pub fn settle_pair(
        &mut self,
        scale: &str,
        pair: &PairId,
        value: u8,
        settled_by: &str,
        reason: &str,
    ) -> Result<()> {
        self.check_writable_settler(settled_by)?;
        let levels: i64 = self.conn().query_row(
            "SELECT COUNT(*) FROM levels WHERE scale = ?1 AND value = ?2",
            params![scale, value],
            |r| r.get(0),
        )?;
        if levels == 0 {
            return Err(StudyError::input(format!(
                "scale \"{scale}\" has no level {value}"
            )));
        }
        let record = SettleRecord {
            context_id: pair.0.clone(),
            item_id: pair.1.clone(),
            value: Some(value),
            method: BY_HAND.into(),
            settled_by: settled_by.into(),
            settled_at: time::now(),
            reason: reason.into(),
        };
        let tx = self.begin_write()?;
        insert_event(&tx, scale, &record)?;
        tx.commit()?;
        Ok(())
    }

    /// Withdraws the settlement of a pair (a history row with no value).
    pub fn undo_settlement(
        &mut self,
        scale: &str,
        pair: &PairId,
        settled_by: &str,
        reason: &str,
    ) -> Result<()> {
        self.check_writable_settler(settled_by)?;
        let record = SettleRecord {
            context_id: pair.0.clone(),
            item_id: pair.1.clone(),
            value: None,
            method: UNDONE.into(),
            settled_by: settled_by.into(),
            settled_at: time::now(),
            reason: reason.into(),
        };
        let tx = self.begin_write()?;
        insert_event(&tx, scale, &record)?;
        tx.commit()?;
        Ok(())
    }

    /// Settles every disagreeing pair of `scale` that has no settlement in force by
    /// `rule`, in one transaction; returns how many pairs it settled.
    pub fn settle_by_rule(
        &mut self,
        scale: &str,
        rule: SettleRule,
        settled_by: &str,
    ) -> Result<usize> {
        Ok(self
            .settle_pairs_by_rule(scale, rule, settled_by, None)?
            .pairs)
    }

    /// Settles by `rule` the disagreeing, unsettled pairs of `scale` — only those in
    /// `only` when given (the pairs a filtered list shows) — in one transaction, as one
    /// batch that [`Study::undo_batch`] can take back in one step. Machine judges' grades
    /// count only when the study counts them in the panel.
    pub fn settle_pairs_by_rule(
        &mut self,
        scale: &str,
        rule: SettleRule,
        settled_by: &str,
        only: Option<&HashSet<PairId>>,
    ) -> Result<SettledBatch> {
        self.check_writable_settler(settled_by)?;
        let settled: HashSet<PairId> = self
            .settled_in_force(scale)?
            .into_iter()
            .map(|s| (s.context_id, s.item_id))
            .collect();
        let settings = self.settings()?;
        let machines: HashSet<String> = if settings.machines_in_panel {
            HashSet::new()
        } else {
            self.conn()
                .prepare("SELECT reviewer FROM reviewers WHERE kind = 'machine'")?
                .query_map([], |r| r.get(0))?
                .collect::<std::result::Result<_, _>>()?
        };
        let mut levels: HashMap<PairId, Vec<u8>> = HashMap::new();
        for g in self.grade_details(scale)? {
            if let Some(v) = g.value
                && !machines.contains(&g.reviewer)
            {
                levels.entry((g.context_id, g.item_id)).or_default().push(v);
            }
        }
        let mut todo: Vec<(PairId, u8)> = levels
            .into_iter()
            .filter(|(pair, l)| spread(l) > 0 && !settled.contains(pair))
            .filter(|(pair, _)| only.is_none_or(|o| o.contains(pair)))
            .filter_map(|(pair, l)| rule.apply(&l, settings.panel_rule).map(|v| (pair, v)))
            .collect();
        todo.sort();
        let at = time::now();
        let reason = format!("bulk rule: {}", rule.explain());
        let tx = self.begin_write()?;
        for (pair, value) in &todo {
            let record = SettleRecord {
                context_id: pair.0.clone(),
                item_id: pair.1.clone(),
                value: Some(*value),
                method: rule.method().into(),
                settled_by: settled_by.into(),
                settled_at: at.clone(),
                reason: reason.clone(),
            };
            insert_event(&tx, scale, &record)?;
        }
        tx.commit()?;
        Ok(SettledBatch {
            pairs: todo.len(),
            batch: at,
        })
    }

    /// Takes back a bulk batch in one step: every pair whose settlement in force is from
    /// the batch (settled at `batch`) gets an undo row (the history keeps both).
    /// Returns how many pairs were undone; pairs settled again since are left alone.
    pub fn undo_batch(&mut self, scale: &str, batch: &str, settled_by: &str) -> Result<usize> {
        self.check_writable_settler(settled_by)?;
        let pairs: Vec<PairId> = self
            .settled_in_force(scale)?
            .into_iter()
            .filter(|s| s.settled_at == batch && s.reason.starts_with("bulk rule:"))
            .map(|s| (s.context_id, s.item_id))
            .collect();
        let at = time::now();
        let tx = self.begin_write()?;
        for pair in &pairs {
            let record = SettleRecord {
                context_id: pair.0.clone(),
                item_id: pair.1.clone(),
                value: None,
                method: UNDONE.into(),
                settled_by: settled_by.into(),
                settled_at: at.clone(),
                reason: format!("batch of {batch} undone"),
            };
            insert_event(&tx, scale, &record)?;
        }
        tx.commit()?;
        Ok(pairs.len())
    }

    /// The settlements in force on a scale (latest row per pair, undone ones left out).
    pub fn settled_in_force(&self, scale: &str) -> Result<Vec<SettleRecord>> {
        Ok(self
            .settle_history(scale)?
            .into_iter()
            .rev()
            .fold(Vec::<SettleRecord>::new(), |mut latest, r| {
                if !latest
                    .iter()
                    .any(|l| l.context_id == r.context_id && l.item_id == r.item_id)
                {
                    latest.push(r);
                }
                latest
            })
            .into_iter()
            .filter(|r| r.value.is_some())
            .collect())
    }

    /// Every settle event of a scale, oldest first (per pair the last one is in force).
    pub fn settle_history(&self, scale: &str) -> Result<Vec<SettleRecord>> {
        let mut stmt = self.conn().prepare(
            "SELECT context_id, item_id, value, method, settled_by, settled_at, reason
             FROM settle_events WHERE scale = ?1 ORDER BY settled_at, id",
        )?;
        let rows = stmt
            .query_map([scale], |r| {
                Ok(SettleRecord {
                    context_id: r.get(0)?,
                    item_id: r.get(1)?,
                    value: r.get(2)?,
                    method: r.get(3)?,
                    settled_by: r.get(4)?,
                    settled_at: r.get(5)?,
                    reason: r.get(6)?,
                })
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Every reviewer's current grade on a scale with seconds, time and note.
    pub fn grade_details(&self, scale: &str) -> Result<Vec<GradeDetail>> {
        let mut stmt = self.conn().prepare(
            "SELECT e.reviewer, e.context_id, e.item_id, e.value, e.reason, e.seconds,
                    e.graded_at, e.note
             FROM current_grades c JOIN grade_events e ON e.id = c.event_id
             WHERE c.scale = ?1 ORDER BY e.context_id, e.item_id, e.reviewer",
        )?;
        let rows = stmt
            .query_map([scale], |r| {
                Ok(GradeDetail {
                    reviewer: r.get(0)?,
                    context_id: r.get(1)?,
                    item_id: r.get(2)?,
                    value: r.get(3)?,
                    reason: r.get(4)?,
                    seconds: r.get(5)?,
                    graded_at: r.get(6)?,
                    note: r.get(7)?,
                })
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// The pairs in `reviewer`'s stored queue on `scale` that they have not graded yet
    /// (a can't-judge counts as graded). Empty when they have no queue.
    pub fn pending_pairs(&self, reviewer: &str, scale: &str) -> Result<HashSet<PairId>> {
        let mut stmt = self.conn().prepare(
            "SELECT q.context_id, q.item_id FROM queue_entries q
             WHERE q.reviewer = ?1 AND q.scale = ?2 AND NOT EXISTS (
               SELECT 1 FROM current_grades c WHERE c.scale = q.scale
                 AND c.context_id = q.context_id AND c.item_id = q.item_id
                 AND c.reviewer = q.reviewer)",
        )?;
        let rows = stmt
            .query_map([reviewer, scale], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }
}
