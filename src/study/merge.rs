//! Bringing grades home: merging studies graded on other machines, and making the
//! reviewer copies that are graded there. Events carry stable uids, so merging the same
//! file twice adds nothing.

use std::path::Path;

use rusqlite::params;

use super::{Result, Study, StudyError};

/// What one merge brought in.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct MergeReport {
    pub file: String,
    pub grades_added: u64,
    pub settled_added: u64,
    pub reviewers_added: u64,
}

fn refused(path: &Path, reason: String) -> StudyError {
    StudyError::Refused {
        path: path.display().to_string(),
        reason,
    }
}

/// Ids in the attached study that the main study lacks, or defines differently.
fn conflicts(study: &Study) -> Result<Vec<String>> {
    let conn = study.conn();
    let mut found = Vec::new();
    let mut missing = |sql: &str, what: &str| -> Result<()> {
        let mut stmt = conn.prepare(sql)?;
        let ids: Vec<String> = stmt
            .query_map([], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        if !ids.is_empty() {
            let shown: Vec<&str> = ids.iter().take(10).map(String::as_str).collect();
            found.push(format!(
                "{what} missing here: {}{}",
                shown.join(", "),
                if ids.len() > 10 {
                    format!(" and {} more", ids.len() - 10)
                } else {
                    String::new()
                }
            ));
        }
        Ok(())
    };
    missing(
        "SELECT DISTINCT item_id FROM other.grade_events WHERE item_id NOT IN (SELECT item_id FROM main.items)
         UNION SELECT DISTINCT item_id FROM other.settle_events WHERE item_id NOT IN (SELECT item_id FROM main.items)
         ORDER BY 1",
        "items",
    )?;
    missing(
        "SELECT DISTINCT context_id FROM other.grade_events WHERE context_id NOT IN (SELECT context_id FROM main.contexts)
         UNION SELECT DISTINCT context_id FROM other.settle_events WHERE context_id NOT IN (SELECT context_id FROM main.contexts)
         ORDER BY 1",
        "contexts",
    )?;
    missing(
        "SELECT DISTINCT scale FROM other.levels WHERE scale NOT IN (SELECT scale FROM main.scales)
           AND scale IN (SELECT scale FROM other.grade_events UNION SELECT scale FROM other.settle_events)
         ORDER BY 1",
        "scales",
    )?;
    // The same scale id must mean the same levels on both sides.
    let mut stmt = conn.prepare(
        "SELECT DISTINCT o.scale FROM other.levels o JOIN main.scales s ON s.scale = o.scale
         WHERE EXISTS (SELECT 1 FROM other.levels x WHERE x.scale = o.scale AND NOT EXISTS (
                 SELECT 1 FROM main.levels m WHERE m.scale = x.scale AND m.value = x.value AND m.label = x.label))
            OR EXISTS (SELECT 1 FROM main.levels m WHERE m.scale = o.scale AND NOT EXISTS (
                 SELECT 1 FROM other.levels x WHERE x.scale = m.scale AND x.value = m.value))
         ORDER BY 1",
    )?;
    let differing: Vec<String> = stmt
        .query_map([], |r| r.get(0))?
        .collect::<std::result::Result<_, _>>()?;
    for scale in differing {
        found.push(format!(
            "scale \"{scale}\" has different levels in the two studies"
        ));
    }
    Ok(found)
}

impl Study {
    /// Merges reviewers, grade history and settled grades from `other` in one transaction.
    /// Refuses the whole file, naming the ids, when its definitions do not match.
    pub fn merge_from(&mut self, other: &Path) -> Result<MergeReport> {
        self.merge_or_preview(other, true)
    }

    /// What `merge_from` would bring in, without changing the study: the same checks and
    /// inserts inside a transaction that is rolled back.
    pub fn merge_preview(&mut self, other: &Path) -> Result<MergeReport> {
        self.merge_or_preview(other, false)
    }

    fn merge_or_preview(&mut self, other: &Path, commit: bool) -> Result<MergeReport> {
        if self.is_read_only() {
            return Err(StudyError::ReadOnly);
        }
        if std::fs::canonicalize(other).ok() == std::fs::canonicalize(self.path()).ok() {
            return Err(refused(
                other,
                "a study cannot be merged into itself".into(),
            ));
        }
        // Opening checks that it is a study this build understands (and migrates it).
        drop(Study::open(other)?);
        self.conn()
            .execute("ATTACH DATABASE ?1 AS other", [other.to_string_lossy()])?;
        let result = self.merge_attached(other, commit);
        let detach = self.conn().execute("DETACH DATABASE other", []);
        let report = result?;
        detach?;
        Ok(report)
    }

    fn merge_attached(&mut self, other: &Path, commit: bool) -> Result<MergeReport> {
        let problems = conflicts(self)?;
        if !problems.is_empty() {
            return Err(refused(
                other,
                format!("nothing was merged: {}", problems.join("; ")),
            ));
        }
        let tx = self.begin_write()?;
        let reviewers_added = tx.execute(
            "INSERT OR IGNORE INTO main.reviewers(reviewer) SELECT reviewer FROM other.reviewers",
            [],
        )? as u64;
        let grades_added = tx.execute(
            "INSERT OR IGNORE INTO main.grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
             SELECT uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note
             FROM other.grade_events ORDER BY graded_at, id",
            [],
        )? as u64;
        let settled_added = tx.execute(
            "INSERT OR IGNORE INTO main.settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
             SELECT uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason
             FROM other.settle_events ORDER BY settled_at, id",
            [],
        )? as u64;
        if commit {
            tx.commit()?;
        } else {
            tx.rollback()?;
        }
        Ok(MergeReport {
            file: other.display().to_string(),
            grades_added,
            settled_added,
            reviewers_added,
        })
    }

    /// Writes a reviewer copy: the same catalog, scales and rankings, this reviewer's own
    /// grades and queue, and nobody else's grades, queues or settled grades.
    pub fn hand_out(&self, reviewer: &str, out: &Path) -> Result<()> {
        if out.exists() {
            return Err(refused(
                out,
                "a file already exists there; choose another name".into(),
            ));
        }
        let known: bool = self.conn().query_row(
            "SELECT EXISTS (SELECT 1 FROM reviewers WHERE reviewer = ?1)",
            [reviewer],
            |r| r.get(0),
        )?;
        if !known {
            self.add_reviewer(reviewer)?;
        }
        self.conn()
            .execute("VACUUM INTO ?1", [out.to_string_lossy()])?;
        let mut copy = Study::open(out)?;
        let tx = copy.begin_write()?;
        tx.execute(
            "DELETE FROM current_grades WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute(
            "DELETE FROM grade_events WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute(
            "DELETE FROM queue_entries WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute("DELETE FROM settle_events", [])?;
        tx.execute(
            "DELETE FROM reviewers WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute(
            "INSERT INTO settings(key, value) VALUES ('handed_out_to', ?1)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            params![reviewer],
        )?;
        tx.commit()?;
        copy.conn().execute_batch("VACUUM")?;
        Ok(())
    }
}
