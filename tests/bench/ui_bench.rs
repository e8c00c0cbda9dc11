//! Benchmark (ignored by default): frame logic of the grading desk, headless through
//! egui_kittest, on the demo study grown to 200 000 grade events. Prints median and
//! p99 milliseconds per frame and the peak resident memory; asserts no timings.
//!
//! cargo test --test bench -- --ignored --nocapture ui_bench

use std::time::{Duration, Instant};

use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::Screen;
use plumbline::ui::Workbench;

const GRADES: usize = 200_000;

/// Adds synthetic reviewers' grades until the study holds `GRADES` grade events.
fn grow(path: &std::path::Path) -> usize {
    let mut conn = rusqlite::Connection::open(path).unwrap();
    let contexts: Vec<String> = conn
        .prepare("SELECT context_id FROM contexts")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    let items: Vec<String> = conn
        .prepare("SELECT item_id FROM items")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    let existing: i64 = conn
        .query_row("SELECT COUNT(*) FROM grade_events", [], |r| r.get(0))
        .unwrap();
    let tx = conn.transaction().unwrap();
    let mut n = existing as usize;
    let mut reviewer = 0;
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    'outer: loop {
        reviewer += 1;
        let name = format!("bench-{reviewer:02}");
        tx.execute("INSERT INTO reviewers(reviewer) VALUES (?1)", [&name])
            .unwrap();
        let mut insert = tx
            .prepare(
                "INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, seconds, graded_at)
                 VALUES (?1, ?2, ?3, ?4, 'fit4', 'grade', ?5, ?6, '2026-11-30T10:00:00Z')",
            )
            .unwrap();
        for c in &contexts {
            for i in &items {
                if n >= GRADES {
                    break 'outer;
                }
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                insert
                    .execute(rusqlite::params![
                        format!("bench-{n}"),
                        name,
                        c,
                        i,
                        (state % 4) as i64,
                        (state % 20) as f64 + 2.0
                    ])
                    .unwrap();
                n += 1;
            }
        }
    }
    tx.commit().unwrap();
    n
}

fn percentile(sorted: &[f64], q: f64) -> f64 {
    sorted[((sorted.len() - 1) as f64 * q).round() as usize]
}

fn report(name: &str, mut ms: Vec<f64>) {
    ms.sort_by(f64::total_cmp);
    println!(
        "{name}: {} frames, median {:.2} ms, p99 {:.2} ms, max {:.2} ms",
        ms.len(),
        percentile(&ms, 0.5),
        percentile(&ms, 0.99),
        ms[ms.len() - 1]
    );
}

fn peak_rss_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

#[test]
#[ignore = "benchmark; run with --ignored --nocapture"]
fn desk_frames_on_a_study_with_200k_grades() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    {
        let study = plumbline::study::Study::open(&path).unwrap();
        study.set_setting("pool_depth", "30").unwrap();
    }
    let t = Instant::now();
    let total = grow(&path);
    println!(
        "grade events: {total} (grown in {:.1} s)",
        t.elapsed().as_secs_f64()
    );

    let mut h: Harness<'static, Workbench> = Harness::builder()
        .with_size([1360.0, 860.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.clone(), Screen::Desk),
        );
    let start = Instant::now();
    while h.query_by_label("Sign in as rev-amber").is_none() {
        assert!(start.elapsed() < Duration::from_secs(60));
        h.step();
        std::thread::sleep(Duration::from_millis(5));
    }
    println!(
        "open: study with {total} grade events to the first usable frame (sign-in list): {:.0} ms",
        start.elapsed().as_secs_f64() * 1000.0
    );
    h.get_by_label("Sign in as rev-amber").click();
    let t = Instant::now();
    while h.state().desk.data().is_none() {
        assert!(start.elapsed() < Duration::from_secs(120));
        h.step();
        std::thread::sleep(Duration::from_millis(5));
    }
    println!(
        "desk loaded in {:.2} s; queue of {} pairs",
        t.elapsed().as_secs_f64(),
        h.state().desk.data().unwrap().queue.len()
    );
    for _ in 0..20 {
        h.step();
    }
    // The frames measured below draw a real card: the scale's levels are on screen.
    assert!(h.query_by_label_contains("Spot on").is_some());
    assert!(h.state().desk.current().is_some());
    let mut idle = Vec::new();
    for _ in 0..300 {
        let t = Instant::now();
        h.step();
        idle.push(t.elapsed().as_secs_f64() * 1000.0);
    }
    let keys = [Key::Num0, Key::Num1, Key::Num2, Key::Num3];
    let mut grading = Vec::new();
    for n in 0..200 {
        h.key_press(keys[n % 4]);
        let t = Instant::now();
        h.step();
        grading.push(t.elapsed().as_secs_f64() * 1000.0);
    }
    report("desk frame, no input", idle);
    report(
        "desk frame with a grade key (includes the committed write)",
        grading,
    );
    if let Some(mib) = peak_rss_mib() {
        println!("peak resident memory: {mib:.0} MiB");
    }
}
