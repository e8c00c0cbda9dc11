//! The Scoreboard's layout on the demo study, driven with egui_kittest: with four
//! cut-offs every number stays inside the window, dropdowns keep their width when their
//! choice changes, cautions are grouped per ranker, and the choices made on screen come
//! back when the study is reopened.

use crate::ui_support;

use std::path::Path;
use std::process::Command;

use egui::Role;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::frame::study_picker::Prefs;
use plumbline::ui::{Screen, Workbench};
use ui_support::{demo_copy, step_until};

const WIDTH: f32 = 1200.0;

fn harness_with(path: &Path, prefs: Prefs) -> Harness<'static, Workbench> {
    Harness::builder()
        .with_size([WIDTH, 1400.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::with_prefs(path.to_path_buf(), Screen::Scoreboard, prefs),
        )
}

fn settle(h: &mut Harness<'static, Workbench>) {
    step_until(h, "the scoreboard", |h| h.state().scoreboard.is_current());
    // A grid drawn for the first time spends a frame measuring itself, invisible to
    // AccessKit; two more frames show every section that arrived last.
    h.run_steps(2);
}

fn score_json(path: &Path, ks: &str) -> serde_json::Value {
    let out = Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args([
            "score",
            path.to_str().unwrap(),
            "--format",
            "json",
            "--k",
            ks,
        ])
        .output()
        .unwrap();
    assert!(out.status.success());
    serde_json::from_slice(&out.stdout).unwrap()
}

fn choose(h: &mut Harness<'static, Workbench>, combo: &str, option: &str) {
    h.get_by_role_and_label(Role::ComboBox, combo).click();
    h.step();
    h.step();
    h.get_by_label(&format!("{combo}: {option}")).click();
    h.step();
}

#[test]
fn four_cut_offs_keep_every_ranker_figure_inside_the_window() {
    let (_dir, path) = demo_copy();
    let mut h = harness_with(&path, Prefs::default());
    settle(&mut h);
    h.get_by_label("k=3").click();
    h.step();
    settle(&mut h);
    let json = score_json(&path, "3,5,10,20");
    for r in json["rankers"].as_array().unwrap() {
        for k in [3, 5, 10, 20] {
            for key in [format!("ndcg@{k}"), format!("judged@{k}")] {
                let m = &r["metrics"][&key];
                let shown = if key.starts_with("judged") {
                    format!("{:.0} %", m["mean"].as_f64().unwrap() * 100.0)
                } else {
                    format!(
                        "{:.3} [{:.3}, {:.3}]",
                        m["mean"].as_f64().unwrap(),
                        m["ci_low"].as_f64().unwrap(),
                        m["ci_high"].as_f64().unwrap()
                    )
                };
                let right = h
                    .query_all_by_label(&shown)
                    .map(|n| n.rect().right())
                    .fold(f32::INFINITY, f32::min);
                assert!(
                    right <= WIDTH,
                    "{} {key} ({shown}) ends at x = {right}, beyond the {WIDTH} px window",
                    r["ranker"]
                );
            }
        }
    }
}

#[test]
fn dropdowns_keep_their_width_when_the_choice_changes() {
    let (_dir, path) = demo_copy();
    let mut h = harness_with(&path, Prefs::default());
    settle(&mut h);
    let width = |h: &Harness<'static, Workbench>, label: &str| {
        h.get_by_role_and_label(Role::ComboBox, label)
            .rect()
            .width()
    };
    let before = width(&h, "Gain");
    // "linear (level)" is far shorter than "exponential (2^level − 1)".
    choose(&mut h, "Gain", "linear (level)");
    settle(&mut h);
    assert_eq!(
        h.state().scoreboard.wanted.gain,
        plumbline::core::metrics::GainKind::Linear
    );
    assert_eq!(width(&h, "Gain"), before);
    let segment = width(&h, "Segment");
    choose(&mut h, "Segment", "new items carry gain");
    settle(&mut h);
    assert_eq!(width(&h, "Segment"), segment);
}

