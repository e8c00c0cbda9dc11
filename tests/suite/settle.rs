//! Settling disagreements in the study file: by hand, by the bulk rules, undo, provenance,
//! export, and the pending pairs behind the blind rule. Expected levels below follow from
//! the fixture's grades and the rules' definitions (lower median; most frequent level
//! with ties to the lower; lowest level), worked out by hand beside each case.

use crate::common;

use plumbline::analysis::judged::judgments::{GradeSource, level_of, resolve};
use plumbline::analysis::scoring::scoreboard::{self, ScoreSettings};
use plumbline::core::settle_rules::SettleRule;
use plumbline::study::Study;
use plumbline::study::grades::{GradeAction, NewGrade};
use plumbline::study::settle::{BY_HAND, UNDONE};

fn pair(c: &str, i: &str) -> (String, String) {
    (c.to_string(), i.to_string())
}

/// The fixture plus a third reviewer `cy`: q1/i1 = ann 2, bo 2, cy 0; q1/i2 = ann 1,
/// bo 2, cy 2; q1/i3 = ann 0, cy 2. Those three pairs disagree; nothing else does.
fn three_reviewers() -> (common::Fixture, std::path::PathBuf, Study) {
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
                note: format!("cy on {item}"),
            })
            .unwrap();
    }
    (fixture, path, study)
}

/// The panel level of one pair as scoring resolves it.
fn panel_level(study: &Study, c: &str, i: &str) -> Option<u8> {
    let snap = study.snapshot().unwrap();
    let judged = resolve(&snap, 0, &GradeSource::Panel);
    let c = snap.contexts.iter().position(|x| x.id == c).unwrap();
    let i = snap.items.iter().position(|x| x.id == i).unwrap() as u32;
    level_of(&judged[c], i)
}

#[test]
fn settling_by_hand_is_used_by_panel_scoring_and_undo_restores_the_median() {
    let (_f, _p, mut study) = three_reviewers();
    // q1/i2 = [1, 2, 2]: lower median 2.
    assert_eq!(panel_level(&study, "q1", "i2"), Some(2));
    study
        .settle_pair(
            "fit",
            &pair("q1", "i2"),
            1,
            "lead-juniper",
            "rubric says same area only",
        )
        .unwrap();
    assert_eq!(panel_level(&study, "q1", "i2"), Some(1));
    let in_force = study.settled_in_force("fit").unwrap();
    assert_eq!(in_force.len(), 1);
    assert_eq!(in_force[0].value, Some(1));
    assert_eq!(in_force[0].method, BY_HAND);
    assert_eq!(in_force[0].settled_by, "lead-juniper");
    assert_eq!(in_force[0].reason, "rubric says same area only");
    assert!(plumbline::study::time::parse_rfc3339(&in_force[0].settled_at).is_some());

    study
        .undo_settlement(
            "fit",
            &pair("q1", "i2"),
            "lead-juniper",
            "asked the panel again",
        )
        .unwrap();
    assert!(study.settled_in_force("fit").unwrap().is_empty());
    assert_eq!(panel_level(&study, "q1", "i2"), Some(2));
    let history = study.settle_history("fit").unwrap();
    assert_eq!(history.len(), 2, "undo adds a row, it never deletes one");
    assert_eq!(history[1].method, UNDONE);
    assert_eq!(history[1].value, None);

    // The same level again right after an undo is a new row, in force again.
    study
        .settle_pair(
            "fit",
            &pair("q1", "i2"),
            1,
            "lead-juniper",
            "rubric says same area only",
        )
        .unwrap();
    assert_eq!(panel_level(&study, "q1", "i2"), Some(1));
    assert_eq!(study.settle_history("fit").unwrap().len(), 3);
}

#[test]
fn settling_refuses_unknown_levels_and_nameless_settlers() {
    let (_f, _p, mut study) = three_reviewers();
    assert!(
        study
            .settle_pair("fit", &pair("q1", "i2"), 7, "lead-juniper", "")
            .is_err()
    );
    assert!(
        study
            .settle_pair("fit", &pair("q1", "i2"), 1, "  ", "")
            .is_err()
    );
    assert!(study.settle_by_rule("fit", SettleRule::Median, "").is_err());
    assert!(study.settle_history("fit").unwrap().is_empty());
}

#[test]
fn each_bulk_rule_settles_every_disagreeing_pair_by_its_definition() {
    // (rule, q1/i1 from [0,2,2], q1/i2 from [1,2,2], q1/i3 from [0,2])
    let cases = [
        (SettleRule::Median, 2, 2, 0),
        (SettleRule::Majority, 2, 2, 0), // q1/i3 is a tie: the lower level
        (SettleRule::Strictest, 0, 1, 0),
    ];
    for (rule, i1, i2, i3) in cases {
        let (_f, _p, mut study) = three_reviewers();
        let n = study.settle_by_rule("fit", rule, "lead-juniper").unwrap();
        assert_eq!(n, 3, "{rule:?}");
        for (item, want) in [("i1", i1), ("i2", i2), ("i3", i3)] {
            assert_eq!(
                panel_level(&study, "q1", item),
                Some(want),
                "{rule:?} {item}"
            );
        }
        let in_force = study.settled_in_force("fit").unwrap();
        assert!(in_force.iter().all(|s| s.method == rule.method()));
        // Agreeing pairs are left alone.
        assert!(!in_force.iter().any(|s| s.context_id == "q2"));
        // A second run finds nothing left to settle.
        assert_eq!(
            study.settle_by_rule("fit", rule, "lead-juniper").unwrap(),
            0
        );
    }
}

