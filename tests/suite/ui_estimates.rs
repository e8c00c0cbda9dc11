//! The Scoreboard's estimates section driven through the real workbench on a fresh demo
//! study (its machine judge and drawn sample): the figures on screen are those `plumbline
//! score --machine --format json` prints, a target width gives the contexts to grade,
//! and the button draws them into the study's human sample.

use std::path::Path;
use std::process::Command;

use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::ui::Screen;

use crate::ui_support::{Bench, demo_copy, harness, step_until};

fn machine_json(path: &Path, width: &str) -> serde_json::Value {
    let out = Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["score", path.to_str().unwrap(), "--format", "json"])
        .args(["--machine", "judge-sorrel", "--target-width", width])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn all_texts(h: &Bench) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
    }
    out
}

fn interval(e: &serde_json::Value, mean: &str, low: &str, high: &str) -> String {
    let f = |k: &str| e[k].as_f64().unwrap();
    format!("{:.3} [{:.3}, {:.3}]", f(mean), f(low), f(high))
}

#[test]
fn estimates_on_screen_equal_score_machine_and_the_button_draws_more() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Scoreboard);
    step_until(&mut h, "the scoreboard", |h| {
        h.state().scoreboard.is_current()
    });
    h.state_mut().scoreboard.estimates.target_width = "0.05".into();
    step_until(&mut h, "the estimates", |h| {
        all_texts(h).iter().any(|t| t.starts_with("Grade "))
    });
    let json = machine_json(&path, "0.05");
    let texts = all_texts(&h);
    let has = |t: &str| texts.iter().any(|s| s == t);
    let mut most = 0;
    for e in json["estimates"].as_array().unwrap() {
        if e["metric"] != "ndcg@10" {
            continue;
        }
        let combined = interval(e, "estimate", "ci_low", "ci_high");
        assert!(has(&combined), "{}: {combined} not on screen", e["ranker"]);
        let human = interval(
            e,
            "human_only_mean",
            "human_only_ci_low",
            "human_only_ci_high",
        );
        assert!(has(&human), "{}: {human} not on screen", e["ranker"]);
        let machine = format!("{:.3}", e["machine_only_mean"].as_f64().unwrap());
        assert!(has(&machine), "{}: {machine} not on screen", e["ranker"]);
        most = most.max(e["humans_needed"].as_u64().unwrap());
    }
    assert!(most > 0);
    assert!(
        texts
            .iter()
            .any(|t| t.starts_with(&format!("Grade {most} more contexts"))),
        "{texts:?}"
    );
    let button = format!("Draw {most} more contexts");
    h.get_by_label(&button).scroll_to_me();
    for _ in 0..8 {
        h.step();
    }
    h.get_by_label(&button).click();
    step_until(&mut h, "the draw", |h| {
        h.state().scoreboard.estimates.message.is_some()
    });
    let message = h.state().scoreboard.estimates.message.clone().unwrap();
    assert!(
        message.starts_with(&format!("Drew {most} contexts")),
        "{message}"
    );
    let status = Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["status", path.to_str().unwrap(), "--format", "json"])
        .output()
        .unwrap();
    let status: serde_json::Value = serde_json::from_slice(&status.stdout).unwrap();
    assert_eq!(
        status["sample"]["drawn"].as_u64().unwrap(),
        plumbline::demo::DEMO_SAMPLE_CONTEXTS as u64 + most
    );
}

/// The Agreement screen's machine-judge section links to the estimates: its button opens
/// the Scoreboard with that judge chosen, and the section shows its figures.
#[test]
fn the_agreement_screen_links_to_the_machine_judges_estimates() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Agreement);
    let label = "Estimates from judge-sorrel on the Scoreboard";
    step_until(&mut h, "the machine judge's link", |h| {
        h.query_by_label(label).is_some()
    });
    // The section lies below the fold: the button is pressed through AccessKit.
    h.get_by_label(label).click_accesskit();
    step_until(&mut h, "the Scoreboard", |h| {
        h.state().screen == Screen::Scoreboard
    });
    assert_eq!(
        h.state().scoreboard.estimates.machine.as_deref(),
        Some("judge-sorrel")
    );
    let json = machine_json(&path, "0.05");
    let at_focus = json["estimates"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["metric"] == "ndcg@10")
        .unwrap();
    let expected = interval(at_focus, "estimate", "ci_low", "ci_high");
    step_until(&mut h, "the estimates", |h| {
        all_texts(h).iter().any(|t| t == &expected)
    });
}
