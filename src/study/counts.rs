//! Row counts of the study's main tables, for summaries (Home, `status`).

use super::{Result, Study};

impl Study {
    /// Row counts of the main tables, for summaries.
    pub fn counts(&self) -> Result<StudyCounts> {
        let count = |table: &str| -> Result<u64> {
            let n: i64 =
                self.conn
                    .query_row(&format!("SELECT COUNT(*) FROM {table}"), [], |r| r.get(0))?;
            Ok(n as u64)
        };
        Ok(StudyCounts {
            items: count("items")?,
            contexts: count("contexts")?,
            rankers: count("rankers")?,
            // Entries, counted from the lists' arrays (one row per list since schema 3).
            ranked_items: self.conn.query_row(
                "SELECT COALESCE(SUM(json_array_length(items)), 0) FROM ranked_lists",
                [],
                |r| r.get::<_, i64>(0),
            )? as u64,
            scales: count("scales")?,
            reviewers: count("reviewers")?,
            grade_events: count("grade_events")?,
            current_grades: count("current_grades")?,
        })
    }
}

impl Study {
    /// The same counts as [`Study::counts`], taken from a snapshot loaded in the same
    /// read: only the history rows are counted in the file, since the snapshot holds
    /// every other figure already (counting the lists' entries in SQL parses every list).
    pub fn counts_beside(&self, snapshot: &super::snapshot::Snapshot) -> Result<StudyCounts> {
        let grade_events: i64 =
            self.conn
                .query_row("SELECT COUNT(*) FROM grade_events", [], |r| r.get(0))?;
        let machines_apart = match snapshot.machines_in_panel {
            true => 0,
            false => snapshot.machine_grades.len(),
        };
        let entries: usize = snapshot.lists.iter().flatten().map(Vec::len).sum();
        Ok(StudyCounts {
            items: snapshot.items.len() as u64,
            contexts: snapshot.contexts.len() as u64,
            rankers: snapshot.rankers.len() as u64,
            ranked_items: entries as u64,
            scales: snapshot.scales.len() as u64,
            reviewers: snapshot.reviewers.len() as u64,
            grade_events: grade_events as u64,
            current_grades: (snapshot.grades.len() + machines_apart) as u64,
        })
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
pub struct StudyCounts {
    pub items: u64,
    pub contexts: u64,
    pub rankers: u64,
    pub ranked_items: u64,
    pub scales: u64,
    pub reviewers: u64,
    pub grade_events: u64,
    pub current_grades: u64,
}
