//! The grading desk never loses a grade: failed writes, a busy study, many presses at
//! once, and an outside reader followed by SIGKILL.

use crate::ui_support;

use std::path::Path;
use std::time::Duration;

use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::Workbench;
use ui_support::{demo_copy, step_until, step_until_within};

use super::ui_desk::{DIGITS, current_pair, harness, max_event_id, press, sign_in};

#[test]
fn a_failed_write_is_shown_kept_and_retried() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    let pair = current_pair(&h);
    let other = rusqlite::Connection::open(&path).unwrap();
    other
        .execute_batch(
            "CREATE TRIGGER refuse BEFORE INSERT ON grade_events
             BEGIN SELECT RAISE(ABORT, 'simulated write failure'); END;",
        )
        .unwrap();
    h.key_press(Key::Num2);
    step_until(&mut h, "the failure to show", |h| {
        h.query_by_label_contains("simulated write failure")
            .is_some()
    });
    assert_eq!(
        current_pair(&h),
        pair,
        "the card stays until its grade is saved"
    );
    assert!(
        h.query_by_label_contains("simulated write failure")
            .is_some()
    );
    assert!(h.query_by_label_contains("All grades saved").is_none());
    // A key pressed meanwhile waits its turn: it grades the next card once the first
    // grade is saved (one press, one grade, in order).
    h.key_press(Key::Num3);
    h.step();
    assert_eq!(current_pair(&h), pair);
    other.execute_batch("DROP TRIGGER refuse;").unwrap();
    step_until_within(&mut h, "the retry", 30, |h| !h.state().desk.has_unsaved());
    h.step();
    assert_ne!(current_pair(&h), pair);
    assert!(h.query_by_label_contains("All grades saved").is_some());
    let value: i64 = other
        .query_row(
            "SELECT e.value FROM current_grades g JOIN grade_events e ON e.id = g.event_id
             WHERE g.reviewer = 'rev-amber' AND g.scale = 'fit4' AND g.context_id = ?1 AND g.item_id = ?2",
            [&pair.0, &pair.1],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(value, 2, "the first key's grade is the one kept");
}

/// The pairs of the next `n` open cards from the one on screen, in queue order.
fn next_open_pairs(h: &Harness<'static, Workbench>, n: usize) -> Vec<(String, String)> {
    let desk = &h.state().desk;
    let data = desk.data().unwrap();
    let mut open: Vec<bool> = data.marks.iter().map(Option::is_none).collect();
    let mut p = desk.current().unwrap();
    let mut out = Vec::new();
    for _ in 0..n {
        let (c, i) = data.queue[p];
        out.push((
            data.contexts[c as usize].id.clone(),
            data.items[i as usize].id.clone(),
        ));
        open[p] = false;
        let len = data.queue.len();
        p = (1..=len)
            .map(|k| (p + k) % len)
            .find(|&q| open[q])
            .expect("enough open cards");
    }
    out
}

/// (context, item, value) of the events after `after`, in the order written.
fn events_after(path: &Path, after: i64) -> Vec<(String, String, Option<i64>)> {
    let conn = rusqlite::Connection::open(path).unwrap();
    let mut stmt = conn
        .prepare("SELECT context_id, item_id, value FROM grade_events WHERE id > ?1 ORDER BY id")
        .unwrap();
    stmt.query_map([after], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))
        .unwrap()
        .map(Result::unwrap)
        .collect()
}

/// Promise: one press, one grade, in order. Twenty presses delivered in a single frame
/// (3 first) give twenty grades on twenty successive cards with the pressed values.
#[test]
fn twenty_presses_in_one_frame_give_twenty_grades_in_order() {
    let (_dir, path) = demo_copy();
    let before = max_event_id(&path);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-amber");
    let pairs = next_open_pairs(&h, 20);
    let values: Vec<usize> = (0..20).map(|n| [3, 1, 2, 0][n % 4]).collect();
    for &v in &values {
        h.key_press(DIGITS[v]);
    }
    h.step();
    step_until(&mut h, "twenty saved grades", |h| {
        !h.state().desk.has_unsaved()
    });
    let written = events_after(&path, before);
    let expected: Vec<(String, String, Option<i64>)> = pairs
        .into_iter()
        .zip(&values)
        .map(|((c, i), v)| (c, i, Some(*v as i64)))
        .collect();
    assert_eq!(written, expected);
}

/// Promise: a busy study does not freeze the window or lose presses. While another
/// program holds the write lock, presses 3, 1, 2, 0 wait ("waiting to save…"), frames
/// keep coming, and once it lets go all four grades land on four cards in order.
#[test]
fn presses_made_while_the_study_is_busy_are_all_saved_in_order() {
    let (_dir, path) = demo_copy();
    let before = max_event_id(&path);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-birch");
    let pairs = next_open_pairs(&h, 4);
    let holder = rusqlite::Connection::open(&path).unwrap();
    holder
        .execute_batch("BEGIN IMMEDIATE; INSERT INTO reviewers(reviewer) VALUES ('holder');")
        .unwrap();
    for v in [3, 1, 2, 0] {
        h.key_press(DIGITS[v]);
    }
    let start = std::time::Instant::now();
    step_until_within(&mut h, "the busy notice", 30, |h| {
        h.query_by_label_contains("waiting to save").is_some()
    });
    for _ in 0..20 {
        let frame = std::time::Instant::now();
        h.step();
        assert!(
            frame.elapsed() < Duration::from_millis(900),
            "a frame took {:?} while the study was busy",
            frame.elapsed()
        );
    }
    assert!(start.elapsed() > Duration::from_millis(500));
    assert_eq!(current_pair(&h), pairs[0], "the card waits for its grade");
    holder.execute_batch("ROLLBACK").unwrap();
    step_until_within(&mut h, "all four grades", 30, |h| {
        !h.state().desk.has_unsaved()
    });
    let written = events_after(&path, before);
    let expected: Vec<(String, String, Option<i64>)> = pairs
        .into_iter()
        .zip([3, 1, 2, 0])
        .map(|((c, i), v)| (c, i, Some(v)))
        .collect();
    assert_eq!(written, expected);
}

