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

/// `export` takes the settings of `score`: the scores file equals `score --format csv` with
/// the same settings, and the report states each of them.
#[test]
fn export_takes_the_score_settings_and_the_report_states_them() {
    let (_dir, path) = crate::ui_support::demo_copy();
    let s = path.to_str().unwrap();
    let dir = path.parent().unwrap();
    let (scores, report, grades) = (
        dir.join("scores.csv"),
        dir.join("report.md"),
        dir.join("grades.csv"),
    );
    let settings = [
        "--scale",
        "fit4",
        "--k",
        "3,7",
        "--gain",
        "linear",
        "--unjudged",
        "condense",
        "--segment",
        "new",
        "--baseline",
        "hybrid-cand",
        "--bootstrap",
        "200",
    ];
    let mut args: Vec<&str> = vec![
        "export",
        s,
        "--scores",
        scores.to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
        "--grades",
        grades.to_str().unwrap(),
        "--grades",
        "rev-amber",
    ];
    args.extend(settings);
    let run = |args: &[&str]| {
        let a: Vec<&std::ffi::OsStr> = args.iter().map(std::ffi::OsStr::new).collect();
        let out = crate::cli::plumbline(&a);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8(out.stdout).unwrap()
    };
    run(&args);
    let mut score: Vec<&str> = vec!["score", s, "--format", "csv", "--grades", "rev-amber"];
    score.extend(settings);
    assert_eq!(std::fs::read_to_string(&scores).unwrap(), run(&score));
    let md = std::fs::read_to_string(&report).unwrap();
    for line in [
        "- **Scale:** fit4",
        "- **Grades:** reviewer rev-amber only",
        "- **Cut-offs k:** 3, 7",
        "- **Gain:** linear (level)",
        "- **Unjudged items:** removed before cutting at k (condensed lists)",
        "- **Segment:** new",
        "- **Baseline:** hybrid-cand",
        "200 resamples",
    ] {
        assert!(md.contains(line), "{line} missing from the report");
    }
    assert!(
        std::fs::read_to_string(&grades)
            .unwrap()
            .starts_with("reviewer,")
    );
}
