//! A reviewer pair with few shared grades: its kappa interval stays inside kappa's range
//! [−1, 1], it gets a caution instead of a Landis & Koch word (below 2·q² shared grades,
//! Cicchetti & Fleiss 1977, from memory), the Agreement screen draws its cell faded with
//! its n, and the report's heatmap hatches it and explains the hatching in its legend.

use std::path::{Path, PathBuf};

use crate::cli::plumbline;
use crate::ui_support::{Bench, step_until};

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::ui::{Screen, Workbench};

fn run(args: &[&str]) -> String {
    let a: Vec<&std::ffi::OsStr> = args.iter().map(std::ffi::OsStr::new).collect();
    let out = plumbline(&a);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// Two reviewers on a four-level scale sharing three pairs: ann gives 0, 1, 2 and bo
/// gives 0, 1, 3. By hand (Cohen 1960): p_o = 2/3, p_e = 1/9 + 1/9 = 2/9, so
/// kappa = (2/3 − 2/9) / (1 − 2/9) = 4/7 ≈ 0.571, which Landis & Koch (1977) would call
/// "moderate". cy grades one pair at level 0, so no context has a relevant item on cy's
/// grades alone.
fn thin_study(dir: &Path) -> PathBuf {
    let study = dir.join("thin.plumb");
    let s = study.to_str().unwrap();
    let file = |name: &str, text: &str| {
        let p = dir.join(name);
        std::fs::write(&p, text).unwrap();
        p.to_str().unwrap().to_string()
    };
    let scales = file(
        "s.csv",
        "scale,value,label\nfit,0,Off\nfit,1,Loose\nfit,2,Good\nfit,3,Spot on\n",
    );
    let items = file("i.csv", "item_id,title\ni1,A\ni2,B\ni3,C\n");
    let contexts = file("c.csv", "context_id,kind,text\nq1,query,a\n");
    let rankings = file(
        "r.csv",
        "ranker,context_id,item_id,rank\nr1,q1,i1,1\nr1,q1,i2,2\nr1,q1,i3,3\n\
         r2,q1,i3,1\nr2,q1,i2,2\nr2,q1,i1,3\n",
    );
    let grades = file(
        "g.csv",
        "reviewer,context_id,item_id,scale,value\n\
         ann,q1,i1,fit,0\nann,q1,i2,fit,1\nann,q1,i3,fit,2\n\
         bo,q1,i1,fit,0\nbo,q1,i2,fit,1\nbo,q1,i3,fit,3\ncy,q1,i1,fit,0\n",
    );
    run(&["new", s]);
    run(&[
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
    ]);
    study
}

#[test]
fn a_thin_pair_gets_a_caution_a_kept_interval_and_a_marked_cell() {
    let dir = tempfile::tempdir().unwrap();
    let study = thin_study(dir.path());
    let json: serde_json::Value = serde_json::from_str(&run(&[
        "agree",
        study.to_str().unwrap(),
        "--format",
        "json",
    ]))
    .unwrap();
    let pair = &json["pairs"][0];
    assert_eq!(
        (&pair["reviewer_a"], &pair["reviewer_b"]),
        (&"ann".into(), &"bo".into())
    );
    assert_eq!(pair["n"], 3);
    let kappa = pair["kappa"].as_f64().unwrap();
    assert!((kappa - 4.0 / 7.0).abs() < 1e-12, "{kappa}");
    // The normal interval 4/7 ± 1.96·SE runs past 1 at n = 3; kappa's range is [−1, 1].
    let (low, high) = (
        pair["kappa_ci_low"].as_f64().unwrap(),
        pair["kappa_ci_high"].as_f64().unwrap(),
    );
    assert!((-1.0..=1.0).contains(&low), "{low}");
    assert_eq!(high, 1.0);
    // 3 < 2·4² = 32: no Landis & Koch word.
    assert_eq!(pair["thin"], true);
    assert_eq!(pair["band"], "too few shared grades");
    let text = run(&["agree", study.to_str().unwrap()]);
    let row = text.lines().find(|l| l.starts_with("ann × bo")).unwrap();
    assert!(!row.contains("moderate"), "{row}");
    assert!(text.contains("fewer than 32"), "{text}");

    // The screen: a faded cell that says why, and the caution under the matrix.
    let mut h: Bench = Harness::builder()
        .with_size([1360.0, 1400.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(study.clone(), Screen::Agreement),
        );
    step_until(&mut h, "the thin cell", |h| {
        h.query_by_label("Reviewers ann and bo: only 3 shared grades, too few for a band")
            .is_some()
    });
    assert!(h.query_by_label("Reviewers ann and bo").is_none());
    assert!(
        h.query_by_label_contains("Faded, outlined cells: fewer than 32 shared grades")
            .is_some()
    );
    // The confusion matrix names the levels on both axes (the row and the column).
    h.get_by_label("Reviewers ann and bo: only 3 shared grades, too few for a band")
        .click();
    h.step();
    h.step();
    for level in ["0 Off", "1 Loose", "2 Good", "3 Spot on"] {
        let n = h.query_all_by_label(level).count();
        assert_eq!(n, 2, "{level} heads a row and a column");
    }

    // Reviewer sensitivity: cy's grades score no context, so no ranker order is shown.
    let mut sb: Bench = Harness::builder()
        .with_size([1360.0, 3200.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(study.clone(), Screen::Scoreboard),
        );
    step_until(&mut sb, "the sensitivity rows", |h| {
        h.query_by_label_contains("no order: no context scored")
            .is_some()
    });
    assert!(sb.query_by_label_contains("(changed)").is_none());

    // The report's heatmap hatches the cell, writes its n and explains both in a legend.
    let report = dir.path().join("r.md");
    run(&[
        "export",
        study.to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
    ]);
    let svg = std::fs::read_to_string(dir.path().join("r-agreement.svg")).unwrap();
    assert!(svg.contains("n 3: too few"), "the cell names its n");
    assert!(
        svg.contains("hatched: fewer than 32"),
        "the legend says why"
    );
    assert!(svg.contains("0 or below") && svg.contains("1 (perfect)"));
}

/// The Scale trial gives a reason instead of a bare "–" where a quadratic kappa cannot
/// exist: kappa needs two reviewers (Cohen 1960), and here only ann graded.
#[test]
fn a_missing_trial_kappa_says_why() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let study = d.join("one.plumb");
    let s = study.to_str().unwrap();
    let file = |name: &str, text: &str| {
        let p = d.join(name);
        std::fs::write(&p, text).unwrap();
        p.to_str().unwrap().to_string()
    };
    let scales = file(
        "s.csv",
        "scale,value,label\nfine,0,Off\nfine,1,Loose\nfine,2,Good\ncoarse,0,No\ncoarse,1,Yes\n",
    );
    let items = file("i.csv", "item_id,title\ni1,A\ni2,B\ni3,C\n");
    let contexts = file("c.csv", "context_id,kind,text\nq1,query,a\n");
    let rankings = file(
        "r.csv",
        "ranker,context_id,item_id,rank\nr1,q1,i1,1\nr1,q1,i2,2\nr1,q1,i3,3\n",
    );
    let grades = file(
        "g.csv",
        "reviewer,context_id,item_id,scale,value\n\
         ann,q1,i1,fine,2\nann,q1,i2,fine,1\nann,q1,i3,fine,0\n\
         ann,q1,i1,coarse,1\nann,q1,i2,coarse,1\nann,q1,i3,coarse,0\n",
    );
    run(&["new", s]);
    run(&[
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
    ]);
    let mut h: Bench = Harness::builder()
        .with_size([1360.0, 1400.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(study.clone(), Screen::Trial),
        );
    step_until(&mut h, "the trial's reason", |h| {
        h.query_all_by_label("– (one reviewer)").next().is_some()
    });
}
