//! The grading desk driven through the real workbench (`Workbench::show`) with
//! egui_kittest, on a fresh copy of the demo study in a temporary folder.

use crate::ui_support;

use std::path::Path;
use std::time::Duration;

use egui::{Key, Modifiers};
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::ui::Screen;
use plumbline::ui::Workbench;
use ui_support::{Bench, demo_copy, step_until};

pub(crate) fn harness(path: &Path) -> Bench {
    ui_support::harness(path, Screen::Desk)
}

/// Signs in as `reviewer` by clicking the name, then waits for the first card.
pub(crate) fn sign_in(h: &mut Harness<'static, Workbench>, reviewer: &str) {
    let label = format!("Sign in as {reviewer}");
    step_until(h, "the sign-in list", |h| {
        h.query_by_label(&label).is_some()
    });
    h.get_by_label(&label).click();
    h.step();
    step_until(h, "the first card", |h| {
        h.state().desk.data().is_some() && h.state().desk.current().is_some()
    });
    h.step();
}

/// (context_id, item_id) of the card on screen.
pub(crate) fn current_pair(h: &Harness<'static, Workbench>) -> (String, String) {
    let desk = &h.state().desk;
    let data = desk.data().unwrap();
    let (c, i) = data.queue[desk.current().unwrap()];
    (
        data.contexts[c as usize].id.clone(),
        data.items[i as usize].id.clone(),
    )
}

/// Presses a key and waits until the desk's writer has saved what it caused.
pub(crate) fn press(h: &mut Harness<'static, Workbench>, key: Key) {
    h.key_press(key);
    h.step();
    saved(h);
}

/// Steps until no grade waits for the writer, then once more to draw the result.
fn saved(h: &mut Harness<'static, Workbench>) {
    step_until(h, "the grade to be saved", |h| {
        !h.state().desk.has_unsaved()
    });
    h.step();
}

/// Every label, value and description in the accessibility tree.
fn all_texts(h: &Harness<'static, Workbench>) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
        out.extend(n.description());
    }
    out
}

pub(crate) fn max_event_id(path: &Path) -> i64 {
    let conn = rusqlite::Connection::open(path).unwrap();
    conn.query_row("SELECT COALESCE(MAX(id), 0) FROM grade_events", [], |r| {
        r.get(0)
    })
    .unwrap()
}

pub(crate) const DIGITS: [Key; 4] = [Key::Num0, Key::Num1, Key::Num2, Key::Num3];

#[test]
fn grading_ten_pairs_by_keyboard_is_saved_row_by_row() {
    let (_dir, path) = demo_copy();
    let before = max_event_id(&path);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    let (done0, total) = {
        let data = h.state().desk.data().unwrap();
        (data.done(), data.queue.len())
    };
    assert!(total > done0 + 11, "the demo queue should have work left");
    // Ten grades with the number keys; each card changes in the frame of the key.
    let mut graded = Vec::new();
    for n in 0..10 {
        let pair = current_pair(&h);
        press(&mut h, DIGITS[n % 4]);
        assert_ne!(current_pair(&h), pair, "grade {n} did not advance the card");
        graded.push((pair, (n % 4) as i64));
    }
    h.step();
    let shown = format!("{} / {total} graded", done0 + 10);
    assert!(
        h.query_by_label_contains(&shown).is_some(),
        "progress should read {shown}"
    );

    // Undo the tenth grade (Ctrl+Z): its card comes back.
    h.key_press_modifiers(Modifiers::COMMAND, Key::Z);
    h.step();
    saved(&mut h);
    let undone = graded.pop().unwrap().0;
    assert_eq!(current_pair(&h), undone);
    h.step();
    let shown = format!("{} / {total} graded", done0 + 9);
    assert!(
        h.query_by_label_contains(&shown).is_some(),
        "progress should read {shown}"
    );
    // The desk says which grade the undo removed (the tenth: level 9 % 4 = 1), naming
    // the item by its title as the file holds it.
    let title: String = rusqlite::Connection::open(&path)
        .unwrap()
        .query_row(
            "SELECT title FROM items WHERE item_id = ?1",
            [&undone.1],
            |r| r.get(0),
        )
        .unwrap();
    let node = h.get_by_label_contains("Undone: your grade 1 (");
    let text = format!(
        "{}{}",
        node.accesskit_node().label().unwrap_or_default(),
        node.accesskit_node().value().unwrap_or_default()
    );
    assert!(text.contains(&format!("for {title} on ")), "{text}");

    // Mark it can't judge: C opens the reasons, I picks "image missing".
    press(&mut h, Key::C);
    assert!(h.query_by_label_contains("Image missing").is_some());
    press(&mut h, Key::I);
    assert_ne!(current_pair(&h), undone);
    h.step();
    assert!(h.query_by_label_contains("All grades saved").is_some());

    let conn = rusqlite::Connection::open(&path).unwrap();
    let events: Vec<(String, String, String, Option<i64>, String, f64)> = conn
        .prepare(
            "SELECT context_id, item_id, action, value, reason, COALESCE(seconds, 0) FROM grade_events
             WHERE id > ?1 ORDER BY id",
        )
        .unwrap()
        .query_map([before], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?, r.get(5)?)))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert_eq!(
        events.len(),
        12,
        "ten grades, one undo, one can't judge: {events:?}"
    );
    for (k, ((c, i), v)) in graded.iter().enumerate() {
        assert_eq!((&events[k].0, &events[k].1), (c, i));
        assert_eq!(events[k].2, "grade");
        assert_eq!(events[k].3, Some(*v));
        assert!(events[k].5 > 0.0, "seconds on screen are recorded");
    }
    assert_eq!(events[9].2, "grade");
    assert_eq!(events[10].2, "undo");
    assert_eq!((&events[10].0, &events[10].1), (&undone.0, &undone.1));
    assert_eq!(events[11].2, "cant_judge");
    assert_eq!(events[11].4, "image missing");
    assert_eq!((&events[11].0, &events[11].1), (&undone.0, &undone.1));

    // current_grades holds exactly what the reviewer ended with.
    let current = |c: &str, i: &str| -> Option<(String, Option<i64>)> {
        conn.query_row(
            "SELECT e.action, e.value FROM current_grades g JOIN grade_events e ON e.id = g.event_id
             WHERE g.reviewer = 'rev-amber' AND g.scale = 'fit4' AND g.context_id = ?1 AND g.item_id = ?2",
            [c, i],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .ok()
    };
    for ((c, i), v) in &graded {
        assert_eq!(current(c, i), Some(("grade".to_string(), Some(*v))));
    }
    assert_eq!(
        current(&undone.0, &undone.1),
        Some(("cant_judge".to_string(), None))
    );
}

