//! The role rule (shared/GUIDE.md, "lead": "a signed-in reviewer sees only the desk"):
//! while a reviewer is signed in, the workbench draws the desk, that reviewer's own
//! progress and the rubric, whatever screen was asked for (by the rail, a shortcut or the
//! field); nothing names a ranker, a rank, a gold level or rationale, or another
//! reviewer; no lead action is offered. Signing out brings the lead's screens back, and a
//! study reopens signed out. What must not show is read from the study file itself.

use crate::ui_support;

use std::path::Path;

use egui::{Key, Modifiers};
use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::study::Study;
use plumbline::ui::{Prefs, Screen, Workbench};
use ui_support::{Bench, demo_copy, harness, step_until_within};

/// Every screen there is, the lead's and the reviewer's.
const EVERY_SCREEN: [Screen; 9] = [
    Screen::Home,
    Screen::Catalog,
    Screen::Scales,
    Screen::Desk,
    Screen::Agreement,
    Screen::Scoreboard,
    Screen::Trial,
    Screen::Progress,
    Screen::Rubric,
];

/// Names of the lead's screens and actions (the rail's and the buttons' own words).
const LEAD_WORDS: [&str; 16] = [
    "Home",
    "Catalog",
    "Scales",
    "Agreement",
    "Scoreboard",
    "Scale trial",
    "Start pilot",
    "End pilot",
    "Save scale",
    "Add level",
    "Save gold pair",
    "Record settled level",
    "Undo settlement",
    "Save report (Markdown)…",
    "Context lists",
    "Bring in grades",
];

fn texts(h: &Bench) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
    }
    out
}

/// What the study holds that a reviewer must not read: ranker names, gold rationales,
/// the other reviewers' names.
fn secrets(path: &Path, reviewer: &str) -> Vec<String> {
    let study = Study::open(path).unwrap();
    let snapshot = study.snapshot().unwrap();
    let mut out: Vec<String> = snapshot.rankers.clone();
    for scale in &snapshot.scales {
        for (.., rationale) in study.gold_with_rationale(&scale.name).unwrap() {
            if !rationale.is_empty() {
                out.push(rationale);
            }
        }
    }
    out.extend(
        snapshot
            .reviewers
            .iter()
            .filter(|r| *r != reviewer)
            .cloned(),
    );
    out.push("Best rank".into());
    out
}

fn assert_reviewer_only(h: &Bench, secrets: &[String], asked: Screen) {
    let shown = h.state().allowed_screen();
    assert!(
        matches!(shown, Screen::Desk | Screen::Progress | Screen::Rubric),
        "asked for {asked:?}, drew {shown:?}"
    );
    for text in texts(h) {
        for secret in secrets {
            assert!(
                !text.contains(secret.as_str()),
                "asked for {asked:?}: {text:?} shows {secret:?}"
            );
        }
        for word in LEAD_WORDS {
            assert!(
                !text.starts_with(word),
                "asked for {asked:?}: {text:?} offers the lead's {word:?}"
            );
        }
    }
}

fn settle(h: &mut Bench) {
    for _ in 0..30 {
        h.step();
        std::thread::sleep(std::time::Duration::from_millis(5));
    }
}

#[test]
fn a_signed_in_reviewer_reaches_no_lead_screen_by_any_way() {
    let (_dir, path) = demo_copy();
    let reviewer = "rev-dune";
    Study::open(&path).unwrap().add_reviewer(reviewer).unwrap();
    let secrets = secrets(&path, reviewer);
    assert!(
        secrets.len() > 5,
        "the check needs rankers, gold and reviewers"
    );
    for screen in EVERY_SCREEN {
        let mut h = harness(&path, screen);
        settle(&mut h);
        let ctx = h.ctx.clone();
        h.state_mut().sign_in(&ctx, reviewer);
        step_until_within(&mut h, "the reviewer's first card", 60, |h| {
            h.state().desk.current().is_some()
        });
        // Asked for by the field, as `open --screen` or a link would.
        h.state_mut().screen = screen;
        settle(&mut h);
        assert_reviewer_only(&h, &secrets, screen);
        // And by every rail shortcut the lead has.
        for key in [
            Key::Num1,
            Key::Num2,
            Key::Num3,
            Key::Num4,
            Key::Num5,
            Key::Num6,
            Key::Num7,
        ] {
            h.key_press_modifiers(Modifiers::COMMAND, key);
            settle(&mut h);
            assert_reviewer_only(&h, &secrets, screen);
        }
    }
}

