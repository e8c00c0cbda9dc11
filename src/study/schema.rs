//! The study file's schema as ordered migrations; `PRAGMA user_version` counts them.

use rusqlite::Connection;

/// Marks a SQLite file as a Plumbline study ("PLMB").
pub const APPLICATION_ID: i32 = 0x504C_4D42;

/// One step of the schema: SQL, or code where SQL alone cannot move the data exactly.
#[derive(Clone, Copy)]
pub enum Migration {
    /// A batch of SQL statements.
    Sql(&'static str),
    /// A step written in Rust (run inside the caller's transaction).
    Code(fn(&Connection) -> rusqlite::Result<()>),
}

impl Migration {
    /// Runs the step on `conn` (a transaction for a study, a scratch connection for a
    /// reviewer's copy or the expected schema).
    pub fn apply(&self, conn: &Connection) -> rusqlite::Result<()> {
        match self {
            Migration::Sql(sql) => conn.execute_batch(sql),
            Migration::Code(step) => step(conn),
        }
    }
}

/// Each entry moves the schema from version i to i + 1, inside one transaction.
pub const MIGRATIONS: &[Migration] = &[
    // 1: the whole first schema.
    Migration::Sql(
        r#"
CREATE TABLE settings(
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
CREATE TABLE items(
    item_id     TEXT PRIMARY KEY,
    title       TEXT NOT NULL,
    category    TEXT NOT NULL DEFAULT '',
    description TEXT NOT NULL DEFAULT '',
    price       REAL,
    image       TEXT NOT NULL DEFAULT '',
    is_new      INTEGER NOT NULL DEFAULT 0,
    attributes  TEXT NOT NULL DEFAULT '{}'
);
CREATE TABLE contexts(
    context_id     TEXT PRIMARY KEY,
    kind           TEXT NOT NULL CHECK (kind IN ('query', 'anchor')),
    text           TEXT NOT NULL DEFAULT '',
    anchor_item_id TEXT REFERENCES items(item_id),
    segment        TEXT NOT NULL DEFAULT ''
);
CREATE TABLE rankers(
    ranker TEXT PRIMARY KEY
);
CREATE TABLE ranked_items(
    ranker     TEXT NOT NULL REFERENCES rankers(ranker),
    context_id TEXT NOT NULL REFERENCES contexts(context_id),
    rank       INTEGER NOT NULL CHECK (rank >= 1),
    item_id    TEXT NOT NULL REFERENCES items(item_id),
    score      REAL,
    PRIMARY KEY (ranker, context_id, rank),
    UNIQUE (ranker, context_id, item_id)
) WITHOUT ROWID;
CREATE TABLE scales(
    scale TEXT PRIMARY KEY
);
CREATE TABLE levels(
    scale  TEXT NOT NULL REFERENCES scales(scale),
    value  INTEGER NOT NULL CHECK (value >= 0),
    label  TEXT NOT NULL,
    gain   REAL,
    key    TEXT NOT NULL DEFAULT '',
    rubric TEXT NOT NULL DEFAULT '',
    colour TEXT NOT NULL DEFAULT '',
    PRIMARY KEY (scale, value)
) WITHOUT ROWID;
CREATE TABLE collapse_maps(
    name    TEXT PRIMARY KEY,
    scale   TEXT NOT NULL REFERENCES scales(scale),
    targets TEXT NOT NULL
);
CREATE TABLE reviewers(
    reviewer TEXT PRIMARY KEY
);
-- Append-only history: every grade, change, can't-judge and undo is a row.
CREATE TABLE grade_events(
    id         INTEGER PRIMARY KEY,
    uid        TEXT NOT NULL UNIQUE,
    reviewer   TEXT NOT NULL REFERENCES reviewers(reviewer),
    context_id TEXT NOT NULL REFERENCES contexts(context_id),
    item_id    TEXT NOT NULL REFERENCES items(item_id),
    scale      TEXT NOT NULL REFERENCES scales(scale),
    action     TEXT NOT NULL CHECK (action IN ('grade', 'cant_judge', 'undo')),
    value      INTEGER,
    reason     TEXT NOT NULL DEFAULT '',
    seconds    REAL,
    graded_at  TEXT NOT NULL,
    note       TEXT NOT NULL DEFAULT ''
);
CREATE INDEX grade_events_by_key ON grade_events(scale, context_id, item_id, reviewer, graded_at);
-- The current grade per reviewer × pair × scale, kept by the trigger below so that it
-- can never disagree with the history.
CREATE TABLE current_grades(
    scale      TEXT NOT NULL,
    context_id TEXT NOT NULL,
    item_id    TEXT NOT NULL,
    reviewer   TEXT NOT NULL,
    event_id   INTEGER NOT NULL REFERENCES grade_events(id),
    PRIMARY KEY (scale, context_id, item_id, reviewer)
) WITHOUT ROWID;
CREATE INDEX current_grades_by_reviewer ON current_grades(reviewer, scale);
CREATE TRIGGER grade_events_keep_current AFTER INSERT ON grade_events
WHEN NOT EXISTS (
    SELECT 1 FROM grade_events e
    WHERE e.scale = NEW.scale AND e.context_id = NEW.context_id AND e.item_id = NEW.item_id
      AND e.reviewer = NEW.reviewer AND e.id != NEW.id
      AND (e.graded_at > NEW.graded_at OR (e.graded_at = NEW.graded_at AND e.id > NEW.id))
)
BEGIN
    DELETE FROM current_grades
    WHERE scale = NEW.scale AND context_id = NEW.context_id AND item_id = NEW.item_id
      AND reviewer = NEW.reviewer;
    INSERT INTO current_grades(scale, context_id, item_id, reviewer, event_id)
    SELECT NEW.scale, NEW.context_id, NEW.item_id, NEW.reviewer, NEW.id
    WHERE NEW.action != 'undo';
END;
-- Settled grades, also as history: the latest row per pair and scale is in force;
-- a row with a NULL value undoes the settlement.
CREATE TABLE settle_events(
    id         INTEGER PRIMARY KEY,
    uid        TEXT NOT NULL UNIQUE,
    context_id TEXT NOT NULL REFERENCES contexts(context_id),
    item_id    TEXT NOT NULL REFERENCES items(item_id),
    scale      TEXT NOT NULL REFERENCES scales(scale),
    value      INTEGER,
    method     TEXT NOT NULL,
    settled_by TEXT NOT NULL,
    settled_at TEXT NOT NULL,
    reason     TEXT NOT NULL DEFAULT ''
);
CREATE INDEX settle_events_by_key ON settle_events(scale, context_id, item_id, settled_at);
CREATE TABLE gold_pairs(
    context_id TEXT NOT NULL REFERENCES contexts(context_id),
    item_id    TEXT NOT NULL REFERENCES items(item_id),
    scale      TEXT NOT NULL REFERENCES scales(scale),
    value      INTEGER NOT NULL,
    PRIMARY KEY (scale, context_id, item_id)
) WITHOUT ROWID;
CREATE TABLE queue_entries(
    reviewer   TEXT NOT NULL REFERENCES reviewers(reviewer),
    scale      TEXT NOT NULL REFERENCES scales(scale),
    position   INTEGER NOT NULL,
    context_id TEXT NOT NULL REFERENCES contexts(context_id),
    item_id    TEXT NOT NULL REFERENCES items(item_id),
    PRIMARY KEY (reviewer, scale, position)
) WITHOUT ROWID;
"#,
    ),
    // 2: the keep-current trigger looks for a later event with two index seeks instead
    // of scanning every event that shares the new one's time (which made many events
    // with one `graded_at` on a pair quadratic).
    Migration::Sql(
        r#"
DROP TRIGGER grade_events_keep_current;
CREATE TRIGGER grade_events_keep_current AFTER INSERT ON grade_events
WHEN NOT EXISTS (
    SELECT 1 FROM grade_events e
    WHERE e.scale = NEW.scale AND e.context_id = NEW.context_id AND e.item_id = NEW.item_id
      AND e.reviewer = NEW.reviewer AND e.graded_at > NEW.graded_at
) AND NOT EXISTS (
    SELECT 1 FROM grade_events e
    WHERE e.scale = NEW.scale AND e.context_id = NEW.context_id AND e.item_id = NEW.item_id
      AND e.reviewer = NEW.reviewer AND e.graded_at = NEW.graded_at AND e.id > NEW.id
)
BEGIN
    DELETE FROM current_grades
    WHERE scale = NEW.scale AND context_id = NEW.context_id AND item_id = NEW.item_id
      AND reviewer = NEW.reviewer;
    INSERT INTO current_grades(scale, context_id, item_id, reviewer, event_id)
    SELECT NEW.scale, NEW.context_id, NEW.item_id, NEW.reviewer, NEW.id
    WHERE NEW.action != 'undo';
END;
"#,
    ),
    // 3: one row per ranked list instead of one per entry, so that import and the
    // snapshot scale with lists; `ranked_items` stays readable as a view. Bulk grade
    // imports switch the keep-current trigger off for their own transaction and keep
    // `current_grades` in one set-based pass (`study::import::grades`).
    Migration::Code(compact_ranked_lists),
    // 4: machine judges beside people (their grades stay out of the panel unless the
    // lead turns that on), and gold pairs with the rationale shown to reviewers in
    // training.
    Migration::Sql(
        r#"
ALTER TABLE reviewers ADD COLUMN kind TEXT NOT NULL DEFAULT 'person'
    CHECK (kind IN ('person', 'machine'));
ALTER TABLE gold_pairs ADD COLUMN rationale TEXT NOT NULL DEFAULT '';
"#,
    ),
    // 5 (issue 30, the human sample): contexts drawn uniformly at random by `plumbline
    // sample`, one row per context in draw order; `draw` counts the runs of `sample`,
    // each with its own seed. Only these rows make a context part of the human sample.
    Migration::Sql(
        r#"
CREATE TABLE sample_draws(
    context_id TEXT PRIMARY KEY REFERENCES contexts(context_id),
    position   INTEGER NOT NULL UNIQUE CHECK (position >= 1),
    draw       INTEGER NOT NULL CHECK (draw >= 1),
    seed       INTEGER NOT NULL,
    drawn_at   TEXT NOT NULL
) WITHOUT ROWID;
"#,
    ),
    // 6: each context's current grades also packed in one blob per scale, so that a
    // study of millions of grades loads in one row per context (`study::grade_packs`).
    Migration::Code(add_grade_packs),
];

/// Migration 6: the packs' tables and triggers, and every context packed.
fn add_grade_packs(conn: &Connection) -> rusqlite::Result<()> {
    conn.execute_batch(super::grade_packs::SCHEMA)?;
    super::grade_packs::pack_all(conn)
}

/// Marks a write transaction whose grade events keep `current_grades` in one pass of
/// their own ([`refresh_current_grades`]) instead of through the trigger, row by row.
/// Inserted and removed inside that one transaction, so no other connection sees it.
pub const BULK_GRADES_KEY: &str = "bulk_grade_import";

const RANKED_LISTS: &str = r#"
-- A ranker's list for one context: item ids in rank order as a JSON array of strings,
-- and their scores as a JSON array (a number or null each), NULL when no entry has one.
-- Import checks every item and context id before it writes a list.
CREATE TABLE ranked_lists(
    ranker     TEXT NOT NULL REFERENCES rankers(ranker),
    context_id TEXT NOT NULL REFERENCES contexts(context_id),
    items      TEXT NOT NULL CHECK (json_valid(items) AND json_type(items) = 'array'),
    scores     TEXT CHECK (scores IS NULL OR json_valid(scores)),
    PRIMARY KEY (ranker, context_id)
) WITHOUT ROWID;
"#;

const AFTER_COMPACT_LISTS: &str = r#"
DROP TABLE ranked_items;
-- The lists one entry per row, for reading (pooling, counts, outside scripts).
CREATE VIEW ranked_items(ranker, context_id, rank, item_id, score) AS
SELECT l.ranker, l.context_id, j.key + 1, j.value,
       CASE WHEN l.scores IS NULL THEN NULL ELSE json_extract(l.scores, '$[' || j.key || ']') END
FROM ranked_lists l, json_each(l.items) j;
-- The grade's value and time beside it, so that loading every current grade is one
-- scan (events never change once written, so the copy cannot go stale).
-- `graded_day` is the UTC day of `graded_at`, counted from 1970-01-01 (for drift by day).
ALTER TABLE current_grades ADD COLUMN value INTEGER;
ALTER TABLE current_grades ADD COLUMN seconds REAL;
ALTER TABLE current_grades ADD COLUMN graded_day INTEGER;
UPDATE current_grades SET
    value = (SELECT e.value FROM grade_events e WHERE e.id = current_grades.event_id),
    seconds = (SELECT e.seconds FROM grade_events e WHERE e.id = current_grades.event_id),
    graded_day = (SELECT CAST(julianday(date(e.graded_at)) - 2440587.5 AS INTEGER)
                  FROM grade_events e WHERE e.id = current_grades.event_id);
DROP TRIGGER grade_events_keep_current;
CREATE TRIGGER grade_events_keep_current AFTER INSERT ON grade_events
WHEN NOT EXISTS (SELECT 1 FROM settings WHERE key = 'bulk_grade_import')
AND NOT EXISTS (
    SELECT 1 FROM grade_events e
    WHERE e.scale = NEW.scale AND e.context_id = NEW.context_id AND e.item_id = NEW.item_id
      AND e.reviewer = NEW.reviewer AND e.graded_at > NEW.graded_at
) AND NOT EXISTS (
    SELECT 1 FROM grade_events e
    WHERE e.scale = NEW.scale AND e.context_id = NEW.context_id AND e.item_id = NEW.item_id
      AND e.reviewer = NEW.reviewer AND e.graded_at = NEW.graded_at AND e.id > NEW.id
)
BEGIN
    DELETE FROM current_grades
    WHERE scale = NEW.scale AND context_id = NEW.context_id AND item_id = NEW.item_id
      AND reviewer = NEW.reviewer;
    INSERT INTO current_grades(scale, context_id, item_id, reviewer, event_id, value, seconds, graded_day)
    SELECT NEW.scale, NEW.context_id, NEW.item_id, NEW.reviewer, NEW.id, NEW.value, NEW.seconds,
           CAST(julianday(date(NEW.graded_at)) - 2440587.5 AS INTEGER)
    WHERE NEW.action != 'undo';
END;
"#;

/// (ranker, context, item ids, scores) of one list being moved.
type StoredList = (String, String, Vec<String>, Vec<Option<f64>>);

/// Migration 3: moves every ranked entry into one row per list, scores exactly (Rust
/// writes the JSON numbers; SQLite's own JSON functions print reals to 15 digits).
fn compact_ranked_lists(conn: &Connection) -> rusqlite::Result<()> {
    conn.execute_batch(RANKED_LISTS)?;
    {
        let mut read = conn.prepare(
            "SELECT ranker, context_id, item_id, score FROM ranked_items ORDER BY ranker, context_id, rank",
        )?;
        let mut write = conn.prepare(
            "INSERT INTO ranked_lists(ranker, context_id, items, scores) VALUES (?1, ?2, ?3, ?4)",
        )?;
        let mut rows = read.query([])?;
        let mut list: Option<StoredList> = None;
        let mut flush = |list: Option<StoredList>| match list {
            Some((ranker, context, items, scores)) => {
                let (items, scores) = list_json(&items, &scores);
                write.execute(rusqlite::params![ranker, context, items, scores])
            }
            None => Ok(0),
        };
        while let Some(r) = rows.next()? {
            let (ranker, context): (String, String) = (r.get(0)?, r.get(1)?);
            if list
                .as_ref()
                .is_none_or(|l| l.0 != ranker || l.1 != context)
            {
                flush(list.take())?;
                list = Some((ranker, context, Vec::new(), Vec::new()));
            }
            if let Some(l) = list.as_mut() {
                l.2.push(r.get(2)?);
                l.3.push(r.get(3)?);
            }
        }
        flush(list)?;
    }
    conn.execute_batch(AFTER_COMPACT_LISTS)
}

/// The stored form of one list: item ids as a JSON array, and the scores as one (NULL
/// when no entry has a score). Numbers are written so that they read back exactly.
pub fn list_json<S: serde::Serialize>(
    items: &[S],
    scores: &[Option<f64>],
) -> (String, Option<String>) {
    let items = serde_json::to_string(items).unwrap_or_else(|_| "[]".into());
    let scores = scores
        .iter()
        .any(Option::is_some)
        .then(|| serde_json::to_string(scores).unwrap_or_else(|_| "[]".into()));
    (items, scores)
}

/// Keeps `current_grades` for every pair and reviewer that has an event with an id
/// above `after`: the latest event by (`graded_at`, id) is in force unless it is an
/// undo, the same rule as the trigger's. Each new event is checked with two seeks in
/// `grade_events_by_key`, so the pass costs one seek per imported row.
pub fn refresh_current_grades(conn: &Connection, after: i64) -> rusqlite::Result<()> {
    const LATEST: &str = "NOT EXISTS (
            SELECT 1 FROM grade_events l
            WHERE l.scale = e.scale AND l.context_id = e.context_id AND l.item_id = e.item_id
              AND l.reviewer = e.reviewer AND l.graded_at > e.graded_at)
        AND NOT EXISTS (
            SELECT 1 FROM grade_events l
            WHERE l.scale = e.scale AND l.context_id = e.context_id AND l.item_id = e.item_id
              AND l.reviewer = e.reviewer AND l.graded_at = e.graded_at AND l.id > e.id)";
    conn.execute(
        &format!(
            "INSERT OR REPLACE INTO current_grades(scale, context_id, item_id, reviewer, event_id, value, seconds, graded_day)
             SELECT e.scale, e.context_id, e.item_id, e.reviewer, e.id, e.value, e.seconds,
                    CAST(julianday(date(e.graded_at)) - 2440587.5 AS INTEGER)
             FROM grade_events e WHERE e.id > ?1 AND e.action != 'undo' AND {LATEST}"
        ),
        [after],
    )?;
    conn.execute(
        &format!(
            "DELETE FROM current_grades WHERE (scale, context_id, item_id, reviewer) IN (
               SELECT e.scale, e.context_id, e.item_id, e.reviewer
               FROM grade_events e WHERE e.id > ?1 AND e.action = 'undo' AND {LATEST})"
        ),
        [after],
    )?;
    Ok(())
}

