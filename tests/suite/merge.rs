//! Merging studies graded on several machines, and reviewer copies.

use crate::common;

use common::{Fixture, study_dump};
use plumbline::analysis::{agreement, scoring::scoreboard};
use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};
use plumbline::study::merge::MergeOptions;

/// A study with the fixture's catalog and only the grade rows that pass `keep`.
fn study_with(fixture: &Fixture, name: &str, keep: impl Fn(&str) -> bool) -> std::path::PathBuf {
    let lines: Vec<&str> = common::GRADES.lines().collect();
    let mut grades = format!("{}\n", lines[0]);
    for l in &lines[1..] {
        if keep(l) {
            grades.push_str(l);
            grades.push('\n');
        }
    }
    let grades_path = fixture.write(&format!("{name}.csv"), &grades);
    let path = fixture.path(&format!("{name}.plumb"));
    let mut study = Study::create(&path).unwrap();
    let mut set = fixture.full_set();
    set.grades = Some(Source::from_path(&grades_path).unwrap());
    import::import(&mut study, &set).unwrap();
    path
}

fn numbers(path: &std::path::Path) -> (String, String) {
    let snapshot = Study::open(path).unwrap().snapshot().unwrap();
    let board = scoreboard::build(
        &snapshot,
        &scoreboard::ScoreSettings {
            ks: vec![2, 3],
            baseline: Some("base".into()),
            ..Default::default()
        },
    )
    .unwrap();
    let agree = agreement::build(
        &snapshot,
        snapshot.scale_index("fit").unwrap(),
        None,
        200,
        1,
    );
    (
        serde_json::to_string(&board.rankers).unwrap(),
        format!(
            "{:?} {:?} {:?}",
            agree.pairs.iter().map(|p| p.kappa).collect::<Vec<_>>(),
            agree.alpha_ordinal,
            agree.fleiss_kappa
        ),
    )
}

#[test]
fn two_halves_merged_equal_the_whole() {
    let fixture = Fixture::new();
    let whole = study_with(&fixture, "whole", |_| true);
    let half_a = study_with(&fixture, "half_a", |l| l.starts_with("ann,"));
    let half_b = study_with(&fixture, "half_b", |l| !l.starts_with("ann,"));
    let mut merged = Study::open(&half_a).unwrap();
    // Not a copy this study handed out: the lead names whom to bring in.
    let bo = MergeOptions {
        accept: vec!["bo".into()],
    };
    let report = merged.merge_with(&half_b, &bo).unwrap();
    assert_eq!(report.grades_added, 3);
    assert_eq!(report.reviewers_added, 1);
    drop(merged);
    assert_eq!(
        numbers(&half_a),
        numbers(&whole),
        "scores and agreement must be identical"
    );

    // Merging the same file again adds nothing.
    let before = study_dump(&half_a);
    let again = Study::open(&half_a)
        .unwrap()
        .merge_with(&half_b, &bo)
        .unwrap();
    assert_eq!((again.grades_added, again.reviewers_added), (0, 0));
    assert_eq!(study_dump(&half_a), before);
}

#[test]
fn a_conflicting_scale_is_refused_and_nothing_merges() {
    let fixture = Fixture::new();
    let target = study_with(&fixture, "target", |l| l.starts_with("ann,"));
    fixture.write("scales.csv", &common::SCALES.replace("Spot on", "Exactly"));
    let other = study_with(&fixture, "other", |l| !l.starts_with("ann,"));
    let before = study_dump(&target);
    let err = Study::open(&target)
        .unwrap()
        .merge_from(&other)
        .unwrap_err();
    let message = err.to_string();
    assert!(
        message.contains("scale \"fit\" has different levels"),
        "{message}"
    );
    assert!(err.is_bad_input());
    assert_eq!(study_dump(&target), before);
}

#[test]
fn an_item_missing_here_is_named() {
    let fixture = Fixture::new();
    let other = study_with(&fixture, "other", |_| true);
    // The target lacks item i4, which the other study's grades mention.
    fixture.write(
        "items.csv",
        &common::ITEMS
            .lines()
            .filter(|l| !l.starts_with("i4,"))
            .collect::<Vec<_>>()
            .join("\n"),
    );
    fixture.write(
        "rankings.csv",
        "ranker,context_id,item_id,rank\nbase,q1,i1,1\n",
    );
    let target = fixture.path("target.plumb");
    let mut study = Study::create(&target).unwrap();
    let set = ImportSet {
        grades: None,
        ..fixture.full_set()
    };
    import::import(&mut study, &set).unwrap();
    let message = study.merge_from(&other).unwrap_err().to_string();
    assert!(message.contains("items missing here: i4"), "{message}");
}

