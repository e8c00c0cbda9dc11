//! Merging studies graded on several machines, and reviewer copies.

mod common;

use common::{Fixture, study_dump};
use plumbline::analysis::{agreement, scoreboard};
use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

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
    let report = merged.merge_from(&half_b).unwrap();
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
    let again = Study::open(&half_a).unwrap().merge_from(&half_b).unwrap();
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
