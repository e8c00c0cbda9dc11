//! Writing single grades as reviewers give them: each in its own transaction, committed
//! before the desk shows the next card.

use rusqlite::params;

use super::import::content_uid;
use super::{Result, Study, StudyError, time};

/// What a reviewer did to one pair.
#[derive(Debug, Clone, PartialEq)]
pub enum GradeAction {
    Grade(u8),
    CantJudge {
        reason: String,
    },
    /// Withdraws the reviewer's current grade of the pair.
    Undo,
}

/// One grade as given at the desk.
#[derive(Debug, Clone, PartialEq)]
pub struct NewGrade {
    pub reviewer: String,
    pub context_id: String,
    pub item_id: String,
    pub scale: String,
    pub action: GradeAction,
    pub seconds: f64,
    pub note: String,
}

/// Where the grade and settle histories stand. Both only grow, so a different mark means
/// grades or settled grades arrived (from this program or another) since it was read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GradesMark {
    last_grade: i64,
    last_settle: i64,
}

impl Study {
    /// The grades' mark now; two primary-key lookups, cheap enough to ask every second.
    pub fn grades_mark(&self) -> Result<GradesMark> {
        Ok(self.conn().query_row(
            "SELECT (SELECT COALESCE(MAX(id), 0) FROM grade_events),
                    (SELECT COALESCE(MAX(id), 0) FROM settle_events)",
            [],
            |r| {
                Ok(GradesMark {
                    last_grade: r.get(0)?,
                    last_settle: r.get(1)?,
                })
            },
        )?)
    }

    /// Adds a reviewer (idempotent).
    pub fn add_reviewer(&self, reviewer: &str) -> Result<()> {
        if reviewer.trim().is_empty() {
            return Err(StudyError::input("a reviewer needs a name"));
        }
        self.conn().execute(
            "INSERT OR IGNORE INTO reviewers(reviewer) VALUES (?1)",
            [reviewer],
        )?;
        Ok(())
    }

    /// Records a grade durably and returns its event id. The write is one transaction
    /// with synchronous=FULL, so an acknowledged grade survives a crash.
    pub fn record_grade(&mut self, grade: &NewGrade) -> Result<i64> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        let graded_at = time::now();
        let (action, value, reason) = match &grade.action {
            GradeAction::Grade(v) => ("grade", Some(*v), String::new()),
            GradeAction::CantJudge { reason } => ("cant_judge", None, reason.clone()),
            GradeAction::Undo => ("undo", None, String::new()),
        };
        let value_text = value.map(|v| v.to_string()).unwrap_or_default();
        let seconds_text = grade.seconds.to_string();
        let uid = content_uid(&[
            &grade.reviewer,
            &grade.context_id,
            &grade.item_id,
            &grade.scale,
            &value_text,
            &reason,
            &seconds_text,
            &graded_at,
            &grade.note,
            action,
        ]);
        let tx = self.begin_write()?;
        tx.execute(
            "INSERT OR IGNORE INTO reviewers(reviewer) VALUES (?1)",
            [&grade.reviewer],
        )?;
        tx.execute(
            "INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
            params![
                uid,
                grade.reviewer,
                grade.context_id,
                grade.item_id,
                grade.scale,
                action,
                value,
                reason,
                grade.seconds,
                graded_at,
                grade.note
            ],
        )?;
        let id = tx.last_insert_rowid();
        super::grade_packs::repack_stale(&tx)?;
        tx.commit()?;
        Ok(id)
    }
}
