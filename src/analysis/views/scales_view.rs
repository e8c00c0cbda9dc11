//! What the Scales screen shows: every scale with its grade counts, collapse maps,
//! gold pairs and the pilot with the pool's room for it; built on a job thread.

use crate::core::agreement::CollapseMap;
use crate::core::scale::Scale;
use crate::study::pilot::PilotStatus;
use crate::study::{Study, StudyError};

/// One scale and how many grade events refer to it.
#[derive(Debug, Clone)]
pub struct ScaleEntry {
    /// The scale.
    pub scale: Scale,
    /// Grade history rows of the scale (undos included): whether editing it makes a version.
    pub grades: u64,
    /// (grades in force, pairs they cover), as Home counts grades in force.
    pub in_force: (u64, u64),
}

/// Everything the Scales screen shows, read on a job thread.
#[derive(Debug, Clone, Default)]
pub struct ScalesModel {
    /// Every scale with its counts.
    pub scales: Vec<ScaleEntry>,
    /// The scale the desk grades on (setting, else the busiest scale).
    pub active: Option<String>,
    /// The running pilot's scales in block order.
    pub pilot: Vec<String>,
    /// The running pilot's reviewers and their shares (None when no pilot runs).
    pub pilot_status: Option<PilotStatus>,
    /// The people on the panel, who may grade a pilot.
    pub people: Vec<String>,
    /// Pool pairs a pilot can use (the pool without gold pairs).
    pub pilot_room: usize,
    /// Pairs in the pool, gold pairs included (Home's "Whole pool").
    pub pool_size: usize,
    /// Collapse maps as (scale, map).
    pub maps: Vec<(String, CollapseMap)>,
    /// Gold pairs of every scale: (scale, context, item, known level, rationale).
    pub gold: Vec<(String, String, String, u8, String)>,
    /// Whether the study opened read-only.
    pub read_only: bool,
}

impl ScalesModel {
    /// The entry of the scale called `name`.
    pub fn entry(&self, name: &str) -> Option<&ScaleEntry> {
        self.scales.iter().find(|e| e.scale.name == name)
    }

    /// Gold pairs in the pool, which a pilot leaves out.
    pub fn gold_in_pool(&self) -> usize {
        self.pool_size.saturating_sub(self.pilot_room)
    }
}

/// Reads the scales, maps, gold pairs and pilot.
pub fn build(study: &Study) -> Result<ScalesModel, StudyError> {
    let snapshot = study.snapshot()?;
    let mut scales = Vec::new();
    for s in &snapshot.scales {
        scales.push(ScaleEntry {
            scale: s.clone(),
            grades: study.grade_count(&s.name)?,
            in_force: study.grades_in_force(&s.name)?,
        });
    }
    let mut gold = Vec::new();
    for s in &snapshot.scales {
        for (c, i, v, why) in study.gold_with_rationale(&s.name)? {
            gold.push((s.name.clone(), c, i, v, why));
        }
    }
    let active = (!snapshot.scales.is_empty())
        .then(|| snapshot.scales[snapshot.active_scale_index()].name.clone());
    Ok(ScalesModel {
        scales,
        active,
        pilot: study.pilot_scales()?,
        pilot_status: study.pilot_status()?,
        people: study.people()?,
        pilot_room: study.pilot_room()?,
        pool_size: study.pool()?.len(),
        maps: study.collapse_maps()?,
        gold,
        read_only: study.is_read_only(),
    })
}
