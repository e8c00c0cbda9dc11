//! Reading a copy's rows: its definitions compared with this study's (`definitions.rs`),
//! then every grade and settle event checked as strictly as an import.

use std::collections::{BTreeMap, HashSet};

use rusqlite::types::Value;

use super::definitions::{Definitions, definition_problems};
use super::refused;
use crate::study::row_rules::{self, EventText};
use crate::study::untrusted::{self, CheckedCopy, integer, number, text};
use crate::study::{Result, StudyError};

/// A grade event as read from a copy, checked.
pub(super) struct GradeRow {
    pub(super) uid: String,
    pub(super) reviewer: String,
    pub(super) context: String,
    pub(super) item: String,
    pub(super) scale: String,
    pub(super) action: String,
    pub(super) value: Option<i64>,
    pub(super) reason: String,
    pub(super) seconds: Option<f64>,
    pub(super) graded_at: String,
    pub(super) note: String,
}

/// A settle event as read from a copy, checked.
pub(super) struct SettleRow {
    pub(super) uid: String,
    pub(super) context: String,
    pub(super) item: String,
    pub(super) scale: String,
    pub(super) value: Option<i64>,
    pub(super) method: String,
    pub(super) settled_by: String,
    pub(super) settled_at: String,
    pub(super) reason: String,
}

/// What a copy would bring, after every check: whose events it holds and how many.
/// The rows themselves are streamed again when they are written (`each_grade`).
pub(super) struct CopySummary {
    pub(super) handed_out_to: Option<String>,
    pub(super) copy_id: Option<String>,
    /// Grade events per reviewer.
    pub(super) grades_by: BTreeMap<String, u64>,
    /// Settled grades per settler.
    pub(super) settled_by: BTreeMap<String, u64>,
    /// Every event of both kinds.
    pub(super) events: u64,
}

/// Collects problems, at most a screenful.
#[derive(Default)]
pub(super) struct Problems(Vec<String>);

impl Problems {
    pub(super) fn push(&mut self, p: String) {
        if self.0.len() < 12 {
            self.0.push(p);
        }
    }
}

/// Checks a text column: present, text, within bounds.
pub(super) fn text_field(
    row: &[Value],
    i: usize,
    what: &str,
    at: &str,
    problems: &mut Problems,
) -> Option<String> {
    match text(&row[i]) {
        Some(t) => Some(t.to_string()),
        None => {
            problems.push(format!("{at}: {what} is not text ({})", kind(&row[i])));
            None
        }
    }
}

pub(super) fn kind(value: &Value) -> &'static str {
    match value {
        Value::Null => "empty",
        Value::Integer(_) => "a whole number",
        Value::Real(_) => "a number",
        Value::Text(_) => "text",
        Value::Blob(_) => "a blob",
    }
}

/// Ids the incoming events refer to (bounded by the catalog, not by the events).
#[derive(Default)]
pub(super) struct Used {
    pub(super) items: HashSet<String>,
    pub(super) contexts: HashSet<String>,
    pub(super) scales: HashSet<String>,
}

impl Used {
    fn note(&mut self, context: &str, item: &str, scale: &str) {
        for (set, id) in [
            (&mut self.contexts, context),
            (&mut self.items, item),
            (&mut self.scales, scale),
        ] {
            if !set.contains(id) {
                set.insert(id.to_string());
            }
        }
    }
}

pub(super) const ACTIONS: [&str; 3] = ["grade", "cant_judge", "undo"];

/// Checks one event of a copy by the rules an import holds (`row_rules`), plus its id:
/// a digest this program writes. (Ids held twice are found by `repeated_ids`.)
fn row_problems(at: &str, uid: &str, text: &EventText, problems: &mut Problems) -> bool {
    let mut found: Vec<String> = row_rules::event_problems(text)
        .into_iter()
        .map(|(field, problem)| format!("{at}: {field} {problem}"))
        .collect();
    if !row_rules::is_digest(uid) {
        found.push(format!(
            "{at}: its id is not an event id this program writes (32 hex digits)"
        ));
    }
    let ok = found.is_empty();
    for p in found {
        problems.push(p);
    }
    ok
}

const GRADE_ROWS: &str = "SELECT uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note, id
     FROM grade_events ORDER BY graded_at, id";
const SETTLE_ROWS: &str =
    "SELECT uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason, id
     FROM settle_events ORDER BY settled_at, id";

