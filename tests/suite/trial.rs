//! The scale trial on the demo pilot, recomputed independently from the engine functions.

use std::collections::{BTreeMap, HashSet};

use plumbline::analysis::scoring::trial;
use plumbline::core::agreement::{self, AlphaLevel, CollapseMap, Confusion, Weights};
use plumbline::core::stats;
use plumbline::study::Study;

#[test]
fn trial_rows_match_an_independent_computation() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    let study = Study::open(&path).unwrap();
    let halves = CollapseMap {
        name: "low-high".into(),
        targets: vec![0, 0, 1, 1],
    };
    study.save_collapse_map("fit4", &halves).unwrap();
    let snapshot = study.snapshot().unwrap();
    let result = trial::build(&snapshot, &study.collapse_maps().unwrap(), 300, 4);

    let fit4 = snapshot.scale_index("fit4").unwrap() as u32;
    let useful2 = snapshot.scale_index("useful2").unwrap() as u32;
    let pairs_of = |s: u32| -> HashSet<(u32, u32)> {
        snapshot
            .grades
            .iter()
            .filter(|g| g.scale == s && g.value.is_some())
            .map(|g| (g.context, g.item))
            .collect()
    };
    let common: HashSet<(u32, u32)> = pairs_of(fit4)
        .intersection(&pairs_of(useful2))
        .copied()
        .collect();
    assert_eq!(result.common_pairs, common.len());
    assert!(common.len() >= 150, "the demo pilot has at least 150 pairs");

    // units[pair][reviewer] on one scale, restricted to the common pairs.
    let units_of = |s: u32, map: Option<&CollapseMap>| -> Vec<Vec<Option<u8>>> {
        let mut by_pair: BTreeMap<(u32, u32), Vec<Option<u8>>> = BTreeMap::new();
        for g in snapshot
            .grades
            .iter()
            .filter(|g| g.scale == s && common.contains(&(g.context, g.item)))
        {
            let unit = by_pair
                .entry((g.context, g.item))
                .or_insert_with(|| vec![None; snapshot.reviewers.len()]);
            unit[g.reviewer as usize] = g.value.map(|v| map.map_or(v, |m| m.targets[v as usize]));
        }
        by_pair.into_values().collect()
    };
    for (row_scale, s, map, levels) in [
        ("fit4", fit4, None, 4),
        ("useful2", useful2, None, 2),
        ("fit4", fit4, Some(&halves), 2),
    ] {
        let row = result
            .scales
            .iter()
            .find(|r| r.scale == row_scale && r.collapse.as_deref() == map.map(|m| m.name.as_str()))
            .expect("row present");
        let units = units_of(s, map);
        assert_eq!(row.pairs, units.len());
        let alpha = agreement::krippendorff_alpha(levels, &units, AlphaLevel::Ordinal);
        assert!(
            (row.alpha_ordinal - alpha).abs() < 1e-12,
            "{row_scale}: {} vs {alpha}",
            row.alpha_ordinal
        );
        let mut kappas = Vec::new();
        for a in 0..snapshot.reviewers.len() {
            for b in (a + 1)..snapshot.reviewers.len() {
                let col = |r: usize| units.iter().map(|u| u[r]).collect::<Vec<_>>();
                let table = Confusion::from_pairs(levels, &col(a), &col(b));
                if table.total() > 0 {
                    kappas.push(agreement::cohen_kappa(&table, Weights::Quadratic));
                }
            }
        }
        assert!((row.kappa_quadratic_mean - stats::mean(&kappas)).abs() < 1e-12);
        assert!(row.alpha_ci_low <= row.alpha_ordinal && row.alpha_ordinal <= row.alpha_ci_high);
        assert!((0.0..=1.0).contains(&row.discriminative_power));
    }
    assert!(!result.recommendation.is_empty());
}

// ---- Written rules of the scale trial, each with a hand-checked example ----

mod rules {
    use crate::cli::{args, plumbline};
    use crate::common::Fixture;

    /// Two scales on the fixture's catalog: `fit` (0–2) and `bin` (0–1).
    const SCALES: &str = "scale,value,label,gain,key,rubric\n\
fit,0,Off target,,0,\nfit,1,Loosely related,,1,\nfit,2,Spot on,,2,\n\
bin,0,No,,,\nbin,1,Yes,,,\n";

    /// ann and bo grade five pairs on `fit`; `bin` follows.
    const FIT: &str = "reviewer,context_id,item_id,scale,value,seconds\n\
ann,q1,i1,fit,2,4\nann,q1,i2,fit,1,3\nann,q1,i3,fit,0,2\nann,q2,i3,fit,2,4\nann,q2,i1,fit,0,2\n\
bo,q1,i1,fit,2,5\nbo,q1,i2,fit,2,6\nbo,q1,i3,fit,1,2\nbo,q2,i3,fit,2,3\nbo,q2,i1,fit,0,2\n";

