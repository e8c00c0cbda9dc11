//! Ranked lists: by rank or by score, checked list by list. The same reader serves the
//! import and `score --rankings` (lists scored from a file without importing them).
//! The file is read as a stream. A list whose rows are together in the file (as every
//! export writes them) is checked and handed on as soon as the next list starts, so
//! memory holds one list; a file whose lists are scattered is read once more, its rows
//! held in the scratch database and read back sorted by list.

use std::collections::HashSet;
use std::io::BufRead;
use std::ops::Range;

use rusqlite::{OptionalExtension, Statement, Transaction, params};

use super::{Fields, FileProgress, FileReport, RANKINGS, Source, id_set, input_error, report};
use crate::study::Result;
use crate::study::csv_input::{CsvRows, Problem, ProblemLog};
use crate::study::schema::list_json;
use crate::study::scratch::{FirstSeen, Scratch, StagedRow};

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

/// How a file's rows reach their lists.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Order {
    /// As the file has them: each list's rows must be together.
    AsWritten,
    /// Held in the scratch database and read back sorted by list: any order of rows.
    Sorted,
}

/// What reading a file's lists gave.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum ListsRead {
    /// Every row was read: lists handed on, lists left out for an unknown context, and
    /// those contexts (each once, however many rankers list it).
    Done {
        lists: usize,
        left_out: usize,
        left_out_contexts: usize,
    },
    /// Read as written, one list's rows turned out not to be together: whatever was done
    /// with the lists handed on must be undone, and the file read again `Order::Sorted`.
    Scattered,
}

/// Reads and checks every list of a rankings file: no item twice in a list, ranks 1..n
/// without gaps or repeats, scores finite; score-ordered lists rank higher scores first,
/// ties by item id ascending. Each list is handed to `on_list` once checked, as long as
/// no problem has been found (after one the rest is only checked). Problems go to `log`
/// with their line and column; `progress` gets rows and bytes read.
pub(crate) fn read_lists<R: BufRead>(
    rows: &mut CsvRows<R>,
    known: &KnownIds,
    scratch: &Scratch,
    order: Order,
    log: &mut ProblemLog,
    on_list: &mut dyn FnMut(&ParsedList) -> Result<()>,
    progress: &mut dyn FnMut(u64, u64),
) -> Result<ListsRead> {
    let Some(columns) = columns(rows, log) else {
        while rows.next_row(log).is_some() {}
        return Ok(ListsRead::Done {
            lists: 0,
            left_out: 0,
            left_out_contexts: 0,
        });
    };
    let mut list = Gathering::new(rows.file(), columns);
    let mut unknown = scratch.keys()?;
    let mut each = |row: StagedRow, log: &mut ProblemLog| -> Result<bool> {
        let (ranker, context, line, item, rank, score) = row;
        let new_list = !list.is(ranker, context);
        if new_list {
            list.finish(known, &mut unknown, log, on_list)?;
            list.start(ranker, context);
        }
        list.push(line, item, rank, score);
        Ok(new_list)
    };
    match order {
        Order::AsWritten => {
            let mut seen = scratch.keys()?;
            let mut n = 0;
            loop {
                progress(n, rows.bytes_read());
                let Some(row) = rows.next_row(log) else { break };
                n += 1;
                let Some(row) = checked_row(&Fields { row }, columns, known, log) else {
                    continue;
                };
                let (ranker, context, line) = (row.0, row.1, row.2);
                if each(row, log)? {
                    // A list met before: its rows are not together in the file.
                    let key = [ranker, context].join("\0");
                    if seen.first(&key, &key, line)?.is_some() {
                        return Ok(ListsRead::Scattered);
                    }
                }
            }
        }
        Order::Sorted => {
            let mut staged = scratch.ranked_rows()?;
            let mut n = 0;
            loop {
                progress(n, rows.bytes_read());
                let Some(row) = rows.next_row(log) else { break };
                n += 1;
                if let Some(row) = checked_row(&Fields { row }, columns, known, log) {
                    staged.add(row)?;
                }
            }
            if !log.is_full() {
                staged.each_sorted(&mut |row| each(row, log).map(|_| ()))?;
            }
        }
    }
    list.finish(known, &mut unknown, log, on_list)?;
    Ok(ListsRead::Done {
        lists: list.handed,
        left_out: list.left_out,
        left_out_contexts: list.left_out_contexts,
    })
}

