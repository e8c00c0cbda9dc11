//! The Catalog's context view model on the small hand-written fixture: every list in rank
//! order with the panel grade (settled grade, else the lower median of the reviewers'
//! levels, can't judge left out, as the guide states) worked out by hand below.

use crate::common::Fixture;

use plumbline::analysis::views::catalog_view::{ContextLists, Mark, PanelMark};

#[test]
fn each_rankers_list_carries_the_panel_grade_and_every_reviewers_own() {
    let fixture = Fixture::new();
    let (_path, mut study) = fixture.study();
    // By hand: ann gave q1/i2 level 1 and bo level 2; the lead settles it at 2.
    study
        .settle_pair("fit", &("q1".into(), "i2".into()), 2, "lead-juniper", "")
        .unwrap();
    let lists = ContextLists::build(study.snapshot().unwrap());
    let q1 = lists.contexts.iter().position(|c| c.id == "q1").unwrap();
    let fit = lists.scales.iter().position(|s| s.name == "fit");
    let view = lists.view(q1, fit).unwrap();
    assert_eq!(view.reviewers, ["ann", "bo"]);

    let level = |level| {
        Some(PanelMark {
            level,
            settled: false,
        })
    };
    let rows = |ranker: &str| {
        let list = view.lists.iter().find(|l| l.ranker == ranker).unwrap();
        list.rows
            .iter()
            .map(|r| (r.rank, r.item_id.clone(), r.panel, r.marks.clone()))
            .collect::<Vec<_>>()
    };
    use Mark::{CantJudge, Level, NotGraded};
    let settled_two = Some(PanelMark {
        level: 2,
        settled: true,
    });
    // base, q1: i1 (2, 2 → 2), i2 (settled 2), i3 (ann alone: 0).
    assert_eq!(
        rows("base"),
        vec![
            (1, "i1".into(), level(2), vec![Level(2), Level(2)]),
            (2, "i2".into(), settled_two, vec![Level(1), Level(2)]),
            (3, "i3".into(), level(0), vec![Level(0), NotGraded]),
        ]
    );
    // cand, q1: i2, i1, then i4, which only bo saw and could not judge: no panel grade.
    assert_eq!(
        rows("cand"),
        vec![
            (1, "i2".into(), settled_two, vec![Level(1), Level(2)]),
            (2, "i1".into(), level(2), vec![Level(2), Level(2)]),
            (3, "i4".into(), None, vec![NotGraded, CantJudge]),
        ]
    );
    assert_eq!(view.lists[0].rows[0].title, "Pine Dome Tent");

    // A context a ranker has no list for gives it an empty list, not a missing one.
    let a1 = lists.contexts.iter().position(|c| c.id == "a1").unwrap();
    let anchor = lists.view(a1, fit).unwrap();
    assert_eq!(anchor.lists.len(), 2);
    assert!(anchor.lists.iter().all(|l| l.rows.is_empty()));
    assert!(lists.view(lists.contexts.len(), fit).is_none());
}
