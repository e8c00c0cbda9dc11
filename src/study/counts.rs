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
