//! Ranked lists: by rank or by score, checked list by list. The same reader serves the
//! import and `score --rankings` (lists scored from a file without importing them).

use std::collections::{HashMap, HashSet};

use rusqlite::{Transaction, params};

use super::{
    Fields, FileProgress, FileReport, RANKINGS, Source, id_set, input_error, parse, report,
};
use crate::core::fast_hash::{FastMap, FastSet};
use crate::study::Result;
use crate::study::csv_input::{ProblemLog, Table};
use crate::study::schema::list_json;

/// One row of a ranked list as read from the file.
struct RankedRow<'a> {
    line: u64,
    item: &'a str,
    rank: Option<u64>,
    score: Option<f64>,
}

/// One checked list: its ranker, context and (item, score) entries in rank order.
pub(crate) struct ParsedList<'a> {
    pub ranker: &'a str,
    pub context: &'a str,
    pub entries: Vec<(&'a str, Option<f64>)>,
}

/// What the reader does with ids the study does not have.
pub(crate) struct KnownIds<'k> {
    pub contexts: &'k dyn Fn(&str) -> bool,
    pub items: &'k dyn Fn(&str) -> bool,
    /// Import: an unknown id is a problem. Scoring from a file: a list of an unknown
    /// context is left out (and counted), an unknown item stays in its list, unjudged.
    pub refuse_unknown: bool,
}

/// Lists read from a file; `left_out` counts lists whose context the study lacks and
/// `left_out_contexts` those contexts (each once, however many rankers list it).
pub(crate) struct ReadLists<'a> {
    pub lists: Vec<ParsedList<'a>>,
    pub left_out: usize,
    pub left_out_contexts: usize,
}

/// Reads and checks every list of a rankings table: no item twice in a list, ranks 1..n
/// without gaps or repeats, scores finite; score-ordered lists rank higher scores first,
/// ties by item id ascending. Problems go to `log` with their line and column.
pub(crate) fn read_lists<'a>(
    table: &'a Table,
    known: &KnownIds,
    log: &mut ProblemLog,
) -> ReadLists<'a> {
    let has_rank = table.column("rank").is_some();
    let has_score = table.column("score").is_some();
    if !has_rank && !has_score {
        log.push(table.problem(
            1,
            table.header.len() + 1,
            "rankings need a rank or a score column",
        ));
        return ReadLists {
            lists: Vec::new(),
            left_out: 0,
            left_out_contexts: 0,
        };
    }
    // Lists in order of first appearance, found by (ranker, context); sorted at the end.
    let mut lists: Vec<((&str, &str), Vec<RankedRow>)> = Vec::new();
    let mut list_at: FastMap<(&str, &str), usize> = FastMap::default();
    let mut left_out: FastSet<(&str, &str)> = FastSet::default();
    for row in &table.rows {
        let f = Fields { table, row };
        let (Some(ranker), Some(context), Some(item)) = (
            f.required("ranker", log),
            f.required("context_id", log),
            f.required("item_id", log),
        ) else {
            continue;
        };
        if !(known.contexts)(context) {
            if known.refuse_unknown {
                log.push(f.problem(
                    "context_id",
                    format!("unknown context \"{context}\"; import it in contexts.csv first"),
                ));
                continue;
            }
            left_out.insert((ranker, context));
        }
        if known.refuse_unknown && !(known.items)(item) {
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
        let at = *list_at.entry((ranker, context)).or_insert_with(|| {
            lists.push(((ranker, context), Vec::new()));
            lists.len() - 1
        });
        lists[at].1.push(RankedRow {
            line: row.line,
            item,
            rank,
            score,
        });
        if log.is_full() {
            break;
        }
    }
    lists.sort_unstable_by(|a, b| a.0.cmp(&b.0));
    let item_col = table.column("item_id").unwrap_or(0) + 1;
    let rank_col = table.column("rank").unwrap_or(0) + 1;
    let mut ordered = Vec::with_capacity(lists.len());
    let mut by_item: Vec<(&str, u64)> = Vec::new();
    for ((ranker, context), mut rows) in lists {
        // Repeats found by sorting a copy: lists are short, a hash set per list is not.
        by_item.clear();
        by_item.extend(rows.iter().map(|r| (r.item, r.line)));
        by_item.sort_unstable();
        for pair in by_item.windows(2) {
            if pair[0].0 == pair[1].0 {
                log.push(table.problem(
                    pair[1].1,
                    item_col,
                    format!("item \"{}\" appears twice in the list of ranker \"{ranker}\" for context \"{context}\" (first on line {})", pair[1].0, pair[0].1),
                ));
            }
        }
        if has_rank {
            rows.sort_by_key(|r| (r.rank, r.line));
            let mut repeated = false;
            for pair in rows.windows(2) {
                if pair[0].rank == pair[1].rank {
                    repeated = true;
                    log.push(table.problem(
                        pair[1].line,
                        rank_col,
                        format!("rank {} is used twice in the list of ranker \"{ranker}\" for context \"{context}\" (first on line {})", pair[1].rank.unwrap_or(0), pair[0].line),
                    ));
                }
            }
            if let Some((n, r)) = rows
                .iter()
                .enumerate()
                .find(|(n, r)| r.rank != Some(*n as u64 + 1))
                && !repeated
            {
                log.push(table.problem(
                    r.line,
                    rank_col,
                    format!("ranks must run 1, 2, 3… in each list; rank {} is missing in the list of ranker \"{ranker}\" for context \"{context}\"", n + 1),
                ));
            }
        } else {
            rows.sort_by(|a, b| {
                crate::core::stats::value_order(
                    b.score.unwrap_or(f64::NEG_INFINITY),
                    a.score.unwrap_or(f64::NEG_INFINITY),
                )
                .then_with(|| a.item.cmp(b.item))
            });
        }
        if left_out.contains(&(ranker, context)) {
            continue;
        }
        ordered.push(ParsedList {
            ranker,
            context,
            entries: rows.into_iter().map(|r| (r.item, r.score)).collect(),
        });
    }
    let left_out_contexts = left_out
        .iter()
        .map(|(_, context)| *context)
        .collect::<FastSet<&str>>()
        .len();
    ReadLists {
        lists: ordered,
        left_out: left_out.len(),
        left_out_contexts,
    }
}

