//! The pool and the reviewers' queues, and how far each reviewer is through theirs.
//!
//! The pool is the union of every ranker's top k per context (`pool_depth`, default 10).
//! Each reviewer's queue is a shuffled order of their share of it: an overlap share
//! (`overlap_share`, default 0.3) goes to every reviewer, the rest is dealt evenly, and
//! gold pairs are mixed in at `gold_rate` (default 0.05) when the study has any. Queues
//! are written to `queue_entries` once, with the seed in the setting `queue_seed`, so
//! the order is the same after a restart. Pairs that enter the pool later (new rankings)
//! are appended to the ends of the queues; nothing already queued moves.

use std::collections::{HashMap, HashSet};

use rusqlite::params;

use super::queue_shares::QueuePlan;
use super::{Result, Study, StudyError};
use crate::core::pooling::{depth_pool, shuffle};
use crate::core::stats::Rng;

/// The cards' old home, kept for the paths that still name it.
pub use super::cards::{ContextCard, ItemCard};
use super::settings::keys;
pub use super::settings::{DEFAULT_GOLD_RATE, DEFAULT_OVERLAP_SHARE, DEFAULT_POOL_DEPTH};

/// A (context_id, item_id) pair.
pub type PairId = (String, String);

/// A reviewer's current mark on a pair: a level, or can't judge (None).
pub type Mark = Option<u8>;

/// How far one reviewer is through their queue on a scale.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct QueueProgress {
    pub reviewer: String,
    pub done: u64,
    pub total: u64,
}

impl Study {
    /// Pool depth k (setting `pool_depth`, default 10).
    pub fn pool_depth(&self) -> Result<usize> {
        Ok(self
            .setting_or(keys::POOL_DEPTH, DEFAULT_POOL_DEPTH)?
            .max(1))
    }

    /// The pool at the study's depth: pairs ordered by context, then first appearance.
    pub fn pool(&self) -> Result<Vec<PairId>> {
        let depth = self.pool_depth()?;
        let mut stmt = self.conn().prepare(
            "SELECT ranker, context_id, item_id FROM ranked_items WHERE rank <= ?1
             ORDER BY ranker, context_id, rank",
        )?;
        let mut rows = stmt.query([depth as i64])?;
        let mut lists: Vec<(String, Vec<String>)> = Vec::new();
        let mut last_ranker = String::new();
        while let Some(r) = rows.next()? {
            let ranker: String = r.get(0)?;
            let context: String = r.get(1)?;
            let item: String = r.get(2)?;
            let same = ranker == last_ranker && lists.last().is_some_and(|l| l.0 == context);
            if !same {
                lists.push((context, Vec::new()));
            }
            lists.last_mut().expect("pushed above").1.push(item);
            last_ranker = ranker;
        }
        Ok(depth_pool(&lists, depth))
    }

