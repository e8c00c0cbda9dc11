//! No screen shows a number without meaning: on an empty study, on a study whose grades
//! are all level 0 (no relevant item anywhere) and on the demo, no label on any screen
//! reads "NaN" or "inf".

use std::path::{Path, PathBuf};

use crate::cli::plumbline;
use crate::ui_support::{Bench, demo_copy};

use egui_kittest::Harness;
use egui_kittest::kittest::NodeT;
use plumbline::ui::{Screen, Workbench};

const SCREENS: [Screen; 7] = [
    Screen::Home,
    Screen::Catalog,
    Screen::Scales,
    Screen::Desk,
    Screen::Agreement,
    Screen::Scoreboard,
    Screen::Trial,
];

fn run(dir: &Path, args: &[&str]) {
    let a: Vec<&std::ffi::OsStr> = args.iter().map(std::ffi::OsStr::new).collect();
    let out = plumbline(&a);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let _ = dir;
}

/// A study whose every grade is level 0: scored contexts, comparisons and intervals are
/// all undefined.
fn all_zero_study(dir: &Path) -> PathBuf {
    let study = dir.join("zero.plumb");
    let s = study.to_str().unwrap();
    let file = |name: &str, text: &str| {
        let p = dir.join(name);
        std::fs::write(&p, text).unwrap();
        p.to_str().unwrap().to_string()
    };
    let scales = file("s.csv", "scale,value,label\nfit,0,No\nfit,1,Yes\n");
    let items = file("i.csv", "item_id,title\ni1,A\ni2,B\n");
    let contexts = file("c.csv", "context_id,kind,text\nq1,query,a\n");
    let rankings = file(
        "r.csv",
        "ranker,context_id,item_id,rank\nr1,q1,i1,1\nr1,q1,i2,2\nr2,q1,i2,1\n",
    );
    let grades = file(
        "g.csv",
        "reviewer,context_id,item_id,scale,value\nann,q1,i1,fit,0\nann,q1,i2,fit,0\n",
    );
    run(dir, &["new", s]);
    run(
        dir,
        &[
            "import",
            s,
            "--scales",
            &scales,
            "--items",
            &items,
            "--contexts",
            &contexts,
            "--rankings",
            &rankings,
            "--grades",
            &grades,
        ],
    );
    study
}

fn labels(h: &Bench) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
    }
    out
}

fn no_nan_on_any_screen(path: &Path, sign_in: bool) {
    for screen in SCREENS {
        let mut h: Bench = Harness::builder()
            .with_size([1500.0, 3000.0])
            .build_ui_state(
                |ui, wb: &mut Workbench| wb.show(ui),
                Workbench::new(path.to_path_buf(), screen),
            );
        if sign_in {
            let ctx = h.ctx.clone();
            h.state_mut().sign_in(&ctx, "ann");
        }
        // Let the screen's background jobs land.
        for _ in 0..40 {
            h.step();
            std::thread::sleep(std::time::Duration::from_millis(10));
        }
        let bad: Vec<String> = labels(&h)
            .into_iter()
            .filter(|text| {
                text.contains("NaN")
                    || text
                        .to_lowercase()
                        .split(|c: char| !c.is_alphanumeric())
                        .any(|w| w == "inf")
            })
            .collect();
        assert!(
            bad.is_empty(),
            "{screen:?} on {} shows {bad:?}",
            path.display()
        );
    }
}

#[test]
fn no_screen_shows_nan_or_inf_on_an_empty_study() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("empty.plumb");
    run(dir.path(), &["new", study.to_str().unwrap()]);
    no_nan_on_any_screen(&study, false);
}

#[test]
fn no_screen_shows_nan_or_inf_when_nothing_is_relevant() {
    let dir = tempfile::tempdir().unwrap();
    let study = all_zero_study(dir.path());
    no_nan_on_any_screen(&study, true);
}

#[test]
fn no_screen_shows_nan_or_inf_on_the_demo() {
    let (_dir, path) = demo_copy();
    no_nan_on_any_screen(&path, true);
}

fn stdout(args: &[&str]) -> String {
    let a: Vec<&std::ffi::OsStr> = args.iter().map(std::ffi::OsStr::new).collect();
    let out = plumbline(&a);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

#[test]
fn the_command_line_says_why_a_figure_is_missing_and_prints_no_p_value_without_data() {
    let dir = tempfile::tempdir().unwrap();
    let study = all_zero_study(dir.path());
    let s = study.to_str().unwrap();
    let text = stdout(&["score", s]);
    assert!(
        text.contains("No context has a relevant item yet"),
        "{text}"
    );
    assert!(!text.contains("NaN") && !text.contains("inf"), "{text}");
    // A comparison over no paired context has no p-value, not "1.000".
    let row = text
        .lines()
        .find(|l| {
            l.split_whitespace().collect::<Vec<_>>()[..].starts_with(&["r2", "vs", "r1", "ndcg@10"])
        })
        .unwrap();
    assert!(!row.contains("1.000"), "{row}");
    assert!(text.contains("unjudged items count as gain 0"), "{text}");
    let condensed = stdout(&["score", s, "--unjudged", "condense"]);
    assert!(
        condensed.contains("unjudged items removed before cutting at k"),
        "{condensed}"
    );
    let json: serde_json::Value =
        serde_json::from_str(&stdout(&["score", s, "--format", "json"])).unwrap();
    assert!(json["comparisons"][0]["p_randomization"].is_null());
    assert!(json["comparisons"][0]["p_holm"].is_null());
    for (args, what) in [(vec!["agree", s], "agree"), (vec!["status", s], "status")] {
        let out = stdout(&args);
        assert!(
            !out.contains("NaN") && !out.contains(" inf"),
            "{what}: {out}"
        );
    }
}
