//! The study file: one SQLite database holding a whole evaluation. All SQL lives here.
//!
//! `Study`'s methods, by file:
//! - `mod.rs`: creating, opening and migrating the file; write transactions and waits;
//!   counts and size limits (still to be split further).
//! - `settings.rs`: the `settings` table, raw and typed.
//! - `snapshot.rs`: the read-only picture the analysis works from.
//! - `grades.rs`: recording grades at the desk.
//! - `queues.rs`: the pool and each reviewer's queue (`queue_shares.rs` shares it, no SQL).
//! - `gap_queue.rs`, `sample.rs`, `pilot.rs`: extra queues — gaps, the human sample, the pilot.
//! - `scales.rs`, `collapse.rs`, `gold.rs`: scales, their collapse maps, gold pairs.
//! - `settle.rs`: settled grades.
//! - `export.rs`, `hand_out.rs`, `merge/`: grades out, reviewer copies, merging back.

pub mod collapse;
mod connection;
pub mod csv_input;
pub mod export;
pub mod file_guard;
pub mod gap_queue;
pub mod gold;
pub mod grades;
mod hand_out;
pub mod import;
pub mod merge;
mod open_files;
pub mod outside_lists;
pub mod pilot;
mod problems;
mod queue_shares;
pub mod queues;
pub mod row_rules;
pub mod sample;
pub mod scales;
pub mod schema;
pub mod settings;
pub mod settle;
pub mod snapshot;
pub mod time;
pub mod untrusted;

use std::path::{Path, PathBuf};
use std::time::Duration;

use rusqlite::{Connection, Transaction, TransactionBehavior};

pub use csv_input::{Problem, Problems};

/// How long one write waits for another program holding the study's write lock before
/// it gives up, unless the caller sets its own limit (`Study::set_write_wait`).
pub const DEFAULT_WRITE_WAIT: Duration = Duration::from_secs(60);

/// How long a write waits quietly before a command-line writer says it is waiting.
pub const WAIT_NOTICE_AFTER: Duration = Duration::from_secs(1);

/// Page cache per connection in KiB (SQLite's negative `cache_size`): 64 MiB.
pub const DEFAULT_CACHE_KIB: i64 = -65_536;

/// Why a study operation failed. `Input` and `Refused` are the user's to fix (exit 2).
#[derive(Debug, thiserror::Error)]
pub enum StudyError {
    /// Bad input data: each problem names file, line and column where there is one
    /// (kept apart, so a screen can list them without parsing text back).
    #[error("{0}")]
    Input(Problems),
    /// The file cannot be used as a study; nothing was changed.
    #[error("{path}: {reason}")]
    Refused { path: String, reason: String },
    /// Another program kept the write lock for longer than this write was willing to wait.
    #[error(
        "the study is busy: another program kept writing to it for longer than the wait allowed; let it finish (or close it there) and try again"
    )]
    Busy,
    /// The study's file or folder cannot be written; holds the study's path where known.
    #[error(
        "{}the study is read-only (its file or its folder cannot be written); nothing was changed",
        .0.as_deref().map(|p| format!("{p}: ")).unwrap_or_default()
    )]
    ReadOnly(Option<String>),
    #[error("the disk is full; the study could not grow")]
    DiskFull,
    #[error("database error: {0}")]
    Sql(rusqlite::Error),
    #[error("{0}")]
    Io(#[from] std::io::Error),
}

impl StudyError {
    /// Bad input that is not tied to a place in a file (an unknown scale, a missing name).
    pub fn input(message: impl Into<String>) -> StudyError {
        StudyError::Input(Problems(vec![Problem::general(message)]))
    }
}

impl From<rusqlite::Error> for StudyError {
    fn from(e: rusqlite::Error) -> StudyError {
        use rusqlite::ErrorCode;
        match e.sqlite_error_code() {
            Some(ErrorCode::DatabaseBusy | ErrorCode::DatabaseLocked) => StudyError::Busy,
            Some(ErrorCode::ReadOnly) => StudyError::ReadOnly(None),
            Some(ErrorCode::DiskFull) => StudyError::DiskFull,
            _ => StudyError::Sql(e),
        }
    }
}

impl From<rusqlite::types::FromSqlError> for StudyError {
    fn from(e: rusqlite::types::FromSqlError) -> StudyError {
        StudyError::Sql(rusqlite::Error::FromSqlConversionFailure(
            0,
            rusqlite::types::Type::Null,
            Box::new(e),
        ))
    }
}

impl StudyError {
    /// True for errors the user caused and can fix by changing input (exit code 2).
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            StudyError::Input(_) | StudyError::Refused { .. } | StudyError::ReadOnly(_)
        )
    }
}

