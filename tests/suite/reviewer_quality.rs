//! Reviewer quality: gold pairs, machine judges measured against the people, and Fleiss'
//! kappa on the pairs with the usual number of grades — against
//! `tests/reference/gen_reviewer_quality.py` (scikit-learn `cohen_kappa_score` with the
//! scale's levels as labels, Cohen 1960/1968; irrCAC for Gwet's 2008 AC1; statsmodels
//! `fleiss_kappa`, Fleiss 1971).

use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::cli::{args, plumbline};
use crate::common::Fixture;

fn fixture_file(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/reviewer_quality")
        .join(name)
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

/// The fixture's catalog and scale; grades from `grades` (a path), gold pairs if asked.
fn study_with(fixture: &Fixture, name: &str, grades: &Path, gold: bool) -> PathBuf {
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
        "--grades",
        grades.to_str().unwrap()
    ]);
    if gold {
        run(args!["import", s, "--gold", &f("gold.csv")]);
    }
    study
}

fn agree(study: &Path) -> Value {
    serde_json::from_str(&run(args![
        "agree",
        study.to_str().unwrap(),
        "--format",
        "json"
    ]))
    .unwrap()
}

/// Equal JSON, numbers to 1e-12 (objects by key, arrays element by element).
fn same(ours: &Value, theirs: &Value, at: &str) {
    match (ours, theirs) {
        (Value::Object(_), Value::Object(t)) => {
            for (key, value) in t {
                same(&ours[key], value, &format!("{at}.{key}"));
            }
        }
        (Value::Array(o), Value::Array(t)) => {
            assert_eq!(o.len(), t.len(), "{at}: length");
            for (i, (a, b)) in o.iter().zip(t).enumerate() {
                same(a, b, &format!("{at}[{i}]"));
            }
        }
        _ => match (ours.as_f64(), theirs.as_f64()) {
            (Some(x), Some(y)) => assert!((x - y).abs() < 1e-12, "{at}: {x} vs {y}"),
            _ => assert_eq!(ours, theirs, "{at}"),
        },
    }
}

fn expected() -> Value {
    serde_json::from_str(
        &std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR"))
                .join("tests/reference/reviewer_quality_expected.json"),
        )
        .unwrap(),
    )
    .unwrap()
}

#[test]
fn machines_gold_and_fleiss_equal_the_reference_libraries() {
    let fixture = Fixture::new();
    let study = study_with(&fixture, "quality.plumb", &fixture_file("grades.csv"), true);
    let ours = agree(&study);
    let theirs = expected();
    assert!(!theirs["machines"].as_array().unwrap().is_empty());
    assert!(theirs["reviewers"].as_array().unwrap().len() >= 4);
    same(&ours["machines"], &theirs["machines"], "machines");
    same(&ours["reviewers"], &theirs["reviewers"], "reviewers");
    for key in [
        "fleiss_kappa",
        "fleiss_n",
        "fleiss_grades_per_pair",
        "fleiss_kappa_complete",
        "fleiss_n_complete",
    ] {
        same(&ours[key], &theirs[key], key);
    }
    let text = run(args!["agree", study.to_str().unwrap()]);
    assert!(
        text.contains("Agreement with the panel is not correctness"),
        "{text}"
    );
}

#[test]
fn a_machine_judge_leaves_every_panel_figure_unchanged() {
    let fixture = Fixture::new();
    let all = std::fs::read_to_string(fixture_file("grades.csv")).unwrap();
    let people: String = all
        .lines()
        .filter(|l| !l.contains(",machine,"))
        .map(|l| format!("{l}\n"))
        .collect();
    assert!(people.lines().count() < all.lines().count());
    let people_file = fixture.write("people.csv", &people);
    let without = study_with(&fixture, "people.plumb", &people_file, false);
    let with = study_with(&fixture, "all.plumb", &fixture_file("grades.csv"), false);
    let (a, b) = (agree(&without), agree(&with));
    for (key, value) in a.as_object().unwrap() {
        if key == "reviewers" || key == "machines" || key == "study" {
            continue;
        }
        same(&b[key], value, key);
    }
    assert_eq!(b["machines"].as_array().unwrap().len(), 1);
    // The grades scored are the people's too (settled, else lower median).
    let status = |s: &Path| {
        let out = run(args!["view", "agreement", s.to_str().unwrap()]);
        let v: Value = serde_json::from_str(&out).unwrap();
        v["review"].clone()
    };
    let (ra, rb) = (status(&without), status(&with));
    for key in ["disagreements", "shares"] {
        if !ra[key].is_null() {
            same(&rb[key], &ra[key], key);
        }
    }
}

