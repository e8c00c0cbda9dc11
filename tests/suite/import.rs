//! CSV import: the happy path, idempotence, and malformed files reported exactly.

use crate::common;

use common::{Fixture, study_dump};
use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

#[test]
fn every_file_imports_and_reports_counts() {
    let fixture = Fixture::new();
    let path = fixture.path("s.plumb");
    let mut study = Study::create(&path).unwrap();
    let reports = import::import(&mut study, &fixture.full_set()).unwrap();
    let by_kind = |k: &str| reports.iter().find(|r| r.kind == k).unwrap().clone();
    assert_eq!(by_kind("items").added, 4);
    assert_eq!(by_kind("contexts").added, 3);
    assert_eq!(by_kind("scales").added, 3);
    assert_eq!(by_kind("rankings").added, 10);
    assert_eq!(by_kind("grades").added, 8);
    let counts = study.counts().unwrap();
    assert_eq!(counts.items, 4);
    assert_eq!(counts.rankers, 2);
    assert_eq!(counts.reviewers, 2);
    assert_eq!(counts.current_grades, 8);
    let snapshot = study.snapshot().unwrap();
    let base = snapshot.ranker_index("base").unwrap();
    let q1 = snapshot.contexts.iter().position(|c| c.id == "q1").unwrap();
    let ids: Vec<&str> = snapshot.lists[base][q1]
        .iter()
        .map(|i| snapshot.items[*i as usize].id.as_str())
        .collect();
    assert_eq!(ids, ["i1", "i2", "i3"]);
}

#[test]
fn reimporting_the_same_files_changes_nothing() {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let before = study_dump(&path);
    let reports = import::import(&mut study, &fixture.full_set()).unwrap();
    for r in &reports {
        assert_eq!((r.added, r.updated), (0, 0), "{r:?}");
        assert!(r.unchanged > 0);
    }
    assert_eq!(study_dump(&path), before);
}

#[test]
fn changed_rows_count_as_updated() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    let items = common::ITEMS.replace("Ember Stove", "Ember Stove II");
    let set = ImportSet {
        items: Some(Source::from_path(&fixture.write("items2.csv", &items)).unwrap()),
        ..Default::default()
    };
    let r = &import::import(&mut study, &set).unwrap()[0];
    assert_eq!((r.added, r.updated, r.unchanged), (0, 1, 3));
}

#[test]
fn rankings_by_score_sort_descending_with_ties_by_item_id() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    let csv = "ranker,context_id,item_id,score\nsc,q2,i4,0.5\nsc,q2,i1,0.9\nsc,q2,i3,0.5\n";
    let set = ImportSet {
        rankings: Some(Source::from_path(&fixture.write("scored.csv", csv)).unwrap()),
        ..Default::default()
    };
    import::import(&mut study, &set).unwrap();
    let snapshot = study.snapshot().unwrap();
    let r = snapshot.ranker_index("sc").unwrap();
    let q2 = snapshot.contexts.iter().position(|c| c.id == "q2").unwrap();
    let ids: Vec<&str> = snapshot.lists[r][q2]
        .iter()
        .map(|i| snapshot.items[*i as usize].id.as_str())
        .collect();
    assert_eq!(ids, ["i1", "i3", "i4"]);
}

#[test]
fn a_bom_and_mixed_case_headers_are_accepted() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    let csv = "\u{feff}Item_ID,TITLE\ni9,Moss Pad\n";
    let set = ImportSet {
        items: Some(Source::from_path(&fixture.write("bom.csv", csv)).unwrap()),
        ..Default::default()
    };
    assert_eq!(import::import(&mut study, &set).unwrap()[0].added, 1);
}

/// Which file of the fixture a malformed case replaces.
#[derive(Clone, Copy)]
enum Slot {
    Items,
    Contexts,
    Rankings,
    Scales,
    Grades,
}

