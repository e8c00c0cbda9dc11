//! Scoring benchmark (ignored: figures, not assertions). Run with
//! `cargo test --release --test bench -- --ignored --nocapture bench_scoring`; set
//! `PLUMBLINE_BENCH_DIR` to also write the arrays for `tests/bench/sklearn_ndcg.py`.

use std::time::Instant;

use plumbline::analysis::scoring::scoreboard::{self, ScoreSettings};
use plumbline::core::scale::preset;
use plumbline::core::stats::Rng;
use plumbline::study::snapshot::{ContextInfo, GradeRow, ItemInfo, Snapshot};

const CONTEXTS: usize = 20_000;
const DEPTH: usize = 100;
const RANKERS: usize = 3;

/// Every context judges the same 100 items with random levels; each ranker orders them
/// by level plus ranker-specific noise, so the ideal DCG is the same for all rankers and
/// equals what scikit-learn computes from the list alone.
fn synthetic() -> (Snapshot, Vec<u8>) {
    let mut rng = Rng::new(7);
    let items = (0..DEPTH)
        .map(|i| ItemInfo {
            id: format!("i{i:03}"),
            title: String::new(),
            category: String::new(),
            is_new: i % 10 == 0,
        })
        .collect();
    let contexts = (0..CONTEXTS)
        .map(|c| ContextInfo {
            anchor_item: None,
            id: format!("c{c:05}"),
            kind: "query".into(),
            text: String::new(),
            segment: String::new(),
        })
        .collect();
    let mut grades = Vec::with_capacity(CONTEXTS * DEPTH);
    let mut levels = vec![0u8; CONTEXTS * DEPTH];
    for c in 0..CONTEXTS {
        for i in 0..DEPTH {
            let level = match rng.below(100) {
                0..=69 => 0,
                70..=84 => 1,
                85..=94 => 2,
                _ => 3,
            };
            levels[c * DEPTH + i] = level;
            grades.push(GradeRow {
                reviewer: 0,
                context: c as u32,
                item: i as u32,
                scale: 0,
                value: Some(level),
                seconds: None,
                day: 0,
            });
        }
    }
    // lists[r][c] and, for the script, the level at each rank: [r][c][rank].
    let mut ranked_levels = Vec::with_capacity(RANKERS * CONTEXTS * DEPTH);
    let lists: Vec<Vec<Vec<u32>>> = (0..RANKERS)
        .map(|r| {
            (0..CONTEXTS)
                .map(|c| {
                    let mut keyed: Vec<(f64, u32)> = (0..DEPTH as u32)
                        .map(|i| {
                            let signal = levels[c * DEPTH + i as usize] as f64;
                            (signal + (1.5 + 0.3 * r as f64) * rng.normal(), i)
                        })
                        .collect();
                    keyed.sort_by(|a, b| b.0.total_cmp(&a.0));
                    keyed.into_iter().map(|(_, i)| i).collect::<Vec<u32>>()
                })
                .collect()
        })
        .collect();
    for per_context in &lists {
        for (c, list) in per_context.iter().enumerate() {
            ranked_levels.extend(list.iter().map(|i| levels[c * DEPTH + *i as usize]));
        }
    }
    let snapshot = Snapshot {
        name: "bench".into(),
        stored_baseline: None,
        stored_active_scale: None,
        pool_depth: 10,
        items,
        contexts,
        rankers: (0..RANKERS).map(|r| format!("ranker-{r}")).collect(),
        lists,
        scales: vec![preset(4).unwrap()],
        reviewers: vec!["bench".into()],
        grades,
        settled: Vec::new(),
        outside: Default::default(),
        ..Default::default()
    };
    (snapshot, ranked_levels)
}

fn median_seconds(runs: usize, mut f: impl FnMut()) -> f64 {
    let mut times: Vec<f64> = (0..runs)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed().as_secs_f64()
        })
        .collect();
    times.sort_by(f64::total_cmp);
    times[runs / 2]
}

#[test]
#[ignore = "benchmark: run in release with --ignored --nocapture"]
fn scoring_twenty_thousand_contexts() {
    let (snapshot, ranked_levels) = synthetic();
    if let Ok(dir) = std::env::var("PLUMBLINE_BENCH_DIR") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(format!("{dir}/ranked_levels.u8"), &ranked_levels).unwrap();
    }
    let base = ScoreSettings {
        ks: vec![10],
        baseline: Some("ranker-0".into()),
        ..Default::default()
    };
    let metrics_only = ScoreSettings {
        bootstrap_resamples: 0,
        randomization_resamples: 0,
        ..base.clone()
    };
    let mut board = None;
    let t_metrics = median_seconds(5, || {
        board = Some(scoreboard::build(&snapshot, &metrics_only).unwrap());
    });
    let board = board.unwrap();
    let t_full = median_seconds(3, || {
        scoreboard::build(&snapshot, &base).unwrap();
    });
    println!("contexts {CONTEXTS}, depth {DEPTH}, rankers {RANKERS}");
    for r in &board.rankers {
        println!(
            "{} mean ndcg@10 = {:.12}",
            r.ranker, r.metrics["ndcg@10"].mean
        );
    }
    println!(
        "metrics only (ndcg, dcg, precision, err, judged @10, rr): {:.3} s",
        t_metrics
    );
    println!(
        "full pass with bootstrap B=2000 and randomization R=10000: {:.3} s (statistics {:.3} s)",
        t_full,
        t_full - t_metrics
    );
}
