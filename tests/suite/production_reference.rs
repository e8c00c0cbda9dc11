//! The path that makes every published number, checked against outside code: the
//! scikit-learn NDCG/DCG cases of `tests/reference/metrics_expected.json` imported into a
//! study and scored by the `score` command (import, snapshot, panel grade, scoring), and
//! the independent RBP cases of `rbp_expected.json` (numpy, from Moffat & Zobel 2008)
//! through `metric_table::score_list`, the per-list function `score` calls.

use std::fmt::Write as _;

use plumbline::core::metric_table::{self, Metric, MetricKind};
use plumbline::core::metrics::{self, GainKind, JudgedList, ListSettings, Unjudged};
use serde_json::Value;

use super::cli::{args, plumbline};

fn load(name: &str) -> Value {
    let path = format!("{}/tests/reference/{name}", env!("CARGO_MANIFEST_DIR"));
    serde_json::from_str(&std::fs::read_to_string(path).expect("reference file")).expect("json")
}

/// One study holding every scikit-learn case as a context `cN` graded by one reviewer
/// with the case's levels; the ranker `r` orders each context by the case's scores.
fn study_of(cases: &[Value], dir: &std::path::Path) -> std::path::PathBuf {
    let (mut items, mut contexts, mut rankings, mut grades) = (
        String::from("item_id,title\n"),
        String::from("context_id,kind,text\n"),
        String::from("ranker,context_id,item_id,rank\n"),
        String::from("reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note\n"),
    );
    for (c, case) in cases.iter().enumerate() {
        let _ = writeln!(contexts, "c{c},query,case {c}");
        let levels = case["levels"].as_array().unwrap();
        let scores: Vec<f64> = case["scores"]
            .as_array()
            .unwrap()
            .iter()
            .map(|s| s.as_f64().unwrap())
            .collect();
        let mut order: Vec<usize> = (0..scores.len()).collect();
        order.sort_by(|a, b| scores[*b].total_cmp(&scores[*a]));
        for (i, level) in levels.iter().enumerate() {
            let _ = writeln!(items, "c{c}-{i},item {i}");
            let _ = writeln!(
                grades,
                "ref,c{c},c{c}-{i},s,{level},,1,2026-11-16T09:00:00Z,"
            );
        }
        for (rank, i) in order.iter().enumerate() {
            let _ = writeln!(rankings, "r,c{c},c{c}-{i},{}", rank + 1);
        }
    }
    let scales = "scale,value,label,gain,key,rubric\n\
        s,0,zero,,0,\ns,1,one,,1,\ns,2,two,,2,\ns,3,three,,3,\ns,4,four,,4,\n";
    let files = [
        ("items", items),
        ("contexts", contexts),
        ("scales", scales.to_string()),
        ("rankings", rankings),
        ("grades", grades),
    ];
    let study = dir.join("reference.plumb");
    assert!(
        plumbline(args!["new", study.to_str().unwrap()])
            .status
            .success()
    );
    let mut import = vec!["import".to_string(), study.display().to_string()];
    for (kind, text) in files {
        let path = dir.join(format!("{kind}.csv"));
        std::fs::write(&path, text).unwrap();
        import.push(format!("--{kind}"));
        import.push(path.display().to_string());
    }
    let out = plumbline(&import.iter().map(std::ffi::OsStr::new).collect::<Vec<_>>());
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    study
}

/// scikit-learn 1.9.1 `ndcg_score` / `dcg_score` (metrics_expected.json) against the
/// per-context values `score --format json` publishes. A case without k scores the
/// whole list: k = 40, the longest list of the cases.
#[test]
fn score_publishes_scikit_learn_ndcg_and_dcg() {
    let data = load("metrics_expected.json");
    let cases = data["ndcg_cases"].as_array().unwrap();
    let dir = tempfile::tempdir().unwrap();
    let study = study_of(cases, dir.path());
    let mut checked = 0;
    for gain in ["linear", "exponential"] {
        let out = plumbline(args![
            "score",
            study.to_str().unwrap(),
            "--k",
            "1,3,5,10,20,40",
            "--gain",
            gain,
            "--bootstrap",
            "10",
            "--format",
            "json"
        ]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let board: Value = serde_json::from_slice(&out.stdout).unwrap();
        let per_context = board["rankers"][0]["per_context"].as_array().unwrap();
        assert_eq!(
            per_context.len(),
            cases.len(),
            "every case has a relevant item"
        );
        for (c, case) in cases.iter().enumerate() {
            if case["gain"] != gain {
                continue;
            }
            let k = case["k"].as_u64().unwrap_or(40);
            let ours = per_context
                .iter()
                .find(|v| v["context_id"] == format!("c{c}"))
                .unwrap();
            for key in ["ndcg", "dcg"] {
                let (got, want) = (
                    ours[format!("{key}@{k}")].as_f64().unwrap(),
                    case[key].as_f64().unwrap(),
                );
                assert!(
                    (got - want).abs() <= 1e-9,
                    "{key}@{k} case {c}: {got} vs {want}"
                );
            }
            checked += 1;
        }
    }
    assert_eq!(checked, cases.len());
}

/// numpy code written from Moffat & Zobel (2008) (gen_rbp.py) against the per-list
/// function behind `rbp` and `rbp_residual`.
#[test]
fn rbp_matches_independent_code() {
    let data = load("rbp_expected.json");
    let cases = data["rbp_cases"].as_array().unwrap();
    assert!(cases.len() >= 100);
    let wanted = [
        Metric::whole(MetricKind::Rbp),
        Metric::whole(MetricKind::RbpResidual),
    ];
    let (mut scratch, mut out) = (Vec::new(), Vec::new());
    for (i, case) in cases.iter().enumerate() {
        let levels: Vec<Option<u8>> = case["levels"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64().map(|n| n as u8))
            .collect();
        let max_level = case["max_level"].as_u64().unwrap() as u8;
        let kind = GainKind::parse(case["gain"].as_str().unwrap()).unwrap();
        let settings = ListSettings {
            gains: metrics::gain_table(max_level as usize + 1, &[], kind),
            max_level,
            relevant_from: 1,
            unjudged: Unjudged::Zero,
            persistence: case["persistence"].as_f64().unwrap(),
        };
        let list = JudgedList {
            levels: &levels,
            ideal_gains: &[],
            has_relevant: true,
        };
        metric_table::score_list(&list, &settings, &wanted, &mut scratch, &mut out);
        for (got, key) in out.iter().zip(["rbp", "rbp_residual"]) {
            let want = case[key].as_f64().unwrap();
            assert!(
                (got - want).abs() <= 1e-12,
                "{key} case {i}: {got} vs {want}"
            );
        }
    }
}