/// Reads one grade event of a copy, or says what is wrong with it.
fn grade_row(row: &[Value], here: &Definitions, problems: &mut Problems) -> Option<GradeRow> {
    let at = format!("grade event {}", integer(&row[11]).unwrap_or(0));
    let fields: Vec<Option<String>> = [
        (0, "uid"),
        (1, "reviewer"),
        (2, "context_id"),
        (3, "item_id"),
        (4, "scale"),
        (5, "action"),
        (7, "reason"),
        (9, "graded_at"),
        (10, "note"),
    ]
    .iter()
    .map(|(i, what)| text_field(row, *i, what, &at, problems))
    .collect();
    let [
        Some(uid),
        Some(reviewer),
        Some(context),
        Some(item),
        Some(scale),
        Some(action),
        Some(reason),
        Some(graded_at),
        Some(note),
    ] = <[Option<String>; 9]>::try_from(fields).unwrap_or_default()
    else {
        return None;
    };
    if !ACTIONS.contains(&action.as_str()) {
        problems.push(format!("{at}: unknown action \"{action}\""));
        return None;
    }
    let text = EventText {
        who: &reviewer,
        who_column: "reviewer",
        context: &context,
        item: &item,
        scale: &scale,
        reason: &reason,
        note: &note,
        at: &graded_at,
    };
    if !row_problems(&at, &uid, &text, problems) {
        return None;
    }
    let (value, seconds) = grade_numbers(row, &action, &scale, here, &at, problems)?;
    Some(GradeRow {
        uid,
        reviewer,
        context,
        item,
        scale,
        action,
        value,
        reason,
        seconds,
        graded_at,
        note,
    })
}

/// A grade event's level and seconds, checked against the scale here.
fn grade_numbers(
    row: &[Value],
    action: &str,
    scale: &str,
    here: &Definitions,
    at: &str,
    problems: &mut Problems,
) -> Option<(Option<i64>, Option<f64>)> {
    let levels = here.levels.get(scale).map_or(0, Vec::len) as i64;
    let value = match (&row[6], action) {
        (Value::Null, "cant_judge" | "undo") => None,
        (Value::Integer(v), "grade") if (0..levels.max(1)).contains(v) => Some(*v),
        (Value::Integer(v), "grade") if levels > 0 => {
            problems.push(format!(
                "{at}: value {v} is not a level of scale \"{scale}\" (0 to {})",
                levels - 1
            ));
            return None;
        }
        (Value::Integer(_), "grade") => None, // scale unknown here: reported below
        (other, _) => {
            problems.push(format!(
                "{at}: value is {} for a \"{action}\" row",
                kind(other)
            ));
            return None;
        }
    };
    let seconds = match &row[8] {
        Value::Null => None,
        v => match number(v) {
            Some(s) if row_rules::seconds_problem(s).is_none() => Some(s),
            _ => {
                problems.push(format!("{at}: seconds is {} and not a time", kind(v)));
                return None;
            }
        },
    };
    Some((value, seconds))
}

/// Reads one settled grade of a copy, or says what is wrong with it.
fn settle_row(row: &[Value], here: &Definitions, problems: &mut Problems) -> Option<SettleRow> {
    let at = format!("settled grade {}", integer(&row[9]).unwrap_or(0));
    let fields: Vec<Option<String>> = [
        (0, "uid"),
        (1, "context_id"),
        (2, "item_id"),
        (3, "scale"),
        (5, "method"),
        (6, "settled_by"),
        (7, "settled_at"),
        (8, "reason"),
    ]
    .iter()
    .map(|(i, what)| text_field(row, *i, what, &at, problems))
    .collect();
    let [
        Some(uid),
        Some(context),
        Some(item),
        Some(scale),
        Some(method),
        Some(settled_by),
        Some(settled_at),
        Some(reason),
    ] = <[Option<String>; 8]>::try_from(fields).unwrap_or_default()
    else {
        return None;
    };
    let levels = here.levels.get(&scale).map_or(0, Vec::len) as i64;
    let value = match &row[4] {
        Value::Null => None,
        Value::Integer(v) if (0..levels).contains(v) || levels == 0 => Some(*v),
        other => {
            problems.push(format!(
                "{at}: value {other:?} is not a level of scale \"{scale}\""
            ));
            return None;
        }
    };
    let text = EventText {
        who: &settled_by,
        who_column: "settled_by",
        context: &context,
        item: &item,
        scale: &scale,
        reason: &reason,
        note: "",
        at: &settled_at,
    };
    if !row_problems(&at, &uid, &text, problems) {
        return None;
    }
    Some(SettleRow {
        uid,
        context,
        item,
        scale,
        value,
        method,
        settled_by,
        settled_at,
        reason,
    })
}

