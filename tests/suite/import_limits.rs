//! CSV import that never loses a grade: bounded, exact, and refusing hostile input.

use crate::common;

use common::Fixture;
use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

// ---- Issue "never lose a grade": bounded, exact and refusing input ----

fn import_one(
    study: &mut Study,
    kind: &str,
    path: &std::path::Path,
) -> Result<Vec<import::FileReport>, String> {
    let source = Source::from_path(path).map_err(|e| e.to_string())?;
    let mut set = ImportSet::default();
    match kind {
        "items" => set.items = Some(source),
        "contexts" => set.contexts = Some(source),
        "rankings" => set.rankings = Some(source),
        "scales" => set.scales = Some(source),
        _ => set.grades = Some(source),
    }
    import::import(study, &set).map_err(|e| e.to_string())
}

/// Promise: an error names the physical line whatever the line endings: LF, CRLF (what
/// spreadsheets and Python's csv module write), CR only, and mixed. Each file has its
/// bad value on line 5 (rankings: rank 0; the others: an unknown id or bad value).
#[test]
fn errors_name_the_right_line_with_any_line_endings() {
    let bad: [(&str, &str, &str); 5] = [
        (
            "items",
            "item_id,title,new",
            "j1,A,false\nj2,B,false\nj3,C,false\nj4,D,maybe",
        ),
        (
            "contexts",
            "context_id,kind,text",
            "k1,query,a\nk2,query,b\nk3,query,c\nk4,nonsense,d",
        ),
        (
            "rankings",
            "ranker,context_id,item_id,rank",
            "x,q1,i1,1\nx,q1,i2,2\nx,q1,i3,3\nx,q1,i4,0",
        ),
        (
            "scales",
            "scale,value,label",
            "s2,0,No\ns2,1,Yes\ns3,0,No\ns3,x,Yes",
        ),
        (
            "grades",
            "reviewer,context_id,item_id,scale,value",
            "ann,q1,i1,fit,1\nann,q1,i2,fit,1\nann,q1,i3,fit,1\nann,q1,i4,fit,7",
        ),
    ];
    let columns = [3, 2, 4, 2, 5];
    for ((kind, header, body), column) in bad.iter().zip(columns) {
        for (ending_name, ending) in [("LF", "\n"), ("CRLF", "\r\n"), ("CR", "\r")] {
            let fixture = Fixture::new();
            let (_, mut study) = fixture.study();
            let text = format!("{header}{ending}{}{ending}", body.replace('\n', ending));
            let path = fixture.write(&format!("{kind}.csv"), &text);
            let err = import_one(&mut study, kind, &path).unwrap_err();
            let want = format!("{kind}.csv:5:{column}:");
            assert!(err.starts_with(&want), "{kind} with {ending_name}: {err}");
        }
        // Mixed: CRLF, LF, CR, CRLF.
        let fixture = Fixture::new();
        let (_, mut study) = fixture.study();
        let lines: Vec<&str> = std::iter::once(*header).chain(body.split('\n')).collect();
        let text = format!(
            "{}\r\n{}\n{}\r{}\r\n{}\n",
            lines[0], lines[1], lines[2], lines[3], lines[4]
        );
        let path = fixture.write(&format!("{kind}.csv"), &text);
        let err = import_one(&mut study, kind, &path).unwrap_err();
        assert!(
            err.starts_with(&format!("{kind}.csv:5:{column}:")),
            "{kind} mixed: {err}"
        );
    }
}

/// Promise: files that are not regular files are refused at once, by name, without a
/// line number of 0 and without reading them (a FIFO would hang, /dev/zero never ends).
#[test]
fn folders_pipes_and_devices_are_refused_at_once() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    let folder = fixture.path("items.csv.d");
    std::fs::create_dir(&folder).unwrap();
    let err = import_one(&mut study, "items", &folder).unwrap_err();
    assert!(err.contains("folder") && !err.contains(":0:0"), "{err}");
    let fifo = fixture.path("grades-fifo.csv");
    assert!(
        std::process::Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap()
            .success()
    );
    let started = std::time::Instant::now();
    let err = import_one(&mut study, "grades", &fifo).unwrap_err();
    assert!(err.contains("not a regular file"), "{err}");
    assert!(started.elapsed().as_secs() < 10);
    let err = import_one(&mut study, "grades", std::path::Path::new("/dev/zero")).unwrap_err();
    assert!(err.contains("not a regular file"), "{err}");
}

