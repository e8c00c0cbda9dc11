//! Loading the desk on a job thread: the reviewer's queue (made at first sign-in), their
//! own marks, the cards, and a write handle that then moves to the writer thread.

use std::collections::HashMap;
use std::path::Path;

use super::state::DeskData;
use crate::study::Study;
use crate::study::pilot::PilotBlock;
use crate::study::queues::{Mark, PairId};
use crate::study::snapshot::Snapshot;
use crate::ui::jobs::{JobError, JobResult};

/// Where a pair's context and item sit in the desk's card lists.
struct CardIndex<'a> {
    contexts: HashMap<&'a str, u32>,
    items: &'a HashMap<String, u32>,
}

impl CardIndex<'_> {
    fn of(&self, context: &str, item: &str) -> Option<(u32, u32)> {
        Some((*self.contexts.get(context)?, *self.items.get(item)?))
    }
}

/// Loads the desk for `reviewer`; `scale` (when given) becomes the active scale.
/// Runs on a job thread; returns the write handle with the data.
pub fn load(path: &Path, reviewer: &str, scale: Option<String>) -> JobResult<(DeskData, Study)> {
    let mut study = Study::open(path)?;
    if study.is_read_only() {
        // No grade given here could be saved: the desk stays closed rather than taking
        // grades it would lose.
        return Err(JobError::Missing(
            "This study is read-only (its file or its folder cannot be written): the desk is closed, since no grade could be saved.".into(),
        ));
    }
    study.add_reviewer(reviewer)?;
    let snapshot = study.snapshot()?;
    if snapshot.scales.is_empty() {
        return Err(JobError::Missing(
            "This study has no scale yet: import scales.csv on the Catalog screen.".into(),
        ));
    }
    let (scale_index, pilot) = choose_scale(&mut study, &snapshot, reviewer, scale)?;
    let scale = snapshot.scales[scale_index].clone();
    let pilot_block = pilot.as_ref().map(|b| (b.number, b.blocks));
    let pairs = match pilot {
        Some(block) => block.pairs,
        None => study.ensure_queue(reviewer, &scale.name)?,
    };
    let marks_by_pair = study.reviewer_marks(reviewer, &scale.name)?;
    let items = study.item_cards()?;
    let contexts = study.context_cards()?;
    let item_index: HashMap<String, u32> = items
        .iter()
        .enumerate()
        .map(|(i, it)| (it.id.clone(), i as u32))
        .collect();
    let index = CardIndex {
        contexts: contexts
            .iter()
            .enumerate()
            .map(|(i, c)| (c.id.as_str(), i as u32))
            .collect(),
        items: &item_index,
    };
    let (queue, marks) = queue_and_marks(&pairs, &marks_by_pair, &index);
    let training_gold = training_gold(&study, reviewer, &scale.name, &index)?;
    let (past_grades, past_seconds) = study.reviewer_effort(reviewer, &scale.name)?;
    let catalog_dir = study.catalog_dir()?;
    Ok((
        DeskData {
            reviewer: reviewer.to_string(),
            scale,
            scale_names: snapshot.scales.iter().map(|s| s.name.clone()).collect(),
            queue,
            marks,
            items,
            contexts,
            item_index,
            catalog_dir,
            past_grades,
            past_seconds,
            training_gold,
            pilot_block,
        },
        study,
    ))
}

/// The scale the desk grades on: the one asked for (which becomes the active scale),
/// else the pilot block's during a pilot, else the active scale; with the pilot block.
fn choose_scale(
    study: &mut Study,
    snapshot: &Snapshot,
    reviewer: &str,
    scale: Option<String>,
) -> JobResult<(usize, Option<PilotBlock>)> {
    if let Some(name) = &scale {
        let i = snapshot
            .scale_index(name)
            .ok_or_else(|| JobError::Missing(format!("no scale named {name}")))?;
        study.set_setting(crate::study::settings::keys::ACTIVE_SCALE, name)?;
        return Ok((i, None));
    }
    // During a pilot the reviewer works through one scale's block after another, and
    // the desk holds only the block's pairs.
    Ok(match study.pilot_position(reviewer)? {
        Some(block) => match snapshot.scale_index(&block.scale) {
            Some(i) => (i, Some(block)),
            None => (snapshot.active_scale_index(), None),
        },
        None => (snapshot.active_scale_index(), None),
    })
}

/// The queue as card positions with the reviewer's mark on each; pairs whose context or
/// item is not in the catalog are left out.
fn queue_and_marks(
    pairs: &[PairId],
    marks_by_pair: &HashMap<PairId, Mark>,
    index: &CardIndex,
) -> (Vec<(u32, u32)>, Vec<Option<Mark>>) {
    let mut queue = Vec::with_capacity(pairs.len());
    let mut marks = Vec::with_capacity(pairs.len());
    for pair in pairs {
        let Some(at) = index.of(&pair.0, &pair.1) else {
            continue;
        };
        queue.push(at);
        marks.push(marks_by_pair.get(pair).copied());
    }
    (queue, marks)
}

/// A reviewer in training learns a gold pair's level and rationale right after grading
/// it; for everyone else gold pairs look like any other pair (an empty map).
fn training_gold(
    study: &Study,
    reviewer: &str,
    scale: &str,
    index: &CardIndex,
) -> JobResult<HashMap<(u32, u32), (u8, String)>> {
    let mut gold = HashMap::new();
    if study
        .settings()?
        .training_reviewers
        .iter()
        .any(|r| r == reviewer)
    {
        for (c, i, level, why) in study.gold_with_rationale(scale)? {
            if let Some(at) = index.of(&c, &i) {
                gold.insert(at, (level, why));
            }
        }
    }
    Ok(gold)
}