#[test]
fn cautions_are_grouped_under_the_ranker_they_name() {
    let (_dir, path) = demo_copy();
    let mut h = harness_with(&path, Prefs::default());
    settle(&mut h);
    let json = score_json(&path, "5,10,20");
    let rankers: Vec<String> = json["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["ranker"].as_str().unwrap().to_string())
        .collect();
    let cautions: Vec<&str> = json["cautions"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let mut grouped = 0;
    for ranker in &rankers {
        let n = cautions
            .iter()
            .filter(|c| c.starts_with(&format!("{ranker} ")))
            .count();
        if n == 0 {
            continue;
        }
        let title = format!("{ranker}: {n} caution{}", if n == 1 { "" } else { "s" });
        assert!(
            h.query_all_by_label(&title).next().is_some(),
            "no group {title:?}"
        );
        grouped += 1;
    }
    assert!(grouped >= 2, "the demo has cautions for several rankers");
}

#[test]
fn scoreboard_choices_come_back_when_the_study_is_reopened() {
    let (dir, path) = demo_copy();
    let prefs_file = dir.path().join("prefs").join("workbench.json");
    {
        let mut h = harness_with(&path, Prefs::load(Some(prefs_file.clone())));
        settle(&mut h);
        h.get_by_label("k=3").click();
        h.step();
        choose(&mut h, "Gain", "linear (level)");
        settle(&mut h);
    }
    // A new workbench (a new run) on the same study shows the same choices and scores.
    let mut h = harness_with(&path, Prefs::load(Some(prefs_file.clone())));
    assert_eq!(h.state().scoreboard.wanted.ks, vec![3, 5, 10, 20]);
    assert_eq!(
        h.state().scoreboard.wanted.gain,
        plumbline::core::metrics::GainKind::Linear
    );
    settle(&mut h);
    assert!(h.query_all_by_label("NDCG@3").next().is_some());
    // Another study starts from the defaults.
    let (_other_dir, other) = demo_copy();
    let h = harness_with(&other, Prefs::load(Some(prefs_file)));
    assert_eq!(h.state().scoreboard.wanted.ks, vec![5, 10, 20]);
}

/// The plots' legends sit under the plots, never on them, and the axes carry ticks a
/// value can be read from: NDCG every 0.2 (labelled) from 0 to 1, k every 5.
#[test]
fn legends_sit_under_the_plots_and_axes_have_readable_ticks() {
    use plumbline::ui::scoreboard::plots::{K_STEPS, NDCG_STEPS, count_steps, marks};
    let (_dir, path) = crate::ui_support::demo_copy();
    let mut h = crate::ui_support::harness(&path, plumbline::ui::Screen::Scoreboard);
    h.set_size(egui::vec2(1360.0, 2400.0));
    crate::ui_support::step_until_within(&mut h, "the plots", 60, |h| {
        h.query_by_label_contains("NDCG@k for k = 1…20").is_some()
    });
    h.step();
    let heading = h.get_by_label_contains("NDCG@k for k = 1…20").rect();
    let names: Vec<String> = h
        .state()
        .scoreboard
        .model
        .as_ref()
        .unwrap()
        .board
        .rankers
        .iter()
        .map(|r| r.ranker.clone())
        .collect();
    for name in &names {
        let entries: Vec<egui::Rect> = h
            .query_all_by_label(&format!("Legend: {name}"))
            .map(|n| n.rect())
            .collect();
        assert_eq!(
            entries.len(),
            2,
            "{name}: one under the curves, one under the histogram"
        );
        for rect in entries {
            // The plots are 230 px tall and start under their heading.
            assert!(
                rect.top() >= heading.bottom() + 230.0,
                "{name}: {rect:?} lies on a plot"
            );
        }
    }
    // Ticks over the bounds the plots show (a margin around 0…1): NDCG every 0.2 is 230 px /
    // 1.1 × 0.2 ≈ 42 px apart and k every 5 is at least 220 px / 20 × 5 = 55 px apart,
    // both above the 18 px at which the plots label a tick (arithmetic).
    let at = |steps: [f64; 3], step: f64, bounds| -> Vec<f64> {
        marks(steps, bounds)
            .into_iter()
            .filter(|m| m.step_size >= step)
            .map(|m| (m.value * 100.0).round() / 100.0)
            .collect()
    };
    assert_eq!(
        at(NDCG_STEPS, 0.2, (-0.05, 1.05)),
        [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]
    );
    assert_eq!(at(K_STEPS, 5.0, (0.5, 20.5)), [5.0, 10.0, 15.0, 20.0]);
    // Counts: labels on a 1-2-5 step about a fifth of the tallest bar.
    assert_eq!(count_steps(25.0), [1.0, 5.0, 25.0]);
    assert_eq!(count_steps(3.0), [1.0, 1.0, 5.0]);
}

/// A segment label spelled like a context kind ("anchor") is offered apart from the kind.
#[test]
fn a_segment_label_named_like_a_kind_is_told_apart() {
    let (_dir, path) = demo_copy();
    let conn = rusqlite::Connection::open(&path).unwrap();
    conn.execute(
        "UPDATE contexts SET segment = 'anchor'
         WHERE context_id = (SELECT MIN(context_id) FROM contexts WHERE kind = 'query')",
        [],
    )
    .unwrap();
    drop(conn);
    let mut h = harness_with(&path, Prefs::default());
    settle(&mut h);
    h.get_by_role_and_label(Role::ComboBox, "Segment").click();
    h.step();
    h.step();
    assert!(
        h.query_by_label("Segment: anchor contexts (kind)")
            .is_some()
    );
    assert!(
        h.query_by_label("Segment: label “anchor” (segment column)")
            .is_some()
    );
    assert!(h.query_by_label("Segment: segment anchor").is_none());
}
