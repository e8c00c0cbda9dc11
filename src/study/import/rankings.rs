//! Ranked lists: by rank or by score, checked list by list.

use std::collections::{BTreeMap, HashMap, HashSet};

use rusqlite::{Transaction, params};

use super::{Fields, FileReport, RANKINGS, Source, id_set, input_error, parse, report};
use crate::study::Result;
use crate::study::csv_input::ProblemLog;

/// (rank, item, score) of one stored list entry.
type RankedEntry = (i64, String, Option<f64>);

/// One row of a ranked list as read from the file.
struct RankedRow {
    line: u64,
    item: String,
    rank: Option<u64>,
    score: Option<f64>,
}

pub(super) fn import_rankings(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &RANKINGS)?;
    let has_rank = table.column("rank").is_some();
    let has_score = table.column("score").is_some();
    let mut log = ProblemLog::default();
    if !has_rank && !has_score {
        log.push(table.problem(
            1,
            table.header.len() + 1,
            "rankings need a rank or a score column",
        ));
    }
    log.into_result().map_err(input_error)?;
    let mut log = ProblemLog::default();
    let contexts = id_set(tx, "SELECT context_id FROM contexts")?;
    let items = id_set(tx, "SELECT item_id FROM items")?;
    let mut lists: BTreeMap<(String, String), Vec<RankedRow>> = BTreeMap::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let (Some(ranker), Some(context), Some(item)) = (
            f.required("ranker", &mut log),
            f.required("context_id", &mut log),
            f.required("item_id", &mut log),
        ) else {
            continue;
        };
        if !contexts.contains(context) {
            log.push(f.problem(
                "context_id",
                format!("unknown context \"{context}\"; import it in contexts.csv first"),
            ));
            continue;
        }
        if !items.contains(item) {
            log.push(f.problem(
                "item_id",
                format!("unknown item \"{item}\"; import it in items.csv first"),
            ));
            continue;
        }
        let rank = if has_rank {
            let text = f.text("rank").trim();
            match text.parse::<u64>() {
                Ok(r) if r >= 1 => Some(r),
                _ => {
                    log.push(f.problem(
                        "rank",
                        format!("rank must be a positive integer, got \"{text}\""),
                    ));
                    continue;
                }
            }
        } else {
            None
        };
        let score = if has_score {
            let text = f.text("score").trim();
            match text.parse::<f64>() {
                Ok(s) if s.is_finite() => Some(s),
                _ if has_rank && text.is_empty() => None,
                _ => {
                    log.push(f.problem("score", format!("score must be a number, got \"{text}\"")));
                    continue;
                }
            }
        } else {
            None
        };
        lists
            .entry((ranker.to_string(), context.to_string()))
            .or_default()
            .push(RankedRow {
                line: row.line,
                item: item.to_string(),
                rank,
                score,
            });
        if log.is_full() {
            break;
        }
    }
    // Per list: no item twice, ranks 1..n without gaps or repeats; scores give ranks.
    let mut ordered: Vec<((String, String), Vec<RankedEntry>)> = Vec::new();
    for (key, mut rows) in lists {
        let mut seen_items: HashMap<&str, u64> = HashMap::new();
        for r in &rows {
            if let Some(first) = seen_items.insert(r.item.as_str(), r.line) {
                log.push(table.problem(
                    r.line,
                    table.column("item_id").unwrap_or(0) + 1,
                    format!("item \"{}\" appears twice in the list of ranker \"{}\" for context \"{}\" (first on line {first})", r.item, key.0, key.1),
                ));
            }
        }
        if has_rank {
            let rank_col = table.column("rank").unwrap_or(0) + 1;
            let mut by_rank: HashMap<u64, u64> = HashMap::new();
            for r in &rows {
                if let Some(first) = by_rank.insert(r.rank.unwrap_or(0), r.line) {
                    log.push(table.problem(
                        r.line,
                        rank_col,
                        format!("rank {} is used twice in the list of ranker \"{}\" for context \"{}\" (first on line {first})", r.rank.unwrap_or(0), key.0, key.1),
                    ));
                }
            }
            rows.sort_by_key(|r| r.rank);
            if let Some((n, r)) = rows
                .iter()
                .enumerate()
                .find(|(n, r)| r.rank != Some(*n as u64 + 1))
                && by_rank.len() == rows.len()
            {
                log.push(table.problem(
                    r.line,
                    rank_col,
                    format!("ranks must run 1, 2, 3… in each list; rank {} is missing in the list of ranker \"{}\" for context \"{}\"", n + 1, key.0, key.1),
                ));
            }
        } else {
            rows.sort_by(|a, b| {
                b.score
                    .unwrap_or(f64::NEG_INFINITY)
                    .total_cmp(&a.score.unwrap_or(f64::NEG_INFINITY))
                    .then_with(|| a.item.cmp(&b.item))
            });
        }
        let list = rows
            .into_iter()
            .enumerate()
            .map(|(n, r)| (n as i64 + 1, r.item, r.score))
            .collect();
        ordered.push((key, list));
    }
    log.into_result().map_err(input_error)?;

    let mut report = report(src, "rankings");
    let mut add_ranker = tx.prepare("INSERT OR IGNORE INTO rankers(ranker) VALUES (?1)")?;
    let mut load = tx.prepare(
        "SELECT rank, item_id, score FROM ranked_items WHERE ranker = ?1 AND context_id = ?2 ORDER BY rank",
    )?;
    let mut delete =
        tx.prepare("DELETE FROM ranked_items WHERE ranker = ?1 AND context_id = ?2")?;
    let mut insert = tx.prepare(
        "INSERT INTO ranked_items(ranker, context_id, rank, item_id, score) VALUES (?1, ?2, ?3, ?4, ?5)",
    )?;
    let mut known_rankers: HashSet<String> = HashSet::new();
    for ((ranker, context), list) in ordered {
        if known_rankers.insert(ranker.clone()) {
            add_ranker.execute([&ranker])?;
        }
        let old: Vec<RankedEntry> = load
            .query_map([&ranker, &context], |r| {
                Ok((r.get(0)?, r.get(1)?, r.get(2)?))
            })?
            .collect::<std::result::Result<_, _>>()?;
        if old == list {
            report.unchanged += list.len() as u64;
            continue;
        }
        if old.is_empty() {
            report.added += list.len() as u64;
        } else {
            report.updated += list.len() as u64;
            delete.execute([&ranker, &context])?;
        }
        for (rank, item, score) in &list {
            insert.execute(params![ranker, context, rank, item, score])?;
        }
    }
    Ok(report)
}