/// Promise: a huge or hostile file costs bounded memory and stops early: a 2 GiB sparse
/// file (all NUL bytes) is refused at its first byte, 100 000 columns at the 1 001st.
#[test]
fn sparse_files_and_endless_headers_stop_early() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let before = common::study_dump(&path);
    let sparse = fixture.path("items.csv");
    std::fs::File::create(&sparse)
        .unwrap()
        .set_len(2 << 30)
        .unwrap();
    let err = import_one(&mut study, "items", &sparse).unwrap_err();
    assert!(
        err.starts_with("items.csv:1:1:") && err.contains("NUL"),
        "{err}"
    );
    let wide = fixture.write("rankings.csv", &"c,".repeat(100_000));
    let err = import_one(&mut study, "rankings", &wide).unwrap_err();
    assert!(err.contains("more than 1000 columns"), "{err}");
    assert_eq!(common::study_dump(&path), before, "nothing changed");
}

/// Promise: values that cannot be right are refused with their line and column.
#[test]
fn impossible_values_are_refused_where_they_stand() {
    let cases: [(&str, &str, &str); 8] = [
        // RFC 3339 (Klyne & Newman 2002), section 5.6: no February 30, offsets up to 23:59.
        (
            "grades",
            "reviewer,context_id,item_id,scale,value,graded_at\nann,q1,i1,fit,1,2026-02-30T10:00:00Z\n",
            "grades.csv:2:6:",
        ),
        (
            "grades",
            "reviewer,context_id,item_id,scale,value,graded_at\nann,q1,i1,fit,1,2026-02-03T10:00:00+99:99\n",
            "grades.csv:2:6:",
        ),
        (
            "grades",
            "reviewer,context_id,item_id,scale,value,graded_at\nann,q1,i1,fit,1,9999-12-31T23:59:59-23:59\n",
            "grades.csv:2:6:",
        ),
        (
            "items",
            "item_id,title\nz1,A\nitem_id,title\n",
            "items.csv:3:1:",
        ),
        (
            "scales",
            "scale,value,label\nbig,0,a\nbig,255,b\n",
            "scales.csv:3:2:",
        ),
        (
            "scales",
            "scale,value,label,key\nk,0,No,S\nk,1,Yes,y\n",
            "scales.csv:2:4:",
        ),
        (
            "scales",
            "scale,value,label,key\nk,0,No,n\nk,1,Yes,ArrowRight\n",
            "scales.csv:2:4:",
        ),
        (
            "scales",
            "scale,value,label,key\nk,0,No,x\nk,1,Yes,Backspace\n",
            "scales.csv:3:4:",
        ),
    ];
    for (kind, text, want) in cases {
        let fixture = Fixture::new();
        let (path, mut study) = fixture.study();
        let before = common::study_dump(&path);
        let file = fixture.write(&format!("{kind}.csv"), text);
        let err = import_one(&mut study, kind, &file).unwrap_err();
        assert!(err.starts_with(want), "{text:?}: {err}");
        assert_eq!(common::study_dump(&path), before);
    }
}

/// Promise: a scale can hold at most 32 levels, so no later grades import can fail on a
/// level count; a 256-level scale is refused at its first level past the cap.
#[test]
fn scales_are_capped_at_thirty_two_levels() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    let mut text = String::from("scale,value,label\n");
    for v in 0..256 {
        text.push_str(&format!("wide,{v},level {v}\n"));
    }
    let err = import_one(&mut study, "scales", &fixture.write("scales.csv", &text)).unwrap_err();
    assert!(err.starts_with("scales.csv:34:2:"), "{err}");
    let mut text = String::from("scale,value,label\n");
    for v in 0..32 {
        text.push_str(&format!("wide,{v},level {v}\n"));
    }
    import_one(&mut study, "scales", &fixture.write("scales.csv", &text)).unwrap();
    let grades = "reviewer,context_id,item_id,scale,value\nann,q1,i1,wide,31\n";
    import_one(&mut study, "grades", &fixture.write("g.csv", grades)).unwrap();
}

/// Promise: gains that fall as the level rises are imported as asked, with a warning.
#[test]
fn falling_gains_are_warned_about() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    let text = "scale,value,label,gain\nodd,0,No,0\nodd,1,Some,3\nodd,2,Yes,1\n";
    let reports = import_one(&mut study, "scales", &fixture.write("scales.csv", text)).unwrap();
    assert!(
        reports[0].warnings.iter().any(|w| w.contains("fall")),
        "{reports:?}"
    );
}

