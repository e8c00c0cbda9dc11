//! Grades and settled grades, as history rows with content uids. The file is read as a
//! stream and each checked row written at once; a large import sets the history's
//! trigger and secondary indexes aside and builds them once at the end.

use std::collections::{HashMap, HashSet};

use rusqlite::{Statement, Transaction, params};

use super::{
    Fields, FileProgress, FileReport, GRADES, IMPORT_CACHE_KIB, PairRefs, SORT_CACHE_KIB, Source,
    content_uid, each_row, input_error, report,
};
use crate::study::csv_input::ProblemLog;
use crate::study::row_rules::{self, EventText};
use crate::study::scratch::{FirstSeen, Scratch};
use crate::study::{Result, grade_packs, schema, time};

pub(super) fn import_grades(
    tx: &Transaction,
    src: &Source,
    scratch: &Scratch,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let mut checks = GradeChecks {
        refs: PairRefs::load(tx)?,
        kinds: ReviewerKinds::load(tx, scratch)?,
        times: Times::default(),
    };
    let mut log = ProblemLog::default();
    let mut writer = GradeWriter::new(tx, src)?;
    each_row(src, &GRADES, progress, &mut log, &mut |f, log| {
        if let Some(grade) = checked_grade(&f, &mut checks, log)?
            && log.0.is_empty()
        {
            writer.write(&grade)?;
        }
        Ok(())
    })?;
    log.into_result().map_err(input_error)?;
    progress.finishing();
    writer.finish(tx)
}

/// What a grade row is checked against: the study's ids and scales, the reviewers'
/// kinds, and the time of the row before.
struct GradeChecks<'s> {
    refs: PairRefs,
    kinds: ReviewerKinds<'s>,
    times: Times,
}

/// The `graded_at` column normalised, remembering the last text read: a machine judge's
/// rows often share one time, and parsing one costs more than the rest of the row.
#[derive(Default)]
struct Times {
    last: Option<(String, String)>,
}

impl Times {
    /// The `graded_at` column, normalised; empty reads as the epoch.
    fn normalised(&mut self, f: &Fields, log: &mut ProblemLog) -> Option<String> {
        let at_text = f.text("graded_at").trim();
        if let Some((text, normalised)) = &self.last
            && text == at_text
        {
            return Some(normalised.clone());
        }
        let normalised = match at_text.is_empty() {
            true => Ok(time::format_millis(0)),
            false => time::normalise_checked(at_text),
        };
        match normalised {
            Ok(t) => {
                self.last = Some((at_text.to_string(), t.clone()));
                Some(t)
            }
            Err(why) => {
                log.push(f.problem(
                    "graded_at",
                    format!("graded_at must be an RFC 3339 time such as 2026-11-16T09:14:03Z, got \"{at_text}\": {why}"),
                ));
                None
            }
        }
    }
}

/// A reviewer is a person or a machine for good: the study's word, else the file's
/// first row for them (kept in the scratch database, the latest few in memory).
struct ReviewerKinds<'s> {
    study: HashMap<String, &'static str>,
    file: FirstSeen<'s>,
    recent: HashMap<String, (&'static str, u64)>,
}

/// Reviewers of a file whose kind is remembered in memory besides the scratch database.
const RECENT_REVIEWERS: usize = 4_096;

impl<'s> ReviewerKinds<'s> {
    fn load(tx: &Transaction, scratch: &'s Scratch) -> Result<Self> {
        let mut study = HashMap::new();
        let mut stmt = tx.prepare("SELECT reviewer, kind FROM reviewers")?;
        for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))? {
            let (reviewer, kind) = row?;
            study.insert(reviewer, kind_word(&kind));
        }
        Ok(ReviewerKinds {
            study,
            file: scratch.keys()?,
            recent: HashMap::new(),
        })
    }

    /// The reviewer's kind and where it was fixed (line 0: the study), or None when this
    /// row is the first for them (its kind is then theirs).
    fn fixed(
        &mut self,
        reviewer: &str,
        kind: &'static str,
        line: u64,
    ) -> Result<Option<(&'static str, u64)>> {
        if let Some(&known) = self.study.get(reviewer) {
            return Ok(Some((known, 0)));
        }
        if let Some(&known) = self.recent.get(reviewer) {
            return Ok(Some(known));
        }
        let found = self
            .file
            .first(reviewer, kind, line)?
            .map(|(word, line)| (kind_word(&word), line));
        if self.recent.len() >= RECENT_REVIEWERS {
            self.recent.clear();
        }
        self.recent
            .insert(reviewer.to_string(), found.unwrap_or((kind, line)));
        Ok(found)
    }
}

