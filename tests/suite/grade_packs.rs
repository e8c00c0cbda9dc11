//! The packed current grades (`study::grade_packs`) against `current_grades`, the
//! truth they are a copy of: after every writer of grades the packs hold exactly the
//! current grades with nothing left stale, and the snapshot loads the same grades
//! from packs as from the table, also when a pack is missing, stale or damaged.

use std::collections::BTreeSet;
use std::path::Path;

use crate::common::{self, Fixture};
use plumbline::study::grade_packs;
use plumbline::study::grades::{GradeAction, NewGrade};
use plumbline::study::import::{self, ImportSet, Source};
use plumbline::study::{Study, schema};

/// (scale, context, item, reviewer, value, seconds as bits, day) of one current grade.
type Key = (String, String, String, String, Option<u8>, Option<u64>, i32);

/// Every current grade, read straight from the table.
fn table_grades(path: &Path) -> BTreeSet<Key> {
    let conn = rusqlite::Connection::open(path).unwrap();
    conn.prepare(
        "SELECT scale, context_id, item_id, reviewer, value, seconds, COALESCE(graded_day, 0)
         FROM current_grades",
    )
    .unwrap()
    .query_map([], |r| {
        Ok((
            r.get(0)?,
            r.get(1)?,
            r.get(2)?,
            r.get(3)?,
            r.get(4)?,
            r.get::<_, Option<f64>>(5)?.map(f64::to_bits),
            r.get(6)?,
        ))
    })
    .unwrap()
    .collect::<Result<_, _>>()
    .unwrap()
}

/// Every grade the packs hold, decoded by hand with the numbers' tables, and the
/// number of keys still marked stale.
fn packed_grades(path: &Path) -> (BTreeSet<Key>, i64) {
    let conn = rusqlite::Connection::open(path).unwrap();
    let name = |table: &str, number: u32| -> String {
        conn.query_row(
            &format!("SELECT * FROM {table} WHERE number = ?1"),
            [number],
            |r| r.get(1),
        )
        .unwrap()
    };
    let mut out = BTreeSet::new();
    let mut stmt = conn
        .prepare("SELECT scale, context_id, grades FROM grade_packs")
        .unwrap();
    let mut rows = stmt.query([]).unwrap();
    while let Some(r) = rows.next().unwrap() {
        let (scale, context): (String, String) = (r.get(0).unwrap(), r.get(1).unwrap());
        let blob: Vec<u8> = r.get(2).unwrap();
        // A pack this build cannot read holds nothing (assert_packed then fails).
        let Some(entries) = grade_packs::decode(&blob) else {
            continue;
        };
        for g in entries {
            out.insert((
                scale.clone(),
                context.clone(),
                name("item_numbers", g.item),
                name("reviewer_numbers", g.reviewer),
                g.value,
                g.seconds.map(f64::to_bits),
                g.day,
            ));
        }
    }
    let stale: i64 = conn
        .query_row("SELECT COUNT(*) FROM grade_packs_stale", [], |r| r.get(0))
        .unwrap();
    (out, stale)
}

/// Every grade the snapshot loads, back to ids.
fn snapshot_grades(path: &Path) -> BTreeSet<Key> {
    let s = Study::open(path).unwrap().snapshot().unwrap();
    s.grades
        .iter()
        .chain(&s.machine_grades)
        .map(|g| {
            (
                s.scales[g.scale as usize].name.clone(),
                s.contexts[g.context as usize].id.clone(),
                s.items[g.item as usize].id.clone(),
                s.reviewers[g.reviewer as usize].clone(),
                g.value,
                g.seconds.map(f64::to_bits),
                g.day,
            )
        })
        .collect()
}

/// The packs hold exactly the current grades, nothing is stale, and the snapshot
/// loads the same grades.
fn assert_packed(path: &Path, when: &str) {
    let truth = table_grades(path);
    let (packed, stale) = packed_grades(path);
    assert_eq!(stale, 0, "{when}: keys left stale");
    assert_eq!(packed, truth, "{when}: packs differ from current_grades");
    assert_eq!(snapshot_grades(path), truth, "{when}: snapshot differs");
}

fn grade(reviewer: &str, context: &str, item: &str, action: GradeAction) -> NewGrade {
    NewGrade {
        reviewer: reviewer.into(),
        context_id: context.into(),
        item_id: item.into(),
        scale: "fit".into(),
        action,
        seconds: 2.5,
        note: String::new(),
    }
}