#[test]
fn nothing_on_the_desk_reveals_rankers_ranks_or_scores() {
    let (_dir, path) = demo_copy();
    let rankers = plumbline::study::Study::open(&path)
        .unwrap()
        .snapshot()
        .unwrap()
        .rankers;
    assert_eq!(rankers.len(), 3);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-birch");
    for n in 0..6 {
        // Let the images arrive so their labels are in the tree too.
        for _ in 0..5 {
            h.step();
            std::thread::sleep(Duration::from_millis(5));
        }
        let texts = all_texts(&h);
        let data = h.state().desk.data().unwrap();
        let (_, i) = data.queue[h.state().desk.current().unwrap()];
        let title = &data.items[i as usize].title;
        assert!(
            texts.iter().any(|t| t.contains(title.as_str())),
            "the card shows its item"
        );
        for t in &texts {
            let lower = t.to_lowercase();
            for r in &rankers {
                assert!(
                    !lower.contains(&r.to_lowercase()),
                    "ranker {r} shown in {t:?}"
                );
            }
            for word in lower.split(|ch: char| !ch.is_alphanumeric()) {
                assert!(
                    !matches!(
                        word,
                        "rank" | "ranked" | "ranker" | "rankers" | "score" | "scores" | "position"
                    ),
                    "{word:?} shown in {t:?}"
                );
            }
            for other in ["rev-amber", "rev-cedar"] {
                assert!(!t.contains(other), "another reviewer shown in {t:?}");
            }
        }
        press(&mut h, if n == 2 { Key::S } else { DIGITS[n % 4] });
    }
}

#[test]
fn after_a_restart_the_reviewer_continues_at_the_next_ungraded_pair() {
    let (_dir, path) = demo_copy();
    let (queue_before, next) = {
        let mut h = harness(&path);
        sign_in(&mut h, "rev-cedar");
        for n in 0..3 {
            press(&mut h, DIGITS[n + 1]);
        }
        let data = h.state().desk.data().unwrap();
        let queue: Vec<(u32, u32)> = data.queue.clone();
        (queue, current_pair(&h))
    };
    let mut h = harness(&path);
    sign_in(&mut h, "rev-cedar");
    assert_eq!(
        h.state().desk.data().unwrap().queue,
        queue_before,
        "same order"
    );
    assert_eq!(current_pair(&h), next);
    let data = h.state().desk.data().unwrap();
    let title = data.items[data.queue[h.state().desk.current().unwrap()].1 as usize]
        .title
        .clone();
    h.step();
    assert!(h.query_all_by_label_contains(&title).next().is_some());
}

