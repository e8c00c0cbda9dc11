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

fn count(svg: &str, needle: &str) -> usize {
    svg.matches(needle).count()
}

/// The report's pictures are SVG files beside it, linked by name, and each one draws
/// what the JSON says: a line per ranker, one bar per context coloured by the sign of
/// the difference (as many green bars as wins, red as losses), a heatmap cell per
/// reviewer pair with its linear-weighted kappa.
#[test]
fn report_pictures_are_written_beside_it_linked_and_match_the_json() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&study).unwrap();
    let s = study.to_str().unwrap();
    let folder = dir.path().join("weekly");
    std::fs::create_dir(&folder).unwrap();
    let md_path = folder.join("week-49.md");
    plumbline(&["export", s, "--report", md_path.to_str().unwrap()]);
    let report = std::fs::read_to_string(&md_path).unwrap();

    // Every picture link names a file beside the report; there is at least one per kind.
    let links: Vec<&str> = report
        .lines()
        .filter(|l| l.starts_with("!["))
        .map(|l| &l[l.find("](").unwrap() + 2..l.len() - 1])
        .collect();
    assert!(links.len() >= 3, "{links:?}");
    let svg_of = |name: &str| {
        let text = std::fs::read_to_string(folder.join(name))
            .unwrap_or_else(|e| panic!("{name} linked but not written: {e}"));
        assert!(text.trim_start().starts_with("<svg") && text.trim_end().ends_with("</svg>"));
        text
    };
    for link in &links {
        svg_of(link);
    }
    let json: serde_json::Value =
        serde_json::from_slice(&plumbline(&["score", s, "--format", "json"]).stdout).unwrap();

    // Curves: one line (polyline) per ranker, each named in the legend.
    let curves = svg_of("week-49-ndcg-curves.svg");
    let rankers = json["rankers"].as_array().unwrap();
    for r in rankers {
        assert!(curves.contains(&format!("\n{}\n</text>", r["ranker"].as_str().unwrap())));
    }
    assert!(
        count(
            &curves,
            "<polyline fill=\"none\" opacity=\"1\" stroke=\"#4C78A8\" stroke-width=\"2\""
        ) >= 1
    );

    // Differences at the focus cut-off (NDCG@10 for 5, 10, 20): bars by sign.
    let mut checked = 0;
    for c in json["comparisons"].as_array().unwrap() {
        if c["metric"] != "ndcg@10" {
            continue;
        }
        let ranker = c["ranker"].as_str().unwrap();
        let link = links
            .iter()
            .find(|l| l.contains("-differences-") && l.ends_with(&format!("-{ranker}.svg")))
            .unwrap_or_else(|| panic!("no differences picture for {ranker}: {links:?}"));
        let svg = svg_of(link);
        let bars = |fill: &str| {
            count(
                &svg,
                &format!("opacity=\"1\" fill=\"{fill}\" stroke=\"none\""),
            )
        };
        assert_eq!(
            bars("#3C9A5F") as u64,
            c["wins"].as_u64().unwrap(),
            "{ranker} wins"
        );
        assert_eq!(
            bars("#C05040") as u64,
            c["losses"].as_u64().unwrap(),
            "{ranker} losses"
        );
        checked += 1;
    }
    assert!(checked >= 1);

    // Agreement heatmap: every pair's linear-weighted kappa and n, twice (both halves).
    let agree: serde_json::Value =
        serde_json::from_slice(&plumbline(&["agree", s, "--format", "json"]).stdout).unwrap();
    let heatmap = svg_of("week-49-agreement.svg");
    for p in agree["pairs"].as_array().unwrap() {
        let cell = format!(
            "{:.2} (n {})",
            p["kappa_linear"].as_f64().unwrap(),
            p["n"].as_u64().unwrap()
        );
        assert_eq!(count(&heatmap, &cell), 2, "{cell} in the heatmap");
    }
}

/// A study with one ranker and no grades draws no empty picture: the report links none
/// and says in words why there is nothing to show.
#[test]
fn a_report_without_data_links_no_picture() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("empty.plumb");
    let s = study.to_str().unwrap();
    plumbline(&["new", s]);
    let catalog = dir.path().join("items.csv");
    std::fs::write(&catalog, "item_id,title\ni1,Rope\ni2,Tarp\n").unwrap();
    let contexts = dir.path().join("contexts.csv");
    std::fs::write(&contexts, "context_id,kind,text\nq1,query,rope\n").unwrap();
    let scales = dir.path().join("scales.csv");
    std::fs::write(&scales, "scale,value,label\nbin,0,no\nbin,1,yes\n").unwrap();
    let rankings = dir.path().join("rankings.csv");
    std::fs::write(
        &rankings,
        "ranker,context_id,rank,item_id\nonly,q1,1,i1\nonly,q1,2,i2\n",
    )
    .unwrap();
    plumbline(&[
        "import",
        s,
        "--items",
        catalog.to_str().unwrap(),
        "--contexts",
        contexts.to_str().unwrap(),
        "--rankings",
        rankings.to_str().unwrap(),
        "--scales",
        scales.to_str().unwrap(),
    ]);
    let md_path = dir.path().join("report.md");
    plumbline(&["export", s, "--report", md_path.to_str().unwrap()]);
    let report = std::fs::read_to_string(&md_path).unwrap();
    assert!(!report.contains("!["), "{report}");
    let svgs: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .unwrap()
                .path()
                .extension()
                .is_some_and(|x| x == "svg")
        })
        .collect();
    assert!(svgs.is_empty());
    assert!(report.contains("No comparisons: the study has a single ranker."));
    assert!(report.contains("No NDCG@k picture: no context has a relevant item yet."));
    // Item 7 of the lead's list: no NaN or inf in a report without data.
    assert!(
        !report.contains("NaN") && !report.contains("inf"),
        "{report}"
    );
}