/// Promise: an items file from another folder that does not carry the whole catalog's
/// pictures leaves the study's picture folder alone (a header-only file used to re-point
/// every item's picture).
#[test]
fn a_partial_items_file_elsewhere_keeps_the_picture_folder() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let folder = || study_setting(&path, "catalog_dir");
    let before = folder();
    let elsewhere = tempfile::tempdir().unwrap();
    for text in [
        "item_id,title,image\n",
        "item_id,title,image\ni9,New One,images/i9.png\n",
    ] {
        let file = elsewhere.path().join("items.csv");
        std::fs::write(&file, text).unwrap();
        import_one(&mut study, "items", &file).unwrap();
        assert_eq!(folder(), before, "{text:?}");
    }
}

fn study_setting(path: &std::path::Path, key: &str) -> Option<String> {
    let conn = rusqlite::Connection::open(path).unwrap();
    conn.query_row("SELECT value FROM settings WHERE key = ?1", [key], |r| {
        r.get(0)
    })
    .ok()
}

/// Promise: grades survive export → import exactly. A reviewer named "settled" stays a
/// reviewer (a row is a settlement only by its `settled_by`), names keep their spaces,
/// a value's own leading apostrophe stays, and importing the export into its own study
/// (desk grades included) changes nothing.
#[test]
fn export_then_import_is_exact_and_changes_nothing() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let grades = "reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note\n\
settled,q2,i3,fit,1,,2,2026-11-16T09:00:00Z,\n\
' padded ',q2,i4,fit,2,,3,2026-11-16T09:00:01Z,'tis fine\n";
    let grades = grades.replace("' padded '", " padded ");
    import_one(&mut study, "grades", &fixture.write("g.csv", &grades)).unwrap();
    for n in 0..20 {
        study
            .record_grade(&plumbline::study::grades::NewGrade {
                reviewer: "desk".into(),
                context_id: "q1".into(),
                item_id: ["i1", "i2", "i3", "i4"][n % 4].into(),
                scale: "fit".into(),
                action: plumbline::study::grades::GradeAction::Grade((n % 3) as u8),
                seconds: 1.5 + n as f64 / 10.0,
                note: if n == 0 { "=1+1".into() } else { String::new() },
            })
            .unwrap();
    }
    let reviewers = |p: &std::path::Path| -> Vec<String> {
        let conn = rusqlite::Connection::open(p).unwrap();
        let mut stmt = conn
            .prepare("SELECT reviewer FROM reviewers ORDER BY reviewer")
            .unwrap();
        stmt.query_map([], |r| r.get(0))
            .unwrap()
            .map(Result::unwrap)
            .collect()
    };
    assert!(reviewers(&path).contains(&"settled".to_string()));
    assert!(reviewers(&path).contains(&" padded ".to_string()));
    let mut out = Vec::new();
    study.export_grades(&mut out).unwrap();
    let exported = fixture.write("export.csv", std::str::from_utf8(&out).unwrap());
    let before = common::study_dump(&path);
    let reports = import_one(&mut study, "grades", &exported).unwrap();
    assert_eq!(reports[0].added, 0, "{reports:?}");
    assert_eq!(
        common::study_dump(&path),
        before,
        "re-import changed the study"
    );
    let conn = rusqlite::Connection::open(&path).unwrap();
    let note: String = conn
        .query_row(
            "SELECT note FROM grade_events WHERE reviewer = ' padded '",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(note, "'tis fine");
    let settlements: i64 = conn
        .query_row("SELECT COUNT(*) FROM settle_events", [], |r| r.get(0))
        .unwrap();
    assert_eq!(settlements, 0, "a reviewer called settled settles nothing");
}

/// Promise: cells a spreadsheet would run are neutralised on export, per OWASP's
/// "CSV Injection" guidance (=, +, -, @, tab, CR) plus LF, fullwidth signs and leading
/// spaces; `;`, `|` and `%` start no formula and are left alone (a decision, stated in
/// `csv_input::needs_guard`). Import restores every value exactly.
#[test]
fn formula_cells_are_neutralised_and_restored() {
    use plumbline::study::csv_input::{needs_guard, unguard};
    use plumbline::study::export::neutralise;
    for risky in [
        "=1+1",
        "+1",
        "-1",
        "@SUM(A1)",
        "\tx",
        "\rx",
        "\nx",
        " =1+1",
        "\u{FF1D}1+1",
        "'tis",
    ] {
        assert!(needs_guard(risky), "{risky:?}");
        let out = neutralise(risky);
        assert!(out.starts_with('\''), "{risky:?}");
        assert_eq!(unguard(&out), risky);
    }
    for plain in [";x", "|x", "%x", "tent"] {
        assert!(!needs_guard(plain), "{plain:?}");
        assert_eq!(neutralise(plain), plain);
        assert_eq!(unguard(plain), plain);
    }
    assert_eq!(unguard("'tis"), "'tis", "a value's own apostrophe stays");
}

