//! The command line, run as a real process.

use crate::common;

use std::process::Command;

use common::{Fixture, study_dump};

pub(crate) fn plumbline(args: &[&std::ffi::OsStr]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(args)
        .output()
        .expect("run plumbline")
}

macro_rules! args {
    ($($a:expr),* $(,)?) => { &[$(std::ffi::OsStr::new($a)),*] };
}
pub(crate) use args;

#[test]
fn new_import_score_agree_export() {
    let fixture = Fixture::new();
    let study = fixture.path("cli.plumb");
    let s = study.to_str().unwrap();
    let out = plumbline(args!["new", s]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );

    let p = |n: &str| fixture.path(n).to_str().unwrap().to_string();
    let (items, contexts, scales, rankings, grades) = (
        p("items.csv"),
        p("contexts.csv"),
        p("scales.csv"),
        p("rankings.csv"),
        p("grades.csv"),
    );
    let out = plumbline(args![
        "import",
        s,
        "--items",
        &items,
        "--contexts",
        &contexts,
        "--scales",
        &scales,
        "--rankings",
        &rankings,
        "--grades",
        &grades
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("items.csv (items): 4 added, 0 updated, 0 unchanged"),
        "{text}"
    );

    let out = plumbline(args![
        "score",
        s,
        "--k",
        "2,3",
        "--baseline",
        "base",
        "--format",
        "json"
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rankers = json["rankers"].as_array().unwrap();
    assert_eq!(rankers.len(), 2);
    let base = rankers.iter().find(|r| r["ranker"] == "base").unwrap();
    assert!(base["metrics"]["ndcg@3"]["mean"].as_f64().is_some());
    assert!(base["metrics"]["ndcg@3"]["ci_low"].as_f64().is_some());
    assert!(base["per_context"][0]["context_id"].is_string());
    assert!(base["per_context"][0]["ndcg@2"].is_number());
    let comparison = &json["comparisons"][0];
    for key in [
        "diff",
        "ci_low",
        "ci_high",
        "p_randomization",
        "p_t",
        "p_holm",
        "wins",
        "ties",
        "losses",
    ] {
        assert!(
            !comparison[key].is_null() || key == "p_t",
            "{key} missing: {comparison}"
        );
    }

    let out = plumbline(args!["agree", s, "--format", "json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let pair = &json["pairs"][0];
    for key in [
        "reviewer_a",
        "reviewer_b",
        "n",
        "kappa",
        "kappa_se",
        "kappa_linear",
        "kappa_quadratic",
        "ac1",
    ] {
        assert!(pair.get(key).is_some(), "{key} missing");
    }
    for key in [
        "fleiss_kappa",
        "fleiss_n",
        "alpha_nominal",
        "alpha_ordinal",
        "alpha_interval",
    ] {
        assert!(json.get(key).is_some(), "{key} missing");
    }

    let exported = fixture.path("out.csv");
    let out = plumbline(args!["export", s, "--grades", exported.to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = std::fs::read_to_string(&exported).unwrap();
    assert!(text.starts_with("reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note,settled_by,context_text,item_title\n"));
    assert_eq!(text.lines().count(), 9);
}

#[test]
fn bad_input_exits_2_and_leaves_the_study_alone() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let before = study_dump(&path);
    let bad = fixture.write(
        "rankings.csv",
        "ranker,context_id,item_id,rank\nb,q1,i1,1\nb,q1,i2,2\nb,q1,i3,3\nb,q2,i1,1\nb,q2,i3,x\n",
    );
    let out = plumbline(args![
        "import",
        path.to_str().unwrap(),
        "--rankings",
        bad.to_str().unwrap()
    ]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8(out.stderr).unwrap();
    assert!(
        stderr.contains("rankings.csv:6:4: rank must be a positive integer, got \"x\""),
        "{stderr}"
    );
    assert_eq!(study_dump(&path), before);

    let out = plumbline(args![
        "score",
        fixture.path("missing.plumb").to_str().unwrap()
    ]);
    assert_eq!(out.status.code(), Some(2));
}

/// Malformed files through the binary: exit 2, a FILE:LINE:COLUMN message, no panic,
/// and the study unchanged.
#[test]
fn malformed_files_exit_2_with_a_position() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let before = study_dump(&path);
    let cases: [(&str, &[u8]); 8] = [
        ("--items", b""),
        ("--items", b"item_id,title\ni7,\"Tarp\n"),
        ("--items", b"item_id,title\ni7,Caf\xe9\n"),
        ("--items", b"item_id,title\ni7,T\x00arp\n"),
        ("--contexts", b"context_id,kind\nq9,query,extra\n"),
        (
            "--rankings",
            b"ranker,context_id,item_id,rank\nb,q1,i1,one\n",
        ),
        (
            "--grades",
            b"reviewer,context_id,item_id,scale,value\nann,q1,i1,fit,9\n",
        ),
        ("--scales", b"scale,value,label\nx,0,a\nx,2,b\n"),
    ];
    for (flag, bytes) in cases {
        std::fs::write(fixture.path("bad.csv"), bytes).unwrap();
        let out = plumbline(args![
            "import",
            path.to_str().unwrap(),
            flag,
            fixture.path("bad.csv").to_str().unwrap()
        ]);
        let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
        assert_eq!(out.status.code(), Some(2), "{flag}: {stderr}");
        assert!(!stderr.contains("panicked"), "{stderr}");
        let position = stderr
            .strip_prefix("plumbline: bad.csv:")
            .unwrap_or_else(|| panic!("{stderr}"));
        let mut parts = position.splitn(3, ':');
        assert!(parts.next().unwrap().parse::<u64>().is_ok(), "{stderr}");
        assert!(parts.next().unwrap().parse::<u64>().is_ok(), "{stderr}");
        assert_eq!(study_dump(&path), before, "{flag}");
    }
}

/// Promise: the settings line says which gains scored the lists; a scale's own gains
/// win over `--gain linear`, and the output says so instead of printing "linear".
/// Also a warning on stderr when an imported scale's gains fall.
#[test]
fn the_settings_line_names_the_gains_used() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    drop(study);
    let s = path.to_str().unwrap();
    let own = fixture.write(
        "own.csv",
        "scale,value,label,gain\nfit,0,Off target,0\nfit,1,Loosely related,1\nfit,2,Spot on,5\n",
    );
    let out = plumbline(args!["import", s, "--scales", own.to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = plumbline(args!["score", s, "--gain", "linear"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("gains the scale's own gains (0, 1, 5); the linear (v) rule does not apply"),
        "{text}"
    );
    let json = plumbline(args!["score", s, "--gain", "linear", "--format", "json"]);
    let value: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    assert!(value["gains_used"].as_str().unwrap().contains("own gains"));
    let falling = fixture.write(
        "fall.csv",
        "scale,value,label,gain\nodd,0,No,0\nodd,1,Some,3\nodd,2,Yes,1\n",
    );
    let out = plumbline(args!["import", s, "--scales", falling.to_str().unwrap()]);
    assert!(out.status.success());
    assert!(String::from_utf8_lossy(&out.stderr).contains("warning"));
}