#[test]
fn every_writer_of_grades_leaves_the_packs_equal_to_the_current_grades() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    assert_packed(&path, "after the first import");

    for (n, action) in [
        GradeAction::Grade(1),
        GradeAction::Grade(2),
        GradeAction::CantJudge {
            reason: "no picture".into(),
        },
        GradeAction::Undo,
    ]
    .into_iter()
    .enumerate()
    {
        study
            .record_grade(&grade("cy", "q2", "i4", action.clone()))
            .unwrap();
        assert_packed(&path, &format!("after desk action {n} ({action:?})"));
    }
    study
        .record_grade(&grade("ann", "q1", "i1", GradeAction::Undo))
        .unwrap();
    assert_packed(&path, "after undoing an imported grade");

    // A second, small grades file goes row by row through the trigger.
    let more = fixture.write(
        "more.csv",
        "reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note\n\
         dee,a1,i2,fit,1,,3.0,2026-11-17T09:00:00Z,\n\
         ann,q1,i2,fit,2,,3.0,2026-11-17T09:00:05Z,\n",
    );
    let set = ImportSet {
        grades: Some(Source::from_path(&more).unwrap()),
        ..Default::default()
    };
    import::import(&mut study, &set).unwrap();
    assert_packed(&path, "after a second grades file");

    // A reviewer's copy holds only their own grades, packed, and names no one else.
    let copy = fixture.path("bo.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    assert_packed(&copy, "in bo's copy");
    let names: Vec<String> = rusqlite::Connection::open(&copy)
        .unwrap()
        .prepare("SELECT reviewer FROM reviewer_numbers")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert_eq!(names, ["bo"]);

    let mut offline = Study::open(&copy).unwrap();
    offline
        .record_grade(&grade("bo", "q2", "i3", GradeAction::Grade(0)))
        .unwrap();
    drop(offline);
    assert_packed(&copy, "in bo's copy after grading");
    Study::open(&path).unwrap().merge_from(&copy).unwrap();
    assert_packed(&path, "after merging bo's copy");
}

#[test]
fn a_large_import_packs_every_context_once() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    assert_packed(&path, "the demo study");
    assert!(table_grades(&path).len() > 1000, "the demo has many grades");
}

#[test]
fn the_snapshot_reads_a_stale_missing_or_damaged_pack_from_the_table() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let truth = table_grades(&path);
    let conn = rusqlite::Connection::open(&path).unwrap();
    // q1's pack damaged, q2's gone, a1 marked stale with a pack that lies.
    conn.execute_batch(
        "UPDATE grade_packs SET grades = x'01ff' WHERE context_id = 'q1';
         DELETE FROM grade_packs WHERE context_id = 'q2';
         INSERT INTO grade_packs_stale VALUES ('fit', 'q2');
         INSERT OR REPLACE INTO grade_packs VALUES ('fit', 'a1', x'01');
         INSERT INTO grade_packs_stale VALUES ('fit', 'a1');",
    )
    .unwrap();
    drop(conn);
    assert_eq!(snapshot_grades(&path), truth);
    // The next write packs the stale keys again.
    Study::open(&path)
        .unwrap()
        .record_grade(&grade("ann", "a1", "i3", GradeAction::Grade(1)))
        .unwrap();
    let (packed, stale) = packed_grades(&path);
    assert_eq!(stale, 0);
    assert!(
        packed.len() < table_grades(&path).len(),
        "q1's pack stays damaged"
    );
    assert_eq!(snapshot_grades(&path), table_grades(&path));
}

#[test]
fn a_study_from_before_the_packs_is_packed_when_opened() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    // Back to schema 5: no numbers, packs or their triggers.
    let conn = rusqlite::Connection::open(&path).unwrap();
    conn.execute_batch(
        "DROP TRIGGER current_grades_added; DROP TRIGGER current_grades_removed;
         DROP TRIGGER current_grades_changed; DROP TRIGGER items_numbered;
         DROP TRIGGER reviewers_numbered; DROP TABLE grade_packs;
         DROP TABLE grade_packs_stale; DROP TABLE item_numbers; DROP TABLE reviewer_numbers;
         PRAGMA user_version = 5;",
    )
    .unwrap();
    drop(conn);
    let before = common::study_dump(&path);
    let study = Study::open(&path).unwrap();
    assert_eq!(study.schema_version().unwrap(), schema::current_version());
    drop(study);
    assert_eq!(
        common::study_dump(&path),
        before,
        "the migration changes no grade"
    );
    assert_packed(&path, "after the migration");
}
