//! Scoring lists from a file without importing them (`score --rankings`), and the
//! pool-bias figures, against an independent computation
//! (`tests/reference/gen_pool_bias.py`, the leave-one-out test of Zobel 1998, SIGIR).

use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::cli::{args, plumbline};
use crate::common::Fixture;

fn fixture_file(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/pool_bias")
        .join(name)
}

/// A study holding the fixture's catalog, pooled rankers and grades.
fn pooled_study(fixture: &Fixture, name: &str) -> PathBuf {
    pooled_study_with(fixture, name, &fixture_file("rankings.csv"))
}

/// The same, with the pooled rankers' lists from `rankings`.
fn pooled_study_with(fixture: &Fixture, name: &str, rankings: &Path) -> PathBuf {
    let study = fixture.path(name);
    let s = study.to_str().unwrap();
    run(args!["new", s]);
    let f = |n: &str| fixture_file(n).to_str().unwrap().to_string();
    run(args![
        "import",
        s,
        "--items",
        &f("items.csv"),
        "--contexts",
        &f("contexts.csv"),
        "--scales",
        &f("scales.csv"),
        "--rankings",
        rankings.to_str().unwrap(),
        "--grades",
        &f("grades.csv")
    ]);
    study
}

/// A rankings file's rows reordered so that no list's rows are together: every list's
/// first row, then every list's second row, and so on.
fn scattered(text: &str) -> String {
    let mut lines = text.lines();
    let header = lines.next().unwrap();
    let mut position: std::collections::HashMap<String, usize> = Default::default();
    let mut rows: Vec<(usize, usize, &str)> = Vec::new();
    for (n, line) in lines.enumerate() {
        let cells: Vec<&str> = line.splitn(3, ',').collect();
        let k = position
            .entry(format!("{},{}", cells[0], cells[1]))
            .or_default();
        rows.push((*k, n, line));
        *k += 1;
    }
    rows.sort();
    let mut out = format!("{header}\n");
    for (_, _, line) in rows {
        out.push_str(line);
        out.push('\n');
    }
    out
}

fn run(args: &[&std::ffi::OsStr]) -> String {
    let out = plumbline(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn score_json(study: &Path, files: &[&str]) -> Value {
    let paths: Vec<PathBuf> = files.iter().map(|f| fixture_file(f)).collect();
    score_json_of(study, &paths)
}

fn score_json_of(study: &Path, files: &[PathBuf]) -> Value {
    let mut a: Vec<String> = [
        "score",
        study.to_str().unwrap(),
        "--k",
        "3,5",
        "--format",
        "json",
    ]
    .map(String::from)
    .to_vec();
    for f in files {
        a.push("--rankings".into());
        a.push(f.to_str().unwrap().to_string());
    }
    let a: Vec<&std::ffi::OsStr> = a.iter().map(std::ffi::OsStr::new).collect();
    serde_json::from_str(&run(&a)).unwrap()
}

fn close(a: &Value, b: &Value, what: &str) {
    match (a.as_f64(), b.as_f64()) {
        (Some(x), Some(y)) => assert!((x - y).abs() < 1e-12, "{what}: {x} vs {y}"),
        _ => assert_eq!(a, b, "{what}"),
    }
}

#[test]
fn pool_bias_equals_the_independent_computation() {
    let cases = reference_cases();
    assert!(cases.len() >= 3, "the reference must keep its cases");
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "pool.plumb");
    for case in &cases {
        let name = case["name"].as_str().unwrap();
        let files: Vec<&str> = case["rankings_files"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f.as_str().unwrap())
            .collect();
        let board = score_json(&study, &files);
        agrees_with_the_reference(&board, case, name);
    }
}

/// The reference's cases (`tests/reference/gen_pool_bias.py`, Zobel 1998's leave-one-out
/// test): its contexts scored, contexts left out, means and pool-bias rows.
fn reference_cases() -> Vec<Value> {
    let expected: Value = serde_json::from_str(
        &std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/pool_bias_expected.json"),
        )
        .unwrap(),
    )
    .unwrap();
    expected["cases"].as_array().unwrap().clone()
}

fn agrees_with_the_reference(board: &Value, case: &Value, name: &str) {
    assert_eq!(board["contexts_scored"], case["contexts_scored"], "{name}");
    let left_out: u64 = board["rankings_files"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["contexts_left_out"].as_u64().unwrap())
        .sum();
    assert_eq!(
        left_out,
        case["contexts_left_out_of_files"].as_u64().unwrap(),
        "{name}"
    );
    for (ranker, means) in case["means"].as_object().unwrap() {
        let ours = board["rankers"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["ranker"] == ranker.as_str())
            .unwrap_or_else(|| panic!("{name}: ranker {ranker} missing"));
        for (metric, value) in means.as_object().unwrap() {
            close(
                &ours["metrics"][metric]["mean"],
                value,
                &format!("{name} {ranker} {metric}"),
            );
        }
    }
    let theirs = case["pool_bias"].as_array().unwrap();
    let ours = board["pool_bias"].as_array().unwrap();
    assert_eq!(ours.len(), theirs.len(), "{name}: pool-bias rows");
    for t in theirs {
        let o = ours
            .iter()
            .find(|o| o["ranker"] == t["ranker"] && o["metric"] == t["metric"])
            .unwrap_or_else(|| panic!("{name}: no row for {} {}", t["ranker"], t["metric"]));
        for field in [
            "mean",
            "mean_left_out",
            "drop",
            "contexts",
            "unique_pairs",
            "judged_left_out",
            "kendall_tau_b",
        ] {
            close(
                &o[field],
                &t[field],
                &format!("{name} {} {} {field}", t["ranker"], t["metric"]),
            );
        }
    }
}

