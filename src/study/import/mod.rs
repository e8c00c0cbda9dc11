//! CSV import into a study. All files of one import go in one transaction: every row of
//! every file, or nothing. Re-importing the same files changes nothing.
//!
//! Files are read as streams: each row is checked (with its line and column) and, while
//! no problem has been found, written at once. What would grow with a file — the ids it
//! has met, rows of scattered lists — is kept in a scratch database (`study::scratch`),
//! so an import's memory is bounded by its page caches, not by the size of its files.

use std::io::BufRead;
use std::path::{Path, PathBuf};

use rusqlite::Transaction;

use crate::core::fast_hash::FastSet;

use super::csv_input::{self, CsvRows, Problem, ProblemLog, Problems, Row, Shape};
use super::scratch::{FirstSeen, Scratch};
use super::{Result, Study, StudyError};

mod catalog;
mod gold;
mod grades;
mod rankings;
mod scales;

pub(crate) use rankings::{KnownIds, ListsRead, Order, ParsedList, read_lists};

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

    /// The source's rows, read as a stream; problems with its header go to `log`.
    fn rows(&self, shape: &Shape, log: &mut ProblemLog) -> Result<CsvRows<Box<dyn BufRead + '_>>> {
        let input: Box<dyn BufRead> = match &self.input {
            Input::Bytes(bytes) => Box::new(&bytes[..]),
            Input::File(path) => {
                let file = csv_input::open_regular(path).map_err(|m| {
                    input_error(Problems(vec![csv_input::whole_file(&self.name, m)]))
                })?;
                Box::new(std::io::BufReader::with_capacity(1 << 16, file))
            }
        };
        Ok(CsvRows::new(&self.name, input, shape, log))
    }

    /// The source's size in bytes (0 when it cannot be read; for progress only).
    fn size(&self) -> u64 {
        match &self.input {
            Input::Bytes(bytes) => bytes.len() as u64,
            Input::File(path) => std::fs::metadata(path).map_or(0, |m| m.len()),
        }
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

/// Where an import stands, for a progress line or bar. Each file is read once, its
/// rows checked and written as they come, so a file's progress is its bytes read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ImportStep {
    /// The file being imported, as messages call it.
    pub file: String,
    /// Files finished before this one, and files in the import.
    pub files_done: usize,
    pub files_total: usize,
    /// Rows of this file read (and, unless a problem was found, written) so far.
    pub rows_done: u64,
    /// Bytes of this file read so far, and its size (0 when unknown).
    pub bytes_done: u64,
    pub bytes_total: u64,
    /// Every row is in; indexes and current grades are being brought up to date.
    pub finishing: bool,
}

/// Receives [`ImportStep`]s as an import runs (from the importing thread).
pub type Progress<'a> = &'a mut dyn FnMut(&ImportStep);

/// How many rows pass between two progress reports.
const PROGRESS_EVERY: u64 = 16_384;

/// Reports one file's progress.
pub(super) struct FileProgress<'p> {
    progress: &'p mut dyn FnMut(&ImportStep),
    step: ImportStep,
}

impl<'p> FileProgress<'p> {
    fn start(
        progress: &'p mut dyn FnMut(&ImportStep),
        src: &Source,
        files_done: usize,
        files_total: usize,
    ) -> FileProgress<'p> {
        let step = ImportStep {
            file: src.name.clone(),
            files_done,
            files_total,
            rows_done: 0,
            bytes_done: 0,
            bytes_total: src.size(),
            finishing: false,
        };
        progress(&step);
        FileProgress { progress, step }
    }

    /// Rows and bytes read so far; reported every [`PROGRESS_EVERY`] rows.
    pub(super) fn read(&mut self, rows: u64, bytes: u64) {
        self.step.rows_done = rows;
        self.step.bytes_done = bytes;
        if rows.is_multiple_of(PROGRESS_EVERY) {
            (self.progress)(&self.step);
        }
    }

    /// Every row is read; what follows is indexes and current grades.
    pub(super) fn finishing(&mut self) {
        self.step.finishing = true;
        self.step.bytes_done = self.step.bytes_total;
        (self.progress)(&self.step);
    }
}

/// Reads `src` as a stream and hands each row to `each` (only while the header is as
/// `shape` asks), reporting progress; problems go to `log`.
fn each_row(
    src: &Source,
    shape: &Shape,
    progress: &mut FileProgress,
    log: &mut ProblemLog,
    each: &mut dyn FnMut(Fields, &mut ProblemLog) -> Result<()>,
) -> Result<()> {
    let mut rows = src.rows(shape, log)?;
    let mut n = 0;
    while let Some(row) = rows.next_row(log) {
        each(Fields { row }, log)?;
        n += 1;
        progress.read(n, rows.bytes_read());
    }
    Ok(())
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
    let conn = study.conn();
    // A large page cache keeps a big import's index pages in memory instead of
    // spilling them to the WAL mid-transaction, again and again.
    conn.pragma_update(None, "cache_size", IMPORT_CACHE_KIB)?;
    // Every reference is checked row by row (with its line and column) before the row
    // is written, so SQLite's own foreign-key probes would only repeat that work.
    conn.pragma_update(None, "foreign_keys", false)?;
    // Likewise every value a CHECK constraint guards is checked by the importer or made
    // by it (an event's action, a list's JSON), and a CHECK with a list of words costs a
    // temporary table per row.
    conn.pragma_update(None, "ignore_check_constraints", true)?;
    // Sorts (index builds, current grades) spill to temporary files instead of growing
    // in memory with the import.
    conn.pragma_update(None, "temp_store", "FILE")?;
    let result = import_in_transaction(study, set, progress);
    let conn = study.conn();
    conn.pragma_update(None, "temp_store", "MEMORY")?;
    conn.pragma_update(None, "ignore_check_constraints", false)?;
    conn.pragma_update(None, "foreign_keys", true)?;
    conn.pragma_update(None, "cache_size", super::DEFAULT_CACHE_KIB)?;
    result
}