#[test]
fn a_reviewers_kind_cannot_change_and_bad_kinds_are_refused() {
    let fixture = Fixture::new();
    let study = study_with(&fixture, "kinds.plumb", &fixture_file("grades.csv"), false);
    let file = fixture.write(
        "more.csv",
        "reviewer,context_id,item_id,scale,value,kind\n\
         judge-m1,c01,it01,fit,2,person\n\
         ann,c01,it01,fit,2,robot\n",
    );
    let out = plumbline(args![
        "import",
        study.to_str().unwrap(),
        "--grades",
        file.to_str().unwrap()
    ]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("more.csv:2:6: reviewer \"judge-m1\" is a machine in this study"),
        "{stderr}"
    );
    assert!(
        stderr.contains("more.csv:3:6: kind must be person or machine, got \"robot\""),
        "{stderr}"
    );
}

#[test]
fn gold_import_is_checked_by_line_and_column_and_idempotent() {
    let fixture = Fixture::new();
    let study = study_with(&fixture, "gold.plumb", &fixture_file("grades.csv"), false);
    let s = study.to_str().unwrap();
    let gold = fixture_file("gold.csv");
    let first = run(args!["import", s, "--gold", gold.to_str().unwrap()]);
    let rows = std::fs::read_to_string(&gold).unwrap().lines().count() - 1;
    assert!(first.contains(&format!("{rows} added")), "{first}");
    let again = run(args!["import", s, "--gold", gold.to_str().unwrap()]);
    assert!(
        again.contains(&format!("0 added, 0 updated, {rows} unchanged")),
        "{again}"
    );

    let bad = fixture.write(
        "bad_gold.csv",
        "context_id,item_id,scale,value,rationale\n\
         c01,it01,fit,9,too high\n\
         c01,nope,fit,1,\n\
         c01,it02,wide,1,\n\
         c01,it03,fit,,no level\n",
    );
    let out = plumbline(args!["import", s, "--gold", bad.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    for expected in [
        "bad_gold.csv:2:4: a gold pair needs its known level of scale \"fit\" (0 to 3), got \"9\"",
        "bad_gold.csv:3:2: unknown item \"nope\"",
        "bad_gold.csv:4:3: unknown scale \"wide\"",
        "bad_gold.csv:5:4: a gold pair needs its known level",
    ] {
        assert!(stderr.contains(expected), "{expected} in {stderr}");
    }
    // All or nothing: the study's gold pairs are as they were.
    let conn = rusqlite::Connection::open(&study).unwrap();
    let n: i64 = conn
        .query_row("SELECT COUNT(*) FROM gold_pairs", [], |r| r.get(0))
        .unwrap();
    assert_eq!(n as usize, rows);
}

#[test]
fn gold_pairs_fill_their_share_of_a_new_queue_within_one_pair() {
    // The demo's useful2 pool, with 60 gold pairs outside it (items nobody ranked high).
    let (_dir, path) = crate::ui_support::demo_copy();
    let mut study = plumbline::study::Study::open(&path).unwrap();
    let pool: std::collections::HashSet<(String, String)> =
        study.pool().unwrap().into_iter().collect();
    let contexts: Vec<String> = {
        let mut c: Vec<String> = pool.iter().map(|p| p.0.clone()).collect();
        c.sort();
        c.dedup();
        c
    };
    let items: Vec<String> = study
        .item_cards()
        .unwrap()
        .into_iter()
        .map(|i| i.id)
        .collect();
    let mut csv = String::from("context_id,item_id,scale,value,rationale\n");
    let mut gold = std::collections::HashSet::new();
    'fill: for c in &contexts {
        for i in &items {
            if !pool.contains(&(c.clone(), i.clone())) {
                csv.push_str(&format!("{c},{i},useful2,0,not what was asked\n"));
                gold.insert((c.clone(), i.clone()));
                if gold.len() == 60 {
                    break 'fill;
                }
                break;
            }
        }
    }
    let file = path.with_file_name("gold.csv");
    std::fs::write(&file, csv).unwrap();
    let set = plumbline::study::import::ImportSet {
        gold: Some(plumbline::study::import::Source::from_path(&file).unwrap()),
        ..Default::default()
    };
    plumbline::study::import::import(&mut study, &set).unwrap();
    for (reviewer, rate) in [("rev-dune", 0.05), ("rev-elm", 0.10)] {
        study.set_setting("gold_rate", &rate.to_string()).unwrap();
        study.add_reviewer(reviewer).unwrap();
        let queue = study.ensure_queue(reviewer, "useful2").unwrap();
        let golds = queue.iter().filter(|p| gold.contains(*p)).count();
        let wanted = rate * queue.len() as f64;
        assert!(
            (golds as f64 - wanted).abs() <= 1.0,
            "{reviewer}: {golds} gold pairs in a queue of {}, wanted {wanted:.1}",
            queue.len()
        );
        assert!(golds > 0);
    }
}

#[test]
fn the_scoreboard_scores_a_machine_judge_alone_beside_the_people() {
    let fixture = Fixture::new();
    let study = study_with(
        &fixture,
        "machine.plumb",
        &fixture_file("grades.csv"),
        false,
    );
    // Two rankers over the graded pairs: one in file order, one reversed.
    let grades = std::fs::read_to_string(fixture_file("grades.csv")).unwrap();
    let mut lists: std::collections::BTreeMap<String, Vec<String>> = Default::default();
    for line in grades.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        let list = lists.entry(cells[1].to_string()).or_default();
        if !list.iter().any(|i| i == cells[2]) {
            list.push(cells[2].to_string());
        }
    }
    let mut csv = String::from("ranker,context_id,item_id,rank\n");
    for (context, items) in &lists {
        for (n, item) in items.iter().enumerate() {
            csv.push_str(&format!("straight,{context},{item},{}\n", n + 1));
        }
        for (n, item) in items.iter().rev().enumerate() {
            csv.push_str(&format!("reversed,{context},{item},{}\n", n + 1));
        }
    }
    let rankings = fixture.write("rankings.csv", &csv);
    run(args![
        "import",
        study.to_str().unwrap(),
        "--rankings",
        rankings.to_str().unwrap()
    ]);
    let view: Value =
        serde_json::from_str(&run(args!["view", "scoreboard", study.to_str().unwrap()])).unwrap();
    let rows = view["sensitivity"].as_array().unwrap();
    let machine = rows
        .iter()
        .find(|r| r["reviewer"] == "judge-m1")
        .expect("the machine judge is scored alone");
    assert_eq!(machine["machine"], true);
    assert!(rows.iter().filter(|r| r["machine"] == false).count() >= 3);
    let alone: Value = serde_json::from_str(&run(args![
        "score",
        study.to_str().unwrap(),
        "--grades",
        "judge-m1",
        "--format",
        "json"
    ]))
    .unwrap();
    let means: Vec<f64> = alone["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["metrics"]["ndcg@10"]["mean"].as_f64().unwrap())
        .collect();
    let shown: Vec<f64> = machine["by_key"]["ndcg@10"][0]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert_eq!(shown.len(), means.len());
    for (a, b) in shown.iter().zip(&means) {
        assert!((a - b).abs() < 1e-12);
    }
}