#[test]
fn lists_scattered_through_their_files_give_the_reference_figures() {
    // Files whose lists are not together are read again, sorted by list: by import (the
    // study's own lists) and by `score --rankings` alike.
    let fixture = Fixture::new();
    let scattered_copy = |name: &str| -> PathBuf {
        let text = std::fs::read_to_string(fixture_file(name)).unwrap();
        let copy = scattered(&text);
        assert_ne!(copy, text, "{name} must change order");
        fixture.write(&format!("scattered_{name}"), &copy)
    };
    let study = pooled_study_with(&fixture, "scattered.plumb", &scattered_copy("rankings.csv"));
    for case in reference_cases() {
        let name = case["name"].as_str().unwrap();
        let files: Vec<PathBuf> = case["rankings_files"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| scattered_copy(f.as_str().unwrap()))
            .collect();
        agrees_with_the_reference(&score_json_of(&study, &files), &case, name);
    }
}

#[test]
fn the_file_path_and_the_import_path_give_the_same_scores() {
    // The candidate file has score-ordered lists with a tie, an item the catalog lacks,
    // a context the study lacks, a context without a list and short lists.
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "file.plumb");
    let before = std::fs::read(&study).unwrap();
    let from_file = score_json(&study, &["candidate.csv"]);
    assert!(
        std::fs::read(&study).unwrap() == before,
        "scoring from a file must not write the study"
    );
    let summary = &from_file["rankings_files"][0];
    assert_eq!(summary["rankers"], serde_json::json!(["delta"]));
    assert_eq!(summary["contexts_left_out"], 1);
    assert!(summary["unknown_items"].as_u64().unwrap() >= 1);

    // The same lists imported: the unknown item added to the catalog (ungraded, so just
    // as unjudged) and the unknown context's rows dropped, as the file path does.
    let imported = pooled_study(&fixture, "imported.plumb");
    let text = std::fs::read_to_string(fixture_file("candidate.csv")).unwrap();
    let items = std::fs::read_to_string(fixture_file("items.csv")).unwrap();
    let known: Vec<&str> = items
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap())
        .collect();
    let contexts = std::fs::read_to_string(fixture_file("contexts.csv")).unwrap();
    let known_contexts: Vec<&str> = contexts
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap())
        .collect();
    let mut kept = String::from("ranker,context_id,item_id,score\n");
    let mut extra = String::from("item_id,title\n");
    for line in text.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        if !known_contexts.contains(&cells[1]) {
            continue;
        }
        if !known.contains(&cells[2]) && !extra.contains(&format!("\n{},", cells[2])) {
            extra.push_str(&format!("{},stand-in\n", cells[2]));
        }
        kept.push_str(line);
        kept.push('\n');
    }
    let kept_path = fixture.write("kept.csv", &kept);
    let extra_path = fixture.write("extra_items.csv", &extra);
    run(args![
        "import",
        imported.to_str().unwrap(),
        "--items",
        extra_path.to_str().unwrap(),
        "--rankings",
        kept_path.to_str().unwrap()
    ]);
    let from_import = score_json(&imported, &[]);
    let find = |board: &Value| -> Value {
        board["rankers"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["ranker"] == "delta")
            .unwrap()
            .clone()
    };
    let (a, b) = (find(&from_file), find(&from_import));
    assert_eq!(a["from_file"], "candidate.csv");
    let metrics = b["metrics"].as_object().unwrap();
    assert!(metrics.len() >= 10);
    for (metric, summary) in metrics {
        for field in ["mean", "ci_low", "ci_high"] {
            close(&a["metrics"][metric][field], &summary[field], metric);
        }
    }
    let (pa, pb) = (
        a["per_context"].as_array().unwrap(),
        b["per_context"].as_array().unwrap(),
    );
    assert_eq!(pa.len(), pb.len());
    for (x, y) in pa.iter().zip(pb) {
        for (key, value) in y.as_object().unwrap() {
            close(&x[key], value, key);
        }
    }
}

