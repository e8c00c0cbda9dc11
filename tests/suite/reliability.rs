//! Nothing lost, nothing half-done: crashes, concurrent writers, locks, read-only files
//! and a full disk.

use crate::common;

use std::io::{BufRead, BufReader};
use std::process::{Command, Stdio};
use std::time::Duration;

use common::{Fixture, study_dump};
use plumbline::core::stats::Rng;
use plumbline::study::grades::{GradeAction, NewGrade};
use plumbline::study::{Study, StudyError};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_plumbline"))
}

fn integrity(path: &std::path::Path) -> String {
    rusqlite::Connection::open(path)
        .unwrap()
        .query_row("PRAGMA integrity_check", [], |r| r.get(0))
        .unwrap()
}

fn event_ids(path: &std::path::Path) -> std::collections::HashSet<i64> {
    let conn = rusqlite::Connection::open(path).unwrap();
    let mut stmt = conn.prepare("SELECT id FROM grade_events").unwrap();
    stmt.query_map([], |r| r.get(0))
        .unwrap()
        .map(Result::unwrap)
        .collect()
}

/// Kills a grading process with SIGKILL at random moments; every grade it acknowledged
/// must be in the study afterwards, and the file must pass SQLite's integrity check.
/// `PLUMBLINE_CRASH_TRIALS` raises the count (default 50).
#[test]
fn acknowledged_grades_survive_sigkill() {
    let trials: usize = std::env::var("PLUMBLINE_CRASH_TRIALS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(50);
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let mut rng = Rng::new(2026);
    let mut total_acked = 0;
    for trial in 0..trials {
        let mut child = bin()
            .args([
                "grade-loop",
                path.to_str().unwrap(),
                "--reviewer",
                &format!("crash{trial}"),
                "--count",
                "1000000",
            ])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let stdout = child.stdout.take().unwrap();
        let reader = std::thread::spawn(move || {
            let mut acked = Vec::new();
            for line in BufReader::new(stdout).lines() {
                let Ok(line) = line else { break };
                if let Some(id) = line.strip_prefix("ack ") {
                    acked.push(id.parse::<i64>().unwrap());
                }
            }
            acked
        });
        std::thread::sleep(Duration::from_millis(30 + rng.below(150) as u64));
        child.kill().unwrap();
        child.wait().unwrap();
        let acked = reader.join().unwrap();
        let stored = event_ids(&path);
        for id in &acked {
            assert!(
                stored.contains(id),
                "trial {trial}: acknowledged grade {id} was lost"
            );
        }
        assert_eq!(integrity(&path), "ok", "trial {trial}");
        total_acked += acked.len();
    }
    assert!(total_acked > trials, "the loop must have graded something");
}

#[test]
fn two_processes_grading_at_once_both_succeed() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    let before = study.counts().unwrap().grade_events;
    drop(study);
    let spawn = |who: &str| {
        bin()
            .args([
                "grade-loop",
                path.to_str().unwrap(),
                "--reviewer",
                who,
                "--count",
                "150",
            ])
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap()
    };
    let (a, b) = (spawn("left"), spawn("right"));
    for child in [a, b] {
        let out = child.wait_with_output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let after = Study::open(&path).unwrap().counts().unwrap().grade_events;
    assert_eq!(after, before + 300);
}

fn a_grade() -> NewGrade {
    NewGrade {
        reviewer: "ann".into(),
        context_id: "q2".into(),
        item_id: "i4".into(),
        scale: "fit".into(),
        action: GradeAction::Grade(1),
        seconds: 2.0,
        note: String::new(),
    }
}

#[test]
fn a_study_held_by_another_program_gives_a_clear_message() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    study.set_write_wait(Duration::from_millis(300)).unwrap();
    let holder = rusqlite::Connection::open(&path).unwrap();
    holder
        .execute_batch("BEGIN IMMEDIATE; INSERT INTO reviewers(reviewer) VALUES ('holder');")
        .unwrap();
    let err = study.record_grade(&a_grade()).unwrap_err();
    assert!(matches!(err, StudyError::Busy), "{err}");
    let message = err.to_string();
    assert!(
        message.contains("busy") && !message.contains("database is locked"),
        "{message}"
    );
    holder.execute_batch("ROLLBACK").unwrap();
    study
        .record_grade(&a_grade())
        .expect("works once the other program lets go");
}

