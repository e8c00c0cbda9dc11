//! Bringing grades home: merging studies graded on other machines, and making the
//! reviewer copies that are graded there. Events carry stable uids, so merging the same
//! file twice adds nothing.
//!
//! A file from elsewhere is untrusted: it is opened read-only and immutable and its
//! schema checked (`untrusted`), then every row is validated as strictly as an import
//! before anything is written. Only the reviewer a copy was handed to may bring grades;
//! other reviewers' events and settled grades come in only when the lead accepts their
//! names. A refusal changes neither the study nor the copy.

use std::collections::{BTreeMap, HashSet};
use std::path::Path;

use rusqlite::params;

mod definitions;
mod incoming;

use super::untrusted;
use super::{Result, Study, StudyError};
use incoming::{CopySummary, check_copy, each_grade, each_settlement};

/// What one merge brought in (or, for a preview, would bring in).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct MergeReport {
    pub file: String,
    pub grades_added: u64,
    pub settled_added: u64,
    pub reviewers_added: u64,
    /// The reviewer the copy was handed to, when this study handed it out.
    pub handed_out_to: Option<String>,
    /// Names whose events need the lead's yes, with how many grades / settled grades.
    pub needs_acceptance: Vec<NameCount>,
}

/// A reviewer (or settler) name and what the file holds from them.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct NameCount {
    pub name: String,
    pub grades: u64,
    pub settled: u64,
}

/// What the lead allows beyond the copy's own reviewer.
#[derive(Debug, Clone, Default)]
pub struct MergeOptions {
    /// Reviewer or settler names whose events may come in although the file was not
    /// handed out to them.
    pub accept: Vec<String>,
}

/// The folder beside a copy that holds its pictures (`rev-birch.plumb` →
/// `rev-birch-pictures`); the copy names it relative to itself.
pub fn pictures_folder_name(copy: &Path) -> String {
    let stem = copy
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "copy".into());
    format!("{stem}-pictures")
}

/// The largest study file (with its `-wal`) a merge reads: a reviewer copy of a study
/// with millions of pairs stays well below it, and a larger file is refused before it
/// is read rather than spending minutes of checks on it.
pub const MAX_COPY_BYTES: u64 = 2 << 30;

/// A copy's size on disk, with its `-wal` file.
fn copy_size(copy: &Path) -> u64 {
    let mut wal = copy.as_os_str().to_owned();
    wal.push("-wal");
    [copy.to_path_buf(), std::path::PathBuf::from(wal)]
        .iter()
        .filter_map(|p| std::fs::metadata(p).ok())
        .map(|m| m.len())
        .sum()
}

/// A copy refused as a whole, with the reason; nothing was changed.
pub(super) fn refused(path: &Path, reason: String) -> StudyError {
    StudyError::Refused {
        path: path.display().to_string(),
        reason,
    }
}

/// Why names need the lead's yes, in words, with the way to give it.
pub fn not_accepted(report: &MergeReport) -> String {
    let names: Vec<String> = report
        .needs_acceptance
        .iter()
        .map(|n| match (n.grades, n.settled) {
            (g, 0) => format!("{} ({g} grade events)", n.name),
            (0, s) => format!("{} ({s} settled grades)", n.name),
            (g, s) => format!("{} ({g} grade events, {s} settled grades)", n.name),
        })
        .collect();
    let whose = match &report.handed_out_to {
        Some(r) => format!("this copy was handed out to {r}, but it also holds events by"),
        None => "this file is not a reviewer copy this study handed out; it holds events by".into(),
    };
    format!(
        "nothing was merged: {whose} {}; a copy brings its own reviewer's grades only, so bring these in only if you trust them (--accept-reviewer NAME, or tick them in the merge preview)",
        names.join(", ")
    )
}

impl Study {
    /// Whom this study handed the copy to, by its own record of the secret it issued (a
    /// copy's word alone is not trusted: it could name anyone). A copy that claims a
    /// hand-out this study never issued, or issued to someone else, is refused by name.
    fn issued_to(&self, other: &Path, incoming: &CopySummary) -> Result<Option<String>> {
        let (secret, named) = match (&incoming.copy_id, &incoming.handed_out_to) {
            (None, None) => return Ok(None),
            (Some(secret), Some(named)) => (secret, named),
            _ => {
                return Err(refused(
                    other,
                    "its hand-out record is incomplete (an edited copy); nothing was merged".into(),
                ));
            }
        };
        let key = format!("{}{secret}", super::settings::keys::HAND_OUT_PREFIX);
        match self.setting(&key)? {
            Some(recorded) if recorded == *named => Ok(Some(recorded)),
            Some(recorded) => Err(refused(
                other,
                format!(
                    "this copy claims to be {named}'s, but this study issued its hand-out to {recorded}; nothing was merged"
                ),
            )),
            None => Err(refused(
                other,
                format!(
                    "this copy claims to be handed out to {named}, but this study never issued its hand-out (an edited, copied or foreign copy); nothing was merged"
                ),
            )),
        }
    }

    /// Merges reviewers, grade history and settled grades from `other` in one transaction.
    /// Refuses the whole file, naming the ids, when its definitions do not match.
    pub fn merge_from(&mut self, other: &Path) -> Result<MergeReport> {
        self.merge_with(other, &MergeOptions::default())
    }