    /// The queue seed (setting `queue_seed`), created from the clock on first use.
    pub fn queue_seed(&self) -> Result<u64> {
        if let Some(seed) = self.setting(keys::QUEUE_SEED)?.and_then(|s| s.parse().ok()) {
            return Ok(seed);
        }
        let seed = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos() as u64)
            .unwrap_or(1);
        self.set_setting(keys::QUEUE_SEED, &seed.to_string())?;
        Ok(seed)
    }

    /// A reviewer's stored queue on a scale, in order (empty when none is stored).
    pub fn queue(&self, reviewer: &str, scale: &str) -> Result<Vec<PairId>> {
        let mut stmt = self.conn().prepare(
            "SELECT context_id, item_id FROM queue_entries
             WHERE reviewer = ?1 AND scale = ?2 ORDER BY position",
        )?;
        let rows = stmt
            .query_map([reviewer, scale], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Makes sure `reviewer` (who must be on the panel) has a queue on `scale` and that
    /// every pool pair is queued somewhere; returns the reviewer's queue. One transaction.
    pub fn ensure_queue(&mut self, reviewer: &str, scale: &str) -> Result<Vec<PairId>> {
        if self.is_read_only() {
            let queue = self.queue(reviewer, scale)?;
            if queue.is_empty() {
                return Err(self.read_only_error());
            }
            return Ok(queue);
        }
        let plan = QueuePlan {
            pool: self.pool()?,
            seed: self.queue_seed()?,
            overlap: self.setting_or(keys::OVERLAP_SHARE, DEFAULT_OVERLAP_SHARE)?,
            gold_rate: self.setting_or(keys::GOLD_RATE, DEFAULT_GOLD_RATE)?,
            gold: self.gold_pairs(scale)?,
        };
        let panel = self.people_on_panel()?;
        // Machine judges grade outside the desk: they get no queue and no share of the pool.
        let Some(me) = panel.iter().position(|r| r == reviewer) else {
            return Err(StudyError::input(format!(
                "{reviewer} is not on the panel; add the reviewer first"
            )));
        };
        let mut queues: Vec<Vec<PairId>> = Vec::with_capacity(panel.len());
        for r in &panel {
            queues.push(self.queue(r, scale)?);
        }
        let stored: Vec<usize> = queues.iter().map(Vec::len).collect();
        if stored.iter().all(|&n| n == 0) {
            plan.first_split(scale, &mut queues);
        } else {
            if stored[me] == 0 {
                queues[me] = plan.latecomer_queue(&queues, scale, reviewer);
            }
            plan.share_fresh_pairs(&mut queues, &stored, me);
        }
        self.store_queue_tails(&panel, scale, &queues, &stored)?;
        Ok(std::mem::take(&mut queues[me]))
    }

    /// The people on the panel (not machine judges), in name order.
    fn people_on_panel(&self) -> Result<Vec<String>> {
        let mut stmt = self
            .conn()
            .prepare("SELECT reviewer FROM reviewers WHERE kind = 'person' ORDER BY reviewer")?;
        let panel = stmt
            .query_map([], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(panel)
    }

    /// Writes each queue's entries past the `stored` ones already in the file. One transaction.
    fn store_queue_tails(
        &mut self,
        panel: &[String],
        scale: &str,
        queues: &[Vec<PairId>],
        stored: &[usize],
    ) -> Result<()> {
        let tx = self.begin_write()?;
        {
            let mut insert = tx.prepare(
                "INSERT OR REPLACE INTO queue_entries(reviewer, scale, position, context_id, item_id)
                 VALUES (?1, ?2, ?3, ?4, ?5)",
            )?;
            for (r, queue) in queues.iter().enumerate() {
                for (pos, (c, i)) in queue.iter().enumerate().skip(stored[r]) {
                    insert.execute(params![panel[r], scale, pos as i64, c, i])?;
                }
            }
        }
        tx.commit()?;
        Ok(())
    }

    /// A reviewer's current marks on a scale, keyed by pair.
    pub fn reviewer_marks(&self, reviewer: &str, scale: &str) -> Result<HashMap<PairId, Mark>> {
        let mut stmt = self.conn().prepare(
            "SELECT c.context_id, c.item_id, e.value
             FROM current_grades c JOIN grade_events e ON e.id = c.event_id
             WHERE c.reviewer = ?1 AND c.scale = ?2",
        )?;
        let mut rows = stmt.query([reviewer, scale])?;
        let mut marks = HashMap::new();
        while let Some(r) = rows.next()? {
            marks.insert((r.get(0)?, r.get(1)?), r.get(2)?);
        }
        Ok(marks)
    }

    /// (grades given, seconds spent on them) by a reviewer on a scale, for the pace.
    pub fn reviewer_effort(&self, reviewer: &str, scale: &str) -> Result<(u64, f64)> {
        Ok(self.conn().query_row(
            "SELECT COUNT(*), COALESCE(SUM(seconds), 0.0) FROM grade_events
             WHERE reviewer = ?1 AND scale = ?2 AND action != 'undo' AND seconds > 0",
            [reviewer, scale],
            |r| Ok((r.get::<_, i64>(0)? as u64, r.get(1)?)),
        )?)
    }

    /// Done / total of every stored queue on a scale.
    pub fn queue_progress(&self, scale: &str) -> Result<Vec<QueueProgress>> {
        let mut stmt = self.conn().prepare(
            "SELECT q.reviewer, COUNT(c.event_id), COUNT(*) FROM queue_entries q
             LEFT JOIN current_grades c ON c.scale = q.scale AND c.context_id = q.context_id
               AND c.item_id = q.item_id AND c.reviewer = q.reviewer
             WHERE q.scale = ?1 GROUP BY q.reviewer ORDER BY q.reviewer",
        )?;
        let rows = stmt
            .query_map([scale], |r| {
                Ok(QueueProgress {
                    reviewer: r.get(0)?,
                    done: r.get::<_, i64>(1)? as u64,
                    total: r.get::<_, i64>(2)? as u64,
                })
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }
}

/// Puts one gold pair after every `1 / rate − 1` pairs, each gold pair at most once and
/// never one the queue already holds.
pub(super) fn mix_gold(
    pairs: Vec<PairId>,
    gold: &[(String, String, u8)],
    rate: f64,
    rng: &mut Rng,
) -> Vec<PairId> {
    if gold.is_empty() || !(rate > 0.0 && rate < 1.0) {
        return pairs;
    }
    let present: HashSet<&PairId> = pairs.iter().collect();
    let mut golds: Vec<PairId> = gold
        .iter()
        .map(|(c, i, _)| (c.clone(), i.clone()))
        .filter(|p| !present.contains(p))
        .collect();
    shuffle(&mut golds, rng);
    let every = ((1.0 / rate).round() as usize).saturating_sub(1).max(1);
    let mut golds = golds.into_iter();
    let mut out = Vec::with_capacity(pairs.len() + pairs.len() / every + 1);
    for (n, pair) in pairs.into_iter().enumerate() {
        out.push(pair);
        if (n + 1) % every == 0
            && let Some(g) = golds.next()
        {
            out.push(g);
        }
    }
    out
}

/// FNV-1a, to derive per-scale and per-reviewer seeds from the study seed.
pub(crate) fn text_hash(text: &str) -> u64 {
    text.bytes().fold(0xcbf2_9ce4_8422_2325, |h, b| {
        (h ^ b as u64).wrapping_mul(0x0100_0000_01b3)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pair(c: &str, i: &str) -> PairId {
        (c.to_string(), i.to_string())
    }

    #[test]
    fn gold_is_mixed_in_at_the_rate_and_never_twice() {
        let pairs: Vec<PairId> = (0..40).map(|n| pair("q", &n.to_string())).collect();
        let gold = vec![
            ("g".to_string(), "1".to_string(), 2),
            ("g".to_string(), "2".to_string(), 0),
            ("q".to_string(), "3".to_string(), 1),
        ];
        let mixed = mix_gold(pairs, &gold, 0.2, &mut Rng::new(1));
        // "q/3" is already queued, so two gold pairs are added, each after 4 pairs.
        assert_eq!(mixed.len(), 42);
        let golds: Vec<usize> = mixed
            .iter()
            .enumerate()
            .filter(|(_, p)| p.0 == "g")
            .map(|(n, _)| n)
            .collect();
        assert_eq!(golds, vec![4, 9]);
    }

    fn demo() -> (tempfile::TempDir, Study) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("demo.plumb");
        crate::demo::build_demo_study(&path).unwrap();
        let study = Study::open(&path).unwrap();
        (dir, study)
    }

    /// The demo without its gold pairs, whose mixing would blur the overlap counts.
    fn demo_without_gold() -> (tempfile::TempDir, Study) {
        let (dir, study) = demo();
        study.conn().execute("DELETE FROM gold_pairs", []).unwrap();
        (dir, study)
    }

    #[test]
    fn queues_share_the_overlap_cover_the_pool_and_keep_their_order() {
        let (_dir, mut study) = demo_without_gold();
        let pool = study.pool().unwrap();
        let distinct: HashSet<&PairId> = pool.iter().collect();
        assert_eq!(distinct.len(), pool.len(), "the pool has no duplicates");
        let amber = study.ensure_queue("rev-amber", "fit4").unwrap();
        let birch = study.queue("rev-birch", "fit4").unwrap();
        let cedar = study.queue("rev-cedar", "fit4").unwrap();
        let mut seen: HashMap<&PairId, usize> = HashMap::new();
        for p in amber.iter().chain(&birch).chain(&cedar) {
            *seen.entry(p).or_default() += 1;
        }
        assert_eq!(seen.len(), pool.len(), "every pool pair is queued");
        let shared = seen.values().filter(|&&n| n == 3).count();
        let expected = (pool.len() as f64 * DEFAULT_OVERLAP_SHARE).round() as usize;
        assert_eq!(shared, expected);
        assert_eq!(
            seen.values().filter(|&&n| n == 1).count(),
            pool.len() - shared
        );
        // The rest is spread evenly: queue lengths differ by at most one.
        let lens = [amber.len(), birch.len(), cedar.len()];
        assert!(
            lens.iter().max().unwrap() - lens.iter().min().unwrap() <= 1,
            "{lens:?}"
        );
        // Asking again (a restart) changes nothing.
        assert_eq!(study.ensure_queue("rev-amber", "fit4").unwrap(), amber);
        assert_eq!(study.ensure_queue("rev-birch", "fit4").unwrap(), birch);
        // The order does not follow the pool's (rank) order.
        let in_pool_order: Vec<&PairId> = pool.iter().filter(|p| amber.contains(p)).collect();
        assert_ne!(amber.iter().collect::<Vec<_>>(), in_pool_order);
    }

    #[test]
    fn a_late_reviewer_gets_the_shared_pairs_and_a_fair_share() {
        let (_dir, mut study) = demo_without_gold();
        let amber = study.ensure_queue("rev-amber", "fit4").unwrap();
        study.add_reviewer("rev-dune").unwrap();
        let dune = study.ensure_queue("rev-dune", "fit4").unwrap();
        let pool = study.pool().unwrap();
        let shared = (pool.len() as f64 * DEFAULT_OVERLAP_SHARE).round() as usize;
        let rest = pool.len() - shared;
        assert_eq!(dune.len(), shared + rest.div_ceil(4));
        let amber_set: HashSet<&PairId> = amber.iter().collect();
        assert!(dune.iter().filter(|p| amber_set.contains(p)).count() >= shared);
        assert_eq!(
            study.queue("rev-amber", "fit4").unwrap(),
            amber,
            "others keep theirs"
        );
    }

    #[test]
    fn gold_pairs_are_mixed_into_new_queues() {
        let (_dir, mut study) = demo();
        let pool = study.pool().unwrap();
        // Three gold pairs outside the pool: an item ranked by nobody for context q01.
        let ranked: HashSet<&str> = pool
            .iter()
            .filter(|p| p.0 == "q01")
            .map(|p| p.1.as_str())
            .collect();
        let outside: Vec<String> = study
            .item_cards()
            .unwrap()
            .into_iter()
            .map(|i| i.id)
            .filter(|id| !ranked.contains(id.as_str()))
            .take(3)
            .collect();
        for id in &outside {
            study
                .conn()
                .execute(
                    "INSERT INTO gold_pairs(context_id, item_id, scale, value) VALUES ('q01', ?1, 'useful2', 1)",
                    [id],
                )
                .unwrap();
        }
        study.set_setting("gold_rate", "0.1").unwrap();
        let queue = study.ensure_queue("rev-amber", "useful2").unwrap();
        let golds: Vec<usize> = queue
            .iter()
            .enumerate()
            .filter(|(_, p)| p.0 == "q01" && outside.contains(&p.1))
            .map(|(n, _)| n)
            .collect();
        assert_eq!(
            golds,
            vec![9, 19, 29],
            "one gold pair after every nine pairs"
        );
    }
}
