//! The human sample: contexts drawn uniformly at random without replacement by
//! `plumbline sample`, recorded one row per context (`sample_draws`: context, position
//! in draw order, run of `sample`, seed, time), and their ungraded pool pairs put at the
//! front of people's queues. Only these draws make the human sample; a context graded
//! by choice is not random and never counts as one.

use std::collections::{HashMap, HashSet};

use rusqlite::params;

use super::gap_queue::write_front;
use super::queues::PairId;
use super::{Result, Study, StudyError, time};
use crate::core::pooling::draw_without_replacement;

/// One drawn context.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct SampleDraw {
    /// The context drawn.
    pub context_id: String,
    /// Its place in draw order over every run, from 1.
    pub position: u64,
    /// Which run of `sample` drew it, from 1.
    pub draw: u64,
    /// That run's seed.
    pub seed: u64,
    /// When it was drawn (RFC 3339, UTC).
    pub drawn_at: String,
}

/// What `sample` is asked to do.
#[derive(Debug, Clone, Default)]
pub struct DrawRequest {
    /// How many more contexts to draw.
    pub contexts: usize,
    /// The seed; None takes one from the clock (recorded either way).
    pub seed: Option<u64>,
    /// The people whose queues get the pairs first; empty = the study's usual assignment.
    pub reviewers: Vec<String>,
    /// The scale the queues are on; None = the study's active scale.
    pub scale: Option<String>,
}

/// What one run of `sample` did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DrawOutcome {
    /// The seed used.
    pub seed: u64,
    /// The contexts drawn, in draw order.
    pub drawn: Vec<String>,
    /// Contexts with lists that were not drawn before this run.
    pub left_before: usize,
    /// The scale of the queues.
    pub scale: String,
    /// Per reviewer: how many of the drawn contexts' pairs now lead their queue.
    pub queued: Vec<(String, usize)>,
    /// Pool pairs of the drawn contexts that no person has graded yet.
    pub pairs_to_grade: usize,
}

