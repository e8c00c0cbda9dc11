//! The Catalog screen driven through the real workbench: imports run on a thread, their
//! problems are listed by file, line and column, and the tables are searchable.

use std::path::Path;

use crate::ui_support;

use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
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

/// The workbench on `path` in a window tall enough for long tables and lists.
fn tall(path: &Path) -> Harness<'static, Workbench> {
    Harness::builder()
        .with_size([1360.0, 3200.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), Screen::Catalog),
        )
}

/// The rows of a CSV file as header → value maps.
fn csv_rows(path: &Path) -> Vec<std::collections::HashMap<String, String>> {
    let mut reader = csv::Reader::from_path(path).unwrap();
    let headers = reader.headers().unwrap().clone();
    reader
        .records()
        .map(|r| {
            let r = r.unwrap();
            headers
                .iter()
                .zip(r.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

/// The demo's catalog files, as `build_demo_study` wrote them beside the study.
fn fixture(path: &Path, name: &str) -> Vec<std::collections::HashMap<String, String>> {
    csv_rows(&path.with_file_name("demo-catalog").join(name))
}

/// The labels in `wanted` that are on screen, top to bottom.
fn shown_in_order(h: &Harness<'static, Workbench>, wanted: &[String]) -> Vec<String> {
    // A label's text is its AccessKit value.
    let mut shown: Vec<(f32, String)> = h
        .query_all_by(|n| {
            n.role() == egui::Role::Label && n.value().is_some_and(|l| wanted.contains(&l))
        })
        .map(|n| (n.rect().min.y, n.accesskit_node().value().unwrap()))
        .collect();
    shown.sort_by(|a, b| a.0.total_cmp(&b.0));
    shown.into_iter().map(|(_, l)| l).collect()
}

#[test]
fn sorting_by_title_orders_the_items_alphabetically_both_ways() {
    let (_dir, path) = ui_support::demo_copy();
    let mut titles: Vec<String> = fixture(&path, "items.csv")
        .into_iter()
        .map(|r| r["title"].clone())
        .collect();
    // Alphabetical as a reader expects it: case set aside first.
    titles.sort_by_key(|t| (t.to_lowercase(), t.clone()));
    let mut h = tall(&path);
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.get_by_label("Title").click();
    h.step();
    h.step();
    let shown = shown_in_order(&h, &titles);
    assert!(shown.len() >= 30, "only {} rows on screen", shown.len());
    assert_eq!(shown, titles[..shown.len()]);
    assert!(h.query_by_label("Title (asc)").is_some());

    h.get_by_label("Title (asc)").click();
    h.step();
    h.step();
    let shown = shown_in_order(&h, &titles);
    let descending: Vec<String> = titles.iter().rev().take(shown.len()).cloned().collect();
    assert!(shown.len() >= 30);
    assert_eq!(shown, descending);

    // A third click gives the catalog's own order back (items.csv's order).
    h.get_by_label("Title (desc)").click();
    h.step();
    h.step();
    let in_file: Vec<String> = fixture(&path, "items.csv")
        .into_iter()
        .map(|r| r["title"].clone())
        .collect();
    let shown = shown_in_order(&h, &in_file);
    assert_eq!(shown, in_file[..shown.len()]);
}

#[test]
fn the_search_says_how_many_items_match() {
    let (_dir, path) = ui_support::demo_copy();
    let items = fixture(&path, "items.csv");
    // Searched: id, title, category, description and the free attribute columns.
    let searched = |row: &std::collections::HashMap<String, String>, term: &str| {
        row.iter()
            .filter(|(k, _)| !["price", "image", "new"].contains(&k.as_str()))
            .any(|(_, v)| v.to_lowercase().contains(term))
    };
    let mut h = tall(&path);
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    assert!(h.query_by_label_contains("items match").is_none());
    type_into(&mut h, "Search", "ridge");
    h.step();
    let expected = items.iter().filter(|r| searched(r, "ridge")).count();
    assert!(expected > 1 && expected < items.len());
    assert!(
        h.query_by_label(&format!("{expected} of {} items match", items.len()))
            .is_some(),
        "no match count of {expected}"
    );
    let titles: Vec<String> = items.iter().map(|r| r["title"].clone()).collect();
    assert_eq!(shown_in_order(&h, &titles).len(), expected);
}

/// `2 Good alternative` for a level of `scale`, from scales.csv.
fn level_words(
    scales: &[std::collections::HashMap<String, String>],
    scale: &str,
    v: &str,
) -> String {
    let label = scales
        .iter()
        .find(|s| s["scale"] == scale && s["value"] == v)
        .map(|s| s["label"].clone())
        .unwrap();
    format!("{v} {label}")
}

#[test]
fn the_context_view_shows_each_rankers_list_with_its_grades() {
    let (_dir, path) = ui_support::demo_copy();
    let rankings = fixture(&path, "rankings.csv");
    let grades = fixture(&path, "grades.csv");
    let scales = fixture(&path, "scales.csv");
    let contexts = fixture(&path, "contexts.csv");
    let (context, scale) = ("q02", "fit4");
    let text = &contexts
        .iter()
        .find(|c| c["context_id"] == context)
        .unwrap()["text"];

    let mut h = tall(&path);
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.get_by_label("Context lists").click();
    h.step();
    for (combo, option) in [
        ("Context", format!("{context} · {text}")),
        ("Scale", scale.into()),
    ] {
        h.get_by_role_and_label(egui::Role::ComboBox, combo).click();
        h.step();
        h.step();
        // Long lists scroll inside the popup: the choice is clicked through AccessKit,
        // which reaches it wherever the popup has scrolled.
        let choice = format!("{combo}: {option}");
        h.get_by_label(&choice).click_accesskit();
        h.step();
        h.step();
        let picked = h.get_by_role_and_label(egui::Role::ComboBox, combo);
        assert_eq!(
            picked.accesskit_node().value().as_deref(),
            Some(option.as_str())
        );
    }
    h.step();

    let distinct = |rows: &[std::collections::HashMap<String, String>], column: &str| {
        let mut names: Vec<String> = rows.iter().map(|r| r[column].clone()).collect();
        names.sort_unstable();
        names.dedup();
        names
    };
    let rankers = distinct(&rankings, "ranker");
    let reviewers = distinct(&grades, "reviewer");
    assert_eq!((rankers.len(), reviewers.len()), (3, 3));
    let mut checked = 0;
    for ranker in &rankers {
        let mut list: Vec<(usize, &str)> = rankings
            .iter()
            .filter(|r| &r["ranker"] == ranker && r["context_id"] == context)
            .map(|r| (r["rank"].parse().unwrap(), r["item_id"].as_str()))
            .collect();
        list.sort_unstable();
        assert!(list.len() >= 10);
        let mut last_y = f32::MIN;
        for (rank, item) in list {
            let start = format!("{ranker} rank {rank}: {item} ");
            let row = h.get_by_label_contains(&start);
            let y = row.rect().min.y;
            assert!(
                y > last_y,
                "{ranker} rank {rank} is drawn above the rank before it"
            );
            last_y = y;
            let words = row.accesskit_node().value().unwrap();
            let pair: Vec<_> = grades
                .iter()
                .filter(|g| {
                    g["context_id"] == context && g["item_id"] == item && g["scale"] == scale
                })
                .collect();
            let mut levels: Vec<u8> = Vec::new();
            for reviewer in &reviewers {
                let said = match pair.iter().find(|g| &g["reviewer"] == reviewer) {
                    None => "not graded".to_string(),
                    Some(g) if g["value"].is_empty() => "can't judge".to_string(),
                    Some(g) => {
                        levels.push(g["value"].parse().unwrap());
                        level_words(&scales, scale, &g["value"])
                    }
                };
                assert!(
                    words.contains(&format!("; {reviewer} {said}")),
                    "{words}: expected {reviewer} {said}"
                );
            }
            // Nobody settled anything in the demo: the panel grade is the lower median.
            levels.sort_unstable();
            let panel = match levels.is_empty() {
                true => "no panel grade".to_string(),
                false => level_words(&scales, scale, &levels[(levels.len() - 1) / 2].to_string()),
            };
            assert!(
                words.contains(&format!("; panel {panel};")),
                "{words}: panel {panel}"
            );
            checked += usize::from(!pair.is_empty());
        }
    }
    assert!(checked > 10, "only {checked} graded pairs were listed");
}

#[test]
fn a_reviewer_never_sees_the_context_view() {
    let (dir, path) = ui_support::demo_copy();
    let mut h = tall(&path);
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    assert!(
        h.query_by_label("Context lists").is_some(),
        "the lead sees it"
    );

    // Signed in on the desk, the same window is the reviewer's: no Catalog at all.
    h.state_mut().screen = Screen::Desk;
    crate::ui_desk::sign_in(&mut h, "rev-amber");
    h.state_mut().screen = Screen::Catalog;
    h.step();
    h.step();
    assert!(h.query_by_label_contains("Items (240)").is_none());
    assert!(h.query_by_label("Context lists").is_none());
    assert!(h.query_by_label_contains(" rank 1: ").is_none());

    // A reviewer's copy shows no context view either, signed in or not.
    let copy = dir.path().join("cedar-copy.plumb");
    plumbline::study::Study::open(&path)
        .unwrap()
        .hand_out("rev-cedar", &copy)
        .unwrap();
    let mut h = tall(&copy);
    step_until(&mut h, "the copy's items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.step();
    assert!(h.query_by_label("Context lists").is_none());
    assert!(h.query_by_label_contains(" rank 1: ").is_none());
}

#[test]
fn a_new_empty_study_opens_with_the_import_panel() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("new.plumb");
    plumbline::study::Study::create(&path).unwrap();
    let mut h = tall(&path);
    step_until(&mut h, "the empty tables", |h| {
        h.query_by_label_contains("Items (0)").is_some()
    });
    h.step();
    for kind in ["items", "contexts", "rankings", "scales", "grades", "gold"] {
        let label = format!("{kind}.csv");
        let field = field(&h, &label);
        assert!(
            field.rect().width() >= 320.0,
            "{kind}.csv is {} wide",
            field.rect().width()
        );
    }

    // A study with a catalog opens with the panel closed.
    let (_demo_dir, demo) = ui_support::demo_copy();
    let mut h = tall(&demo);
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.step();
    assert!(
        h.query_by_role_and_label(egui::Role::TextInput, "items.csv")
            .is_none()
    );
}

/// Where no file dialog can open (no file-chooser service, as on a bare test machine), the
/// note says so right under the button that asked, not below the whole form.
#[test]
fn no_file_dialog_is_said_beside_the_button() {
    let (_dir, path) = ui_support::demo_copy();
    let mut h = tall(&path);
    step_until(&mut h, "the items table", |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.get_by_label("Import CSV files").click();
    h.step();
    h.step();
    let button = h.get_by_label("Choose rankings.csv…").rect();
    h.get_by_label("Choose rankings.csv…").click();
    step_until(&mut h, "the no-dialog note", |h| {
        h.query_by_label_contains("No file dialog could open")
            .is_some()
    });
    let note = h.get_by_label_contains("No file dialog could open").rect();
    assert!(
        note.top() >= button.bottom() - 1.0 && note.top() <= button.bottom() + 12.0,
        "the note {note:?} sits right under its button {button:?}"
    );
    // The next button down moved below the note.
    let next = h.get_by_label("Choose scales.csv…").rect();
    assert!(next.top() >= note.bottom());
}
