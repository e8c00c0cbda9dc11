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
        (Slot::Items, b"item_id,title\ni1,Tent\ni1,Tent again\n", "bad.csv:3:1: duplicate item_id \"i1\" (first on line 2)"),
        (Slot::Rankings, b"ranker,context_id,item_id,rank\nb,q1,i1,1\nc,q1,i1,1\nb,q1,i2,3\n", "bad.csv:4:4: ranks must run 1, 2, 3\u{2026} in each list; rank 2 is missing in the list of ranker \"b\" for context \"q1\""),
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

/// The ids of one list as the study holds it.
fn list_of(study: &Study, ranker: &str, context: &str) -> Vec<String> {
    let snapshot = study.snapshot().unwrap();
    let r = snapshot.ranker_index(ranker).unwrap();
    let c = snapshot
        .contexts
        .iter()
        .position(|x| x.id == context)
        .unwrap();
    snapshot.lists[r][c]
        .iter()
        .map(|i| snapshot.items[*i as usize].id.clone())
        .collect()
}

#[test]
fn lists_scattered_through_the_file_are_imported_whole() {
    let fixture = Fixture::new();
    let (_, mut study) = fixture.study();
    // Three lists, none of whose rows are together.
    let csv =
        "ranker,context_id,item_id,rank\nx,q1,i2,2\ny,q1,i4,1\nx,q2,i3,1\nx,q1,i1,1\ny,q1,i2,2\n";
    let set = ImportSet {
        rankings: Some(Source::from_path(&fixture.write("scattered.csv", csv)).unwrap()),
        ..Default::default()
    };
    let report = &import::import(&mut study, &set).unwrap()[0];
    assert_eq!((report.added, report.updated, report.unchanged), (5, 0, 0));
    assert_eq!(list_of(&study, "x", "q1"), ["i1", "i2"]);
    assert_eq!(list_of(&study, "y", "q1"), ["i4", "i2"]);
    assert_eq!(list_of(&study, "x", "q2"), ["i3"]);
    assert_eq!(study.counts().unwrap().rankers, 4);
}

#[test]
fn progress_reports_each_file_by_rows_and_bytes() {
    let fixture = Fixture::new();
    let mut study = Study::create(&fixture.path("p.plumb")).unwrap();
    let mut steps = Vec::new();
    import::import_with_progress(&mut study, &fixture.full_set(), &mut |s| {
        steps.push(s.clone())
    })
    .unwrap();
    let files = [
        ("scales.csv", common::SCALES, 3),
        ("items.csv", common::ITEMS, 4),
        ("contexts.csv", common::CONTEXTS, 3),
        ("rankings.csv", common::RANKINGS, 10),
        ("grades.csv", common::GRADES, 8),
    ];
    for (n, (file, text, rows)) in files.into_iter().enumerate() {
        let of_file: Vec<_> = steps.iter().filter(|s| s.file == file).collect();
        let first = of_file[0];
        assert_eq!((first.files_done, first.files_total), (n, 5), "{file}");
        assert_eq!((first.rows_done, first.bytes_done), (0, 0), "{file}");
        assert_eq!(first.bytes_total, text.len() as u64, "{file}");
        if file == "grades.csv" {
            let last = of_file.last().unwrap();
            assert!(last.finishing, "grades end with indexes and current grades");
            assert_eq!((last.rows_done, last.bytes_done), (rows, text.len() as u64));
        }
    }
}
