//! The pilot through the real workbench with egui_kittest: the Scales screen asks how
//! many pairs and which reviewers, the desk says which block a reviewer is on, the Scale
//! trial follows pilot grades as they arrive, and queueing the Scoreboard's gaps opens
//! the desk on the scale they were queued for.

use crate::ui_support;

use std::collections::HashSet;
use std::path::Path;

use egui::{Key, Modifiers, Role};
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::study::Study;
use plumbline::study::grades::{GradeAction, NewGrade};
use plumbline::ui::Screen;
use plumbline::ui::Workbench;
use ui_support::{demo_copy, step_until, step_until_within};

type Bench = Harness<'static, Workbench>;

/// A tall window, so the whole pilot form and the desk's card are on screen.
fn harness(path: &Path, screen: Screen) -> Bench {
    Harness::builder()
        .with_size([1400.0, 1500.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), screen),
        )
}

fn strings(names: &[&str]) -> Vec<String> {
    names.iter().map(|s| s.to_string()).collect()
}

fn scales_loaded(h: &Bench) -> bool {
    matches!(h.state().scales.model, Some(Ok(_))) && !h.state().scales.is_busy()
}

fn shows(h: &Bench, text: &str) -> bool {
    h.query_all_by_label_contains(text).next().is_some()
}

/// Pairs a reviewer's queue on a scale holds, as the file stores them, in order.
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

/// The desk's queue as (context_id, item_id).
fn desk_pairs(h: &Bench) -> Vec<(String, String)> {
    let data = h.state().desk.data().unwrap();
    data.queue
        .iter()
        .map(|&(c, i)| {
            (
                data.contexts[c as usize].id.clone(),
                data.items[i as usize].id.clone(),
            )
        })
        .collect()
}

fn desk_ready(h: &Bench) -> bool {
    let desk = &h.state().desk;
    !desk.is_loading() && desk.data().is_some()
}

