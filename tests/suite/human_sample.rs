//! The human sample (`plumbline sample`) and the estimates from a machine judge
//! corrected by it (`plumbline score --machine`), as processes on small hand-made
//! studies. Expected estimates come from an independent computation: per-context
//! metrics in plain Python and the estimates by ppi-python
//! (`tests/reference/gen_ppi_study.py`, library version in `ppi_study_expected.json`).

use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::cli::{args, plumbline};
use crate::common::{Fixture, study_dump};

fn catalog(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/pool_bias")
        .join(name)
        .to_str()
        .unwrap()
        .to_string()
}

/// The pool-bias catalog and rankings with the grades of `tests/fixtures/ppi_study`:
/// people on c01–c07 (c07 lacks one pair), the machine judge `judge-q` everywhere.
fn study(fixture: &Fixture) -> PathBuf {
    let study = fixture.path("ppi.plumb");
    let s = study.to_str().unwrap();
    let grades = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/ppi_study/grades.csv");
    run(args!["new", s]);
    run(args![
        "import",
        s,
        "--items",
        &catalog("items.csv"),
        "--contexts",
        &catalog("contexts.csv"),
        "--scales",
        &catalog("scales.csv"),
        "--rankings",
        &catalog("rankings.csv"),
        "--grades",
        grades.to_str().unwrap()
    ]);
    study
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

/// Exit code 2 with a message containing `words`, and the study unchanged.
fn refused(study: &Path, args: &[&std::ffi::OsStr], words: &str) {
    let before = (study_dump(study), sample_rows(study));
    let out = plumbline(args);
    assert_eq!(
        out.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains(words), "{err}");
    assert_eq!(before, (study_dump(study), sample_rows(study)));
}

/// Stored draws: (context, position, draw, seed).
type Draws = Vec<(String, i64, i64, i64)>;
/// Stored queue entries: (reviewer, position, context, item).
type Queues = Vec<(String, i64, String, String)>;

/// The draws and queues as stored.
fn sample_rows(study: &Path) -> (Draws, Queues) {
    let conn = rusqlite::Connection::open(study).unwrap();
    let draws = conn
        .prepare("SELECT context_id, position, draw, seed FROM sample_draws ORDER BY position")
        .unwrap()
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?)))
        .unwrap()
        .map(Result::unwrap)
        .collect();
    let queues = conn
        .prepare("SELECT reviewer, position, context_id, item_id FROM queue_entries ORDER BY reviewer, position")
        .unwrap()
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?)))
        .unwrap()
        .map(Result::unwrap)
        .collect();
    (draws, queues)
}

fn close(ours: &Value, theirs: &Value, what: &str) {
    let (a, b) = (ours.as_f64().unwrap(), theirs.as_f64().unwrap());
    assert!((a - b).abs() <= 1e-9, "{what}: ours {a}, reference {b}");
}

/// Per-context NDCG@k and precision@k (Järvelin & Kekäläinen 2002; no relevant item =
/// 0 in estimates) and the estimates of ppi-python 0.2.3 (`ppi_mean_pointestimate`,
/// `ppi_mean_ci` alpha 0.05, `classical_mean_ci`), computed in gen_ppi_study.py.
#[test]
fn estimates_on_a_small_study_match_the_independent_computation() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    refused(
        &study,
        args!["score", s, "--machine", "judge-q"],
        "no human sample",
    );
    run(args![
        "sample",
        s,
        "--contexts",
        "12",
        "--seed",
        "5",
        "--reviewer",
        "moss"
    ]);
    let out = run(args![
        "score",
        s,
        "--machine",
        "judge-q",
        "--k",
        "3,5",
        "--format",
        "json"
    ]);
    let ours: Value = serde_json::from_str(&out).unwrap();
    let path = format!(
        "{}/tests/reference/ppi_study_expected.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let theirs: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let fields = [
        "ci_low",
        "ci_high",
        "human_only_mean",
        "human_only_ci_low",
        "human_only_ci_high",
        "machine_only_mean",
    ];
    for (list, value) in [("estimates", "estimate"), ("estimate_comparisons", "diff")] {
        let expected = theirs[list].as_array().unwrap();
        assert!(!expected.is_empty());
        for want in expected {
            let got = ours[list]
                .as_array()
                .unwrap()
                .iter()
                .find(|e| e["ranker"] == want["ranker"] && e["metric"] == want["metric"])
                .unwrap_or_else(|| panic!("{list}: no row for {want}"));
            let what = format!("{list} {} {}", want["ranker"], want["metric"]);
            close(&got[value], &want["estimate"], &format!("{what} {value}"));
            for f in fields {
                close(&got[f], &want[f], &format!("{what} {f}"));
            }
            assert_eq!(got["n_human"], want["n_human"], "{what}");
            assert_eq!(got["n_machine"], want["n_machine"], "{what}");
        }
    }
    // The sample: all twelve drawn in one run, six complete, c07 pending.
    assert_eq!(ours["sample"]["drawn"], 12);
    assert_eq!(ours["sample"]["complete"], 6);
    assert_eq!(ours["sample"]["pending"], 6);
    assert_eq!(ours["sample"]["seeds"], serde_json::json!([5]));
}

