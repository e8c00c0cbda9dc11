//! Creating, opening and migrating a study file, and refusing a file this build must not
//! use (not SQLite, not a study, or written by a newer build) without changing a byte.

use std::path::Path;

use rusqlite::Connection;

use super::transactions::DEFAULT_WRITE_WAIT;
use super::{Result, Study, StudyError, connection, file_guard, open_files, schema, settings};

/// Page cache per connection in KiB (SQLite's negative `cache_size`): 64 MiB.
pub const DEFAULT_CACHE_KIB: i64 = -65_536;

/// Page cache while a snapshot reads every table once, in KiB (negative, as above):
/// a single pass gains nothing from keeping pages, and on a study of millions of
/// grades a full cache would sit in memory beside the snapshot itself.
pub const SCAN_CACHE_KIB: i64 = -8_192;

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
