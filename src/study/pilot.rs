//! The pilot: the same pairs graded under two or more scales, one scale's block after
//! another, so the Scale trial compares the scales on the same pairs and reviewers.
//!
//! Two ways to start one. [`Study::start_pilot`] takes each reviewer's queue on the
//! pilot's first scale as that reviewer's pilot pairs and gives every reviewer on the
//! panel the same pairs on every other pilot scale. [`Study::start_pilot_for`] asks for a
//! number of pairs and the people who grade them: that many pool pairs (never gold pairs;
//! those they have graded least on the pilot scales come first) go to the front of each
//! chosen reviewer's queue on every pilot scale, in a separate shuffle per reviewer and
//! scale. The pairs and the reviewers are kept in settings, so the blocks stay the same
//! after a restart and in a reviewer copy.
//!
//! Block order rotates with the reviewer's place (among the chosen reviewers, else on the
//! panel) so carry-over from one scale to the next does not always run the same way.

use std::collections::{HashMap, HashSet};

use rusqlite::params;

use super::queues::{PairId, text_hash};
use super::settings::keys;
use super::{Result, Study, StudyError};
use crate::core::pooling::shuffle;
use crate::core::stats::Rng;

/// The pilot block a reviewer grades now.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PilotBlock {
    /// The block's scale.
    pub scale: String,
    /// Its place in this reviewer's block order, from 1.
    pub number: usize,
    /// How many blocks (scales) the pilot has.
    pub blocks: usize,
    /// The block's pairs in the reviewer's queue order.
    pub pairs: Vec<PairId>,
}

/// One reviewer's part of the running pilot.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PilotShare {
    pub reviewer: String,
    /// Pairs on each pilot scale (0 while the reviewer's queue is not made yet).
    pub pairs: usize,
    /// Marks given on those pairs (grades and can't judge), over every block.
    pub graded: usize,
}

/// The running pilot as the Scales screen shows it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PilotStatus {
    /// The scales in block order.
    pub scales: Vec<String>,
    /// The number of pairs asked for, when the pilot was started with one.
    pub pairs: Option<usize>,
    pub shares: Vec<PilotShare>,
}

impl Study {
    /// The pilot's scales in block order (empty when no pilot runs).
    pub fn pilot_scales(&self) -> Result<Vec<String>> {
        self.json_setting(keys::PILOT_SCALES)
    }

    /// The pilot's pairs when it was started with a number of pairs (else empty).
    pub fn pilot_pairs(&self) -> Result<Vec<PairId>> {
        self.json_setting(keys::PILOT_PAIRS)
    }

    fn json_setting<T: serde::de::DeserializeOwned + Default>(&self, key: &str) -> Result<T> {
        Ok(self
            .setting(key)?
            .and_then(|s| serde_json::from_str(&s).ok())
            .unwrap_or_default())
    }

    /// The people on the panel (reviewers who are not machine judges), sorted.
    pub fn people(&self) -> Result<Vec<String>> {
        let mut stmt = self
            .conn()
            .prepare("SELECT reviewer FROM reviewers WHERE kind = 'person' ORDER BY reviewer")?;
        let people = stmt
            .query_map([], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(people)
    }

    /// How many pairs a pilot can draw on: the pool without the gold pairs.
    pub fn pilot_room(&self) -> Result<usize> {
        Ok(self.pilot_pool()?.len())
    }

    fn pilot_pool(&self) -> Result<Vec<PairId>> {
        let gold: HashSet<PairId> = {
            let mut stmt = self
                .conn()
                .prepare("SELECT context_id, item_id FROM gold_pairs")?;
            stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
                .collect::<std::result::Result<_, _>>()?
        };
        let mut pool = self.pool()?;
        pool.retain(|p| !gold.contains(p));
        Ok(pool)
    }

    fn refuse_pilot_scales(&self, scales: &[String]) -> Result<()> {
        let known = self.scale_names()?;
        let distinct: HashSet<&String> = scales.iter().collect();
        if distinct.len() < 2 || distinct.len() != scales.len() {
            return Err(StudyError::input(
                "a pilot needs two or more different scales",
            ));
        }
        if let Some(s) = scales.iter().find(|s| !known.contains(s)) {
            return Err(StudyError::input(format!("unknown scale \"{s}\"")));
        }
        Ok(())
    }

    /// Starts a pilot over two or more scales: from now on every reviewer grades the
    /// same pairs under each scale, one scale at a time (see [`Study::pilot_block`]).
    /// The pairs are each reviewer's queue on the first scale.
    pub fn start_pilot(&self, scales: &[String]) -> Result<()> {
        self.refuse_pilot_scales(scales)?;
        for key in [keys::PILOT_PAIRS, keys::PILOT_REVIEWERS] {
            self.conn()
                .execute("DELETE FROM settings WHERE key = ?1", [key])?;
        }
        let json = serde_json::to_string(scales).unwrap_or_default();
        self.set_setting(keys::PILOT_SCALES, &json)
    }

    /// Starts a pilot in which each of `reviewers` (people on the panel) grades the same
    /// `pairs` pool pairs on every one of `scales`, one scale's block at a time. Refuses
    /// machine judges, unknown reviewers and more pairs than [`Study::pilot_room`]. The
    /// reviewers' queues are made first where missing; the pilot pairs then lead them.
    pub fn start_pilot_for(
        &mut self,
        scales: &[String],
        pairs: usize,
        reviewers: &[String],
    ) -> Result<()> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        self.refuse_pilot_scales(scales)?;
        if pairs == 0 {
            return Err(StudyError::input("a pilot needs at least one pair"));
        }
        let chosen = self.pilot_people(reviewers)?;
        let (sample, seed) = self.draw_pilot_pairs(scales, pairs, &chosen)?;
        for r in &chosen {
            for s in scales {
                self.ensure_queue(r, s)?;
            }
        }
        let tx = self.begin_write()?;
        for r in &chosen {
            for s in scales {
                put_pilot_pairs_first(&tx, r, s, &sample, seed)?;
            }
        }
        store_pilot(&tx, scales, &sample, &chosen)?;
        tx.commit()?;
        Ok(())
    }