#[test]
fn a_reviewer_copy_holds_only_that_reviewers_grades_and_merges_back() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    let copy = fixture.path("bo-copy.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    let snapshot = Study::open(&copy).unwrap().snapshot().unwrap();
    assert_eq!(snapshot.reviewers, vec!["bo".to_string()]);
    assert!(
        snapshot
            .grades
            .iter()
            .all(|g| snapshot.reviewers[g.reviewer as usize] == "bo")
    );
    assert_eq!(snapshot.grades.len(), 3);
    assert_eq!(snapshot.items.len(), 4, "the catalog travels with the copy");

    // Bo grades one more pair offline; merging back brings exactly that grade home.
    let mut offline = Study::open(&copy).unwrap();
    offline
        .record_grade(&plumbline::study::grades::NewGrade {
            reviewer: "bo".into(),
            context_id: "q2".into(),
            item_id: "i1".into(),
            scale: "fit".into(),
            action: plumbline::study::grades::GradeAction::Grade(1),
            seconds: 4.0,
            note: String::new(),
        })
        .unwrap();
    drop(offline);
    let report = Study::open(&path).unwrap().merge_from(&copy).unwrap();
    assert_eq!(report.grades_added, 1);
}

// ---- Reviewer copies are untrusted input ----

/// A lead study and a real hand-out copy for "bo"; returns (fixture, study, copy).
fn lead_and_copy() -> (Fixture, std::path::PathBuf, std::path::PathBuf) {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    let copy = fixture.path("bo-copy.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    (fixture, path, copy)
}

fn tamper(copy: &std::path::Path, sql: &str) {
    let conn = rusqlite::Connection::open(copy).unwrap();
    conn.execute_batch(sql).unwrap();
    conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
}

fn merge_cli(
    study: &std::path::Path,
    copy: &std::path::Path,
    extra: &[&str],
) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .arg("merge")
        .arg(study)
        .arg(copy)
        .args(extra)
        .output()
        .unwrap()
}

/// Runs a merge of a tampered copy through the binary and checks the promise: exit 2,
/// a message containing `why`, the study and the copy byte-identical, within 10 s.
fn refused_untouched(study: &std::path::Path, copy: &std::path::Path, why: &str) {
    let study_before = study_dump(study);
    let copy_before = std::fs::read(copy).unwrap();
    let started = std::time::Instant::now();
    let out = merge_cli(study, copy, &[]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains(why), "expected {why:?} in: {stderr}");
    assert!(
        started.elapsed().as_secs() < 10,
        "took {:?}",
        started.elapsed()
    );
    assert_eq!(study_dump(study), study_before, "the study changed");
    assert!(
        std::fs::read(copy).unwrap() == copy_before,
        "the copy changed"
    );
}

const GRADE: &str = "INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)";

