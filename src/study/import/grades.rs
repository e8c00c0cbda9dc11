//! Grades and settled grades, as history rows with content uids.

use std::collections::{HashMap, HashSet};

use rusqlite::{Statement, Transaction, params};

use super::{
    Fields, FileProgress, FileReport, GRADES, PairRefs, Source, content_uid, input_error, parse,
    report,
};
use crate::study::csv_input::ProblemLog;
use crate::study::row_rules::{self, EventText};
use crate::study::{Result, schema, time};

pub(super) fn import_grades(
    tx: &Transaction,
    src: &Source,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let table = parse(src, &GRADES)?;
    progress.total(table.rows.len() as u64);
    let refs = PairRefs::load(tx)?;
    let mut kinds = reviewer_kinds(tx)?;
    let mut log = ProblemLog::default();
    let mut grades = Vec::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let Some(grade) = checked_grade(&f, &refs, &mut kinds, &mut log) else {
            continue;
        };
        grades.push(grade);
        if log.is_full() {
            break;
        }
    }
    log.into_result().map_err(input_error)?;
    write_grades(tx, src, &grades, progress)
}

/// Each reviewer's kind and the line that fixed it (0: the study's word).
type ReviewerKinds = HashMap<String, (&'static str, u64)>;

/// A reviewer is a person or a machine for good: the study's word, else the file's
/// first row for them.
fn reviewer_kinds(tx: &Transaction) -> Result<ReviewerKinds> {
    let mut kinds = ReviewerKinds::new();
    let mut stmt = tx.prepare("SELECT reviewer, kind FROM reviewers")?;
    for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))? {
        let (reviewer, kind) = row?;
        let kind = if kind == "machine" {
            "machine"
        } else {
            "person"
        };
        kinds.insert(reviewer, (kind, 0));
    }
    Ok(kinds)
}

/// One row checked field by field; `None` once a problem is logged.
fn checked_grade<'a>(
    f: &Fields<'a>,
    refs: &PairRefs,
    kinds: &mut ReviewerKinds,
    log: &mut ProblemLog,
) -> Option<ImportedGrade<'a>> {
    // Names are kept exactly as written (not trimmed), so export → import is exact.
    let (Some(reviewer), Some(context), Some(item), Some(scale)) = (
        f.required_exact("reviewer", log),
        f.required("context_id", log),
        f.required("item_id", log),
        f.required("scale", log),
    ) else {
        return None;
    };
    let levels = refs.check(f, context, item, scale, log)?;
    let value = checked_value(f, scale, levels, log)?;
    let seconds = f.optional_f64("seconds", log)?;
    if seconds.is_some_and(|s| s < 0.0) {
        log.push(f.problem("seconds", "seconds must not be negative"));
        return None;
    }
    let graded_at = checked_time(f, log)?;
    let settled_by = f.text("settled_by").trim();
    let (who, who_column) = match settled_by.is_empty() {
        true => (reviewer, "reviewer"),
        false => (settled_by, "settled_by"),
    };
    let text = EventText {
        who,
        who_column,
        context,
        item,
        scale,
        reason: f.text("reason"),
        note: f.text("note"),
        at: &graded_at,
    };
    let found = row_rules::event_problems(&text);
    if !found.is_empty() {
        for (field, problem) in found {
            log.push(f.problem(field, format!("{field} {problem}")));
        }
        return None;
    }
    let kind = checked_kind(f, log)?;
    if settled_by.is_empty() {
        keep_kind(f, kinds, reviewer, kind, log)?;
    }
    Some(ImportedGrade {
        reviewer,
        context,
        item,
        scale,
        value,
        reason: f.text("reason"),
        seconds,
        graded_at,
        note: f.text("note"),
        settled_by,
        kind,
    })
}

/// The `value` column: a level of the scale, or empty for "can't judge".
fn checked_value(f: &Fields, scale: &str, levels: i64, log: &mut ProblemLog) -> Option<Option<u8>> {
    let value_text = f.text("value").trim();
    if value_text.is_empty() {
        return Some(None);
    }
    match value_text.parse::<u8>() {
        Ok(v) if i64::from(v) < levels => Some(Some(v)),
        _ => {
            log.push(f.problem(
                "value",
                format!(
                    "value must be a level of scale \"{scale}\" (0 to {}), got \"{value_text}\"",
                    levels - 1
                ),
            ));
            None
        }
    }
}

/// The `graded_at` column, normalised; empty reads as the epoch.
fn checked_time(f: &Fields, log: &mut ProblemLog) -> Option<String> {
    let at_text = f.text("graded_at").trim();
    if at_text.is_empty() {
        return Some(time::format_millis(0));
    }
    match time::normalise_checked(at_text) {
        Ok(t) => Some(t),
        Err(why) => {
            log.push(f.problem(
                "graded_at",
                format!("graded_at must be an RFC 3339 time such as 2026-11-16T09:14:03Z, got \"{at_text}\": {why}"),
            ));
            None
        }
    }
}

/// The `kind` column: person (also when empty) or machine.
fn checked_kind(f: &Fields, log: &mut ProblemLog) -> Option<&'static str> {
    match f.text("kind").trim() {
        "" | "person" => Some("person"),
        "machine" => Some("machine"),
        other => {
            log.push(f.problem(
                "kind",
                format!("kind must be person or machine, got \"{other}\""),
            ));
            None
        }
    }
}