#[test]
fn a_rule_leaves_pairs_settled_by_hand_as_they_are() {
    let (_f, _p, mut study) = three_reviewers();
    study
        .settle_pair("fit", &pair("q1", "i1"), 1, "lead-juniper", "")
        .unwrap();
    assert_eq!(
        study
            .settle_by_rule("fit", SettleRule::Strictest, "lead-juniper")
            .unwrap(),
        2
    );
    assert_eq!(panel_level(&study, "q1", "i1"), Some(1));
    assert_eq!(panel_level(&study, "q1", "i2"), Some(1));
}

#[test]
fn the_strictest_rule_changes_panel_scores() {
    let (_f, _p, mut study) = three_reviewers();
    let settings = ScoreSettings {
        scale: Some("fit".into()),
        bootstrap_resamples: 100,
        randomization_resamples: 100,
        ..ScoreSettings::default()
    };
    let before = scoreboard::build(&study.snapshot().unwrap(), &settings).unwrap();
    study
        .settle_by_rule("fit", SettleRule::Strictest, "lead-juniper")
        .unwrap();
    let after = scoreboard::build(&study.snapshot().unwrap(), &settings).unwrap();
    let key = "ndcg@5";
    let mean = |b: &scoreboard::Scoreboard, r: &str| {
        b.rankers.iter().find(|x| x.ranker == r).unwrap().metrics[key].mean
    };
    // q1's base list puts i1 (settled 2 → 0 by the strictest rule) first.
    assert_ne!(mean(&before, "base"), mean(&after, "base"));
}

#[test]
fn export_writes_settled_grades_with_who_settled_them() {
    let (_f, _p, mut study) = three_reviewers();
    study
        .settle_pair(
            "fit",
            &pair("q1", "i2"),
            1,
            "lead-juniper",
            "checked the rubric",
        )
        .unwrap();
    let mut out = Vec::new();
    study.export_grades(&mut out).unwrap();
    let text = String::from_utf8(out).unwrap();
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let headers = reader.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let settled: Vec<csv::StringRecord> = reader
        .records()
        .map(Result::unwrap)
        .filter(|r| &r[col("reviewer")] == "settled")
        .collect();
    assert_eq!(settled.len(), 1);
    let row = &settled[0];
    assert_eq!(&row[col("context_id")], "q1");
    assert_eq!(&row[col("item_id")], "i2");
    assert_eq!(&row[col("value")], "1");
    assert_eq!(&row[col("settled_by")], "lead-juniper");
    assert_eq!(&row[col("reason")], "checked the rubric");
}

#[test]
fn settlements_travel_with_a_merge() {
    let (fixture, _p, mut study) = three_reviewers();
    study
        .settle_pair("fit", &pair("q1", "i2"), 1, "lead-juniper", "")
        .unwrap();
    let other_path = fixture.path("other.plumb");
    let mut other = Study::create(&other_path).unwrap();
    plumbline::study::import::import(&mut other, &fixture.full_set()).unwrap();
    drop(study);
    let mut other_view = other;
    // A whole study, not a reviewer copy: the lead accepts every name it brings.
    let preview = other_view.merge_preview(&fixture.path("s.plumb")).unwrap();
    let accept = preview
        .needs_acceptance
        .iter()
        .map(|n| n.name.clone())
        .collect();
    other_view
        .merge_with(
            &fixture.path("s.plumb"),
            &plumbline::study::merge::MergeOptions { accept },
        )
        .unwrap();
    let in_force = other_view.settled_in_force("fit").unwrap();
    assert_eq!(in_force.len(), 1);
    assert_eq!(in_force[0].settled_by, "lead-juniper");
    assert_eq!(panel_level(&other_view, "q1", "i2"), Some(1));
}

#[test]
fn pending_pairs_are_the_queued_pairs_without_a_grade() {
    let (_f, _p, mut study) = three_reviewers();
    study.add_reviewer("dee").unwrap();
    let queue = study.ensure_queue("dee", "fit").unwrap();
    assert!(!queue.is_empty());
    let pending = study.pending_pairs("dee", "fit").unwrap();
    assert_eq!(pending.len(), queue.len());
    let first = queue[0].clone();
    study
        .record_grade(&NewGrade {
            reviewer: "dee".into(),
            context_id: first.0.clone(),
            item_id: first.1.clone(),
            scale: "fit".into(),
            action: GradeAction::CantJudge {
                reason: "image missing".into(),
            },
            seconds: 1.0,
            note: String::new(),
        })
        .unwrap();
    let pending = study.pending_pairs("dee", "fit").unwrap();
    assert_eq!(pending.len(), queue.len() - 1);
    assert!(!pending.contains(&first));
    // Someone without a queue has nothing pending.
    assert!(study.pending_pairs("nobody", "fit").unwrap().is_empty());
}