/// The columns the list checks name, and whether ranks or scores order the lists.
#[derive(Clone, Copy)]
struct Columns {
    item: usize,
    rank: usize,
    has_rank: bool,
    has_score: bool,
}

/// The file's columns, or None (with the problem) when it has neither rank nor score.
fn columns<R: BufRead>(rows: &CsvRows<R>, log: &mut ProblemLog) -> Option<Columns> {
    let header = rows.header();
    let at = |name: &str| header.iter().position(|h| h == name);
    let columns = Columns {
        item: at("item_id").unwrap_or(0) + 1,
        rank: at("rank").unwrap_or(0) + 1,
        has_rank: at("rank").is_some(),
        has_score: at("score").is_some(),
    };
    if !rows.header_ok() {
        return None;
    }
    if !columns.has_rank && !columns.has_score {
        log.push(rows.problem(
            1,
            header.len() + 1,
            "rankings need a rank or a score column",
        ));
        return None;
    }
    Some(columns)
}

/// One row's fields checked; `None` once a problem is logged.
fn checked_row<'a>(
    f: &Fields<'a>,
    columns: Columns,
    known: &KnownIds,
    log: &mut ProblemLog,
) -> Option<StagedRow<'a>> {
    let (Some(ranker), Some(context), Some(item)) = (
        f.required("ranker", log),
        f.required("context_id", log),
        f.required("item_id", log),
    ) else {
        return None;
    };
    if known.refuse_unknown && !(known.contexts)(context) {
        log.push(f.problem(
            "context_id",
            format!("unknown context \"{context}\"; import it in contexts.csv first"),
        ));
        return None;
    }
    if known.refuse_unknown && !(known.items)(item) {
        log.push(f.problem(
            "item_id",
            format!("unknown item \"{item}\"; import it in items.csv first"),
        ));
        return None;
    }
    let rank = match columns.has_rank {
        false => None,
        true => match f.text("rank").trim().parse::<u64>() {
            Ok(r) if r >= 1 => Some(r),
            _ => {
                let text = f.text("rank").trim();
                let message = format!("rank must be a positive integer, got \"{text}\"");
                log.push(f.problem("rank", message));
                return None;
            }
        },
    };
    let score = match columns.has_score {
        false => None,
        true => {
            let text = f.text("score").trim();
            match text.parse::<f64>() {
                Ok(s) if s.is_finite() => Some(s),
                _ if columns.has_rank && text.is_empty() => None,
                _ => {
                    let message = format!("score must be a number, got \"{text}\"");
                    log.push(f.problem("score", message));
                    return None;
                }
            }
        }
    };
    Some((ranker, context, f.row.line, item, rank, score))
}

/// One row of the list being gathered: its line, its item id's place in the list's
/// text, its rank and its score.
struct RankedRow {
    line: u64,
    item: Range<usize>,
    rank: Option<u64>,
    score: Option<f64>,
}

/// The list being gathered: the rows of one (ranker, context) in the order read.
struct Gathering {
    file: String,
    columns: Columns,
    started: bool,
    ranker: String,
    context: String,
    text: String,
    rows: Vec<RankedRow>,
    /// Lists handed on, lists left out for an unknown context, and those contexts.
    handed: usize,
    left_out: usize,
    left_out_contexts: usize,
}

impl Gathering {
    fn new(file: &str, columns: Columns) -> Gathering {
        Gathering {
            file: file.to_string(),
            columns,
            started: false,
            ranker: String::new(),
            context: String::new(),
            text: String::new(),
            rows: Vec::new(),
            handed: 0,
            left_out: 0,
            left_out_contexts: 0,
        }
    }

    fn is(&self, ranker: &str, context: &str) -> bool {
        self.started && self.ranker == ranker && self.context == context
    }

