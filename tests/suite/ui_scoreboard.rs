//! The Scoreboard driven through the real workbench with egui_kittest, on a fresh demo
//! study: the numbers on screen are those `plumbline score --format json` prints for the
//! same settings, before and after changing k and the baseline; the cautions are shown;
//! "judge the gaps" hands the desk its most decisive unjudged pair first.

use crate::ui_support;

use std::path::Path;
use std::process::Command;

use egui::Role;
use egui_kittest::Harness;
use egui_kittest::kittest::{NodeT, Queryable};
use plumbline::ui::Screen;
use plumbline::ui::Workbench;
use ui_support::{demo_copy, step_until};

fn harness(path: &Path) -> Harness<'static, Workbench> {
    Harness::builder()
        .with_size([1400.0, 900.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), Screen::Scoreboard),
        )
}

/// Waits until the screen shows a model computed for its current settings.
fn settle(h: &mut Harness<'static, Workbench>) {
    step_until(h, "the scoreboard", |h| h.state().scoreboard.is_current());
    // A grid drawn for the first time spends a frame measuring itself, invisible to
    // AccessKit; two more frames show every section that arrived last.
    h.run_steps(2);
}

fn score_json(path: &Path, ks: &str, baseline: &str) -> serde_json::Value {
    let out = Command::new(env!("CARGO_BIN_EXE_plumbline"))
        .args(["score", path.to_str().unwrap(), "--format", "json"])
        .args(["--k", ks, "--baseline", baseline])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn all_texts(h: &Harness<'static, Workbench>) -> Vec<String> {
    let mut out = Vec::new();
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        out.extend(n.label());
        out.extend(n.value());
    }
    out
}

fn interval(m: &serde_json::Value) -> String {
    format!(
        "{:.3} [{:.3}, {:.3}]",
        m["mean"].as_f64().unwrap(),
        m["ci_low"].as_f64().unwrap(),
        m["ci_high"].as_f64().unwrap()
    )
}

fn p(v: &serde_json::Value) -> String {
    let p = v.as_f64().unwrap();
    if p < 0.001 {
        "< 0.001".into()
    } else {
        format!("{p:.3}")
    }
}

/// Every ranker cell and comparison row of the CLI's JSON appears on screen.
fn assert_screen_matches(h: &Harness<'static, Workbench>, json: &serde_json::Value, ks: &[usize]) {
    let texts = all_texts(h);
    let has = |t: &str| texts.iter().any(|s| s == t);
    let focus = if ks.contains(&10) {
        10
    } else {
        *ks.iter().max().unwrap()
    };
    for r in json["rankers"].as_array().unwrap() {
        let metrics = &r["metrics"];
        let mut keys: Vec<String> = ks.iter().map(|k| format!("ndcg@{k}")).collect();
        keys.extend([
            format!("precision@{focus}"),
            format!("err@{focus}"),
            "rr".into(),
        ]);
        for key in keys {
            let shown = interval(&metrics[&key]);
            assert!(has(&shown), "{} {key}: {shown} not on screen", r["ranker"]);
        }
        for k in ks {
            let judged = format!(
                "{:.0} %",
                metrics[format!("judged@{k}")]["mean"].as_f64().unwrap() * 100.0
            );
            assert!(has(&judged), "judged@{k} {judged} not on screen");
        }
    }
    let comparisons = json["comparisons"].as_array().unwrap();
    assert_eq!(
        comparisons.len(),
        2 * ks.len(),
        "two candidates × NDCG at each k"
    );
    for c in comparisons {
        let row = format!(
            "{} vs {}",
            c["ranker"].as_str().unwrap(),
            c["baseline"].as_str().unwrap()
        );
        assert!(has(&row), "{row} not on screen");
        let diff = format!(
            "{:+.3} [{:+.3}, {:+.3}]",
            c["diff"].as_f64().unwrap(),
            c["ci_low"].as_f64().unwrap(),
            c["ci_high"].as_f64().unwrap()
        );
        assert!(has(&diff), "{row} {}: {diff} not on screen", c["metric"]);
        for key in ["p_randomization", "p_t", "p_holm"] {
            assert!(has(&p(&c[key])), "{row} {key} not on screen");
        }
        let wtl = format!("{} / {} / {}", c["wins"], c["ties"], c["losses"]);
        assert!(has(&wtl), "{row} {wtl} not on screen");
    }
}

