//! The demo study: it imports cleanly, matches its README, regenerates byte-for-byte,
//! and tells the story it claims, measured with the project's own engines.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use plumbline::analysis::agreement;
use plumbline::analysis::scoring::scoreboard::{self, ScoreSettings, Segment};
use plumbline::study::Study;

fn committed() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-catalog")
}

fn files_under(root: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            if path.is_dir() {
                stack.push(path);
            } else {
                let rel = path
                    .strip_prefix(root)
                    .unwrap()
                    .to_string_lossy()
                    .into_owned();
                out.insert(rel, std::fs::read(&path).unwrap());
            }
        }
    }
    out
}

#[test]
fn regeneration_reproduces_the_committed_files() {
    let dir = tempfile::tempdir().unwrap();
    plumbline::demo::generate::write_demo_catalog(dir.path()).unwrap();
    let fresh = files_under(dir.path());
    let kept = files_under(&committed());
    assert_eq!(
        fresh.keys().collect::<Vec<_>>(),
        kept.keys().collect::<Vec<_>>(),
        "file lists differ"
    );
    for (name, bytes) in &fresh {
        assert!(
            kept[name] == *bytes,
            "{name} differs from the committed demo-catalog"
        );
    }
    let images = fresh.keys().filter(|n| n.ends_with(".png")).count();
    assert_eq!(images, 240);
    assert!(
        fresh
            .iter()
            .filter(|(n, _)| n.ends_with(".png"))
            .all(|(_, b)| b.len() <= 8 * 1024)
    );
}

/// Reads the `| what | count |` table of the catalog README.
fn readme_counts() -> BTreeMap<String, String> {
    let text = std::fs::read_to_string(committed().join("README.md")).unwrap();
    text.lines()
        .filter_map(|l| {
            let cells: Vec<&str> = l.split('|').map(str::trim).collect();
            (cells.len() == 4
                && !cells[1].is_empty()
                && cells[1] != "what"
                && !cells[1].starts_with("---"))
            .then(|| (cells[1].to_string(), cells[2].to_string()))
        })
        .collect()
}

fn demo_study() -> (tempfile::TempDir, Study) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    let study = Study::open(&path).unwrap();
    (dir, study)
}

#[test]
fn the_demo_study_matches_its_readme() {
    let (_dir, study) = demo_study();
    let counts = study.counts().unwrap();
    let readme = readme_counts();
    let number = |key: &str| -> u64 {
        readme[key]
            .split_whitespace()
            .next()
            .unwrap()
            .parse()
            .unwrap()
    };
    assert_eq!(counts.items, number("items"));
    assert_eq!(
        counts.contexts,
        number("query contexts (head / torso / tail)") + number("anchor contexts")
    );
    assert_eq!(counts.rankers, 3);
    assert_eq!(
        counts.reviewers,
        number("reviewers") + number("machine judges")
    );
    let snapshot = study.snapshot().unwrap();
    assert_eq!(
        snapshot.items.iter().filter(|i| i.is_new).count() as u64,
        number("new items")
    );
    let per_scale = |name: &str| {
        let s = snapshot.scale_index(name).unwrap() as u32;
        snapshot.grades.iter().filter(|g| g.scale == s).count() as u64
    };
    assert_eq!(per_scale("fit4"), number("fit4 grades"));
    assert_eq!(per_scale("useful2"), number("useful2 grades"));
    let cant_judge = snapshot.grades.iter().filter(|g| g.value.is_none()).count() as u64;
    assert_eq!(cant_judge, number("can't-judge grades"));
    // Every pair of the depth-10 pool is graded on fit4 by at least one reviewer.
    let fit4 = snapshot.scale_index("fit4").unwrap() as u32;
    let lists: Vec<(u32, Vec<u32>)> = snapshot
        .lists
        .iter()
        .flat_map(|per_context| {
            per_context
                .iter()
                .enumerate()
                .map(|(c, l)| (c as u32, l.clone()))
        })
        .collect();
    let pool = plumbline::core::pooling::depth_pool(&lists, 10);
    assert_eq!(pool.len() as u64, number("pooled pairs"));
    for (context, item) in &pool {
        assert!(
            snapshot.grades.iter().any(|g| g.scale == fit4
                && g.context == *context
                && g.item == *item
                && g.value.is_some()),
            "pooled pair {context}/{item} has no fit4 grade"
        );
    }
}

#[test]
fn the_demo_tells_its_story() {
    let (_dir, study) = demo_study();
    let snapshot = study.snapshot().unwrap();
    let settings = |segment| ScoreSettings {
        scale: Some("fit4".into()),
        ks: vec![10],
        baseline: Some("lexical-prod".into()),
        segment,
        bootstrap_resamples: 500,
        randomization_resamples: 2000,
        ..Default::default()
    };
    let mean = |board: &scoreboard::Scoreboard, ranker: &str| {
        board
            .rankers
            .iter()
            .find(|r| r.ranker == ranker)
            .unwrap()
            .metrics["ndcg@10"]
            .mean
    };
    let new = scoreboard::build(&snapshot, &settings(Segment::New)).unwrap();
    assert!(
        mean(&new, "hybrid-cand") > mean(&new, "lexical-prod") + 0.2,
        "hybrid must clearly beat the baseline on new items"
    );
    let all = scoreboard::build(&snapshot, &settings(Segment::All)).unwrap();
    let margin = mean(&all, "hybrid-cand") - mean(&all, "lexical-prod");
    assert!(
        (0.0..0.08).contains(&margin),
        "overall margin {margin} should be small and positive"
    );
    let embed_gap = (mean(&all, "embed-cand") - mean(&all, "lexical-prod")).abs();
    assert!(
        embed_gap < 0.03,
        "embedding candidate should be close to the baseline: {embed_gap}"
    );

    let fit4 = snapshot.scale_index("fit4").unwrap();
    let report = agreement::build(&snapshot, fit4, None, 200, 1);
    assert_eq!(report.pairs.len(), 3);
    for pair in &report.pairs {
        assert!(
            (0.6..=0.75).contains(&pair.kappa_quadratic),
            "{} × {}: quadratic kappa {}",
            pair.reviewer_a,
            pair.reviewer_b,
            pair.kappa_quadratic
        );
    }
}

/// Home counts a machine judge's own grades (kept outside the panel), not zero: the
/// demo's judge graded every row of demo-catalog/machine-grades.csv.
#[test]
fn home_counts_the_machine_judges_own_grades() {
    let (_dir, study) = demo_study();
    let rows = std::fs::read_to_string(committed().join("machine-grades.csv")).unwrap();
    let fit4_rows = rows
        .lines()
        .skip(1)
        .filter(|l| l.contains(",fit4,"))
        .count();
    let home = plumbline::analysis::views::home::of_study(&study).unwrap();
    let judge = home
        .reviewers
        .iter()
        .find(|r| r.reviewer == "judge-sorrel")
        .unwrap();
    assert!(judge.machine);
    assert_eq!(judge.grades, fit4_rows);
    assert!(
        home.reviewers
            .iter()
            .filter(|r| r.reviewer != "judge-sorrel")
            .all(|r| !r.machine)
    );
}

/// Home counts from the snapshot what `counts` counts in the file; the demo holds a
/// machine judge kept apart from the panel, whose grades are current grades too.
#[test]
fn counts_beside_a_snapshot_equal_the_files_counts() {
    let (_dir, study) = demo_study();
    let snapshot = study.snapshot().unwrap();
    assert!(!snapshot.machine_grades.is_empty());
    assert_eq!(
        study.counts_beside(&snapshot).unwrap(),
        study.counts().unwrap()
    );
}