    /// The chosen reviewers, sorted and each once; refuses none, machine judges and
    /// names not on the panel.
    fn pilot_people(&self, reviewers: &[String]) -> Result<Vec<String>> {
        let people = self.people()?;
        let mut chosen: Vec<String> = reviewers.to_vec();
        chosen.sort();
        chosen.dedup();
        if chosen.is_empty() {
            return Err(StudyError::input(
                "choose at least one reviewer for the pilot",
            ));
        }
        if let Some(r) = chosen.iter().find(|r| !people.contains(r)) {
            let on_panel = self.panel()?.contains(r);
            return Err(StudyError::input(if on_panel {
                format!(
                    "{r} is a machine judge: machine judges are measured against the people, not piloted"
                )
            } else {
                format!("{r} is not on the panel")
            }));
        }
        Ok(chosen)
    }

    /// `pairs` pool pairs outside the gold pairs, those the chosen reviewers have marked
    /// least on the pilot scales first (ties in a shuffled order), with the pilot's seed.
    fn draw_pilot_pairs(
        &self,
        scales: &[String],
        pairs: usize,
        chosen: &[String],
    ) -> Result<(Vec<PairId>, u64)> {
        let mut sample = self.pilot_pool()?;
        if sample.len() < pairs {
            return Err(StudyError::input(format!(
                "a pilot of {pairs} pairs needs that many pool pairs outside the gold pairs; the pool has {}",
                sample.len()
            )));
        }
        // How many of the pilot's (reviewer, scale) blocks already hold a mark per pair.
        let mut marked: HashMap<PairId, usize> = HashMap::new();
        for r in chosen {
            for s in scales {
                for pair in self.reviewer_marks(r, s)?.into_keys() {
                    *marked.entry(pair).or_default() += 1;
                }
            }
        }
        let seed = self.queue_seed()? ^ text_hash("pilot");
        shuffle(&mut sample, &mut Rng::new(seed));
        // Stable: the least graded pairs first, ties in their shuffled order.
        sample.sort_by_key(|p| marked.get(p).copied().unwrap_or(0));
        sample.truncate(pairs);
        Ok((sample, seed))
    }

    /// Ends the pilot; queues and grades stay as they are.
    pub fn end_pilot(&self) -> Result<()> {
        for key in [keys::PILOT_SCALES, keys::PILOT_PAIRS, keys::PILOT_REVIEWERS] {
            self.conn()
                .execute("DELETE FROM settings WHERE key = ?1", [key])?;
        }
        Ok(())
    }

    /// The pilot scale `reviewer` should grade on now (see [`Study::pilot_position`]).
    pub fn pilot_block(&mut self, reviewer: &str) -> Result<Option<String>> {
        Ok(self.pilot_position(reviewer)?.map(|b| b.scale))
    }

