//! Import benchmark (ignored): one million ranking rows through Plumbline's importer
//! against a bare rusqlite prepared-insert loop into the same table shape. Run with
//! `cargo test --release --test bench -- --ignored --nocapture bench_import`.

use std::time::Instant;

use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

const CONTEXTS: usize = 10_000;
const DEPTH: usize = 50;
const RANKERS: usize = 2;

#[test]
#[ignore = "benchmark: run in release with --ignored --nocapture"]
fn import_one_million_ranking_rows() {
    let dir = tempfile::tempdir().unwrap();
    let mut items = String::from("item_id,title\n");
    for i in 0..5000 {
        items.push_str(&format!("it{i},Item {i}\n"));
    }
    let mut contexts = String::from("context_id,kind\n");
    for c in 0..CONTEXTS {
        contexts.push_str(&format!("c{c},query\n"));
    }
    let mut rankings = String::from("ranker,context_id,item_id,rank\n");
    let mut rows = Vec::with_capacity(CONTEXTS * DEPTH * RANKERS);
    for r in 0..RANKERS {
        for c in 0..CONTEXTS {
            for k in 0..DEPTH {
                let item = (c * 7 + k * 13 + r * 101) % 5000;
                rankings.push_str(&format!("r{r},c{c},it{item},{}\n", k + 1));
                rows.push((
                    format!("r{r}"),
                    format!("c{c}"),
                    k as i64 + 1,
                    format!("it{item}"),
                ));
            }
        }
    }
    // Items cycle within a list only if DEPTH·13 wraps 5000; it does not, so no duplicates.
    let write = |name: &str, text: &str| {
        let p = dir.path().join(name);
        std::fs::write(&p, text).unwrap();
        Source::from_path(&p).unwrap()
    };
    let catalog = ImportSet {
        items: Some(write("items.csv", &items)),
        contexts: Some(write("contexts.csv", &contexts)),
        ..Default::default()
    };
    let ranking_source = write("rankings.csv", &rankings);

    let mut study = Study::create(&dir.path().join("bench.plumb")).unwrap();
    import::import(&mut study, &catalog).unwrap();
    let t = Instant::now();
    let report = import::import(
        &mut study,
        &ImportSet {
            rankings: Some(ranking_source),
            ..Default::default()
        },
    )
    .unwrap();
    let ours = t.elapsed().as_secs_f64();
    assert_eq!(report[0].added as usize, rows.len());

    // The store's limit: the same table shape, one transaction, one prepared insert.
    let mut bare = rusqlite::Connection::open(dir.path().join("bare.sqlite")).unwrap();
    bare.pragma_update(None, "journal_mode", "WAL").unwrap();
    bare.pragma_update(None, "synchronous", "FULL").unwrap();
    bare.execute_batch(
        "CREATE TABLE ranked_items(ranker TEXT NOT NULL, context_id TEXT NOT NULL, rank INTEGER NOT NULL,
           item_id TEXT NOT NULL, score REAL, PRIMARY KEY (ranker, context_id, rank),
           UNIQUE (ranker, context_id, item_id)) WITHOUT ROWID;",
    )
    .unwrap();
    let t = Instant::now();
    let tx = bare.transaction().unwrap();
    {
        let mut insert = tx
            .prepare("INSERT INTO ranked_items(ranker, context_id, rank, item_id) VALUES (?1, ?2, ?3, ?4)")
            .unwrap();
        for (r, c, k, i) in &rows {
            insert.execute(rusqlite::params![r, c, k, i]).unwrap();
        }
    }
    tx.commit().unwrap();
    let bare_seconds = t.elapsed().as_secs_f64();
    let n = rows.len() as f64;
    println!("rows {}", rows.len());
    println!(
        "plumbline import: {ours:.2} s ({:.0} rows/s, parsing and checks included)",
        n / ours
    );
    println!(
        "bare prepared inserts: {bare_seconds:.2} s ({:.0} rows/s)",
        n / bare_seconds
    );
    println!(
        "ratio of rates (plumbline / bare): {:.2}",
        bare_seconds / ours
    );
}