/// Lets a scroll animation finish so the pointer lands on the widget.
fn settle_scroll(h: &mut Harness<'static, Workbench>) {
    for _ in 0..8 {
        h.step();
    }
}

fn choose(h: &mut Harness<'static, Workbench>, combo: &str, option: &str) {
    h.get_by_role_and_label(Role::ComboBox, combo)
        .scroll_to_me();
    settle_scroll(h);
    h.get_by_role_and_label(Role::ComboBox, combo).click();
    h.step();
    h.step();
    h.get_by_label(&format!("{combo}: {option}")).click();
    h.step();
}

#[test]
fn screen_numbers_equal_the_score_command_when_k_and_baseline_change() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    settle(&mut h);
    let baseline = h.state().scoreboard.wanted.baseline.clone().unwrap();
    let json = score_json(&path, "5,10,20", &baseline);
    assert_screen_matches(&h, &json, &[5, 10, 20]);
    // The cautions stand beside the comparisons; low coverage at k = 20 is flagged.
    let texts = all_texts(&h);
    assert!(texts.iter().any(|t| t.contains("they do not replace it")));
    assert!(
        texts
            .iter()
            .any(|t| t.contains("small samples give wide intervals"))
    );
    let low_coverage = json["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .any(|r| r["metrics"]["judged@20"]["mean"].as_f64().unwrap() < 0.9);
    assert_eq!(
        texts.iter().any(|t| t.starts_with("Coverage warning")),
        low_coverage
    );

    // Add k = 3: a new column and new comparison rows, equal to the CLI with --k 3,5,10,20.
    h.get_by_label("k=3").click();
    h.step();
    settle(&mut h);
    assert_eq!(h.state().scoreboard.wanted.ks, vec![3, 5, 10, 20]);
    assert!(h.query_all_by_label("NDCG@3").next().is_some());
    let json = score_json(&path, "3,5,10,20", &baseline);
    assert_screen_matches(&h, &json, &[3, 5, 10, 20]);

    // Pick another baseline from the combo box.
    let other = json["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["ranker"].as_str().unwrap().to_string())
        .find(|r| *r != baseline)
        .unwrap();
    choose(&mut h, "Baseline", &other);
    settle(&mut h);
    assert_eq!(
        h.state().scoreboard.wanted.baseline.as_deref(),
        Some(other.as_str())
    );
    let json = score_json(&path, "3,5,10,20", &other);
    assert_screen_matches(&h, &json, &[3, 5, 10, 20]);
    assert!(
        all_texts(&h)
            .iter()
            .any(|t| t.ends_with(&format!("vs {other}"))),
        "comparisons are against {other} now"
    );
}

#[test]
fn reviewer_sensitivity_uses_each_reviewers_own_grades() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    settle(&mut h);
    let baseline = h.state().scoreboard.wanted.baseline.clone().unwrap();
    let model = h.state().scoreboard.model.clone().unwrap();
    assert!(model.sensitivity.len() >= 2);
    for row in &model.sensitivity {
        let out = Command::new(env!("CARGO_BIN_EXE_plumbline"))
            .args(["score", path.to_str().unwrap(), "--format", "json"])
            .args(["--grades", &row.reviewer, "--baseline", &baseline])
            .output()
            .unwrap();
        let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        let (means, _, _) = &row.by_key["ndcg@10"];
        let texts = all_texts(&h);
        for (r, mean) in json["rankers"].as_array().unwrap().iter().zip(means) {
            let cli = r["metrics"]["ndcg@10"]["mean"].as_f64().unwrap();
            assert!(
                (cli - mean).abs() < 1e-12,
                "{}: {cli} vs {mean}",
                row.reviewer
            );
            assert!(
                texts.iter().any(|t| *t == format!("{cli:.3}")),
                "{cli:.3} is not on the screen"
            );
        }
    }
}

