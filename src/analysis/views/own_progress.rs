//! What a signed-in reviewer sees besides the desk: their own progress on every scale and
//! every scale's rubric. Built from reads that name only this reviewer's queue and marks,
//! so nothing here carries rankers, ranks, scores, gold pairs or another reviewer's grades.

use serde::Serialize;

use crate::study::{Study, StudyError};

/// One level as the rubric shows it (no gain, no colour: only what a reviewer grades by).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RubricLevel {
    /// The level's number.
    pub value: u8,
    /// Its label.
    pub label: String,
    /// The key that gives it on the desk.
    pub key: String,
    /// When to give it.
    pub rubric: String,
}

/// The reviewer's standing on one scale, with that scale's rubric.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OwnScale {
    /// The scale.
    pub scale: String,
    /// Its levels in value order.
    pub levels: Vec<RubricLevel>,
    /// (pairs graded, pairs in the queue) once the reviewer has a queue on this scale.
    pub queue: Option<(u64, u64)>,
    /// Pairs this reviewer has a grade or a can't-judge on, in the queue or not.
    pub marked: usize,
}

impl OwnScale {
    /// Pairs graded outside the current queue (a pilot block, an import, an older queue).
    pub fn outside_queue(&self) -> usize {
        let in_queue = self.queue.map_or(0, |(done, _)| done as usize);
        self.marked.saturating_sub(in_queue)
    }
}

/// The reviewer's part of a running pilot.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OwnPilot {
    /// The pilot's scales in the order this reviewer grades them.
    pub scales: Vec<String>,
    /// Pilot pairs on each scale.
    pub pairs_per_scale: usize,
    /// Pilot pairs graded over every block.
    pub graded: usize,
}

/// Everything the reviewer's "My progress" and "Rubric" screens show.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OwnProgress {
    /// The signed-in reviewer.
    pub reviewer: String,
    /// Every scale of the study, in name order.
    pub scales: Vec<OwnScale>,
    /// The reviewer's pilot share while a pilot runs and they are one of its reviewers.
    pub pilot: Option<OwnPilot>,
}

/// The reviewer's own view, from one read of the study.
pub fn of_study(study: &Study, reviewer: &str) -> Result<OwnProgress, StudyError> {
    study.read_together(|study| {
        let mut scales = Vec::new();
        for name in study.scale_names()? {
            let Some(scale) = study.stored_scale(&name)? else {
                continue;
            };
            let queue = study
                .queue_progress(&name)?
                .into_iter()
                .find(|q| q.reviewer == reviewer)
                .map(|q| (q.done, q.total));
            scales.push(OwnScale {
                levels: scale
                    .levels
                    .iter()
                    .map(|l| RubricLevel {
                        value: l.value,
                        label: l.label.clone(),
                        key: l.key.clone(),
                        rubric: l.rubric.clone(),
                    })
                    .collect(),
                marked: study.reviewer_marks(reviewer, &name)?.len(),
                queue,
                scale: name,
            });
        }
        let order = study
            .pilot_orders()?
            .into_iter()
            .find(|(r, _)| r == reviewer)
            .map(|(_, order)| order);
        let pilot = study.pilot_status()?.and_then(|status| {
            let share = status.shares.into_iter().find(|s| s.reviewer == reviewer)?;
            Some(OwnPilot {
                scales: order.unwrap_or(status.scales),
                pairs_per_scale: share.pairs,
                graded: share.graded,
            })
        });
        Ok(OwnProgress {
            reviewer: reviewer.to_string(),
            scales,
            pilot,
        })
    })
}
