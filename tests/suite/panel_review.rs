//! The Agreement screen's review figures on the small fixture plus a third reviewer;
//! expected values are worked out by hand from the grades listed below.

use crate::common;

use plumbline::analysis::agreement::panel_review;
use plumbline::study::grades::{GradeAction, NewGrade};

/// Fixture grades on `fit` plus cy: q1/i1 = ann 2, bo 2, cy 0; q1/i2 = ann 1, bo 2, cy 2;
/// q1/i3 = ann 0, cy 2; q1/i4 = bo can't judge; q2/i3 = ann 2; q2/i1 = ann 0.
/// Gold pair: q1/i2 at level 2.
#[test]
fn level_use_gold_accuracy_drift_and_disagreement_order() {
    let fixture = common::Fixture::new();
    let (path, mut study) = fixture.study();
    for (item, value) in [("i1", 0), ("i2", 2), ("i3", 2)] {
        study
            .record_grade(&NewGrade {
                reviewer: "cy".into(),
                context_id: "q1".into(),
                item_id: item.into(),
                scale: "fit".into(),
                action: GradeAction::Grade(value),
                seconds: 3.0,
                note: String::new(),
            })
            .unwrap();
    }
    rusqlite::Connection::open(&path)
        .unwrap()
        .execute(
            "INSERT INTO gold_pairs(context_id, item_id, scale, value) VALUES ('q1', 'i2', 'fit', 2)",
            [],
        )
        .unwrap();
    let snapshot = study.snapshot().unwrap();
    let grades = study.grade_details("fit").unwrap();
    let gold = study.gold_pairs("fit").unwrap();
    let review = panel_review::build(&snapshot, 0, &grades, &[], &gold, None, 10);

    let ann = review
        .strictness
        .iter()
        .find(|s| s.reviewer == "ann")
        .unwrap();
    // ann: levels 2, 1, 0, 2, 0.
    assert_eq!(ann.graded, 5);
    assert_eq!(ann.shares, vec![0.4, 0.2, 0.4]);
    // Against the others' lower median: q1/i1 2−0, q1/i2 1−2, q1/i3 0−2.
    assert_eq!(ann.compared, 3);
    assert!((ann.mean_difference - (-1.0 / 3.0)).abs() < 1e-12);
    // Panel (bo's can't-judge left out): ann 2,1,0,2,0; bo 2,2; cy 0,2,2
    // → level 0: 3, level 1: 1, level 2: 6 of 10 grades.
    assert_eq!(review.panel_shares, vec![0.3, 0.1, 0.6]);

    let acc = |r: &str| {
        review
            .gold
            .iter()
            .find(|g| g.reviewer == r)
            .map(|g| (g.correct, g.graded))
    };
    assert_eq!(acc("ann"), Some((0, 1)));
    assert_eq!(acc("bo"), Some((1, 1)));
    assert_eq!(acc("cy"), Some((1, 1)));

    let ann_day = review
        .drift
        .iter()
        .find(|d| d.reviewer == "ann" && d.day == "2026-11-16")
        .unwrap();
    assert_eq!((ann_day.agreed, ann_day.compared), (0, 3));
    let bo_day = review.drift.iter().find(|d| d.reviewer == "bo").unwrap();
    // bo on q1/i1: 2 vs lower median of [2, 0] = 0; on q1/i2: 2 vs [1, 2] → 1.
    assert_eq!((bo_day.agreed, bo_day.compared), (0, 2));

    // Spread 2 first; among those, q1/i1 (in base's and cand's top 10) before q1/i3
    // (base only); then q1/i2 with spread 1.
    let order: Vec<(&str, u8, usize, Option<usize>)> = review
        .disagreements
        .iter()
        .map(|d| {
            (
                d.item_id.as_str(),
                d.spread,
                d.rankers_in_top_k,
                d.best_rank,
            )
        })
        .collect();
    assert_eq!(
        order,
        vec![
            ("i1", 2, 2, Some(1)),
            ("i3", 2, 1, Some(3)),
            ("i2", 1, 2, Some(1))
        ]
    );
    assert_eq!(review.disagreements[0].panel_level, 2);
    assert_eq!(review.disagreements[1].panel_level, 0);
}

#[test]
fn the_pace_waits_until_it_rests_on_enough_grades() {
    use plumbline::analysis::agreement::panel_review::grades_per_hour;
    use plumbline::analysis::defaults::PACE_MIN_GRADES;
    // One grade in 5.9 s would read as "610 grades per hour"; it says nothing instead.
    assert_eq!(grades_per_hour(1, 5.9), None);
    assert_eq!(grades_per_hour(PACE_MIN_GRADES - 1, 60.0), None);
    // 12 grades in 72 s: 12 × 3600 / 72 = 600 per hour (arithmetic, common practice).
    assert_eq!(PACE_MIN_GRADES, 10);
    assert_eq!(grades_per_hour(12, 72.0), Some(600.0));
}