/// Ids held by more than one event of a table (a copy edited to hold two events with
/// one id passes SQLite's `quick_check`, which does not check UNIQUE constraints, and
/// one of them would be dropped silently). Read without the index, which an edited
/// copy could have made lie.
fn repeated_ids(
    copy: &CheckedCopy,
    table: &str,
    what: &str,
    problems: &mut Problems,
) -> Result<()> {
    let sql =
        format!("SELECT uid FROM {table} NOT INDEXED GROUP BY uid HAVING COUNT(*) > 1 LIMIT 5");
    untrusted::for_each_row(copy, &sql, 1, |row| {
        if let Some(uid) = text(&row[0]) {
            problems.push(format!(
                "{what}: its id {uid} is held by another event of the copy too (an edited copy)"
            ));
        }
        Ok(())
    })
}

/// Reads and checks every event of a copy, streaming (nothing of the copy is held but
/// the names it uses and their counts), and returns what it would bring.
pub(super) fn check_copy(copy: &CheckedCopy, here: &Definitions) -> Result<CopySummary> {
    let mut problems = Problems::default();
    let setting = |key: &str| -> Result<Option<String>> {
        let mut found = None;
        untrusted::for_each_row(
            copy,
            &format!("SELECT value FROM settings WHERE key = '{key}'"),
            1,
            |r| {
                found = text(&r[0]).map(str::to_string);
                Ok(())
            },
        )?;
        Ok(found)
    };
    let mut summary = CopySummary {
        handed_out_to: setting(crate::study::settings::keys::HANDED_OUT_TO)?,
        copy_id: setting(crate::study::settings::keys::COPY_ID)?,
        grades_by: BTreeMap::new(),
        settled_by: BTreeMap::new(),
        events: 0,
    };
    let mut used = Used::default();
    untrusted::for_each_row(copy, GRADE_ROWS, 12, |row| {
        if let Some(g) = grade_row(row, here, &mut problems) {
            used.note(&g.context, &g.item, &g.scale);
            *summary.grades_by.entry(g.reviewer).or_default() += 1;
            summary.events += 1;
        }
        Ok(())
    })?;
    untrusted::for_each_row(copy, SETTLE_ROWS, 10, |row| {
        if let Some(s) = settle_row(row, here, &mut problems) {
            used.note(&s.context, &s.item, &s.scale);
            *summary.settled_by.entry(s.settled_by).or_default() += 1;
            summary.events += 1;
        }
        Ok(())
    })?;
    repeated_ids(copy, "grade_events", "a grade event", &mut problems)?;
    repeated_ids(copy, "settle_events", "a settled grade", &mut problems)?;
    definition_problems(copy, &used, here, &mut problems)?;
    if !problems.0.is_empty() {
        return Err(refused(
            &copy.path,
            format!("nothing was merged: {}", problems.0.join("; ")),
        ));
    }
    Ok(summary)
}

/// A copy whose rows changed between the check and the write (it is opened immutable,
/// so only another program rewriting the file could do that).
fn changed(copy: &CheckedCopy, problems: &Problems) -> StudyError {
    refused(
        &copy.path,
        format!(
            "the copy changed while it was being merged; nothing was merged ({})",
            problems.0.join("; ")
        ),
    )
}

/// Streams the copy's grade events (checked by `check_copy` before) to `each`.
pub(super) fn each_grade(
    copy: &CheckedCopy,
    here: &Definitions,
    mut each: impl FnMut(GradeRow) -> Result<()>,
) -> Result<()> {
    untrusted::for_each_row(copy, GRADE_ROWS, 12, |row| {
        let mut problems = Problems::default();
        match grade_row(row, here, &mut problems) {
            Some(g) => each(g),
            None => Err(changed(copy, &problems)),
        }
    })
}

/// Streams the copy's settled grades (checked by `check_copy` before) to `each`.
pub(super) fn each_settlement(
    copy: &CheckedCopy,
    here: &Definitions,
    mut each: impl FnMut(SettleRow) -> Result<()>,
) -> Result<()> {
    untrusted::for_each_row(copy, SETTLE_ROWS, 10, |row| {
        let mut problems = Problems::default();
        match settle_row(row, here, &mut problems) {
            Some(s) => each(s),
            None => Err(changed(copy, &problems)),
        }
    })
}