#[test]
fn judging_the_gaps_opens_the_desk_on_the_most_decisive_pair() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    settle(&mut h);
    let first_gap = {
        let model = h.state().scoreboard.model.as_ref().unwrap();
        assert!(
            !model.gaps.is_empty(),
            "the demo leaves ranks 11–20 partly unjudged"
        );
        let g = &model.gaps[0];
        assert!(model.gaps.windows(2).all(|w| w[0].spread >= w[1].spread));
        (g.context_id.clone(), g.item_id.clone())
    };
    choose(&mut h, "Reviewer for the gaps", "rev-birch");
    h.get_by_label_contains("gaps and open the desk")
        .scroll_to_me();
    settle_scroll(&mut h);
    h.get_by_label_contains("gaps and open the desk").click();
    h.step();
    step_until(&mut h, "the desk with the first gap", |h| {
        let wb = h.state();
        wb.screen == Screen::Desk && wb.desk.data().is_some() && wb.desk.current().is_some()
    });
    let wb = h.state();
    assert_eq!(wb.reviewer.as_deref(), Some("rev-birch"));
    let data = wb.desk.data().unwrap();
    let (c, i) = data.queue[wb.desk.current().unwrap()];
    assert_eq!(
        (
            data.contexts[c as usize].id.clone(),
            data.items[i as usize].id.clone()
        ),
        first_gap
    );
}

#[test]
fn every_control_on_the_scoreboard_has_an_accessible_label() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    settle(&mut h);
    let mut controls = 0;
    for node in h.root().children_recursive() {
        let n = node.accesskit_node();
        if matches!(n.role(), Role::Button | Role::ComboBox | Role::CheckBox) {
            controls += 1;
            let label = n.label().unwrap_or_default();
            assert!(!label.trim().is_empty(), "unlabelled {:?}: {n:?}", n.role());
        }
    }
    assert!(controls >= 14, "only {controls} controls found");
}

#[test]
fn lists_from_a_file_are_scored_beside_the_study_without_importing_them() {
    let (_dir, path) = demo_copy();
    // Next week's candidate: the production lists in reverse order, under a new name.
    let conn = rusqlite::Connection::open(&path).unwrap();
    let mut csv = String::from("ranker,context_id,item_id,rank\n");
    let mut stmt = conn
        .prepare(
            "SELECT context_id, item_id, rank FROM ranked_items WHERE ranker = 'lexical-prod'
             ORDER BY context_id, rank DESC",
        )
        .unwrap();
    let rows: Vec<(String, String)> = stmt
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    let mut rank = 0;
    let mut last = String::new();
    for (context, item) in rows {
        rank = if context == last { rank + 1 } else { 1 };
        last = context.clone();
        csv.push_str(&format!("next-week,{context},{item},{rank}\n"));
    }
    drop(stmt);
    drop(conn);
    let file = path.with_file_name("next.csv");
    std::fs::write(&file, csv).unwrap();
    let before = std::fs::read(&path).unwrap();

    let mut h = harness(&path);
    settle(&mut h);
    let field = "Score lists from a file (nothing imported):";
    h.get_by_role_and_label(Role::TextInput, field).focus();
    h.step();
    h.get_by_role_and_label(Role::TextInput, field)
        .type_text(file.to_str().unwrap());
    h.step();
    h.get_by_label("Score it").click();
    h.step();
    step_until(&mut h, "the file's lists", |h| {
        h.state().scoreboard.is_current()
            && h.state()
                .scoreboard
                .model
                .as_ref()
                .is_some_and(|m| m.board.rankers.iter().any(|r| r.ranker == "next-week"))
    });
    let texts = all_texts(&h);
    assert!(
        texts
            .iter()
            .any(|t| t.contains("next-week (from next.csv)")),
        "{texts:?}"
    );
    assert!(
        texts
            .iter()
            .any(|t| t.contains("Is the pool fair to a newcomer?"))
    );
    // Reversed, its top 10 is what the pool judged least: the screen says so, in the
    // ranker's own folded group of cautions.
    h.get_by_label_contains("next-week: ").click();
    h.step();
    h.step();
    let texts = all_texts(&h);
    assert!(
        texts
            .iter()
            .any(|t| t.contains("next-week (from next.csv) has") && t.contains("likely biased low")),
        "{texts:?}"
    );
    drop(h);
    assert!(
        std::fs::read(&path).unwrap() == before,
        "the study must not be written"
    );
}

