//! CSV import into a study. All files of one import go in one transaction: every row of
//! every file, or nothing. Re-importing the same files changes nothing.

use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};

use rusqlite::Transaction;

use super::csv_input::{self, Problem, ProblemLog, Problems, Row, Shape, Table};
use super::{Result, Study, StudyError};

mod catalog;
mod gold;
mod grades;
mod rankings;
mod scales;

pub(crate) use rankings::{KnownIds, read_lists};

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
pub const GOLD: Shape = Shape {
    required: &["context_id", "item_id", "scale", "value"],
    optional: &["rationale"],
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
        "kind",
    ],
    ignored: &["context_text", "item_title"],
    extra_allowed: false,
};

/// What exports write in the reviewer column of a settled grade. Import never goes by
/// this name: a row is a settlement when its `settled_by` is filled in.
pub const SETTLED_REVIEWER: &str = "settled";

/// One input: a name for messages, where its bytes come from, and the folder image
/// paths are relative to.
#[derive(Debug, Clone)]
pub struct Source {
    pub name: String,
    pub input: Input,
    pub folder: PathBuf,
}

/// Where a source's bytes are: in memory, or a file read as a stream when imported.
#[derive(Debug, Clone)]
pub enum Input {
    Bytes(Vec<u8>),
    File(PathBuf),
}

impl Source {
    /// A source held in memory (tests, generated files).
    pub fn from_bytes(name: &str, bytes: Vec<u8>, folder: PathBuf) -> Source {
        Source {
            name: name.to_string(),
            input: Input::Bytes(bytes),
            folder,
        }
    }

    /// A file on disk; refused at once unless it is a regular file.
    pub fn from_path(path: &Path) -> std::result::Result<Source, Problems> {
        let name = csv_input::display_name(path);
        csv_input::open_regular(path)
            .map_err(|message| Problems(vec![csv_input::whole_file(&name, message)]))?;
        // Stored as the real absolute folder, whatever form the argument took (a bare
        // `items.csv` has an empty parent), so pictures resolve from any working folder.
        let parent = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
        let folder = parent
            .canonicalize()
            .or_else(|_| std::path::absolute(parent))
            .unwrap_or_else(|_| parent.to_path_buf());
        Ok(Source {
            name,
            input: Input::File(path.to_path_buf()),
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
    /// Gold pairs (after grades' scales, contexts and items exist).
    pub gold: Option<Source>,
}

/// What one file did to the study.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct FileReport {
    pub file: String,
    pub kind: &'static str,
    pub added: u64,
    pub updated: u64,
    pub unchanged: u64,
    /// Things imported as asked that look like a mistake (e.g. gains that fall).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub warnings: Vec<String>,
}

/// Where an import stands, for a progress line or bar.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ImportStep {
    /// The file being imported, as messages call it.
    pub file: String,
    /// Files finished before this one, and files in the import.
    pub files_done: usize,
    pub files_total: usize,
    /// Rows of this file written so far, and its rows (0 while it is being read).
    pub rows_done: u64,
    pub rows_total: u64,
}

/// Receives [`ImportStep`]s as an import runs (from the importing thread).
pub type Progress<'a> = &'a mut dyn FnMut(&ImportStep);

/// How many rows pass between two progress reports.
const PROGRESS_EVERY: u64 = 20_000;

/// Reports one file's progress; `rows` is called with (done, total) as rows are written.
pub(super) struct FileProgress<'p> {
    progress: &'p mut dyn FnMut(&ImportStep),
    step: ImportStep,
    last: u64,
}

impl<'p> FileProgress<'p> {
    fn start(
        progress: &'p mut dyn FnMut(&ImportStep),
        src: &Source,
        files_done: usize,
        files_total: usize,
    ) -> FileProgress<'p> {
        FileProgress {
            step: ImportStep {
                file: src.name.clone(),
                files_done,
                files_total,
                rows_done: 0,
                rows_total: 0,
            },
            last: 0,
            progress,
        }
    }

    pub(super) fn total(&mut self, rows: u64) {
        self.step.rows_total = rows;
        (self.progress)(&self.step);
    }

    pub(super) fn rows(&mut self, done: u64) {
        if done >= self.last + PROGRESS_EVERY {
            self.last = done;
            self.step.rows_done = done;
            (self.progress)(&self.step);
        }
    }
}

/// Imports every file given, in dependency order, in one transaction.
pub fn import(study: &mut Study, set: &ImportSet) -> Result<Vec<FileReport>> {
    import_with_progress(study, set, &mut |_| {})
}

