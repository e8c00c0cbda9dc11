//! The Scales and Scale trial screens driven through the real workbench
//! (`Workbench::show`) with egui_kittest, on a fresh copy of the demo study.

use crate::ui_support;

use std::collections::BTreeMap;
use std::path::Path;
use std::time::{Duration, Instant};

use egui::{Key, Modifiers};
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::core::agreement::{self, AlphaLevel, CollapseMap};
use plumbline::study::Study;
use plumbline::ui::Screen;
use plumbline::ui::Workbench;
use ui_support::{demo_copy, step_until_within};

fn harness(path: &Path, screen: Screen) -> Harness<'static, Workbench> {
    Harness::builder()
        .with_size([1360.0, 860.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), screen),
        )
}

/// Replaces the text of the field named `label` with `text`, as a user would.
fn retype(h: &mut Harness<'static, Workbench>, label: &str, text: &str) {
    h.get_by_role_and_label(egui::Role::TextInput, label)
        .focus();
    h.step();
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.step();
    h.get_by_role_and_label(egui::Role::TextInput, label)
        .type_text(text);
    h.step();
}

/// True when some node carries exactly this label (numbers may repeat across cells).
fn shown(h: &Harness<'static, Workbench>, label: &str) -> bool {
    h.query_all_by_label(label).next().is_some()
}

fn scales_loaded(h: &Harness<'static, Workbench>) -> bool {
    matches!(h.state().scales.model, Some(Ok(_))) && !h.state().scales.is_busy()
}

fn saved(h: &mut Harness<'static, Workbench>) -> String {
    let start = Instant::now();
    while h.state().scales.message.is_none() || h.state().scales.is_busy() {
        let s = &h.state().scales;
        assert!(
            start.elapsed() < Duration::from_secs(30),
            "timed out waiting for the save; busy {}, editor {:?}",
            s.is_busy(),
            s.editor.as_ref().map(|e| e.scale())
        );
        h.step();
        std::thread::sleep(Duration::from_millis(5));
    }
    h.step();
    let message = h.state_mut().scales.message.take().unwrap();
    h.step(); // the screen without the message, so widgets sit where they will be clicked
    match message {
        Ok(m) => m,
        Err(e) => panic!("save failed: {e}"),
    }
}

#[test]
fn a_preset_scale_with_an_edited_label_is_graded_on_the_desk() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Scales);
    step_until_within(&mut h, "the scales", 30, scales_loaded);
    h.get_by_label("3 levels (three-step)").click();
    h.step();
    h.step();
    retype(&mut h, "Level 1 label", "Half a match");

    // A clash is shown inline and blocks saving until it is fixed.
    retype(&mut h, "Level 2 key", "1");
    assert!(
        h.query_by_label_contains("key \"1\" is used by more than one level")
            .is_some()
    );
    h.get_by_label("Save scale").click();
    h.step();
    assert!(
        h.state().scales.message.is_none(),
        "an invalid scale was saved"
    );
    retype(&mut h, "Level 2 key", "2");
    assert!(
        h.query_by_label_contains("is used by more than one level")
            .is_none()
    );

    h.get_by_label("Save scale").click();
    let message = saved(&mut h);
    assert!(message.contains("three-step"), "{message}");
    let stored = Study::open(&path)
        .unwrap()
        .stored_scale("three-step")
        .unwrap()
        .expect("the scale was saved");
    assert_eq!(stored.levels[1].label, "Half a match");
    assert_eq!(stored.levels.len(), 3);

    h.get_by_label("Grade on three-step").click();
    let message = saved(&mut h);
    assert!(
        message.contains("now grades on \"three-step\""),
        "{message}"
    );

    h.key_press_modifiers(Modifiers::COMMAND, Key::Num4); // the rail's shortcut
    h.step();
    assert_eq!(h.state().screen, Screen::Desk);
    step_until_within(&mut h, "the sign-in list", 30, |h| {
        h.query_by_label("Sign in as rev-amber").is_some()
    });
    h.get_by_label("Sign in as rev-amber").click();
    step_until_within(&mut h, "the first card", 60, |h| {
        h.state().desk.data().is_some() && h.state().desk.current().is_some()
    });
    assert_eq!(h.state().desk.data().unwrap().scale.name, "three-step");
    assert!(
        h.query_by_label_contains("Half a match").is_some(),
        "the edited label is on the desk"
    );
}

