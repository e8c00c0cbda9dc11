//! Cross-checks between the engine's fast paths and direct computations.

use plumbline::core::agreement::{self, AlphaLevel, CollapseMap, Confusion, Weights};
use plumbline::core::stats::{self, Rng};

/// The sampled randomization test (table look-ups, blocks on several threads) must agree
/// with full enumeration of all 2^n sign flips (Smucker et al. 2007 define both).
#[test]
fn sampled_randomization_agrees_with_enumeration() {
    let mut rng = Rng::new(3);
    let diffs: Vec<f64> = (0..20).map(|_| 0.08 + 0.3 * rng.normal()).collect();
    let observed = diffs.iter().sum::<f64>().abs();
    let total = 1u32 << diffs.len();
    let extreme = (0..total)
        .filter(|mask| {
            let s: f64 = diffs
                .iter()
                .enumerate()
                .map(|(i, d)| if mask >> i & 1 == 1 { -d } else { *d })
                .sum();
            s.abs() >= observed - 1e-9
        })
        .count();
    let exact = extreme as f64 / total as f64;
    let sampled = stats::randomization_test(&diffs, 40_000, 11);
    // Monte Carlo standard error at 40 000 resamples is below 0.0025.
    assert!(
        (sampled - exact).abs() < 0.01,
        "sampled {sampled}, exact {exact}"
    );
}

#[test]
fn shared_bootstrap_gives_the_same_interval_as_a_lone_one() {
    let mut rng = Rng::new(5);
    let a: Vec<f64> = (0..300).map(|_| rng.normal()).collect();
    let b: Vec<f64> = (0..300).map(|_| 2.0 + rng.normal()).collect();
    let both = stats::bootstrap_means(&[&a, &b], 1000, 0.95, 9);
    let alone = stats::bootstrap_mean(&a, 1000, 0.95, 9);
    assert_eq!(both[0], alone, "the same seed resamples the same contexts");
    assert!(both[1].low < 2.0 && 2.0 < both[1].high);
}

/// A collapse map must give exactly what recoding the grades by hand gives.
#[test]
fn collapse_map_equals_recoding_by_hand() {
    let mut rng = Rng::new(8);
    let units: Vec<Vec<Option<u8>>> = (0..120)
        .map(|_| {
            (0..3)
                .map(|_| (rng.below(10) > 1).then(|| rng.below(4) as u8))
                .collect()
        })
        .collect();
    let map = CollapseMap {
        name: "low-high".into(),
        targets: vec![0, 0, 1, 1],
    };
    let by_map = map.apply_units(&units);
    let by_hand: Vec<Vec<Option<u8>>> = units
        .iter()
        .map(|u| u.iter().map(|l| l.map(|v| u8::from(v >= 2))).collect())
        .collect();
    assert_eq!(by_map, by_hand);
    let alpha = |u: &[Vec<Option<u8>>]| agreement::krippendorff_alpha(2, u, AlphaLevel::Nominal);
    assert_eq!(alpha(&by_map), alpha(&by_hand));
    let col = |u: &[Vec<Option<u8>>], r: usize| u.iter().map(|x| x[r]).collect::<Vec<_>>();
    let kappa = |u: &[Vec<Option<u8>>]| {
        agreement::cohen_kappa(
            &Confusion::from_pairs(2, &col(u, 0), &col(u, 1)),
            Weights::Unweighted,
        )
    };
    assert_eq!(kappa(&by_map), kappa(&by_hand));
}

/// Kendall's tau-b of an order with itself is 1, and of its reverse −1.
#[test]
fn kendall_tau_extremes() {
    let x = [0.9, 0.7, 0.71, 0.2];
    let reversed: Vec<f64> = x.iter().map(|v| -v).collect();
    assert!((stats::kendall_tau_b(&x, &x) - 1.0).abs() < 1e-15);
    assert!((stats::kendall_tau_b(&x, &reversed) + 1.0).abs() < 1e-15);
}