#[test]
fn a_read_only_study_opens_read_only() {
    use std::os::unix::fs::PermissionsExt;
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o444)).unwrap();
    let mut study = Study::open(&path).unwrap();
    assert!(study.is_read_only());
    assert_eq!(study.snapshot().unwrap().rankers.len(), 2);
    let err = study.record_grade(&a_grade()).unwrap_err();
    assert!(matches!(err, StudyError::ReadOnly(_)), "{err}");
}

#[test]
fn a_full_disk_is_reported_and_the_grade_can_be_retried() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let pages: i64 = rusqlite::Connection::open(&path)
        .unwrap()
        .query_row("PRAGMA page_count", [], |r| r.get(0))
        .unwrap();
    study.limit_size_in_pages(pages as u64).unwrap();
    let mut failures = 0;
    let mut grade = a_grade();
    for n in 0..2000 {
        grade.note = format!("note {n} {}", "x".repeat(200));
        match study.record_grade(&grade) {
            Ok(_) => {}
            Err(StudyError::DiskFull) => {
                failures += 1;
                break;
            }
            Err(other) => panic!("unexpected error: {other}"),
        }
    }
    assert_eq!(failures, 1, "the capped study must fill up");
    assert_eq!(
        StudyError::DiskFull.to_string(),
        "the disk is full; the study could not grow"
    );
    study.limit_size_in_pages(1_000_000).unwrap();
    study
        .record_grade(&grade)
        .expect("the same grade is saved once there is room");
    assert_eq!(integrity(&path), "ok");
}

/// An import killed part-way leaves the study exactly as before, or fully imported.
#[test]
fn an_import_killed_part_way_leaves_no_half() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let mut items = String::from("item_id,title\n");
    for i in 0..3000 {
        items.push_str(&format!("big{i},Big item {i}\n"));
    }
    let mut rankings = String::from("ranker,context_id,item_id,rank\n");
    for r in 0..40 {
        for c in ["q1", "q2"] {
            for i in 0..3000 {
                rankings.push_str(&format!("bulk{r},{c},big{i},{}\n", i + 1));
            }
        }
    }
    let items_path = fixture.write("big_items.csv", &items);
    let rankings_path = fixture.write("big_rankings.csv", &rankings);
    let before = study_dump(&path);
    let mut rng = Rng::new(11);
    let mut saw_partial_kill = false;
    for _ in 0..5 {
        let mut child = bin()
            .args([
                "import",
                path.to_str().unwrap(),
                "--items",
                items_path.to_str().unwrap(),
                "--rankings",
                rankings_path.to_str().unwrap(),
            ])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(20 + rng.below(200) as u64));
        let finished = child.try_wait().unwrap().is_some();
        child.kill().ok();
        child.wait().unwrap();
        let study = Study::open(&path).unwrap();
        let ranked = study.counts().unwrap().ranked_items;
        assert!(
            ranked == 10 || ranked == 10 + 40 * 2 * 3000,
            "half an import is visible: {ranked} ranked entries"
        );
        if ranked == 10 {
            assert_eq!(study_dump(&path), before);
            saw_partial_kill |= !finished;
        }
        drop(study);
        assert_eq!(integrity(&path), "ok");
        if ranked > 10 {
            break;
        }
    }
    assert!(
        saw_partial_kill || std::env::var("CI").is_ok(),
        "no kill landed mid-import"
    );
}

// ---- Issue "never lose a grade": writers that wait, studies refused cleanly ----

/// A grades file for `reviewer` over the fixture's pairs.
fn grades_for(reviewer: &str) -> String {
    let mut text = String::from("reviewer,context_id,item_id,scale,value,graded_at\n");
    for (n, (c, i)) in [
        ("q1", "i1"),
        ("q1", "i2"),
        ("q1", "i3"),
        ("q2", "i3"),
        ("q2", "i1"),
    ]
    .iter()
    .enumerate()
    {
        text.push_str(&format!(
            "{reviewer},{c},{i},fit,{},2026-11-2{n}T10:00:00Z\n",
            n % 3
        ));
    }
    text
}