pub(super) fn import_rankings(
    tx: &Transaction,
    src: &Source,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let table = parse(src, &RANKINGS)?;
    progress.total(table.rows.len() as u64);
    let contexts = id_set(tx, "SELECT context_id FROM contexts")?;
    let items = id_set(tx, "SELECT item_id FROM items")?;
    let mut log = ProblemLog::default();
    let known = KnownIds {
        contexts: &|c| contexts.contains(c),
        items: &|i| items.contains(i),
        refuse_unknown: true,
    };
    let read = read_lists(&table, &known, &mut log);
    log.into_result().map_err(input_error)?;

    let mut report = report(src, "rankings");
    let mut stored: HashMap<(String, String), (String, Option<String>)> = HashMap::new();
    {
        let mut stmt = tx.prepare("SELECT ranker, context_id, items, scores FROM ranked_lists")?;
        let mut rows = stmt.query([])?;
        while let Some(r) = rows.next()? {
            stored.insert((r.get(0)?, r.get(1)?), (r.get(2)?, r.get(3)?));
        }
    }
    let mut add_ranker = tx.prepare("INSERT OR IGNORE INTO rankers(ranker) VALUES (?1)")?;
    let mut upsert = tx.prepare(
        "INSERT INTO ranked_lists(ranker, context_id, items, scores) VALUES (?1, ?2, ?3, ?4)
         ON CONFLICT(ranker, context_id) DO UPDATE SET items = excluded.items, scores = excluded.scores",
    )?;
    let mut known_rankers: HashSet<&str> = HashSet::new();
    let mut ids: Vec<String> = Vec::new();
    let mut scores: Vec<Option<f64>> = Vec::new();
    for list in &read.lists {
        progress.rows(report.added + report.updated + report.unchanged);
        if known_rankers.insert(list.ranker) {
            add_ranker.execute([list.ranker])?;
        }
        ids.clear();
        scores.clear();
        for (item, score) in &list.entries {
            ids.push((*item).to_string());
            scores.push(*score);
        }
        let (items_json, scores_json) = list_json(&ids, &scores);
        let entries = list.entries.len() as u64;
        match stored.get(&(list.ranker.to_string(), list.context.to_string())) {
            Some((old_items, old_scores))
                if *old_items == items_json && *old_scores == scores_json =>
            {
                report.unchanged += entries;
                continue;
            }
            Some(_) => report.updated += entries,
            None => report.added += entries,
        }
        upsert.execute(params![list.ranker, list.context, items_json, scores_json])?;
    }
    Ok(report)
}