/// Refuses a row that would change a reviewer's kind; the first row for a new reviewer
/// fixes it.
fn keep_kind(
    f: &Fields,
    kinds: &mut ReviewerKinds,
    reviewer: &str,
    kind: &'static str,
    log: &mut ProblemLog,
) -> Option<()> {
    match kinds.get(reviewer) {
        Some((known, line)) if *known != kind => {
            let whose = match *line {
                0 => "in this study".to_string(),
                n => format!("on line {n}"),
            };
            log.push(f.problem(
                "kind",
                format!(
                    "reviewer \"{reviewer}\" is a {known} {whose}; a reviewer's kind cannot change"
                ),
            ));
            return None;
        }
        Some(_) => {}
        None => {
            kinds.insert(reviewer.to_string(), (kind, f.row.line));
        }
    }
    Some(())
}

/// Writes the checked rows; a row already in the study counts as unchanged.
fn write_grades(
    tx: &Transaction,
    src: &Source,
    grades: &[ImportedGrade],
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let mut report = report(src, "grades");
    let mut writer = GradeWriter::new(tx)?;
    // The keep-current trigger would seek and rewrite `current_grades` once per row;
    // for this transaction it stands aside and one set-based pass follows the inserts.
    let events_before: i64 =
        tx.query_row("SELECT COALESCE(MAX(id), 0) FROM grade_events", [], |r| {
            r.get(0)
        })?;
    tx.execute(
        "INSERT OR REPLACE INTO settings(key, value) VALUES (?1, '1')",
        [schema::BULK_GRADES_KEY],
    )?;
    for g in grades {
        progress.rows(report.added + report.unchanged);
        if writer.write(g)? {
            report.added += 1;
        } else {
            report.unchanged += 1;
        }
    }
    tx.execute(
        "DELETE FROM settings WHERE key = ?1",
        [schema::BULK_GRADES_KEY],
    )?;
    schema::refresh_current_grades(tx, events_before)?;
    Ok(report)
}

/// The statements a grades import writes with, prepared once.
struct GradeWriter<'t, 'g> {
    add_reviewer: Statement<'t>,
    insert: Statement<'t>,
    settle: Statement<'t>,
    known_uid: Statement<'t>,
    known_settlement: Statement<'t>,
    known_reviewers: HashSet<&'g str>,
}

impl<'t, 'g> GradeWriter<'t, 'g> {
    fn new(tx: &'t Transaction) -> Result<Self> {
        Ok(GradeWriter {
            add_reviewer: tx
                .prepare("INSERT OR IGNORE INTO reviewers(reviewer, kind) VALUES (?1, ?2)")?,
            insert: tx.prepare(
                "INSERT OR IGNORE INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
            )?,
            settle: tx.prepare(
                "INSERT OR IGNORE INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
                 VALUES (?1, ?2, ?3, ?4, ?5, 'imported', ?6, ?7, ?8)",
            )?,
            known_uid: tx
                .prepare("SELECT EXISTS (SELECT 1 FROM grade_events WHERE uid = ?1)")?,
            known_settlement: tx.prepare(
                "SELECT EXISTS (SELECT 1 FROM settle_events
                 WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3 AND settled_at = ?4
                   AND value IS ?5 AND settled_by = ?6 AND reason = ?7)",
            )?,
            known_reviewers: HashSet::new(),
        })
    }

    /// Writes one row; false when it was already in the study.
    fn write(&mut self, g: &'g ImportedGrade) -> Result<bool> {
        let value_text = g.value.map(|v| v.to_string()).unwrap_or_default();
        let seconds_text = g.seconds.map(|s| s.to_string()).unwrap_or_default();
        let parts = [
            g.reviewer,
            g.context,
            g.item,
            g.scale,
            &value_text,
            g.reason,
            &seconds_text,
            &g.graded_at,
            g.note,
        ];
        let uid = content_uid(&parts);
        let action = if g.value.is_some() {
            "grade"
        } else {
            "cant_judge"
        };
        // A settlement is a row with `settled_by` (whatever its reviewer column says);
        // the same settlement already in the study, however it got there, is unchanged.
        let is_settlement = !g.settled_by.is_empty();
        let already = if is_settlement {
            self.known_settlement.query_row(
                params![
                    g.scale,
                    g.context,
                    g.item,
                    g.graded_at,
                    g.value,
                    g.settled_by,
                    g.reason
                ],
                |r| r.get::<_, bool>(0),
            )?
        } else {
            // Grades given at the desk before this build carry the action in their uid.
            let mut with_action = parts.to_vec();
            with_action.push(action);
            self.known_uid
                .query_row([content_uid(&with_action)], |r| r.get::<_, bool>(0))?
        };
        if already {
            return Ok(false);
        }
        let changed = if is_settlement {
            self.settle.execute(params![
                uid,
                g.context,
                g.item,
                g.scale,
                g.value,
                g.settled_by,
                g.graded_at,
                g.reason
            ])?
        } else {
            if self.known_reviewers.insert(g.reviewer) {
                self.add_reviewer.execute([g.reviewer, g.kind])?;
            }
            self.insert.execute(params![
                uid,
                g.reviewer,
                g.context,
                g.item,
                g.scale,
                action,
                g.value,
                g.reason,
                g.seconds,
                g.graded_at,
                g.note
            ])?
        };
        Ok(changed != 0)
    }
}

/// One checked row, its texts borrowed from the parsed file (a large import holds
/// every row at once, so owned copies would double its memory).
struct ImportedGrade<'a> {
    reviewer: &'a str,
    context: &'a str,
    item: &'a str,
    scale: &'a str,
    value: Option<u8>,
    reason: &'a str,
    seconds: Option<f64>,
    graded_at: String,
    note: &'a str,
    settled_by: &'a str,
    /// `person` or `machine`.
    kind: &'static str,
}
