//! The current grades of one scale and context packed into one blob, so that loading a
//! study reads one row per context instead of one per grade (and hashes no ids).
//!
//! `current_grades` stays the truth. Its triggers (schema migration 6) drop a context's
//! pack and mark the (scale, context) stale whenever one of its rows is added, changed
//! or removed, whoever writes; every writer of grades then packs the stale keys again
//! in its own transaction ([`repack_stale`]), and a large import packs everything once
//! ([`pack_all`]). A reader that meets a stale key or a pack it cannot read takes that
//! context's rows from `current_grades` instead, so a pack can lag but never lie.
//!
//! Items and reviewers are named by stable numbers (`item_numbers`,
//! `reviewer_numbers`: an `INTEGER PRIMARY KEY` each, which VACUUM keeps), given by a
//! trigger when the item or reviewer is first added.

use rusqlite::{Connection, params};

use crate::core::fast_hash::FastMap;

/// The first byte of every pack: the layout of the entries after it.
const LAYOUT: u8 = 1;
/// Bytes per entry: item number (u32), reviewer number (u32), flags (u8), value (u8),
/// seconds (f64), day (i32), all little-endian.
const ENTRY: usize = 22;
const HAS_VALUE: u8 = 1;
const HAS_SECONDS: u8 = 2;

/// The schema of migration 6 (run by `schema::MIGRATIONS`, which then packs every
/// context with [`pack_all`]).
pub const SCHEMA: &str = r#"
CREATE TABLE item_numbers(
    number  INTEGER PRIMARY KEY,
    item_id TEXT NOT NULL UNIQUE
);
CREATE TABLE reviewer_numbers(
    number   INTEGER PRIMARY KEY,
    reviewer TEXT NOT NULL UNIQUE
);
INSERT INTO item_numbers(item_id) SELECT item_id FROM items ORDER BY item_id;
INSERT INTO reviewer_numbers(reviewer) SELECT reviewer FROM reviewers ORDER BY reviewer;
CREATE TRIGGER items_numbered AFTER INSERT ON items
BEGIN
    INSERT OR IGNORE INTO item_numbers(item_id) VALUES (NEW.item_id);
END;
CREATE TRIGGER reviewers_numbered AFTER INSERT ON reviewers
BEGIN
    INSERT OR IGNORE INTO reviewer_numbers(reviewer) VALUES (NEW.reviewer);
END;
-- One scale's current grades of one context (see study::grade_packs for the layout).
CREATE TABLE grade_packs(
    scale      TEXT NOT NULL,
    context_id TEXT NOT NULL,
    grades     BLOB NOT NULL,
    PRIMARY KEY (scale, context_id)
) WITHOUT ROWID;
-- (scale, context) whose current grades changed since they were last packed.
CREATE TABLE grade_packs_stale(
    scale      TEXT NOT NULL,
    context_id TEXT NOT NULL,
    PRIMARY KEY (scale, context_id)
) WITHOUT ROWID;
CREATE TRIGGER current_grades_added AFTER INSERT ON current_grades
BEGIN
    DELETE FROM grade_packs WHERE scale = NEW.scale AND context_id = NEW.context_id;
    INSERT OR IGNORE INTO grade_packs_stale(scale, context_id) VALUES (NEW.scale, NEW.context_id);
END;
CREATE TRIGGER current_grades_removed AFTER DELETE ON current_grades
BEGIN
    DELETE FROM grade_packs WHERE scale = OLD.scale AND context_id = OLD.context_id;
    INSERT OR IGNORE INTO grade_packs_stale(scale, context_id) VALUES (OLD.scale, OLD.context_id);
END;
CREATE TRIGGER current_grades_changed AFTER UPDATE ON current_grades
BEGIN
    DELETE FROM grade_packs WHERE scale = OLD.scale AND context_id = OLD.context_id;
    INSERT OR IGNORE INTO grade_packs_stale(scale, context_id) VALUES (OLD.scale, OLD.context_id);
    DELETE FROM grade_packs WHERE scale = NEW.scale AND context_id = NEW.context_id;
    INSERT OR IGNORE INTO grade_packs_stale(scale, context_id) VALUES (NEW.scale, NEW.context_id);
END;
"#;

/// The triggers a large import drops while it rebuilds `current_grades` in one pass
/// (it then calls [`pack_all`]).
pub const TRIGGERS: [&str; 3] = [
    "current_grades_added",
    "current_grades_removed",
    "current_grades_changed",
];