/// Imports `text` as the given kind into a study that already holds the fixture, and
/// returns the error message; asserts the study is unchanged.
fn reject(slot: Slot, text: &[u8]) -> String {
    let fixture = Fixture::new();
    let (path, mut study) = fixture.study();
    let before = study_dump(&path);
    let name = "bad.csv";
    std::fs::write(fixture.path(name), text).unwrap();
    let source = Some(Source::from_path(&fixture.path(name)).unwrap());
    let mut set = ImportSet::default();
    match slot {
        Slot::Items => set.items = source,
        Slot::Contexts => set.contexts = source,
        Slot::Rankings => set.rankings = source,
        Slot::Scales => set.scales = source,
        Slot::Grades => set.grades = source,
    }
    let err = import::import(&mut study, &set).expect_err("must be refused");
    assert!(err.is_bad_input(), "{err}");
    assert_eq!(
        study_dump(&path),
        before,
        "study changed after a refused import"
    );
    err.to_string()
}

fn first_line(message: &str) -> &str {
    message.lines().next().unwrap()
}

#[test]
fn malformed_files_are_reported_with_line_and_column() {
    let cases: Vec<(Slot, &[u8], &str)> = vec![
        (Slot::Rankings, b"ranker,context_id,item_id,rank\nb,q1,i1,1\nb,q1,i2,2\nb,q1,i3,3\nb,q2,i1,1\nb,q2,i3,x\n",
         "bad.csv:6:4: rank must be a positive integer, got \"x\""),
        (Slot::Rankings, b"ranker,context_id,item_id\nb,q1,i1\n",
         "bad.csv:1:4: rankings need a rank or a score column"),
        (Slot::Items, b"item_id\ni7\n", "bad.csv:1:2: required column \"title\" is missing"),
        (Slot::Contexts, b"context_id,kind,kind\nq9,query,query\n", "bad.csv:1:3: column \"kind\" appears more than once"),
        (Slot::Contexts, b"context_id,kind,colour\nq9,query,red\n", "bad.csv:1:3: unknown column \"colour\"; expected columns are context_id, kind, text, anchor_item_id, segment"),
        (Slot::Items, b"item_id,title,price\ni7,Tarp,cheap\n", "bad.csv:2:3: price must be a number, got \"cheap\""),
        (Slot::Items, b"item_id,title\ni7,Tarp\ni8,Stakes\ni7,Tarp again\n", "bad.csv:4:1: duplicate item_id \"i7\" (first on line 2)"),
        (Slot::Rankings, b"ranker,context_id,item_id,rank\nb,q1,i1,1\nb,q7,i2,2\n", "bad.csv:3:2: unknown context \"q7\"; import it in contexts.csv first"),
        (Slot::Rankings, b"ranker,context_id,item_id,rank\nb,q1,i1,1\nb,q1,nope,2\n", "bad.csv:3:3: unknown item \"nope\"; import it in items.csv first"),
        (Slot::Rankings, b"ranker,context_id,item_id,rank\nb,q1,i1,1\nb,q1,i2,1\n", "bad.csv:3:4: rank 1 is used twice in the list of ranker \"b\" for context \"q1\" (first on line 2)"),
        (Slot::Grades, b"reviewer,context_id,item_id,scale,value\nann,q1,i1,fit,7\n", "bad.csv:2:5: value must be a level of scale \"fit\" (0 to 2), got \"7\""),
        (Slot::Grades, b"reviewer,context_id,item_id,scale,value\nann,q1,i1,loose,1\n", "bad.csv:2:4: unknown scale \"loose\"; import it in scales.csv first"),
        (Slot::Scales, b"scale,value,label\nnew,0,No\nnew,1,Some\nnew,3,All\n", "bad.csv:4:2: values of scale \"new\" must run 0, 1, 2\u{2026} without gaps; 2 is missing"),
        (Slot::Items, b"item_id,title\ni7,Tarp\ni8,Stakes,extra\n", "bad.csv:3:3: this row has 3 fields but the header has 2"),
        (Slot::Items, b"item_id,title\ni7,\"Tarp\ni8,Stakes\n", "bad.csv:2:2: a quoted field is never closed (a \" is missing)"),
        (Slot::Items, b"item_id,title\ni7,Caf\xe9 Mug\n", "bad.csv:2:2: field is not valid UTF-8 (byte 4 of the field); save the file as UTF-8"),
        (Slot::Items, b"", "bad.csv:1:1: the file is empty; expected a header row with item_id, title"),
        (Slot::Items, b"item_id,title\ni7,Ta\x00rp\n", "bad.csv:2:2: field contains a NUL byte at byte 3"),
        (Slot::Contexts, b"context_id,kind\nq9,question\n", "bad.csv:2:2: kind must be query or anchor, got \"question\""),
        (Slot::Contexts, b"context_id,kind,anchor_item_id\na9,anchor,ghost\n", "bad.csv:2:3: unknown item \"ghost\"; import it in items.csv first"),
        (Slot::Grades, b"reviewer,context_id,item_id,scale,value,graded_at\nann,q1,i1,fit,1,last tuesday\n", "bad.csv:2:6: graded_at must be an RFC 3339 time such as 2026-11-16T09:14:03Z, got \"last tuesday\": it is not in the form YYYY-MM-DDTHH:MM:SS with an offset"),
        (Slot::Items, b"item_id,title,image\ni7,Tarp,../../etc/passwd\n", "bad.csv:2:3: image path \"../../etc/passwd\" leaves the catalog folder; use a path relative to the CSV without \"..\""),
        (Slot::Rankings, b"ranker,context_id,item_id,rank\nb,q1,i1,1\nb,q1,i2,3\n", "bad.csv:3:4: ranks must run 1, 2, 3\u{2026} in each list; rank 2 is missing in the list of ranker \"b\" for context \"q1\""),
        (Slot::Items, b"i7,Tarp\ni8,Stakes\n", "bad.csv:1:1: no header row: the first line must name the columns (item_id, title\u{2026}); it reads \"i7,tarp\""),
        (Slot::Contexts, b"context_id,kind,text\nq9,query\n", "bad.csv:2:3: this row has 2 fields but the header has 3"),
        (Slot::Grades, b"reviewer,context_id,item_id,scale,value\nann,q1,i1,fit,1.5\n", "bad.csv:2:5: value must be a level of scale \"fit\" (0 to 2), got \"1.5\""),
    ];
    assert!(cases.len() >= 20);
    for (slot, text, expected) in cases {
        let message = reject(slot, text);
        assert_eq!(first_line(&message), expected, "full message: {message}");
    }
}