#[test]
fn signing_out_brings_the_lead_screens_back_and_a_study_reopens_signed_out() {
    let (dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Scoreboard);
    settle(&mut h);
    let ctx = h.ctx.clone();
    h.state_mut().sign_in(&ctx, "rev-amber");
    settle(&mut h);
    assert!(h.query_by_label_contains("Signed in: rev-amber").is_some());
    assert!(h.query_by_label("Scoreboard").is_none());
    h.get_by_label("Sign out").click();
    settle(&mut h);
    assert!(h.state().reviewer.is_none());
    assert_eq!(h.state().allowed_screen(), Screen::Home);
    assert!(
        h.query_by_label_contains("Lead (nobody signed in)")
            .is_some()
    );
    h.key_press_modifiers(Modifiers::COMMAND, Key::Num6);
    settle(&mut h);
    assert_eq!(h.state().allowed_screen(), Screen::Scoreboard);

    // Prefs written by an older build remembered the last reviewer per study; the study
    // still opens signed out.
    let file = dir.path().join("workbench.json");
    let abs = std::path::absolute(&path).unwrap();
    let json = serde_json::json!({
        "recent": [abs],
        "reviewers": [[abs, "rev-amber"]],
    });
    std::fs::write(&file, json.to_string()).unwrap();
    let prefs = Prefs::load(Some(file));
    assert_eq!(prefs.last_study(), Some(abs.clone()));
    let wb = Workbench::with_prefs(abs, Screen::Desk, prefs);
    assert!(wb.reviewer.is_none());
}

#[test]
fn my_progress_counts_the_reviewers_own_queue_and_the_rubric_reads_the_scale() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Home);
    let ctx = h.ctx.clone();
    h.state_mut().sign_in(&ctx, "rev-amber");
    settle(&mut h);
    let scale = h.state().desk.data().unwrap().scale.name.clone();
    // Counted with SQL of its own, straight from the file: rev-amber's queue on the scale
    // and how many of its pairs have a current mark of hers.
    let conn = rusqlite::Connection::open(&path).unwrap();
    let (done, total): (i64, i64) = conn
        .query_row(
            "SELECT COUNT(c.event_id), COUNT(*) FROM queue_entries q
             LEFT JOIN current_grades c ON c.reviewer = q.reviewer AND c.scale = q.scale
               AND c.context_id = q.context_id AND c.item_id = q.item_id
             WHERE q.reviewer = 'rev-amber' AND q.scale = ?1",
            [&scale],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .unwrap();
    assert!(total > 0);
    h.key_press_modifiers(Modifiers::COMMAND, Key::Num2);
    step_until_within(&mut h, "my progress", 30, |h| {
        h.query_by_label_contains("My progress — rev-amber")
            .is_some()
    });
    settle(&mut h);
    let expected = format!("{done} of {total} pairs graded");
    assert!(
        h.query_by_label_contains(&expected).is_some(),
        "{expected} in {:?}",
        texts(&h)
    );
    h.key_press_modifiers(Modifiers::COMMAND, Key::Num3);
    settle(&mut h);
    let rubric: Vec<String> = conn
        .prepare("SELECT rubric FROM levels WHERE scale = ?1 AND rubric != ''")
        .unwrap()
        .query_map([&scale], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert!(!rubric.is_empty());
    for text in rubric {
        assert!(h.query_by_label(&text).is_some(), "{text}");
    }
}
