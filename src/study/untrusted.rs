//! Reading a study file of uncertain origin (a reviewer copy back from another machine)
//! the way SQLite's "Defense Against The Dark Arts" advises: read-only and immutable
//! (its bytes never change), defensive mode, `trusted_schema` off, `cell_size_check`
//! on, low limits, a time limit, `quick_check` first, and its schema compared object
//! by object with the one this build expects before a single row is read. Rows are
//! then read from the tables only (never through a view) and checked one by one in
//! `merge`.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use rusqlite::config::DbConfig;
use rusqlite::limits::Limit;
use rusqlite::types::{Value, ValueRef};
use rusqlite::{Connection, OpenFlags};

use super::file_guard::PartialFile as Scratch;
use super::{Result, StudyError, schema};

/// The longest a copy may take to check and read.
pub const READ_TIME_LIMIT: Duration = Duration::from_secs(20);
/// Longest text or blob a copy may hold in one value.
pub const MAX_VALUE_BYTES: i32 = 2 << 20;

fn refused(path: &Path, reason: impl Into<String>) -> StudyError {
    StudyError::Refused {
        path: path.display().to_string(),
        reason: reason.into(),
    }
}

/// An open, checked, read-only copy. A copy at an older schema is read through a
/// migrated temporary file (`_scratch`), never migrated in place.
pub struct CheckedCopy {
    pub conn: Connection,
    pub path: PathBuf,
    _scratch: Option<Scratch>,
}

/// `file:` URI for a path opened immutable, with the characters URIs reserve escaped.
pub fn immutable_uri(path: &Path) -> String {
    let text = std::path::absolute(path)
        .unwrap_or_else(|_| path.to_path_buf())
        .display()
        .to_string();
    let mut out = String::from("file:");
    for c in text.chars() {
        match c {
            '%' => out.push_str("%25"),
            '?' => out.push_str("%3f"),
            '#' => out.push_str("%23"),
            c => out.push(c),
        }
    }
    out.push_str("?immutable=1");
    out
}

/// Opens `path` read-only and immutable with every hardening in place.
fn open_hardened(path: &Path) -> Result<Connection> {
    let conn = Connection::open_with_flags(
        immutable_uri(path),
        OpenFlags::SQLITE_OPEN_READ_ONLY
            | OpenFlags::SQLITE_OPEN_URI
            | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )
    .map_err(|e| refused(path, format!("cannot be read as SQLite: {e}")))?;
    let harden = || -> rusqlite::Result<()> {
        conn.set_db_config(DbConfig::SQLITE_DBCONFIG_DEFENSIVE, true)?;
        conn.set_db_config(DbConfig::SQLITE_DBCONFIG_TRUSTED_SCHEMA, false)?;
        conn.pragma_update(None, "trusted_schema", false)?;
        conn.pragma_update(None, "cell_size_check", true)?;
        conn.set_limit(Limit::SQLITE_LIMIT_LENGTH, MAX_VALUE_BYTES)?;
        conn.set_limit(Limit::SQLITE_LIMIT_SQL_LENGTH, 100_000)?;
        conn.set_limit(Limit::SQLITE_LIMIT_COLUMN, 100)?;
        conn.set_limit(Limit::SQLITE_LIMIT_EXPR_DEPTH, 50)?;
        conn.set_limit(Limit::SQLITE_LIMIT_COMPOUND_SELECT, 3)?;
        conn.set_limit(Limit::SQLITE_LIMIT_VDBE_OP, 25_000)?;
        conn.set_limit(Limit::SQLITE_LIMIT_FUNCTION_ARG, 8)?;
        conn.set_limit(Limit::SQLITE_LIMIT_ATTACHED, 0)?;
        conn.set_limit(Limit::SQLITE_LIMIT_LIKE_PATTERN_LENGTH, 50)?;
        conn.set_limit(Limit::SQLITE_LIMIT_TRIGGER_DEPTH, 1)?;
        Ok(())
    };
    harden().map_err(|e| refused(path, format!("cannot be read safely: {e}")))?;
    let deadline = Instant::now() + READ_TIME_LIMIT;
    conn.progress_handler(10_000, Some(move || Instant::now() > deadline))
        .map_err(|e| refused(path, format!("cannot be read safely: {e}")))?;
    Ok(conn)
}

/// Words for a failure while reading a copy (a time-out reads as one).
fn reading(path: &Path, e: rusqlite::Error) -> StudyError {
    let text = e.to_string();
    if text.contains("interrupted") {
        refused(
            path,
            format!(
                "reading it took longer than {} s; it is refused",
                READ_TIME_LIMIT.as_secs()
            ),
        )
    } else {
        refused(
            path,
            format!(
                "cannot be read: {}",
                text.lines().next().unwrap_or_default()
            ),
        )
    }
}

/// One object of a schema: (type, name, table, SQL).
type SchemaObject = (String, String, String, Option<String>);