#[test]
fn an_error_on_the_last_of_thousands_of_lines_imports_nothing() {
    let mut text = String::from("item_id,title,price\n");
    for i in 0..5000 {
        text.push_str(&format!("bulk{i},Item {i},1.00\n"));
    }
    text.push_str("bulk_last,Last item,free\n");
    let message = reject(Slot::Items, text.as_bytes());
    assert_eq!(
        first_line(&message),
        "bad.csv:5002:3: price must be a number, got \"free\""
    );
}

#[test]
fn a_failing_file_rolls_back_the_files_before_it() {
    let fixture = Fixture::new();
    let path = fixture.path("fresh.plumb");
    let mut study = Study::create(&path).unwrap();
    let before = study_dump(&path);
    let mut set = fixture.full_set();
    set.grades = Some(
        Source::from_path(&fixture.write(
            "g.csv",
            "reviewer,context_id,item_id,scale,value\nann,q1,i1,fit,9\n",
        ))
        .unwrap(),
    );
    assert!(import::import(&mut study, &set).is_err());
    assert_eq!(
        study_dump(&path),
        before,
        "items, contexts and rankings must roll back too"
    );
}

#[test]
fn a_field_over_one_mebibyte_is_refused() {
    let mut text = b"item_id,title,description\ni7,Tarp,".to_vec();
    text.extend(std::iter::repeat_n(b'a', (1 << 20) + 1));
    text.push(b'\n');
    let message = reject(Slot::Items, &text);
    assert_eq!(
        first_line(&message),
        "bad.csv:2:3: field is longer than the limit of 1048576 bytes"
    );
}

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
