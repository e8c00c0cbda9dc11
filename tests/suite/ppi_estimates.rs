//! Estimates from a machine judge corrected by a human sample (prediction-powered
//! inference, Angelopoulos, Bates, Fannjiang, Jordan & Zrnic 2023, Science 382; power
//! tuning λ of PPI++, Angelopoulos, Duchi & Zrnic 2023): the values of the reference
//! library ppi-python (module `ppi_py`, version in `ppi_expected.json`'s `generated_by`,
//! script `tests/reference/gen_ppi.py`) to 1e-9, and the interval's coverage by
//! simulation.

use plumbline::core::ppi::{self, HumansNeeded};
use plumbline::core::stats::Rng;
use serde_json::Value;

const TOL: f64 = 1e-9;

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn close(what: &str, name: &str, ours: f64, theirs: f64) {
    assert!(
        (ours - theirs).abs() <= TOL,
        "{what} of {name}: ours {ours}, ppi_py {theirs}"
    );
}

/// ppi_py 0.2.3: `ppi_mean_pointestimate(lam=None)`, `ppi_mean_ci(alpha=0.05,
/// lam=None)`, λ from `_calc_lam_glm` as `ppi_mean_ci` calls it, and
/// `baselines.classical_mean_ci(alpha=0.05)`; effective contexts from the ratio of the
/// library's half-widths; humans needed by issue 30's definition in plain Python.
#[test]
fn estimates_match_ppi_python() {
    let path = format!(
        "{}/tests/reference/ppi_expected.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let data: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    assert!(data["generated_by"]["ppi-python"].is_string());
    // The quantile the library used (scipy norm.ppf(0.975)) is the one we use.
    close(
        "z",
        "all",
        plumbline::core::stats::Z_975,
        data["z"].as_f64().unwrap(),
    );
    let cases = data["cases"].as_array().unwrap();
    assert!(cases.len() >= 8);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let (y, yhat, yu) = (
            floats(&case["y"]),
            floats(&case["yhat"]),
            floats(&case["yhat_unlabeled"]),
        );
        let e = ppi::estimate(&y, &yhat, &yu).unwrap();
        let f = |k: &str| case[k].as_f64().unwrap();
        close("lambda", name, e.lambda, f("lambda"));
        close("lambda()", name, ppi::lambda(&y, &yhat, &yu), f("lambda"));
        close("estimate", name, e.estimate, f("estimate"));
        close("ci_low", name, e.ci_low, f("ci_low"));
        close("ci_high", name, e.ci_high, f("ci_high"));
        close(
            "human_only_mean",
            name,
            e.human_only_mean,
            f("human_only_mean"),
        );
        close(
            "human_only_ci_low",
            name,
            e.human_only_ci_low,
            f("human_only_ci_low"),
        );
        close(
            "human_only_ci_high",
            name,
            e.human_only_ci_high,
            f("human_only_ci_high"),
        );
        close(
            "machine_only_mean",
            name,
            e.machine_only_mean,
            f("machine_only_mean"),
        );
        // Derived from two library half-widths: their rounding is amplified by the ratio.
        let eff = f("effective_human_contexts");
        assert!(
            (e.effective_human_contexts - eff).abs() <= 1e-9 * eff.max(1.0),
            "effective contexts of {name}: ours {}, reference {eff}",
            e.effective_human_contexts
        );
        assert_eq!((e.n_human, e.n_machine), (y.len(), yu.len()));
        for target in case["humans_needed"].as_array().unwrap() {
            let width = target["width"].as_f64().unwrap();
            let ours = match ppi::humans_needed(&e, width) {
                HumansNeeded::More(m) => Some(m as u64),
                HumansNeeded::Impossible(_) => None,
            };
            assert_eq!(
                ours,
                target["more"].as_u64(),
                "humans needed of {name} for {width}"
            );
        }
    }
}

/// Coverage (Angelopoulos et al. 2023, Science 382, Theorem 1 with the PPI++ λ: the
/// interval covers the mean with probability near 95 %): 400 populations with fixed
/// seeds, each of 300 contexts with an NDCG-like people's value, a machine that is
/// biased (+0.15 on a shrunk value) and noisy (sd 0.12), a uniform random sample of 40
/// contexts graded by people. The all-human mean of the 300 is covered in at least 92 %.
#[test]
fn the_interval_covers_the_all_human_mean() {
    let (contexts, sample, draws) = (300usize, 40usize, 400u64);
    let mut covered = 0;
    for seed in 0..draws {
        let mut rng = Rng::new(30_000 + seed);
        let human: Vec<f64> = (0..contexts)
            .map(|_| {
                if rng.unit() < 0.1 {
                    0.0
                } else {
                    (0.65 + 0.2 * rng.normal()).clamp(0.0, 1.0)
                }
            })
            .collect();
        let machine: Vec<f64> = human
            .iter()
            .map(|h| (0.7 * h + 0.15 + 0.12 * rng.normal()).clamp(0.0, 1.0))
            .collect();
        // A uniform draw without replacement: a partial Fisher–Yates shuffle.
        let mut order: Vec<usize> = (0..contexts).collect();
        for i in 0..sample {
            let j = i + rng.below(contexts - i);
            order.swap(i, j);
        }
        let (drawn, rest) = order.split_at(sample);
        let y: Vec<f64> = drawn.iter().map(|&c| human[c]).collect();
        let yhat: Vec<f64> = drawn.iter().map(|&c| machine[c]).collect();
        let yu: Vec<f64> = rest.iter().map(|&c| machine[c]).collect();
        let e = ppi::estimate(&y, &yhat, &yu).unwrap();
        let truth = human.iter().sum::<f64>() / contexts as f64;
        if e.ci_low <= truth && truth <= e.ci_high {
            covered += 1;
        }
        // The machine follows the people closely enough to get weight.
        assert!(e.lambda > 0.0 && e.lambda <= 1.0);
    }
    assert!(
        covered as f64 >= 0.92 * draws as f64,
        "covered {covered} of {draws}"
    );
}
