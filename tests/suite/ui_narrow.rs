//! Every screen reads at 1100 px wide: the controls and columns the lead needs lie inside
//! the window (gold-pair buttons, the Catalog's match count, every Scale trial column,
//! the Scoreboard's cautions at a readable width).

use crate::ui_support::{Bench, demo_copy, step_until_within};

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::{Screen, Workbench};

const WIDTH: f32 = 1100.0;

fn narrow(path: &std::path::Path, screen: Screen) -> Bench {
    Harness::builder()
        .with_size([WIDTH, 2600.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), screen),
        )
}

fn inside(h: &Bench, label: &str) {
    let rect = h.get_by_label_contains(label).rect();
    assert!(
        rect.right() <= WIDTH && rect.left() >= 0.0,
        "{label}: {rect:?} leaves the {WIDTH} px window"
    );
}

#[test]
fn the_lead_screens_read_at_1100_px() {
    let (_dir, path) = demo_copy();

    let mut h = narrow(&path, Screen::Scales);
    step_until_within(&mut h, "the gold pairs", 30, |h| {
        h.query_all_by_label_contains("Remove ").next().is_some()
    });
    h.step();
    let first = h
        .query_all_by_label_contains("Remove ")
        .next()
        .map(|n| n.rect())
        .unwrap();
    assert!(first.right() <= WIDTH, "gold buttons cut: {first:?}");

    let mut h = narrow(&path, Screen::Trial);
    step_until_within(&mut h, "the trial", 60, |h| {
        h.query_by_label("Alpha per reviewer-minute").is_some()
    });
    h.step();
    for head in [
        "Can't judge",
        "Rankers by NDCG@10",
        "Discriminative power",
        "Alpha per reviewer-minute",
    ] {
        inside(&h, head);
    }

    let mut h = narrow(&path, Screen::Catalog);
    step_until_within(&mut h, "the items table", 30, |h| {
        h.query_by_label_contains("Items (240)").is_some()
    });
    h.get_by_role_and_label(egui::Role::TextInput, "Search")
        .focus();
    h.step();
    h.get_by_role_and_label(egui::Role::TextInput, "Search")
        .type_text("tent");
    h.step();
    h.step();
    inside(&h, " items match");

    let mut h = narrow(&path, Screen::Scoreboard);
    step_until_within(&mut h, "the comparisons", 60, |h| {
        h.query_by_label("Before acting on these numbers").is_some()
    });
    h.step();
    let caution = h.get_by_label("Before acting on these numbers").rect();
    assert!(caution.right() <= WIDTH, "{caution:?}");
    assert!(
        caution.width() >= 150.0,
        "the heading is not squeezed: {caution:?}"
    );
}