    /// The pilot block `reviewer` should grade now: the first, in this reviewer's block
    /// order, with pilot pairs still open. None when no pilot runs, the reviewer is not
    /// one of its reviewers or every block is done. For a pilot started without a number
    /// of pairs this also makes sure the reviewer's queues hold the same pairs on every
    /// pilot scale.
    pub fn pilot_position(&mut self, reviewer: &str) -> Result<Option<PilotBlock>> {
        let scales = self.pilot_scales()?;
        if scales.is_empty() {
            return Ok(None);
        }
        let pairs = self.pilot_pairs()?;
        let place = if pairs.is_empty() {
            self.ensure_pilot_queues(reviewer, &scales)?;
            self.panel()?
                .iter()
                .position(|r| r == reviewer)
                .unwrap_or(0)
        } else {
            let chosen: Vec<String> = self.json_setting(keys::PILOT_REVIEWERS)?;
            match chosen.iter().position(|r| r == reviewer) {
                Some(place) => place,
                None => return Ok(None),
            }
        };
        let blocks = scales.len();
        for (n, scale) in block_order(scales, place).into_iter().enumerate() {
            let block = if pairs.is_empty() {
                self.queue(reviewer, &scale)?
            } else {
                block_pairs(&self.queue(reviewer, &scale)?, &pairs)
            };
            let marks = self.reviewer_marks(reviewer, &scale)?;
            if block.iter().any(|p| !marks.contains_key(p)) {
                return Ok(Some(PilotBlock {
                    scale,
                    number: n + 1,
                    blocks,
                    pairs: block,
                }));
            }
        }
        Ok(None)
    }

    /// Each pilot reviewer with their block order (the scales in the order they grade
    /// them, as [`Study::pilot_position`] walks them); empty when no pilot runs. Reads only.
    pub fn pilot_orders(&self) -> Result<Vec<(String, Vec<String>)>> {
        let scales = self.pilot_scales()?;
        if scales.is_empty() {
            return Ok(Vec::new());
        }
        let reviewers: Vec<String> = if self.pilot_pairs()?.is_empty() {
            self.panel()?
        } else {
            self.json_setting(keys::PILOT_REVIEWERS)?
        };
        Ok(reviewers
            .into_iter()
            .enumerate()
            .map(|(place, r)| (r, block_order(scales.clone(), place)))
            .collect())
    }

    /// Who grades the running pilot and how far each is; None when no pilot runs.
    /// Reads only: a reviewer whose queue is not made yet shows 0 pairs.
    pub fn pilot_status(&self) -> Result<Option<PilotStatus>> {
        let scales = self.pilot_scales()?;
        if scales.is_empty() {
            return Ok(None);
        }
        let pairs = self.pilot_pairs()?;
        let reviewers: Vec<String> = if pairs.is_empty() {
            self.people()?
        } else {
            self.json_setting(keys::PILOT_REVIEWERS)?
        };
        let mut shares = Vec::with_capacity(reviewers.len());
        for reviewer in reviewers {
            let mut per_scale = 0;
            let mut graded = 0;
            for (n, scale) in scales.iter().enumerate() {
                let queue = self.queue(&reviewer, scale)?;
                let block = if pairs.is_empty() {
                    queue
                } else {
                    block_pairs(&queue, &pairs)
                };
                if n == 0 {
                    per_scale = block.len();
                }
                let marks = self.reviewer_marks(&reviewer, scale)?;
                graded += block.iter().filter(|p| marks.contains_key(*p)).count();
            }
            shares.push(PilotShare {
                reviewer,
                pairs: per_scale,
                graded,
            });
        }
        Ok(Some(PilotStatus {
            scales,
            pairs: (!pairs.is_empty()).then_some(pairs.len()),
            shares,
        }))
    }

    /// The pilot's pair set is each reviewer's queue on the pilot's first scale (made
    /// for the whole panel at once, as `ensure_queue` does). Every other pilot scale gets
    /// the same pairs for every reviewer, each once, in its own shuffled order, so the
    /// pool stays covered and `ensure_queue` adds nothing there later. Pairs already
    /// queued on a scale before the pilot stay where they are.
    fn ensure_pilot_queues(&mut self, reviewer: &str, scales: &[String]) -> Result<()> {
        self.ensure_queue(reviewer, &scales[0])?;
        if self.is_read_only() {
            return Ok(());
        }
        let seed = self.queue_seed()?;
        let panel = self.panel()?;
        let tx = self.begin_write()?;
        for member in &panel {
            let pairs = queue_in(&tx, member, &scales[0])?;
            for (n, scale) in scales.iter().enumerate().skip(1) {
                let stored = queue_in(&tx, member, scale)?;
                let have: HashSet<&PairId> = stored.iter().collect();
                let mut seen = HashSet::new();
                let mut missing: Vec<PairId> = pairs
                    .iter()
                    .filter(|p| !have.contains(p) && seen.insert(*p))
                    .cloned()
                    .collect();
                if missing.is_empty() {
                    continue;
                }
                shuffle(&mut missing, &mut Rng::new(seed ^ (n as u64 + 1)));
                let mut insert = tx.prepare(
                    "INSERT INTO queue_entries(reviewer, scale, position, context_id, item_id)
                     VALUES (?1, ?2, ?3, ?4, ?5)",
                )?;
                for (k, (c, i)) in missing.iter().enumerate() {
                    let pos = (stored.len() + k) as i64;
                    insert.execute(params![member, scale, pos, c, i])?;
                }
            }
        }
        tx.commit()?;
        Ok(())
    }

