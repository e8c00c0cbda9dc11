//! The command line's counting conventions, one hand-checked example per rule.

use crate::common;

use common::Fixture;

use super::cli::{args, plumbline};

// ---- Every convention written down: one hand-checked example per rule ----

fn json(args: &[&std::ffi::OsStr]) -> serde_json::Value {
    let out = plumbline(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn per_context(board: &serde_json::Value, ranker: &str, context: &str, key: &str) -> f64 {
    board["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["ranker"] == ranker)
        .unwrap()["per_context"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["context_id"] == context)
        .unwrap_or_else(|| panic!("{context} not scored"))[key]
        .as_f64()
        .unwrap()
}

fn import_into(study: &std::path::Path, kind: &str, file: &std::path::Path) {
    let out = plumbline(args![
        "import",
        study.to_str().unwrap(),
        &format!("--{kind}"),
        file.to_str().unwrap()
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// The fixture, hand-checked (exponential gain, panel = lower median): q1 has i1 = 2,
/// i2 = [1, 2] → 1, i3 = 0 (gains 3, 1, 0). cand's q1 list i2, i1, i4 gives
/// DCG@3 = 1 + 3 / log2 3 = 2.892789 and IDCG@3 = 3 + 1 / log2 3 = 3.630930, so
/// NDCG@3 = 0.796708 (Järvelin & Kekäläinen 2002). With i2 at 2 (upper median, or the
/// mean 1.5 rounded half up) both are 3 + 3 / log2 3 and NDCG@3 = 1.
#[test]
fn the_panel_grade_rule_is_chosen_with_panel_grade() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let s = path.to_str().unwrap();
    for (rule, want) in [
        ("lower-median", 0.796_708),
        ("upper-median", 1.0),
        ("mean-rounded", 1.0),
    ] {
        let board = json(args![
            "score",
            s,
            "--k",
            "3",
            "--panel-grade",
            rule,
            "--format",
            "json"
        ]);
        let got = per_context(&board, "cand", "q1", "ndcg@3");
        assert!((got - want).abs() < 1e-6, "{rule}: {got}");
    }
}

/// judged@k divides by min(k, list length): cand's q2 list has 2 items, one judged, so
/// judged@3 = 1 / 2, not 1 / 3; the caution names the returned items.
#[test]
fn judged_at_k_counts_the_returned_items_of_a_short_list() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let board = json(args![
        "score",
        path.to_str().unwrap(),
        "--k",
        "3",
        "--format",
        "json"
    ]);
    assert_eq!(per_context(&board, "cand", "q2", "judged@3"), 0.5);
    let cautions: Vec<&str> = board["cautions"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    assert!(
        cautions.iter().any(|c| c.contains("cand")
            && c.contains("the items it returned in its top 3 (2.5 on average)")),
        "{cautions:?}"
    );
}

/// One baseline rule everywhere: a stored baseline that no longer names a ranker falls
/// back to the first ranker alphabetically, with a caution; an unknown --baseline is
/// refused (exit 2).
#[test]
fn a_stale_stored_baseline_falls_back_to_the_first_ranker() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    study.set_setting("baseline", "retired").unwrap();
    drop(study);
    let s = path.to_str().unwrap();
    let board = json(args!["score", s, "--format", "json"]);
    assert_eq!(board["comparisons"][0]["baseline"], "base");
    assert!(
        board["cautions"]
            .to_string()
            .contains("\\\"retired\\\" is not among the rankers")
    );
    let out = plumbline(args!["score", s, "--baseline", "retired"]);
    assert_eq!(out.status.code(), Some(2));
}

/// The grade that counts is the latest by graded_at read with its offset, not the file
/// order: 10:30+02:00 is 08:30Z, earlier than 09:00Z; on equal times the later row wins.
#[test]
fn the_latest_grade_is_read_with_its_offset_and_ties_go_to_the_later_row() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let grades = fixture.write(
        "twice.csv",
        "reviewer,context_id,item_id,scale,value,graded_at\n\
cy,q2,i4,fit,0,2026-11-16T09:00:00Z\n\
cy,q2,i4,fit,2,2026-11-16T10:30:00+02:00\n\
cy,q1,i4,fit,1,2026-11-16T09:00:00Z\n\
cy,q1,i4,fit,2,2026-11-16T09:00:00Z\n",
    );
    import_into(&path, "grades", &grades);
    let conn = rusqlite::Connection::open(&path).unwrap();
    let current = |c: &str| -> i64 {
        conn.query_row(
            "SELECT e.value FROM current_grades g JOIN grade_events e ON e.id = g.event_id
             WHERE g.reviewer = 'cy' AND g.context_id = ?1 AND g.item_id = 'i4'",
            [c],
            |r| r.get(0),
        )
        .unwrap()
    };
    assert_eq!(current("q2"), 0, "09:00Z is later than 10:30+02:00");
    assert_eq!(current("q1"), 2, "equal times: the later row");
}

/// Settled grades in grades.csv: a row with settled_by is a settlement, the latest one
/// wins, and one with an empty value undoes it (cand's q1 NDCG@3 goes 1 → 0.796708).
#[test]
fn settlements_in_grades_csv_latest_wins_and_empty_undoes() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let s = path.to_str().unwrap();
    let settle = fixture.write(
        "settle.csv",
        "reviewer,context_id,item_id,scale,value,graded_at,settled_by\n\
settled,q1,i2,fit,0,2026-11-17T09:00:00Z,lead\n\
settled,q1,i2,fit,2,2026-11-17T10:00:00Z,lead\n",
    );
    import_into(&path, "grades", &settle);
    let board = json(args!["score", s, "--k", "3", "--format", "json"]);
    assert!((per_context(&board, "cand", "q1", "ndcg@3") - 1.0).abs() < 1e-9);
    let undo = fixture.write(
        "undo.csv",
        "reviewer,context_id,item_id,scale,value,graded_at,settled_by\nsettled,q1,i2,fit,,2026-11-18T09:00:00Z,lead\n",
    );
    import_into(&path, "grades", &undo);
    let board = json(args!["score", s, "--k", "3", "--format", "json"]);
    assert!((per_context(&board, "cand", "q1", "ndcg@3") - 0.796_708).abs() < 1e-6);
}

/// `--segment label:NAME` selects a context segment literally called "new", while
/// `--segment new` keeps meaning new items. Here q2's label is "new"; the new items are
/// i2 and i4, relevant only in q1 (i2 at level 1).
#[test]
fn label_segments_are_unambiguous() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let s = path.to_str().unwrap();
    let contexts = fixture.write(
        "contexts2.csv",
        &common::CONTEXTS.replace(
            "q2,query,warm sleeping bag,,tail",
            "q2,query,warm sleeping bag,,new",
        ),
    );
    import_into(&path, "contexts", &contexts);
    let by_label = json(args![
        "score",
        s,
        "--segment",
        "label:new",
        "--format",
        "json"
    ]);
    assert_eq!(by_label["contexts_scored"], 1);
    per_context(&by_label, "base", "q2", "ndcg@5");
    let by_items = json(args![
        "score",
        s,
        "--segment",
        "new",
        "--k",
        "3",
        "--format",
        "json"
    ]);
    assert_eq!(by_items["contexts_scored"], 1);
    // Items outside the segment carry no gain in every metric alike: in q1 only i2
    // (new, level 1) counts, so cand (i2, i1, i4) has precision@3 = 1/3 and base
    // (i1, i2, i3) has RR = 1/2; over all items they are 2/3 and 1.
    assert!((per_context(&by_items, "cand", "q1", "precision@3") - 1.0 / 3.0).abs() < 1e-12);
    assert!((per_context(&by_items, "base", "q1", "rr") - 0.5).abs() < 1e-12);
    let all = json(args!["score", s, "--k", "3", "--format", "json"]);
    assert!((per_context(&all, "cand", "q1", "precision@3") - 2.0 / 3.0).abs() < 1e-12);
    assert!((per_context(&all, "base", "q1", "rr") - 1.0).abs() < 1e-12);
}

/// Contexts left out are counted apart: graded with no relevant item, and never graded.
#[test]
fn contexts_without_relevant_and_without_grades_are_counted_apart() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let s = path.to_str().unwrap();
    let rankings = fixture.write(
        "more.csv",
        &format!("{}base,a1,i3,1\ncand,a1,i2,1\n", common::RANKINGS),
    );
    import_into(&path, "rankings", &rankings);
    let board = json(args!["score", s, "--format", "json"]);
    assert_eq!(
        (
            board["contexts_without_relevant"].as_u64(),
            board["contexts_without_grades"].as_u64()
        ),
        (Some(0), Some(1))
    );
    let zero = fixture.write(
        "zero.csv",
        "reviewer,context_id,item_id,scale,value\nann,a1,i3,fit,0\n",
    );
    import_into(&path, "grades", &zero);
    let board = json(args!["score", s, "--format", "json"]);
    assert_eq!(
        (
            board["contexts_without_relevant"].as_u64(),
            board["contexts_without_grades"].as_u64()
        ),
        (Some(1), Some(0))
    );
}