fn kind_word(kind: &str) -> &'static str {
    if kind == "machine" {
        "machine"
    } else {
        "person"
    }
}

/// One row checked field by field; `None` once a problem is logged.
fn checked_grade<'a>(
    f: &Fields<'a>,
    checks: &mut GradeChecks,
    log: &mut ProblemLog,
) -> Result<Option<ImportedGrade<'a>>> {
    let Some(grade) = checked_fields(f, &checks.refs, &mut checks.times, log) else {
        return Ok(None);
    };
    // A settlement's reviewer column is not a reviewer's word about their own kind.
    if grade.settled_by.is_empty()
        && let Some((known, line)) = checks.kinds.fixed(grade.reviewer, grade.kind, f.row.line)?
        && known != grade.kind
    {
        let whose = match line {
            0 => "in this study".to_string(),
            n => format!("on line {n}"),
        };
        log.push(f.problem(
            "kind",
            format!(
                "reviewer \"{}\" is a {known} {whose}; a reviewer's kind cannot change",
                grade.reviewer
            ),
        ));
        return Ok(None);
    }
    Ok(Some(grade))
}

/// One row's fields checked one by one; `None` once a problem is logged.
fn checked_fields<'a>(
    f: &Fields<'a>,
    refs: &PairRefs,
    times: &mut Times,
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
    let graded_at = times.normalised(f, log)?;
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

/// The history's trigger and secondary indexes, set aside by a large import (in this
/// order) and built again in reverse order once every event is in.
const SET_ASIDE: [(&str, &str); 6] = [
    ("TRIGGER", "current_grades_added"),
    ("TRIGGER", "current_grades_removed"),
    ("TRIGGER", "current_grades_changed"),
    ("TRIGGER", "grade_events_keep_current"),
    ("INDEX", "current_grades_by_reviewer"),
    ("INDEX", "grade_events_by_key"),
];

/// Bytes of a grades file per event the study must already have for the file to be
/// written through the indexes as they are, row by row; below that the import is large
/// next to the study, and building the indexes once, sorted, is cheaper than a random
/// B-tree insert per row and index. Either way gives the same study.
const BYTES_PER_EVENT_FOR_ROW_BY_ROW: u64 = 32;

/// Writes grade rows as they come, with statements prepared once.
struct GradeWriter<'t> {
    add_reviewer: Statement<'t>,
    insert: Statement<'t>,
    settle: Statement<'t>,
    /// Probes for an event or settlement already in the study; None when the study had
    /// none before this import (a repeat within the file meets the uid's unique index).
    known_uid: Option<Statement<'t>>,
    known_settlement: Option<Statement<'t>>,
    /// Reviewers added lately (adding one is idempotent; this only saves statements).
    reviewers: HashSet<String>,
    report: FileReport,
    events_before: i64,
    /// The SQL of what a large import set aside, to build it again at the end.
    set_aside: Option<Vec<String>>,
}