#[test]
fn seconds_count_only_while_the_window_has_focus() {
    let (_dir, path) = demo_copy();
    let before = max_event_id(&path);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    // Each step is 0.25 s of simulated time: 1 s focused, 10 s away, 1 s focused.
    for _ in 0..4 {
        h.step();
    }
    h.input_mut().focused = false;
    for _ in 0..40 {
        h.step();
    }
    h.input_mut().focused = true;
    for _ in 0..4 {
        h.step();
    }
    press(&mut h, Key::Num1);
    let conn = rusqlite::Connection::open(&path).unwrap();
    let seconds: f64 = conn
        .query_row(
            "SELECT seconds FROM grade_events WHERE id > ?1",
            [before],
            |r| r.get(0),
        )
        .unwrap();
    assert!(
        (2.0..=3.0).contains(&seconds),
        "about 2.5 s on screen with focus, got {seconds}"
    );
}

#[test]
fn images_outside_the_catalog_folder_or_missing_show_why() {
    let (dir, path) = demo_copy();
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    let (_, first) = current_pair(&h);
    let conn = rusqlite::Connection::open(&path).unwrap();
    std::fs::write(dir.path().join("secret.png"), b"not for the desk").unwrap();
    conn.execute(
        "UPDATE items SET image = '../secret.png' WHERE item_id = ?1",
        [&first],
    )
    .unwrap();
    // Leaving and re-entering the desk reloads its data; the same pair is still next.
    h.state_mut().screen = Screen::Progress;
    h.step();
    h.state_mut().screen = Screen::Desk;
    h.step();
    step_until(&mut h, "the reload", |h| !h.state().desk.is_loading());
    h.step();
    assert_eq!(current_pair(&h).1, first);
    step_until(&mut h, "the refusal", |h| {
        h.query_by_label_contains("../secret.png leaves the catalog folder: not a picture; refused")
            .is_some()
    });

    // A missing file on the next card.
    press(&mut h, Key::Num0);
    let (_, second) = current_pair(&h);
    let image: String = conn
        .query_row(
            "SELECT image FROM items WHERE item_id = ?1",
            [&second],
            |r| r.get(0),
        )
        .unwrap();
    let catalog: String = conn
        .query_row(
            "SELECT value FROM settings WHERE key = 'catalog_dir'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    let file = Path::new(&catalog).join(&image);
    // The prefetch may already hold it; a fresh workbench has an empty cache.
    std::fs::remove_file(&file).unwrap();
    drop(h);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    assert_eq!(current_pair(&h).1, second);
    let expected = format!("image file missing: {image}");
    step_until(&mut h, "the missing-image placeholder", |h| {
        h.query_by_label_contains(&expected).is_some()
    });
}

#[test]
fn a_new_reviewer_signs_in_by_name_and_gets_a_queue() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    step_until(&mut h, "the sign-in form", |h| {
        h.query_by_label("Sign in as rev-amber").is_some()
    });
    let field = h.get_by_role_and_label(egui::Role::TextInput, "New reviewer");
    field.focus();
    h.step();
    h.get_by_role_and_label(egui::Role::TextInput, "New reviewer")
        .type_text("rev-dune");
    h.step();
    h.get_by_label_contains("Add and sign in").click();
    step_until(&mut h, "the new reviewer's first card", |h| {
        h.state().desk.data().is_some() && h.state().desk.current().is_some()
    });
    assert_eq!(h.state().reviewer.as_deref(), Some("rev-dune"));
    h.step();
    assert!(h.query_by_label_contains("Signed in: rev-dune").is_some());
    let data = h.state().desk.data().unwrap();
    assert_eq!(data.done(), 0, "a new reviewer starts with nothing graded");
    let conn = rusqlite::Connection::open(&path).unwrap();
    let queued: i64 = conn
        .query_row(
            "SELECT COUNT(*) FROM queue_entries WHERE reviewer = 'rev-dune' AND scale = 'fit4'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(queued as usize, data.queue.len());
    assert!(queued > 0);
}

#[test]
fn every_control_on_the_desk_has_an_accessible_label() {
    use egui::Role;
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    press(&mut h, Key::C); // the can't-judge reasons are controls too
    let mut controls = 0;
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        if matches!(
            n.role(),
            Role::Button | Role::TextInput | Role::ComboBox | Role::CheckBox | Role::Image
        ) {
            controls += 1;
            let label = n.label().unwrap_or_default();
            assert!(!label.trim().is_empty(), "unlabelled {:?}: {n:?}", n.role());
        }
    }
    assert!(controls >= 15, "only {controls} controls found");
    // Shortcuts are shown on the controls themselves.
    for shortcut in [
        "key 0",
        "key 3",
        "S / Right",
        "B / Left",
        "Ctrl+Z / Backspace",
    ] {
        assert!(
            h.query_all_by_label_contains(shortcut).next().is_some(),
            "{shortcut} not shown"
        );
    }
}