    fn start(&mut self, ranker: &str, context: &str) {
        self.started = true;
        self.ranker.replace_range(.., ranker);
        self.context.replace_range(.., context);
        self.text.clear();
        self.rows.clear();
    }

    fn push(&mut self, line: u64, item: &str, rank: Option<u64>, score: Option<f64>) {
        let start = self.text.len();
        self.text.push_str(item);
        self.rows.push(RankedRow {
            line,
            item: start..self.text.len(),
            rank,
            score,
        });
    }

    fn item(&self, row: &RankedRow) -> &str {
        &self.text[row.item.clone()]
    }

    fn problem(&self, line: u64, column: usize, message: String) -> Problem {
        Problem {
            file: self.file.clone(),
            line,
            column,
            message,
        }
    }

    /// Checks the list gathered so far, puts it in rank order and hands it on.
    fn finish(
        &mut self,
        known: &KnownIds,
        unknown: &mut FirstSeen,
        log: &mut ProblemLog,
        on_list: &mut dyn FnMut(&ParsedList) -> Result<()>,
    ) -> Result<()> {
        if !std::mem::take(&mut self.started) {
            return Ok(());
        }
        self.check_repeats(log);
        self.order(log);
        if !(known.contexts)(&self.context) {
            self.left_out += 1;
            if unknown.first(&self.context, &self.context, 0)?.is_none() {
                self.left_out_contexts += 1;
            }
            return Ok(());
        }
        if log.0.is_empty() {
            let entries = self.rows.iter().map(|r| (self.item(r), r.score)).collect();
            on_list(&ParsedList {
                ranker: &self.ranker,
                context: &self.context,
                entries,
            })?;
            self.handed += 1;
        }
        Ok(())
    }

    /// Items given twice, found by sorting a copy: lists are short, a hash set per list is not.
    fn check_repeats(&self, log: &mut ProblemLog) {
        let mut by_item: Vec<(&str, u64)> =
            self.rows.iter().map(|r| (self.item(r), r.line)).collect();
        by_item.sort_unstable();
        for pair in by_item.windows(2) {
            if pair[0].0 == pair[1].0 {
                log.push(self.problem(
                    pair[1].1,
                    self.columns.item,
                    format!("item \"{}\" appears twice in the list of ranker \"{}\" for context \"{}\" (first on line {})", pair[1].0, self.ranker, self.context, pair[0].1),
                ));
            }
        }
    }

    /// Puts the rows in rank order: by rank (which must run 1, 2, 3… without repeats), or
    /// by score, highest first, ties by item id.
    fn order(&mut self, log: &mut ProblemLog) {
        if !self.columns.has_rank {
            let mut rows = std::mem::take(&mut self.rows);
            rows.sort_by(|a, b| {
                crate::core::stats::value_order(
                    b.score.unwrap_or(f64::NEG_INFINITY),
                    a.score.unwrap_or(f64::NEG_INFINITY),
                )
                .then_with(|| self.item(a).cmp(self.item(b)))
            });
            self.rows = rows;
            return;
        }
        self.rows.sort_by_key(|r| (r.rank, r.line));
        let (ranker, context) = (&self.ranker, &self.context);
        let mut repeated = false;
        for pair in self.rows.windows(2) {
            if pair[0].rank == pair[1].rank {
                repeated = true;
                log.push(self.problem(
                    pair[1].line,
                    self.columns.rank,
                    format!("rank {} is used twice in the list of ranker \"{ranker}\" for context \"{context}\" (first on line {})", pair[1].rank.unwrap_or(0), pair[0].line),
                ));
            }
        }
        let gap = self
            .rows
            .iter()
            .enumerate()
            .find(|(n, r)| r.rank != Some(*n as u64 + 1));
        if let Some((n, r)) = gap
            && !repeated
        {
            log.push(self.problem(
                r.line,
                self.columns.rank,
                format!("ranks must run 1, 2, 3… in each list; rank {} is missing in the list of ranker \"{ranker}\" for context \"{context}\"", n + 1),
            ));
        }
    }
}

