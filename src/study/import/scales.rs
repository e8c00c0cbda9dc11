//! Scales and their levels; graded scales keep their meaning.

use std::collections::BTreeMap;

use rusqlite::{OptionalExtension, Transaction, params};

use super::{Fields, FileProgress, FileReport, SCALES, Source, each_row, input_error, report};
use crate::core::scale::{DESK_KEYS, MAX_LEVELS, gain_problem, gains_fall, is_desk_key};
use crate::study::Result;
use crate::study::csv_input::{Problem, ProblemLog, Problems};

/// One level as read: (line, value, label, gain, key, rubric, colour).
type LevelRow = (u64, u8, String, Option<f64>, String, String, String);

/// A level as stored: (value, label, gain, key, rubric, colour).
type StoredLevel = (u8, String, Option<f64>, String, String, String);

/// Where a scales file's problems point: its name and the value and key columns.
struct Place<'a> {
    file: &'a str,
    value_col: usize,
    key_col: usize,
}

impl Place<'_> {
    fn problem(&self, line: u64, column: usize, message: String) -> Problem {
        Problem {
            file: self.file.to_string(),
            line,
            column,
            message,
        }
    }
}

/// Scales are few and small, so their levels are gathered, checked per scale and then
/// written.
pub(super) fn import_scales(
    tx: &Transaction,
    src: &Source,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let mut log = ProblemLog::default();
    let mut scales: BTreeMap<String, Vec<LevelRow>> = BTreeMap::new();
    let mut place = Place {
        file: &src.name,
        value_col: 1,
        key_col: 0,
    };
    each_row(src, &SCALES, progress, &mut log, &mut |f, log| {
        place.value_col = f.col("value");
        place.key_col = f.col("key");
        if let Some((scale, level)) = checked_level(&f, log) {
            scales.entry(scale.to_string()).or_default().push(level);
        }
        Ok(())
    })?;
    check_numbering(&place, &mut scales, &mut log);
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "scales");
    warn_of_falling_gains(src, &scales, &mut report);
    for (name, levels) in scales {
        write_scale(tx, &place, (&name, &levels), &mut report)?;
    }
    Ok(report)
}

/// One row checked field by field; `None` once a problem is logged.
fn checked_level<'a>(f: &Fields<'a>, log: &mut ProblemLog) -> Option<(&'a str, LevelRow)> {
    let (Some(scale), Some(value_text), Some(label)) = (
        f.required("scale", log),
        f.required("value", log),
        f.required("label", log),
    ) else {
        return None;
    };
    let value = match value_text.parse::<u8>() {
        Ok(v) if (v as usize) < MAX_LEVELS => v,
        _ => {
            log.push(f.problem(
                "value",
                format!(
                    "value must be a whole number from 0 to {} (a scale has at most {MAX_LEVELS} levels), got \"{value_text}\"",
                    MAX_LEVELS - 1
                ),
            ));
            return None;
        }
    };
    let key = f.text("key").trim();
    if is_desk_key(key) {
        log.push(f.problem(
            "key",
            format!(
                "key \"{key}\" is kept by the grading desk ({}); choose another key, or leave it empty for the level's digit",
                DESK_KEYS.join(" ")
            ),
        ));
        return None;
    }
    let gain = f.optional_f64("gain", log)?;
    if let Some(problem) = gain.and_then(gain_problem) {
        log.push(f.problem("gain", problem));
        return None;
    }
    Some((
        scale,
        (
            f.row.line,
            value,
            label.to_string(),
            gain,
            key.to_string(),
            f.text("rubric").to_string(),
            f.text("colour").trim().to_string(),
        ),
    ))
}