#[test]
fn the_pilot_form_asks_pairs_and_reviewers_and_gives_each_chosen_one_that_many_per_scale() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Scales);
    step_until_within(&mut h, "the scales", 30, scales_loaded);
    // Counts say what they count, with the numbers Home and `status` use: the pool as
    // `status --format json` gives it, its gold pairs and fit4's grades in force by SQL.
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["status", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    let status: serde_json::Value = serde_json::from_slice(&status.stdout).unwrap();
    let pool = status["pool_size"].as_u64().unwrap();
    let conn = rusqlite::Connection::open(&path).unwrap();
    let one =
        |sql: &str| -> u64 { conn.query_row(sql, [], |r| r.get::<_, i64>(0)).unwrap() as u64 };
    let depth = status["depth"].as_u64().unwrap();
    let gold_in_pool = one(&format!(
        "SELECT COUNT(*) FROM (SELECT DISTINCT g.context_id, g.item_id FROM gold_pairs g
         WHERE EXISTS (SELECT 1 FROM ranked_items r WHERE r.context_id = g.context_id
                       AND r.item_id = g.item_id AND r.rank <= {depth}))"
    ));
    assert!(gold_in_pool > 0, "the demo mixes gold pairs into the pool");
    let room = pool - gold_in_pool;
    assert!(shows(
        &h,
        &format!(
            "of {room} pool pairs that are not gold pairs (the pool has {pool}; its {gold_in_pool} gold pairs"
        )
    ));
    let in_force = one("SELECT COUNT(*) FROM current_grades WHERE scale = 'fit4'");
    let pairs = one(
        "SELECT COUNT(*) FROM (SELECT DISTINCT context_id, item_id FROM current_grades
         WHERE scale = 'fit4')",
    );
    assert!(shows(
        &h,
        &format!("{in_force} grades in force on {pairs} pairs")
    ));
    h.get_by_label("Pilot with fit4").click();
    h.step();
    h.get_by_label("Pilot with useful2").click();
    h.step();
    // The number of pairs, typed as a lead would.
    h.get_by_role_and_label(Role::TextInput, "Pairs per reviewer and scale")
        .focus();
    h.step();
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.step();
    h.get_by_role_and_label(Role::TextInput, "Pairs per reviewer and scale")
        .type_text("12");
    h.step();
    h.get_by_label("Reviewer rev-cedar").click();
    h.step();
    h.step();
    // Before confirming: what each chosen reviewer will grade.
    assert!(shows(&h, "rev-amber: 12 pairs × 2 scales"));
    assert!(shows(&h, "rev-birch: 12 pairs × 2 scales"));
    assert!(!shows(&h, "rev-cedar: 12 pairs"), "rev-cedar was left out");
    assert!(shows(&h, "48 grades in all"));

    h.get_by_label("Start pilot").click();
    step_until(&mut h, "the pilot to start", |h| {
        h.state()
            .scales
            .model
            .as_ref()
            .is_some_and(|m| m.as_ref().is_ok_and(|m| m.pilot_status.is_some()))
            && !h.state().scales.is_busy()
    });
    h.step();
    let message = h.state().scales.message.as_ref().unwrap();
    assert!(
        message
            .as_ref()
            .is_ok_and(|m| m.starts_with("Pilot started")),
        "{message:?}"
    );
    // Each reviewer's block order is named as the desk gives it: the order rotates with
    // the reviewer's place among the chosen ones (study::pilot's rule), so rev-birch,
    // second, starts on the second scale.
    let text = message.as_ref().unwrap();
    assert!(text.contains("rev-amber: fit4, then useful2"), "{text}");
    assert!(text.contains("rev-birch: useful2, then fit4"), "{text}");
    let mut store = Study::open(&path).unwrap();
    assert_eq!(
        store.pilot_block("rev-birch").unwrap().as_deref(),
        Some("useful2")
    );
    // After starting: each reviewer's share and progress.
    assert!(shows(&h, "rev-amber: 12 pairs × 2 scales · 0 of 24 graded"));
    assert!(shows(&h, "rev-birch: 12 pairs × 2 scales · 0 of 24 graded"));
    assert!(!shows(&h, "rev-cedar: "));

    // The file holds the same 12 pairs at the head of both reviewers' queues on both
    // scales, and nowhere else in those queues.
    let mut heads: Vec<HashSet<(String, String)>> = Vec::new();
    for reviewer in ["rev-amber", "rev-birch"] {
        for scale in ["fit4", "useful2"] {
            let queue = stored_queue(&path, reviewer, scale);
            let head: HashSet<_> = queue[..12].iter().cloned().collect();
            assert_eq!(head.len(), 12, "{reviewer} on {scale}");
            assert!(queue[12..].iter().all(|p| !head.contains(p)));
            heads.push(head);
        }
    }
    assert!(
        heads.windows(2).all(|w| w[0] == w[1]),
        "the same pairs for all"
    );
    let mut study = Study::open(&path).unwrap();
    assert_eq!(study.pilot_block("rev-cedar").unwrap(), None);
    let pilot: HashSet<_> = study.pilot_pairs().unwrap().into_iter().collect();
    assert_eq!(pilot, heads[0]);

    // Home and the Scale trial mention the running pilot: 12 pairs × 2 scales × 2
    // reviewers = 48 pilot grades, none given yet.
    h.key_press_modifiers(Modifiers::COMMAND, Key::Num1);
    step_until(&mut h, "Home's pilot line", |h| {
        shows(h, "Pilot running on fit4 and useful2 (2 reviewers")
    });
    assert!(shows(&h, "0 of 48 pilot grades given"));
    assert!(shows(
        &h,
        "Finish the pilot on the Grading desk (48 pilot grades to go)"
    ));
    h.key_press_modifiers(Modifiers::COMMAND, Key::Num7);
    step_until_within(&mut h, "the trial's pilot progress", 60, |h| {
        shows(
            h,
            "Pilot running on fit4 and useful2: 0 of 48 pilot grades given",
        )
    });
    assert!(shows(&h, "0 of 24 pilot grades"));
    // Tau-b says what it compares with: fit4 has the most levels (4 against 2).
    assert!(h.query_by_label("Tau-b vs fit4").is_some());
}

#[test]
fn the_desk_names_the_pilot_block_and_moves_on_to_the_next() {
    let (_dir, path) = demo_copy();
    Study::open(&path)
        .unwrap()
        .start_pilot_for(
            &strings(&["fit4", "useful2"]),
            3,
            &strings(&["rev-amber", "rev-birch"]),
        )
        .unwrap();
    let mut h = harness(&path, Screen::Desk);
    crate::ui_desk::sign_in(&mut h, "rev-amber");
    assert!(
        shows(&h, "Pilot block 1 of 2"),
        "the header names the block"
    );
    let first = desk_pairs(&h);
    assert_eq!(first.len(), 3, "the block holds the pilot's 3 pairs only");
    assert_eq!(h.state().desk.data().unwrap().scale.name, "fit4");
    assert_eq!(first, stored_queue(&path, "rev-amber", "fit4")[..3]);
    for _ in 0..3 {
        crate::ui_desk::press(&mut h, Key::Num2);
    }
    h.step();
    assert!(shows(&h, "Pilot block 1 of 2 done"));
    h.get_by_label("Go on to the next pilot block").click();
    h.step();
    step_until(&mut h, "the second block", |h| {
        desk_ready(h) && h.state().desk.data().unwrap().scale.name == "useful2"
    });
    h.step();
    assert!(shows(&h, "Pilot block 2 of 2"));
    let second: HashSet<_> = desk_pairs(&h).into_iter().collect();
    let first_set: HashSet<_> = first.iter().cloned().collect();
    assert_eq!(second, first_set, "the same pairs");

    // A reviewer left out of the pilot grades on the active scale, with no block shown.
    h.get_by_label("Sign out").click();
    h.step();
    h.get_by_label("Sign in").click();
    h.step();
    crate::ui_desk::sign_in(&mut h, "rev-cedar");
    assert!(!shows(&h, "Pilot block"));
    assert!(h.state().desk.data().unwrap().queue.len() > 3);
}

