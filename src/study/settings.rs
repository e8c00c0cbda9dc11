//! The study's settings, typed: every key of the `settings` table in one place, with its
//! default, and one read that returns them all. Code outside this file names a key only
//! through `keys`.

use std::path::{Path, PathBuf};

use rusqlite::OptionalExtension;
use serde::Serialize;

use super::{Result, Study};
use crate::core::panel_rule::PanelRule;

/// The keys of the `settings` table (a contract with older study files: add, never rename).
pub mod keys {
    /// The study's display name.
    pub const NAME: &str = "name";
    /// The baseline ranker comparisons are made against.
    pub const BASELINE: &str = "baseline";
    /// Pooling depth k.
    pub const POOL_DEPTH: &str = "pool_depth";
    /// Share of each reviewer's queue that overlaps with others (for agreement).
    pub const OVERLAP_SHARE: &str = "overlap_share";
    /// Share of each queue given to gold pairs.
    pub const GOLD_RATE: &str = "gold_rate";
    /// The kept seed of the queue shuffle.
    pub const QUEUE_SEED: &str = "queue_seed";
    /// The scale the desk grades on.
    pub const ACTIVE_SCALE: &str = "active_scale";
    /// The folder item image paths are relative to.
    pub const CATALOG_DIR: &str = "catalog_dir";
    /// In a reviewer copy: whom it was handed out to.
    pub const HANDED_OUT_TO: &str = "handed_out_to";
    /// In a reviewer copy: its id, remembered by the study it came from.
    pub const COPY_ID: &str = "copy_id";
    /// Prefix of the record of each hand-out in the lead's study: `hand_out:SECRET`
    /// holds the reviewer the secret was issued to (never carried into a copy).
    pub const HAND_OUT_PREFIX: &str = "hand_out:";
    /// Marks the built-in demo study.
    pub const DEMO: &str = "demo";
    /// `true` when machine judges' grades count in the panel grade, agreement and
    /// settling (off by default: they are measured against the people instead).
    pub const MACHINES_IN_PANEL: &str = "machines_in_panel";
    /// Reviewers in training, comma separated: after grading a gold pair they see its
    /// known level and rationale.
    pub const TRAINING_REVIEWERS: &str = "training_reviewers";
    /// The running pilot's scales as a JSON list, in block order.
    pub const PILOT_SCALES: &str = "pilot_scales";
    /// The running pilot's pairs as a JSON list of `[context_id, item_id]`, when it was
    /// started with a number of pairs (absent: each reviewer's queue on the first scale).
    pub const PILOT_PAIRS: &str = "pilot_pairs";
    /// The reviewers who grade the running pilot as a JSON list (absent: the panel).
    pub const PILOT_REVIEWERS: &str = "pilot_reviewers";
    /// How an unsettled pair's levels become the panel grade: `lower-median` (the
    /// default), `upper-median` or `mean-rounded`. Every screen and command reads it;
    /// `score --panel-grade` may choose another for one run.
    pub const PANEL_RULE: &str = "panel_rule";
}

/// Pool depth k when the study names none (common practice: 10, the depth most
/// offline comparisons report).
pub const DEFAULT_POOL_DEPTH: usize = 10;
/// Share of a queue shared with other reviewers when the study names none.
pub const DEFAULT_OVERLAP_SHARE: f64 = 0.30;
/// Share of a queue given to gold pairs when the study names none.
pub const DEFAULT_GOLD_RATE: f64 = 0.05;

/// Every setting with its default applied.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudySettings {
    /// Display name (empty when never set).
    pub name: String,
    /// The stored baseline, which may name a ranker that no longer exists.
    pub baseline: Option<String>,
    /// Pooling depth k (at least 1).
    pub pool_depth: usize,
    /// Overlap share of queues.
    pub overlap_share: f64,
    /// Gold share of queues.
    pub gold_rate: f64,
    /// The stored active scale, which may name a scale that no longer exists.
    pub active_scale: Option<String>,
    /// Whether machine judges' grades count in the panel (default false).
    pub machines_in_panel: bool,
    /// Reviewers who see a gold pair's level and rationale after grading it.
    pub training_reviewers: Vec<String>,
    /// The study's panel rule for unsettled pairs (default lower median).
    pub panel_rule: PanelRule,
}

