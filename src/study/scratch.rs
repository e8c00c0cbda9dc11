//! A private temporary SQLite database for what would otherwise grow in memory with an
//! input file: the keys a file has met so far (each with the line that first had it),
//! and the rows of a rankings file whose lists are scattered, read back sorted by list.
//! SQLite holds it in a small page cache and spills the rest to a temporary file of its
//! own, removed when the connection closes; the study is never touched through it.

use rusqlite::{Connection, OptionalExtension, Statement};

use super::Result;

/// Page cache of the scratch database, in KiB (SQLite's negative `cache_size`).
const SCRATCH_CACHE_KIB: i64 = -16_384;

/// The scratch database of one import or one rankings file.
pub(crate) struct Scratch {
    conn: Connection,
    tables: std::cell::Cell<usize>,
}

impl Scratch {
    /// Opens a new, empty scratch database (a file only once it outgrows its cache).
    pub(crate) fn open() -> Result<Scratch> {
        // An empty name is SQLite's private temporary database; `temp_store` stays at the
        // build's default (a file), so it is not held in memory whatever its size.
        let conn = Connection::open("")?;
        conn.pragma_update(None, "cache_size", SCRATCH_CACHE_KIB)?;
        conn.pragma_update(None, "journal_mode", "OFF")?;
        conn.pragma_update(None, "synchronous", "OFF")?;
        conn.pragma_update(None, "temp_store", "FILE")?;
        Ok(Scratch {
            conn,
            tables: std::cell::Cell::new(0),
        })
    }

    /// A fresh table name, so that each use starts empty.
    fn table(&self, what: &str) -> String {
        let n = self.tables.get() + 1;
        self.tables.set(n);
        format!("{what}_{n}")
    }

    /// A new, empty set of keys.
    pub(crate) fn keys(&self) -> Result<FirstSeen<'_>> {
        let table = self.table("keys");
        self.conn.execute_batch(&format!(
            "CREATE TABLE {table}(key TEXT PRIMARY KEY, written TEXT, line INTEGER NOT NULL) WITHOUT ROWID"
        ))?;
        Ok(FirstSeen {
            again: self
                .conn
                .prepare(&format!("UPDATE {table} SET line = ?2 WHERE key = ?1"))?,
            add: self.conn.prepare(&format!(
                "INSERT INTO {table}(key, written, line) VALUES (?1, ?2, ?3) ON CONFLICT(key) DO NOTHING"
            ))?,
            find: self
                .conn
                .prepare(&format!("SELECT written, line FROM {table} WHERE key = ?1"))?,
        })
    }

    /// A new, empty table of ranked rows, to be read back sorted by list.
    pub(crate) fn ranked_rows(&self) -> Result<StagedRows<'_>> {
        let table = self.table("ranked");
        self.conn.execute_batch(&format!(
            "CREATE TABLE {table}(ranker TEXT NOT NULL, context TEXT NOT NULL, line INTEGER NOT NULL,
               item TEXT NOT NULL, rank INTEGER, score REAL)"
        ))?;
        Ok(StagedRows {
            add: self.conn.prepare(&format!(
                "INSERT INTO {table}(ranker, context, line, item, rank, score) VALUES (?1, ?2, ?3, ?4, ?5, ?6)"
            ))?,
            sorted: self.conn.prepare(&format!(
                "SELECT ranker, context, line, item, rank, score FROM {table} ORDER BY ranker, context, line"
            ))?,
        })
    }
}

/// Keys met so far, each with the text it was written as and the line that first had it
/// (line 0: the key was already in the study).
pub(crate) struct FirstSeen<'s> {
    again: Statement<'s>,
    add: Statement<'s>,
    find: Statement<'s>,
}

impl FirstSeen<'_> {
    /// Records `key` (written as `written`) from `line` unless it was met before; then
    /// returns how it was first written and on which line.
    pub(crate) fn first(
        &mut self,
        key: &str,
        written: &str,
        line: u64,
    ) -> Result<Option<(String, u64)>> {
        let as_written = (written != key).then_some(written);
        if self
            .add
            .execute(rusqlite::params![key, as_written, line as i64])?
            == 1
        {
            return Ok(None);
        }
        let found = self
            .find
            .query_row([key], |r| {
                Ok((
                    r.get::<_, Option<String>>(0)?
                        .unwrap_or_else(|| key.to_string()),
                    r.get::<_, i64>(1)? as u64,
                ))
            })
            .optional()?;
        Ok(found)
    }

    /// Records that `key`, known from the study (line 0), was met on `line` of the file.
    pub(crate) fn met_on(&mut self, key: &str, line: u64) -> Result<()> {
        self.again.execute(rusqlite::params![key, line as i64])?;
        Ok(())
    }
}

/// One staged row of a rankings file: ranker, context, line, item, rank and score.
pub(crate) type StagedRow<'r> = (&'r str, &'r str, u64, &'r str, Option<u64>, Option<f64>);

/// Rows of a rankings file held in the scratch database until every row is read.
pub(crate) struct StagedRows<'s> {
    add: Statement<'s>,
    sorted: Statement<'s>,
}

impl StagedRows<'_> {
    pub(crate) fn add(&mut self, row: StagedRow) -> Result<()> {
        let (ranker, context, line, item, rank, score) = row;
        self.add.execute(rusqlite::params![
            ranker,
            context,
            line as i64,
            item,
            rank.map(|r| r as i64),
            score
        ])?;
        Ok(())
    }

    /// Every row, sorted by (ranker, context) and then by line.
    pub(crate) fn each_sorted(
        &mut self,
        each: &mut dyn FnMut(StagedRow) -> Result<()>,
    ) -> Result<()> {
        let mut rows = self.sorted.query([])?;
        while let Some(r) = rows.next()? {
            each((
                text(r, 0)?,
                text(r, 1)?,
                r.get::<_, i64>(2)? as u64,
                text(r, 3)?,
                r.get::<_, Option<i64>>(4)?.map(|r| r as u64),
                r.get(5)?,
            ))?;
        }
        Ok(())
    }
}

/// A text column, borrowed from the row.
fn text<'r>(row: &'r rusqlite::Row, column: usize) -> rusqlite::Result<&'r str> {
    Ok(row.get_ref(column)?.as_str()?)
}