    fn panel(&self) -> Result<Vec<String>> {
        let mut stmt = self
            .conn()
            .prepare("SELECT reviewer FROM reviewers ORDER BY reviewer")?;
        let panel = stmt
            .query_map([], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(panel)
    }
}

/// Rewrites one reviewer's queue on one scale with the pilot pairs first, in a shuffle of
/// their own for this reviewer and scale, and the rest of the queue after them unmoved.
fn put_pilot_pairs_first(
    tx: &rusqlite::Transaction,
    reviewer: &str,
    scale: &str,
    sample: &[PairId],
    seed: u64,
) -> Result<()> {
    let front: HashSet<&PairId> = sample.iter().collect();
    let before = queue_in(tx, reviewer, scale)?;
    let mut lead = sample.to_vec();
    shuffle(
        &mut lead,
        &mut Rng::new(seed ^ text_hash(reviewer) ^ text_hash(scale).rotate_left(17)),
    );
    tx.execute(
        "DELETE FROM queue_entries WHERE reviewer = ?1 AND scale = ?2",
        [reviewer, scale],
    )?;
    let mut insert = tx.prepare(
        "INSERT INTO queue_entries(reviewer, scale, position, context_id, item_id)
         VALUES (?1, ?2, ?3, ?4, ?5)",
    )?;
    let rest = before.iter().filter(|p| !front.contains(p));
    for (pos, (c, i)) in lead.iter().chain(rest).enumerate() {
        insert.execute(params![reviewer, scale, pos as i64, c, i])?;
    }
    Ok(())
}

/// Keeps the pilot's scales, pairs and reviewers in settings, so its blocks stay the same
/// after a restart and in a reviewer copy.
fn store_pilot(
    tx: &rusqlite::Transaction,
    scales: &[String],
    sample: &[PairId],
    chosen: &[String],
) -> Result<()> {
    let mut put = tx.prepare(
        "INSERT INTO settings(key, value) VALUES (?1, ?2)
         ON CONFLICT(key) DO UPDATE SET value = excluded.value",
    )?;
    // Lists of strings always serialise.
    let scales_json = serde_json::to_string(scales).unwrap_or_default();
    let pairs_json = serde_json::to_string(sample).unwrap_or_default();
    let reviewers_json = serde_json::to_string(chosen).unwrap_or_default();
    put.execute([keys::PILOT_SCALES, &scales_json])?;
    put.execute([keys::PILOT_PAIRS, &pairs_json])?;
    put.execute([keys::PILOT_REVIEWERS, &reviewers_json])?;
    Ok(())
}

/// The pilot pairs in the order `queue` holds them, each once; pilot pairs missing from
/// the queue (it was rewritten meanwhile) follow in the pilot's order.
fn block_pairs(queue: &[PairId], pilot: &[PairId]) -> Vec<PairId> {
    let wanted: HashSet<&PairId> = pilot.iter().collect();
    let mut seen = HashSet::new();
    let mut block: Vec<PairId> = queue
        .iter()
        .filter(|p| wanted.contains(p) && seen.insert(*p))
        .cloned()
        .collect();
    block.extend(pilot.iter().filter(|p| seen.insert(*p)).cloned());
    block
}

fn queue_in(tx: &rusqlite::Transaction, reviewer: &str, scale: &str) -> Result<Vec<PairId>> {
    let mut stmt = tx.prepare(
        "SELECT context_id, item_id FROM queue_entries
         WHERE reviewer = ?1 AND scale = ?2 ORDER BY position",
    )?;
    let rows = stmt
        .query_map([reviewer, scale], |r| Ok((r.get(0)?, r.get(1)?)))?
        .collect::<std::result::Result<_, _>>()?;
    Ok(rows)
}

/// The scales in the order the reviewer at `place` grades them: rotated by the place, so
/// carry-over from one scale to the next does not always run the same way.
fn block_order(mut scales: Vec<String>, place: usize) -> Vec<String> {
    let blocks = scales.len().max(1);
    scales.rotate_left(place % blocks);
    scales
}
