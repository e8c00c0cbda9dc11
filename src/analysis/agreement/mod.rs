//! The agreement view model: reviewer pairs and panel-level coefficients for one scale,
//! optionally after a collapse map. Shared by the Agreement screen and `plumbline agree`.

use serde::Serialize;

pub mod panel_review;
pub mod reviewer_quality;

use crate::analysis::cautions::{Caution, Cautions};

use crate::core::agreement::{
    self, AlphaLevel, CollapseMap, Confusion, DOMINANT_SHARE_CAUTION, PrevalenceBias, Weights,
};
use crate::core::stats::Z_975;
use crate::study::snapshot::Snapshot;

/// Agreement of two reviewers on one scale, over the pairs both of them graded.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewerPair {
    /// Name of the first reviewer (the lower reviewer index of the two).
    pub reviewer_a: String,
    /// Name of the second reviewer.
    pub reviewer_b: String,
    /// Pairs graded by both (can't-judge left out).
    pub n: u64,
    /// Unweighted Cohen's kappa (Cohen 1960), at most 1; NaN when both reviewers used a
    /// single and the same level.
    pub kappa: f64,
    /// Large-sample standard error of `kappa` (Fleiss, Cohen & Everitt 1969, eq. 13).
    pub kappa_se: f64,
    /// Lower end of the 95 % normal interval, `kappa − Z_975 · kappa_se` (Z_975 ≈ 1.96),
    /// never below −1 (kappa's own range).
    pub kappa_ci_low: f64,
    /// Upper end of the 95 % normal interval, `kappa + Z_975 · kappa_se`, never above 1.
    pub kappa_ci_high: f64,
    /// Cohen's weighted kappa with linear weights |i − j| (Cohen 1968).
    pub kappa_linear: f64,
    /// Cohen's weighted kappa with quadratic weights (i − j)² (Cohen 1968).
    pub kappa_quadratic: f64,
    /// Gwet's AC1 (Gwet 2008) of these two reviewers, over the pairs both graded.
    pub ac1: f64,
    /// Share of the `n` pairs given the same level by both, p_o, in 0..1.
    pub observed_agreement: f64,
    /// Agreement expected by chance from each reviewer's own level shares, p_e, in 0..1.
    pub chance_agreement: f64,
    /// Landis & Koch (1977) verbal band of `kappa` ("slight" … "almost perfect", "poor"
    /// below 0, "undefined" for NaN); [`TOO_FEW`] when the pair is `thin`.
    pub band: &'static str,
    /// Fewer shared grades than `defaults::kappa_min_shared` asks for the scale: the
    /// kappa carries a caution instead of a band and its interval is not to be trusted.
    pub thin: bool,
    /// Prevalence and bias indices and PABAK (Byrt, Bishop & Carlin 1993) of the table.
    pub prevalence: PrevalenceBias,
    /// Row = reviewer_a's level, column = reviewer_b's level.
    pub confusion: Vec<Vec<u64>>,
}

impl ReviewerPair {
    /// The caution when one level holds most of this pair's grades (at least
    /// `DOMINANT_SHARE_CAUTION`), as the heatmap shows beside the pair's table.
    pub fn prevalence_caution(&self) -> Option<Caution> {
        (self.prevalence.dominant_share >= DOMINANT_SHARE_CAUTION).then(|| {
            Caution::PairDominantLevel {
                level: usize::from(self.prevalence.dominant_level),
                share: self.prevalence.dominant_share,
            }
        })
    }
}