#[test]
fn grades_by_a_reviewer_the_copy_was_not_handed_to_are_refused_by_name() {
    let (_f, study, copy) = lead_and_copy();
    tamper(
        &copy,
        &format!(
            "INSERT OR IGNORE INTO reviewers(reviewer) VALUES ('ann');
             {GRADE} VALUES ('00000000000000000000000000abc001', 'ann', 'q1', 'i1', 'fit', 'grade', 0, '', 1, '2026-11-30T10:00:00.000Z', ''),
                    ('00000000000000000000000000abc002', 'ann', 'q1', 'i2', 'fit', 'grade', 0, '', 1, '2026-11-30T10:00:01.000Z', '');"
        ),
    );
    refused_untouched(&study, &copy, "ann (2 grade events)");
    // The lead can still say yes, by name.
    let out = merge_cli(&study, &copy, &["--accept-reviewer", "ann"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn a_new_reviewer_in_a_copy_is_refused_by_name() {
    let (_f, study, copy) = lead_and_copy();
    tamper(
        &copy,
        &format!(
            "INSERT INTO reviewers(reviewer) VALUES ('mallory');
             {GRADE} VALUES ('00000000000000000000000000abc003', 'mallory', 'q1', 'i1', 'fit', 'grade', 2, '', 1, '2026-11-30T10:00:00.000Z', '');"
        ),
    );
    refused_untouched(&study, &copy, "mallory (1 grade events)");
}

#[test]
fn undo_rows_against_another_reviewer_are_refused() {
    let (_f, study, copy) = lead_and_copy();
    tamper(
        &copy,
        &format!(
            "INSERT OR IGNORE INTO reviewers(reviewer) VALUES ('ann');
             {GRADE} VALUES ('00000000000000000000000000abc004', 'ann', 'q1', 'i1', 'fit', 'undo', NULL, '', 0, '2026-11-30T10:00:00.000Z', '');"
        ),
    );
    refused_untouched(&study, &copy, "ann (1 grade events)");
}

#[test]
fn settled_grades_inside_a_copy_are_refused() {
    let (_f, study, copy) = lead_and_copy();
    tamper(
        &copy,
        "INSERT INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
         VALUES ('00000000000000000000000000abc005', 'q1', 'i1', 'fit', 0, 'by hand', 'bo', '2026-11-30T10:00:00.000Z', '');",
    );
    refused_untouched(&study, &copy, "bo (1 settled grades)");
}

#[test]
fn a_view_in_place_of_the_grade_table_is_refused_by_name() {
    let (_f, study, copy) = lead_and_copy();
    tamper(
        &copy,
        "DROP TRIGGER grade_events_keep_current; DROP TABLE current_grades; DROP TABLE grade_events;
         CREATE VIEW grade_events AS WITH RECURSIVE n(x) AS (SELECT 1 UNION ALL SELECT x + 1 FROM n LIMIT 12000)
           SELECT 'f' || x AS uid, 'bo' AS reviewer, 'q1' AS context_id, 'i1' AS item_id, 'fit' AS scale,
                  'grade' AS action, 2 AS value, '' AS reason, 1.0 AS seconds,
                  '2026-11-30T10:00:00.000Z' AS graded_at, '' AS note, x AS id FROM n;",
    );
    refused_untouched(
        &study,
        &copy,
        "\"grade_events\" is a view where a study has a table",
    );
}

#[test]
fn views_that_would_exhaust_memory_or_time_are_refused_unread() {
    for (name, view) in [
        (
            "huge",
            "CREATE VIEW huge AS SELECT randomblob(300000000) AS b;",
        ),
        (
            "endless",
            "CREATE VIEW endless AS WITH RECURSIVE c(x) AS (SELECT 1 UNION ALL SELECT x + 1 FROM c) SELECT x FROM c;",
        ),
    ] {
        let (_f, study, copy) = lead_and_copy();
        tamper(&copy, view);
        refused_untouched(
            &study,
            &copy,
            &format!("view \"{name}\" is not part of a study"),
        );
    }
}

#[test]
fn values_off_the_scale_or_of_the_wrong_type_are_refused() {
    for (set, why) in [
        ("9", "value 9 is not a level of scale \"fit\""),
        ("-1", "value -1 is not a level"),
        ("'high'", "value is text"),
    ] {
        let (_f, study, copy) = lead_and_copy();
        tamper(
            &copy,
            &format!(
                "UPDATE grade_events SET value = {set} WHERE id = (SELECT MIN(id) FROM grade_events WHERE action = 'grade');"
            ),
        );
        refused_untouched(&study, &copy, why);
    }
}

#[test]
fn a_damaged_copy_is_refused() {
    let (_f, study, copy) = lead_and_copy();
    let (root, page_size): (i64, i64) = {
        let conn = rusqlite::Connection::open(&copy).unwrap();
        conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
        (
            conn.query_row(
                "SELECT rootpage FROM sqlite_schema WHERE name = 'grade_events'",
                [],
                |r| r.get(0),
            )
            .unwrap(),
            conn.query_row("PRAGMA page_size", [], |r| r.get(0))
                .unwrap(),
        )
    };
    let mut bytes = std::fs::read(&copy).unwrap();
    let start = ((root - 1) * page_size) as usize;
    for b in &mut bytes[start..start + 64] {
        *b = !*b;
    }
    std::fs::write(&copy, &bytes).unwrap();
    refused_untouched(&study, &copy, "the file is damaged");
}

/// Merges a valid copy through the binary: it succeeds and the copy keeps its bytes.
fn merged_untouched(study: &std::path::Path, copy: &std::path::Path, what: &str) {
    let before = std::fs::read(copy).unwrap();
    let out = merge_cli(study, copy, &[]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(std::fs::read(copy).unwrap() == before, "{what}");
}

#[test]
fn an_older_copy_is_read_through_a_scratch_file_and_left_as_it_was() {
    let (_f, study, copy) = lead_and_copy();
    {
        // Put the copy back at schema 1 (the first trigger, one row per ranked entry,
        // current grades without their values, reviewers without a kind, gold pairs
        // without a rationale, no table of human sample draws, no packed grades), as an older
        // build wrote it.
        let plumbline::study::schema::Migration::Sql(v1) = plumbline::study::schema::MIGRATIONS[0]
        else {
            panic!("the first schema is SQL")
        };
        let part = |from: &str, to: &str| {
            let start = v1.find(from).unwrap();
            &v1[start..v1[start..].find(to).unwrap() + start + to.len()]
        };
        tamper(
            &copy,
            &format!(
                "PRAGMA foreign_keys = OFF; DROP TABLE sample_draws; DROP VIEW ranked_items; {}
                 DROP TRIGGER items_numbered; DROP TRIGGER reviewers_numbered;
                 DROP TABLE grade_packs; DROP TABLE grade_packs_stale;
                 DROP TABLE item_numbers; DROP TABLE reviewer_numbers;
                 INSERT INTO ranked_items(ranker, context_id, rank, item_id)
                   SELECT l.ranker, l.context_id, j.key + 1, j.value FROM ranked_lists l, json_each(l.items) j;
                 DROP TABLE ranked_lists;
                 CREATE TEMP TABLE kept AS SELECT scale, context_id, item_id, reviewer, event_id FROM current_grades;
                 DROP TABLE current_grades; {} {}
                 INSERT INTO current_grades SELECT * FROM temp.kept;
                 CREATE TEMP TABLE people AS SELECT reviewer FROM reviewers;
                 DROP TABLE reviewers; {}
                 INSERT INTO reviewers SELECT * FROM temp.people;
                 CREATE TEMP TABLE known AS SELECT context_id, item_id, scale, value FROM gold_pairs;
                 DROP TABLE gold_pairs; {}
                 INSERT INTO gold_pairs SELECT * FROM temp.known;
                 DROP TRIGGER grade_events_keep_current; {}
                 PRAGMA user_version = 1;
                 {GRADE} VALUES ('00000000000000000000000000abc006', 'bo', 'q2', 'i1', 'fit', 'grade', 1, '', 2, '2026-11-30T10:00:00.000Z', '');",
                part("CREATE TABLE ranked_items(", ") WITHOUT ROWID;"),
                part("CREATE TABLE current_grades(", ") WITHOUT ROWID;"),
                part("CREATE INDEX current_grades_by_reviewer", ";"),
                part("CREATE TABLE reviewers(", ");"),
                part("CREATE TABLE gold_pairs(", ") WITHOUT ROWID;"),
                part("CREATE TRIGGER grade_events_keep_current", "END;")
            ),
        );
    }
    merged_untouched(&study, &copy, "the copy was migrated in place");
    let conn = rusqlite::Connection::open(&study).unwrap();
    let n: i64 = conn
        .query_row(
            "SELECT COUNT(*) FROM grade_events WHERE uid = '00000000000000000000000000abc006'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(n, 1);
}

#[test]
fn a_copy_in_rollback_journal_mode_keeps_its_bytes() {
    let (_f, study, copy) = lead_and_copy();
    tamper(
        &copy,
        &format!(
            "{GRADE} VALUES ('00000000000000000000000000abc007', 'bo', 'q2', 'i1', 'fit', 'grade', 1, '', 2, '2026-11-30T10:00:00.000Z', '');"
        ),
    );
    merged_untouched(&study, &copy, "merging wrote to its input");
}

/// Promise: a hand-out copy carries the pictures its reviewer needs and finds them
/// wherever it is moved with them.
#[test]
fn a_moved_hand_out_copy_finds_its_pictures() {
    let fixture = Fixture::new();
    std::fs::create_dir_all(fixture.path("images")).unwrap();
    std::fs::write(fixture.path("images/i1.png"), b"picture bytes").unwrap();
    let (_path, study) = fixture.study();
    let copy = fixture.path("bo-copy.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    let elsewhere = tempfile::tempdir().unwrap();
    let moved = elsewhere.path().join("bo-copy.plumb");
    std::fs::rename(&copy, &moved).unwrap();
    std::fs::rename(
        fixture.path("bo-copy-pictures"),
        elsewhere.path().join("bo-copy-pictures"),
    )
    .unwrap();
    let opened = Study::open(&moved).unwrap();
    let folder = opened.catalog_dir().unwrap().unwrap();
    assert!(folder.starts_with(elsewhere.path()), "{}", folder.display());
    assert_eq!(
        std::fs::read(folder.join("images/i1.png")).unwrap(),
        b"picture bytes"
    );
}

mod fuzzing {
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]
        /// Promise: flipping bytes of a copy never panics the merge, never changes the
        /// copy, and changes the study only when the merge succeeds.
        #[test]
        fn flipped_bytes_never_panic_or_half_merge(flips in proptest::collection::vec((0.0f64..1.0, any::<u8>()), 1..8)) {
            let (_f, study, copy) = super::lead_and_copy();
            {
                let conn = rusqlite::Connection::open(&copy).unwrap();
                conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
            }
            let mut bytes = std::fs::read(&copy).unwrap();
            let len = bytes.len();
            for (at, mask) in &flips {
                let i = ((*at * len as f64) as usize).min(len - 1);
                bytes[i] ^= mask | 1;
            }
            std::fs::write(&copy, &bytes).unwrap();
            let before = super::study_dump(&study);
            let mut lead = plumbline::study::Study::open(&study).unwrap();
            let result = lead.merge_from(&copy);
            drop(lead);
            prop_assert!(std::fs::read(&copy).unwrap() == bytes, "the copy changed");
            if result.is_err() {
                prop_assert_eq!(super::study_dump(&study), before);
            }
        }
    }
}
