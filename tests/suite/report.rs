//! `plumbline export --scores --report`: the files carry the same means as
//! `plumbline score --format json`, and the report carries the cautions.

use std::process::Command;

fn plumbline(args: &[&str]) -> std::process::Output {
    let out = Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(args)
        .output()
        .expect("run plumbline");
    assert!(
        out.status.success(),
        "plumbline {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

#[test]
fn exported_scores_and_report_match_the_score_command() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&study).unwrap();
    let s = study.to_str().unwrap();
    let csv_path = dir.path().join("scores.csv");
    let md_path = dir.path().join("report.md");
    plumbline(&[
        "export",
        s,
        "--scores",
        csv_path.to_str().unwrap(),
        "--report",
        md_path.to_str().unwrap(),
    ]);
    let json: serde_json::Value =
        serde_json::from_slice(&plumbline(&["score", s, "--format", "json"]).stdout).unwrap();
    let report = std::fs::read_to_string(&md_path).unwrap();
    let mut reader = csv::Reader::from_path(&csv_path).unwrap();
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(header[..4], ["ranker", "context_id", "metric", "value"]);
    let rows: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();

    let rankers = json["rankers"].as_array().unwrap();
    assert!(rankers.len() >= 2);
    for r in rankers {
        let name = r["ranker"].as_str().unwrap();
        for (metric, summary) in r["metrics"].as_object().unwrap() {
            let mean = summary["mean"].as_f64().unwrap();
            // The CSV's per-context values average to the JSON mean.
            let values: Vec<f64> = rows
                .iter()
                .filter(|row| &row[0] == name && &row[2] == metric)
                .map(|row| row[3].parse().unwrap())
                .collect();
            assert!(!values.is_empty(), "{name} {metric} missing from the CSV");
            let csv_mean = values.iter().sum::<f64>() / values.len() as f64;
            assert!(
                (csv_mean - mean).abs() < 1e-9,
                "{name} {metric}: CSV {csv_mean} vs JSON {mean}"
            );
            // The report shows the mean with its interval in the ranker's row.
            if !metric.starts_with("dcg") {
                let shown = if metric.starts_with("judged") {
                    format!("{:.0} %", mean * 100.0)
                } else {
                    format!(
                        "{:.3} [{:.3}, {:.3}]",
                        mean,
                        summary["ci_low"].as_f64().unwrap(),
                        summary["ci_high"].as_f64().unwrap()
                    )
                };
                let row = report
                    .lines()
                    .find(|l| l.starts_with(&format!("| {name} |")))
                    .unwrap_or_else(|| panic!("no row for {name}"));
                assert!(
                    row.contains(&shown),
                    "{name} {metric}: {shown} not in {row}"
                );
            }
        }
    }
    for c in json["comparisons"].as_array().unwrap() {
        let shown = format!(
            "{:+.3} [{:+.3}, {:+.3}]",
            c["diff"].as_f64().unwrap(),
            c["ci_low"].as_f64().unwrap(),
            c["ci_high"].as_f64().unwrap()
        );
        assert!(report.contains(&shown), "comparison {shown} missing");
    }
    // The cautions, the settings and an agreement summary are all there.
    for caution in json["cautions"].as_array().unwrap() {
        assert!(report.contains(caution.as_str().unwrap()));
    }
    assert!(report.contains("they do not replace it"));
    assert!(report.contains("small samples give wide intervals"));
    for heading in [
        "## Settings",
        "## Rankers",
        "## Comparisons against the baseline",
        "## Reviewer agreement",
        "## Cautions",
    ] {
        assert!(report.contains(heading), "{heading} missing");
    }
    let agree: serde_json::Value =
        serde_json::from_slice(&plumbline(&["agree", s, "--format", "json"]).stdout).unwrap();
    let fleiss = format!("{:.3}", agree["fleiss_kappa"].as_f64().unwrap());
    assert!(
        report.contains(&format!("**Fleiss' kappa:** {fleiss}")),
        "Fleiss' kappa {fleiss} missing"
    );
    // Every table row has as many cells as its header (renders as a table when hosted).
    let mut columns = None;
    for line in report.lines() {
        if line.starts_with('|') {
            let n = line.split('|').count();
            match columns {
                None => columns = Some(n),
                Some(c) => assert_eq!(n, c, "ragged table row: {line}"),
            }
        } else {
            columns = None;
        }
    }
}
