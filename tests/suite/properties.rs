//! Properties that must hold for any input (proptest) and a coverage simulation.

use plumbline::core::agreement::{self, AlphaLevel, Confusion, Weights};
use plumbline::core::metric_table::{self, Metric, MetricKind};
use plumbline::core::metrics::{JudgedList, ListSettings, Unjudged};
use plumbline::core::stats;
use proptest::prelude::*;

fn settings(unjudged: Unjudged) -> ListSettings {
    ListSettings {
        gains: vec![0.0, 1.0, 3.0, 7.0],
        max_level: 3,
        relevant_from: 1,
        unjudged,
        persistence: 0.8,
    }
}

/// NDCG@k and RR of one list through the production scoring function.
fn ndcg_and_rr(list: &JudgedList<'_>, s: &ListSettings, k: usize) -> Vec<f64> {
    let (mut scratch, mut out) = (Vec::new(), Vec::new());
    let wanted = [
        Metric::at(MetricKind::Ndcg, k),
        Metric::whole(MetricKind::Rr),
    ];
    metric_table::score_list(list, s, &wanted, &mut scratch, &mut out);
    out
}

fn ideal_of(levels: &[Option<u8>], gains: &[f64]) -> Vec<f64> {
    let mut g: Vec<f64> = levels
        .iter()
        .flatten()
        .map(|v| gains[*v as usize])
        .collect();
    g.sort_by(|a, b| b.total_cmp(a));
    g
}

proptest! {
    #[test]
    fn ndcg_lies_in_unit_interval(levels in prop::collection::vec(prop::option::weighted(0.8, 0u8..4), 1..40), k in 1usize..25) {
        let s = settings(Unjudged::Zero);
        let ideal = ideal_of(&levels, &s.gains);
        let list = JudgedList { levels: &levels, ideal_gains: &ideal, has_relevant: true };
        let n = ndcg_and_rr(&list, &s, k)[0];
        prop_assert!((0.0..=1.0 + 1e-12).contains(&n));
    }

    #[test]
    fn the_ideal_order_scores_one(mut levels in prop::collection::vec(0u8..4, 1..40), k in 1usize..25) {
        levels.sort_by(|a, b| b.cmp(a));
        prop_assume!(levels[0] > 0);
        let judged: Vec<Option<u8>> = levels.iter().map(|v| Some(*v)).collect();
        let s = settings(Unjudged::Zero);
        let ideal = ideal_of(&judged, &s.gains);
        let list = JudgedList { levels: &judged, ideal_gains: &ideal, has_relevant: true };
        prop_assert!((ndcg_and_rr(&list, &s, k)[0] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn condense_equals_zero_when_all_is_judged(levels in prop::collection::vec(0u8..4, 1..40), k in 1usize..25) {
        let judged: Vec<Option<u8>> = levels.iter().map(|v| Some(*v)).collect();
        let ideal = ideal_of(&judged, &settings(Unjudged::Zero).gains);
        let list = JudgedList { levels: &judged, ideal_gains: &ideal, has_relevant: true };
        let a = ndcg_and_rr(&list, &settings(Unjudged::Zero), k);
        let b = ndcg_and_rr(&list, &settings(Unjudged::Condense), k);
        prop_assert_eq!(a, b);
    }

    #[test]
    fn bootstrap_interval_contains_the_mean(values in prop::collection::vec(-10.0f64..10.0, 2..60), seed in any::<u64>()) {
        let ci = stats::bootstrap_mean(&values, 300, 0.95, seed);
        prop_assert!(ci.low <= ci.mean + 1e-12 && ci.mean <= ci.high + 1e-12);
    }

    #[test]
    fn identical_rankers_have_randomization_p_of_one(n in 1usize..200, seed in any::<u64>()) {
        prop_assert_eq!(stats::randomization_test(&vec![0.0; n], 1000, seed), 1.0);
    }

    #[test]
    fn kappa_does_not_depend_on_which_reviewer_is_first(pairs in prop::collection::vec((0u8..4, 0u8..4), 5..80)) {
        let a: Vec<Option<u8>> = pairs.iter().map(|p| Some(p.0)).collect();
        let b: Vec<Option<u8>> = pairs.iter().map(|p| Some(p.1)).collect();
        let ab = Confusion::from_pairs(4, &a, &b);
        let ba = Confusion::from_pairs(4, &b, &a);
        for w in [Weights::Unweighted, Weights::Linear, Weights::Quadratic] {
            let (x, y) = (agreement::cohen_kappa(&ab, w), agreement::cohen_kappa(&ba, w));
            prop_assert!(x.is_nan() && y.is_nan() || (x - y).abs() < 1e-12);
        }
    }

    #[test]
    fn weighting_is_irrelevant_on_two_levels(pairs in prop::collection::vec((0u8..2, 0u8..2), 5..80)) {
        let a: Vec<Option<u8>> = pairs.iter().map(|p| Some(p.0)).collect();
        let b: Vec<Option<u8>> = pairs.iter().map(|p| Some(p.1)).collect();
        let t = Confusion::from_pairs(2, &a, &b);
        let plain = agreement::cohen_kappa(&t, Weights::Unweighted);
        prop_assume!(plain.is_finite());
        prop_assert!((agreement::cohen_kappa(&t, Weights::Linear) - plain).abs() < 1e-12);
        prop_assert!((agreement::cohen_kappa(&t, Weights::Quadratic) - plain).abs() < 1e-12);
    }

    #[test]
    fn identical_reviewers_give_kappa_and_alpha_one(levels in prop::collection::vec(0u8..4, 5..80)) {
        let a: Vec<Option<u8>> = levels.iter().map(|v| Some(*v)).collect();
        prop_assume!(levels.iter().any(|v| *v != levels[0]));
        let t = Confusion::from_pairs(4, &a, &a);
        prop_assert!((agreement::cohen_kappa(&t, Weights::Unweighted) - 1.0).abs() < 1e-12);
        let units: Vec<Vec<Option<u8>>> = a.iter().map(|v| vec![*v, *v, *v]).collect();
        for level in [AlphaLevel::Nominal, AlphaLevel::Ordinal, AlphaLevel::Interval] {
            prop_assert!((agreement::krippendorff_alpha(4, &units, level) - 1.0).abs() < 1e-12);
        }
    }
}

/// Efron & Tibshirani (1993): a 95 % percentile interval of a mean of normal data should
/// cover the true mean in about 95 % of samples. 2000 trials of n = 60; accept 93–97 %.
#[test]
fn bootstrap_interval_covers_about_95_percent() {
    let mut rng = stats::Rng::new(99);
    let true_mean = 0.3;
    let trials = 2000;
    let mut covered = 0;
    for trial in 0..trials {
        let sample: Vec<f64> = (0..60).map(|_| true_mean + rng.normal()).collect();
        let ci = stats::bootstrap_mean(&sample, 1000, 0.95, trial as u64);
        if ci.low <= true_mean && true_mean <= ci.high {
            covered += 1;
        }
    }
    let rate = covered as f64 / trials as f64;
    assert!((0.93..=0.97).contains(&rate), "coverage {rate}");
}