/// The JSON contract of issue 30: exact field names of `estimates`,
/// `estimate_comparisons` and `sample`.
#[test]
fn score_machine_json_has_the_contracted_fields() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    run(args!["sample", s, "--contexts", "12", "--seed", "9"]);
    let out = run(args![
        "score",
        s,
        "--machine",
        "judge-q",
        "--target-width",
        "0.05",
        "--format",
        "json"
    ]);
    let v: Value = serde_json::from_str(&out).unwrap();
    let figures = [
        "ci_low",
        "ci_high",
        "lambda",
        "n_human",
        "n_machine",
        "human_only_mean",
        "human_only_ci_low",
        "human_only_ci_high",
        "machine_only_mean",
        "effective_human_contexts",
        "humans_needed",
    ];
    let e = &v["estimates"][0];
    for key in ["ranker", "metric", "estimate"].iter().chain(&figures) {
        assert!(e.get(*key).is_some(), "estimates lacks {key}: {e}");
    }
    let c = &v["estimate_comparisons"][0];
    for key in ["ranker", "baseline", "metric", "diff"]
        .iter()
        .chain(&figures)
    {
        assert!(
            c.get(*key).is_some(),
            "estimate_comparisons lacks {key}: {c}"
        );
    }
    for key in ["seeds", "drawn", "complete", "pending", "context_ids"] {
        assert!(v["sample"].get(key).is_some(), "sample lacks {key}");
    }
    // The plain scoreboard's fields stay.
    assert!(v["rankers"].is_array() && v["comparisons"].is_array());
    // Every metric score reports per context has an estimate per ranker (3 rankers).
    let per_context = v["rankers"][0]["per_context"][0].as_object().unwrap().len() - 1;
    assert_eq!(v["estimates"].as_array().unwrap().len(), 3 * per_context);
    for fmt in ["text", "csv"] {
        let out = run(args!["score", s, "--machine", "judge-q", "--format", fmt]);
        assert!(out.contains("judge-q") || fmt == "csv", "{out}");
        assert!(out.contains("ndcg@10"), "{fmt}: {out}");
    }
}

#[test]
fn bad_machine_judges_are_refused_with_the_study_unchanged() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    run(args![
        "sample",
        s,
        "--contexts",
        "3",
        "--seed",
        "1",
        "--reviewer",
        "moss"
    ]);
    refused(
        &study,
        args!["score", s, "--machine", "moss"],
        "is a person",
    );
    refused(
        &study,
        args!["score", s, "--machine", "nobody"],
        "no reviewer is called",
    );
    refused(
        &study,
        args!["score", s, "--machine", "judge-q", "--scale", "nope"],
        "unknown scale",
    );
    refused(
        &study,
        args!["score", s, "--machine", "judge-q", "--target-width", "0"],
        "--target-width",
    );
    refused(
        &study,
        args!["sample", s, "--contexts", "2", "--reviewer", "judge-q"],
        "machine judge",
    );
    refused(&study, args!["sample", s, "--contexts", "0"], "at least 1");
    // A scale the machine judge never graded (common practice: nothing to correct).
    let scales = fixture.write("two.csv", "scale,value,label\ntwo,0,no\ntwo,1,yes\n");
    run(args!["import", s, "--scales", scales.to_str().unwrap()]);
    refused(
        &study,
        args!["score", s, "--machine", "judge-q", "--scale", "two"],
        "graded no pair on scale two",
    );
}

/// Fewer than 2 complete sample contexts: no estimate, the reason said, exit 0.
#[test]
fn one_drawn_context_gives_no_estimate_and_says_why() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    run(args!["sample", s, "--contexts", "1", "--seed", "8"]);
    let v: Value = serde_json::from_str(&run(args![
        "score",
        s,
        "--machine",
        "judge-q",
        "--format",
        "json"
    ]))
    .unwrap();
    assert_eq!(v["estimates"].as_array().unwrap().len(), 0);
    assert_eq!(v["estimate_comparisons"].as_array().unwrap().len(), 0);
    let why = v["estimate_reason"].as_str().unwrap();
    assert!(why.contains("an estimate needs at least 2"), "{why}");
    let text = run(args!["score", s, "--machine", "judge-q"]);
    assert!(text.contains("No estimate:"), "{text}");
}