pub type Result<T> = std::result::Result<T, StudyError>;

/// An open study file.
///
/// Field order matters: the connection closes before the registration is released, so
/// no other thread raw-reads the file while this connection still holds SQLite's locks.
pub struct Study {
    conn: Connection,
    path: PathBuf,
    read_only: bool,
    write_wait: Duration,
    announce_waits: bool,
    _registration: open_files::Registration,
}

impl Drop for Study {
    /// Closes the connection while no other thread of this process opens one (see
    /// `open_files::while_locked`); an in-memory connection, which touches no file,
    /// takes its place for the rest of the drop.
    fn drop(&mut self) {
        if let Ok(placeholder) = Connection::open_in_memory() {
            let conn = std::mem::replace(&mut self.conn, placeholder);
            open_files::while_locked(|| drop(conn));
        }
    }
}

const SQLITE_MAGIC: &[u8; 16] = b"SQLite format 3\0";

impl Study {
    /// Creates a new, empty study; refuses to overwrite an existing file.
    pub fn create(path: &Path) -> Result<Study> {
        if path.exists() {
            return Err(refused(
                path,
                "a file already exists there; choose another name",
            ));
        }
        let conn = Connection::open(path)?;
        let registration = open_files::register(path)?;
        let mut study = Study::wrap(conn, path, false, registration);
        study.configure()?;
        study
            .conn
            .pragma_update(None, "application_id", schema::APPLICATION_ID)?;
        study.migrate()?;
        study.enable_wal()?;
        let name = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        study.set_setting(settings::keys::NAME, &name)?;
        Ok(study)
    }

    /// Opens an existing study, migrating an older schema. A file that is not a study,
    /// or that a newer build wrote, is refused without a single byte changed.
    ///
    /// The file is never opened with plain file I/O while this process has a connection
    /// to it: closing any descriptor of a file drops every POSIX lock the process holds
    /// on it, and SQLite's locks are POSIX locks (SQLite's "How To Corrupt An SQLite
    /// Database File", section 2.2). The raw header check runs only while no connection
    /// of this process has the file open.
    pub fn open(path: &Path) -> Result<Study> {
        let metadata = std::fs::metadata(path)
            .map_err(|e| refused(path, &format!("cannot be opened: {e}")))?;
        if !metadata.is_file() {
            return Err(refused(
                path,
                "this is not a Plumbline study (not a regular file)",
            ));
        }
        let read_only = metadata.permissions().readonly() || !connection::folder_writable(path);
        if !read_only {
            connection::release_read_only_sidecars(path);
        }
        let (conn, registration) = open_files::open_checked(path, |first_in_process| {
            if first_in_process {
                check_header(path)?;
            }
            connection::connect(path, read_only)
                .map_err(|e| refused(path, &format!("cannot be read as SQLite: {e}")))
        })?;
        let mut study = Study::wrap(conn, path, read_only, registration);
        study.check_identity()?;
        study.configure()?;
        if !read_only {
            study.migrate()?;
            study.enable_wal()?;
            // Leftovers of a killed export, hand-out or merge beside the study or in the
            // temporary folder (never a running program's).
            let folder = path.parent().filter(|p| !p.as_os_str().is_empty());
            file_guard::sweep_stale(folder.unwrap_or(Path::new(".")));
            file_guard::sweep_stale(&std::env::temp_dir());
        }
        Ok(study)
    }

    fn wrap(
        conn: Connection,
        path: &Path,
        read_only: bool,
        registration: open_files::Registration,
    ) -> Study {
        Study {
            conn,
            path: path.to_path_buf(),
            read_only,
            write_wait: DEFAULT_WRITE_WAIT,
            announce_waits: false,
            _registration: registration,
        }
    }

    /// How long each write waits for another program's write to finish.
    pub fn set_write_wait(&mut self, wait: Duration) -> Result<()> {
        self.write_wait = wait;
        self.conn.busy_timeout(wait)?;
        Ok(())
    }

    /// The limit set by `set_write_wait` (or the default).
    pub fn write_wait(&self) -> Duration {
        self.write_wait
    }

    /// Makes writes that wait longer than `WAIT_NOTICE_AFTER` say so on stderr (for the
    /// command line, where a silent wait looks like a hang).
    pub fn announce_waits_on_stderr(&mut self) {
        self.announce_waits = true;
    }

