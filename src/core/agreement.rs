//! Inter-reviewer agreement: the kappa family, Gwet's AC1 and Krippendorff's alpha.
//!
//! Levels are integers 0..q−1; `None` is a missing grade (not graded, or "can't judge",
//! which agreement always leaves out).

/// A q × q table of how often reviewer A gave level i while reviewer B gave level j.
#[derive(Debug, Clone, PartialEq)]
pub struct Confusion {
    /// Number of levels q; the table is q × q.
    pub levels: usize,
    /// Row-major counts, `counts[i * levels + j]`.
    pub counts: Vec<u64>,
}

impl Confusion {
    /// Builds the table from pairs graded by both reviewers; others are skipped.
    pub fn from_pairs(levels: usize, a: &[Option<u8>], b: &[Option<u8>]) -> Confusion {
        let mut counts = vec![0u64; levels * levels];
        for (x, y) in a.iter().zip(b) {
            if let (Some(x), Some(y)) = (x, y) {
                counts[*x as usize * levels + *y as usize] += 1;
            }
        }
        Confusion { levels, counts }
    }

    /// Pairs where reviewer A gave level `row` and reviewer B gave level `col`.
    pub fn get(&self, row: usize, col: usize) -> u64 {
        self.counts[row * self.levels + col]
    }

    /// Number of pairs graded by both reviewers.
    pub fn total(&self) -> u64 {
        self.counts.iter().sum()
    }

    fn proportions(&self) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let q = self.levels;
        let n = self.total() as f64;
        let p: Vec<f64> = self.counts.iter().map(|c| *c as f64 / n).collect();
        let rows = (0..q).map(|i| (0..q).map(|j| p[i * q + j]).sum()).collect();
        let cols = (0..q).map(|j| (0..q).map(|i| p[i * q + j]).sum()).collect();
        (p, rows, cols)
    }
}

/// Disagreement weights for Cohen's kappa (Cohen 1968).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Weights {
    /// Every disagreement counts the same (Cohen 1960).
    Unweighted,
    /// |i − j|.
    Linear,
    /// (i − j)².
    Quadratic,
}

impl Weights {
    fn disagreement(self, i: usize, j: usize) -> f64 {
        let d = i.abs_diff(j) as f64;
        match self {
            Weights::Unweighted => f64::from(u8::from(i != j)),
            Weights::Linear => d,
            Weights::Quadratic => d * d,
        }
    }
}

/// Cohen's kappa with the given weights: 1 − Σ w·observed / Σ w·expected.
/// NaN when chance disagreement is zero (both reviewers used one and the same level).
pub fn cohen_kappa(table: &Confusion, weights: Weights) -> f64 {
    let q = table.levels;
    let (p, rows, cols) = table.proportions();
    let (mut observed, mut expected) = (0.0, 0.0);
    for i in 0..q {
        for j in 0..q {
            let w = weights.disagreement(i, j);
            observed += w * p[i * q + j];
            expected += w * rows[i] * cols[j];
        }
    }
    1.0 - observed / expected
}

/// Observed and chance agreement of the unweighted table (p_o, p_e).
pub fn agreement_proportions(table: &Confusion) -> (f64, f64) {
    let q = table.levels;
    let (p, rows, cols) = table.proportions();
    let observed = (0..q).map(|i| p[i * q + i]).sum();
    let chance = (0..q).map(|i| rows[i] * cols[i]).sum();
    (observed, chance)
}

/// Large-sample standard error of unweighted kappa when kappa is not zero
/// (Fleiss, Cohen & Everitt 1969, eq. 13), as statsmodels' `cohens_kappa().std_kappa`.
pub fn cohen_kappa_se(table: &Confusion) -> f64 {
    let q = table.levels;
    let n = table.total() as f64;
    let (p, rows, cols) = table.proportions();
    let (_, chance) = agreement_proportions(table);
    let kappa = cohen_kappa(table, Weights::Unweighted);
    let mut term_a = 0.0;
    let mut term_b = 0.0;
    for i in 0..q {
        term_a += p[i * q + i] * (1.0 - (rows[i] + cols[i]) * (1.0 - kappa)).powi(2);
        for j in 0..q {
            if i != j {
                term_b += p[i * q + j] * (cols[i] + rows[j]).powi(2);
            }
        }
    }
    let term_b = (1.0 - kappa).powi(2) * term_b;
    let term_c = (kappa - chance * (1.0 - kappa)).powi(2);
    // Rounding can push the variance of a perfect table a hair below zero.
    ((term_a + term_b - term_c) / (1.0 - chance).powi(2) / n)
        .max(0.0)
        .sqrt()
}