    /// `merge_from` with names the lead accepts beyond the copy's own reviewer.
    pub fn merge_with(&mut self, other: &Path, options: &MergeOptions) -> Result<MergeReport> {
        let report = self.merge_or_preview(other, options, true)?;
        if !report.needs_acceptance.is_empty() {
            return Err(refused(other, not_accepted(&report)));
        }
        Ok(report)
    }

    /// What `merge_with` would bring in, without changing the study: the same checks and
    /// inserts inside a transaction that is rolled back. Names that need the lead's yes
    /// are listed in `needs_acceptance` instead of refusing.
    pub fn merge_preview(&mut self, other: &Path) -> Result<MergeReport> {
        self.merge_preview_with(other, &MergeOptions::default())
    }

    pub fn merge_preview_with(
        &mut self,
        other: &Path,
        options: &MergeOptions,
    ) -> Result<MergeReport> {
        self.merge_or_preview(other, options, false)
    }

    fn merge_or_preview(
        &mut self,
        other: &Path,
        options: &MergeOptions,
        commit: bool,
    ) -> Result<MergeReport> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        if std::fs::canonicalize(other).ok() == std::fs::canonicalize(self.path()).ok() {
            return Err(refused(
                other,
                "a study cannot be merged into itself".into(),
            ));
        }
        let size = copy_size(other);
        if size > MAX_COPY_BYTES {
            return Err(refused(
                other,
                format!(
                    "it is {} MiB, over the limit of {} MiB for a study to merge; nothing was merged",
                    size >> 20,
                    MAX_COPY_BYTES >> 20
                ),
            ));
        }
        let copy = untrusted::open_copy(other)?;
        let here = self.definitions()?;
        let summary = check_copy(&copy, &here)?;
        let handed_out_to = self.issued_to(other, &summary)?;
        let mut allowed: HashSet<&str> = options.accept.iter().map(String::as_str).collect();
        if let Some(r) = &handed_out_to {
            allowed.insert(r);
        }
        // Settling is the lead's work: a settled grade comes in only when its settler is
        // accepted by name, even if it is the reviewer the copy went to.
        let settlers: HashSet<&str> = options.accept.iter().map(String::as_str).collect();
        let mut report = MergeReport {
            file: other.display().to_string(),
            grades_added: 0,
            settled_added: 0,
            reviewers_added: 0,
            needs_acceptance: needs_acceptance(&summary, &allowed, &settlers),
            handed_out_to: handed_out_to.clone(),
        };
        if commit && !report.needs_acceptance.is_empty() {
            return Ok(report);
        }
        copy.allow_time_for(summary.events);
        let tx = self.begin_write()?;
        write_events(&tx, &copy, &here, (&allowed, &settlers), &mut report)?;
        drop(copy);
        crate::study::grade_packs::repack_stale(&tx)?;
        if commit {
            tx.commit()?;
        } else {
            tx.rollback()?;
        }
        Ok(report)
    }
}

/// The names whose events need the lead's yes, with how many of each kind.
fn needs_acceptance(
    summary: &CopySummary,
    allowed: &HashSet<&str>,
    settlers: &HashSet<&str>,
) -> Vec<NameCount> {
    let mut waiting: BTreeMap<&str, (u64, u64)> = BTreeMap::new();
    for (name, n) in &summary.grades_by {
        if !allowed.contains(name.as_str()) {
            waiting.entry(name).or_default().0 += n;
        }
    }
    for (name, n) in &summary.settled_by {
        if !settlers.contains(name.as_str()) {
            waiting.entry(name).or_default().1 += n;
        }
    }
    waiting
        .into_iter()
        .map(|(name, (grades, settled))| NameCount {
            name: name.to_string(),
            grades,
            settled,
        })
        .collect()
}

/// Streams the copy's events of allowed reviewers and accepted settlers into the
/// study's transaction, counting what was new in `report`.
fn write_events(
    tx: &rusqlite::Transaction,
    copy: &untrusted::CheckedCopy,
    here: &definitions::Definitions,
    (allowed, settlers): (&HashSet<&str>, &HashSet<&str>),
    report: &mut MergeReport,
) -> Result<()> {
    let mut add_reviewer = tx.prepare("INSERT OR IGNORE INTO reviewers(reviewer) VALUES (?1)")?;
    let mut add_grade = tx.prepare(
        "INSERT OR IGNORE INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
    )?;
    let mut add_settlement = tx.prepare(
        "INSERT OR IGNORE INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
    )?;
    each_grade(copy, here, |g| {
        if allowed.contains(g.reviewer.as_str()) {
            report.reviewers_added += add_reviewer.execute([&g.reviewer])? as u64;
            report.grades_added += add_grade.execute(params![
                g.uid,
                g.reviewer,
                g.context,
                g.item,
                g.scale,
                g.action,
                g.value,
                g.reason,
                g.seconds,
                g.graded_at,
                g.note
            ])? as u64;
        }
        Ok(())
    })?;
    each_settlement(copy, here, |s| {
        if settlers.contains(s.settled_by.as_str()) {
            report.settled_added += add_settlement.execute(params![
                s.uid,
                s.context,
                s.item,
                s.scale,
                s.value,
                s.method,
                s.settled_by,
                s.settled_at,
                s.reason
            ])? as u64;
        }
        Ok(())
    })
}
