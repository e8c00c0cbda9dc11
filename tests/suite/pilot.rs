//! A pilot with a number of pairs and chosen reviewers, checked through the study file
//! itself (`queue_entries`, `current_grades`, `gold_pairs`) rather than the pilot code.

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use plumbline::study::Study;
use plumbline::study::grades::{GradeAction, NewGrade};

fn demo() -> (tempfile::TempDir, PathBuf, Study) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    let study = Study::open(&path).unwrap();
    (dir, path, study)
}

fn strings(names: &[&str]) -> Vec<String> {
    names.iter().map(|s| s.to_string()).collect()
}

/// A reviewer's queue on a scale as the file stores it, in position order.
fn stored_queue(path: &Path, reviewer: &str, scale: &str) -> Vec<(String, String)> {
    let conn = rusqlite::Connection::open(path).unwrap();
    let mut stmt = conn
        .prepare(
            "SELECT context_id, item_id FROM queue_entries
             WHERE reviewer = ?1 AND scale = ?2 ORDER BY position",
        )
        .unwrap();
    stmt.query_map([reviewer, scale], |r| Ok((r.get(0)?, r.get(1)?)))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap()
}

fn input_error(result: plumbline::study::Result<()>) -> String {
    match result {
        Err(e) if e.is_bad_input() => e.to_string(),
        other => panic!("expected an input error, got {other:?}"),
    }
}

#[test]
fn chosen_reviewers_get_exactly_the_asked_pairs_first_on_every_pilot_scale() {
    let (_dir, path, mut study) = demo();
    let scales = strings(&["fit4", "useful2"]);
    let chosen = strings(&["rev-amber", "rev-cedar"]);
    // Graded before the pilot, by the file: what the pilot should avoid.
    let graded_before: HashSet<(String, String)> = {
        let conn = rusqlite::Connection::open(&path).unwrap();
        let mut stmt = conn
            .prepare(
                "SELECT context_id, item_id FROM current_grades
                 WHERE reviewer IN ('rev-amber', 'rev-cedar') AND scale IN ('fit4', 'useful2')",
            )
            .unwrap();
        stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap()
    };
    let gold: HashSet<(String, String)> = {
        let conn = rusqlite::Connection::open(&path).unwrap();
        let mut stmt = conn
            .prepare("SELECT context_id, item_id FROM gold_pairs")
            .unwrap();
        stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap()
    };
    assert!(!gold.is_empty(), "the demo has gold pairs to keep out");

    study.start_pilot_for(&scales, 17, &chosen).unwrap();

    let mut first_sets = Vec::new();
    for reviewer in &chosen {
        for scale in &scales {
            let queue = stored_queue(&path, reviewer, scale);
            let lead: HashSet<_> = queue[..17].iter().cloned().collect();
            assert_eq!(
                lead.len(),
                17,
                "{reviewer} {scale}: 17 different pairs lead"
            );
            let later = queue[17..].iter().filter(|p| lead.contains(*p)).count();
            assert_eq!(later, 0, "{reviewer} {scale}: each pilot pair once");
            assert!(lead.is_disjoint(&gold), "no gold pair in the pilot");
            assert!(
                lead.is_disjoint(&graded_before),
                "pairs neither has graded come first, and the demo has enough of them"
            );
            first_sets.push((queue[..17].to_vec(), lead));
        }
    }
    // The same pairs for everyone on every scale, each in its own order.
    assert!(first_sets.windows(2).all(|w| w[0].1 == w[1].1));
    assert!(first_sets.windows(2).all(|w| w[0].0 != w[1].0));
    // rev-birch was left out: no pilot for them.
    assert_eq!(study.pilot_block("rev-birch").unwrap(), None);

    // Block order: rev-amber starts on fit4, rev-cedar (second chosen) on useful2.
    let amber = study.pilot_position("rev-amber").unwrap().unwrap();
    assert_eq!(
        (amber.scale.as_str(), amber.number, amber.blocks),
        ("fit4", 1, 2)
    );
    assert_eq!(amber.pairs, first_sets[0].0);
    let cedar = study.pilot_position("rev-cedar").unwrap().unwrap();
    assert_eq!((cedar.scale.as_str(), cedar.number), ("useful2", 1));

    // Grading amber's block moves them on to block 2 on useful2, then out of the pilot.
    for scale in ["fit4", "useful2"] {
        for (c, i) in stored_queue(&path, "rev-amber", scale).into_iter().take(17) {
            study
                .record_grade(&NewGrade {
                    reviewer: "rev-amber".into(),
                    context_id: c,
                    item_id: i,
                    scale: scale.into(),
                    action: GradeAction::Grade(1),
                    seconds: 4.0,
                    note: String::new(),
                })
                .unwrap();
        }
        let next = study.pilot_position("rev-amber").unwrap();
        if scale == "fit4" {
            let next = next.unwrap();
            assert_eq!((next.scale.as_str(), next.number), ("useful2", 2));
        } else {
            assert_eq!(next, None, "every block done");
        }
    }
    let status = study.pilot_status().unwrap().unwrap();
    assert_eq!(status.pairs, Some(17));
    let shares: Vec<(&str, usize, usize)> = status
        .shares
        .iter()
        .map(|s| (s.reviewer.as_str(), s.pairs, s.graded))
        .collect();
    assert_eq!(shares, vec![("rev-amber", 17, 34), ("rev-cedar", 17, 0)]);

    study.end_pilot().unwrap();
    assert_eq!(study.pilot_status().unwrap(), None);
    assert!(study.pilot_pairs().unwrap().is_empty());
}

#[test]
fn a_pilot_refuses_machine_judges_no_pairs_and_more_pairs_than_the_pool() {
    let (_dir, path, mut study) = demo();
    {
        let conn = rusqlite::Connection::open(&path).unwrap();
        conn.execute(
            "INSERT INTO reviewers(reviewer, kind) VALUES ('auto-grader', 'machine')",
            [],
        )
        .unwrap();
    }
    assert_eq!(
        study.people().unwrap(),
        strings(&["rev-amber", "rev-birch", "rev-cedar"])
    );
    let scales = strings(&["fit4", "useful2"]);
    let err = input_error(study.start_pilot_for(&scales, 5, &strings(&["auto-grader"])));
    assert!(err.contains("machine judge"), "{err}");
    let err = input_error(study.start_pilot_for(&scales, 5, &strings(&["rev-nobody"])));
    assert!(err.contains("not on the panel"), "{err}");
    let err = input_error(study.start_pilot_for(&scales, 0, &strings(&["rev-amber"])));
    assert!(err.contains("at least one pair"), "{err}");
    let err = input_error(study.start_pilot_for(&scales, 5, &[]));
    assert!(err.contains("at least one reviewer"), "{err}");
    let err = input_error(study.start_pilot_for(&scales[..1], 5, &strings(&["rev-amber"])));
    assert!(err.contains("two or more"), "{err}");
    // The pool without gold pairs, counted from the file's own tables.
    let room = {
        let pool: HashSet<(String, String)> = study.pool().unwrap().into_iter().collect();
        let conn = rusqlite::Connection::open(&path).unwrap();
        let gold: HashSet<(String, String)> = conn
            .prepare("SELECT context_id, item_id FROM gold_pairs")
            .unwrap()
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap();
        pool.difference(&gold).count()
    };
    assert_eq!(study.pilot_room().unwrap(), room);
    let err = input_error(study.start_pilot_for(&scales, room + 1, &strings(&["rev-amber"])));
    assert!(err.contains(&format!("the pool has {room}")), "{err}");
    assert!(
        study.pilot_scales().unwrap().is_empty(),
        "nothing was started"
    );
}
