//! The Agreement screen driven through the real workbench (`Workbench::show`) with
//! egui_kittest on a fresh copy of the demo study. Numbers on screen are compared with
//! what the engines (`analysis::agreement`, `analysis::scoring::scoreboard`) compute from the
//! study file on their own.

use crate::ui_support;

use std::path::Path;

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::analysis::agreement;
use plumbline::analysis::defaults::{AGREEMENT_BOOTSTRAP as RESAMPLES, SEED};
use plumbline::analysis::judged::judgments::{GradeSource, PanelRule, level_of, resolve};
use plumbline::analysis::scoring::scoreboard::{self, ScoreSettings, Scoreboard};
use plumbline::study::Study;
use plumbline::ui::Screen;
use plumbline::ui::Workbench;
use plumbline::ui::agreement::{AgreementModel, heatmap_cell_label};
use ui_support::{demo_copy, step_until};

fn harness(wb: Workbench) -> Harness<'static, Workbench> {
    Harness::builder()
        .with_size([1360.0, 2400.0])
        .build_ui_state(|ui, wb: &mut Workbench| wb.show(ui), wb)
}

fn model<'h>(h: &'h Harness<'static, Workbench>) -> &'h AgreementModel {
    match &h.state().agreement.model {
        Some(Ok(m)) => m,
        other => panic!("no model: {:?}", other.as_ref().map(|_| ())),
    }
}

/// Waits for the first model (and for any reload in flight to land).
fn wait_for_model(h: &mut Harness<'static, Workbench>) {
    step_until(h, "the agreement model", |h| {
        matches!(h.state().agreement.model, Some(Ok(_)))
            && !h.state().agreement.is_loading()
            && !h.state().agreement.settle.is_writing()
    });
    h.step();
}

fn scores(path: &Path) -> Scoreboard {
    let study = Study::open(path).unwrap();
    let snapshot = study.snapshot().unwrap();
    let settings = ScoreSettings {
        bootstrap_resamples: 50,
        randomization_resamples: 50,
        ..ScoreSettings::default()
    };
    scoreboard::build(&snapshot, &settings).unwrap()
}

/// Every ranker's per-context value (as bits, so NaN compares equal to itself).
fn per_context(board: &Scoreboard, key: &str) -> Vec<u64> {
    board
        .rankers
        .iter()
        .flat_map(|r| r.per_context.iter().map(|c| c.values[key].to_bits()))
        .collect()
}

#[test]
fn picking_a_matrix_cell_shows_the_engines_confusion_counts() {
    let (_dir, path) = demo_copy();
    let mut h = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut h);

    // What `plumbline agree` prints for the same study is what the screen shows.
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["agree", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let printed: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(printed["scale"], model(&h).report.scale.as_str());

    // Panel numbers on screen are the printed ones.
    for key in [
        "fleiss_kappa",
        "alpha_nominal",
        "alpha_ordinal",
        "alpha_interval",
        "ac1",
    ] {
        let shown = format!("{:.3}", printed[key].as_f64().unwrap());
        assert!(
            h.query_by_label(&shown).is_some(),
            "{key} {shown} not on screen"
        );
    }

    let levels = printed["levels"].as_u64().unwrap() as usize;
    let pairs = printed["pairs"].as_array().unwrap();
    assert!(pairs.len() >= 3);
    for pair in pairs {
        let (a, b) = (
            pair["reviewer_a"].as_str().unwrap(),
            pair["reviewer_b"].as_str().unwrap(),
        );
        let confusion: Vec<Vec<u64>> = pair["confusion"]
            .as_array()
            .unwrap()
            .iter()
            .map(|row| {
                row.as_array()
                    .unwrap()
                    .iter()
                    .map(|c| c.as_u64().unwrap())
                    .collect()
            })
            .collect();
        h.get_by_label(&format!("Reviewers {a} and {b}")).click();
        h.step();
        h.step();
        let mut cells = 0;
        for (i, row) in confusion.iter().enumerate() {
            for (j, count) in row.iter().enumerate() {
                let label = heatmap_cell_label(a, i, b, j, *count);
                assert!(h.query_by_label(&label).is_some(), "missing: {label}");
                cells += 1;
            }
        }
        assert_eq!(cells, levels * levels);
        // A wrong count is not on screen (guards against a label that ignores counts).
        let wrong = heatmap_cell_label(a, 0, b, 0, confusion[0][0] + 1);
        assert!(h.query_by_label(&wrong).is_none());
    }
}

