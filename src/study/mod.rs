//! The study file: one SQLite database holding a whole evaluation. All SQL lives here.

pub mod collapse;
pub mod csv_input;
pub mod export;
pub mod gap_queue;
pub mod grades;
pub mod import;
pub mod merge;
pub mod queues;
pub mod scales;
pub mod schema;
pub mod settle;
pub mod snapshot;
pub mod time;

use std::path::{Path, PathBuf};
use std::time::Duration;

use rusqlite::{Connection, OpenFlags, OptionalExtension};

/// How long a write waits for another program holding the study before giving up.
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(5);

/// Page cache per connection in KiB (SQLite's negative `cache_size`): 64 MiB.
pub const DEFAULT_CACHE_KIB: i64 = -65_536;

/// Why a study operation failed. `Input` and `Refused` are the user's to fix (exit 2).
#[derive(Debug, thiserror::Error)]
pub enum StudyError {
    /// Bad input data; the message names file, line and column where there is one.
    #[error("{0}")]
    Input(String),
    /// The file cannot be used as a study; nothing was changed.
    #[error("{path}: {reason}")]
    Refused { path: String, reason: String },
    #[error(
        "the study is busy: another program has held it for more than {} s; close it there and try again",
        BUSY_TIMEOUT.as_secs()
    )]
    Busy,
    #[error("the study is open read-only; changes cannot be saved")]
    ReadOnly,
    #[error("the disk is full; the study could not grow")]
    DiskFull,
    #[error("database error: {0}")]
    Sql(rusqlite::Error),
    #[error("{0}")]
    Io(#[from] std::io::Error),
}

impl From<rusqlite::Error> for StudyError {
    fn from(e: rusqlite::Error) -> StudyError {
        use rusqlite::ErrorCode;
        match e.sqlite_error_code() {
            Some(ErrorCode::DatabaseBusy | ErrorCode::DatabaseLocked) => StudyError::Busy,
            Some(ErrorCode::ReadOnly) => StudyError::ReadOnly,
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
        matches!(self, StudyError::Input(_) | StudyError::Refused { .. })
    }
}

pub type Result<T> = std::result::Result<T, StudyError>;

/// An open study file.
pub struct Study {
    conn: Connection,
    path: PathBuf,
    read_only: bool,
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
        let mut study = Study {
            conn,
            path: path.to_path_buf(),
            read_only: false,
        };
        study.configure()?;
        study
            .conn
            .pragma_update(None, "application_id", schema::APPLICATION_ID)?;
        study.migrate()?;
        let name = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        study.set_setting("name", &name)?;
        Ok(study)
    }

    /// Opens an existing study, migrating an older schema. A file that is not a study,
    /// or that a newer build wrote, is refused without a single byte changed.
    pub fn open(path: &Path) -> Result<Study> {
        check_is_study(path)?;
        let read_only = std::fs::metadata(path)?.permissions().readonly();
        let flags = if read_only {
            OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX
        } else {
            OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX
        };
        let conn = Connection::open_with_flags(path, flags)?;
        let mut study = Study {
            conn,
            path: path.to_path_buf(),
            read_only,
        };
        study.configure()?;
        if !read_only {
            study.migrate()?;
        }
        Ok(study)
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    pub fn is_read_only(&self) -> bool {
        self.read_only
    }

    /// The raw connection, for the store's own modules.
    pub(crate) fn conn(&self) -> &Connection {
        &self.conn
    }

    pub(crate) fn conn_mut(&mut self) -> &mut Connection {
        &mut self.conn
    }

    fn configure(&mut self) -> Result<()> {
        self.conn.busy_timeout(BUSY_TIMEOUT)?;
        self.conn
            .pragma_update(None, "cache_size", DEFAULT_CACHE_KIB)?;
        // Statement journals (needed by the grade trigger) stay in memory instead of
        // costing a temp-file write per row.
        self.conn.pragma_update(None, "temp_store", "MEMORY")?;
        self.conn.pragma_update(None, "foreign_keys", true)?;
        if !self.read_only {
            self.conn.pragma_update(None, "journal_mode", "WAL")?;
            // FULL makes each committed grade durable even if the machine loses power.
            self.conn.pragma_update(None, "synchronous", "FULL")?;
        }
        Ok(())
    }

    fn migrate(&mut self) -> Result<()> {
        let version: i32 = self
            .conn
            .pragma_query_value(None, "user_version", |r| r.get(0))?;
        for (i, sql) in schema::MIGRATIONS.iter().enumerate().skip(version as usize) {
            let tx = self.conn.transaction()?;
            tx.execute_batch(sql)?;
            tx.pragma_update(None, "user_version", (i + 1) as i32)?;
            tx.commit()?;
        }
        Ok(())
    }

    pub fn schema_version(&self) -> Result<i32> {
        Ok(self
            .conn
            .pragma_query_value(None, "user_version", |r| r.get(0))?)
    }

    pub fn setting(&self, key: &str) -> Result<Option<String>> {
        Ok(self
            .conn
            .query_row("SELECT value FROM settings WHERE key = ?1", [key], |r| {
                r.get(0)
            })
            .optional()?)
    }

    pub fn set_setting(&self, key: &str, value: &str) -> Result<()> {
        self.conn.execute(
            "INSERT INTO settings(key, value) VALUES (?1, ?2)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            [key, value],
        )?;
        Ok(())
    }

    /// The study's display name (file stem unless renamed).
    pub fn name(&self) -> String {
        self.setting("name").ok().flatten().unwrap_or_default()
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
            ranked_items: count("ranked_items")?,
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

/// Looks at a file read-only and refuses it unless it is a study this build can open.
fn check_is_study(path: &Path) -> Result<()> {
    use std::io::Read;
    let mut header = [0u8; 16];
    let mut file =
        std::fs::File::open(path).map_err(|e| refused(path, &format!("cannot be opened: {e}")))?;
    let read = file.read(&mut header)?;
    if read < 16 || &header != SQLITE_MAGIC {
        return Err(refused(
            path,
            "this is not a Plumbline study (not an SQLite file)",
        ));
    }
    let conn = Connection::open_with_flags(
        path,
        OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )
    .map_err(|e| refused(path, &format!("cannot be read as SQLite: {e}")))?;
    let probe = |pragma: &str| -> std::result::Result<i32, StudyError> {
        conn.pragma_query_value(None, pragma, |r| r.get(0))
            .map_err(|e| refused(path, &format!("cannot be read as SQLite: {e}")))
    };
    let application_id = probe("application_id")?;
    if application_id != schema::APPLICATION_ID {
        return Err(refused(path, "this SQLite file is not a Plumbline study"));
    }
    let version = probe("user_version")?;
    if version > schema::current_version() {
        return Err(refused(
            path,
            &format!(
                "this study was written by a newer Plumbline (schema {version}; this build knows up to {}); update Plumbline to open it",
                schema::current_version()
            ),
        ));
    }
    Ok(())
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
