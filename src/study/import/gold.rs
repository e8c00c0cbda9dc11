//! Gold pairs: pairs with a known level, mixed into queues to check reviewers, with the
//! rationale a reviewer in training sees after grading one.

use std::collections::HashMap;

use rusqlite::{Transaction, params};

use super::{Fields, FileProgress, FileReport, GOLD, PairRefs, Source, input_error, parse, report};
use crate::study::Result;
use crate::study::csv_input::ProblemLog;

pub(super) fn import_gold(
    tx: &Transaction,
    src: &Source,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let table = parse(src, &GOLD)?;
    progress.total(table.rows.len() as u64);
    let refs = PairRefs::load(tx)?;
    let mut log = ProblemLog::default();
    let mut seen: HashMap<(&str, &str, &str), u64> = HashMap::new();
    let mut rows: Vec<(&str, &str, &str, u8, &str)> = Vec::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let (Some(context), Some(item), Some(scale)) = (
            f.required("context_id", &mut log),
            f.required("item_id", &mut log),
            f.required("scale", &mut log),
        ) else {
            continue;
        };
        let Some(levels) = refs.check(&f, context, item, scale, &mut log) else {
            continue;
        };
        let text = f.text("value").trim();
        let value = match text.parse::<u8>() {
            Ok(v) if i64::from(v) < levels => v,
            _ => {
                log.push(f.problem(
                    "value",
                    format!(
                        "a gold pair needs its known level of scale \"{scale}\" (0 to {}), got \"{text}\"",
                        levels - 1
                    ),
                ));
                continue;
            }
        };
        if let Some(first) = seen.insert((scale, context, item), row.line) {
            log.push(f.problem(
                "item_id",
                format!("the gold pair ({context}, {item}) on scale \"{scale}\" is given twice (first on line {first})"),
            ));
            continue;
        }
        rows.push((context, item, scale, value, f.text("rationale")));
        if log.is_full() {
            break;
        }
    }
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "gold");
    let mut existing = tx.prepare(
        "SELECT value, rationale FROM gold_pairs WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3",
    )?;
    let mut upsert = tx.prepare(
        "INSERT INTO gold_pairs(context_id, item_id, scale, value, rationale) VALUES (?1, ?2, ?3, ?4, ?5)
         ON CONFLICT(scale, context_id, item_id) DO UPDATE SET value = excluded.value, rationale = excluded.rationale",
    )?;
    for (n, (context, item, scale, value, rationale)) in rows.iter().enumerate() {
        progress.rows(n as u64);
        let old: Option<(u8, String)> = existing
            .query_map(params![scale, context, item], |r| {
                Ok((r.get(0)?, r.get(1)?))
            })?
            .next()
            .transpose()?;
        match old {
            Some((v, r)) if v == *value && r == *rationale => {
                report.unchanged += 1;
                continue;
            }
            Some(_) => report.updated += 1,
            None => report.added += 1,
        }
        upsert.execute(params![context, item, scale, value, rationale])?;
    }
    Ok(report)
}