#[test]
fn settling_by_hand_then_by_the_median_rule_reaches_the_panel_scores() {
    let (_dir, path) = demo_copy();
    let mut h = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut h);
    let before = scores(&path);
    let key = "ndcg@10";

    // The top row: widest spread, inside the most rankers' top k.
    let top = model(&h).review.disagreements[0].clone();
    assert!(top.rankers_in_top_k > 0);
    let levels: Vec<u8> = top.grades.iter().filter_map(|g| g.value).collect();
    let hand = if *levels.iter().max().unwrap() != top.panel_level {
        *levels.iter().max().unwrap()
    } else {
        *levels.iter().min().unwrap()
    };
    let level_label = {
        let scale = &model(&h).scale;
        let l = scale.levels.iter().find(|l| l.value == hand).unwrap();
        format!("Settle at {} {}", l.value, l.label)
    };

    h.get_by_label_contains("Disagreements (").click();
    h.step();
    h.get_by_label(&format!("Open pair {} / {}", top.context_id, top.item_id))
        .click();
    h.step();
    h.step();
    // The pair detail shows each reviewer's note and seconds.
    for g in &top.grades {
        if let Some(s) = g.seconds {
            assert!(h.query_by_label(&format!("{s:.1}")).is_some());
        }
    }
    type_into(&mut h, "Who settles", "lead-juniper");
    h.get_by_label(&level_label).click();
    h.step();
    type_into(&mut h, "Why", "two of three read the rubric this way");
    h.get_by_label("Record settled level").click();
    h.step();
    wait_for_model(&mut h);

    let study = Study::open(&path).unwrap();
    let in_force = study.settled_in_force(&model(&h).scale.name).unwrap();
    assert_eq!(in_force.len(), 1);
    assert_eq!(in_force[0].value, Some(hand));
    assert_eq!(in_force[0].settled_by, "lead-juniper");
    assert_eq!(in_force[0].reason, "two of three read the rubric this way");
    let after_hand = scores(&path);
    assert_ne!(
        per_context(&before, key),
        per_context(&after_hand, key),
        "a settled level that differs from the lower median must move some NDCG"
    );
    let shown_row = model(&h).review.disagreements[0].settled.clone();
    assert_eq!(shown_row.and_then(|s| s.value), Some(hand));

    h.get_by_label("Settle the shown pairs by median").click();
    h.step();
    let unsettled = model(&h).review.disagreements.len() - 1;
    h.get_by_label(&format!("Yes, settle {unsettled} pairs"))
        .click();
    h.step();
    wait_for_model(&mut h);
    let study = Study::open(&path).unwrap();
    let snapshot = study.snapshot().unwrap();
    let scale = snapshot.scale_index(&model(&h).scale.name).unwrap();
    let settled = study
        .settled_in_force(&snapshot.scales[scale].name)
        .unwrap();
    assert_eq!(settled.len(), model(&h).review.disagreements.len());
    // Every pair the rule settled holds the lower median of its reviewers' levels, and
    // panel scoring reads the settled grades; the hand-settled pair keeps its level.
    let judged = resolve(&snapshot, scale, &GradeSource::Panel);
    for s in &settled {
        let c = snapshot
            .contexts
            .iter()
            .position(|x| x.id == s.context_id)
            .unwrap();
        let i = snapshot
            .items
            .iter()
            .position(|x| x.id == s.item_id)
            .unwrap() as u32;
        assert_eq!(level_of(&judged[c], i), s.value);
        if (s.context_id.as_str(), s.item_id.as_str())
            == (top.context_id.as_str(), top.item_id.as_str())
        {
            assert_eq!(s.value, Some(hand));
            assert_eq!(s.method, "hand");
        } else {
            let mut levels: Vec<u8> = snapshot
                .grades
                .iter()
                .filter(|g| g.scale as usize == scale && g.context as usize == c && g.item == i)
                .filter_map(|g| g.value)
                .collect();
            assert_eq!(s.value, PanelRule::LowerMedian.apply(&mut levels));
            assert_eq!(s.method, "median");
        }
    }
    // The median rule agrees with panel scoring's own fallback, so only the hand
    // settlement moved the scores.
    assert_eq!(
        per_context(&after_hand, key),
        per_context(&scores(&path), key)
    );
}

fn type_into(h: &mut Harness<'static, Workbench>, label: &str, text: &str) {
    h.get_by_role_and_label(egui::Role::TextInput, label)
        .focus();
    h.step();
    h.get_by_role_and_label(egui::Role::TextInput, label)
        .type_text(text);
    h.step();
}

