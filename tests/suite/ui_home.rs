//! Home shows what `plumbline status` prints: the same pool, coverage and reviewers.

use egui_kittest::kittest::Queryable;
use plumbline::ui::Screen;

use crate::ui_support::{demo_copy, harness, step_until};

#[test]
fn home_shows_the_figures_status_prints() {
    let (_dir, path) = demo_copy();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["status", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let printed: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();

    let mut h = harness(&path, Screen::Home);
    step_until(&mut h, "Home", |h| matches!(h.state().home, Some(Ok(_))));
    h.step();
    let bar = |done: u64, total: u64| {
        let share = if total == 0 {
            0.0
        } else {
            done as f64 / total as f64
        };
        format!("{done} / {total} ({:.0} %)", share * 100.0)
    };
    let number = |v: &serde_json::Value| v.as_u64().unwrap();
    let pool = bar(
        number(&printed["pool_graded"]),
        number(&printed["pool_size"]),
    );
    assert!(
        h.query_all_by_label(&pool).count() >= 1,
        "{pool} not on Home"
    );
    let coverage = printed["coverage"].as_array().unwrap();
    assert_eq!(coverage.len(), 3, "the demo has three rankers");
    for c in coverage {
        let shown = bar(number(&c["graded"]), number(&c["pairs"]));
        // Rankers with equal coverage share a label, so count rather than ask for one.
        assert!(
            h.query_all_by_label(&shown).count() >= 1,
            "{shown} not on Home"
        );
        assert!(h.query_by_label(c["ranker"].as_str().unwrap()).is_some());
    }
    // A count that is off by one is not on screen (the check reads real numbers).
    let wrong = bar(
        number(&printed["pool_graded"]) - 1,
        number(&printed["pool_size"]),
    );
    assert_eq!(h.query_all_by_label(&wrong).count(), 0);
}

/// A reviewer's row says what each number counts: the pairs graded on the scale, and
/// the queue's progress as "queue done of total" (not a second "grades" count).
#[test]
fn a_reviewers_row_names_pairs_graded_and_the_queue_apart() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Home);
    // Signing in makes rev-amber's queue; signing out brings Home back.
    let ctx = h.ctx.clone();
    h.state_mut().sign_in(&ctx, "rev-amber");
    step_until(&mut h, "the desk", |h| h.state().desk.data().is_some());
    assert!(h.state_mut().sign_out());
    h.state_mut().home = None;
    step_until(&mut h, "Home", |h| matches!(h.state().home, Some(Ok(_))));
    h.step();
    // Counted by SQL straight from the file, on the active scale fit4.
    let conn = rusqlite::Connection::open(&path).unwrap();
    let one = |sql: &str| -> i64 { conn.query_row(sql, [], |r| r.get(0)).unwrap() };
    let graded =
        one("SELECT COUNT(*) FROM current_grades WHERE reviewer = 'rev-amber' AND scale = 'fit4'");
    let total =
        one("SELECT COUNT(*) FROM queue_entries WHERE reviewer = 'rev-amber' AND scale = 'fit4'");
    let done = one(
        "SELECT COUNT(*) FROM queue_entries q JOIN current_grades c ON c.reviewer = q.reviewer
         AND c.scale = q.scale AND c.context_id = q.context_id AND c.item_id = q.item_id
         WHERE q.reviewer = 'rev-amber' AND q.scale = 'fit4'",
    );
    assert!(
        total > 0 && graded > done,
        "the check needs grades outside the queue"
    );
    assert!(
        h.query_all_by_label(&format!("{graded} pairs graded"))
            .count()
            >= 1
    );
    let percent = (100.0 * done as f64 / total as f64).round();
    let queue = format!("queue {done} of {total} ({percent:.0} %)");
    assert!(h.query_by_label(&queue).is_some(), "{queue} not on Home");
}