/// One current grade as packed, items and reviewers by their stable numbers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PackedGrade {
    pub item: u32,
    pub reviewer: u32,
    pub value: Option<u8>,
    pub seconds: Option<f64>,
    pub day: i32,
}

/// The blob of one context's grades.
pub fn encode(grades: &[PackedGrade]) -> Vec<u8> {
    let mut out = Vec::with_capacity(1 + grades.len() * ENTRY);
    out.push(LAYOUT);
    for g in grades {
        out.extend_from_slice(&g.item.to_le_bytes());
        out.extend_from_slice(&g.reviewer.to_le_bytes());
        let flags =
            u8::from(g.value.is_some()) * HAS_VALUE + u8::from(g.seconds.is_some()) * HAS_SECONDS;
        out.push(flags);
        out.push(g.value.unwrap_or(0));
        out.extend_from_slice(&g.seconds.unwrap_or(0.0).to_le_bytes());
        out.extend_from_slice(&g.day.to_le_bytes());
    }
    out
}

/// The grades of a blob, or None when it is not a pack this build wrote (the reader
/// then takes the context's rows from `current_grades`).
pub fn decode(blob: &[u8]) -> Option<impl Iterator<Item = PackedGrade> + '_> {
    let (&layout, entries) = blob.split_first()?;
    if layout != LAYOUT || entries.len() % ENTRY != 0 {
        return None;
    }
    Some(entries.chunks_exact(ENTRY).map(|e| {
        let word = |at: usize| [e[at], e[at + 1], e[at + 2], e[at + 3]];
        let flags = e[8];
        let mut seconds = [0u8; 8];
        seconds.copy_from_slice(&e[10..18]);
        PackedGrade {
            item: u32::from_le_bytes(word(0)),
            reviewer: u32::from_le_bytes(word(4)),
            value: (flags & HAS_VALUE != 0).then_some(e[9]),
            seconds: (flags & HAS_SECONDS != 0).then(|| f64::from_le_bytes(seconds)),
            day: i32::from_le_bytes(word(18)),
        }
    }))
}

/// Packs every stale (scale, context) again and clears the marks. Each key costs one
/// range of `current_grades` with a number lookup per row, so a writer calls it for
/// the few contexts it touched (a grade at the desk: one).
pub fn repack_stale(conn: &Connection) -> rusqlite::Result<()> {
    let stale: Vec<(String, String)> = conn
        .prepare("SELECT scale, context_id FROM grade_packs_stale")?
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
        .collect::<rusqlite::Result<_>>()?;
    if stale.is_empty() {
        return Ok(());
    }
    let mut rows = conn.prepare(
        "SELECT i.number, r.number, g.value, g.seconds, g.graded_day
         FROM current_grades g
         LEFT JOIN item_numbers i ON i.item_id = g.item_id
         LEFT JOIN reviewer_numbers r ON r.reviewer = g.reviewer
         WHERE g.scale = ?1 AND g.context_id = ?2",
    )?;
    let mut write = Writer::new(conn)?;
    conn.execute("DELETE FROM grade_packs_stale", [])?;
    for (scale, context) in &stale {
        let grades: Option<Vec<PackedGrade>> = rows
            .query_map([scale, context], |r| {
                Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?))
            })?
            .map(|row| row.map(packed))
            .collect::<rusqlite::Result<_>>()?;
        write.finish_group(scale, context, grades.as_deref())?;
    }
    Ok(())
}

/// A current grade's stored parts: item and reviewer numbers (None when the id has
/// none), value, seconds and day.
type StoredParts = (
    Option<i64>,
    Option<i64>,
    Option<u8>,
    Option<f64>,
    Option<i32>,
);

/// A packed grade from its stored parts, or None when a number is missing or does not
/// fit (the key then stays unpacked: see [`Writer::finish_group`]).
fn packed((item, reviewer, value, seconds, day): StoredParts) -> Option<PackedGrade> {
    Some(PackedGrade {
        item: u32::try_from(item?).ok()?,
        reviewer: u32::try_from(reviewer?).ok()?,
        value,
        seconds,
        day: day.unwrap_or(0),
    })
}