/// Rebuilds `current_grades` from the whole history in one ordered pass, by the same
/// rule as the trigger and [`refresh_current_grades`]: per reviewer, pair and scale the
/// latest event by (`graded_at`, id) is in force unless it is an undo. A large import
/// uses it once every event is in, with `grade_events_by_key` built and
/// `current_grades_by_reviewer` not yet: the events are read in index order, each with
/// one seek for a later event of its key, and the current grades written in key order.
pub fn rebuild_current_grades(conn: &Connection) -> rusqlite::Result<()> {
    conn.execute("DELETE FROM current_grades", [])?;
    conn.execute(
        "INSERT INTO current_grades(scale, context_id, item_id, reviewer, event_id, value, seconds, graded_day)
         SELECT e.scale, e.context_id, e.item_id, e.reviewer, e.id, e.value, e.seconds,
                CAST(julianday(date(e.graded_at)) - 2440587.5 AS INTEGER)
         FROM grade_events e INDEXED BY grade_events_by_key
         WHERE e.action != 'undo' AND NOT EXISTS (
             SELECT 1 FROM grade_events l INDEXED BY grade_events_by_key
             WHERE l.scale = e.scale AND l.context_id = e.context_id AND l.item_id = e.item_id
               AND l.reviewer = e.reviewer AND l.graded_at >= e.graded_at
               AND (l.graded_at > e.graded_at OR l.id > e.id))
         ORDER BY e.scale, e.context_id, e.item_id, e.reviewer",
        [],
    )?;
    Ok(())
}

/// The schema version this build writes.
pub fn current_version() -> i32 {
    MIGRATIONS.len() as i32
}