/// Page cache during imports, in KiB (negative = KiB for SQLite's `cache_size`): what
/// an import's memory is bounded by, besides the longest row and list of its files.
pub(super) const IMPORT_CACHE_KIB: i64 = -131_072;

/// Page cache while an import builds indexes, in KiB: SQLite's sorter holds as much as
/// the page cache in memory before it spills to temporary files, so a smaller cache
/// keeps the sorter's memory and the pages already cached within the import's bound.
pub(super) const SORT_CACHE_KIB: i64 = -16_384;

fn import_in_transaction(
    study: &mut Study,
    set: &ImportSet,
    progress: Progress,
) -> Result<Vec<FileReport>> {
    let scratch = Scratch::open()?;
    let tx = study.begin_write()?;
    let files = [
        &set.scales,
        &set.items,
        &set.contexts,
        &set.rankings,
        &set.grades,
        &set.gold,
    ];
    let files_total = files.iter().filter(|f| f.is_some()).count();
    let mut reports = Vec::new();
    for (kind, src) in files.into_iter().enumerate() {
        let Some(src) = src else { continue };
        let mut p = FileProgress::start(&mut *progress, src, reports.len(), files_total);
        let report = match kind {
            0 => scales::import_scales(&tx, src, &mut p)?,
            1 => catalog::import_items(&tx, src, &scratch, &mut p)?,
            2 => catalog::import_contexts(&tx, src, &scratch, &mut p)?,
            3 => rankings::import_rankings(&tx, src, &scratch, &mut p)?,
            4 => grades::import_grades(&tx, src, &scratch, &mut p)?,
            _ => gold::import_gold(&tx, src, &scratch, &mut p)?,
        };
        reports.push(report);
    }
    tx.commit()?;
    Ok(reports)
}

fn input_error(problems: Problems) -> StudyError {
    StudyError::Input(problems)
}

/// Typed access to a row's named fields, recording problems with their column.
#[derive(Clone, Copy)]
struct Fields<'a> {
    row: Row<'a>,
}

impl<'a> Fields<'a> {
    /// The field's text, with an export's formula guard removed.
    fn text(&self, name: &str) -> &'a str {
        self.row
            .column(name)
            .map_or("", |i| unneutralise(self.row.field(i)))
    }

    fn col(&self, name: &str) -> usize {
        self.row.column(name).map_or(0, |i| i + 1)
    }

    fn problem(&self, name: &str, message: impl Into<String>) -> Problem {
        self.row.problem(self.col(name), message)
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
    contexts: FastSet<String>,
    items: FastSet<String>,
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

fn id_set(tx: &Transaction, sql: &str) -> Result<FastSet<String>> {
    let mut stmt = tx.prepare(sql)?;
    let ids = stmt
        .query_map([], |r| r.get::<_, String>(0))?
        .collect::<std::result::Result<FastSet<String>, _>>()?;
    Ok(ids)
}

pub use crate::core::digest::content_uid;

/// The ids of one kind met so far (in the file, and in the study), keyed by their
/// Unicode NFC form: two ids that differ in bytes but are canonically equivalent
/// (Unicode Standard Annex #15) look identical on screen and would name two things.
/// They are held in the import's scratch database, not in memory.
pub(super) struct DistinctIds<'s> {
    what: &'static str,
    /// NFC form → (the id as written, its line; 0 = already in the study).
    seen: FirstSeen<'s>,
}

impl<'s> DistinctIds<'s> {
    /// Starts with the ids the study already has.
    pub(super) fn with_study(
        tx: &Transaction,
        scratch: &'s Scratch,
        what: &'static str,
        sql: &str,
    ) -> Result<Self> {
        let mut seen = scratch.keys()?;
        let mut stmt = tx.prepare(sql)?;
        let mut ids = stmt.query([])?;
        while let Some(r) = ids.next()? {
            let id = r.get_ref(0)?.as_str().map_err(rusqlite::Error::from)?;
            seen.first(&nfc(id), id, 0)?;
        }
        Ok(DistinctIds { what, seen })
    }

    /// Records `id` from `line`; the problem when an earlier line of the file has the
    /// same id, or one equal after NFC but different in bytes (here or in the study).
    pub(super) fn check(&mut self, id: &str, line: u64) -> Result<Option<String>> {
        let what = self.what;
        let key = nfc(id);
        let problem = match self.seen.first(&key, id, line)? {
            None => None,
            Some((first, 0)) if first == id => {
                // In the study already: this row updates it, and a second row is a duplicate.
                self.seen.met_on(&key, line)?;
                None
            }
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
                    spelled(&first)
                ))
            }
        };
        Ok(problem)
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

/// The NFC form of `text` (borrowed when it already is, as ASCII always is).
fn nfc(text: &str) -> std::borrow::Cow<'_, str> {
    use unicode_normalization::{IsNormalized, UnicodeNormalization, is_nfc_quick};
    match is_nfc_quick(text.chars()) {
        IsNormalized::Yes => std::borrow::Cow::Borrowed(text),
        _ => std::borrow::Cow::Owned(text.nfc().collect()),
    }
}