/// Every agreement figure of one scale: reviewer pairs and panel-level coefficients.
#[derive(Debug, Clone, Serialize)]
pub struct AgreementReport {
    /// Name of the study.
    pub study: String,
    /// Name of the scale the grades belong to.
    pub scale: String,
    /// Name of the collapse map applied before computing, if any.
    pub collapse: Option<String>,
    /// Number of levels q the coefficients use: the scale's, or the coarse scale's after a
    /// collapse map.
    pub levels: usize,
    /// Names of the panel's reviewers who graded this scale, in reviewer-index order
    /// (machine judges only when the study counts them in the panel).
    pub reviewer_names: Vec<String>,
    /// Every reviewer who graded this scale, people and machine judges, with their gold
    /// accuracy (on the scale's own levels, whatever the collapse map).
    pub reviewers: Vec<reviewer_quality::ReviewerQuality>,
    /// Every machine judge against the people's panel grade (settled, else lower median).
    pub machines: Vec<reviewer_quality::MachineAgreement>,
    /// Pairs with at least one grade on this scale.
    pub units: usize,
    /// Number of "can't judge" grades on this scale (grades, not pairs); agreement leaves
    /// them out.
    pub cant_judge: usize,
    /// Every two reviewers with at least one pair both gave a level; two who share no
    /// such pair (or only can't-judge grades) are left out.
    pub pairs: Vec<ReviewerPair>,
    /// Fleiss' kappa (Fleiss 1971) over the `fleiss_n` pairs that have the most common
    /// number of grades (`fleiss_grades_per_pair`; ties go to the larger number); NaN
    /// when no pair has two grades.
    pub fleiss_kappa: f64,
    /// Pairs behind `fleiss_kappa`.
    pub fleiss_n: usize,
    /// The number of grades every pair behind `fleiss_kappa` has.
    pub fleiss_grades_per_pair: usize,
    /// Fleiss' kappa over the pairs graded by every reviewer of the panel (the older
    /// rule, which one late reviewer collapses to a handful of pairs). The panel here is
    /// the reviewers who gave at least one level on the scale: one whose only grades
    /// are can't-judge is left out.
    pub fleiss_kappa_complete: f64,
    /// Pairs graded (with a level) by every reviewer of that panel.
    pub fleiss_n_complete: usize,
    /// Krippendorff's alpha (Krippendorff 2011) with nominal distances: unordered levels.
    pub alpha_nominal: f64,
    /// Krippendorff's alpha with ordinal distances: ranked levels.
    pub alpha_ordinal: f64,
    /// Lower end of the 95 % percentile bootstrap interval of `alpha_ordinal`, resampling
    /// pairs with replacement; NaN with fewer than two pairs of two or more grades.
    pub alpha_ordinal_ci_low: f64,
    /// Upper end of the same interval.
    pub alpha_ordinal_ci_high: f64,
    /// Krippendorff's alpha with interval distances: squared difference of level values.
    pub alpha_interval: f64,
    /// Pairs with at least two grades (what alpha uses).
    pub alpha_n: usize,
    /// Gwet's AC1 of the whole panel (Gwet 2008, multi-rater form with missing grades):
    /// agreement over the pairs with two or more levels, chance from the level shares
    /// averaged over every pair with at least one level (can't-judge-only pairs in
    /// neither), q = the scale's levels.
    pub ac1: f64,
    /// Where the verbal bands come from ([`LANDIS_KOCH`]).
    pub band_source: &'static str,
    /// Plain-language warnings: one level dominating the grades, reviewer pairs sharing
    /// too few grades, or too few pairs with two or more grades for narrow intervals; in
    /// JSON `cautions` and `caution_codes`.
    #[serde(flatten)]
    pub cautions: Cautions,
}

/// Grades of one scale laid out as units (pairs) × reviewers; None = not graded or can't judge.
pub struct UnitTable {
    /// Snapshot indices of the reviewers who graded this scale, ascending; one column each.
    pub reviewers: Vec<u32>,
    /// One row per pair, in the snapshot's grade order; `units[u][c]` is the level that
    /// reviewer `reviewers[c]` gave.
    pub units: Vec<Vec<Option<u8>>>,
    /// Recorded time spent on each grade of this scale, in seconds (grades without a time
    /// left out, "can't judge" kept).
    pub seconds: Vec<f64>,
    /// Number of "can't judge" grades on this scale.
    pub cant_judge: usize,
}

/// Builds the table of one scale from a snapshot (reviewers who graded this scale only).
pub fn unit_table(snapshot: &Snapshot, scale: usize) -> UnitTable {
    let grades: Vec<_> = snapshot
        .grades
        .iter()
        .filter(|g| g.scale as usize == scale)
        .collect();
    let mut reviewers: Vec<u32> = grades.iter().map(|g| g.reviewer).collect();
    reviewers.sort_unstable();
    reviewers.dedup();
    let column = |r: u32| reviewers.binary_search(&r).expect("reviewer listed");
    let mut units: Vec<Vec<Option<u8>>> = Vec::new();
    let mut last: Option<(u32, u32)> = None;
    let mut cant_judge = 0;
    let mut seconds = Vec::new();
    for g in grades {
        if last != Some((g.context, g.item)) {
            units.push(vec![None; reviewers.len()]);
            last = Some((g.context, g.item));
        }
        match g.value {
            Some(v) => units.last_mut().expect("pushed")[column(g.reviewer)] = Some(v),
            None => cant_judge += 1,
        }
        if let Some(s) = g.seconds {
            seconds.push(s);
        }
    }
    UnitTable {
        reviewers,
        units,
        seconds,
        cant_judge,
    }
}

