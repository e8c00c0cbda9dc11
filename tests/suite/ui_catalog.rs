//! The Catalog screen driven through the real workbench: imports run on a thread, their
//! problems are listed by file, line and column, and the tables are searchable.

use std::path::Path;

use crate::ui_support;

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::Screen;
use plumbline::ui::Workbench;
use ui_support::step_until;

fn type_into(h: &mut Harness<'static, Workbench>, label: &str, text: &str) {
    field(h, label).focus();
    h.step();
    field(h, label).type_text(text);
    h.step();
}

fn field<'h>(h: &'h Harness<'static, Workbench>, label: &'h str) -> egui_kittest::Node<'h> {
    h.get_by_role_and_label(egui::Role::TextInput, label)
}

fn count(path: &Path, sql: &str) -> i64 {
    rusqlite::Connection::open(path)
        .unwrap()
        .query_row(sql, [], |r| r.get(0))
        .unwrap()
}

#[test]
fn import_problems_are_listed_and_a_good_import_shows_up_in_the_tables() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    let bad = dir.path().join("rankings.csv");
    std::fs::write(
        &bad,
        "ranker,context_id,item_id,rank\nlexical-prod,q01,fh-0001,x\n",
    )
    .unwrap();
    let good = dir.path().join("contexts.csv");
    std::fs::write(
        &good,
        "context_id,kind,text,anchor_item_id,segment\nq99,query,ultralight bivvy for alpine starts,,tail\n",
    )
    .unwrap();
    let ranked_before = count(&path, "SELECT COUNT(*) FROM ranked_items");

    let mut h: Harness<'static, Workbench> = Harness::builder()
        .with_size([1360.0, 860.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.clone(), Screen::Catalog),
        );
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    // Thumbnails come from the image worker, not the UI thread.
    step_until(&mut h, "a thumbnail", |h| {
        h.query_all_by_label_contains("thumbnail of")
            .next()
            .is_some()
    });

    h.get_by_label("Import CSV files").click();
    h.step();
    type_into(&mut h, "rankings.csv", &bad.display().to_string());
    h.get_by_label("Import").click();
    step_until(&mut h, "the problems", |h| {
        !h.state().catalog.problems.is_empty()
    });
    h.step();
    let p = &h.state().catalog.problems[0];
    assert_eq!((p.file.as_str(), p.line, p.column), ("rankings.csv", 2, 4));
    assert!(
        h.query_by_label_contains("Nothing was imported: 1 problem(s).")
            .is_some()
    );
    assert!(h.query_by_label_contains("rank must be").is_some());
    assert_eq!(
        count(&path, "SELECT COUNT(*) FROM ranked_items"),
        ranked_before
    );

    // Clear the rankings path, import a good contexts.csv instead.
    field(&h, "rankings.csv").focus();
    h.step();
    for _ in 0..bad.display().to_string().len() {
        h.key_press(egui::Key::Backspace);
    }
    h.step();
    type_into(&mut h, "contexts.csv", &good.display().to_string());
    h.get_by_label("Import").click();
    step_until(&mut h, "the report", |h| {
        !h.state().catalog.reports.is_empty()
    });
    assert!(h.state().catalog.problems.is_empty());
    step_until(&mut h, "the reloaded tables", |h| {
        h.query_by_label_contains("Contexts (51)").is_some()
    });
    assert!(h.query_by_label_contains("1 added").is_some());
    assert_eq!(
        count(
            &path,
            "SELECT COUNT(*) FROM contexts WHERE context_id = 'q99'"
        ),
        1
    );

    h.get_by_label_contains("Contexts (51)").click();
    h.step();
    type_into(&mut h, "Search", "bivvy");
    h.step();
    assert!(
        h.query_by_label("ultralight bivvy for alpine starts")
            .is_some()
    );
    assert!(
        h.query_by_label("q01").is_none(),
        "rows that do not match are filtered out"
    );
}
