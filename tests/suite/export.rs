//! Exports: spreadsheet formulas are neutralised, and export → import is exact.

use crate::common;

use common::Fixture;
use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

#[test]
fn grade_export_round_trips_exactly_with_formula_like_text() {
    let fixture = Fixture::new();
    // Titles, notes and reasons a spreadsheet would execute.
    fixture.write(
        "items.csv",
        &common::ITEMS.replace("Ember Stove", "=HYPERLINK(\"x\")"),
    );
    fixture.write(
        "grades.csv",
        &format!(
            "{}ann,q2,i4,fit,,\"-other: unreadable\",3.0,2026-11-16T09:02:00Z,\"=1+1\"\nbo,q2,i4,fit,2,,1.5,2026-11-16T11:00:00+02:00,@mention\n",
            common::GRADES
        ),
    );
    let (path, study) = fixture.study();
    let mut first = Vec::new();
    study.export_grades(&mut first).unwrap();
    let text = String::from_utf8(first.clone()).unwrap();
    assert!(text.contains("'=HYPERLINK(\"\"x\"\")"), "{text}");
    assert!(text.contains("'=1+1"));
    assert!(text.contains("'-other: unreadable"));
    assert!(text.contains("'@mention"));
    assert!(
        !text
            .lines()
            .any(|l| l.split(',').any(|c| c.starts_with('=')))
    );
    drop(study);

    // Import the export into a second study with the same catalog.
    let exported = fixture.write("exported.csv", &text);
    let second_path = fixture.path("second.plumb");
    let mut second = Study::create(&second_path).unwrap();
    let mut set = fixture.full_set();
    set.grades = Some(Source::from_path(&exported).unwrap());
    import::import(&mut second, &set).unwrap();
    let mut again = Vec::new();
    second.export_grades(&mut again).unwrap();
    assert_eq!(
        String::from_utf8(again).unwrap(),
        text,
        "export → import → export must be exact"
    );

    // And importing the export back into the original changes nothing.
    let mut original = Study::open(&path).unwrap();
    let before = common::study_dump(&path);
    let reports = import::import(
        &mut original,
        &ImportSet {
            grades: Some(Source::from_path(&exported).unwrap()),
            ..Default::default()
        },
    )
    .unwrap();
    assert_eq!(reports[0].added, 0);
    assert_eq!(common::study_dump(&path), before);
}