#[test]
fn the_scale_trial_recomputes_when_pilot_grades_arrive() {
    let (_dir, path) = demo_copy();
    // What `plumbline trial` counts before the pilot: pairs graded on every scale.
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["trial", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let before = json["common_pairs"].as_u64().unwrap() as usize;
    let reviewers = strings(&["rev-amber", "rev-birch", "rev-cedar"]);
    let mut study = Study::open(&path).unwrap();
    study
        .start_pilot_for(&strings(&["fit4", "useful2"]), 4, &reviewers)
        .unwrap();

    let mut h = harness(&path, Screen::Trial);
    let common = |h: &Bench| match &h.state().trial.model {
        Some(Ok(t)) if !h.state().trial.is_loading() => Some(t.common_pairs),
        _ => None,
    };
    step_until_within(&mut h, "the trial", 120, |h| common(h).is_some());
    assert_eq!(common(&h), Some(before));

    // Pairs with a real grade on both scales, read from the file: the pilot pairs not
    // among them become common once graded on both.
    let common_before: HashSet<(String, String)> = {
        let conn = rusqlite::Connection::open(&path).unwrap();
        let mut stmt = conn
            .prepare(
                "SELECT c.context_id, c.item_id FROM current_grades c
                 JOIN grade_events e ON e.id = c.event_id
                 WHERE e.value IS NOT NULL GROUP BY c.context_id, c.item_id
                 HAVING COUNT(DISTINCT c.scale) = 2",
            )
            .unwrap();
        stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap()
    };
    assert_eq!(common_before.len(), before);
    let pilot = study.pilot_pairs().unwrap();
    let after = before + pilot.iter().filter(|p| !common_before.contains(*p)).count();
    assert!(after > before, "the pilot favours pairs graded least");

    // Pilot grades arrive from elsewhere (another connection, as another workstation's).
    for (c, i) in pilot {
        for scale in ["fit4", "useful2"] {
            for reviewer in &reviewers {
                study
                    .record_grade(&NewGrade {
                        reviewer: reviewer.clone(),
                        context_id: c.clone(),
                        item_id: i.clone(),
                        scale: scale.into(),
                        action: GradeAction::Grade(1),
                        seconds: 5.0,
                        note: String::new(),
                    })
                    .unwrap();
            }
        }
    }
    step_until_within(&mut h, "the recomputed trial", 120, |h| {
        common(h) == Some(after)
    });
    h.step();
    assert!(shows(
        &h,
        &format!(
            "computed on the {} pairs graded on every piloted scale",
            before + 4
        )
    ));
}

#[test]
fn queueing_the_gaps_opens_the_desk_on_the_scale_they_were_queued_for() {
    let (_dir, path) = demo_copy();
    // The desk grades on useful2; the Scoreboard scores the busiest scale, fit4.
    Study::open(&path)
        .unwrap()
        .set_active_scale("useful2")
        .unwrap();
    let mut h = harness(&path, Screen::Scoreboard);
    step_until(&mut h, "the scoreboard", |h| {
        h.state().scoreboard.is_current()
    });
    let (scale, first_gap) = {
        let model = h.state().scoreboard.model.as_ref().unwrap();
        let g = &model.gaps[0];
        (
            model.board.scale.clone(),
            (g.context_id.clone(), g.item_id.clone()),
        )
    };
    assert_eq!(scale, "fit4");
    h.get_by_role_and_label(Role::ComboBox, "Reviewer for the gaps")
        .scroll_to_me();
    for _ in 0..8 {
        h.step();
    }
    h.get_by_role_and_label(Role::ComboBox, "Reviewer for the gaps")
        .click();
    h.step();
    h.step();
    h.get_by_label("Reviewer for the gaps: rev-birch").click();
    h.step();
    h.get_by_label_contains("gaps and open the desk")
        .scroll_to_me();
    for _ in 0..8 {
        h.step();
    }
    h.get_by_label_contains("gaps and open the desk").click();
    h.step();
    step_until(&mut h, "the desk", |h| {
        h.state().screen == Screen::Desk && desk_ready(h) && h.state().desk.current().is_some()
    });
    let wb = h.state();
    assert_eq!(wb.reviewer.as_deref(), Some("rev-birch"));
    assert_eq!(wb.desk.data().unwrap().scale.name, "fit4");
    let pairs = desk_pairs(&h);
    assert_eq!(pairs[h.state().desk.current().unwrap()], first_gap);
    assert_eq!(stored_queue(&path, "rev-birch", "fit4")[0], first_gap);
}
