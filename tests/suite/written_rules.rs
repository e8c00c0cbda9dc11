//! Rules an outside checker would otherwise have to guess, as the README's Conventions
//! write them: one hand-checked example per rule, through the command line, each failing
//! if the rule changes.

use crate::cli::{args, plumbline};
use crate::common::Fixture;

fn json(args: &[&std::ffi::OsStr]) -> serde_json::Value {
    let out = plumbline(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

/// The fixture's study with `extra` rows added to its grades.csv before the import.
fn study_with_grades(fixture: &Fixture, extra: &str) -> String {
    fixture.write("grades.csv", &format!("{}{extra}", crate::common::GRADES));
    let (path, study) = fixture.study();
    drop(study);
    path.to_str().unwrap().to_string()
}

fn close(value: &serde_json::Value, want: f64) {
    let got = value.as_f64().unwrap_or(f64::NAN);
    assert!((got - want).abs() < 1e-12, "{got} vs {want}");
}

/// Written rule: `fleiss_kappa_complete` takes as panel the reviewers who gave at least
/// one level on the scale, so cy, whose only grade is a can't-judge, is listed but does
/// not make every pair incomplete. ann and bo both graded q1 i1 (2, 2) and q1 i2 (1, 2);
/// by Fleiss (1971, eq. 2–6) with n = 2 raters, N = 2 pairs: P₁ = 1, P₂ = 0, P̄ = 0.5,
/// p = (0, 1/4, 3/4), P̄ₑ = 10/16, kappa = (0.5 − 0.625)/0.375 = −1/3.
#[test]
fn a_reviewer_with_only_cant_judge_grades_is_no_member_of_the_complete_panel() {
    let fixture = Fixture::new();
    let s = study_with_grades(
        &fixture,
        "cy,q1,i1,fit,,no picture,2,2026-11-16T11:00:00Z,\n",
    );
    let report = json(args!["agree", &s, "--format", "json"]);
    assert!(
        report["reviewer_names"]
            .as_array()
            .unwrap()
            .iter()
            .any(|r| r == "cy"),
        "cy is still listed"
    );
    assert_eq!(report["fleiss_n_complete"], 2);
    close(&report["fleiss_kappa_complete"], -1.0 / 3.0);
}

/// Written rule: the panel's AC1 takes agreement over the pairs with two or more levels
/// and chance over every pair with at least one level (Gwet 2008, the multi-rater form
/// with missing grades), can't-judge-only pairs in neither, q = the scale's 3 levels.
/// Fixture: q1 i1 (2, 2), q1 i2 (1, 2), q1 i3 (0), q2 i3 (2), q2 i1 (0), q1 i4 only
/// can't-judge. Agreement = (1 + 0)/2 = 0.5; shares averaged over the 5 pairs with a
/// level: π = (2/5, 0.5/5, 2.5/5) = (0.4, 0.1, 0.5), chance = (0.24 + 0.09 + 0.25)/2 =
/// 0.29; AC1 = 0.21/0.71 = 21/71. (Chance over the two pairs with two levels would give
/// 0.1875 and AC1 5/13; over all six pairs, 0.2708 and about 0.314.)
#[test]
fn the_panels_ac1_takes_chance_over_every_pair_with_a_level() {
    let fixture = Fixture::new();
    let s = study_with_grades(&fixture, "");
    let report = json(args!["agree", &s, "--format", "json"]);
    close(&report["ac1"], 21.0 / 71.0);
}

/// Written rule: reviewer pairs that share no pair both gave a level are left out of
/// the pairwise output. cy gives q1 i4 a level (bo could not judge it) and cannot judge
/// q1 i1 (which ann and bo graded): cy shares pairs with both, but no level with either.
#[test]
fn reviewer_pairs_without_a_shared_level_are_omitted() {
    let fixture = Fixture::new();
    let s = study_with_grades(
        &fixture,
        "cy,q1,i4,fit,1,,2,2026-11-16T11:00:00Z,\ncy,q1,i1,fit,,no picture,2,2026-11-16T11:00:05Z,\n",
    );
    let report = json(args!["agree", &s, "--format", "json"]);
    let pairs: Vec<(String, String)> = report["pairs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| {
            (
                p["reviewer_a"].as_str().unwrap().to_string(),
                p["reviewer_b"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    assert_eq!(pairs, [("ann".to_string(), "bo".to_string())]);
    let out = plumbline(args!["agree", &s, "--format", "csv"]);
    let csv = String::from_utf8(out.stdout).unwrap();
    assert!(csv.lines().any(|l| l.starts_with("pair,ann,bo,")));
    assert!(
        !csv.lines()
            .any(|l| l.starts_with("pair,") && l.contains(",cy,"))
    );
}

/// Written rule: a reviewer's `grades` counts their grades in force on the scale,
/// can't-judge included, in `agree` and in `status` alike: bo gave q1 i1 and q1 i2 a
/// level and could not judge q1 i4, so 3 (agreement's `n` counts levels only: 2).
#[test]
fn a_reviewers_grades_include_cant_judge() {
    let fixture = Fixture::new();
    let s = study_with_grades(&fixture, "");
    let grades_of = |list: &serde_json::Value| {
        list.as_array()
            .unwrap()
            .iter()
            .find(|r| r["reviewer"] == "bo")
            .unwrap()["grades"]
            .clone()
    };
    let report = json(args!["agree", &s, "--format", "json"]);
    assert_eq!(grades_of(&report["reviewers"]), 3);
    assert_eq!(report["pairs"][0]["n"], 2);
    let status = json(args!["status", &s, "--format", "json"]);
    assert_eq!(grades_of(&status["reviewers"]), 3);
}

/// Written rule: `status` counts a pool pair as graded exactly when `score` counts it as
/// judged: a reviewer's level or a settled grade in force. The fixture's pool (depth 10)
/// is q1 {i1, i2, i3, i4} and q2 {i3, i1, i4}: seven pairs, five with a level, q1 i4 only
/// "can't judge". Settling q2 i4 (nobody graded it) makes six in both: cand's q2 list
/// (i3, i4) is wholly judged (judged@5 = 2/2) and its q1 list (i2, i1, i4) two thirds.
#[test]
fn status_counts_settled_only_pairs_as_score_does() {
    let fixture = Fixture::new();
    let s = study_with_grades(&fixture, "");
    let settle = fixture.write(
        "settle.csv",
        "reviewer,context_id,item_id,scale,value,graded_at,settled_by\n\
settled,q2,i4,fit,2,2026-11-17T09:00:00Z,lead\n",
    );
    let out = plumbline(args!["import", &s, "--grades", settle.to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let status = json(args!["status", &s, "--format", "json"]);
    assert_eq!(
        (&status["pool_size"], &status["pool_graded"]),
        (&7.into(), &6.into())
    );
    let cand = status["coverage"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["ranker"] == "cand")
        .unwrap();
    assert_eq!((&cand["graded"], &cand["pairs"]), (&4.into(), &5.into()));
    let board = json(args!["score", &s, "--format", "json"]);
    let judged = |context: &str| {
        board["rankers"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["ranker"] == "cand")
            .unwrap()["per_context"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["context_id"] == context)
            .unwrap()["judged@5"]
            .as_f64()
            .unwrap()
    };
    assert_eq!(judged("q2"), 1.0);
    close(&judged("q1").into(), 2.0 / 3.0);
}

/// Written rule: `unique_pairs` counts the judged pairs only a ranker has in its top k
/// over the scored contexts only. At k = 3: base alone has q1 i3 (judged 0) and q2 i1
/// (judged 0), so 2; cand's only pair of its own, i4, is not judged (q1: can't-judge
/// only; q2: ungraded), so 0. In a1, graded but without a relevant item (so not scored),
/// each of them has one judged pair the other lacks: counted, they would read 3 and 1.
#[test]
fn unique_pairs_count_scored_contexts_only() {
    let fixture = Fixture::new();
    fixture.write(
        "rankings.csv",
        &format!("{}base,a1,i3,1\ncand,a1,i2,1\n", crate::common::RANKINGS),
    );
    let s = study_with_grades(
        &fixture,
        "ann,a1,i3,fit,0,,2,2026-11-16T09:02:00Z,\nann,a1,i2,fit,0,,2,2026-11-16T09:02:04Z,\n",
    );
    let board = json(args!["score", &s, "--k", "3", "--format", "json"]);
    assert_eq!(board["contexts_scored"], 2);
    assert_eq!(board["contexts_without_relevant"], 1);
    let unique = |ranker: &str| {
        board["pool_bias"]
            .as_array()
            .unwrap()
            .iter()
            .find(|p| p["ranker"] == ranker && p["metric"] == "ndcg@3")
            .unwrap()["unique_pairs"]
            .clone()
    };
    assert_eq!((unique("base"), unique("cand")), (2.into(), 0.into()));
}

/// Written rule: what `rankings_files` counts. The file lists two rankers; x has lists
/// for q1 (i1, i9), a1 (i1, a context without grades) and zz, y for q1 (i9) and zz (i2,
/// i3). zz is no context of the study and i9 no item of the catalog. So: lists = 3 (x q1,
/// x a1, y q1), entries = 4 (2 + 1 + 1, at every rank although --k is 1),
/// contexts_left_out = 1 (zz once), lists_left_out = 2 (x zz, y zz), unknown_items = 2
/// (i9 in two lists: entries, not items).
#[test]
fn rankings_files_count_lists_entries_contexts_and_unknown_entries() {
    let fixture = Fixture::new();
    let s = study_with_grades(&fixture, "");
    let file = fixture.write(
        "two.csv",
        "ranker,context_id,item_id,rank\nx,q1,i1,1\nx,q1,i9,2\nx,zz,i1,1\nx,a1,i1,1\n\
y,q1,i9,1\ny,zz,i2,1\ny,zz,i3,2\n",
    );
    let f = file.to_str().unwrap();
    let board = json(args![
        "score",
        &s,
        "--k",
        "1",
        "--rankings",
        f,
        "--format",
        "json"
    ]);
    let summary = &board["rankings_files"][0];
    for (field, want) in [
        ("lists", 3),
        ("entries", 4),
        ("contexts_left_out", 1),
        ("lists_left_out", 2),
        ("unknown_items", 2),
    ] {
        assert_eq!(summary[field], want, "{field}");
    }
    let text = plumbline(args!["score", &s, "--k", "1", "--rankings", f]);
    let text = String::from_utf8(text.stdout).unwrap();
    assert!(
        text.contains("3 lists, 4 entries; 2 lists left out (context not in the study); 2 entries of items not in the catalog count as unjudged."),
        "{text}"
    );
}