/// Promise: a second writer waits for the first instead of failing. Eight imports start
/// at once while a grading process writes; every one of them succeeds and every grade
/// is there afterwards.
#[test]
fn eight_concurrent_imports_and_a_grader_all_succeed() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let grader = bin()
        .args([
            "grade-loop",
            path.to_str().unwrap(),
            "--reviewer",
            "desk",
            "--count",
            "300",
        ])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let imports: Vec<_> = (0..8)
        .map(|n| {
            let file = fixture.write(&format!("g{n}.csv"), &grades_for(&format!("imp{n}")));
            bin()
                .args([
                    "import",
                    path.to_str().unwrap(),
                    "--grades",
                    file.to_str().unwrap(),
                ])
                .stdout(Stdio::null())
                .stderr(Stdio::piped())
                .spawn()
                .unwrap()
        })
        .collect();
    for child in imports.into_iter().chain([grader]) {
        let out = child.wait_with_output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let conn = rusqlite::Connection::open(&path).unwrap();
    let imported: i64 = conn
        .query_row(
            "SELECT COUNT(*) FROM grade_events WHERE reviewer LIKE 'imp%'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(imported, 40);
    let desk: i64 = conn
        .query_row(
            "SELECT COUNT(*) FROM grade_events WHERE reviewer = 'desk'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(desk, 300);
}

/// Promise: a command-line writer that has to wait says so after a second and carries
/// on when the other program lets go; with `--wait 1` against a longer hold it gives
/// up with a message that names the limit, and nothing is changed.
#[test]
fn a_waiting_writer_says_so_and_gives_up_only_at_its_limit() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let file = fixture.write("g.csv", &grades_for("late"));
    let hold = |seconds: u64| {
        let path = path.clone();
        std::thread::spawn(move || {
            let holder = rusqlite::Connection::open(&path).unwrap();
            holder
                .execute_batch(
                    "BEGIN IMMEDIATE; INSERT INTO reviewers(reviewer) VALUES ('holder');",
                )
                .unwrap();
            std::thread::sleep(Duration::from_secs(seconds));
            holder.execute_batch("ROLLBACK").unwrap();
        })
    };
    // Imports `grades` while another connection holds the write lock for `seconds`.
    let import_while_held = |seconds: u64, wait: &[&str], grades: &std::path::Path| {
        let holder = hold(seconds);
        std::thread::sleep(Duration::from_millis(200));
        let out = bin()
            .args(wait)
            .args(["import", path.to_str().unwrap(), "--grades"])
            .arg(grades)
            .output()
            .unwrap();
        holder.join().unwrap();
        out
    };
    let out = import_while_held(3, &[], &file);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{stderr}");
    assert!(
        stderr.contains("waiting for another program writing to"),
        "{stderr}"
    );

    let other = fixture.write("g2.csv", &grades_for("later"));
    let before = study_dump(&path);
    let out = import_while_held(4, &["--wait", "1"], &other);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{stderr}");
    assert!(
        stderr.contains("busy") && stderr.contains("--wait"),
        "{stderr}"
    );
    assert_eq!(study_dump(&path), before);
}

/// Promise: refusing a study from a newer build changes nothing, not even by leaving
/// empty `-wal` and `-shm` files beside it.
#[test]
fn refusing_a_newer_study_leaves_no_files_behind() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    {
        let conn = rusqlite::Connection::open(&path).unwrap();
        conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
        conn.pragma_update(None, "user_version", 99).unwrap();
    }
    let before = std::fs::read(&path).unwrap();
    let err = Study::open(&path).err().expect("refused");
    assert!(err.to_string().contains("newer Plumbline"), "{err}");
    for suffix in ["-wal", "-shm"] {
        let mut p = path.clone().into_os_string();
        p.push(suffix);
        assert!(!std::path::Path::new(&p).exists(), "{suffix} left behind");
    }
    assert!(
        std::fs::read(&path).unwrap() == before,
        "the file was changed"
    );
}