/// Imports the lists of a rankings file. They are written as they are read; should the
/// file's lists turn out scattered, what was written is rolled back to a savepoint and
/// the file read again, sorted by list.
pub(super) fn import_rankings(
    tx: &Transaction,
    src: &Source,
    scratch: &Scratch,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let contexts = id_set(tx, "SELECT context_id FROM contexts")?;
    let items = id_set(tx, "SELECT item_id FROM items")?;
    let known = KnownIds {
        contexts: &|c| contexts.contains(c),
        items: &|i| items.contains(i),
        refuse_unknown: true,
    };
    tx.execute_batch("SAVEPOINT rankings_as_written")?;
    let mut order = Order::AsWritten;
    loop {
        let mut log = ProblemLog::default();
        let mut writer = ListWriter::new(tx, src)?;
        let mut rows = src.rows(&RANKINGS, &mut log)?;
        let read = read_lists(
            &mut rows,
            &known,
            scratch,
            order,
            &mut log,
            &mut |list| writer.write(list),
            &mut |n, bytes| progress.read(n, bytes),
        )?;
        if read == ListsRead::Scattered {
            drop(writer);
            tx.execute_batch("ROLLBACK TO rankings_as_written")?;
            order = Order::Sorted;
            continue;
        }
        log.into_result().map_err(input_error)?;
        tx.execute_batch("RELEASE rankings_as_written")?;
        return Ok(writer.report);
    }
}

/// Rankers of a file remembered in memory (adding one again is harmless, only slower).
const RECENT_RANKERS: usize = 4_096;

/// Writes lists one by one, each compared with the study's list of the same ranker and
/// context.
struct ListWriter<'t> {
    /// The study had no lists before: there is nothing to compare with.
    fresh: bool,
    stored: Statement<'t>,
    add_ranker: Statement<'t>,
    upsert: Statement<'t>,
    rankers: HashSet<String>,
    report: FileReport,
}

impl<'t> ListWriter<'t> {
    fn new(tx: &'t Transaction, src: &Source) -> Result<Self> {
        let fresh = tx.query_row("SELECT NOT EXISTS (SELECT 1 FROM ranked_lists)", [], |r| {
            r.get(0)
        })?;
        Ok(ListWriter {
            fresh,
            stored: tx.prepare(
                "SELECT items, scores FROM ranked_lists WHERE ranker = ?1 AND context_id = ?2",
            )?,
            add_ranker: tx.prepare("INSERT OR IGNORE INTO rankers(ranker) VALUES (?1)")?,
            upsert: tx.prepare(
                "INSERT INTO ranked_lists(ranker, context_id, items, scores) VALUES (?1, ?2, ?3, ?4)
                 ON CONFLICT(ranker, context_id) DO UPDATE SET items = excluded.items, scores = excluded.scores",
            )?,
            rankers: HashSet::new(),
            report: report(src, "rankings"),
        })
    }

    fn write(&mut self, list: &ParsedList) -> Result<()> {
        if !self.rankers.contains(list.ranker) {
            if self.rankers.len() >= RECENT_RANKERS {
                self.rankers.clear();
            }
            self.rankers.insert(list.ranker.to_string());
            self.add_ranker.execute([list.ranker])?;
        }
        let ids: Vec<&str> = list.entries.iter().map(|e| e.0).collect();
        let scores: Vec<Option<f64>> = list.entries.iter().map(|e| e.1).collect();
        let (items_json, scores_json) = list_json(&ids, &scores);
        let entries = list.entries.len() as u64;
        let old: Option<(String, Option<String>)> = match self.fresh {
            true => None,
            false => self
                .stored
                .query_row([list.ranker, list.context], |r| Ok((r.get(0)?, r.get(1)?)))
                .optional()?,
        };
        match old {
            Some((items, scores)) if items == items_json && scores == scores_json => {
                self.report.unchanged += entries;
                return Ok(());
            }
            Some(_) => self.report.updated += entries,
            None => self.report.added += entries,
        }
        self.upsert
            .execute(params![list.ranker, list.context, items_json, scores_json])?;
        Ok(())
    }
}
