//! Gold pairs: pairs with a known level, mixed into queues to check reviewers, with the
//! rationale a reviewer in training sees after grading one.

use rusqlite::{OptionalExtension, Transaction, params};

use super::{
    Fields, FileProgress, FileReport, GOLD, PairRefs, Source, each_row, input_error, report,
};
use crate::study::Result;
use crate::study::csv_input::ProblemLog;
use crate::study::scratch::Scratch;

pub(super) fn import_gold(
    tx: &Transaction,
    src: &Source,
    scratch: &Scratch,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let refs = PairRefs::load(tx)?;
    let mut log = ProblemLog::default();
    let mut seen = scratch.keys()?;
    let mut report = report(src, "gold");
    let mut existing = tx.prepare(
        "SELECT value, rationale FROM gold_pairs WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3",
    )?;
    let mut upsert = tx.prepare(
        "INSERT INTO gold_pairs(context_id, item_id, scale, value, rationale) VALUES (?1, ?2, ?3, ?4, ?5)
         ON CONFLICT(scale, context_id, item_id) DO UPDATE SET value = excluded.value, rationale = excluded.rationale",
    )?;
    each_row(src, &GOLD, progress, &mut log, &mut |f, log| {
        let Some((context, item, scale, value)) = checked_pair(&f, &refs, log) else {
            return Ok(());
        };
        let key = [scale, context, item].join("\0");
        if let Some((_, first)) = seen.first(&key, &key, f.row.line)? {
            log.push(f.problem(
                "item_id",
                format!("the gold pair ({context}, {item}) on scale \"{scale}\" is given twice (first on line {first})"),
            ));
            return Ok(());
        }
        if !log.0.is_empty() {
            return Ok(());
        }
        let rationale = f.text("rationale");
        let old: Option<(u8, String)> = existing
            .query_row(params![scale, context, item], |r| {
                Ok((r.get(0)?, r.get(1)?))
            })
            .optional()?;
        match old {
            Some((v, r)) if v == value && r == rationale => {
                report.unchanged += 1;
                return Ok(());
            }
            Some(_) => report.updated += 1,
            None => report.added += 1,
        }
        upsert.execute(params![context, item, scale, value, rationale])?;
        Ok(())
    })?;
    log.into_result().map_err(input_error)?;
    Ok(report)
}

/// One row's pair and known level checked; `None` once a problem is logged.
fn checked_pair<'a>(
    f: &Fields<'a>,
    refs: &PairRefs,
    log: &mut ProblemLog,
) -> Option<(&'a str, &'a str, &'a str, u8)> {
    let (Some(context), Some(item), Some(scale)) = (
        f.required("context_id", log),
        f.required("item_id", log),
        f.required("scale", log),
    ) else {
        return None;
    };
    let levels = refs.check(f, context, item, scale, log)?;
    let text = f.text("value").trim();
    match text.parse::<u8>() {
        Ok(v) if i64::from(v) < levels => Some((context, item, scale, v)),
        _ => {
            log.push(f.problem(
                "value",
                format!(
                    "a gold pair needs its known level of scale \"{scale}\" (0 to {}), got \"{text}\"",
                    levels - 1
                ),
            ));
            None
        }
    }
}