/// Agreement units are pairs with at least one grade, can't-judge-only pairs included:
/// the fixture grades q1 i1, i2, i3, i4 (i4 only "can't judge") and q2 i3, i1 → 6.
#[test]
fn agreement_units_include_cant_judge_only_pairs() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let report = json(args!["agree", path.to_str().unwrap(), "--format", "json"]);
    assert_eq!(report["units"], 6);
}

/// Comparisons exist for NDCG cut-offs only, and Holm's step-down correction (Holm
/// 1979) runs over the randomization p-values per metric across candidates: with two
/// candidates, p(1) ≤ p(2): holm(1) = min(1, 2 p(1)), holm(2) = max(holm(1), p(2)).
#[test]
fn holm_runs_over_randomization_p_values_per_ndcg_cut_off() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let s = path.to_str().unwrap();
    let rankings = fixture.write(
        "third.csv",
        &format!(
            "{}third,q1,i3,1\nthird,q1,i1,2\nthird,q2,i1,1\nthird,q2,i3,2\n",
            common::RANKINGS
        ),
    );
    import_into(&path, "rankings", &rankings);
    let board = json(args!["score", s, "--k", "2,3", "--format", "json"]);
    let comparisons = board["comparisons"].as_array().unwrap();
    assert!(
        comparisons
            .iter()
            .all(|c| c["metric"].as_str().unwrap().starts_with("ndcg@"))
    );
    for metric in ["ndcg@2", "ndcg@3"] {
        let mut pairs: Vec<(f64, f64)> = comparisons
            .iter()
            .filter(|c| c["metric"] == metric)
            .map(|c| {
                (
                    c["p_randomization"].as_f64().unwrap(),
                    c["p_holm"].as_f64().unwrap(),
                )
            })
            .collect();
        assert_eq!(pairs.len(), 2);
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let first = (2.0 * pairs[0].0).min(1.0);
        assert!((pairs[0].1 - first).abs() < 1e-12, "{metric}: {pairs:?}");
        assert!(
            (pairs[1].1 - first.max(pairs[1].0)).abs() < 1e-12,
            "{metric}: {pairs:?}"
        );
    }
}