/// [`import`], reporting each file's progress as it goes.
pub fn import_with_progress(
    study: &mut Study,
    set: &ImportSet,
    progress: Progress,
) -> Result<Vec<FileReport>> {
    if study.is_read_only() {
        return Err(study.read_only_error());
    }
    // A large page cache keeps a big import's index pages in memory instead of
    // spilling them to the WAL mid-transaction (the default cache is 2 MB).
    study
        .conn()
        .pragma_update(None, "cache_size", IMPORT_CACHE_KIB)?;
    // Every reference was checked row by row before the store is touched (with its line
    // and column), so SQLite's own foreign-key probes would only repeat that work.
    study.conn().pragma_update(None, "foreign_keys", false)?;
    let result = import_in_transaction(study, set, progress);
    study.conn().pragma_update(None, "foreign_keys", true)?;
    study
        .conn()
        .pragma_update(None, "cache_size", super::DEFAULT_CACHE_KIB)?;
    result
}

/// Page cache during imports, in KiB (negative = KiB for SQLite's `cache_size`).
const IMPORT_CACHE_KIB: i64 = -32_768;

fn import_in_transaction(
    study: &mut Study,
    set: &ImportSet,
    progress: Progress,
) -> Result<Vec<FileReport>> {
    let tx = study.begin_write()?;
    let mut reports = Vec::new();
    let files = [
        &set.scales,
        &set.items,
        &set.contexts,
        &set.rankings,
        &set.grades,
    ];
    let files_total = files.iter().filter(|f| f.is_some()).count();
    let mut files_done = 0;
    if let Some(src) = &set.scales {
        FileProgress::start(&mut *progress, src, files_done, files_total).total(0);
        reports.push(scales::import_scales(&tx, src)?);
        files_done += 1;
    }
    if let Some(src) = &set.items {
        FileProgress::start(&mut *progress, src, files_done, files_total).total(0);
        reports.push(catalog::import_items(&tx, src)?);
        files_done += 1;
    }
    if let Some(src) = &set.contexts {
        FileProgress::start(&mut *progress, src, files_done, files_total).total(0);
        reports.push(catalog::import_contexts(&tx, src)?);
        files_done += 1;
    }
    if let Some(src) = &set.rankings {
        let mut p = FileProgress::start(&mut *progress, src, files_done, files_total);
        reports.push(rankings::import_rankings(&tx, src, &mut p)?);
        files_done += 1;
    }
    if let Some(src) = &set.grades {
        let mut p = FileProgress::start(&mut *progress, src, files_done, files_total);
        reports.push(grades::import_grades(&tx, src, &mut p)?);
        files_done += 1;
    }
    if let Some(src) = &set.gold {
        let mut p = FileProgress::start(&mut *progress, src, files_done, files_total);
        reports.push(gold::import_gold(&tx, src, &mut p)?);
    }
    tx.commit()?;
    Ok(reports)
}

fn input_error(problems: Problems) -> StudyError {
    StudyError::Input(problems)
}