fn schema_of(conn: &Connection) -> rusqlite::Result<Vec<SchemaObject>> {
    let mut stmt =
        conn.prepare("SELECT type, name, tbl_name, sql FROM sqlite_schema ORDER BY type, name")?;
    let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?)))?;
    rows.collect()
}

/// The schema this build writes at `version`, built in memory from the migrations.
fn expected_schema(version: i32) -> rusqlite::Result<Vec<SchemaObject>> {
    let conn = Connection::open_in_memory()?;
    for step in schema::MIGRATIONS.iter().take(version as usize) {
        step.apply(&conn)?;
    }
    schema_of(&conn)
}

/// Names every object of the copy's schema that this build does not write, or writes
/// differently, and every object it lacks.
fn schema_differences(found: &[SchemaObject], expected: &[SchemaObject]) -> Vec<String> {
    let mut out = Vec::new();
    for object in found {
        match expected.iter().find(|e| e.0 == object.0 && e.1 == object.1) {
            None => out.push(format!(
                "{} \"{}\" is not part of a study",
                object.0, object.1
            )),
            Some(e) if e != object => out.push(format!(
                "{} \"{}\" is defined differently",
                object.0, object.1
            )),
            Some(_) => {}
        }
    }
    for e in expected {
        if !found.iter().any(|o| o.0 == e.0 && o.1 == e.1) {
            let kind_clash = found.iter().find(|o| o.1 == e.1);
            match kind_clash {
                Some(o) => out.push(format!(
                    "\"{}\" is a {} where a study has a {}",
                    e.1, o.0, e.0
                )),
                None => out.push(format!("{} \"{}\" is missing", e.0, e.1)),
            }
        }
    }
    out.sort();
    out.dedup();
    out
}

/// Opens and checks a copy: a regular file, not open in this process, SQLite that
/// passes `quick_check`, a Plumbline study of this build's schema or an older one.
pub fn open_copy(path: &Path) -> Result<CheckedCopy> {
    let metadata =
        std::fs::metadata(path).map_err(|e| refused(path, format!("cannot be opened: {e}")))?;
    if !metadata.is_file() {
        return Err(refused(path, "it is not a regular file"));
    }
    if super::file_guard::is_study_file(path) {
        return Err(refused(
            path,
            "this study is open in this window; only a file from elsewhere can be merged",
        ));
    }
    let wal = {
        let mut p = path.as_os_str().to_owned();
        p.push("-wal");
        PathBuf::from(p)
    };
    if std::fs::metadata(&wal).is_ok_and(|m| m.is_file() && m.len() > 0) {
        return open_with_wal(path, &wal);
    }
    let conn = open_hardened(path)?;
    let version = checked_version(&conn, path)?;
    if version == i64::from(schema::current_version()) {
        return Ok(CheckedCopy {
            conn,
            path: path.to_path_buf(),
            _scratch: None,
        });
    }
    drop(conn);
    open_migrated(path, version)
}

/// Checks an opened copy before a row is read: Plumbline's mark, SQLite's `quick_check`,
/// a schema version this build knows and the schema object by object. Returns the version.
fn checked_version(conn: &Connection, path: &Path) -> Result<i64> {
    let pragma = |name: &str| -> Result<i64> {
        conn.pragma_query_value(None, name, |r| r.get::<_, i64>(0))
            .map_err(|e| reading(path, e))
    };
    let application_id = pragma("application_id")
        .map_err(|_| refused(path, "this is not a Plumbline study (not an SQLite file)"))?;
    if application_id != i64::from(schema::APPLICATION_ID) {
        return Err(refused(path, "this SQLite file is not a Plumbline study"));
    }
    let check: String = conn
        .query_row("PRAGMA quick_check", [], |r| r.get(0))
        .map_err(|e| reading(path, e))?;
    if check != "ok" {
        return Err(refused(
            path,
            format!("the file is damaged (SQLite's quick_check: {check}); ask for a fresh copy"),
        ));
    }
    let version = pragma("user_version")?;
    if version < 1 || version > i64::from(schema::current_version()) {
        return Err(refused(
            path,
            format!(
                "its schema version {version} is not one this build knows (1 to {})",
                schema::current_version()
            ),
        ));
    }
    let found = schema_of(conn).map_err(|e| reading(path, e))?;
    let expected = expected_schema(version as i32).map_err(StudyError::Sql)?;
    let differences = schema_differences(&found, &expected);
    if !differences.is_empty() {
        return Err(refused(
            path,
            format!(
                "its schema is not a study's: {}; nothing was merged",
                differences.join("; ")
            ),
        ));
    }
    Ok(version)
}

