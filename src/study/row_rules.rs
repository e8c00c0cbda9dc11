//! The rules a stored grade or settled grade obeys, whichever door it comes in by: an
//! import of grades.csv or a merge of a study from elsewhere. One validator per kind of
//! row, so that nothing a merge accepts could not also be imported, and a merged study
//! exports and re-imports identically.

use super::csv_input::MAX_FIELD_BYTES;
use super::time;

/// The text fields of one grade event or settled grade, as they would be stored.
#[derive(Debug, Clone, Copy, Default)]
pub struct EventText<'a> {
    /// The reviewer (for a grade) or the settler (for a settled grade).
    pub who: &'a str,
    /// The column `who` comes from: `reviewer` or `settled_by`.
    pub who_column: &'static str,
    pub context: &'a str,
    pub item: &'a str,
    pub scale: &'a str,
    pub reason: &'a str,
    pub note: &'a str,
    /// The time in the study's normalised form.
    pub at: &'a str,
}

/// What is wrong with one field of a text: a NUL byte, or more than the field limit.
pub fn text_problem(text: &str) -> Option<String> {
    if text.len() > MAX_FIELD_BYTES {
        Some(format!(
            "is {} bytes long; the limit is {MAX_FIELD_BYTES} bytes",
            text.len()
        ))
    } else {
        text.bytes()
            .position(|b| b == 0)
            .map(|at| format!("contains a NUL byte at byte {}", at + 1))
    }
}

/// True for the ids events carry: a content digest, 32 lowercase hex digits (imports
/// make them with `core::digest::content_uid`; a merge checks the copy's).
pub fn is_digest(uid: &str) -> bool {
    uid.len() == 32 && uid.bytes().all(|b| matches!(b, b'0'..=b'9' | b'a'..=b'f'))
}

/// Every problem of one event's text fields, as (field, message) pairs; empty when the
/// row may be stored.
pub fn event_problems(row: &EventText) -> Vec<(&'static str, String)> {
    let mut out = Vec::new();
    let fields = [
        (row.who_column, row.who, true),
        ("context_id", row.context, true),
        ("item_id", row.item, true),
        ("scale", row.scale, true),
        ("reason", row.reason, false),
        ("note", row.note, false),
    ];
    for (name, text, required) in fields {
        if required && text.trim().is_empty() {
            out.push((name, "is empty".to_string()));
        } else if let Some(problem) = text_problem(text) {
            out.push((name, problem));
        }
    }
    if time::normalise_checked(row.at).ok().as_deref() != Some(row.at) {
        let why = time::normalise_checked(row.at)
            .err()
            .unwrap_or_else(|| "it is not in the study's normalised form".into());
        out.push(("graded_at", format!("\"{}\" is refused: {why}", row.at)));
    }
    out
}

/// What is wrong with a grade's seconds spent, if anything.
pub fn seconds_problem(seconds: f64) -> Option<&'static str> {
    (!seconds.is_finite() || seconds < 0.0).then_some("seconds must be a number not below 0")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn good() -> EventText<'static> {
        EventText {
            who: "ann",
            who_column: "reviewer",
            context: "q1",
            item: "i1",
            scale: "fit",
            reason: "",
            note: "",
            at: "2026-11-16T09:14:03.000Z",
        }
    }

    #[test]
    fn a_good_row_passes_and_each_bad_field_is_named() {
        assert!(event_problems(&good()).is_empty());
        let long = "x".repeat(MAX_FIELD_BYTES + 1);
        assert!(is_digest("0123456789abcdef0123456789abcdef"));
        assert!(!is_digest("not-a-digest") && !is_digest("0123456789ABCDEF0123456789abcdef"));
        let cases: [(EventText, &str); 4] = [
            (
                EventText {
                    note: &long,
                    ..good()
                },
                "note",
            ),
            (
                EventText {
                    who: "a\0b",
                    ..good()
                },
                "reviewer",
            ),
            (
                EventText {
                    context: " ",
                    ..good()
                },
                "context_id",
            ),
            (
                EventText {
                    at: "9999-01-01T00:00:00.000Z",
                    ..good()
                },
                "graded_at",
            ),
        ];
        for (row, field) in cases {
            let problems = event_problems(&row);
            assert_eq!(problems.len(), 1, "{field}: {problems:?}");
            assert_eq!(problems[0].0, field);
        }
    }
}
