//! CSV import into a study. All files of one import go in one transaction: every row of
//! every file, or nothing. Re-importing the same files changes nothing.

use std::collections::{BTreeMap, HashMap, HashSet};
use std::path::{Component, Path, PathBuf};

use rusqlite::{OptionalExtension, Transaction, params};

use super::csv_input::{self, Problem, ProblemLog, Problems, Row, Shape, Table};
use super::{Result, Study, StudyError, time};

pub const ITEMS: Shape = Shape {
    required: &["item_id", "title"],
    optional: &["category", "description", "price", "image", "new"],
    ignored: &[],
    extra_allowed: true,
};
pub const CONTEXTS: Shape = Shape {
    required: &["context_id", "kind"],
    optional: &["text", "anchor_item_id", "segment"],
    ignored: &[],
    extra_allowed: false,
};
pub const RANKINGS: Shape = Shape {
    required: &["ranker", "context_id", "item_id"],
    optional: &["rank", "score"],
    ignored: &[],
    extra_allowed: false,
};
pub const SCALES: Shape = Shape {
    required: &["scale", "value", "label"],
    optional: &["gain", "key", "rubric", "colour"],
    ignored: &[],
    extra_allowed: false,
};
pub const GRADES: Shape = Shape {
    required: &["reviewer", "context_id", "item_id", "scale"],
    optional: &[
        "value",
        "reason",
        "seconds",
        "graded_at",
        "note",
        "settled_by",
    ],
    ignored: &["context_text", "item_title"],
    extra_allowed: false,
};

/// The reviewer name under which exports write settled grades.
pub const SETTLED_REVIEWER: &str = "settled";

/// One input: a name for messages, its bytes, and the folder image paths are relative to.
#[derive(Debug, Clone)]
pub struct Source {
    pub name: String,
    pub bytes: Vec<u8>,
    pub folder: PathBuf,
}

impl Source {
    pub fn from_path(path: &Path) -> std::result::Result<Source, Problems> {
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| path.display().to_string());
        let bytes = std::fs::read(path).map_err(|e| {
            Problems(vec![Problem {
                file: name.clone(),
                line: 0,
                column: 0,
                message: format!("cannot read the file: {e}"),
            }])
        })?;
        let folder = path
            .parent()
            .map(|p| std::path::absolute(p).unwrap_or_else(|_| p.to_path_buf()))
            .unwrap_or_default();
        Ok(Source {
            name,
            bytes,
            folder,
        })
    }
}

/// The files of one import; any may be absent.
#[derive(Debug, Clone, Default)]
pub struct ImportSet {
    pub items: Option<Source>,
    pub contexts: Option<Source>,
    pub rankings: Option<Source>,
    pub scales: Option<Source>,
    pub grades: Option<Source>,
}

/// What one file did to the study.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct FileReport {
    pub file: String,
    pub kind: &'static str,
    pub added: u64,
    pub updated: u64,
    pub unchanged: u64,
}

/// Imports every file given, in dependency order, in one transaction.
pub fn import(study: &mut Study, set: &ImportSet) -> Result<Vec<FileReport>> {
    if study.is_read_only() {
        return Err(StudyError::ReadOnly);
    }
    // A large page cache keeps a big import's index pages in memory instead of
    // spilling them to the WAL mid-transaction (the default cache is 2 MB).
    study
        .conn()
        .pragma_update(None, "cache_size", IMPORT_CACHE_KIB)?;
    // Every reference was checked row by row before the store is touched (with its line
    // and column), so SQLite's own foreign-key probes would only repeat that work.
    study.conn().pragma_update(None, "foreign_keys", false)?;
    let result = import_in_transaction(study, set);
    study.conn().pragma_update(None, "foreign_keys", true)?;
    study
        .conn()
        .pragma_update(None, "cache_size", super::DEFAULT_CACHE_KIB)?;
    result
}

/// Page cache during imports, in KiB (negative = KiB for SQLite's `cache_size`).
const IMPORT_CACHE_KIB: i64 = -262_144;

fn import_in_transaction(study: &mut Study, set: &ImportSet) -> Result<Vec<FileReport>> {
    let tx = study.conn_mut().transaction()?;
    let mut reports = Vec::new();
    if let Some(src) = &set.scales {
        reports.push(import_scales(&tx, src)?);
    }
    if let Some(src) = &set.items {
        reports.push(import_items(&tx, src)?);
    }
    if let Some(src) = &set.contexts {
        reports.push(import_contexts(&tx, src)?);
    }
    if let Some(src) = &set.rankings {
        reports.push(import_rankings(&tx, src)?);
    }
    if let Some(src) = &set.grades {
        reports.push(import_grades(&tx, src)?);
    }
    tx.commit()?;
    Ok(reports)
}

