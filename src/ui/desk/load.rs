//! Loading the desk on a job thread: the reviewer's queue (made at first sign-in), their
//! own marks, the cards, and a write handle that then moves to the writer thread.

use std::collections::HashMap;
use std::path::Path;

use super::state::DeskData;
use crate::study::Study;
use crate::ui::jobs::{JobError, JobResult};

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
    let mut pilot = None;
    let scale_index = match &scale {
        Some(name) => {
            let i = snapshot
                .scale_index(name)
                .ok_or_else(|| JobError::Missing(format!("no scale named {name}")))?;
            study.set_setting(crate::study::settings::keys::ACTIVE_SCALE, name)?;
            i
        }
        // During a pilot the reviewer works through one scale's block after another, and
        // the desk holds only the block's pairs.
        None => match study.pilot_position(reviewer)? {
            Some(block) => match snapshot.scale_index(&block.scale) {
                Some(i) => {
                    pilot = Some(block);
                    i
                }
                None => snapshot.active_scale_index(),
            },
            None => snapshot.active_scale_index(),
        },
    };
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
    let context_index: HashMap<&str, u32> = contexts
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i as u32))
        .collect();
    let mut queue = Vec::with_capacity(pairs.len());
    let mut marks = Vec::with_capacity(pairs.len());
    for pair in &pairs {
        let (Some(&c), Some(&i)) = (
            context_index.get(pair.0.as_str()),
            item_index.get(pair.1.as_str()),
        ) else {
            continue;
        };
        queue.push((c, i));
        marks.push(marks_by_pair.get(pair).copied());
    }
    // A reviewer in training learns a gold pair's level and rationale right after
    // grading it; for everyone else gold pairs look like any other pair.
    let mut training_gold = HashMap::new();
    if study
        .settings()?
        .training_reviewers
        .iter()
        .any(|r| r == reviewer)
    {
        for (c, i, level, why) in study.gold_with_rationale(&scale.name)? {
            if let (Some(&c), Some(&i)) =
                (context_index.get(c.as_str()), item_index.get(i.as_str()))
            {
                training_gold.insert((c, i), (level, why));
            }
        }
    }
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