/// Fleiss' kappa over the pairs graded by every panel member, where the panel is the
/// reviewers who gave at least one level: one whose only grades are can't-judge would
/// leave no pair complete.
fn fleiss_complete(levels: usize, units: &[Vec<Option<u8>>]) -> (f64, usize) {
    let columns = units.first().map_or(0, Vec::len);
    let graders: Vec<usize> = (0..columns)
        .filter(|&c| units.iter().any(|u| u[c].is_some()))
        .collect();
    let narrowed: Vec<Vec<Option<u8>>> = units
        .iter()
        .map(|u| graders.iter().map(|&c| u[c]).collect())
        .collect();
    agreement::fleiss_kappa(levels, &narrowed)
}

/// The band word of a pair with too few shared grades for a Landis & Koch word.
pub const TOO_FEW: &str = "too few shared grades";

/// The source and bands behind every verbal kappa band, as shown beside the figures.
pub const LANDIS_KOCH: &str = "Landis & Koch (1977), Biometrics 33: 0–0.20 slight, 0.21–0.40 fair, 0.41–0.60 moderate, 0.61–0.80 substantial, 0.81–1 almost perfect. Bands are conventions, not tests.";

/// Every coefficient with the resampling defaults of `analysis::defaults`, as the
/// Agreement screen, `plumbline agree` and the report show them.
pub fn with_defaults(
    snapshot: &Snapshot,
    scale: usize,
    collapse: Option<&CollapseMap>,
) -> AgreementReport {
    build(
        snapshot,
        scale,
        collapse,
        crate::analysis::defaults::AGREEMENT_BOOTSTRAP,
        crate::analysis::defaults::SEED,
    )
}

/// Computes every coefficient for one scale (and optional collapse map).
pub fn build(
    snapshot: &Snapshot,
    scale: usize,
    collapse: Option<&CollapseMap>,
    resamples: usize,
    seed: u64,
) -> AgreementReport {
    let table = unit_table(snapshot, scale);
    let (levels, units) = match collapse {
        Some(map) => (map.coarse_levels(), map.apply_units(&table.units)),
        None => (snapshot.scales[scale].levels.len(), table.units.clone()),
    };
    let mut pairs = Vec::new();
    for a in 0..table.reviewers.len() {
        for b in (a + 1)..table.reviewers.len() {
            let col_a: Vec<Option<u8>> = units.iter().map(|u| u[a]).collect();
            let col_b: Vec<Option<u8>> = units.iter().map(|u| u[b]).collect();
            let names = (
                snapshot.reviewers[table.reviewers[a] as usize].as_str(),
                snapshot.reviewers[table.reviewers[b] as usize].as_str(),
            );
            // Reviewers who share no graded pair have no kappa: the pair is omitted.
            if let Some(pair) = reviewer_pair(names, levels, &col_a, &col_b) {
                pairs.push(pair);
            }
        }
    }
    let (fleiss_kappa, fleiss_n, fleiss_grades_per_pair) =
        agreement::fleiss_kappa_modal(levels, &units);
    let (fleiss_kappa_complete, fleiss_n_complete) = fleiss_complete(levels, &units);
    let alpha_n = units
        .iter()
        .filter(|u| u.iter().flatten().count() >= 2)
        .count();
    let (ci_low, ci_high) =
        agreement::krippendorff_alpha_ci(levels, &units, AlphaLevel::Ordinal, resamples, seed);
    let cautions = agreement_cautions(levels, &units, &pairs, alpha_n);
    AgreementReport {
        study: snapshot.name.clone(),
        scale: snapshot.scales[scale].name.clone(),
        collapse: collapse.map(|c| c.name.clone()),
        levels,
        reviewer_names: table
            .reviewers
            .iter()
            .map(|r| snapshot.reviewers[*r as usize].clone())
            .collect(),
        reviewers: reviewer_quality::reviewers(snapshot, scale),
        machines: reviewer_quality::machines(snapshot, scale),
        units: units.len(),
        cant_judge: table.cant_judge,
        pairs,
        fleiss_kappa,
        fleiss_n,
        fleiss_grades_per_pair,
        fleiss_kappa_complete,
        fleiss_n_complete,
        alpha_nominal: agreement::krippendorff_alpha(levels, &units, AlphaLevel::Nominal),
        alpha_ordinal: agreement::krippendorff_alpha(levels, &units, AlphaLevel::Ordinal),
        alpha_ordinal_ci_low: ci_low,
        alpha_ordinal_ci_high: ci_high,
        alpha_interval: agreement::krippendorff_alpha(levels, &units, AlphaLevel::Interval),
        alpha_n,
        ac1: agreement::gwet_ac1(levels, &units),
        band_source: LANDIS_KOCH,
        cautions: Cautions(cautions),
    }
}