fn input_error(problems: Problems) -> StudyError {
    StudyError::Input(problems.to_string())
}

fn parse(src: &Source, shape: &Shape) -> Result<Table> {
    csv_input::parse(&src.name, &src.bytes, shape).map_err(input_error)
}

/// Typed access to a row's named fields, recording problems with their column.
struct Fields<'a> {
    table: &'a Table,
    row: &'a Row,
}

impl<'a> Fields<'a> {
    /// The field's text, with an export's formula guard removed.
    fn text(&self, name: &str) -> &'a str {
        self.table
            .column(name)
            .map_or("", |i| unneutralise(self.row.fields[i].as_str()))
    }

    fn col(&self, name: &str) -> usize {
        self.table.column(name).map_or(0, |i| i + 1)
    }

    fn problem(&self, name: &str, message: impl Into<String>) -> Problem {
        self.table.problem(self.row.line, self.col(name), message)
    }

    fn required(&self, name: &str, log: &mut ProblemLog) -> Option<&'a str> {
        let value = self.text(name).trim();
        if value.is_empty() {
            log.push(self.problem(name, format!("{name} must not be empty")));
            None
        } else {
            Some(value)
        }
    }

    fn optional_f64(&self, name: &str, log: &mut ProblemLog) -> Option<Option<f64>> {
        let value = self.text(name).trim();
        if value.is_empty() {
            return Some(None);
        }
        match value.parse::<f64>() {
            Ok(v) if v.is_finite() => Some(Some(v)),
            _ => {
                log.push(self.problem(name, format!("{name} must be a number, got \"{value}\"")));
                None
            }
        }
    }
}

/// Removes the apostrophe that exports put before formula-like cells.
pub fn unneutralise(text: &str) -> &str {
    match text.strip_prefix('\'') {
        Some(rest) if rest.starts_with(['=', '+', '-', '@', '\t', '\r']) => rest,
        _ => text,
    }
}

fn parse_bool(text: &str) -> Option<bool> {
    match text.trim().to_ascii_lowercase().as_str() {
        "" | "false" | "0" | "no" => Some(false),
        "true" | "1" | "yes" => Some(true),
        _ => None,
    }
}

/// Image paths must stay inside the catalog folder: relative, with no `..`.
fn image_path_is_safe(path: &str) -> bool {
    let p = Path::new(path);
    !p.is_absolute()
        && p.components()
            .all(|c| matches!(c, Component::Normal(_) | Component::CurDir))
}

#[derive(Debug, Clone, PartialEq)]
struct ItemRow {
    title: String,
    category: String,
    description: String,
    price: Option<f64>,
    image: String,
    is_new: bool,
    attributes: String,
}

