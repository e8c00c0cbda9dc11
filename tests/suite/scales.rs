//! Designing scales in a study: validation, versions that never rewrite grades, the
//! active scale and the pilot's queues.

use std::collections::HashSet;
use std::path::PathBuf;

use plumbline::core::scale::{Level, Scale, preset};
use plumbline::study::grades::{GradeAction, NewGrade};
use plumbline::study::scales::Saved;
use plumbline::study::{Study, StudyError};

fn demo() -> (tempfile::TempDir, PathBuf, Study) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    let study = Study::open(&path).unwrap();
    (dir, path, study)
}

/// Every stored grade event on a scale, as the file holds it.
fn events(path: &PathBuf, scale: &str) -> Vec<(i64, String, String, String, Option<i64>, String)> {
    let conn = rusqlite::Connection::open(path).unwrap();
    let mut stmt = conn
        .prepare(
            "SELECT id, reviewer, context_id, item_id, value, action FROM grade_events
             WHERE scale = ?1 ORDER BY id",
        )
        .unwrap();
    stmt.query_map([scale], |r| {
        Ok((
            r.get(0)?,
            r.get(1)?,
            r.get(2)?,
            r.get(3)?,
            r.get(4)?,
            r.get(5)?,
        ))
    })
    .unwrap()
    .collect::<Result<_, _>>()
    .unwrap()
}

fn input_error(result: Result<impl std::fmt::Debug, StudyError>) -> String {
    match result {
        Err(StudyError::Input(m)) => m.to_string(),
        other => panic!("expected an input error, got {other:?}"),
    }
}

#[test]
fn invalid_scales_are_refused_with_every_problem_named() {
    let (_dir, _path, mut study) = demo();
    let before = study.scale_names().unwrap();

    let mut gap = preset(3).unwrap();
    gap.name = "gappy".into();
    gap.levels[2].value = 3;
    assert!(input_error(study.create_scale(&gap)).contains("without gaps"));

    let mut keys = preset(4).unwrap();
    keys.levels[3].key = "1".into();
    keys.levels[0].label = "  ".into();
    let message = input_error(study.create_scale(&keys));
    assert!(message.contains("key \"1\""), "{message}");
    assert!(message.contains("level 0 has no label"), "{message}");

    let mut gains = preset(2).unwrap();
    gains.levels[0].gain = Some(3.0);
    gains.levels[1].gain = Some(1.0);
    assert!(input_error(study.create_scale(&gains)).contains("must not decrease"));

    let mut taken = preset(2).unwrap();
    taken.name = "fit4".into();
    assert!(input_error(study.create_scale(&taken)).contains("already exists"));

    let one = Scale {
        name: "single".into(),
        levels: vec![Level {
            value: 0,
            label: "Only".into(),
            gain: None,
            key: "0".into(),
            rubric: String::new(),
            colour: String::new(),
        }],
    };
    assert!(input_error(study.create_scale(&one)).contains("at least two levels"));
    assert_eq!(study.scale_names().unwrap(), before, "nothing was written");
}

#[test]
fn a_change_of_meaning_on_a_graded_scale_makes_a_new_version_and_keeps_old_grades() {
    let (_dir, path, mut study) = demo();
    let fit4 = study.stored_scale("fit4").unwrap().unwrap();
    let old_events = events(&path, "fit4");
    assert!(!old_events.is_empty(), "the demo grades fit4");
    let old_snapshot = study.snapshot().unwrap();

    // Adding a level.
    let mut wider = fit4.clone();
    let mut top = fit4.levels[3].clone();
    top.value = 4;
    top.key = "4".into();
    top.label = "Better than asked".into();
    wider.levels.push(top);
    let origins = vec![Some(0), Some(1), Some(2), Some(3), None];
    let saved = study.save_scale(&wider, &origins).unwrap();
    assert_eq!(saved, Saved::NewVersion("fit4 v2".into()));
    assert_eq!(
        study.stored_scale("fit4 v2").unwrap().unwrap().levels.len(),
        5
    );

    // Renumbering: the same four labels, two of them swapped.
    let mut swapped = fit4.clone();
    swapped.levels.swap(1, 2);
    for (v, l) in swapped.levels.iter_mut().enumerate() {
        l.value = v as u8;
    }
    let saved = study
        .save_scale(&swapped, &[Some(0), Some(2), Some(1), Some(3)])
        .unwrap();
    assert_eq!(saved, Saved::NewVersion("fit4 v3".into()));

    // Removing a level.
    let mut narrow = fit4.clone();
    narrow.levels.pop();
    let saved = study
        .save_scale(&narrow, &[Some(0), Some(1), Some(2)])
        .unwrap();
    assert_eq!(saved, Saved::NewVersion("fit4 v4".into()));

    // The graded scale, its grades and everything computed from them are unchanged.
    assert_eq!(study.stored_scale("fit4").unwrap().unwrap(), fit4);
    assert_eq!(events(&path, "fit4"), old_events);
    let new_snapshot = study.snapshot().unwrap();
    let fit4_grades = |s: &plumbline::study::snapshot::Snapshot| {
        let i = s.scale_index("fit4").unwrap() as u32;
        s.grades
            .iter()
            .filter(|g| g.scale == i)
            .map(|g| (g.reviewer, g.context, g.item, g.value))
            .collect::<Vec<_>>()
    };
    assert_eq!(fit4_grades(&new_snapshot), fit4_grades(&old_snapshot));
}