/// Promise: many grades with one time on one pair import in linear time (the trigger
/// that keeps current grades used to scan them all per row); the last row counts.
#[test]
fn many_grades_with_one_time_import_and_the_last_counts() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let mut text = String::from("reviewer,context_id,item_id,scale,value,seconds,graded_at\n");
    for n in 0..20_000 {
        text.push_str(&format!(
            "ann,q1,i4,fit,{},{n},2026-11-20T10:00:00Z\n",
            n % 3
        ));
    }
    import_one(&mut study, "grades", &fixture.write("same.csv", &text)).unwrap();
    let conn = rusqlite::Connection::open(&path).unwrap();
    let value: i64 = conn
        .query_row(
            "SELECT e.value FROM current_grades c JOIN grade_events e ON e.id = c.event_id
             WHERE c.reviewer = 'ann' AND c.context_id = 'q1' AND c.item_id = 'i4'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(value, 19_999 % 3);
}

/// Promise: the study itself is never read as a CSV (plain file I/O on an open study
/// would drop this process's SQLite locks on it).
#[test]
fn the_open_study_is_not_read_as_a_csv() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let err = import_one(&mut study, "grades", &path).unwrap_err();
    assert!(err.contains("the study itself"), "{err}");
}

/// The value in force for (reviewer, context, item) on scale "fit".
fn current_value(path: &std::path::Path, reviewer: &str, context: &str, item: &str) -> i64 {
    let conn = rusqlite::Connection::open(path).unwrap();
    conn.query_row(
        "SELECT value FROM current_grades
         WHERE scale = 'fit' AND reviewer = ?1 AND context_id = ?2 AND item_id = ?3",
        [reviewer, context, item],
        |r| r.get(0),
    )
    .unwrap()
}

/// Rule (README, Conventions; common practice for judgment histories): the grade in
/// force is the latest by `graded_at`, and of two with the same time the later row. An
/// import small next to the study writes through the history's trigger and indexes row
/// by row; a large one sets them aside and builds them once. Both keep the rule.
#[test]
fn the_latest_grade_counts_whether_the_import_is_small_or_large() {
    // Against the fixture's grades: ann/q1/i1 was 2 at 09:00:00, bo/q1/i1 2 at 10:00:00,
    // ann/q1/i2 1 at 09:00:05.
    let rows = "ann,q1,i1,fit,0,2026-11-17T08:00:00Z\n\
                bo,q1,i1,fit,0,2026-11-16T09:59:59Z\n\
                ann,q1,i2,fit,2,2026-11-16T09:00:05Z\n";
    let header = "reviewer,context_id,item_id,scale,value,graded_at\n";
    let padding: String = (0..2_000)
        .map(|n| format!("pad{n},q2,i2,fit,1,2026-11-16T12:00:00Z\n"))
        .collect();
    // Small: the padding first (so the study is large), then the three rows alone.
    let small = Fixture::new();
    let (small_path, mut study) = small.study();
    let pad = small.write("pad.csv", &format!("{header}{padding}"));
    import_one(&mut study, "grades", &pad).unwrap();
    let three = small.write("three.csv", &format!("{header}{rows}"));
    import_one(&mut study, "grades", &three).unwrap();
    // Large: the three rows with the padding, in one file.
    let large = Fixture::new();
    let (large_path, mut study) = large.study();
    let all = large.write("all.csv", &format!("{header}{rows}{padding}"));
    import_one(&mut study, "grades", &all).unwrap();
    for path in [&small_path, &large_path] {
        assert_eq!(
            current_value(path, "ann", "q1", "i1"),
            0,
            "a later grade wins"
        );
        assert_eq!(
            current_value(path, "bo", "q1", "i1"),
            2,
            "an earlier one does not"
        );
        assert_eq!(
            current_value(path, "ann", "q1", "i2"),
            2,
            "same time: the later row"
        );
        assert_eq!(current_value(path, "pad1999", "q2", "i2"), 1);
    }
}