/// The counting rules stand word for word in the README's Conventions and in the
/// Markdown report's settings.
#[test]
fn every_counting_rule_is_in_the_readme_and_the_report() {
    let readme = include_str!("../../README.md").replace("\n  ", " ");
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let report = fixture.path("report.md");
    let out = plumbline(args![
        "export",
        path.to_str().unwrap(),
        "--report",
        report.to_str().unwrap()
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report = std::fs::read_to_string(report).unwrap();
    for rule in plumbline::analysis::output::report::CONVENTION_RULES {
        assert!(readme.contains(rule), "README lacks: {rule}");
        assert!(report.contains(rule), "report lacks: {rule}");
    }
}

/// Choices are typed: a wrong value is refused before anything is read, and the message
/// lists the values that are accepted.
#[test]
fn a_wrong_choice_lists_the_right_ones() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    for (flag, wrong, right) in [
        ("--gain", "quadratic", ["exponential", "linear"].as_slice()),
        ("--unjudged", "skip", ["zero", "condense"].as_slice()),
        (
            "--panel-grade",
            "mode",
            ["lower-median", "upper-median", "mean-rounded"].as_slice(),
        ),
        ("--format", "xml", ["text", "csv", "json"].as_slice()),
    ] {
        let out = plumbline(args!["score", path.as_os_str(), flag, wrong]);
        assert_eq!(out.status.code(), Some(2), "{flag}");
        let message = String::from_utf8_lossy(&out.stderr);
        for value in right {
            assert!(message.contains(value), "{flag}: {message}");
        }
    }
}

/// Written rule: on a scale whose levels all carry gain 0, a context with a level above
/// 0 is still scored (relevance is read from the levels), but its ideal DCG is 0, so its
/// NDCG is undefined and counts as 0 for every ranker; DCG and RBP are 0 there (RBP's
/// top-level gain is 0), while precision and RR still read the levels. Hand computation
/// on the fixture's q1 (panel: i1 = 2, i2 = 1, i3 = 0): cand's list i2, i1, i4 has two
/// relevant items in its top 3, so precision@3 = 2/3.
#[test]
fn a_scale_without_gain_scores_ndcg_zero_but_keeps_precision() {
    let fixture = Fixture::new();
    fixture.write(
        "scales.csv",
        "scale,value,label,gain,key,rubric\nfit,0,Off,0,0,\nfit,1,Near,0,1,\nfit,2,Spot on,0,2,\n",
    );
    let (path, study) = fixture.study();
    drop(study);
    let board = json(args![
        "score",
        path.to_str().unwrap(),
        "--k",
        "3",
        "--format",
        "json"
    ]);
    assert_eq!(
        board["contexts_scored"], 2,
        "q1 and q2 have a level above 0"
    );
    for key in ["ndcg@3", "dcg@3", "rbp"] {
        assert_eq!(per_context(&board, "cand", "q1", key), 0.0, "{key}");
    }
    let precision = per_context(&board, "cand", "q1", "precision@3");
    assert!((precision - 2.0 / 3.0).abs() < 1e-12, "{precision}");
}

/// The study keeps one panel rule (`panel_rule` setting) that every figure reads unless
/// a run chooses another: with the same fixture as above (q1's i2 graded [1, 2]),
/// upper median gives i2 level 2, so NDCG@3 of cand on q1 = 1; `--panel-grade
/// lower-median` still gives 0.796708 for one run. The Catalog's panel mark and the
/// people's panel that machine judges are measured against follow the study's rule.
#[test]
fn the_study_panel_rule_is_read_by_score_and_by_every_view() {
    use plumbline::analysis::agreement::reviewer_quality;
    use plumbline::analysis::views::catalog_view::ContextLists;
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    study
        .set_setting(plumbline::study::settings::keys::PANEL_RULE, "upper-median")
        .unwrap();
    let snapshot = study.snapshot().unwrap();
    drop(study);
    let s = path.to_str().unwrap();
    let board = json(args!["score", s, "--k", "3", "--format", "json"]);
    assert_eq!(board["settings"]["panel_grade"], "upper-median");
    assert!((per_context(&board, "cand", "q1", "ndcg@3") - 1.0).abs() < 1e-9);
    let one_run = json(args![
        "score",
        s,
        "--k",
        "3",
        "--panel-grade",
        "lower-median",
        "--format",
        "json"
    ]);
    let got = per_context(&one_run, "cand", "q1", "ndcg@3");
    assert!((got - 0.796_708).abs() < 1e-6, "{got}");

    let (q1, i2) = (
        snapshot.contexts.iter().position(|c| c.id == "q1").unwrap(),
        snapshot.items.iter().position(|i| i.id == "i2").unwrap(),
    );
    let people = reviewer_quality::people_panel(&snapshot, 0);
    assert_eq!(people.get(&(q1 as u32, i2 as u32)), Some(&2));
    let lists = ContextLists::build(snapshot);
    let view = lists.view(q1, Some(0)).unwrap();
    let row = view
        .lists
        .iter()
        .flat_map(|l| &l.rows)
        .find(|r| r.item_id == "i2")
        .unwrap();
    assert_eq!(row.panel.as_ref().map(|p| p.level), Some(2));
}