#[test]
fn the_blind_rule_hides_other_grades_from_a_reviewer_with_pending_pairs() {
    let (_dir, path) = demo_copy();
    let scale_name = {
        let mut study = Study::open(&path).unwrap();
        let snapshot = study.snapshot().unwrap();
        let name = snapshot.scales[snapshot.busiest_scale().unwrap()]
            .name
            .clone();
        study.add_reviewer("rev-dune").unwrap();
        study.ensure_queue("rev-dune", &name).unwrap();
        name
    };
    let pending = Study::open(&path)
        .unwrap()
        .pending_pairs("rev-dune", &scale_name)
        .unwrap();
    assert!(!pending.is_empty());

    // Seen by nobody in particular, some of those pairs are disagreements.
    let mut open = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut open);
    let visible_to_all = model(&open).review.disagreements.clone();
    assert!(
        visible_to_all
            .iter()
            .any(|d| pending.contains(&(d.context_id.clone(), d.item_id.clone()))),
        "the check needs a pending pair that is a disagreement"
    );

    // The workbench never draws Agreement for a signed-in reviewer; the blind rule is what
    // `plumbline view agreement --viewer` computes, from the same view model.
    let study = Study::open(&path).unwrap();
    let m = plumbline::analysis::views::agreement_view::build(
        &study,
        plumbline::analysis::views::agreement_view::AgreementRequest {
            viewer: Some("rev-dune".into()),
            ..Default::default()
        },
    )
    .unwrap()
    .unwrap();
    let m = &m;
    assert!(m.viewer_is_grading());
    assert_eq!(m.hidden_pairs, pending.len());
    for d in &m.review.disagreements {
        assert!(!pending.contains(&(d.context_id.clone(), d.item_id.clone())));
    }
    // The coefficients leave the hidden pairs out too: the engine on a snapshot without
    // them gives the same numbers.
    let mut snapshot = study.snapshot().unwrap();
    let scale = snapshot.scale_index(&scale_name).unwrap();
    let ids: Vec<(String, String)> = snapshot
        .grades
        .iter()
        .map(|g| {
            (
                snapshot.contexts[g.context as usize].id.clone(),
                snapshot.items[g.item as usize].id.clone(),
            )
        })
        .collect();
    let mut keep = ids.iter().map(|p| !pending.contains(p));
    snapshot.grades.retain(|_| keep.next().unwrap());
    let engine = agreement::build(&snapshot, scale, None, RESAMPLES, SEED);
    assert_eq!(m.report.units, engine.units);
    assert_eq!(
        m.report.fleiss_kappa.to_bits(),
        engine.fleiss_kappa.to_bits()
    );
    assert!(m.report.units < model(&open).report.units);
}

/// Promise: what the Agreement screen shows below the coefficients (how each reviewer
/// uses the levels) is what `plumbline view agreement` prints.
#[test]
fn level_use_on_screen_is_what_view_agreement_prints() {
    let (_dir, path) = demo_copy();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["view", "agreement"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let printed: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rows = printed["review"]["strictness"].as_array().unwrap();
    assert_eq!(rows.len(), 3, "the demo panel has three reviewers");

    let mut h = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut h);
    for row in rows {
        let shown = format!(
            "{:+.2} over {} pairs",
            row["mean_difference"].as_f64().unwrap(),
            row["compared"].as_u64().unwrap()
        );
        assert!(h.query_by_label(&shown).is_some(), "{shown} not on screen");
    }
    let wrong = format!(
        "{:+.2} over {} pairs",
        rows[0]["mean_difference"].as_f64().unwrap(),
        rows[0]["compared"].as_u64().unwrap() + 1
    );
    assert!(h.query_by_label(&wrong).is_none());
}