/// Packs every context again from `current_grades` in one pass in key order, the ids
/// numbered through maps held in memory (a large import's last step).
pub fn pack_all(conn: &Connection) -> rusqlite::Result<()> {
    conn.execute("DELETE FROM grade_packs", [])?;
    conn.execute("DELETE FROM grade_packs_stale", [])?;
    let items = numbers(conn, "SELECT item_id, number FROM item_numbers")?;
    let reviewers = numbers(conn, "SELECT reviewer, number FROM reviewer_numbers")?;
    let mut stmt = conn.prepare(
        "SELECT scale, context_id, item_id, reviewer, value, seconds, graded_day FROM current_grades",
    )?;
    let mut rows = stmt.query([])?;
    let mut write = Writer::new(conn)?;
    // The group being read; None once one of its rows could not be packed.
    let (mut key, mut grades) = ((String::new(), String::new()), Some(Vec::new()));
    while let Some(r) = rows.next()? {
        let (scale, context) = (r.get_ref(0)?.as_str()?, r.get_ref(1)?.as_str()?);
        if scale != key.0 || context != key.1 {
            if !key.0.is_empty() {
                write.finish_group(&key.0, &key.1, grades.as_deref())?;
            }
            grades = Some(Vec::new());
            key = (scale.to_string(), context.to_string());
        }
        let item = items.get(r.get_ref(2)?.as_str()?).copied();
        let reviewer = reviewers.get(r.get_ref(3)?.as_str()?).copied();
        let grade = packed((item, reviewer, r.get(4)?, r.get(5)?, r.get(6)?));
        grades = grades.zip(grade).map(|(mut g, one)| {
            g.push(one);
            g
        });
    }
    if !key.0.is_empty() {
        write.finish_group(&key.0, &key.1, grades.as_deref())?;
    }
    Ok(())
}

fn numbers(conn: &Connection, sql: &str) -> rusqlite::Result<FastMap<String, i64>> {
    conn.prepare(sql)?
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
        .collect()
}

/// Writes packs, leaving a key stale instead when one of its numbers does not fit.
struct Writer<'c> {
    insert: rusqlite::Statement<'c>,
    stale: rusqlite::Statement<'c>,
    unpack: rusqlite::Statement<'c>,
}

impl<'c> Writer<'c> {
    fn new(conn: &'c Connection) -> rusqlite::Result<Self> {
        Ok(Writer {
            insert: conn.prepare(
                "INSERT OR REPLACE INTO grade_packs(scale, context_id, grades) VALUES (?1, ?2, ?3)",
            )?,
            stale: conn.prepare(
                "INSERT OR IGNORE INTO grade_packs_stale(scale, context_id) VALUES (?1, ?2)",
            )?,
            unpack: conn.prepare("DELETE FROM grade_packs WHERE scale = ?1 AND context_id = ?2")?,
        })
    }

    /// Writes one key's pack, or (when a row could not be packed) leaves the key
    /// stale with no pack, so that readers take its rows from `current_grades`.
    fn finish_group(
        &mut self,
        scale: &str,
        context: &str,
        grades: Option<&[PackedGrade]>,
    ) -> rusqlite::Result<()> {
        match grades {
            Some(grades) => {
                self.insert
                    .execute(params![scale, context, encode(grades)])?;
            }
            None => {
                self.unpack.execute([scale, context])?;
                self.stale.execute([scale, context])?;
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_pack_reads_back_what_was_packed() {
        let grades = [
            PackedGrade {
                item: 7,
                reviewer: 2,
                value: Some(3),
                seconds: Some(4.25),
                day: 20_000,
            },
            PackedGrade {
                item: u32::MAX,
                reviewer: 0,
                value: None,
                seconds: None,
                day: -1,
            },
        ];
        let blob = encode(&grades);
        assert_eq!(blob.len(), 1 + 2 * ENTRY);
        let back: Vec<PackedGrade> = decode(&blob).expect("our own layout").collect();
        assert_eq!(back, grades);
    }

    #[test]
    fn a_blob_of_another_layout_or_length_is_not_read() {
        let blob = encode(&[]);
        assert!(decode(&blob).is_some_and(|mut g| g.next().is_none()));
        assert!(decode(&[]).is_none());
        assert!(decode(&[LAYOUT + 1]).is_none());
        let mut short = encode(&[PackedGrade {
            item: 1,
            reviewer: 1,
            value: Some(1),
            seconds: None,
            day: 0,
        }]);
        short.pop();
        assert!(decode(&short).is_none());
    }
}