#[test]
fn adding_a_level_to_a_graded_scale_saves_a_new_version() {
    let (_dir, path) = demo_copy();
    let grades_before = Study::open(&path).unwrap().grade_count("fit4").unwrap();
    let mut h = harness(&path, Screen::Scales);
    step_until_within(&mut h, "the scales", 30, scales_loaded);
    h.get_by_label("Edit fit4").click();
    h.step();
    h.get_by_label("Add level").click();
    h.step();
    h.step();
    retype(&mut h, "Level 4 label", "Beyond what was asked");
    assert!(
        h.query_by_label_contains("saving creates a new version \"fit4 v2\"")
            .is_some()
    );
    h.get_by_label("Save scale").click();
    let message = saved(&mut h);
    assert!(message.contains("\"fit4 v2\""), "{message}");
    let study = Study::open(&path).unwrap();
    assert_eq!(study.stored_scale("fit4").unwrap().unwrap().levels.len(), 4);
    assert_eq!(
        study.stored_scale("fit4 v2").unwrap().unwrap().levels[4].label,
        "Beyond what was asked"
    );
    assert_eq!(study.grade_count("fit4").unwrap(), grades_before);
    assert!(
        h.query_by_label("Edit fit4 v2").is_some(),
        "the list shows it"
    );
}