#[test]
fn a_bulk_rule_settles_only_the_shown_pairs_after_asking_and_undoes_in_one_step() {
    let (_dir, path) = demo_copy();
    let mut h = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut h);
    h.get_by_label_contains("Disagreements (").click();
    h.step();
    type_into(&mut h, "Who settles", "lead-juniper");
    // Narrow the list to one context's pairs.
    let context = model(&h).review.disagreements[0].context_id.clone();
    type_into(&mut h, "Context contains", &context);
    let shown: Vec<(String, String)> = model(&h)
        .review
        .disagreements
        .iter()
        .filter(|d| {
            d.context_id
                .to_lowercase()
                .contains(&context.to_lowercase())
        })
        .map(|d| (d.context_id.clone(), d.item_id.clone()))
        .collect();
    let total = model(&h).review.disagreements.len();
    assert!(!shown.is_empty() && shown.len() < total);
    h.get_by_label("Settle the shown pairs by strictest")
        .click();
    h.step();
    // Nothing is written before the confirmation.
    let study = Study::open(&path).unwrap();
    let scale = model(&h).scale.name.clone();
    assert!(study.settled_in_force(&scale).unwrap().is_empty());
    h.get_by_label(&format!("Yes, settle {} pairs", shown.len()))
        .click();
    h.step();
    wait_for_model(&mut h);
    let in_force = study.settled_in_force(&scale).unwrap();
    assert_eq!(in_force.len(), shown.len(), "exactly the pairs shown");
    for s in &in_force {
        assert!(shown.contains(&(s.context_id.clone(), s.item_id.clone())));
        assert_eq!(s.method, "strictest");
    }
    // The pair detail shows its settlement history.
    let (c, i) = shown[0].clone();
    h.get_by_label(&format!("Open pair {c} / {i}")).click();
    h.step();
    h.step();
    assert!(h.query_by_label("Settlement history").is_some());
    // Its time reads in local form ("16 Nov 2026, 10:14"), not as the stored RFC 3339.
    let stored = &in_force
        .iter()
        .find(|s| (&s.context_id, &s.item_id) == (&c, &i))
        .unwrap()
        .settled_at;
    assert!(
        h.query_by_label_contains(stored).is_none(),
        "raw {stored} on screen"
    );
    let year = &stored[..4];
    assert!(
        h.query_all_by_label_contains(&format!(" {year}, ")).count() >= 1,
        "a readable date of {year}"
    );
    // One step takes the whole batch back; the history keeps both rows.
    h.get_by_label(&format!("Undo the last batch ({} pairs)", shown.len()))
        .click();
    h.step();
    wait_for_model(&mut h);
    assert!(study.settled_in_force(&scale).unwrap().is_empty());
    assert_eq!(study.settle_history(&scale).unwrap().len(), 2 * shown.len());
}

#[test]
fn signing_in_on_the_agreement_screen_leaves_it_for_the_desk() {
    let (_dir, path) = demo_copy();
    let mut h = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut h);
    assert!(h.query_by_label_contains("Disagreements (").is_some());
    let ctx = h.ctx.clone();
    h.state_mut().sign_in(&ctx, "rev-amber");
    h.step();
    h.step();
    assert_eq!(h.state().allowed_screen(), Screen::Desk);
    assert!(h.query_by_label_contains("Disagreements (").is_none());
    assert!(h.query_by_label("Record settled level").is_none());
    // Even asked for by name, the Agreement screen is not drawn while signed in.
    h.state_mut().screen = Screen::Agreement;
    h.step();
    h.step();
    assert!(h.query_by_label_contains("Disagreements (").is_none());
}

/// The lead chooses the study's panel rule beside the disagreements; it is stored, the
/// model reloads under it, and the panel grade of a pair on screen follows the rule
/// (an even panel [1, 3] reads 1 under the lower median and 3 under the upper one: the
/// definition of the two medians, common practice).
#[test]
fn the_lead_sets_the_panel_rule_and_the_review_follows_it() {
    let (_dir, path) = demo_copy();
    let mut h = harness(Workbench::new(path.clone(), Screen::Agreement));
    wait_for_model(&mut h);
    assert_eq!(model(&h).panel_rule, PanelRule::LowerMedian);
    h.get_by_label_contains("Disagreements (").click();
    h.step();
    h.get_by_role_and_label(egui::Role::ComboBox, "Panel grade of an unsettled pair:")
        .click();
    h.step();
    h.step();
    h.get_by_label("upper-median").click_accesskit();
    step_until(&mut h, "the reload under the new rule", |h| {
        matches!(&h.state().agreement.model, Some(Ok(m)) if m.panel_rule == PanelRule::UpperMedian)
            && !h.state().agreement.is_loading()
    });
    let study = Study::open(&path).unwrap();
    assert_eq!(study.settings().unwrap().panel_rule, PanelRule::UpperMedian);
    for d in &model(&h).review.disagreements {
        let mut levels: Vec<u8> = d.grades.iter().filter_map(|g| g.value).collect();
        levels.sort_unstable();
        assert_eq!(d.panel_level, levels[levels.len() / 2], "{d:?}");
    }
}
