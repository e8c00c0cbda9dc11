//! Merge benchmark (ignored): a reviewer copy holding two million grade events is merged
//! back, and the process's peak resident memory during the merge is printed beside the
//! 300 MB goal (the copy is streamed, never held). Run with
//! `cargo test --release --test bench -- --ignored --nocapture bench_merge`.

use std::time::Instant;

use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

const EVENTS: u64 = 2_000_000;

/// Peak resident memory of this process in MiB (Linux `VmHWM`).
fn peak_rss_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

/// Resets the peak to the current resident size (Linux `clear_refs`, value 5).
fn reset_peak() {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
}

#[test]
#[ignore = "benchmark: run in release with --ignored --nocapture"]
fn bench_merge_streams_a_large_copy() {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| {
        let p = dir.path().join(name);
        std::fs::write(&p, text).unwrap();
        Some(Source::from_path(&p).unwrap())
    };
    let study_path = dir.path().join("lead.plumb");
    let mut study = Study::create(&study_path).unwrap();
    import::import(
        &mut study,
        &ImportSet {
            items: write("items.csv", "item_id,title\ni1,One\ni2,Two\n"),
            contexts: write("contexts.csv", "context_id,kind,text\nq1,query,one\n"),
            scales: write("scales.csv", "scale,value,label\nfit,0,No\nfit,1,Yes\n"),
            rankings: write(
                "rankings.csv",
                "ranker,context_id,item_id,rank\nr,q1,i1,1\nr,q1,i2,2\n",
            ),
            ..Default::default()
        },
    )
    .unwrap();
    let copy = dir.path().join("bo.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    let t = Instant::now();
    {
        let conn = rusqlite::Connection::open(&copy).unwrap();
        conn.execute_batch(&format!(
            "PRAGMA journal_mode = DELETE; PRAGMA synchronous = OFF;
             INSERT INTO settings(key, value) VALUES ('bulk_grade_import', '1');
             WITH RECURSIVE n(x) AS (SELECT 1 UNION ALL SELECT x + 1 FROM n LIMIT {EVENTS})
             INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
             SELECT printf('%032x', x), 'bo', 'q1', CASE x % 2 WHEN 0 THEN 'i1' ELSE 'i2' END, 'fit',
                    'grade', x % 2, '', 3.5,
                    strftime('%Y-%m-%dT%H:%M:%S', '2026-01-01', '+' || (x / 1000) || ' seconds')
                      || printf('.%03dZ', x % 1000),
                    'a note of some length to make the rows realistic'
             FROM n;
             DELETE FROM settings WHERE key = 'bulk_grade_import';"
        ))
        .unwrap();
    }
    let bytes = std::fs::metadata(&copy).unwrap().len();
    println!(
        "copy with {EVENTS} grade events: {} MiB, made in {:.1} s",
        bytes >> 20,
        t.elapsed().as_secs_f64()
    );
    let mut study = Study::open(&study_path).unwrap();
    reset_peak();
    let before = peak_rss_mib().unwrap_or(f64::NAN);
    let t = Instant::now();
    let report = study.merge_from(&copy).unwrap();
    let seconds = t.elapsed().as_secs_f64();
    let peak = peak_rss_mib().unwrap_or(f64::NAN);
    assert_eq!(report.grades_added, EVENTS, "every event came in");
    println!(
        "merge: {seconds:.1} s ({:.0} events/s); resident memory {before:.0} MiB before, peak {peak:.0} MiB during (goal: under 300 MB whatever the copy's size)",
        EVENTS as f64 / seconds
    );
}