impl Study {
    /// Every drawn context in draw order.
    pub fn sample_draws(&self) -> Result<Vec<SampleDraw>> {
        let mut stmt = self.conn().prepare(
            "SELECT context_id, position, draw, seed, drawn_at FROM sample_draws ORDER BY position",
        )?;
        let rows = stmt
            .query_map([], |r| {
                Ok(SampleDraw {
                    context_id: r.get(0)?,
                    position: r.get::<_, i64>(1)? as u64,
                    draw: r.get::<_, i64>(2)? as u64,
                    seed: r.get::<_, i64>(3)? as u64,
                    drawn_at: r.get(4)?,
                })
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Contexts with at least one non-empty list that are not drawn yet, by id.
    fn undrawn_contexts(&self) -> Result<Vec<String>> {
        let mut stmt = self.conn().prepare(
            "SELECT c.context_id FROM contexts c
             WHERE EXISTS (SELECT 1 FROM ranked_lists l WHERE l.context_id = c.context_id
                             AND json_array_length(l.items) > 0)
               AND NOT EXISTS (SELECT 1 FROM sample_draws d WHERE d.context_id = c.context_id)
             ORDER BY c.context_id",
        )?;
        let rows = stmt
            .query_map([], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Pairs some person (not a machine judge) has graded on `scale`, can't-judge included.
    fn pairs_graded_by_people(&self, scale: &str) -> Result<HashSet<PairId>> {
        let mut stmt = self.conn().prepare(
            "SELECT g.context_id, g.item_id FROM current_grades g
             JOIN reviewers r ON r.reviewer = g.reviewer
             WHERE r.kind = 'person' AND g.scale = ?1",
        )?;
        let rows = stmt
            .query_map([scale], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Reviewers of one kind (`person` or `machine`), by name.
    fn reviewers_of_kind(&self, kind: &str) -> Result<Vec<String>> {
        let mut stmt = self
            .conn()
            .prepare("SELECT reviewer FROM reviewers WHERE kind = ?1 ORDER BY reviewer")?;
        let rows = stmt
            .query_map([kind], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// The scale the sample's queues are on: the one asked for, else the active scale.
    fn sample_scale(&self, asked: Option<&str>) -> Result<String> {
        let snapshot = self.snapshot()?;
        match asked {
            Some(name) if snapshot.scale_index(name).is_some() => Ok(name.to_string()),
            Some(name) => Err(StudyError::input(format!("unknown scale \"{name}\""))),
            None => snapshot
                .scales
                .get(snapshot.active_scale_index())
                .map(|s| s.name.clone())
                .ok_or_else(|| StudyError::input("the study has no scale to grade the sample on")),
        }
    }

    /// Who gets the sample's pairs: the people named (each checked not to be a machine
    /// judge; a new name joins the panel), else every person on the panel.
    fn sample_reviewers(&self, named: &[String]) -> Result<Vec<String>> {
        let machines = self.reviewers_of_kind("machine")?;
        if let Some(m) = named.iter().find(|r| machines.contains(r)) {
            return Err(StudyError::input(format!(
                "{m} is a machine judge; the human sample is graded by people"
            )));
        }
        if !named.is_empty() {
            return Ok(named.to_vec());
        }
        let people = self.reviewers_of_kind("person")?;
        if people.is_empty() {
            return Err(StudyError::input(
                "the study has no person on its panel to grade the sample; name one with --reviewer",
            ));
        }
        Ok(people)
    }

    /// Draws `request.contexts` more contexts uniformly at random without replacement from
    /// the contexts with lists not drawn yet (all of them when fewer are left), records
    /// the draw and puts the drawn contexts' pool pairs that no person has graded at the
    /// front of the reviewers' queues. Refused without change when nothing is left, no
    /// context is asked for, or no person can grade.
    pub fn draw_sample(&mut self, request: &DrawRequest) -> Result<DrawOutcome> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        if request.contexts == 0 {
            return Err(StudyError::input("--contexts must be at least 1"));
        }
        let scale = self.sample_scale(request.scale.as_deref())?;
        let reviewers = self.sample_reviewers(&request.reviewers)?;
        let left = self.undrawn_contexts()?;
        if left.is_empty() {
            return Err(StudyError::input(
                "every context with lists is already in the human sample; nothing is left to draw",
            ));
        }
        let seed = request.seed.unwrap_or_else(clock_seed);
        let drawn: Vec<String> = draw_without_replacement(left.len(), request.contexts, seed)
            .into_iter()
            .map(|i| left[i].clone())
            .collect();
        let pairs = self.pairs_to_queue(&drawn, &scale)?;
        // Queues are made or touched only when there is something to grade.
        let reviewers = if pairs.is_empty() {
            Vec::new()
        } else {
            reviewers
        };
        let mut before: Vec<Vec<PairId>> = Vec::with_capacity(reviewers.len());
        for r in &reviewers {
            self.add_reviewer(r)?;
            before.push(self.ensure_queue(r, &scale)?);
        }
        let fronts = fronts(&reviewers, &before, &pairs, !request.reviewers.is_empty());
        let tx = self.begin_write()?;
        record_draw(&tx, &drawn, seed)?;
        for ((r, old), front) in reviewers.iter().zip(&before).zip(&fronts) {
            write_front(&tx, r, &scale, old, front)?;
        }
        tx.commit()?;
        Ok(DrawOutcome {
            seed,
            left_before: left.len(),
            drawn,
            queued: reviewers
                .into_iter()
                .zip(fronts.iter().map(Vec::len))
                .collect(),
            pairs_to_grade: pairs.len(),
            scale,
        })
    }

    /// The pool pairs of `contexts` (in their order, then the pool's) that no person has
    /// graded on `scale`.
    fn pairs_to_queue(&self, contexts: &[String], scale: &str) -> Result<Vec<PairId>> {
        let graded = self.pairs_graded_by_people(scale)?;
        let mut by_context: HashMap<String, Vec<PairId>> = HashMap::new();
        for pair in self.pool()? {
            if !graded.contains(&pair) {
                by_context.entry(pair.0.clone()).or_default().push(pair);
            }
        }
        Ok(contexts
            .iter()
            .flat_map(|c| by_context.remove(c.as_str()).unwrap_or_default())
            .collect())
    }
}

/// Each reviewer's new queue front. Named reviewers each get every pair. Otherwise each
/// person gets the pairs already in their queue (the study's assignment), and a pair in
/// no person's queue goes to the people in turn.
fn fronts(
    reviewers: &[String],
    before: &[Vec<PairId>],
    pairs: &[PairId],
    named: bool,
) -> Vec<Vec<PairId>> {
    if named {
        return vec![pairs.to_vec(); reviewers.len()];
    }
    let held: Vec<HashSet<&PairId>> = before.iter().map(|q| q.iter().collect()).collect();
    let mut out: Vec<Vec<PairId>> = vec![Vec::new(); reviewers.len()];
    let mut turn = 0;
    for pair in pairs {
        let holders: Vec<usize> = (0..reviewers.len())
            .filter(|&r| held[r].contains(pair))
            .collect();
        if holders.is_empty() {
            out[turn % reviewers.len()].push(pair.clone());
            turn += 1;
        }
        for r in holders {
            out[r].push(pair.clone());
        }
    }
    out
}

/// Inserts the drawn contexts after the existing draws, as the next run.
fn record_draw(tx: &rusqlite::Transaction<'_>, drawn: &[String], seed: u64) -> Result<()> {
    let (last_position, last_draw): (i64, i64) = tx.query_row(
        "SELECT COALESCE(MAX(position), 0), COALESCE(MAX(draw), 0) FROM sample_draws",
        [],
        |r| Ok((r.get(0)?, r.get(1)?)),
    )?;
    let at = time::now();
    let mut insert = tx.prepare(
        "INSERT INTO sample_draws(context_id, position, draw, seed, drawn_at)
         VALUES (?1, ?2, ?3, ?4, ?5)",
    )?;
    for (i, context) in drawn.iter().enumerate() {
        insert.execute(params![
            context,
            last_position + 1 + i as i64,
            last_draw + 1,
            seed as i64,
            at
        ])?;
    }
    Ok(())
}

/// A seed from the clock, for a draw without `--seed` (recorded with the draw).
fn clock_seed() -> u64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos() as u64)
        .unwrap_or(1)
}