/// Prevalence and bias indices (Byrt, Bishop & Carlin 1993) of the 2 × 2 table formed by
/// the most used level against all others, and PABAK generalised to q levels
/// ((q·p_o − 1)/(q − 1)). High |prevalence| is when kappa can be low despite high
/// agreement (Feinstein & Cicchetti 1990).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct PrevalenceBias {
    /// The level both reviewers together used most; a tie goes to the lower level.
    pub dominant_level: u8,
    /// Share of all grades (both reviewers) at the dominant level.
    pub dominant_share: f64,
    /// Share of pairs both at the dominant level minus share both elsewhere, in −1..1.
    pub prevalence_index: f64,
    /// Reviewer A's share at the dominant level minus reviewer B's, in −1..1.
    pub bias_index: f64,
    /// Prevalence- and bias-adjusted kappa (q·p_o − 1)/(q − 1), p_o from the unweighted table.
    pub pabak: f64,
}

/// Prevalence and bias indices and PABAK of `table` (see [`PrevalenceBias`]).
pub fn prevalence_bias(table: &Confusion) -> PrevalenceBias {
    let q = table.levels;
    let (p, rows, cols) = table.proportions();
    let dominant = (0..q)
        .max_by(|&a, &b| {
            (rows[a] + cols[a])
                .total_cmp(&(rows[b] + cols[b]))
                .then(b.cmp(&a))
        })
        .unwrap_or(0);
    let both_dominant = p[dominant * q + dominant];
    let both_other: f64 = (0..q)
        .flat_map(|i| (0..q).map(move |j| (i, j)))
        .filter(|&(i, j)| i != dominant && j != dominant)
        .map(|(i, j)| p[i * q + j])
        .sum();
    let (observed, _) = agreement_proportions(table);
    PrevalenceBias {
        dominant_level: dominant as u8,
        dominant_share: (rows[dominant] + cols[dominant]) / 2.0,
        prevalence_index: both_dominant - both_other,
        bias_index: rows[dominant] - cols[dominant],
        pabak: (q as f64 * observed - 1.0) / (q as f64 - 1.0),
    }
}

/// Share of grades at one level above which a kappa warning is shown (common practice).
pub const DOMINANT_SHARE_CAUTION: f64 = 0.7;

/// Gwet's AC1 for any number of reviewers with missing grades (Gwet 2008, eq. 14–16; the
/// multi-rater form as in the irrCAC package): agreement over units with ≥ 2 grades,
/// chance from level shares averaged over every unit with at least one grade, and q =
/// the scale's number of levels (used or not).
pub fn gwet_ac1(levels: usize, units: &[Vec<Option<u8>>]) -> f64 {
    let q = levels;
    let mut agree_sum = 0.0;
    let mut agree_units = 0usize;
    let mut share = vec![0.0; q];
    let mut graded_units = 0usize;
    let mut counts = vec![0u64; q];
    for unit in units {
        counts.iter_mut().for_each(|c| *c = 0);
        for level in unit.iter().flatten() {
            counts[*level as usize] += 1;
        }
        let r: u64 = counts.iter().sum();
        if r == 0 {
            continue;
        }
        graded_units += 1;
        for (k, c) in counts.iter().enumerate() {
            share[k] += *c as f64 / r as f64;
        }
        if r >= 2 {
            let pairs: u64 = counts.iter().map(|c| c * c.saturating_sub(1)).sum();
            agree_sum += pairs as f64 / (r * (r - 1)) as f64;
            agree_units += 1;
        }
    }
    if agree_units == 0 || q < 2 {
        return f64::NAN;
    }
    let observed = agree_sum / agree_units as f64;
    let chance = share
        .iter()
        .map(|s| s / graded_units as f64)
        .map(|pi| pi * (1.0 - pi))
        .sum::<f64>()
        / (q as f64 - 1.0);
    (observed - chance) / (1.0 - chance)
}

