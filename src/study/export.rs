//! Exports that people open in spreadsheets: every cell a spreadsheet would run as a
//! formula gets a leading apostrophe (import strips it again).

use std::io::Write;

use super::import::SETTLED_REVIEWER;
use super::{Result, Study};

/// Characters that make a spreadsheet read a cell as a formula when they come first:
/// OWASP's list (`=`, `+`, `-`, `@`, tab, carriage return) plus line feed and the
/// fullwidth forms of the four signs, which some spreadsheets fold to ASCII.
const FORMULA_STARTS: &[char] = &[
    '=', '+', '-', '@', '\t', '\r', '\n', '\u{FF1D}', '\u{FF0B}', '\u{FF0D}', '\u{FF20}',
];

/// True when an exported cell needs a leading apostrophe: it starts with a formula
/// character, possibly after spaces (some spreadsheets skip leading spaces before they
/// look), or it starts with an apostrophe itself (so that the guard can be told apart
/// from a value's own apostrophe on the way back). `;`, `|` and `%` start no formula on
/// their own (a DDE payload such as `=cmd|…` needs the `=`), so they are left alone.
pub fn needs_guard(text: &str) -> bool {
    text.starts_with('\'') || text.trim_start_matches(' ').starts_with(FORMULA_STARTS)
}

/// Removes the apostrophe `needs_guard` adds: only when what follows needs the guard.
/// A value's own leading apostrophe (`'tis`) is kept.
pub fn unguard(text: &str) -> &str {
    match text.strip_prefix('\'') {
        Some(rest) if needs_guard(rest) => rest,
        _ => text,
    }
}

/// Prefixes a cell a spreadsheet could run as a formula with an apostrophe (OWASP, "CSV
/// Injection"): see `needs_guard` for the exact rule. Import removes exactly
/// that apostrophe again (`unguard`), so export → import is lossless.
pub fn neutralise(text: &str) -> std::borrow::Cow<'_, str> {
    if needs_guard(text) {
        format!("'{text}").into()
    } else {
        text.into()
    }
}

/// `neutralise` for a cell of a report table: a plain number (`-0.25`) is left as it
/// is, since a spreadsheet reads it as that number and a reader expects it unquoted.
pub fn neutralise_cell(text: &str) -> std::borrow::Cow<'_, str> {
    if text.parse::<f64>().is_ok() {
        text.into()
    } else {
        neutralise(text)
    }
}

/// The columns of an exported grades file: import's columns plus reader-only ones.
pub const GRADE_COLUMNS: &[&str] = &[
    "reviewer",
    "context_id",
    "item_id",
    "scale",
    "value",
    "reason",
    "seconds",
    "graded_at",
    "note",
    "settled_by",
    "context_text",
    "item_title",
];

impl Study {
    /// Writes current grades (with can't-judge) and settled grades in force as CSV.
    /// Returns the number of rows written.
    pub fn export_grades(&self, out: &mut dyn Write) -> Result<u64> {
        let mut writer = csv::Writer::from_writer(out);
        let csv_err = |e: csv::Error| super::StudyError::Io(std::io::Error::other(e));
        // A `kind` column only when the study has a machine judge, so that a people-only
        // study exports exactly as it always did.
        let has_machines: bool = self.conn().query_row(
            "SELECT EXISTS (SELECT 1 FROM reviewers WHERE kind = 'machine')",
            [],
            |r| r.get(0),
        )?;
        let mut header: Vec<&str> = GRADE_COLUMNS.to_vec();
        if has_machines {
            header.push("kind");
        }
        writer.write_record(&header).map_err(csv_err)?;
        let mut rows = 0u64;
        let mut stmt = self.conn().prepare(
            "SELECT e.reviewer, e.context_id, e.item_id, e.scale, e.value, e.reason, e.seconds,
                    e.graded_at, e.note, '' AS settled_by, x.text, i.title, v.kind
             FROM current_grades c
             JOIN grade_events e ON e.id = c.event_id
             JOIN reviewers v ON v.reviewer = e.reviewer
             JOIN contexts x ON x.context_id = e.context_id
             JOIN items i ON i.item_id = e.item_id
             UNION ALL
             SELECT ?1, s.context_id, s.item_id, s.scale, s.value, s.reason, NULL,
                    s.settled_at, '', s.settled_by, x.text, i.title, ''
             FROM settle_events s
             JOIN contexts x ON x.context_id = s.context_id
             JOIN items i ON i.item_id = s.item_id
             WHERE s.value IS NOT NULL AND NOT EXISTS (
               SELECT 1 FROM settle_events t
               WHERE t.scale = s.scale AND t.context_id = s.context_id AND t.item_id = s.item_id
                 AND (t.settled_at > s.settled_at OR (t.settled_at = s.settled_at AND t.id > s.id)))
             ORDER BY 4, 2, 3, 1",
        )?;
        let mut result = stmt.query([SETTLED_REVIEWER])?;
        while let Some(r) = result.next()? {
            let value: Option<u8> = r.get(4)?;
            let seconds: Option<f64> = r.get(6)?;
            let texts: [String; 12] = [
                r.get(0)?,
                r.get(1)?,
                r.get(2)?,
                r.get(3)?,
                value.map(|v| v.to_string()).unwrap_or_default(),
                r.get(5)?,
                seconds.map(|s| s.to_string()).unwrap_or_default(),
                r.get(7)?,
                r.get(8)?,
                r.get(9)?,
                r.get(10)?,
                r.get(11)?,
            ];
            let kind: String = r.get(12)?;
            let kind = [kind];
            let extra: &[String] = if has_machines { &kind } else { &[] };
            writer
                .write_record(
                    texts
                        .iter()
                        .chain(extra)
                        .map(|t| neutralise(t).into_owned()),
                )
                .map_err(csv_err)?;
            rows += 1;
        }
        writer.flush()?;
        Ok(rows)
    }
}