/// True when process `pid` holds a POSIX lock on the file at `path` (from /proc/locks:
/// "N: POSIX ADVISORY READ|WRITE PID MAJ:MIN:INODE START END").
fn holds_posix_lock(pid: u32, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    let inode = std::fs::metadata(path).unwrap().ino();
    let locks = std::fs::read_to_string("/proc/locks").unwrap_or_default();
    locks.lines().any(|line| {
        let fields: Vec<&str> = line.split_whitespace().collect();
        let pid_field = fields
            .iter()
            .position(|f| f.contains(':') && f.matches(':').count() == 2);
        match pid_field {
            Some(at) if at >= 1 => {
                fields[at - 1] == pid.to_string()
                    && fields[at].rsplit(':').next() == Some(inode.to_string().as_str())
            }
            _ => false,
        }
    })
}

/// Run as a child process by `grades_survive_an_outside_reader_and_sigkill`: the real
/// workbench (headless) on the study in `PLUMBLINE_CHILD_STUDY`, driven by lines on
/// stdin ("grade", "reopen"), printing `ack N` once N grades are saved.
#[test]
#[ignore = "a helper process for another test"]
fn workbench_child_process() {
    let Ok(study) = std::env::var("PLUMBLINE_CHILD_STUDY") else {
        return;
    };
    use std::io::BufRead;
    let path = std::path::PathBuf::from(study);
    let mut h = harness(&path);
    sign_in(&mut h, "rev-cedar");
    let mut saved_count = 0;
    for line in std::io::stdin().lock().lines() {
        let line = line.unwrap();
        match line.trim() {
            "grade" => {
                press(&mut h, Key::Num2);
                saved_count += 1;
                println!("ack {saved_count}");
            }
            // What every screen's job thread does: open the study, read, close.
            "reopen" => {
                let other = plumbline::study::Study::open(&path).unwrap();
                let _ = other.counts().unwrap();
                drop(other);
                println!("ack {saved_count}");
            }
            _ => {}
        }
        use std::io::Write;
        std::io::stdout().flush().unwrap();
    }
}

/// Promise: no acknowledged grade is lost when another program reads the study. The
/// workbench runs in its own process and grades 3 pairs; a second process (as a
/// notebook would) opens the study, reads it and closes it; the workbench grades 5 more
/// and is killed with SIGKILL. All 8 grades are in the study, and it is intact. (Before
/// the fix the workbench dropped its own POSIX locks, the reader deleted the WAL, and 5
/// of the 8 vanished.)
#[test]
fn grades_survive_an_outside_reader_and_sigkill() {
    use std::io::{BufRead, BufReader, Write};
    use std::process::{Command, Stdio};
    let (_dir, path) = demo_copy();
    let count = |path: &Path| -> i64 {
        let conn = rusqlite::Connection::open(path).unwrap();
        conn.query_row(
            "SELECT COUNT(*) FROM grade_events WHERE reviewer = 'rev-cedar'",
            [],
            |r| r.get(0),
        )
        .unwrap()
    };
    let before = count(&path);
    let mut child = Command::new(std::env::current_exe().unwrap())
        .args([
            "--ignored",
            "--exact",
            "ui_desk_saving::workbench_child_process",
            "--nocapture",
        ])
        .env("PLUMBLINE_CHILD_STUDY", &path)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let mut to_child = child.stdin.take().unwrap();
    let mut from_child = BufReader::new(child.stdout.take().unwrap()).lines();
    let mut ask = |command: &str| -> String {
        writeln!(to_child, "{command}").unwrap();
        to_child.flush().unwrap();
        loop {
            let line = from_child.next().expect("the child answers").unwrap();
            if let Some(n) = line.strip_prefix("ack ") {
                return n.to_string();
            }
        }
    };
    for _ in 0..3 {
        ask("grade");
    }
    ask("reopen");
    // The root cause, seen from outside: the workbench still holds its SQLite locks
    // on the study file after a screen opened and closed the study.
    assert!(
        holds_posix_lock(child.id(), &path),
        "the workbench holds no lock on the study (/proc/locks)"
    );
    {
        // The outside reader: a separate process, as Python's sqlite3 would be.
        let status = Command::new(env!("CARGO_BIN_EXE_plumbline"))
            .args(["agree", path.to_str().unwrap(), "--format", "json"])
            .stdout(Stdio::null())
            .status()
            .unwrap();
        assert!(status.success());
        let reader = rusqlite::Connection::open(&path).unwrap();
        let _: i64 = reader
            .query_row("SELECT COUNT(*) FROM grade_events", [], |r| r.get(0))
            .unwrap();
        drop(reader);
    }
    for _ in 0..5 {
        ask("grade");
    }
    assert_eq!(ask("reopen"), "8");
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(
        count(&path),
        before + 8,
        "every acknowledged grade is in the study"
    );
    let conn = rusqlite::Connection::open(&path).unwrap();
    let check: String = conn
        .query_row("PRAGMA integrity_check", [], |r| r.get(0))
        .unwrap();
    assert_eq!(check, "ok");
}
