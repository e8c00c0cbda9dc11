//! Side doors, continued: what a grades file or a reviewer copy may carry into the
//! study (times, event ids, fields), refused by name with every input unchanged.

use std::path::{Path, PathBuf};

use crate::cli::{args, plumbline};
use crate::common::{Fixture, file_bytes, study_dump};
use crate::side_doors::{cli_study, os, stderr};
use plumbline::study::Study;

// ---- 7. times from the future and leap seconds ----

#[test]
fn grades_from_the_future_or_at_a_leap_second_are_refused_by_line_and_column() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    for (at, why) in [
        ("9999-01-01T00:00:00Z", "more than a day after"),
        ("2016-12-31T23:59:60Z", "leap second"),
    ] {
        let before = study_dump(&path);
        let grades = fixture.write(
            "late.csv",
            &format!("reviewer,context_id,item_id,scale,value,graded_at\nann,q1,i4,fit,1,{at}\n"),
        );
        let out = plumbline(args!["import", os(&path), "--grades", os(&grades)]);
        assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
        assert!(stderr(&out).contains("late.csv:2:6:"), "{}", stderr(&out));
        assert!(stderr(&out).contains(why), "{}", stderr(&out));
        assert_eq!(study_dump(&path), before);
    }
}

/// A copy of the fixture study handed out to bo, and a way to edit it.
fn lead_and_copy(fixture: &Fixture) -> (PathBuf, PathBuf) {
    let (path, study) = fixture.study();
    let copy = fixture.path("bo-copy.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    (path, copy)
}

fn edit(copy: &Path, sql: &str) {
    let conn = rusqlite::Connection::open(copy).unwrap();
    conn.execute_batch(sql).unwrap();
    conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
}

fn refused_untouched(study: &Path, copy: &Path, why: &str) {
    let before = study_dump(study);
    let copy_before = file_bytes(copy);
    let out = plumbline(args!["merge", os(study), os(copy)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(
        stderr(&out).contains(why),
        "expected {why:?}: {}",
        stderr(&out)
    );
    assert!(stderr(&out).contains("bo-copy.plumb"), "{}", stderr(&out));
    assert_eq!(study_dump(study), before, "the study changed");
    assert_eq!(file_bytes(copy), copy_before, "the copy changed");
}

const EVENT: &str = "INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)";

#[test]
fn a_copy_with_a_grade_from_the_future_is_refused() {
    let fixture = Fixture::new();
    let (study, copy) = lead_and_copy(&fixture);
    edit(
        &copy,
        &format!(
            "{EVENT} VALUES ('{:032x}', 'bo', 'q2', 'i1', 'fit', 'grade', 2, '', 1, '2999-12-31T00:00:00.000Z', '')",
            1
        ),
    );
    refused_untouched(&study, &copy, "more than a day after");
}

// ---- 8. two events with one id ----

/// Two events sharing an id, in a copy that still passes `PRAGMA quick_check`, which
/// does not check UNIQUE constraints (SQLite documentation, "PRAGMA quick_check"): the
/// uid's unique index is made a plain one for the second insert, then unique again.
#[test]
fn a_copy_holding_two_events_with_one_id_is_refused_by_name() {
    let fixture = Fixture::new();
    let (study, copy) = lead_and_copy(&fixture);
    let conn = rusqlite::Connection::open(&copy).unwrap();
    conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
    let uid: String = conn
        .query_row("SELECT uid FROM grade_events LIMIT 1", [], |r| r.get(0))
        .unwrap();
    let table_sql: String = conn
        .query_row(
            "SELECT sql FROM sqlite_schema WHERE name = 'grade_events'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    let loose = table_sql.replace("NOT NULL UNIQUE", "NOT NULL");
    assert_ne!(loose, table_sql);
    // The uid's unique index becomes a plain one for one insert, then unique again.
    let set_schema = |conn: &rusqlite::Connection, table: &str, index: (&str, &str, &str)| {
        conn.execute("PRAGMA writable_schema = ON", []).ok();
        conn.execute(
            "UPDATE sqlite_schema SET sql = ?1 WHERE name = 'grade_events'",
            [table],
        )
        .unwrap();
        conn.execute(
            "UPDATE sqlite_schema SET name = ?2, sql = NULLIF(?3, '') WHERE name = ?1",
            [index.0, index.1, index.2],
        )
        .unwrap();
        conn.execute("PRAGMA writable_schema = OFF", []).ok();
    };
    set_schema(
        &conn,
        &loose,
        (
            "sqlite_autoindex_grade_events_1",
            "plain_uid",
            "CREATE INDEX plain_uid ON grade_events(uid)",
        ),
    );
    drop(conn);
    let conn = rusqlite::Connection::open(&copy).unwrap();
    conn.execute(
        &format!(
            "{EVENT} VALUES (?1, 'bo', 'q2', 'i1', 'fit', 'grade', 2, '', 1, '2026-11-30T10:00:00.000Z', '')"
        ),
        [&uid],
    )
    .unwrap();
    set_schema(
        &conn,
        &table_sql,
        ("plain_uid", "sqlite_autoindex_grade_events_1", ""),
    );
    drop(conn);
    let conn = rusqlite::Connection::open(&copy).unwrap();
    let check: String = conn
        .query_row("PRAGMA quick_check", [], |r| r.get(0))
        .unwrap();
    assert_eq!(check, "ok", "the edited copy must pass quick_check");
    drop(conn);
    refused_untouched(
        &study,
        &copy,
        &format!("its id {uid} is held by another event"),
    );
}

// ---- 9. merge holds the rules import holds ----

#[test]
fn a_copy_with_rows_import_would_refuse_is_refused() {
    let fixture = Fixture::new();
    let long_note = "n".repeat((1 << 20) + 512 * 1024);
    for (row, why) in [
        (
            format!("('{:032x}', 'bo', 'q2', 'i1', 'fit', 'grade', 2, '', 1, '2026-11-30T10:00:00.000Z', '{long_note}')", 2),
            "note is",
        ),
        (
            format!("('{:032x}', 'bo', 'q2', 'i1', 'fit', 'grade', 2, 'a' || char(0) || 'b', 1, '2026-11-30T10:00:00.000Z', '')", 3),
            "NUL byte",
        ),
        (
            "('not-a-digest', 'bo', 'q2', 'i1', 'fit', 'grade', 2, '', 1, '2026-11-30T10:00:00.000Z', '')".to_string(),
            "not an event id",
        ),
    ] {
        let dir = Fixture::new();
        let (study, copy) = lead_and_copy(&dir);
        edit(&copy, &format!("{EVENT} VALUES {row}"));
        refused_untouched(&study, &copy, why);
    }
    drop(fixture);
}

/// After a merge, export → import → export gives the same bytes: nothing a merge let in
/// is something an import would change or refuse.
#[test]
fn export_import_export_is_identical_after_a_merge() {
    let fixture = Fixture::new();
    let (study, copy) = lead_and_copy(&fixture);
    let mut offline = Study::open(&copy).unwrap();
    offline
        .record_grade(&plumbline::study::grades::NewGrade {
            reviewer: "bo".into(),
            context_id: "q2".into(),
            item_id: "i1".into(),
            scale: "fit".into(),
            action: plumbline::study::grades::GradeAction::Grade(1),
            seconds: 4.0,
            note: "=looks \"odd\", but fine".into(),
        })
        .unwrap();
    drop(offline);
    let out = plumbline(args!["merge", os(&study), os(&copy)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let first = fixture.path("first.csv");
    let out = plumbline(args!["export", os(&study), "--grades", os(&first)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let again = fixture.path("again.plumb");
    drop(Study::create(&again).unwrap());
    let p = |n: &str| fixture.path(n);
    let out = plumbline(args![
        "import",
        os(&again),
        "--items",
        os(&p("items.csv")),
        "--contexts",
        os(&p("contexts.csv")),
        "--scales",
        os(&p("scales.csv")),
        "--rankings",
        os(&p("rankings.csv")),
        "--grades",
        os(&first)
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let second = fixture.path("second.csv");
    let out = plumbline(args!["export", os(&again), "--grades", os(&second)]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert_eq!(
        String::from_utf8(file_bytes(&first)).unwrap(),
        String::from_utf8(file_bytes(&second)).unwrap()
    );
}
