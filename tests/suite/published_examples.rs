//! Worked examples from the literature, each with its source beside it.

use plumbline::core::agreement::{self, AlphaLevel, Confusion, Weights};
use plumbline::core::metric_table::{self, Metric, MetricKind, PreparedList};
use plumbline::core::metrics::{self, GainKind, JudgedList, ListSettings, Unjudged};

/// Scores `list` through `metric_table::score_list`, the function behind every
/// published figure, on the given metrics in order.
fn scored(list: &JudgedList<'_>, settings: &ListSettings, wanted: &[Metric]) -> Vec<f64> {
    let (mut scratch, mut out) = (Vec::new(), Vec::new());
    metric_table::score_list(list, settings, wanted, &mut scratch, &mut out);
    out
}

fn at(kind: MetricKind, k: usize) -> Metric {
    Metric::at(kind, k)
}

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

/// Common practice: ten results, relevant (binary) at ranks 1 and 3 →
/// CG 2, DCG 1.5, IDCG 1.6309, NDCG 0.9197.
#[test]
fn binary_ten_results_relevant_at_one_and_three() {
    let gains = [1.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0];
    let cg: f64 = gains.iter().sum();
    assert_eq!(cg, 2.0);
    assert!(close(metrics::dcg(&gains, Some(10)), 1.5, 1e-12));
    assert!(close(metrics::ideal_dcg(&gains, Some(10)), 1.6309, 5e-5));
    assert!(close(
        metrics::ndcg(&gains, &gains, Some(10)).unwrap(),
        0.9197,
        5e-5
    ));
}

/// Järvelin & Kekäläinen (2002), ACM TOIS 20(4), §2.1: the gain vector
/// G' = <3, 2, 3, 0, 0, 1, 2, 2, 3, 0> has CG' = <3, 5, 8, 8, 8, 9, 11, 13, 16, 16>
/// (vector recalled from the paper, from memory). DCG here uses the discount
/// 1/log2(i + 1) of Burges et al. (2005) rather than the paper's b = 2 variant; the
/// expected sums are written out term by term.
#[test]
fn jarvelin_kekalainen_gain_vector() {
    let levels: Vec<Option<u8>> = [3u8, 2, 3, 0, 0, 1, 2, 2, 3, 0]
        .iter()
        .map(|v| Some(*v))
        .collect();
    let linear = ListSettings {
        gains: metrics::gain_table(4, &[], GainKind::Linear),
        max_level: 3,
        relevant_from: 1,
        unjudged: Unjudged::Zero,
        persistence: 0.8,
    };
    let mut ideal: Vec<f64> = levels.iter().map(|l| l.unwrap() as f64).collect();
    ideal.sort_by(|a, b| b.total_cmp(a));
    let list = JudgedList {
        levels: &levels,
        ideal_gains: &ideal,
        has_relevant: true,
    };
    let cg: Vec<f64> = (1..=10)
        .map(|k| {
            let prepared = PreparedList {
                returned: &levels,
                effective: &levels,
                ideal_gains: &ideal,
                has_relevant: true,
            };
            metrics::cg_at(&prepared, &linear, k)
        })
        .collect();
    let out = scored(
        &list,
        &linear,
        &[
            at(MetricKind::Dcg, 10),
            at(MetricKind::Ndcg, 10),
            at(MetricKind::Ndcg, 5),
        ],
    );
    assert_eq!(
        cg,
        vec![3.0, 5.0, 8.0, 8.0, 8.0, 9.0, 11.0, 13.0, 16.0, 16.0]
    );
    // 3/1 + 2/log2 3 + 3/2 + 0 + 0 + 1/log2 7 + 2/3 + 2/log2 9 + 3/log2 10 + 0
    let expected_dcg = 3.0
        + 2.0 / 3f64.log2()
        + 1.5
        + 1.0 / 7f64.log2()
        + 2.0 / 3.0
        + 2.0 / 9f64.log2()
        + 3.0 / 10f64.log2();
    assert!(close(out[0], expected_dcg, 1e-12));
    assert!(close(out[0], 8.318_753_101_481_006, 1e-12));
    // Ideal order <3, 3, 3, 2, 2, 2, 1, 0, 0, 0>: IDCG@10 = 9.073595698879618.
    assert!(close(
        metrics::dcg(&ideal, Some(10)),
        9.073_595_698_879_618,
        1e-12
    ));
    assert!(close(out[1], 0.916_808_879_032_177, 1e-12));
    // At k = 5: DCG 3 + 2/log2 3 + 1.5 = 5.7619, ideal 3 + 3/log2 3 + 1.5 + 2/log2 5 + 2/log2 6.
    assert!(close(out[2], 0.717_734_007_091_999_9, 1e-12));
    // Exponential gains 2^v − 1 (Burges et al. 2005) on the same list.
    let exponential = ListSettings {
        gains: metrics::gain_table(4, &[], GainKind::Exponential),
        ..linear
    };
    let mut ideal_exp: Vec<f64> = levels
        .iter()
        .map(|l| 2f64.powi(l.unwrap() as i32) - 1.0)
        .collect();
    ideal_exp.sort_by(|a, b| b.total_cmp(a));
    let list = JudgedList {
        ideal_gains: &ideal_exp,
        ..list
    };
    let out = scored(
        &list,
        &exponential,
        &[at(MetricKind::Dcg, 10), at(MetricKind::Ndcg, 10)],
    );
    assert!(close(out[0], 16.802_601_047_827_45, 1e-12));
    assert!(close(out[1], 0.895_133_725_335_708_8, 1e-12));
}