fn parse(src: &Source, shape: &Shape) -> Result<Table> {
    match &src.input {
        Input::Bytes(bytes) => csv_input::parse(&src.name, bytes, shape),
        Input::File(path) => {
            let file = csv_input::open_regular(path)
                .map_err(|m| Problems(vec![csv_input::whole_file(&src.name, m)]))
                .map_err(input_error)?;
            csv_input::parse_reader(
                &src.name,
                std::io::BufReader::with_capacity(1 << 16, file),
                shape,
            )
        }
    }
    .map_err(input_error)
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
            .map_or("", |i| unneutralise(self.table.field(self.row, i)))
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

    /// Like `required`, but the value is kept exactly as written (names round-trip).
    fn required_exact(&self, name: &str, log: &mut ProblemLog) -> Option<&'a str> {
        let value = self.text(name);
        if value.trim().is_empty() {
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
    csv_input::unguard(text)
}

fn parse_bool(text: &str) -> Option<bool> {
    match text.trim().to_ascii_lowercase().as_str() {
        "" | "false" | "0" | "no" => Some(false),
        "true" | "1" | "yes" => Some(true),
        _ => None,
    }
}

/// Why an image path of items.csv cannot be used, or None: it must be relative without
/// `..`, and where a file is there it must be a regular file whose real path (links
/// followed) lies inside the catalog folder and is not a study file. A missing picture
/// stays allowed (it shows as missing on the desk).
fn image_path_problem(folder: &Path, path: &str) -> Option<String> {
    use crate::study::file_guard::{PathRefusal, is_plain_relative, resolve_inside};
    if !is_plain_relative(path) {
        return Some(format!(
            "image path \"{path}\" leaves the catalog folder; use a path relative to the CSV without \"..\""
        ));
    }
    match resolve_inside(folder, path) {
        Ok(_) | Err(PathRefusal::Missing | PathRefusal::NoFolder(_)) => None,
        Err(refusal) => Some(format!(
            "image path \"{path}\": {refusal}; it is not a picture"
        )),
    }
}

fn report(src: &Source, kind: &'static str) -> FileReport {
    FileReport {
        file: src.name.clone(),
        kind,
        added: 0,
        updated: 0,
        unchanged: 0,
        warnings: Vec::new(),
    }
}

/// The contexts, items and scales (with their level counts) a graded pair may name,
/// read once per file; grades and gold pairs check every row against them alike.
struct PairRefs {
    contexts: HashSet<String>,
    items: HashSet<String>,
    scale_sizes: std::collections::HashMap<String, i64>,
}

impl PairRefs {
    fn load(tx: &Transaction) -> Result<PairRefs> {
        let mut scale_sizes = std::collections::HashMap::new();
        let mut stmt = tx.prepare("SELECT scale, COUNT(*) FROM levels GROUP BY scale")?;
        for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, i64>(1)?)))? {
            let (s, n) = row?;
            scale_sizes.insert(s, n);
        }
        Ok(PairRefs {
            contexts: id_set(tx, "SELECT context_id FROM contexts")?,
            items: id_set(tx, "SELECT item_id FROM items")?,
            scale_sizes,
        })
    }

    /// The scale's number of levels when the row's context, item and scale all exist;
    /// otherwise the first unknown one goes to `log` with its column.
    fn check(
        &self,
        f: &Fields,
        context: &str,
        item: &str,
        scale: &str,
        log: &mut ProblemLog,
    ) -> Option<i64> {
        if !self.contexts.contains(context) {
            log.push(f.problem("context_id", format!("unknown context \"{context}\"")));
            return None;
        }
        if !self.items.contains(item) {
            log.push(f.problem("item_id", format!("unknown item \"{item}\"")));
            return None;
        }
        let Some(&levels) = self.scale_sizes.get(scale) else {
            log.push(f.problem(
                "scale",
                format!("unknown scale \"{scale}\"; import it in scales.csv first"),
            ));
            return None;
        };
        Some(levels)
    }
}

fn id_set(tx: &Transaction, sql: &str) -> Result<HashSet<String>> {
    let mut stmt = tx.prepare(sql)?;
    let ids = stmt
        .query_map([], |r| r.get::<_, String>(0))?
        .collect::<std::result::Result<HashSet<String>, _>>()?;
    Ok(ids)
}

pub use crate::core::digest::content_uid;

/// The ids of one kind met so far (in the file, and in the study), keyed by their
/// Unicode NFC form: two ids that differ in bytes but are canonically equivalent
/// (Unicode Standard Annex #15) look identical on screen and would name two things.
pub(super) struct DistinctIds {
    what: &'static str,
    /// NFC form → (the id as written, its line; 0 = already in the study).
    seen: HashMap<String, (String, u64)>,
}

impl DistinctIds {
    /// Starts with the ids the study already has.
    pub(super) fn with_study(tx: &Transaction, what: &'static str, sql: &str) -> Result<Self> {
        let mut seen = HashMap::new();
        for id in id_set(tx, sql)? {
            seen.insert(nfc(&id), (id, 0));
        }
        Ok(DistinctIds { what, seen })
    }

    /// Records `id` from `line`; the problem when an earlier line of the file has the
    /// same id, or one equal after NFC but different in bytes (here or in the study).
    pub(super) fn check(&mut self, id: &str, line: u64) -> Option<String> {
        let what = self.what;
        match self.seen.get(&nfc(id)) {
            None => {
                self.seen.insert(nfc(id), (id.to_string(), line));
                None
            }
            Some((first, 0)) if first == id => None,
            Some((first, first_line)) if first == id => Some(format!(
                "duplicate {what} \"{id}\" (first on line {first_line})"
            )),
            Some((first, first_line)) => {
                let place = match first_line {
                    0 => "in the study".to_string(),
                    n => format!("on line {n}"),
                };
                Some(format!(
                    "{what} \"{}\" is the same text as \"{}\" {place} once Unicode-normalised (NFC) but differs in bytes; use one spelling",
                    spelled(id),
                    spelled(first)
                ))
            }
        }
    }
}

/// An id with every non-ASCII character written as its code point (`e\u{301}`), so
/// that two spellings that look alike can be told apart in a message.
fn spelled(id: &str) -> String {
    id.chars()
        .map(|c| {
            if c.is_ascii() {
                c.to_string()
            } else {
                format!("\\u{{{:x}}}", u32::from(c))
            }
        })
        .collect()
}

fn nfc(text: &str) -> String {
    use unicode_normalization::UnicodeNormalization;
    text.nfc().collect()
}
