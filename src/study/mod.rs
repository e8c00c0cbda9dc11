//! The study file: one SQLite database holding a whole evaluation. All SQL lives here.
//!
//! `Study`'s methods, by file (each file owns one concern):
//! - `mod.rs`: the type and its errors; where the file is and whether it may be written.
//! - `opening.rs`: creating, opening and migrating the file; refusing a foreign or newer one.
//! - `transactions.rs`: write transactions that wait for the lock, reads that share one
//!   transaction, the size cap.
//! - `counts.rs`: row counts of the main tables.
//! - `settings.rs`: the `settings` table, raw and typed; the name and the pictures folder.
//! - `snapshot.rs`: the read-only picture the analysis works from.
//! - `grades.rs`: recording grades at the desk; `grade_packs.rs`: current grades packed
//!   per context for loading, kept by triggers and by every writer of grades.
//! - `queues.rs`: the pool and each reviewer's queue (`queue_shares.rs` shares it, no SQL).
//! - `cards.rs`: items and contexts with all they show.
//! - `gap_queue.rs`, `sample.rs`, `pilot.rs`: extra queues — gaps, the human sample, the pilot.
//! - `scales.rs`, `collapse.rs`, `gold.rs`: scales, their collapse maps, gold pairs.
//! - `settle.rs`: settled grades.
//! - `export.rs`, `hand_out.rs`, `merge/`: grades out, reviewer copies, merging back.

pub mod cards;
pub mod collapse;
mod connection;
mod counts;
pub mod csv_input;
pub mod export;
pub mod file_guard;
pub mod gap_queue;
pub mod gold;
pub mod grade_packs;
pub mod grades;
mod hand_out;
pub mod import;
pub mod merge;
mod open_files;
mod opening;
pub mod outside_lists;
pub mod pilot;
mod problems;
mod queue_shares;
pub mod queues;
pub mod row_rules;
pub mod sample;
pub mod scales;
pub mod schema;
mod scratch;
pub mod settings;
pub mod settle;
pub mod snapshot;
pub mod time;
mod transactions;
pub mod untrusted;

use std::path::{Path, PathBuf};
use std::time::Duration;

use rusqlite::Connection;

pub use counts::StudyCounts;
pub use csv_input::{Problem, Problems};
pub use opening::DEFAULT_CACHE_KIB;
pub use transactions::{DEFAULT_WRITE_WAIT, WAIT_NOTICE_AFTER};

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

/// The study itself: where it is, whether it may be written, its connection.
impl Study {
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

    /// The raw connection, for the store's own modules.
    pub(crate) fn conn(&self) -> &Connection {
        &self.conn
    }
}