#[test]
fn the_trial_screen_shows_the_engine_and_cli_numbers() {
    let (_dir, path) = demo_copy();
    let halves = CollapseMap {
        name: "halves".into(),
        targets: vec![0, 0, 1, 1],
    };
    {
        // Saved through the Scales screen's own write path.
        plumbline::ui::scales::apply(
            &path,
            plumbline::ui::scales::Change::SaveMap {
                scale: "fit4".into(),
                map: halves.clone(),
            },
        )
        .unwrap();
    }
    let mut h = harness(&path, Screen::Trial);
    step_until_within(&mut h, "the trial", 300, |h| {
        h.state().trial.model.is_some() && !h.state().trial.is_loading()
    });

    // What `plumbline trial --format json` prints for the same study.
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["trial", path.to_str().unwrap(), "--format", "json"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rows = json["scales"].as_array().unwrap();
    assert_eq!(rows.len(), 3, "fit4, useful2 and fit4 collapsed by halves");
    for row in rows {
        let f = |k: &str| row[k].as_f64().unwrap();
        let alpha = format!(
            "{:.3} [{:.3}, {:.3}]",
            f("alpha_ordinal"),
            f("alpha_ci_low"),
            f("alpha_ci_high")
        );
        assert!(shown(&h, &alpha), "alpha {alpha} not on screen");
        for key in ["kappa_quadratic_mean", "ac1_mean", "kendall_tau"] {
            let text = format!("{:.3}", f(key));
            assert!(shown(&h, &text), "{key} {text} not on screen");
        }
        let power = format!("{:.0} %", f("discriminative_power") * 100.0);
        assert!(shown(&h, &power), "{power} not on screen");
    }
    let recommendation = json["recommendation"].as_str().unwrap();
    assert!(shown(&h, recommendation));
    assert!(
        h.query_by_label_contains("not comparable across scales with different numbers of levels")
            .is_some()
    );

    // The collapsed row equals alpha on grades recoded by hand from the snapshot.
    let study = Study::open(&path).unwrap();
    let snapshot = study.snapshot().unwrap();
    let model = h.state().trial.model.as_ref().unwrap().as_ref().unwrap();
    let row = model
        .scales
        .iter()
        .find(|r| r.collapse.as_deref() == Some("halves"))
        .unwrap();
    let fit4 = snapshot.scale_index("fit4").unwrap() as u32;
    let useful2 = snapshot.scale_index("useful2").unwrap() as u32;
    let graded_on = |s: u32| -> std::collections::HashSet<(u32, u32)> {
        snapshot
            .grades
            .iter()
            .filter(|g| g.scale == s && g.value.is_some())
            .map(|g| (g.context, g.item))
            .collect()
    };
    let common = &graded_on(fit4) & &graded_on(useful2);
    let mut units: BTreeMap<(u32, u32), Vec<Option<u8>>> = BTreeMap::new();
    for g in snapshot
        .grades
        .iter()
        .filter(|g| g.scale == fit4 && common.contains(&(g.context, g.item)))
    {
        let recoded = g.value.map(|v| if v >= 2 { 1 } else { 0 });
        units
            .entry((g.context, g.item))
            .or_insert_with(|| vec![None; snapshot.reviewers.len()])[g.reviewer as usize] = recoded;
    }
    let units: Vec<Vec<Option<u8>>> = units.into_values().collect();
    let by_hand = agreement::krippendorff_alpha(2, &units, AlphaLevel::Ordinal);
    assert!(
        (row.alpha_ordinal - by_hand).abs() < 1e-12,
        "{} vs {by_hand}",
        row.alpha_ordinal
    );
    // And the screen shows what `plumbline trial` prints for the same study, to the bit
    // (the JSON keeps every float digit).
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["trial", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let printed: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rows = printed["scales"].as_array().unwrap();
    assert_eq!(rows.len(), model.scales.len());
    for (printed, shown) in rows.iter().zip(&model.scales) {
        assert_eq!(printed["scale"], shown.scale.as_str());
        assert_eq!(
            printed["alpha_ordinal"].as_f64().unwrap(),
            shown.alpha_ordinal
        );
        let order: Vec<&str> = printed["ranker_order"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r.as_str().unwrap())
            .collect();
        assert_eq!(order, shown.ranker_order);
    }
}

#[test]
fn a_pilot_started_on_the_scales_screen_sets_the_desk_on_the_reviewers_block() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path, Screen::Scales);
    step_until_within(&mut h, "the scales", 30, scales_loaded);
    assert!(
        h.get_by_label("Start pilot").accesskit_node().is_disabled(),
        "a pilot needs two scales first"
    );
    h.get_by_label("Pilot with fit4").click();
    h.step();
    h.get_by_label("Pilot with useful2").click();
    h.step();
    h.get_by_label("Start pilot").click();
    let message = saved(&mut h);
    assert!(message.starts_with("Pilot started"), "{message}");
    assert_eq!(
        Study::open(&path).unwrap().pilot_scales().unwrap(),
        vec!["fit4".to_string(), "useful2".to_string()]
    );

    h.key_press_modifiers(Modifiers::COMMAND, Key::Num4);
    h.step();
    step_until_within(&mut h, "the sign-in list", 30, |h| {
        h.query_by_label("Sign in as rev-birch").is_some()
    });
    h.get_by_label("Sign in as rev-birch").click();
    step_until_within(&mut h, "the first card", 60, |h| {
        h.state().desk.data().is_some() && h.state().desk.current().is_some()
    });
    // The store, asked independently, names the same block and the same pairs.
    let mut study = Study::open(&path).unwrap();
    let block = study
        .pilot_block("rev-birch")
        .unwrap()
        .expect("a block is open");
    let data = h.state().desk.data().unwrap();
    assert_eq!(data.scale.name, block);
    let shown: Vec<(String, String)> = data
        .queue
        .iter()
        .map(|&(c, i)| {
            (
                data.contexts[c as usize].id.clone(),
                data.items[i as usize].id.clone(),
            )
        })
        .collect();
    // The form's proposal was kept: that many pilot pairs, at the head of the queue.
    assert_eq!(shown.len(), plumbline::analysis::defaults::PILOT_PAIRS);
    assert_eq!(
        shown,
        study.queue("rev-birch", &block).unwrap()[..shown.len()]
    );
}