#[test]
fn scores_and_the_report_save_to_a_typed_path_without_a_file_dialog() {
    let (_dir, path) = demo_copy();
    let target = path.with_file_name("typed-scores.csv");
    let report = path.with_file_name("typed-report.md");
    // Tall enough that the export row at the foot of the screen is on screen.
    let mut h = Harness::builder()
        .with_size([1400.0, 4000.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), Screen::Scoreboard),
        );
    settle(&mut h);
    let field = "Or save to this path:";
    for (file, button) in [
        (&target, "Save scores CSV there"),
        (&report, "Save report there"),
    ] {
        h.get_by_role_and_label(Role::TextInput, field).focus();
        h.step();
        h.get_by_role_and_label(Role::TextInput, field)
            .type_text(file.to_str().unwrap());
        h.step();
        h.get_by_label(button).click();
        h.step();
        for _ in 0..50 {
            h.step();
            std::thread::sleep(std::time::Duration::from_millis(10));
        }
        assert!(
            file.exists(),
            "{:?} / typed {:?}",
            h.state().scoreboard.export_note,
            h.state().scoreboard.export_path
        );
        h.state_mut().scoreboard.export_path.clear();
        h.step();
    }
    let csv = std::fs::read_to_string(&target).unwrap();
    assert!(csv.starts_with("ranker,context_id,metric,value") || csv.contains("ndcg@10"));
    assert!(
        std::fs::read_to_string(&report)
            .unwrap()
            .starts_with("# Scoreboard report")
    );
}

#[test]
fn every_curve_in_the_legend_carries_its_rankers_colour() {
    let (_dir, path) = demo_copy();
    let mut h = harness(&path);
    settle(&mut h);
    let model = h.state().scoreboard.model.clone().unwrap();
    let items = plumbline::ui::scoreboard::plots::curve_items(&model);
    assert_eq!(items.len(), 3 * model.curves.len());
    let mut seen = std::collections::HashSet::new();
    for (r, (name, _)) in model.curves.iter().enumerate() {
        // The first item of each name (the one the legend takes its swatch from) is the
        // line, in the ranker's own colour.
        let first = items
            .iter()
            .find(|i| match i {
                plumbline::ui::scoreboard::plots::CurveItem::Line { name: n, .. }
                | plumbline::ui::scoreboard::plots::CurveItem::Band { name: n, .. } => n == name,
            })
            .unwrap();
        match first {
            plumbline::ui::scoreboard::plots::CurveItem::Line { colour, .. } => {
                assert_eq!(*colour, plumbline::ui::palette::series(r));
                assert!(seen.insert(*colour), "each ranker has its own colour");
            }
            other => panic!("{name}: the legend would take a band's faint colour: {other:?}"),
        }
    }
}

/// The screen's model arrives in two steps: the table (what `score` computes) first,
/// then curves, sensitivity, agreement and gaps. Together they are exactly the model
/// `view scoreboard` prints, and while the rest is pending the screen says so.
#[test]
fn the_table_comes_first_and_the_rest_completes_the_same_model() {
    use plumbline::analysis::views::scoreboard_view::{build, build_rest, build_table};
    let (_dir, path) = demo_copy();
    let snapshot = plumbline::study::Study::open(&path)
        .unwrap()
        .snapshot()
        .unwrap();
    let whole = build(&snapshot, Default::default()).unwrap();
    let mut table = build_table(&snapshot, Default::default()).unwrap();
    assert!(table.rest_pending && table.curves.is_empty() && table.gaps.is_empty());
    assert_eq!(
        serde_json::to_string(&table.board).unwrap(),
        serde_json::to_string(&whole.board).unwrap()
    );

    let mut h = harness(&path);
    h.state_mut().scoreboard.model = Some(table.clone());
    h.state_mut().scoreboard.wanted = table.settings.clone();
    h.step();
    assert!(
        h.query_by_label_contains("The table is ready; computing the NDCG curves")
            .is_some()
    );

    let rest = build_rest(&snapshot, &table).unwrap();
    table.add_rest(rest);
    assert!(!table.rest_pending);
    assert_eq!(
        serde_json::to_string(&table).unwrap(),
        serde_json::to_string(&whole).unwrap()
    );
}