/// Each scale's values run 0, 1, 2… without repeats, its keys are distinct, and it has
/// at least two levels. Sorts each scale's levels by value.
fn check_numbering(
    place: &Place,
    scales: &mut BTreeMap<String, Vec<LevelRow>>,
    log: &mut ProblemLog,
) {
    let (value_col, key_col) = (place.value_col, place.key_col);
    for (name, levels) in scales.iter_mut() {
        levels.sort_by_key(|l| (l.1, l.0));
        for (n, level) in levels.iter().enumerate() {
            if n > 0 && levels[n - 1].1 == level.1 {
                log.push(place.problem(
                    level.0,
                    value_col,
                    format!("value {} appears twice in scale \"{name}\"", level.1),
                ));
            } else if level.1 as usize != n && (n == 0 || levels[n - 1].1 != level.1) {
                log.push(place.problem(
                    level.0,
                    value_col,
                    format!(
                        "values of scale \"{name}\" must run 0, 1, 2… without gaps; {n} is missing"
                    ),
                ));
                break;
            }
        }
        for (n, level) in levels.iter().enumerate() {
            if !level.4.is_empty() && levels[..n].iter().any(|l| l.4 == level.4) {
                log.push(place.problem(
                    level.0,
                    key_col,
                    format!("key \"{}\" is used twice in scale \"{name}\"", level.4),
                ));
            }
        }
        if levels.len() < 2 {
            log.push(place.problem(
                levels[0].0,
                value_col,
                format!("scale \"{name}\" needs at least two levels"),
            ));
        }
    }
}

/// A warning for each scale whose gains fall as the level rises.
fn warn_of_falling_gains(
    src: &Source,
    scales: &BTreeMap<String, Vec<LevelRow>>,
    report: &mut FileReport,
) {
    for (name, levels) in scales {
        let gains: Vec<Option<f64>> = levels.iter().map(|l| l.3).collect();
        if gains_fall(&gains) {
            report.warnings.push(format!(
                "{}: scale \"{name}\" has gains that fall as the level rises ({}); a higher level then counts less in DCG — check the gain column",
                src.name,
                gains
                    .iter()
                    .map(|g| g.map_or("–".to_string(), |g| g.to_string()))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
    }
}

/// Adds or replaces one scale's levels; a graded scale keeps its values.
fn write_scale(
    tx: &Transaction,
    place: &Place,
    (name, levels): (&String, &[LevelRow]),
    report: &mut FileReport,
) -> Result<()> {
    let old: Vec<StoredLevel> = {
        let mut stmt = tx.prepare(
            "SELECT value, label, gain, key, rubric, colour FROM levels WHERE scale = ?1 ORDER BY value",
        )?;
        stmt.query_map([&name], |r| {
            Ok((
                r.get(0)?,
                r.get(1)?,
                r.get(2)?,
                r.get(3)?,
                r.get(4)?,
                r.get(5)?,
            ))
        })?
        .collect::<std::result::Result<_, _>>()?
    };
    let new: Vec<StoredLevel> = levels
        .iter()
        .map(|l| (l.1, l.2.clone(), l.3, l.4.clone(), l.5.clone(), l.6.clone()))
        .collect();
    if old == new {
        report.unchanged += new.len() as u64;
        return Ok(());
    }
    if !old.is_empty() {
        let graded: bool = tx
            .query_row(
                "SELECT 1 FROM grade_events WHERE scale = ?1 LIMIT 1",
                [&name],
                |_| Ok(true),
            )
            .optional()?
            .unwrap_or(false);
        let same_values = old.iter().map(|l| l.0).eq(new.iter().map(|l| l.0));
        if graded && !same_values {
            return Err(input_error(Problems(vec![place.problem(
                levels[0].0,
                place.value_col,
                format!("scale \"{name}\" already has grades; its levels cannot be added, removed or renumbered — give the changed scale a new name"),
            )])));
        }
        report.updated += new.len() as u64;
        tx.execute("DELETE FROM levels WHERE scale = ?1", [&name])?;
    } else {
        report.added += new.len() as u64;
        tx.execute("INSERT INTO scales(scale) VALUES (?1)", [&name])?;
    }
    let mut insert = tx.prepare(
        "INSERT INTO levels(scale, value, label, gain, key, rubric, colour) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
    )?;
    for (value, label, gain, key, rubric, colour) in new {
        insert.execute(params![name, value, label, gain, key, rubric, colour])?;
    }
    Ok(())
}