#[test]
fn wording_is_edited_in_place_and_ungraded_scales_change_freely() {
    let (_dir, path, mut study) = demo();
    let old_events = events(&path, "fit4");
    let mut fit4 = study.stored_scale("fit4").unwrap().unwrap();
    fit4.levels[1].label = "Same aisle".into();
    fit4.levels[1].rubric = "Same kind of gear, not what was asked for.".into();
    fit4.levels[3].colour = "#3c9a5f".into();
    let saved = study
        .save_scale(&fit4, &[Some(0), Some(1), Some(2), Some(3)])
        .unwrap();
    assert_eq!(saved, Saved::Updated("fit4".into()));
    assert_eq!(study.stored_scale("fit4").unwrap().unwrap(), fit4);
    assert_eq!(events(&path, "fit4"), old_events);

    let three = preset(3).unwrap();
    assert_eq!(
        study.save_scale(&three, &[None, None, None]).unwrap(),
        Saved::Created("three-step".into())
    );
    let mut four = preset(4).unwrap();
    four.name = "three-step".into();
    assert_eq!(
        study
            .save_scale(&four, &[Some(0), Some(1), Some(2), None])
            .unwrap(),
        Saved::Updated("three-step".into()),
        "no grades yet, so the levels change in place"
    );
    assert_eq!(
        study
            .stored_scale("three-step")
            .unwrap()
            .unwrap()
            .levels
            .len(),
        4
    );
    assert!(
        !study
            .scale_names()
            .unwrap()
            .contains(&"three-step v2".into())
    );
}

#[test]
fn the_active_scale_is_stored_and_must_exist() {
    let (_dir, _path, mut study) = demo();
    study.create_scale(&preset(5).unwrap()).unwrap();
    study.set_active_scale("five-step").unwrap();
    assert_eq!(
        study.setting("active_scale").unwrap().as_deref(),
        Some("five-step")
    );
    assert!(input_error(study.set_active_scale("nope")).contains("unknown scale"));
}

#[test]
fn a_pilot_gives_every_reviewer_the_same_pairs_on_each_scale_in_blocks() {
    let (_dir, _path, mut study) = demo();
    study.create_scale(&preset(3).unwrap()).unwrap();
    study.create_scale(&preset(5).unwrap()).unwrap();
    let pilot = vec!["three-step".to_string(), "five-step".to_string()];
    assert!(input_error(study.start_pilot(&pilot[..1])).contains("two or more"));
    study.start_pilot(&pilot).unwrap();
    assert_eq!(study.pilot_scales().unwrap(), pilot);

    let panel = ["rev-amber", "rev-birch", "rev-cedar"];
    let mut firsts = Vec::new();
    for reviewer in panel {
        firsts.push(study.pilot_block(reviewer).unwrap().unwrap());
    }
    // Block order rotates, so not everyone starts on the same scale.
    assert!(
        firsts.contains(&pilot[0]) && firsts.contains(&pilot[1]),
        "{firsts:?}"
    );
    for reviewer in panel {
        let a = study.queue(reviewer, &pilot[0]).unwrap();
        let b = study.queue(reviewer, &pilot[1]).unwrap();
        assert!(!a.is_empty());
        assert_eq!(a.len(), b.len(), "{reviewer}: each pair once per scale");
        let set_a: HashSet<_> = a.iter().collect();
        let set_b: HashSet<_> = b.iter().collect();
        assert_eq!(set_a.len(), a.len());
        assert_eq!(set_a, set_b, "{reviewer}: the same pairs on both scales");
        assert_ne!(a, b, "{reviewer}: a separate shuffle per block");
    }
    // The pool stays covered on the second scale, so no later queue call adds pairs.
    let amber_b = study.queue("rev-amber", &pilot[1]).unwrap();
    assert_eq!(study.ensure_queue("rev-amber", &pilot[1]).unwrap(), amber_b);

    // Finishing the first block moves the reviewer to the second.
    let first = firsts[0].clone();
    let second = pilot.iter().find(|s| **s != first).unwrap().clone();
    for (c, i) in study.queue("rev-amber", &first).unwrap() {
        study
            .record_grade(&NewGrade {
                reviewer: "rev-amber".into(),
                context_id: c,
                item_id: i,
                scale: first.clone(),
                action: GradeAction::Grade(1),
                seconds: 3.0,
                note: String::new(),
            })
            .unwrap();
    }
    assert_eq!(study.pilot_block("rev-amber").unwrap(), Some(second));
    study.end_pilot().unwrap();
    assert_eq!(study.pilot_block("rev-amber").unwrap(), None);
}