/// Chapelle, Metzler, Zhang & Grinspan (2009), CIKM, eq. 4 (the cascade form of ERR),
/// evaluated by hand for levels <2, 0, 1> on a 0–2 scale: R = (2^g − 1)/4 →
/// R1 = 0.75, R2 = 0, R3 = 0.25; ERR = 0.75 + 0 + (1/3)·0.25·0.25 = 0.7708333.
#[test]
fn err_cascade_by_hand() {
    let value = metrics::err(&[Some(2), Some(0), Some(1)], 2, 3);
    assert!(close(value, 0.75 + 0.25 * 0.25 / 3.0, 1e-15));
}

/// Sakai (2007), SIGIR: condensed lists drop unjudged documents before cutting at k.
/// List <rel, unjudged, rel> at k = 2: zero-fill sees one relevant item, condensed two.
#[test]
fn condensed_list_skips_unjudged() {
    let levels = [Some(1u8), None, Some(1)];
    let ideal = [1.0, 1.0];
    let list = JudgedList {
        levels: &levels,
        ideal_gains: &ideal,
        has_relevant: true,
    };
    let mut settings = ListSettings {
        gains: vec![0.0, 1.0],
        max_level: 1,
        relevant_from: 1,
        unjudged: Unjudged::Zero,
        persistence: 0.8,
    };
    let wanted = [at(MetricKind::Ndcg, 2), at(MetricKind::Judged, 2)];
    let out = scored(&list, &settings, &wanted);
    assert!(close(out[0], 1.0 / (1.0 + 1.0 / 3f64.log2()), 1e-12));
    assert!(close(out[1], 0.5, 1e-15));
    settings.unjudged = Unjudged::Condense;
    let out = scored(&list, &settings, &wanted);
    assert!(close(out[0], 1.0, 1e-12));
    assert!(
        close(out[1], 0.5, 1e-15),
        "judged@k is about the list as returned"
    );
}

/// Rank-biased precision by hand from its definition (Moffat & Zobel 2008, ACM TOIS
/// 27(1)): RBP = (1 − p) Σ r_i p^(i−1), residual = (1 − p) Σ over unjudged positions
/// p^(i−1) + p^(length). Binary scale, list <rel, non-rel, rel, unjudged>, p = 0.5:
/// RBP = 0.5 · (1 + 0.25) = 0.625; residual = 0.5 · 0.125 + 0.5^4 = 0.125.
/// Graded 0–3 scale with linear gains, list <3, unjudged, 1>, p = 0.8: r = <1, 0, 1/3>,
/// RBP = 0.2 · (1 + 0.64 / 3) = 0.242666…; residual = 0.2 · 0.8 + 0.8^3 = 0.672.
#[test]
fn rank_biased_precision_by_hand() {
    let whole = [
        Metric::whole(MetricKind::Rbp),
        Metric::whole(MetricKind::RbpResidual),
    ];
    let binary = ListSettings {
        gains: vec![0.0, 1.0],
        max_level: 1,
        relevant_from: 1,
        unjudged: Unjudged::Zero,
        persistence: 0.5,
    };
    let levels = [Some(1u8), Some(0), Some(1), None];
    let list = JudgedList {
        levels: &levels,
        ideal_gains: &[1.0, 1.0, 0.0],
        has_relevant: true,
    };
    let out = scored(&list, &binary, &whole);
    assert!(close(out[0], 0.625, 1e-15), "{}", out[0]);
    assert!(close(out[1], 0.125, 1e-15), "{}", out[1]);
    // Condensing changes NDCG's list, not RBP's: RBP always reads the list as returned.
    let condensed = ListSettings {
        unjudged: Unjudged::Condense,
        ..binary
    };
    assert_eq!(scored(&list, &condensed, &whole), out);
    let graded = ListSettings {
        gains: metrics::gain_table(4, &[], GainKind::Linear),
        max_level: 3,
        relevant_from: 1,
        unjudged: Unjudged::Zero,
        persistence: 0.8,
    };
    let levels = [Some(3u8), None, Some(1)];
    let list = JudgedList {
        levels: &levels,
        ideal_gains: &[3.0, 1.0],
        has_relevant: true,
    };
    let out = scored(&list, &graded, &whole);
    assert!(close(out[0], 0.2 * (1.0 + 0.64 / 3.0), 1e-15), "{}", out[0]);
    assert!(close(out[1], 0.672, 1e-15), "{}", out[1]);
}