fn import_items(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &ITEMS)?;
    let mut log = ProblemLog::default();
    let known: Vec<&str> = ITEMS
        .required
        .iter()
        .chain(ITEMS.optional)
        .copied()
        .collect();
    let extra: Vec<usize> = (0..table.header.len())
        .filter(|i| !known.contains(&table.header[*i].as_str()))
        .collect();
    let mut seen: HashMap<String, u64> = HashMap::new();
    let mut parsed: Vec<(String, ItemRow)> = Vec::with_capacity(table.rows.len());
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let Some(id) = f.required("item_id", &mut log) else {
            continue;
        };
        if let Some(first) = seen.insert(id.to_string(), row.line) {
            log.push(f.problem(
                "item_id",
                format!("duplicate item_id \"{id}\" (first on line {first})"),
            ));
            continue;
        }
        let Some(title) = f.required("title", &mut log) else {
            continue;
        };
        let Some(price) = f.optional_f64("price", &mut log) else {
            continue;
        };
        let Some(is_new) = parse_bool(f.text("new")) else {
            log.push(f.problem(
                "new",
                format!("new must be true, false, 1 or 0, got \"{}\"", f.text("new")),
            ));
            continue;
        };
        let image = f.text("image").trim();
        if !image.is_empty() && !image_path_is_safe(image) {
            log.push(f.problem(
                "image",
                format!("image path \"{image}\" leaves the catalog folder; use a path relative to the CSV without \"..\""),
            ));
            continue;
        }
        let attributes: BTreeMap<&str, &str> = extra
            .iter()
            .filter(|i| !row.fields[**i].is_empty())
            .map(|i| (table.header[*i].as_str(), unneutralise(&row.fields[*i])))
            .collect();
        parsed.push((
            id.to_string(),
            ItemRow {
                title: unneutralise(title).to_string(),
                category: unneutralise(f.text("category").trim()).to_string(),
                description: unneutralise(f.text("description")).to_string(),
                price,
                image: image.to_string(),
                is_new,
                attributes: serde_json::to_string(&attributes).unwrap_or_else(|_| "{}".into()),
            },
        ));
        if log.is_full() {
            break;
        }
    }
    log.into_result().map_err(input_error)?;
    let mut existing: HashMap<String, ItemRow> = HashMap::new();
    {
        let mut stmt = tx.prepare(
            "SELECT item_id, title, category, description, price, image, is_new, attributes FROM items",
        )?;
        let rows = stmt.query_map([], |r| {
            Ok((
                r.get::<_, String>(0)?,
                ItemRow {
                    title: r.get(1)?,
                    category: r.get(2)?,
                    description: r.get(3)?,
                    price: r.get(4)?,
                    image: r.get(5)?,
                    is_new: r.get(6)?,
                    attributes: r.get(7)?,
                },
            ))
        })?;
        for row in rows {
            let (id, item) = row?;
            existing.insert(id, item);
        }
    }
    let mut report = report(src, "items");
    let mut upsert = tx.prepare(
        "INSERT INTO items(item_id, title, category, description, price, image, is_new, attributes)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)
         ON CONFLICT(item_id) DO UPDATE SET title = excluded.title, category = excluded.category,
           description = excluded.description, price = excluded.price, image = excluded.image,
           is_new = excluded.is_new, attributes = excluded.attributes",
    )?;
    for (id, item) in &parsed {
        match existing.get(id) {
            Some(old) if old == item => {
                report.unchanged += 1;
                continue;
            }
            Some(_) => report.updated += 1,
            None => report.added += 1,
        }
        upsert.execute(params![
            id,
            item.title,
            item.category,
            item.description,
            item.price,
            item.image,
            item.is_new,
            item.attributes
        ])?;
    }
    tx.execute(
        "INSERT INTO settings(key, value) VALUES ('catalog_dir', ?1)
         ON CONFLICT(key) DO UPDATE SET value = excluded.value",
        [src.folder.to_string_lossy()],
    )?;
    Ok(report)
}

fn report(src: &Source, kind: &'static str) -> FileReport {
    FileReport {
        file: src.name.clone(),
        kind,
        added: 0,
        updated: 0,
        unchanged: 0,
    }
}

fn id_set(tx: &Transaction, sql: &str) -> Result<HashSet<String>> {
    let mut stmt = tx.prepare(sql)?;
    let ids = stmt
        .query_map([], |r| r.get::<_, String>(0))?
        .collect::<std::result::Result<HashSet<String>, _>>()?;
    Ok(ids)
}

fn import_contexts(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &CONTEXTS)?;
    let items = id_set(tx, "SELECT item_id FROM items")?;
    let mut log = ProblemLog::default();
    let mut seen: HashMap<String, u64> = HashMap::new();
    type ContextRow = (String, String, String, Option<String>, String);
    let mut parsed: Vec<ContextRow> = Vec::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let Some(id) = f.required("context_id", &mut log) else {
            continue;
        };
        if let Some(first) = seen.insert(id.to_string(), row.line) {
            log.push(f.problem(
                "context_id",
                format!("duplicate context_id \"{id}\" (first on line {first})"),
            ));
            continue;
        }
        let kind = f.text("kind").trim().to_ascii_lowercase();
        if kind != "query" && kind != "anchor" {
            log.push(f.problem(
                "kind",
                format!("kind must be query or anchor, got \"{}\"", f.text("kind")),
            ));
            continue;
        }
        let anchor = f.text("anchor_item_id").trim();
        let anchor = (!anchor.is_empty()).then(|| anchor.to_string());
        match (&anchor, kind.as_str()) {
            (None, "anchor") => {
                log.push(f.problem("anchor_item_id", "an anchor context needs anchor_item_id"));
                continue;
            }
            (Some(a), _) if !items.contains(a) => {
                log.push(f.problem(
                    "anchor_item_id",
                    format!("unknown item \"{a}\"; import it in items.csv first"),
                ));
                continue;
            }
            _ => {}
        }
        parsed.push((
            id.to_string(),
            kind,
            unneutralise(f.text("text")).to_string(),
            anchor,
            f.text("segment").trim().to_string(),
        ));
    }
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "contexts");
    let mut existing: HashMap<String, (String, String, Option<String>, String)> = HashMap::new();
    {
        let mut stmt =
            tx.prepare("SELECT context_id, kind, text, anchor_item_id, segment FROM contexts")?;
        for row in stmt.query_map([], |r| {
            Ok((r.get(0)?, (r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?)))
        })? {
            let (id, values) = row?;
            existing.insert(id, values);
        }
    }
    let mut upsert = tx.prepare(
        "INSERT INTO contexts(context_id, kind, text, anchor_item_id, segment) VALUES (?1, ?2, ?3, ?4, ?5)
         ON CONFLICT(context_id) DO UPDATE SET kind = excluded.kind, text = excluded.text,
           anchor_item_id = excluded.anchor_item_id, segment = excluded.segment",
    )?;
    for (id, kind, text, anchor, segment) in parsed {
        let values = (kind, text, anchor, segment);
        match existing.get(&id) {
            Some(old) if *old == values => {
                report.unchanged += 1;
                continue;
            }
            Some(_) => report.updated += 1,
            None => report.added += 1,
        }
        upsert.execute(params![id, values.0, values.1, values.2, values.3])?;
    }
    Ok(report)
}

