//! The store's bound for the living-judgments files (`tests/bench/living_judgments.py`
//! writes them): the rows an import of them keeps — items, contexts, one row per ranked
//! list, one history row per grade — written by bare prepared inserts into tables of the
//! study's shape with their keys only (no secondary index, no trigger, no current
//! grades), in one transaction, WAL and `synchronous=FULL` like a study, with the page
//! cache an import has (128 MiB). The files are read and the rows made before the clock
//! starts. Run with
//! `PLUMBLINE_BENCH_FILES=DIR cargo test --release --test bench -- --ignored --nocapture store_bound`.

use std::time::Instant;

use plumbline::study::import::content_uid;
use plumbline::study::time::format_millis;

/// The data lines of a CSV file without quoting (as the benchmark writes them), split.
fn rows(dir: &std::path::Path, name: &str) -> Vec<Vec<String>> {
    let text = std::fs::read_to_string(dir.join(name)).unwrap();
    text.lines()
        .skip(1)
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

/// (ranker, context, items as JSON) of every list, in file order.
fn lists(dir: &std::path::Path) -> Vec<(String, String, String)> {
    let mut out: Vec<(String, String, Vec<String>)> = Vec::new();
    for r in rows(dir, "rankings.csv") {
        match out.last_mut() {
            Some(l) if l.0 == r[0] && l.1 == r[1] => l.2.push(r[2].clone()),
            _ => out.push((r[0].clone(), r[1].clone(), vec![r[2].clone()])),
        }
    }
    out.into_iter()
        .map(|(r, c, items)| (r, c, serde_json::to_string(&items).unwrap()))
        .collect()
}

#[test]
#[ignore = "benchmark: run in release with --ignored --nocapture and PLUMBLINE_BENCH_FILES"]
fn store_bound_of_the_living_judgments_files() {
    let Ok(dir) = std::env::var("PLUMBLINE_BENCH_FILES") else {
        println!("set PLUMBLINE_BENCH_FILES to the folder living_judgments.py wrote");
        return;
    };
    let dir = std::path::PathBuf::from(dir);
    let items = rows(&dir, "items.csv");
    let contexts = rows(&dir, "contexts.csv");
    let lists = lists(&dir);
    let epoch = format_millis(0);
    let grades: Vec<(String, Vec<String>)> = rows(&dir, "grades.csv")
        .into_iter()
        .map(|g| {
            let parts = [&g[0], &g[1], &g[2], &g[3], &g[4], "", "", &epoch, ""];
            (content_uid(&parts), g)
        })
        .collect();
    let n = items.len() + contexts.len() + lists.len() + grades.len();

    let scratch = tempfile::tempdir().unwrap();
    let t = Instant::now();
    let mut conn = rusqlite::Connection::open(scratch.path().join("bound.sqlite")).unwrap();
    conn.pragma_update(None, "journal_mode", "WAL").unwrap();
    conn.pragma_update(None, "synchronous", "FULL").unwrap();
    conn.pragma_update(None, "cache_size", -131_072).unwrap();
    conn.execute_batch(
        "CREATE TABLE items(item_id TEXT PRIMARY KEY, title TEXT NOT NULL);
         CREATE TABLE contexts(context_id TEXT PRIMARY KEY, kind TEXT NOT NULL, text TEXT NOT NULL);
         CREATE TABLE ranked_lists(ranker TEXT NOT NULL, context_id TEXT NOT NULL, items TEXT NOT NULL,
           scores TEXT, PRIMARY KEY (ranker, context_id)) WITHOUT ROWID;
         CREATE TABLE grade_events(id INTEGER PRIMARY KEY, uid TEXT NOT NULL UNIQUE, reviewer TEXT NOT NULL,
           context_id TEXT NOT NULL, item_id TEXT NOT NULL, scale TEXT NOT NULL, action TEXT NOT NULL,
           value INTEGER, reason TEXT NOT NULL DEFAULT '', seconds REAL, graded_at TEXT NOT NULL,
           note TEXT NOT NULL DEFAULT '');",
    )
    .unwrap();
    let tx = conn.transaction().unwrap();
    {
        let mut item = tx.prepare("INSERT INTO items VALUES (?1, ?2)").unwrap();
        for i in &items {
            item.execute([&i[0], &i[1]]).unwrap();
        }
        let mut context = tx
            .prepare("INSERT INTO contexts VALUES (?1, ?2, ?3)")
            .unwrap();
        for c in &contexts {
            context.execute([&c[0], &c[1], &c[2]]).unwrap();
        }
        let mut list = tx
            .prepare("INSERT INTO ranked_lists(ranker, context_id, items) VALUES (?1, ?2, ?3)")
            .unwrap();
        for (r, c, json) in &lists {
            list.execute([r, c, json]).unwrap();
        }
        let mut grade = tx
            .prepare(
                "INSERT INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, graded_at)
                 VALUES (?1, ?2, ?3, ?4, ?5, 'grade', ?6, ?7)",
            )
            .unwrap();
        for (uid, g) in &grades {
            grade
                .execute([uid, &g[0], &g[1], &g[2], &g[3], &g[4], &epoch])
                .unwrap();
        }
    }
    tx.commit().unwrap();
    drop(conn);
    let seconds = t.elapsed().as_secs_f64();
    println!(
        "{} items, {} contexts, {} lists, {} grades",
        items.len(),
        contexts.len(),
        lists.len(),
        grades.len()
    );
    println!(
        "store bound: {n} rows in {seconds:.3} s ({:.0} rows/s)",
        n as f64 / seconds
    );
}