/// Promise: a file with Plumbline's mark, no schema version and tables of its own is
/// refused in words, not with SQLite's text of the whole schema.
#[test]
fn a_schema_version_zero_file_with_tables_is_refused_in_words() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("odd.plumb");
    {
        let conn = rusqlite::Connection::open(&path).unwrap();
        conn.pragma_update(
            None,
            "application_id",
            plumbline::study::schema::APPLICATION_ID,
        )
        .unwrap();
        conn.execute_batch("CREATE TABLE settings(y); CREATE TABLE items(x);")
            .unwrap();
    }
    let before = std::fs::read(&path).unwrap();
    let message = Study::open(&path).err().expect("refused").to_string();
    assert!(
        message.contains("no schema version") && message.contains("already exists"),
        "{message}"
    );
    assert!(!message.contains("CREATE"), "{message}");
    assert!(
        std::fs::read(&path).unwrap() == before,
        "the file was changed"
    );
}

/// Promise: a study written at schema 1 opens, is upgraded once, and keeps every grade
/// and current grade exactly.
#[test]
fn a_schema_one_study_is_upgraded_with_its_grades() {
    let fixture = Fixture::new();
    let path = fixture.path("old.plumb");
    {
        let conn = rusqlite::Connection::open(&path).unwrap();
        conn.pragma_update(
            None,
            "application_id",
            plumbline::study::schema::APPLICATION_ID,
        )
        .unwrap();
        plumbline::study::schema::MIGRATIONS[0]
            .apply(&conn)
            .unwrap();
        conn.pragma_update(None, "user_version", 1).unwrap();
        conn.execute_batch(
            "INSERT INTO items(item_id, title) VALUES ('i1', 'A');
             INSERT INTO contexts(context_id, kind, text) VALUES ('q1', 'query', 'a');
             INSERT INTO scales VALUES ('fit');
             INSERT INTO levels(scale, value, label) VALUES ('fit', 0, 'No'), ('fit', 1, 'Yes');
             INSERT INTO reviewers VALUES ('ann');
             INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, graded_at)
               VALUES ('u1', 'ann', 'q1', 'i1', 'fit', 'grade', 0, '2026-11-01T00:00:00.000Z'),
                      ('u2', 'ann', 'q1', 'i1', 'fit', 'grade', 1, '2026-11-02T00:00:00.000Z');",
        )
        .unwrap();
    }
    let study = Study::open(&path).unwrap();
    assert_eq!(
        study.schema_version().unwrap(),
        plumbline::study::schema::current_version()
    );
    assert_eq!(study.counts().unwrap().current_grades, 1);
    drop(study);
    let conn = rusqlite::Connection::open(&path).unwrap();
    let current: String = conn
        .query_row(
            "SELECT e.uid FROM current_grades c JOIN grade_events e ON e.id = c.event_id",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(current, "u2");
}

/// Job threads open and close their own connections to one study all the time. SQLite
/// 3.51.1's unix VFS takes two mutexes in opposite orders when one thread opens the file
/// and another closes its last connection to it (`findReusableFd` against `unixLock` →
/// `unixIsSharingShmNode`), which deadlocked the workbench; opening and closing are now
/// never interleaved. Four threads open, read and close the study 3000 times each; all
/// must finish.
#[test]
fn threads_opening_and_closing_one_study_never_deadlock() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let (done, finished) = std::sync::mpsc::channel();
    for t in 0..4 {
        let path = path.clone();
        let done = done.clone();
        std::thread::spawn(move || {
            for _ in 0..3000 {
                let study = Study::open(&path).unwrap();
                let n = study.snapshot().unwrap().contexts.len();
                assert_eq!(n, 3);
                drop(study);
            }
            done.send(t).unwrap();
        });
    }
    for _ in 0..4 {
        finished
            .recv_timeout(std::time::Duration::from_secs(120))
            .expect("a thread opening and closing the study is stuck (deadlock)");
    }
}
