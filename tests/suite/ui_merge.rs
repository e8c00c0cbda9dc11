//! Merging from the workbench: choose a reviewer copy, see what would come in, confirm,
//! see the result — and the study holds exactly the new grade.

use crate::ui_support;

use egui_kittest::kittest::Queryable;
use plumbline::study::Study;
use plumbline::study::grades::{GradeAction, NewGrade};
use plumbline::ui::Screen;
use ui_support::{harness, step_until};

fn events(path: &std::path::Path) -> i64 {
    rusqlite::Connection::open(path)
        .unwrap()
        .query_row("SELECT COUNT(*) FROM grade_events", [], |r| r.get(0))
        .unwrap()
}

/// The Catalog screen with the merge panel open, `copy` typed in and its preview asked for.
fn open_preview(path: &std::path::Path, copy: &std::path::Path) -> ui_support::Bench {
    let mut h = harness(path, Screen::Catalog);
    step_until(&mut h, "the catalog", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.get_by_label("Bring in grades from other studies").click();
    h.step();
    let field = || egui::Role::MultilineTextInput;
    h.get_by_role_and_label(field(), "Studies to merge").focus();
    h.step();
    h.get_by_role_and_label(field(), "Studies to merge")
        .type_text(&copy.display().to_string());
    h.step();
    h.get_by_label("Show what would come in").click();
    h
}

#[test]
fn a_reviewer_copy_is_previewed_then_merged() {
    let (dir, path) = ui_support::demo_copy();
    let copy = dir.path().join("birch-copy.plumb");
    Study::open(&path)
        .unwrap()
        .hand_out("rev-birch", &copy)
        .unwrap();
    Study::open(&copy)
        .unwrap()
        .record_grade(&NewGrade {
            reviewer: "rev-birch".into(),
            context_id: "q01".into(),
            item_id: "fh-0240".into(),
            scale: "fit4".into(),
            action: GradeAction::Grade(2),
            seconds: 5.0,
            note: String::new(),
        })
        .unwrap();
    let before = events(&path);

    let mut h = open_preview(&path, &copy);
    step_until(&mut h, "the preview", |h| {
        h.query_by_label_contains("Would come in").is_some()
    });
    assert!(
        h.query_by_label_contains("birch-copy.plumb: 1 grades, 0 settled grades, 0 reviewers")
            .is_some()
    );
    assert_eq!(events(&path), before, "a preview changes nothing");

    h.get_by_label("Merge now").click();
    step_until(&mut h, "the result", |h| {
        h.query_by_label_contains("Merged").is_some()
    });
    assert_eq!(events(&path), before + 1);
}

/// Promise: the merge preview shows the same refusals as `plumbline merge`: events by a
/// reviewer the copy was not handed to are listed with a box to tick; unticked, the
/// merge is refused and nothing changes; ticked, they come in.
#[test]
fn the_preview_lists_names_to_accept_and_merges_only_when_ticked() {
    let (dir, path) = ui_support::demo_copy();
    let copy = dir.path().join("birch-copy.plumb");
    Study::open(&path)
        .unwrap()
        .hand_out("rev-birch", &copy)
        .unwrap();
    {
        let conn = rusqlite::Connection::open(&copy).unwrap();
        conn.execute_batch(
            "INSERT INTO reviewers(reviewer) VALUES ('mallory');
             INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
             VALUES ('00000000000000000000000000abc003', 'mallory', 'q01', 'fh-0240', 'fit4', 'grade', 3, '', 1, '2026-11-30T10:00:00.000Z', '');",
        )
        .unwrap();
    }
    let before = events(&path);
    let mut h = open_preview(&path, &copy);
    let tick = "bring in mallory (1 grade events, 0 settled grades)";
    step_until(&mut h, "the names to accept", |h| {
        h.query_by_label_contains(tick).is_some()
    });
    h.get_by_label("Merge now").click();
    step_until(&mut h, "the refusal", |h| {
        h.query_by_label_contains("refused").is_some()
    });
    assert_eq!(events(&path), before, "unticked: nothing merged");
    h.get_by_label("Show what would come in").click();
    step_until(&mut h, "the names again", |h| {
        h.query_by_label_contains(tick).is_some()
    });
    h.get_by_label_contains(tick).click();
    h.step();
    h.get_by_label("Merge now").click();
    step_until(&mut h, "the merge", |_| events(&path) == before + 1);
}
