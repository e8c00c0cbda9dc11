//! Reviewer quality on the Agreement screen, driven through the real workbench: machine
//! judges are shown against the people with the caution beside them, and ticking a
//! reviewer "in training" makes the desk show them gold levels after grading.

use std::path::{Path, PathBuf};

use crate::cli::plumbline;
use crate::ui_support::step_until;

use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::ui::{Screen, Workbench};

fn quality_study(dir: &Path) -> PathBuf {
    let study = dir.join("quality.plumb");
    let s = study.to_str().unwrap();
    let f = |n: &str| {
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/fixtures/reviewer_quality")
            .join(n)
            .to_str()
            .unwrap()
            .to_string()
    };
    for a in [
        vec!["new", s],
        vec![
            "import",
            s,
            "--items",
            &f("items.csv"),
            "--contexts",
            &f("contexts.csv"),
            "--scales",
            &f("scales.csv"),
            "--grades",
            &f("grades.csv"),
            "--gold",
            &f("gold.csv"),
        ],
    ] {
        let a: Vec<&std::ffi::OsStr> = a.iter().map(std::ffi::OsStr::new).collect();
        let out = plumbline(&a);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    study
}

fn texts(h: &Harness<'static, Workbench>) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
    }
    out
}

fn loaded(h: &Harness<'static, Workbench>) -> bool {
    matches!(h.state().agreement.model, Some(Ok(_))) && !h.state().agreement.is_loading()
}

#[test]
fn machine_judges_are_shown_against_the_people_and_training_is_a_tick() {
    let dir = tempfile::tempdir().unwrap();
    let path = quality_study(dir.path());
    let mut h = Harness::builder()
        .with_size([1500.0, 3000.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.clone(), Screen::Agreement),
        );
    step_until(&mut h, "the agreement model", loaded);
    h.step();
    let shown = texts(&h);
    for expected in [
        "Machine judges against the people's panel grade",
        "Gold pairs: graded against the known level",
        "judge-m1",
    ] {
        assert!(shown.iter().any(|t| t == expected), "{expected}: {shown:?}");
    }
    assert!(
        shown
            .iter()
            .any(|t| t.starts_with("Agreement with the panel is not correctness"))
    );
    // People first by name: ann, bo, cy; the machine's box is disabled.
    h.query_all_by_label("in training").nth(1).unwrap().click();
    h.step();
    step_until(&mut h, "the setting to be saved and reloaded", |h| {
        loaded(h)
            && matches!(&h.state().agreement.model,
                Some(Ok(m)) if m.training_reviewers == ["bo"])
    });
    let (bo, _) = plumbline::ui::desk::load::load(&path, "bo", None).unwrap();
    assert!(!bo.training_gold.is_empty(), "bo sees gold levels now");
    let (ann, _) = plumbline::ui::desk::load::load(&path, "ann", None).unwrap();
    assert!(
        ann.training_gold.is_empty(),
        "ann's gold pairs stay unmarked"
    );
}

fn type_into(h: &mut Harness<'static, Workbench>, label: &str, text: &str) {
    type_into_role(h, egui::Role::TextInput, label, text);
}

fn type_into_role(h: &mut Harness<'static, Workbench>, role: egui::Role, label: &str, text: &str) {
    h.get_by_role_and_label(role, label).focus();
    h.step();
    h.get_by_role_and_label(role, label).type_text(text);
    h.step();
}

fn gold_rows(path: &Path) -> Vec<(String, String, String, u8, String)> {
    let conn = rusqlite::Connection::open(path).unwrap();
    let mut stmt = conn
        .prepare(
            "SELECT scale, context_id, item_id, value, rationale FROM gold_pairs
             WHERE context_id = 'q02' AND item_id = 'fh-0240'",
        )
        .unwrap();
    stmt.query_map([], |r| {
        Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?))
    })
    .unwrap()
    .collect::<Result<_, _>>()
    .unwrap()
}

#[test]
fn a_gold_pair_is_added_and_removed_on_the_scales_screen() {
    let (_dir, path) = crate::ui_support::demo_copy();
    let mut h = Harness::builder()
        .with_size([1500.0, 2400.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.clone(), Screen::Scales),
        );
    step_until(&mut h, "the scales", |h| {
        matches!(h.state().scales.model, Some(Ok(_))) && !h.state().scales.is_busy()
    });
    h.step();
    type_into(&mut h, "Gold context id", "q02");
    type_into(&mut h, "Gold item id", "fh-0240");
    type_into_role(
        &mut h,
        egui::Role::MultilineTextInput,
        "Rationale",
        "A lamp is not a tent.",
    );
    h.get_by_label("Save gold pair").click();
    h.step();
    step_until(&mut h, "the gold pair to be saved", |h| {
        !h.state().scales.is_busy() && !gold_rows(&path).is_empty()
    });
    assert_eq!(
        gold_rows(&path),
        vec![(
            "fit4".to_string(),
            "q02".to_string(),
            "fh-0240".to_string(),
            0,
            "A lamp is not a tent.".to_string()
        )]
    );
    step_until(&mut h, "the list to show it", |h| {
        h.query_by_label("Remove q02 fh-0240").is_some()
    });
    h.get_by_label("Remove q02 fh-0240").click();
    h.step();
    step_until(&mut h, "the gold pair to be removed", |h| {
        !h.state().scales.is_busy() && gold_rows(&path).is_empty()
    });
    // A pair the catalog lacks is refused with its reason.
    type_into(&mut h, "Gold item id", "x");
    h.get_by_label("Save gold pair").click();
    h.step();
    step_until(
        &mut h,
        "the refusal",
        |h| matches!(&h.state().scales.message, Some(Err(e)) if e.to_string().contains("unknown item")),
    );
}