impl Study {
    /// One setting as stored, or `None` when it was never set.
    pub fn setting(&self, key: &str) -> Result<Option<String>> {
        Ok(self
            .conn()
            .query_row("SELECT value FROM settings WHERE key = ?1", [key], |r| {
                r.get(0)
            })
            .optional()?)
    }

    /// Stores one setting, replacing its old value.
    pub fn set_setting(&self, key: &str, value: &str) -> Result<()> {
        self.conn().execute(
            "INSERT INTO settings(key, value) VALUES (?1, ?2)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            [key, value],
        )?;
        Ok(())
    }

    /// A setting parsed as `T`, or `default` when missing or unreadable.
    pub(crate) fn setting_or<T: std::str::FromStr>(&self, key: &str, default: T) -> Result<T> {
        Ok(self
            .setting(key)?
            .and_then(|v| v.trim().parse().ok())
            .unwrap_or(default))
    }

    /// Every setting at once, defaults applied.
    pub fn settings(&self) -> Result<StudySettings> {
        Ok(StudySettings {
            name: self.setting(keys::NAME)?.unwrap_or_default(),
            baseline: self.setting(keys::BASELINE)?.filter(|b| !b.is_empty()),
            pool_depth: self
                .setting_or(keys::POOL_DEPTH, DEFAULT_POOL_DEPTH)?
                .max(1),
            overlap_share: self.setting_or(keys::OVERLAP_SHARE, DEFAULT_OVERLAP_SHARE)?,
            gold_rate: self.setting_or(keys::GOLD_RATE, DEFAULT_GOLD_RATE)?,
            active_scale: self.setting(keys::ACTIVE_SCALE)?,
            machines_in_panel: self.setting_or(keys::MACHINES_IN_PANEL, false)?,
            panel_rule: self.setting_or(keys::PANEL_RULE, PanelRule::default())?,
            training_reviewers: self
                .setting(keys::TRAINING_REVIEWERS)?
                .unwrap_or_default()
                .split(',')
                .map(str::trim)
                .filter(|r| !r.is_empty())
                .map(str::to_string)
                .collect(),
        })
    }

    /// The folder image paths are relative to. A relative setting (a reviewer copy's
    /// own pictures folder) is taken relative to the study file, so a copy finds its
    /// pictures wherever it is moved with them.
    pub fn catalog_dir(&self) -> Result<Option<PathBuf>> {
        let Some(dir) = self.setting(keys::CATALOG_DIR)?.filter(|s| !s.is_empty()) else {
            return Ok(None);
        };
        let dir = PathBuf::from(dir);
        if dir.is_absolute() {
            return Ok(Some(dir));
        }
        let base = std::path::absolute(&self.path)
            .ok()
            .and_then(|p| p.parent().map(Path::to_path_buf))
            .unwrap_or_default();
        Ok(Some(base.join(dir)))
    }

    /// The study's display name (file stem unless renamed).
    pub fn name(&self) -> String {
        self.setting(keys::NAME).ok().flatten().unwrap_or_default()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn settings_read_together_with_defaults_for_missing_or_unreadable_values() {
        let dir = tempfile::tempdir().unwrap();
        let study = Study::create(&dir.path().join("s.plumb")).unwrap();
        let fresh = study.settings().unwrap();
        assert_eq!(fresh.pool_depth, DEFAULT_POOL_DEPTH);
        assert_eq!(fresh.gold_rate, DEFAULT_GOLD_RATE);
        assert_eq!(fresh.baseline, None);
        study.set_setting(keys::POOL_DEPTH, " 20 ").unwrap();
        study.set_setting(keys::GOLD_RATE, "lots").unwrap();
        study.set_setting(keys::BASELINE, "").unwrap();
        study.set_setting(keys::ACTIVE_SCALE, "fit4").unwrap();
        let read = study.settings().unwrap();
        assert_eq!(read.pool_depth, 20);
        assert_eq!(read.gold_rate, DEFAULT_GOLD_RATE, "unreadable falls back");
        assert_eq!(read.baseline, None, "an empty baseline is none");
        assert_eq!(read.active_scale.as_deref(), Some("fit4"));
        study.set_setting(keys::POOL_DEPTH, "0").unwrap();
        assert_eq!(
            study.settings().unwrap().pool_depth,
            1,
            "depth is at least 1"
        );
    }
}
