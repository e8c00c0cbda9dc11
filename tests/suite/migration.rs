//! A study made by an older build opens, upgrades and means exactly what it meant.
//! `tests/fixtures/schema2/study.plumb` and its `*_before_upgrade.*` outputs were written
//! by the schema-2 build (one row per ranked entry); see the folder's README.

use std::path::{Path, PathBuf};

use crate::cli::{args, plumbline};
use crate::common::Fixture;

fn fixture_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/schema2")
}

/// A scratch copy of the committed old study (the committed file is never opened).
fn old_study(fixture: &Fixture) -> PathBuf {
    let copy = fixture.path("old.plumb");
    std::fs::copy(fixture_dir().join("study.plumb"), &copy).unwrap();
    copy
}

fn stdout_of(args: &[&std::ffi::OsStr]) -> String {
    let out = plumbline(args);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn before(name: &str) -> String {
    std::fs::read_to_string(fixture_dir().join(name)).unwrap()
}

#[test]
fn the_committed_study_is_at_schema_two() {
    let conn = rusqlite::Connection::open_with_flags(
        fixture_dir().join("study.plumb"),
        rusqlite::OpenFlags::SQLITE_OPEN_READ_ONLY,
    )
    .unwrap();
    let version: i32 = conn
        .pragma_query_value(None, "user_version", |r| r.get(0))
        .unwrap();
    assert_eq!(version, 2, "the fixture must stay an old study");
}

#[test]
fn an_upgraded_study_scores_counts_and_exports_the_same() {
    let fixture = Fixture::new();
    let study = old_study(&fixture);
    let s = study.to_str().unwrap();

    // CSV scores: every row the old build printed, with its columns, is printed the same
    // (later builds add columns at the end and rows for metrics added since: rbp,
    // rbp_residual). The status figures are byte for byte what the old build printed.
    let now = stdout_of(args!["score", s, "--format", "csv"]);
    let old = before("score_before_upgrade.csv");
    let rows = |text: &str, width: usize| -> Vec<Vec<String>> {
        csv::Reader::from_reader(text.as_bytes())
            .records()
            .map(|r| r.unwrap().iter().take(width).map(str::to_string).collect())
            .collect()
    };
    let width = old.lines().next().unwrap().split(',').count();
    assert!(
        now.starts_with(old.lines().next().unwrap()),
        "old columns first"
    );
    let (old_rows, now_rows) = (rows(&old, width), rows(&now, width));
    let kept: Vec<&Vec<String>> = now_rows
        .iter()
        .filter(|r| !r[2].starts_with("rbp"))
        .collect();
    assert_eq!(kept.len(), old_rows.len());
    assert!(kept.iter().zip(&old_rows).all(|(a, b)| *a == b));
    assert_eq!(
        stdout_of(args!["status", s, "--format", "json"]),
        before("status_before_upgrade.json")
    );
    let opened = plumbline::study::Study::open(&study).unwrap();
    assert_eq!(
        opened.schema_version().unwrap(),
        plumbline::study::schema::current_version()
    );
    drop(opened);

    // JSON: every field the old build wrote has the same value; new fields may be added.
    let old: serde_json::Value =
        serde_json::from_str(&before("score_before_upgrade.json")).unwrap();
    let new: serde_json::Value =
        serde_json::from_str(&stdout_of(args!["score", s, "--format", "json"])).unwrap();
    assert_contains(&old, &new, "score");

    // Grades export exactly as before.
    let exported = fixture.path("grades.csv");
    stdout_of(args!["export", s, "--grades", exported.to_str().unwrap()]);
    assert_eq!(
        std::fs::read_to_string(&exported).unwrap(),
        before("exported_before_upgrade.csv")
    );

    // The moved lists (scores with 16 digits and 1e-7 among them) read back exactly:
    // importing the original rankings again changes nothing.
    let rankings = fixture_dir().join("rankings.csv");
    let report = stdout_of(args!["import", s, "--rankings", rankings.to_str().unwrap()]);
    assert!(
        report.contains("27 unchanged") && report.contains("0 updated"),
        "{report}"
    );
}

/// Every key of `old` is in `new` with an equal value (objects recursively, arrays
/// element by element).
fn assert_contains(old: &serde_json::Value, new: &serde_json::Value, at: &str) {
    match (old, new) {
        (serde_json::Value::Object(o), serde_json::Value::Object(n)) => {
            for (key, value) in o {
                let inner = n
                    .get(key)
                    .unwrap_or_else(|| panic!("{at}.{key} is gone after the upgrade"));
                assert_contains(value, inner, &format!("{at}.{key}"));
            }
        }
        (serde_json::Value::Array(o), serde_json::Value::Array(n)) => {
            assert_eq!(o.len(), n.len(), "{at} has another length");
            for (i, (a, b)) in o.iter().zip(n).enumerate() {
                assert_contains(a, b, &format!("{at}[{i}]"));
            }
        }
        _ => assert_eq!(old, new, "{at} changed in the upgrade"),
    }
}

#[test]
fn the_entries_stay_readable_one_per_row() {
    // Outside scripts that read `ranked_items` still see one row per entry.
    let fixture = Fixture::new();
    let study = old_study(&fixture);
    drop(plumbline::study::Study::open(&study).unwrap());
    let conn = rusqlite::Connection::open(&study).unwrap();
    let rows: Vec<(String, String, i64, String, Option<f64>)> = conn
        .prepare(
            "SELECT ranker, context_id, rank, item_id, score FROM ranked_items
             WHERE ranker = 'shelf-v1' AND context_id = 'q1' ORDER BY rank",
        )
        .unwrap()
        .query_map([], |r| {
            Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?))
        })
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    let items: Vec<&str> = rows.iter().map(|r| r.3.as_str()).collect();
    assert_eq!(items, ["p01", "p12", "p09", "p03"]);
    assert_eq!(rows[3].2, 4);
    assert_eq!(rows[0].4, Some(0.91));
    let lists: i64 = conn
        .query_row("SELECT COUNT(*) FROM ranked_lists", [], |r| r.get(0))
        .unwrap();
    assert_eq!(lists, 10, "two rankers × five contexts, one row each");
}
