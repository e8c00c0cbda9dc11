//! The study file: create, open, migrate, refuse what it must refuse.

use crate::common;

use plumbline::study::schema;
use plumbline::study::{Study, StudyError};

#[test]
fn create_sets_version_and_settings() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("fresh.plumb");
    let study = Study::create(&path).unwrap();
    assert_eq!(study.schema_version().unwrap(), schema::current_version());
    assert_eq!(study.name(), "fresh");
    drop(study);
    let again = Study::open(&path).unwrap();
    assert_eq!(again.schema_version().unwrap(), schema::current_version());
    let mode: String = rusqlite::Connection::open(&path)
        .unwrap()
        .pragma_query_value(None, "journal_mode", |r| r.get(0))
        .unwrap();
    assert_eq!(mode, "wal");
}

#[test]
fn create_refuses_to_overwrite() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("x.plumb");
    std::fs::write(&path, b"keep me").unwrap();
    let err = Study::create(&path).err().expect("refused");
    assert!(err.is_bad_input());
    assert_eq!(std::fs::read(&path).unwrap(), b"keep me");
}

#[test]
fn an_older_schema_is_migrated() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("old.plumb");
    {
        // A study at schema version 0: marked as ours, nothing created yet.
        let conn = rusqlite::Connection::open(&path).unwrap();
        conn.pragma_update(None, "application_id", schema::APPLICATION_ID)
            .unwrap();
        conn.execute_batch("CREATE TABLE placeholder(x);").unwrap();
    }
    let study = Study::open(&path).unwrap();
    assert_eq!(study.schema_version().unwrap(), schema::current_version());
    assert_eq!(study.counts().unwrap().items, 0);
}

#[test]
fn a_study_from_a_newer_build_is_refused_untouched() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("future.plumb");
    drop(Study::create(&path).unwrap());
    {
        let conn = rusqlite::Connection::open(&path).unwrap();
        conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
        conn.pragma_update(None, "user_version", schema::current_version() + 1)
            .unwrap();
    }
    let before = common::file_bytes(&path);
    let err = Study::open(&path).err().expect("refused");
    assert!(err.to_string().contains("newer Plumbline"), "{err}");
    assert!(err.is_bad_input());
    assert_eq!(
        common::file_bytes(&path),
        before,
        "file must be byte-for-byte unchanged"
    );
    assert!(!dir.path().join("future.plumb-wal").exists());
}

#[test]
fn files_that_are_not_studies_are_refused_cleanly() {
    let dir = tempfile::tempdir().unwrap();
    let text = dir.path().join("notes.plumb");
    std::fs::write(&text, "hello, this is text").unwrap();
    let err = Study::open(&text).err().expect("refused");
    assert!(matches!(err, StudyError::Refused { .. }), "{err}");
    assert!(err.to_string().contains("not an SQLite file"));

    let empty = dir.path().join("empty.plumb");
    std::fs::write(&empty, b"").unwrap();
    assert!(Study::open(&empty).is_err());

    let other = dir.path().join("other.sqlite");
    rusqlite::Connection::open(&other)
        .unwrap()
        .execute_batch("CREATE TABLE t(x); INSERT INTO t VALUES (1);")
        .unwrap();
    let before = common::file_bytes(&other);
    let err = Study::open(&other).err().expect("refused");
    assert!(err.to_string().contains("not a Plumbline study"), "{err}");
    assert_eq!(common::file_bytes(&other), before);
}

#[test]
fn grade_history_is_append_only_and_current_grade_is_derived() {
    use plumbline::study::grades::{GradeAction, NewGrade};
    let fixture = common::Fixture::new();
    let (_, mut study) = fixture.study();
    let before = study.counts().unwrap();
    let mut grade = NewGrade {
        reviewer: "cy".into(),
        context_id: "q2".into(),
        item_id: "i4".into(),
        scale: "fit".into(),
        action: GradeAction::Grade(1),
        seconds: 3.2,
        note: String::new(),
    };
    study.record_grade(&grade).unwrap();
    std::thread::sleep(std::time::Duration::from_millis(5));
    grade.action = GradeAction::Grade(2);
    study.record_grade(&grade).unwrap();
    let mid = study.counts().unwrap();
    assert_eq!(mid.grade_events, before.grade_events + 2);
    assert_eq!(mid.current_grades, before.current_grades + 1);
    let snapshot = study.snapshot().unwrap();
    let cy = snapshot.reviewer_index("cy").unwrap() as u32;
    let current: Vec<_> = snapshot
        .grades
        .iter()
        .filter(|g| g.reviewer == cy)
        .collect();
    assert_eq!(current.len(), 1);
    assert_eq!(current[0].value, Some(2));
    std::thread::sleep(std::time::Duration::from_millis(5));
    grade.action = GradeAction::Undo;
    study.record_grade(&grade).unwrap();
    let after = study.counts().unwrap();
    assert_eq!(after.grade_events, before.grade_events + 3);
    assert_eq!(after.current_grades, before.current_grades);
}
