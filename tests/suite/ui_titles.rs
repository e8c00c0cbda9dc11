//! Small things a lead notices: a reviewer's copy is titled as a copy everywhere, and a
//! form shows no complaint before anything was typed.

use crate::ui_support::{demo_copy, harness, step_until};

use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::ui::Screen;

fn texts(h: &crate::ui_support::Bench) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
    }
    out
}

#[test]
fn a_reviewer_copy_is_titled_as_a_copy_for_that_reviewer() {
    let (dir, path) = demo_copy();
    let copy = dir.path().join("amber-copy.plumb");
    let study = plumbline::study::Study::open(&path).unwrap();
    study.hand_out("rev-amber", &copy).unwrap();
    drop(study);
    let mut h = harness(&copy, Screen::Home);
    step_until(&mut h, "Home", |h| {
        h.query_all_by_label_contains("copy for rev-amber").count() > 0
    });
    let shown = texts(&h);
    let title = "Fennel Hollow demo — copy for rev-amber";
    assert!(
        shown.iter().any(|t| t == &format!("Study: {title}")),
        "{shown:?}"
    );
    assert!(
        shown.iter().any(|t| t == title),
        "the Home heading: {shown:?}"
    );
    // The lead's own study is titled plainly.
    let mut lead = harness(&path, Screen::Home);
    step_until(&mut lead, "Home", |h| {
        h.query_all_by_label("Study: Fennel Hollow demo").count() > 0
    });
    assert!(!texts(&lead).iter().any(|t| t.contains("copy for")));
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["status", copy.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&status.stdout).starts_with(&format!("Study {title}")));
}

#[test]
fn the_collapse_map_form_says_nothing_before_it_is_touched() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Scales);
    step_until(&mut h, "the scales", |h| {
        matches!(h.state().scales.model, Some(Ok(_)))
    });
    h.step();
    assert!(
        !texts(&h).iter().any(|t| t.contains("the map needs a name")),
        "no complaint before anything was typed"
    );
}

#[test]
fn question_mark_or_f1_lists_every_key_of_the_screen() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Desk);
    let ctx = h.ctx.clone();
    h.state_mut().sign_in(&ctx, "rev-amber");
    h.step();
    h.key_press(egui::Key::F1);
    h.step();
    assert!(h.query_by_label("Keys on this screen").is_some());
    for key in ["Backspace or Ctrl+Z", "S or Right arrow", "C", "Ctrl+O"] {
        assert!(h.query_by_label(key).is_some(), "{key} is listed");
    }
    h.key_press(egui::Key::F1);
    h.step();
    assert!(
        h.query_by_label("Keys on this screen").is_none(),
        "F1 closes it"
    );
    // Home lists the keys that work everywhere, not the desk's.
    let mut home = harness(&path, Screen::Home);
    home.step();
    home.key_press(egui::Key::Questionmark);
    home.step();
    assert!(home.query_by_label("Keys on this screen").is_some());
    assert!(home.query_by_label("Backspace or Ctrl+Z").is_none());
}

#[test]
fn an_anchor_context_is_named_by_its_anchor_items_title() {
    let (_dir, path) = demo_copy();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["view", "agreement", path.to_str().unwrap()])
        .output()
        .unwrap();
    let view: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let study = plumbline::study::Study::open(&path).unwrap();
    let snapshot = study.snapshot().unwrap();
    let anchored = view["review"]["disagreements"]
        .as_array()
        .unwrap()
        .iter()
        .find(|d| d["context_id"].as_str().unwrap().starts_with('a'))
        .expect("the demo has disagreements on anchor contexts");
    let context = snapshot
        .contexts
        .iter()
        .find(|c| anchored["context_id"] == c.id.as_str())
        .unwrap();
    let anchor = context.anchor_item.clone().unwrap();
    let title = &snapshot
        .items
        .iter()
        .find(|i| i.id == anchor)
        .unwrap()
        .title;
    assert_eq!(
        anchored["context_text"],
        format!("more like {title} ({anchor})")
    );
}
