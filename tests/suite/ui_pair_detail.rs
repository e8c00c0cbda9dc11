//! The pair detail on the Agreement screen shows what the reviewers saw: the candidate
//! item's picture, title and description and, for an anchor context, the anchor item's
//! title and picture. Checked against the demo catalog's own CSV files.

use crate::ui_support;

use std::collections::HashMap;

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::{Screen, Workbench};
use ui_support::{demo_copy, step_until};

fn table(path: &std::path::Path, key: &str, fields: &[&str]) -> HashMap<String, Vec<String>> {
    let mut reader = csv::Reader::from_path(path).unwrap();
    let header = reader.headers().unwrap().clone();
    let at = |name: &str| header.iter().position(|h| h == name).unwrap();
    reader
        .records()
        .map(|r| {
            let r = r.unwrap();
            (
                r[at(key)].to_string(),
                fields.iter().map(|f| r[at(f)].to_string()).collect(),
            )
        })
        .collect()
}

#[test]
fn the_pair_detail_shows_item_and_anchor_pictures_and_descriptions() {
    let (dir, path) = demo_copy();
    let catalog = dir.path().join("demo-catalog");
    let items = table(
        &catalog.join("items.csv"),
        "item_id",
        &["title", "description"],
    );
    let contexts = table(
        &catalog.join("contexts.csv"),
        "context_id",
        &["kind", "anchor_item_id"],
    );
    let mut h = Harness::builder()
        .with_size([1360.0, 2400.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.clone(), Screen::Agreement),
        );
    step_until(&mut h, "the agreement model", |h| {
        matches!(h.state().agreement.model, Some(Ok(_))) && !h.state().agreement.is_loading()
    });
    let pairs: Vec<(String, String)> = match &h.state().agreement.model {
        Some(Ok(m)) => m
            .review
            .disagreements
            .iter()
            .map(|d| (d.context_id.clone(), d.item_id.clone()))
            .collect(),
        _ => unreachable!(),
    };
    let anchor_pair = pairs
        .iter()
        .find(|(c, _)| contexts[c][0] == "anchor")
        .expect("the demo has a disagreement on an anchor context")
        .clone();
    let query_pair = pairs
        .iter()
        .find(|(c, _)| contexts[c][0] == "query")
        .expect("and one on a query")
        .clone();
    h.get_by_label_contains("Disagreements (").click();
    h.step();
    for (context, item) in [query_pair, anchor_pair] {
        h.get_by_label(&format!("Open pair {context} / {item}"))
            .click();
        h.step();
        let title = &items[&item][0];
        let description = &items[&item][1];
        let picture = format!("picture of {title}");
        step_until(&mut h, "the item's picture", |h| {
            h.query_all_by_label(&picture).next().is_some()
        });
        assert!(
            h.query_all_by_label(&format!("{title} ({item})"))
                .next()
                .is_some()
        );
        assert!(
            h.query_all_by_label(description).next().is_some(),
            "description of {item} not shown"
        );
        let anchor = &contexts[&context][1];
        let anchor_shown = "Anchor item";
        if contexts[&context][0] == "anchor" {
            let anchor_title = &items[anchor][0];
            assert!(h.query_all_by_label(anchor_shown).next().is_some());
            assert!(
                h.query_all_by_label(&format!("{anchor_title} ({anchor})"))
                    .next()
                    .is_some()
            );
            let anchor_picture = format!("picture of {anchor_title}");
            step_until(&mut h, "the anchor's picture", |h| {
                h.query_all_by_label(&anchor_picture).next().is_some()
            });
        } else {
            assert!(h.query_all_by_label(anchor_shown).next().is_none());
        }
    }
}