/// Draws are uniform without replacement and recorded in order with each run's seed;
/// asking for more than is left draws what is left; the pairs no person graded lead the
/// named reviewer's queue.
#[test]
fn sample_draws_record_order_and_queue_the_ungraded_pairs_first() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    run(args![
        "sample",
        s,
        "--contexts",
        "4",
        "--seed",
        "3",
        "--reviewer",
        "moss"
    ]);
    let out = run(args![
        "sample",
        s,
        "--contexts",
        "20",
        "--seed",
        "4",
        "--reviewer",
        "moss"
    ]);
    assert!(out.contains("Only 8 contexts"), "{out}");
    let (draws, queues) = sample_rows(&study);
    assert_eq!(draws.len(), 12);
    let positions: Vec<i64> = draws.iter().map(|d| d.1).collect();
    assert_eq!(positions, (1..=12).collect::<Vec<_>>());
    assert!(draws[..4].iter().all(|d| d.2 == 1 && d.3 == 3));
    assert!(draws[4..].iter().all(|d| d.2 == 2 && d.3 == 4));
    let mut ids: Vec<&str> = draws.iter().map(|d| d.0.as_str()).collect();
    ids.sort();
    ids.dedup();
    assert_eq!(ids.len(), 12, "no context drawn twice");
    // The only pool pairs no person graded are c07's it38 (dropped from the fixture's
    // people) and every pair of c08–c12: the queue starts with them, in draw order.
    let moss: Vec<(String, String)> = queues
        .iter()
        .filter(|q| q.0 == "moss")
        .map(|q| (q.2.clone(), q.3.clone()))
        .collect();
    let ungraded_first: Vec<&(String, String)> = moss
        .iter()
        .take_while(|(c, i)| c.as_str() >= "c08" || (c == "c07" && i == "it38"))
        .collect();
    assert!(
        ungraded_first
            .iter()
            .any(|(c, i)| c == "c07" && i == "it38")
    );
    let ungraded_total = moss
        .iter()
        .filter(|(c, i)| c.as_str() >= "c08" || (c == "c07" && i == "it38"))
        .count();
    assert_eq!(ungraded_first.len(), ungraded_total);
    refused(
        &study,
        args!["sample", s, "--contexts", "1"],
        "nothing is left",
    );
}

/// `export --report … --machine NAME`: the report's estimates section shows the same
/// figures as `score --machine --format json` at the focus cut-off, and links its
/// picture of the three intervals, written beside the report.
#[test]
fn the_report_shows_the_estimates_of_score_machine() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    run(args!["sample", s, "--contexts", "12", "--seed", "2"]);
    let report = fixture.path("r.md");
    let r = report.to_str().unwrap();
    run(args!["export", s, "--report", r, "--machine", "judge-q"]);
    let text = std::fs::read_to_string(&report).unwrap();
    let section = &text[text
        .find("## Estimates from the machine judge judge-q")
        .unwrap()..];
    assert!(section.contains("](r-estimates.svg)"), "{section}");
    let svg = std::fs::read_to_string(fixture.path("r-estimates.svg")).unwrap();
    assert!(svg.contains("<svg"));
    let json: Value = serde_json::from_str(&run(args![
        "score",
        s,
        "--machine",
        "judge-q",
        "--format",
        "json"
    ]))
    .unwrap();
    for e in json["estimates"].as_array().unwrap() {
        if e["metric"] != "ndcg@10" {
            continue;
        }
        let f = |k: &str| format!("{:.3}", e[k].as_f64().unwrap());
        let row = format!(
            "| {} | {} [{}, {}] | {} [{}, {}] | {} | {} |",
            e["ranker"].as_str().unwrap(),
            f("estimate"),
            f("ci_low"),
            f("ci_high"),
            f("human_only_mean"),
            f("human_only_ci_low"),
            f("human_only_ci_high"),
            f("machine_only_mean"),
            f("lambda")
        );
        assert!(section.contains(&row), "{row} not in {section}");
    }
    let out = plumbline(args!["export", s, "--scores", r, "--machine", "judge-q"]);
    assert_eq!(out.status.code(), Some(2), "--machine needs --report");
}

/// Lists from a file bring pairs the machine judge never graded: a caution says how many
/// of the pool pairs it graded (common practice: say what the figures rest on).
#[test]
fn a_machine_judge_that_missed_pairs_earns_a_caution() {
    let fixture = Fixture::new();
    let study = study(&fixture);
    let s = study.to_str().unwrap();
    run(args!["sample", s, "--contexts", "12", "--seed", "6"]);
    let full: Value = serde_json::from_str(&run(args![
        "score",
        s,
        "--machine",
        "judge-q",
        "--format",
        "json"
    ]))
    .unwrap();
    let said = |v: &Value| {
        let codes = v["estimate_caution_codes"].as_array().unwrap();
        assert_eq!(
            codes.len(),
            v["estimate_cautions"].as_array().unwrap().len()
        );
        codes.iter().any(|c| c == "machine_missed_pairs")
    };
    assert!(!said(&full), "judge-q graded every pool pair");
    let extra = catalog("candidate.csv");
    let more: Value = serde_json::from_str(&run(args![
        "score",
        s,
        "--machine",
        "judge-q",
        "--rankings",
        &extra,
        "--format",
        "json"
    ]))
    .unwrap();
    assert!(said(&more), "{}", more["estimate_cautions"]);
}
