//! The study file's schema as ordered migrations; `PRAGMA user_version` counts them.

/// Marks a SQLite file as a Plumbline study ("PLMB").
pub const APPLICATION_ID: i32 = 0x504C_4D42;

/// Each entry moves the schema from version i to i + 1, inside one transaction.
pub const MIGRATIONS: &[&str] = &[
    // 1: the whole first schema.
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
    // 2: the keep-current trigger looks for a later event with two index seeks instead
    // of scanning every event that shares the new one's time (which made many events
    // with one `graded_at` on a pair quadratic).
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
];

/// The schema version this build writes.
pub fn current_version() -> i32 {
    MIGRATIONS.len() as i32
}
