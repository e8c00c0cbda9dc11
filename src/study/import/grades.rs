//! Grades and settled grades, as history rows with content uids.

use std::collections::{HashMap, HashSet};

use rusqlite::{Transaction, params};

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
    // A reviewer is a person or a machine for good: the study's word, else the file's
    // first row for them.
    let mut kinds: HashMap<String, (&'static str, u64)> = HashMap::new();
    {
        let mut stmt = tx.prepare("SELECT reviewer, kind FROM reviewers")?;
        for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))? {
            let (reviewer, kind) = row?;
            kinds.insert(
                reviewer,
                (
                    if kind == "machine" {
                        "machine"
                    } else {
                        "person"
                    },
                    0,
                ),
            );
        }
    }
    let mut log = ProblemLog::default();
    let mut grades = Vec::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        // Names are kept exactly as written (not trimmed), so export → import is exact.
        let (Some(reviewer), Some(context), Some(item), Some(scale)) = (
            f.required_exact("reviewer", &mut log),
            f.required("context_id", &mut log),
            f.required("item_id", &mut log),
            f.required("scale", &mut log),
        ) else {
            continue;
        };
        let Some(levels) = refs.check(&f, context, item, scale, &mut log) else {
            continue;
        };
        let value_text = f.text("value").trim();
        let value = if value_text.is_empty() {
            None
        } else {
            match value_text.parse::<u8>() {
                Ok(v) if i64::from(v) < levels => Some(v),
                _ => {
                    log.push(f.problem(
                        "value",
                        format!("value must be a level of scale \"{scale}\" (0 to {}), got \"{value_text}\"", levels - 1),
                    ));
                    continue;
                }
            }
        };
        let Some(seconds) = f.optional_f64("seconds", &mut log) else {
            continue;
        };
        if seconds.is_some_and(|s| s < 0.0) {
            log.push(f.problem("seconds", "seconds must not be negative"));
            continue;
        }
        let at_text = f.text("graded_at").trim();
        let graded_at = if at_text.is_empty() {
            time::format_millis(0)
        } else {
            match time::normalise_checked(at_text) {
                Ok(t) => t,
                Err(why) => {
                    log.push(f.problem(
                        "graded_at",
                        format!("graded_at must be an RFC 3339 time such as 2026-11-16T09:14:03Z, got \"{at_text}\": {why}"),
                    ));
                    continue;
                }
            }
        };
        let settled_by = f.text("settled_by").trim();
        let text = EventText {
            who: if settled_by.is_empty() {
                reviewer
            } else {
                settled_by
            },
            who_column: if settled_by.is_empty() {
                "reviewer"
            } else {
                "settled_by"
            },
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
            continue;
        }
        let kind = match f.text("kind").trim() {
            "" | "person" => "person",
            "machine" => "machine",
            other => {
                log.push(f.problem(
                    "kind",
                    format!("kind must be person or machine, got \"{other}\""),
                ));
                continue;
            }
        };
        if settled_by.is_empty() {
            match kinds.get(reviewer) {
                Some((known, line)) if *known != kind => {
                    let whose = match *line {
                        0 => "in this study".to_string(),
                        n => format!("on line {n}"),
                    };
                    log.push(f.problem(
                        "kind",
                        format!("reviewer \"{reviewer}\" is a {known} {whose}; a reviewer's kind cannot change"),
                    ));
                    continue;
                }
                Some(_) => {}
                None => {
                    kinds.insert(reviewer.to_string(), (kind, row.line));
                }
            }
        }
        grades.push(ImportedGrade {
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
        });
        if log.is_full() {
            break;
        }
    }
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "grades");
    let mut add_reviewer =
        tx.prepare("INSERT OR IGNORE INTO reviewers(reviewer, kind) VALUES (?1, ?2)")?;
    let mut insert = tx.prepare(
        "INSERT OR IGNORE INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
    )?;
    let mut settle = tx.prepare(
        "INSERT OR IGNORE INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
         VALUES (?1, ?2, ?3, ?4, ?5, 'imported', ?6, ?7, ?8)",
    )?;
    let mut known_uid = tx.prepare("SELECT EXISTS (SELECT 1 FROM grade_events WHERE uid = ?1)")?;
    let mut known_settlement = tx.prepare(
        "SELECT EXISTS (SELECT 1 FROM settle_events
         WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3 AND settled_at = ?4
           AND value IS ?5 AND settled_by = ?6 AND reason = ?7)",
    )?;
    let mut known_reviewers: HashSet<&str> = HashSet::new();
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
    for g in &grades {
        progress.rows(report.added + report.unchanged);
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
            known_settlement.query_row(
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
            known_uid.query_row([content_uid(&with_action)], |r| r.get::<_, bool>(0))?
        };
        if already {
            report.unchanged += 1;
            continue;
        }
        let changed = if is_settlement {
            settle.execute(params![
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
            if known_reviewers.insert(g.reviewer) {
                add_reviewer.execute([g.reviewer, g.kind])?;
            }
            insert.execute(params![
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
        if changed == 0 {
            report.unchanged += 1;
        } else {
            report.added += 1;
        }
    }
    tx.execute(
        "DELETE FROM settings WHERE key = ?1",
        [schema::BULK_GRADES_KEY],
    )?;
    schema::refresh_current_grades(tx, events_before)?;
    Ok(report)
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
