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