/// An older copy, read through a migrated temporary copy (the copy itself is never
/// written).
fn open_migrated(path: &Path, version: i64) -> Result<CheckedCopy> {
    let scratch = scratch_for(path);
    std::fs::copy(path, scratch.path())
        .map_err(|e| refused(path, format!("cannot be copied for reading: {e}")))?;
    {
        let conn = Connection::open(scratch.path())?;
        conn.pragma_update(None, "journal_mode", "DELETE")?;
        for (i, step) in schema::MIGRATIONS.iter().enumerate().skip(version as usize) {
            step.apply(&conn)
                .map_err(|e| refused(path, format!("cannot be upgraded from schema {i}: {e}")))?;
            conn.pragma_update(None, "user_version", (i + 1) as i32)?;
        }
    }
    let conn = open_hardened(scratch.path())?;
    Ok(CheckedCopy {
        conn,
        path: path.to_path_buf(),
        _scratch: Some(scratch),
    })
}

/// A copy whose last grades are still in its `-wal` file: the two are copied to a
/// scratch file, the WAL is folded in there, and the scratch file is checked as a copy.
fn open_with_wal(path: &Path, wal: &Path) -> Result<CheckedCopy> {
    let scratch = scratch_for(path);
    let mut scratch_wal = scratch.path().to_path_buf().into_os_string();
    scratch_wal.push("-wal");
    std::fs::copy(path, scratch.path())
        .and_then(|_| std::fs::copy(wal, PathBuf::from(&scratch_wal)))
        .map_err(|e| refused(path, format!("cannot be copied for reading: {e}")))?;
    {
        let conn = Connection::open_with_flags(
            scratch.path(),
            OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX,
        )?;
        conn.set_db_config(DbConfig::SQLITE_DBCONFIG_DEFENSIVE, true)?;
        conn.pragma_update(None, "trusted_schema", false)?;
        conn.pragma_update(None, "journal_mode", "DELETE")
            .map_err(|e| refused(path, format!("its -wal file cannot be read: {e}")))?;
    }
    let mut checked = open_copy(scratch.path())?;
    checked.path = path.to_path_buf();
    if checked._scratch.is_none() {
        checked._scratch = Some(scratch);
    } else {
        // An older copy was migrated into a second scratch file; drop the first now.
        drop(scratch);
    }
    Ok(checked)
}

/// A temporary file in the system's temporary folder, named so that a killed merge's
/// leftover is recognised and removed by the next command (`file_guard::sweep_stale`).
fn scratch_for(_copy: &Path) -> Scratch {
    Scratch::beside(&std::env::temp_dir().join("copy.plumb"))
}

/// A value's text, or why it is not text.
pub fn text(value: &Value) -> Option<&str> {
    match value {
        Value::Text(t) => Some(t),
        _ => None,
    }
}

/// A value's whole number, if it is one.
pub fn integer(value: &Value) -> Option<i64> {
    match value {
        Value::Integer(i) => Some(*i),
        _ => None,
    }
}

/// A value's number (whole or real), if it is one.
pub fn number(value: &Value) -> Option<f64> {
    match value {
        Value::Integer(i) => Some(*i as f64),
        Value::Real(r) => Some(*r),
        _ => None,
    }
}

/// Hands every row of `sql` to `each` as raw values (types are checked by the caller),
/// one row at a time: a copy of any size is read in bounded memory.
pub fn for_each_row(
    copy: &CheckedCopy,
    sql: &str,
    width: usize,
    mut each: impl FnMut(&[Value]) -> Result<()>,
) -> Result<()> {
    let mut stmt = copy.conn.prepare(sql).map_err(|e| reading(&copy.path, e))?;
    let mut result = stmt.query([]).map_err(|e| reading(&copy.path, e))?;
    let mut values = Vec::with_capacity(width);
    while let Some(row) = result.next().map_err(|e| reading(&copy.path, e))? {
        values.clear();
        for i in 0..width {
            // `Value::from(ValueRef)` panics on text that is not UTF-8; a hostile copy
            // can hold such bytes anywhere, so they are refused here instead.
            let value = match row.get_ref(i).map_err(|e| reading(&copy.path, e))? {
                ValueRef::Text(bytes) => match std::str::from_utf8(bytes) {
                    Ok(text) => Value::Text(text.to_string()),
                    Err(_) => {
                        return Err(refused(
                            &copy.path,
                            "it holds text that is not valid UTF-8 (a damaged file?); it is refused"
                                .to_string(),
                        ));
                    }
                },
                other => Value::from(other),
            };
            values.push(value);
        }
        each(&values)?;
    }
    Ok(())
}

impl CheckedCopy {
    /// Gives the reads that follow the checks a fresh time limit, longer by a bound per
    /// event (writing them into the study takes time the checks did not).
    pub fn allow_time_for(&self, events: u64) {
        let deadline = Instant::now()
            + READ_TIME_LIMIT
            + Duration::from_micros(200) * events.min(u32::MAX as u64) as u32;
        let _ = self
            .conn
            .progress_handler(10_000, Some(move || Instant::now() > deadline));
    }
}