impl<'t> GradeWriter<'t> {
    fn new(tx: &'t Transaction, src: &Source) -> Result<Self> {
        let events_before: i64 =
            tx.query_row("SELECT COALESCE(MAX(id), 0) FROM grade_events", [], |r| {
                r.get(0)
            })?;
        let settled_before: bool =
            tx.query_row("SELECT EXISTS (SELECT 1 FROM settle_events)", [], |r| {
                r.get(0)
            })?;
        let large = src.size() / BYTES_PER_EVENT_FOR_ROW_BY_ROW > events_before as u64;
        let set_aside = if large {
            Some(set_aside(tx)?)
        } else {
            // The trigger stands aside for this transaction (see `schema::BULK_GRADES_KEY`).
            tx.execute(
                "INSERT OR REPLACE INTO settings(key, value) VALUES (?1, '1')",
                [schema::BULK_GRADES_KEY],
            )?;
            None
        };
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
            known_uid: (events_before > 0)
                .then(|| tx.prepare("SELECT EXISTS (SELECT 1 FROM grade_events WHERE uid = ?1)"))
                .transpose()?,
            known_settlement: settled_before
                .then(|| {
                    tx.prepare(
                        "SELECT EXISTS (SELECT 1 FROM settle_events
                         WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3 AND settled_at = ?4
                           AND value IS ?5 AND settled_by = ?6 AND reason = ?7)",
                    )
                })
                .transpose()?,
            reviewers: HashSet::new(),
            report: report(src, "grades"),
            events_before,
            set_aside,
        })
    }

    /// Writes one row, counting it as added, or unchanged when the study has it.
    fn write(&mut self, g: &ImportedGrade) -> Result<()> {
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
        let changed = if g.settled_by.is_empty() {
            self.write_grade(g, &parts, &uid, action)?
        } else {
            self.write_settlement(g, &uid)?
        };
        if changed {
            self.report.added += 1;
        } else {
            self.report.unchanged += 1;
        }
        Ok(())
    }

    fn write_grade(
        &mut self,
        g: &ImportedGrade,
        parts: &[&str],
        uid: &str,
        action: &str,
    ) -> Result<bool> {
        if let Some(known_uid) = &mut self.known_uid {
            // Grades given at the desk before this build carry the action in their uid.
            let mut with_action = parts.to_vec();
            with_action.push(action);
            if known_uid.query_row([content_uid(&with_action)], |r| r.get::<_, bool>(0))? {
                return Ok(false);
            }
        }
        if !self.reviewers.contains(g.reviewer) {
            if self.reviewers.len() >= RECENT_REVIEWERS {
                self.reviewers.clear();
            }
            self.reviewers.insert(g.reviewer.to_string());
            self.add_reviewer.execute([g.reviewer, g.kind])?;
        }
        let changed = self.insert.execute(params![
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
        ])?;
        Ok(changed != 0)
    }

    /// A settlement is a row with `settled_by` (whatever its reviewer column says); the
    /// same settlement already in the study, however it got there, is unchanged.
    fn write_settlement(&mut self, g: &ImportedGrade, uid: &str) -> Result<bool> {
        if let Some(known) = &mut self.known_settlement {
            let already = known.query_row(
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
            )?;
            if already {
                return Ok(false);
            }
        }
        let changed = self.settle.execute(params![
            uid,
            g.context,
            g.item,
            g.scale,
            g.value,
            g.settled_by,
            g.graded_at,
            g.reason
        ])?;
        Ok(changed != 0)
    }

    /// Brings `current_grades` up to date with the new events (and builds again what a
    /// large import set aside).
    fn finish(self, tx: &Transaction) -> Result<FileReport> {
        let GradeWriter {
            report,
            events_before,
            set_aside,
            ..
        } = self;
        match set_aside {
            Some(sql) => {
                tx.pragma_update(None, "cache_size", SORT_CACHE_KIB)?;
                // Each in turn: the events' index first, which the pass over current
                // grades reads in order; the trigger last.
                let mut sql = sql.into_iter().rev();
                if let Some(by_key) = sql.next() {
                    tx.execute_batch(&by_key)?;
                }
                schema::rebuild_current_grades(tx)?;
                for statement in sql {
                    tx.execute_batch(&statement)?;
                }
                grade_packs::pack_all(tx)?;
                tx.pragma_update(None, "cache_size", IMPORT_CACHE_KIB)?;
            }
            None => {
                tx.execute(
                    "DELETE FROM settings WHERE key = ?1",
                    [schema::BULK_GRADES_KEY],
                )?;
                schema::refresh_current_grades(tx, events_before)?;
                grade_packs::repack_stale(tx)?;
            }
        }
        Ok(report)
    }
}

/// Drops the history's trigger and secondary indexes, returning the SQL that made them
/// (as the schema holds it, so that building them again restores the schema exactly).
fn set_aside(tx: &Transaction) -> Result<Vec<String>> {
    let mut made = Vec::new();
    for (kind, name) in SET_ASIDE {
        let sql: String = tx.query_row(
            "SELECT sql FROM sqlite_schema WHERE type = lower(?1) AND name = ?2",
            [kind, name],
            |r| r.get(0),
        )?;
        tx.execute_batch(&format!("DROP {kind} {name}"))?;
        made.push(sql);
    }
    Ok(made)
}

/// One checked row, its texts borrowed from the row just read.
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