/// Fleiss' kappa (Fleiss 1971, eq. 1–9) over units graded by all `raters` reviewers;
/// returns (kappa, units used). Units with any missing grade are left out.
pub fn fleiss_kappa(levels: usize, units: &[Vec<Option<u8>>]) -> (f64, usize) {
    let raters = units.iter().map(Vec::len).max().unwrap_or(0);
    let complete: Vec<&Vec<Option<u8>>> = units
        .iter()
        .filter(|u| u.len() == raters && u.iter().all(Option::is_some))
        .collect();
    let n = complete.len();
    if n == 0 || raters < 2 {
        return (f64::NAN, n);
    }
    let m = raters as f64;
    let mut totals = vec![0.0; levels];
    let mut p_bar = 0.0;
    for unit in &complete {
        let mut counts = vec![0.0; levels];
        for level in unit.iter().flatten() {
            counts[*level as usize] += 1.0;
        }
        p_bar += (counts.iter().map(|c| c * c).sum::<f64>() - m) / (m * (m - 1.0));
        for (t, c) in totals.iter_mut().zip(&counts) {
            *t += c;
        }
    }
    p_bar /= n as f64;
    let p_e: f64 = totals.iter().map(|t| (t / (n as f64 * m)).powi(2)).sum();
    ((p_bar - p_e) / (1.0 - p_e), n)
}

/// Fleiss' kappa (Fleiss 1971) over the pairs with the most common number of grades.
/// Fleiss needs the same number of ratings on every unit, not the same raters, so a
/// late reviewer who graded a few pairs does not shrink it to the pairs everyone
/// graded. Counts are of levels given (None left out); the most common count of at
/// least 2 wins, a tie going to the larger count. Returns (kappa, pairs used, grades
/// per pair); kappa is NaN when no pair has two grades.
pub fn fleiss_kappa_modal(levels: usize, units: &[Vec<Option<u8>>]) -> (f64, usize, usize) {
    let count = |u: &Vec<Option<u8>>| u.iter().flatten().count();
    let mut frequency: std::collections::BTreeMap<usize, usize> = Default::default();
    for u in units {
        let c = count(u);
        if c >= 2 {
            *frequency.entry(c).or_default() += 1;
        }
    }
    let Some((&m, _)) = frequency
        .iter()
        .max_by(|a, b| a.1.cmp(b.1).then(a.0.cmp(b.0)))
    else {
        return (f64::NAN, 0, 0);
    };
    let rows: Vec<Vec<Option<u8>>> = units
        .iter()
        .filter(|u| count(u) == m)
        .map(|u| u.iter().flatten().map(|v| Some(*v)).collect())
        .collect();
    let (kappa, n) = fleiss_kappa(levels, &rows);
    (kappa, n, m)
}

/// The level of measurement for Krippendorff's alpha.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AlphaLevel {
    /// Unordered categories: any two different levels disagree equally.
    Nominal,
    /// Ranked levels: two levels are further apart the more grades fall between them.
    Ordinal,
    /// Equally spaced numbers: the distance is the squared difference of the level values.
    Interval,
}

/// Coincidence matrix of Krippendorff (2011, §B): o_ck summed over units with ≥ 2 grades.
fn coincidences(levels: usize, units: &[Vec<Option<u8>>]) -> Vec<f64> {
    let mut o = vec![0.0; levels * levels];
    let mut counts = vec![0.0; levels];
    for unit in units {
        counts.iter_mut().for_each(|c| *c = 0.0);
        for level in unit.iter().flatten() {
            counts[*level as usize] += 1.0;
        }
        let m: f64 = counts.iter().sum();
        if m < 2.0 {
            continue;
        }
        for c in 0..levels {
            for k in 0..levels {
                let pairs = if c == k {
                    counts[c] * (counts[c] - 1.0)
                } else {
                    counts[c] * counts[k]
                };
                o[c * levels + k] += pairs / (m - 1.0);
            }
        }
    }
    o
}

/// Krippendorff's alpha (Krippendorff 2011, "Computing Krippendorff's Alpha-Reliability")
/// over every unit with at least two grades; missing grades allowed.
pub fn krippendorff_alpha(levels: usize, units: &[Vec<Option<u8>>], level: AlphaLevel) -> f64 {
    let o = coincidences(levels, units);
    alpha_from_coincidences(levels, &o, level)
}