/// Two reviewers, 50 items: 20 yes/yes, 5 yes/no, 10 no/yes, 15 no/no →
/// p_o = 0.70, p_e = 0.50, kappa = 0.40 (the widely reproduced textbook 2 × 2 example;
/// values from memory, checked by hand here).
#[test]
fn cohen_two_by_two_textbook() {
    let table = Confusion {
        levels: 2,
        counts: vec![20, 5, 10, 15],
    };
    let (po, pe) = agreement::agreement_proportions(&table);
    assert!(close(po, 0.7, 1e-15));
    assert!(close(pe, 0.5, 1e-15));
    assert!(close(
        agreement::cohen_kappa(&table, Weights::Unweighted),
        0.4,
        1e-12
    ));
    // On two levels every weighting is the same (Cohen 1968).
    assert!(close(
        agreement::cohen_kappa(&table, Weights::Quadratic),
        0.4,
        1e-12
    ));
}

/// Fleiss (1971), Psychol. Bull. 76(5): the widely reproduced example of 10 subjects,
/// 14 raters, 5 categories → kappa 0.210. Table as commonly reproduced (from memory).
#[test]
fn fleiss_ten_subjects_fourteen_raters() {
    let counts: [[u8; 5]; 10] = [
        [0, 0, 0, 0, 14],
        [0, 2, 6, 4, 2],
        [0, 0, 3, 5, 6],
        [0, 3, 9, 2, 0],
        [2, 2, 8, 1, 1],
        [7, 7, 0, 0, 0],
        [3, 2, 6, 3, 0],
        [2, 5, 3, 2, 2],
        [6, 5, 2, 1, 0],
        [0, 2, 2, 3, 7],
    ];
    let units: Vec<Vec<Option<u8>>> = counts
        .iter()
        .map(|row| {
            row.iter()
                .enumerate()
                .flat_map(|(level, n)| std::iter::repeat_n(Some(level as u8), *n as usize))
                .collect()
        })
        .collect();
    let (kappa, n) = agreement::fleiss_kappa(5, &units);
    assert_eq!(n, 10);
    assert!(close(kappa, 0.210, 5e-4), "kappa {kappa}");
}

/// Krippendorff (2011), "Computing Krippendorff's Alpha-Reliability", section C: four
/// observers, twelve units, values 1–5 with missing data →
/// alpha nominal 0.743, ordinal 0.815, interval 0.849.
#[test]
fn krippendorff_four_observers_twelve_units() {
    const X: i8 = -1;
    let observers: [[i8; 12]; 4] = [
        [1, 2, 3, 3, 2, 1, 4, 1, 2, X, X, X],
        [1, 2, 3, 3, 2, 2, 4, 1, 2, 5, X, 3],
        [X, 3, 3, 3, 2, 3, 4, 2, 2, 5, 1, X],
        [1, 2, 3, 3, 2, 4, 4, 1, 2, 5, 1, X],
    ];
    let units: Vec<Vec<Option<u8>>> = (0..12)
        .map(|u| {
            observers
                .iter()
                .map(|o| (o[u] >= 1).then(|| (o[u] - 1) as u8))
                .collect()
        })
        .collect();
    let nominal = agreement::krippendorff_alpha(5, &units, AlphaLevel::Nominal);
    let ordinal = agreement::krippendorff_alpha(5, &units, AlphaLevel::Ordinal);
    let interval = agreement::krippendorff_alpha(5, &units, AlphaLevel::Interval);
    assert!(close(nominal, 0.743, 5e-4), "nominal {nominal}");
    assert!(close(ordinal, 0.815, 5e-4), "ordinal {ordinal}");
    assert!(close(interval, 0.849, 5e-4), "interval {interval}");
}

/// Landis & Koch (1977), Biometrics 33, p. 165: the verbal bands.
#[test]
fn landis_koch_bands() {
    assert_eq!(agreement::landis_koch_band(-0.1), "poor");
    assert_eq!(agreement::landis_koch_band(0.15), "slight");
    assert_eq!(agreement::landis_koch_band(0.40), "fair");
    assert_eq!(agreement::landis_koch_band(0.55), "moderate");
    assert_eq!(agreement::landis_koch_band(0.7), "substantial");
    assert_eq!(agreement::landis_koch_band(0.9), "almost perfect");
}