    /// Begins a write transaction that holds the write lock from its first statement
    /// (`BEGIN IMMEDIATE`). A deferred transaction that reads and then writes is refused
    /// by SQLite at once, without waiting, when another writer committed meanwhile.
    pub(crate) fn begin_write(&mut self) -> Result<Transaction<'_>> {
        if self.read_only {
            return Err(self.read_only_error());
        }
        let notice = self.announce_waits.then(|| WaitNotice::start(&self.path));
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate);
        drop(notice);
        Ok(tx?)
    }
    pub fn path(&self) -> &Path {
        &self.path
    }

    pub fn is_read_only(&self) -> bool {
        self.read_only
    }

    /// The refusal of a write to this read-only study, naming it.
    pub fn read_only_error(&self) -> StudyError {
        StudyError::ReadOnly(Some(self.path.display().to_string()))
    }

    /// Runs `read` inside one read transaction, so every query it makes (a snapshot and the
    /// reads a view model adds to it) sees the same state of the file, even while another
    /// program writes. Nothing may be written inside.
    pub fn read_together<T>(&self, read: impl FnOnce(&Study) -> Result<T>) -> Result<T> {
        if !self.conn.is_autocommit() {
            return read(self);
        }
        let together = self.conn.unchecked_transaction()?;
        let out = read(self);
        drop(together); // a rollback: nothing was written
        out
    }

    /// The raw connection, for the store's own modules.
    pub(crate) fn conn(&self) -> &Connection {
        &self.conn
    }

    fn configure(&mut self) -> Result<()> {
        self.conn.busy_timeout(self.write_wait)?;
        self.conn
            .pragma_update(None, "cache_size", DEFAULT_CACHE_KIB)?;
        // Statement journals (needed by the grade trigger) stay in memory instead of
        // costing a temp-file write per row.
        self.conn.pragma_update(None, "temp_store", "MEMORY")?;
        self.conn.pragma_update(None, "foreign_keys", true)?;
        if !self.read_only {
            // FULL makes each committed grade durable even if the machine loses power.
            self.conn.pragma_update(None, "synchronous", "FULL")?;
        }
        Ok(())
    }

    /// Switches to WAL once the schema is known good, so that a refused file keeps its
    /// journal mode (its header) unchanged.
    fn enable_wal(&mut self) -> Result<()> {
        self.conn.pragma_update(None, "journal_mode", "WAL")?;
        Ok(())
    }

    fn migrate(&mut self) -> Result<()> {
        let version: i32 = self
            .conn
            .pragma_query_value(None, "user_version", |r| r.get(0))?;
        let path = self.path.clone();
        for (i, step) in schema::MIGRATIONS.iter().enumerate().skip(version as usize) {
            let upgrade = |e: rusqlite::Error| match StudyError::from(e) {
                StudyError::Sql(e) if i == 0 => refused(
                    &path,
                    &format!(
                        "this SQLite file carries Plumbline's mark but no schema version, and its tables clash with a study's ({}); it was not written by Plumbline, or its creation was cut short, so it is left as it is",
                        sql_message(&e)
                    ),
                ),
                StudyError::Sql(e) => refused(
                    &path,
                    &format!(
                        "cannot upgrade the study from schema {i} to {}: {}; nothing was changed",
                        i + 1,
                        sql_message(&e)
                    ),
                ),
                other => other,
            };
            let tx = self.begin_write()?;
            step.apply(&tx).map_err(upgrade)?;
            tx.pragma_update(None, "user_version", (i + 1) as i32)
                .map_err(upgrade)?;
            tx.commit()?;
        }
        Ok(())
    }

    /// Refuses a file this build must not use, read through the open connection (the
    /// authoritative values: a WAL may hold a newer header than the file).
    fn check_identity(&self) -> Result<()> {
        let probe = |pragma: &str| -> Result<i32> {
            self.conn
                .pragma_query_value(None, pragma, |r| r.get(0))
                .map_err(|e| {
                    refused(
                        &self.path,
                        &format!("cannot be read as SQLite: {}", sql_message(&e)),
                    )
                })
        };
        let version = probe("user_version")?;
        check_marks(&self.path, probe("application_id")?, version)?;
        Ok(())
    }

    pub fn schema_version(&self) -> Result<i32> {
        Ok(self
            .conn
            .pragma_query_value(None, "user_version", |r| r.get(0))?)
    }

    /// The folder image paths are relative to. A relative setting (a reviewer copy's
    /// own pictures folder) is taken relative to the study file, so a copy finds its
    /// pictures wherever it is moved with them.
    pub fn catalog_dir(&self) -> Result<Option<PathBuf>> {
        let Some(dir) = self
            .setting(settings::keys::CATALOG_DIR)?
            .filter(|s| !s.is_empty())
        else {
            return Ok(None);
        };
        let dir = PathBuf::from(dir);
        if dir.is_absolute() {
            return Ok(Some(dir));
        }
        let base = std::path::absolute(&self.path)
            .ok()
            .and_then(|p| p.parent().map(Path::to_path_buf))
            .unwrap_or_default();
        Ok(Some(base.join(dir)))
    }

    /// The study's display name (file stem unless renamed).
    pub fn name(&self) -> String {
        self.setting(settings::keys::NAME)
            .ok()
            .flatten()
            .unwrap_or_default()
    }

    /// Row counts of the main tables, for summaries.
    pub fn counts(&self) -> Result<StudyCounts> {
        let count = |table: &str| -> Result<u64> {
            let n: i64 =
                self.conn
                    .query_row(&format!("SELECT COUNT(*) FROM {table}"), [], |r| r.get(0))?;
            Ok(n as u64)
        };
        Ok(StudyCounts {
            items: count("items")?,
            contexts: count("contexts")?,
            rankers: count("rankers")?,
            // Entries, counted from the lists' arrays (one row per list since schema 3).
            ranked_items: self.conn.query_row(
                "SELECT COALESCE(SUM(json_array_length(items)), 0) FROM ranked_lists",
                [],
                |r| r.get::<_, i64>(0),
            )? as u64,
            scales: count("scales")?,
            reviewers: count("reviewers")?,
            grade_events: count("grade_events")?,
            current_grades: count("current_grades")?,
        })
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
pub struct StudyCounts {
    pub items: u64,
    pub contexts: u64,
    pub rankers: u64,
    pub ranked_items: u64,
    pub scales: u64,
    pub reviewers: u64,
    pub grade_events: u64,
    pub current_grades: u64,
}

fn refused(path: &Path, reason: &str) -> StudyError {
    StudyError::Refused {
        path: path.display().to_string(),
        reason: reason.to_string(),
    }
}

/// SQLite's text of an error, without the statement it came from (SQLite quotes the
/// statement after " in "; the first line is the message).
fn sql_message(e: &rusqlite::Error) -> String {
    let text = e.to_string();
    let first = text.lines().next().unwrap_or_default().trim_end();
    first.strip_suffix(" in").unwrap_or(first).to_string()
}

/// Reads the 100-byte database header with plain file I/O. Called only while no
/// connection of this process has the file open (see `Study::open`).
fn check_header(path: &Path) -> Result<()> {
    use std::io::Read;
    let mut header = [0u8; 100];
    let file =
        std::fs::File::open(path).map_err(|e| refused(path, &format!("cannot be opened: {e}")))?;
    let mut read = 0;
    let mut limited = file.take(100);
    while read < header.len() {
        match limited.read(&mut header[read..])? {
            0 => break,
            n => read += n,
        }
    }
    if read < 100 || &header[..16] != SQLITE_MAGIC {
        return Err(refused(
            path,
            "this is not a Plumbline study (not an SQLite file)",
        ));
    }
    let be = |at: usize| {
        i32::from_be_bytes([header[at], header[at + 1], header[at + 2], header[at + 3]])
    };
    // Offsets 60 and 68 of the header: user_version and application_id (SQLite's file
    // format documentation, section 1.3).
    check_marks(path, be(68), be(60))
}

fn check_marks(path: &Path, application_id: i32, version: i32) -> Result<()> {
    if application_id != schema::APPLICATION_ID {
        return Err(refused(path, "this SQLite file is not a Plumbline study"));
    }
    if version > schema::current_version() {
        return Err(refused(
            path,
            &format!(
                "this study was written by a newer Plumbline (schema {version}; this build knows up to {}); update Plumbline to open it",
                schema::current_version()
            ),
        ));
    }
    if version < 0 {
        return Err(refused(path, "this study's schema version is not valid"));
    }
    Ok(())
}

/// Says on stderr that a write is waiting for another program, once it has waited for
/// `WAIT_NOTICE_AFTER`; dropping it before then says nothing.
struct WaitNotice {
    _stop: std::sync::mpsc::Sender<()>,
}

impl WaitNotice {
    fn start(path: &Path) -> WaitNotice {
        let (stop, stopped) = std::sync::mpsc::channel::<()>();
        let name = path.display().to_string();
        let _ = std::thread::Builder::new()
            .name("write-wait-notice".into())
            .spawn(move || {
                if let Err(std::sync::mpsc::RecvTimeoutError::Timeout) =
                    stopped.recv_timeout(WAIT_NOTICE_AFTER)
                {
                    eprintln!("waiting for another program writing to {name}…");
                }
            });
        WaitNotice { _stop: stop }
    }
}

impl Study {
    /// Caps the file at `pages` pages for this connection, which makes SQLite answer
    /// "disk full" once the study would grow past it (used to test full-disk handling).
    pub fn limit_size_in_pages(&self, pages: u64) -> Result<()> {
        self.conn
            .pragma_update(None, "max_page_count", pages as i64)?;
        Ok(())
    }
}