/// Cohen's kappa with its interval, the weighted kappas and AC1 of two reviewers' columns;
/// None when they share no graded pair.
fn reviewer_pair(
    names: (&str, &str),
    levels: usize,
    col_a: &[Option<u8>],
    col_b: &[Option<u8>],
) -> Option<ReviewerPair> {
    let confusion = Confusion::from_pairs(levels, col_a, col_b);
    let n = confusion.total();
    if n == 0 {
        return None;
    }
    let kappa = agreement::cohen_kappa(&confusion, Weights::Unweighted);
    let se = agreement::cohen_kappa_se(&confusion);
    let (po, pe) = agreement::agreement_proportions(&confusion);
    let both: Vec<Vec<Option<u8>>> = col_a
        .iter()
        .zip(col_b)
        .filter(|(x, y)| x.is_some() && y.is_some())
        .map(|(x, y)| vec![*x, *y])
        .collect();
    let thin = n < crate::analysis::defaults::kappa_min_shared(levels);
    Some(ReviewerPair {
        reviewer_a: names.0.to_string(),
        reviewer_b: names.1.to_string(),
        n,
        kappa,
        kappa_se: se,
        // Clamp keeps a NaN kappa NaN; the interval never leaves [−1, 1].
        kappa_ci_low: (kappa - Z_975 * se).clamp(-1.0, 1.0),
        kappa_ci_high: (kappa + Z_975 * se).clamp(-1.0, 1.0),
        kappa_linear: agreement::cohen_kappa(&confusion, Weights::Linear),
        kappa_quadratic: agreement::cohen_kappa(&confusion, Weights::Quadratic),
        ac1: agreement::gwet_ac1(levels, &both),
        observed_agreement: po,
        chance_agreement: pe,
        band: if thin {
            TOO_FEW
        } else {
            agreement::landis_koch_band(kappa)
        },
        thin,
        prevalence: agreement::prevalence_bias(&confusion),
        confusion: (0..levels)
            .map(|i| (0..levels).map(|j| confusion.get(i, j)).collect())
            .collect(),
    })
}

/// A dominant level, thin reviewer pairs and few units, each with its figures.
fn agreement_cautions(
    levels: usize,
    units: &[Vec<Option<u8>>],
    pairs: &[ReviewerPair],
    alpha_n: usize,
) -> Vec<Caution> {
    let mut cautions = Vec::new();
    let mut level_counts = vec![0usize; levels];
    for v in units.iter().flatten().flatten() {
        level_counts[*v as usize] += 1;
    }
    let total: usize = level_counts.iter().sum();
    if let Some((level, count)) = level_counts.iter().enumerate().max_by_key(|(_, c)| **c)
        && total > 0
        && *count as f64 / total as f64 >= DOMINANT_SHARE_CAUTION
    {
        cautions.push(Caution::DominantLevel {
            level,
            share: *count as f64 / total as f64,
        });
    }
    let min_shared = crate::analysis::defaults::kappa_min_shared(levels);
    for p in pairs.iter().filter(|p| p.thin) {
        cautions.push(Caution::ThinKappa {
            reviewer_a: p.reviewer_a.clone(),
            reviewer_b: p.reviewer_b.clone(),
            shared: p.n,
            needed: min_shared,
            levels,
        });
    }
    if alpha_n < 50 {
        cautions.push(Caution::FewAgreementUnits { units: alpha_n });
    }
    cautions
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand-counted: 18 pairs both at level 0, then (1, 0) and (0, 1): level 0 holds 38
    /// of the 40 grades (95 %), above the 80 % line, so the pair's caution names level 0;
    /// with half the pairs at level 1 no level dominates.
    #[test]
    fn a_pair_dominated_by_one_level_carries_its_caution() {
        let mut a = vec![Some(0u8); 18];
        let mut b = a.clone();
        a.extend([Some(1), Some(0)]);
        b.extend([Some(0), Some(1)]);
        let pair = reviewer_pair(("ada", "bo"), 3, &a, &b).unwrap();
        let caution = pair.prevalence_caution().unwrap();
        assert_eq!(caution.code(), "pair_dominant_level");
        assert!(
            caution.words().starts_with("Level 0 holds 95 %"),
            "{}",
            caution.words()
        );

        let even: Vec<Option<u8>> = (0..20).map(|i| Some((i % 2) as u8)).collect();
        let pair = reviewer_pair(("ada", "bo"), 3, &even, &even).unwrap();
        assert!(pair.prevalence_caution().is_none());
    }
}