fn alpha_from_coincidences(q: usize, o: &[f64], level: AlphaLevel) -> f64 {
    let marginals: Vec<f64> = (0..q).map(|c| (0..q).map(|k| o[c * q + k]).sum()).collect();
    let n: f64 = marginals.iter().sum();
    let delta = |c: usize, k: usize| -> f64 {
        match level {
            AlphaLevel::Nominal => f64::from(u8::from(c != k)),
            AlphaLevel::Interval => (c as f64 - k as f64).powi(2),
            AlphaLevel::Ordinal => {
                let (lo, hi) = (c.min(k), c.max(k));
                let between: f64 = marginals[lo..=hi].iter().sum();
                (between - (marginals[c] + marginals[k]) / 2.0).powi(2)
            }
        }
    };
    let (mut observed, mut expected) = (0.0, 0.0);
    for c in 0..q {
        for k in 0..q {
            let d = delta(c, k);
            observed += o[c * q + k] * d;
            expected += marginals[c] * marginals[k] * d;
        }
    }
    1.0 - (n - 1.0) * observed / expected
}

/// Percentile bootstrap interval for alpha, resampling units with replacement
/// (common practice; Krippendorff's own bootstrap resamples pairable values instead).
pub fn krippendorff_alpha_ci(
    levels: usize,
    units: &[Vec<Option<u8>>],
    level: AlphaLevel,
    resamples: usize,
    seed: u64,
) -> (f64, f64) {
    let pairable: Vec<&Vec<Option<u8>>> = units
        .iter()
        .filter(|u| u.iter().flatten().count() >= 2)
        .collect();
    if pairable.len() < 2 {
        return (f64::NAN, f64::NAN);
    }
    // Each unit's own coincidence matrix, so a resample only adds matrices.
    let per_unit: Vec<Vec<f64>> = pairable
        .iter()
        .map(|u| coincidences(levels, std::slice::from_ref(*u)))
        .collect();
    let mut rng = crate::core::stats::Rng::new(seed);
    let mut values: Vec<f64> = Vec::with_capacity(resamples);
    let mut sum = vec![0.0; levels * levels];
    for _ in 0..resamples {
        sum.iter_mut().for_each(|x| *x = 0.0);
        for _ in 0..per_unit.len() {
            let u = &per_unit[rng.below(per_unit.len())];
            sum.iter_mut().zip(u).for_each(|(s, x)| *s += x);
        }
        let a = alpha_from_coincidences(levels, &sum, level);
        if a.is_finite() {
            values.push(a);
        }
    }
    values.sort_by(f64::total_cmp);
    (
        crate::core::stats::quantile_sorted(&values, 0.025),
        crate::core::stats::quantile_sorted(&values, 0.975),
    )
}

/// Landis & Koch (1977) verbal bands for kappa-like coefficients. Conventions, not tests.
pub fn landis_koch_band(value: f64) -> &'static str {
    match value {
        v if v.is_nan() => "undefined",
        v if v < 0.0 => "poor",
        v if v <= 0.20 => "slight",
        v if v <= 0.40 => "fair",
        v if v <= 0.60 => "moderate",
        v if v <= 0.80 => "substantial",
        _ => "almost perfect",
    }
}

/// Maps each level of a scale onto a coarser one (e.g. 0,1 → 0 and 2,3 → 1).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct CollapseMap {
    /// Name of the map, offered wherever a collapse can be chosen and written into reports.
    pub name: String,
    /// `targets[v]` is the coarse level of fine level v.
    pub targets: Vec<u8>,
}

impl CollapseMap {
    /// Number of levels of the coarse scale: the largest target + 1 (0 for an empty map).
    pub fn coarse_levels(&self) -> usize {
        self.targets.iter().max().map_or(0, |m| *m as usize + 1)
    }

    /// The coarse level of a fine grade (which must be below `targets.len()`); None stays None.
    pub fn apply(&self, level: Option<u8>) -> Option<u8> {
        level.map(|v| self.targets[v as usize])
    }

    /// [`CollapseMap::apply`] to every grade of every unit.
    pub fn apply_units(&self, units: &[Vec<Option<u8>>]) -> Vec<Vec<Option<u8>>> {
        units
            .iter()
            .map(|u| u.iter().map(|l| self.apply(*l)).collect())
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn identical_reviewers_agree_perfectly() {
        let a: Vec<Option<u8>> = [0, 1, 2, 3, 2, 1].iter().map(|v| Some(*v)).collect();
        let t = Confusion::from_pairs(4, &a, &a);
        assert!((cohen_kappa(&t, Weights::Unweighted) - 1.0).abs() < 1e-12);
        let units: Vec<Vec<Option<u8>>> = a.iter().map(|l| vec![*l, *l, *l]).collect();
        assert!((krippendorff_alpha(4, &units, AlphaLevel::Ordinal) - 1.0).abs() < 1e-12);
    }
}