/// (rank, item, score) of one stored list entry.
type RankedEntry = (i64, String, Option<f64>);

/// One row of a ranked list as read from the file.
struct RankedRow {
    line: u64,
    item: String,
    rank: Option<u64>,
    score: Option<f64>,
}

fn import_rankings(tx: &Transaction, src: &Source) -> Result<FileReport> {
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

fn import_scales(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &SCALES)?;
    let mut log = ProblemLog::default();
    type LevelRow = (u64, u8, String, Option<f64>, String, String, String);
    let mut scales: BTreeMap<String, Vec<LevelRow>> = BTreeMap::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let (Some(scale), Some(value_text), Some(label)) = (
            f.required("scale", &mut log),
            f.required("value", &mut log),
            f.required("label", &mut log),
        ) else {
            continue;
        };
        let Ok(value) = value_text.parse::<u8>() else {
            log.push(f.problem(
                "value",
                format!("value must be a whole number from 0 to 255, got \"{value_text}\""),
            ));
            continue;
        };
        let Some(gain) = f.optional_f64("gain", &mut log) else {
            continue;
        };
        if gain.is_some_and(|g| g < 0.0) {
            log.push(f.problem("gain", "gain must not be negative"));
            continue;
        }
        scales.entry(scale.to_string()).or_default().push((
            row.line,
            value,
            unneutralise(label).to_string(),
            gain,
            f.text("key").trim().to_string(),
            unneutralise(f.text("rubric")).to_string(),
            f.text("colour").trim().to_string(),
        ));
    }
    let value_col = table.column("value").unwrap_or(0) + 1;
    let key_col = table.column("key").map_or(0, |c| c + 1);
    for (name, levels) in &mut scales {
        levels.sort_by_key(|l| (l.1, l.0));
        for (n, level) in levels.iter().enumerate() {
            if n > 0 && levels[n - 1].1 == level.1 {
                log.push(table.problem(
                    level.0,
                    value_col,
                    format!("value {} appears twice in scale \"{name}\"", level.1),
                ));
            } else if level.1 as usize != n && (n == 0 || levels[n - 1].1 != level.1) {
                log.push(table.problem(
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
                log.push(table.problem(
                    level.0,
                    key_col,
                    format!("key \"{}\" is used twice in scale \"{name}\"", level.4),
                ));
            }
        }
        if levels.len() < 2 {
            log.push(table.problem(
                levels[0].0,
                value_col,
                format!("scale \"{name}\" needs at least two levels"),
            ));
        }
    }
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "scales");
    for (name, levels) in scales {
        let old: Vec<(u8, String, Option<f64>, String, String, String)> = {
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
        let new: Vec<(u8, String, Option<f64>, String, String, String)> = levels
            .iter()
            .map(|l| (l.1, l.2.clone(), l.3, l.4.clone(), l.5.clone(), l.6.clone()))
            .collect();
        if old == new {
            report.unchanged += new.len() as u64;
            continue;
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
                return Err(input_error(Problems(vec![table.problem(
                    levels[0].0,
                    value_col,
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
    }
    Ok(report)
}

/// A stable 128-bit FNV-1a digest; gives imported events an identity so that importing
/// or merging the same grade twice adds it once.
pub fn content_uid(parts: &[&str]) -> String {
    let mut h: u128 = 0x6c62_272e_07bb_0142_62b8_2175_6295_c58d;
    for part in parts {
        for b in part.bytes().chain(std::iter::once(0x1f)) {
            h ^= b as u128;
            h = h.wrapping_mul(0x0000_0000_0100_0000_0000_0000_0000_013b);
        }
    }
    format!("{h:032x}")
}

fn import_grades(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &GRADES)?;
    let contexts = id_set(tx, "SELECT context_id FROM contexts")?;
    let items = id_set(tx, "SELECT item_id FROM items")?;
    let mut scale_sizes: HashMap<String, u8> = HashMap::new();
    {
        let mut stmt = tx.prepare("SELECT scale, COUNT(*) FROM levels GROUP BY scale")?;
        for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, u8>(1)?)))? {
            let (s, n) = row?;
            scale_sizes.insert(s, n);
        }
    }
    let mut log = ProblemLog::default();
    let mut grades = Vec::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let (Some(reviewer), Some(context), Some(item), Some(scale)) = (
            f.required("reviewer", &mut log),
            f.required("context_id", &mut log),
            f.required("item_id", &mut log),
            f.required("scale", &mut log),
        ) else {
            continue;
        };
        if !contexts.contains(context) {
            log.push(f.problem("context_id", format!("unknown context \"{context}\"")));
            continue;
        }
        if !items.contains(item) {
            log.push(f.problem("item_id", format!("unknown item \"{item}\"")));
            continue;
        }
        let Some(&levels) = scale_sizes.get(scale) else {
            log.push(f.problem(
                "scale",
                format!("unknown scale \"{scale}\"; import it in scales.csv first"),
            ));
            continue;
        };
        let value_text = f.text("value").trim();
        let value = if value_text.is_empty() {
            None
        } else {
            match value_text.parse::<u8>() {
                Ok(v) if v < levels => Some(v),
                _ => {
                    log.push(f.problem(
                        "value",
                        format!("value must be a level of scale \"{scale}\" (0 to {}), got \"{value_text}\"", levels - 1),
                    ));
                    continue;
                }
            }
        };
        let Some(seconds) = f.optional_f64("seconds", &mut log) else {
            continue;
        };
        if seconds.is_some_and(|s| s < 0.0) {
            log.push(f.problem("seconds", "seconds must not be negative"));
            continue;
        }
        let at_text = f.text("graded_at").trim();
        let graded_at = if at_text.is_empty() {
            time::format_millis(0)
        } else if let Some(t) = time::normalise(at_text) {
            t
        } else {
            log.push(f.problem("graded_at", format!("graded_at must be an RFC 3339 time such as 2026-11-16T09:14:03Z, got \"{at_text}\"")));
            continue;
        };
        grades.push(ImportedGrade {
            reviewer: reviewer.to_string(),
            context: context.to_string(),
            item: item.to_string(),
            scale: scale.to_string(),
            value,
            reason: unneutralise(f.text("reason")).to_string(),
            seconds,
            graded_at,
            note: unneutralise(f.text("note")).to_string(),
            settled_by: f.text("settled_by").trim().to_string(),
        });
        if log.is_full() {
            break;
        }
    }
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "grades");
    let mut add_reviewer = tx.prepare("INSERT OR IGNORE INTO reviewers(reviewer) VALUES (?1)")?;
    let mut insert = tx.prepare(
        "INSERT OR IGNORE INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
    )?;
    let mut settle = tx.prepare(
        "INSERT OR IGNORE INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
         VALUES (?1, ?2, ?3, ?4, ?5, 'imported', ?6, ?7, ?8)",
    )?;
    let mut known_reviewers: HashSet<String> = HashSet::new();
    for g in &grades {
        let value_text = g.value.map(|v| v.to_string()).unwrap_or_default();
        let seconds_text = g.seconds.map(|s| s.to_string()).unwrap_or_default();
        let uid = content_uid(&[
            &g.reviewer,
            &g.context,
            &g.item,
            &g.scale,
            &value_text,
            &g.reason,
            &seconds_text,
            &g.graded_at,
            &g.note,
        ]);
        let changed = if g.reviewer == SETTLED_REVIEWER {
            settle.execute(params![
                uid,
                g.context,
                g.item,
                g.scale,
                g.value,
                g.settled_by,
                g.graded_at,
                g.reason
            ])?
        } else {
            if known_reviewers.insert(g.reviewer.clone()) {
                add_reviewer.execute([&g.reviewer])?;
            }
            let action = if g.value.is_some() {
                "grade"
            } else {
                "cant_judge"
            };
            insert.execute(params![
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
            ])?
        };
        if changed == 0 {
            report.unchanged += 1;
        } else {
            report.added += 1;
        }
    }
    Ok(report)
}

struct ImportedGrade {
    reviewer: String,
    context: String,
    item: String,
    scale: String,
    value: Option<u8>,
    reason: String,
    seconds: Option<f64>,
    graded_at: String,
    note: String,
    settled_by: String,
}