    fn trial_json(bin: &str) -> serde_json::Value {
        let fixture = Fixture::new();
        fixture.write("scales.csv", SCALES);
        fixture.write("grades.csv", &format!("{FIT}{bin}"));
        let study = fixture.path("trial.plumb");
        let s = study.to_str().unwrap();
        let f = |n: &str| fixture.path(n).to_str().unwrap().to_string();
        assert!(plumbline(args!["new", s]).status.success());
        let out = plumbline(args![
            "import",
            s,
            "--items",
            &f("items.csv"),
            "--contexts",
            &f("contexts.csv"),
            "--scales",
            &f("scales.csv"),
            "--rankings",
            &f("rankings.csv"),
            "--grades",
            &f("grades.csv")
        ]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let out = plumbline(args!["trial", s, "--format", "json"]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        serde_json::from_slice(&out.stdout).unwrap()
    }

    fn row<'a>(trial: &'a serde_json::Value, scale: &str) -> &'a serde_json::Value {
        trial["scales"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["scale"] == scale)
            .unwrap()
    }

    fn close(value: &serde_json::Value, want: f64) {
        let got = value.as_f64().unwrap_or(f64::NAN);
        assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    }

    /// Written rule: the rows use the reviewers who gave a level on every compared scale.
    /// cy grades two `bin` pairs "Yes" and nothing on `fit`, so cy is left out of every
    /// row (with a caution). Counted in, cy's two reviewer pairs (both "Yes" twice) had an
    /// undefined kappa that made bin's kappa mean null, and an AC1 of 1 that lifted its
    /// AC1 mean to 0.885, beside a fit row measured on ann and bo alone.
    ///
    /// By hand, ann and bo on `bin` (ann 1 1 0 1 0, bo 1 1 1 1 0): p_o = 4/5, p_e =
    /// 2/5·1/5 + 3/5·4/5 = 0.56, kappa = 0.24/0.44 = 6/11 (Cohen 1960; on two levels the
    /// quadratic weights change nothing, Cohen 1968); AC1: π₁ = (3/5 + 4/5)/2 = 0.7,
    /// chance = 2·0.7·0.3/(2 − 1) = 0.42, AC1 = 0.38/0.58 = 19/29 (Gwet 2008). On `fit`
    /// (ann 2 1 0 2 0, bo 2 2 1 2 0): quadratic kappa = 1 − 2/(40/5) = 3/4; AC1: π =
    /// (0.3, 0.2, 0.5), chance = 0.62/2 = 0.31, AC1 = 0.29/0.69 = 29/69.
    #[test]
    fn the_rows_use_the_reviewers_who_graded_every_scale() {
        let trial = trial_json(
            "ann,q1,i1,bin,1,2\nann,q1,i2,bin,1,2\nann,q1,i3,bin,0,2\nann,q2,i3,bin,1,2\nann,q2,i1,bin,0,2\n\
bo,q1,i1,bin,1,2\nbo,q1,i2,bin,1,2\nbo,q1,i3,bin,1,2\nbo,q2,i3,bin,1,2\nbo,q2,i1,bin,0,2\n\
cy,q1,i1,bin,1,2\ncy,q1,i2,bin,1,2\n",
        );
        assert_eq!(trial["reviewer_names"], serde_json::json!(["ann", "bo"]));
        assert_eq!(trial["common_pairs"], 5);
        assert!(
            trial["caution_codes"]
                .as_array()
                .unwrap()
                .iter()
                .any(|c| c == "reviewers_left_out")
        );
        let (fit, bin) = (row(&trial, "fit"), row(&trial, "bin"));
        assert_eq!(
            (&fit["reviewers"], &bin["reviewers"]),
            (&2.into(), &2.into())
        );
        close(&bin["kappa_quadratic_mean"], 6.0 / 11.0);
        close(&bin["ac1_mean"], 19.0 / 29.0);
        close(&fit["kappa_quadratic_mean"], 0.75);
        close(&fit["ac1_mean"], 29.0 / 69.0);
    }

    /// Written rules: when both reviewers give one and the same level to every shared
    /// pair, chance agreement is 1 and kappa is 0/0, so the kappa mean is null while
    /// AC1 is 1 (p_o = 1, π₀ = 1, chance 0; Gwet 2008). With every `bin` grade at 0 no
    /// context has a relevant item on that row: it has no ranker means, so its ranker
    /// order is empty and its tau-b and discriminative power are null, while the `fit`
    /// row keeps its order.
    #[test]
    fn a_row_without_variation_has_a_null_kappa_mean_and_no_ranker_means() {
        let bin: String = ["ann", "bo"]
            .iter()
            .flat_map(|r| {
                [
                    ("q1", "i1"),
                    ("q1", "i2"),
                    ("q1", "i3"),
                    ("q2", "i3"),
                    ("q2", "i1"),
                ]
                .map(|(c, i)| format!("{r},{c},{i},bin,0,2\n"))
            })
            .collect();
        let trial = trial_json(&bin);
        assert!(
            trial["caution_codes"]
                .as_array()
                .unwrap()
                .iter()
                .all(|c| c != "reviewers_left_out")
        );
        let bin = row(&trial, "bin");
        assert!(bin["kappa_quadratic_mean"].is_null(), "{bin}");
        close(&bin["ac1_mean"], 1.0);
        assert_eq!(bin["ranker_order"], serde_json::json!([]));
        assert!(bin["kendall_tau"].is_null());
        assert!(bin["discriminative_power"].is_null());
        assert_eq!(
            row(&trial, "fit")["ranker_order"].as_array().unwrap().len(),
            2
        );
    }
}