#[test]
fn a_file_ranker_the_study_has_replaces_it_and_says_so() {
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "replace.plumb");
    let board = score_json(&study, &["candidate_replaces.csv"]);
    assert_eq!(
        board["rankings_files"][0]["replaced"],
        serde_json::json!(["beta"])
    );
    let text = run(args![
        "score",
        study.to_str().unwrap(),
        "--rankings",
        fixture_file("candidate_replaces.csv").to_str().unwrap()
    ]);
    assert!(
        text.contains("beta (replaces the study's lists of beta for this run)"),
        "{text}"
    );
    assert!(text.contains("Pool bias"), "{text}");
}

#[test]
fn bad_rows_in_a_rankings_file_are_refused_with_line_and_column() {
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "bad.plumb");
    let bad = fixture.write(
        "bad.csv",
        "ranker,context_id,item_id,rank\nnew,c01,it01,1\nnew,c01,it02,x\n",
    );
    let out = plumbline(args![
        "score",
        study.to_str().unwrap(),
        "--rankings",
        bad.to_str().unwrap()
    ]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("bad.csv:3:4: rank must be a positive integer, got \"x\""),
        "{stderr}"
    );
}

#[test]
fn a_file_ranker_judged_less_than_the_pool_gets_a_caution() {
    // Lists of items nobody judged: judged@k far below any pooled ranker's.
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "caution.plumb");
    let mut text = String::from("ranker,context_id,item_id,rank\n");
    for c in 1..=12 {
        for (rank, item) in ["zz1", "zz2", "it01"].iter().enumerate() {
            text.push_str(&format!("fresh,c{c:02},{item},{}\n", rank + 1));
        }
    }
    let file = fixture.write("fresh.csv", &text);
    let out = run(args![
        "score",
        study.to_str().unwrap(),
        "--k",
        "3",
        "--rankings",
        file.to_str().unwrap()
    ]);
    assert!(
        out.contains("fresh (from fresh.csv) has") && out.contains("likely biased low"),
        "{out}"
    );
}

/// Written rule: a ranker from a file with no list for a scored context is scored there
/// as an empty list (every metric 0, common practice: a ranker that returns nothing
/// finds nothing), and the board counts those contexts in a `missing_lists` caution.
#[test]
fn a_file_ranker_missing_lists_is_scored_empty_and_counted() {
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "missing.plumb");
    let file = fixture.write(
        "partial.csv",
        "ranker,context_id,item_id,rank\npartial,c01,it01,1\npartial,c02,it01,1\n",
    );
    let out = run(args![
        "score",
        study.to_str().unwrap(),
        "--k",
        "3",
        "--rankings",
        file.to_str().unwrap(),
        "--format",
        "json"
    ]);
    let board: Value = serde_json::from_str(&out).unwrap();
    let scored = board["contexts_scored"].as_u64().unwrap() as usize;
    let partial = board["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["ranker"] == "partial")
        .unwrap();
    let rows = partial["per_context"].as_array().unwrap();
    let with_list = rows
        .iter()
        .filter(|r| r["context_id"] == "c01" || r["context_id"] == "c02")
        .count();
    assert!(with_list >= 1 && scored > with_list, "{scored} {with_list}");
    for row in rows
        .iter()
        .filter(|r| r["context_id"] != "c01" && r["context_id"] != "c02")
    {
        assert_eq!(row["ndcg@3"], 0.0, "{row}");
        assert_eq!(
            row["rbp_residual"], 1.0,
            "an empty list leaves all of RBP unseen"
        );
    }
    let codes: Vec<&str> = board["caution_codes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let at = codes.iter().position(|c| *c == "missing_lists").unwrap();
    let words = board["cautions"][at].as_str().unwrap();
    let want = format!(
        "partial (from partial.csv) has no list for {} of the {scored} scored contexts",
        scored - with_list
    );
    assert!(words.starts_with(&want), "{words}");
}

/// Written rule: the pool is the study's lists as stored and judged. A file that
/// replaces a ranker for one run (beta here) scores the file's lists, but beta's stored
/// lists stay in the pool, so the other rankers' pool-bias figures do not move. Had the
/// file's lists joined the pool, alpha's top-3 items in c01 (it01, it02, it03, which the
/// file also ranks first for beta) would no longer be alpha's alone.
#[test]
fn a_replaced_ranker_keeps_its_stored_lists_in_the_pool() {
    let fixture = Fixture::new();
    let study = pooled_study(&fixture, "pool.plumb");
    let rows = |board: &Value, ranker: &str| -> Vec<Value> {
        board["pool_bias"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|p| p["ranker"] == ranker)
            .map(|p| serde_json::json!([p["metric"], p["unique_pairs"], p["mean_left_out"]]))
            .collect()
    };
    let alone = score_json(&study, &[]);
    let replaced = score_json(&study, &["candidate_replaces.csv"]);
    for ranker in ["alpha", "gamma"] {
        assert_eq!(rows(&alone, ranker), rows(&replaced, ranker), "{ranker}");
    }
    assert_ne!(rows(&alone, "beta"), rows(&replaced, "beta"));
}
