//! Rank-based effectiveness metrics for one ranked list against graded judgments.
//!
//! Definitions follow Järvelin & Kekäläinen (2002) for CG/DCG/NDCG, Burges et al. (2005)
//! for the exponential gain, Chapelle et al. (2009) for ERR and Sakai (2007) for condensed
//! lists, Moffat & Zobel (2008, ACM TOIS 27(1)) for rank-biased precision and its
//! residual. Everything here works on plain numbers so the scoring pass stays
//! allocation-light; `metric_table` says which function makes which published key.

use super::metric_table::PreparedList;

/// How a level turns into a gain when the scale sets no gains of its own.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum GainKind {
    /// 2^v − 1 (Burges et al. 2005): rewards the top levels much more than the middle.
    Exponential,
    /// v itself (Järvelin & Kekäläinen 2002).
    Linear,
}

impl GainKind {
    /// Gain of `level` under this rule.
    pub fn gain(self, level: u8) -> f64 {
        match self {
            GainKind::Exponential => 2f64.powi(level as i32) - 1.0,
            GainKind::Linear => level as f64,
        }
    }

    /// Reads the lowercase name ("exponential", "linear"); None for anything else.
    pub fn parse(text: &str) -> Option<GainKind> {
        match text {
            "exponential" => Some(GainKind::Exponential),
            "linear" => Some(GainKind::Linear),
            _ => None,
        }
    }
}

/// What to do with items in a ranked list that nobody judged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Unjudged {
    /// Count them as gain 0 (the conservative default).
    Zero,
    /// Drop them before cutting at k (Sakai 2007, condensed lists).
    Condense,
}

impl Unjudged {
    /// Reads the lowercase name ("zero", "condense"); None for anything else.
    pub fn parse(text: &str) -> Option<Unjudged> {
        match text {
            "zero" => Some(Unjudged::Zero),
            "condense" => Some(Unjudged::Condense),
            _ => None,
        }
    }

    /// The rule in words, as settings lines and the report state it.
    pub fn words(self) -> &'static str {
        match self {
            Unjudged::Zero => "count as gain 0",
            Unjudged::Condense => "removed before cutting at k (condensed lists)",
        }
    }
}

/// Discount for a 1-based rank: 1 / log2(rank + 1).
pub fn discount(rank: usize) -> f64 {
    1.0 / ((rank + 1) as f64).log2()
}

/// Gains per level, from the scale's own gains when it sets them, else from `kind`.
pub fn gain_table(level_count: usize, scale_gains: &[Option<f64>], kind: GainKind) -> Vec<f64> {
    (0..level_count)
        .map(|v| {
            scale_gains
                .get(v)
                .copied()
                .flatten()
                .unwrap_or_else(|| kind.gain(v as u8))
        })
        .collect()
}

/// Discounted cumulative gain of the first `k` gains (all of them when `k` is None).
pub fn dcg(gains: &[f64], k: Option<usize>) -> f64 {
    let cut = k.unwrap_or(gains.len()).min(gains.len());
    gains[..cut]
        .iter()
        .enumerate()
        .map(|(i, g)| g * discount(i + 1))
        .sum()
}

/// Ideal DCG@k: the k best gains among all judged items of the context.
pub fn ideal_dcg(all_judged_gains: &[f64], k: Option<usize>) -> f64 {
    let mut sorted = all_judged_gains.to_vec();
    sorted.sort_by(|a, b| b.total_cmp(a));
    dcg(&sorted, k)
}

/// NDCG@k, or None when the ideal DCG is zero (no relevant item to find).
pub fn ndcg(gains: &[f64], all_judged_gains: &[f64], k: Option<usize>) -> Option<f64> {
    let ideal = ideal_dcg(all_judged_gains, k);
    (ideal > 0.0).then(|| dcg(gains, k) / ideal)
}

/// Expected reciprocal rank at k (Chapelle et al. 2009, eq. 4) with
/// R = (2^level − 1) / 2^max_level; unjudged positions pass `None` and stop nobody.
pub fn err(levels: &[Option<u8>], max_level: u8, k: usize) -> f64 {
    let denom = 2f64.powi(max_level as i32);
    let mut still_looking = 1.0;
    let mut total = 0.0;
    for (i, level) in levels.iter().take(k).enumerate() {
        let stop = level.map_or(0.0, |v| (2f64.powi(v as i32) - 1.0) / denom);
        total += still_looking * stop / (i + 1) as f64;
        still_looking *= 1.0 - stop;
    }
    total
}

/// A ranked list resolved against the judgments: level per position, None = unjudged.
#[derive(Debug, Clone)]
pub struct JudgedList<'a> {
    /// Level of each position in rank order; None = unjudged.
    pub levels: &'a [Option<u8>],
    /// Gains of every judged item of the context (for the ideal ordering), sorted descending.
    pub ideal_gains: &'a [f64],
    /// Whether any judged item of the context is above level 0.
    pub has_relevant: bool,
}

/// Settings shared by every list in one scoring pass.
#[derive(Debug, Clone)]
pub struct ListSettings {
    /// Gain of each level, indexed by level value (see [`gain_table`]).
    pub gains: Vec<f64>,
    /// Highest level of the scale; ERR's stop probability is (2^level − 1) / 2^max_level.
    pub max_level: u8,
    /// Level from which an item counts as relevant for precision and RR (common practice: 1).
    pub relevant_from: u8,
    /// Whether unjudged positions count as gain 0 or are dropped before cutting at k.
    pub unjudged: Unjudged,
    /// RBP's persistence p, the chance that a reader goes on to the next item
    /// (Moffat & Zobel 2008); strictly between 0 and 1.
    pub persistence: f64,
}

/// DCG@k of a prepared list (after the unjudged rule); unjudged positions add nothing.
pub fn dcg_at(list: &PreparedList<'_>, settings: &ListSettings, k: usize) -> f64 {
    list.effective
        .iter()
        .take(k)
        .enumerate()
        .filter_map(|(i, level)| level.map(|v| settings.gains[v as usize] * discount(i + 1)))
        .sum()
}

/// Cumulative gain at k: the sum of the gains in the top k (unjudged positions add
/// nothing; Järvelin & Kekäläinen 2002).
pub fn cg_at(list: &PreparedList<'_>, settings: &ListSettings, k: usize) -> f64 {
    list.effective
        .iter()
        .take(k)
        .flatten()
        .map(|v| settings.gains[*v as usize])
        .sum()
}

/// NDCG@k, or None when the context has no relevant item or its ideal DCG@k is 0.
pub fn ndcg_at(list: &PreparedList<'_>, settings: &ListSettings, k: usize) -> Option<f64> {
    let ideal = dcg(list.ideal_gains, Some(k));
    (list.has_relevant && ideal > 0.0).then(|| dcg_at(list, settings, k) / ideal)
}

/// Relevant items in the top k divided by k (a list shorter than k is not rescaled).
pub fn precision_at(list: &PreparedList<'_>, settings: &ListSettings, k: usize) -> f64 {
    let relevant = list
        .effective
        .iter()
        .take(k)
        .filter(|l| l.is_some_and(|v| v >= settings.relevant_from))
        .count();
    relevant as f64 / k as f64
}

/// Reciprocal rank of the first relevant item of the whole list; 0 without one.
pub fn reciprocal_rank(list: &PreparedList<'_>, settings: &ListSettings) -> f64 {
    list.effective
        .iter()
        .position(|l| l.is_some_and(|v| v >= settings.relevant_from))
        .map_or(0.0, |i| 1.0 / (i + 1) as f64)
}

/// Share of the first min(k, length) positions as returned that is judged; 0 for an
/// empty list.
pub fn judged_at(returned: &[Option<u8>], k: usize) -> f64 {
    let shown = returned.len().min(k);
    if shown == 0 {
        return 0.0;
    }
    returned[..shown].iter().filter(|l| l.is_some()).count() as f64 / shown as f64
}

/// Rank-biased precision of the whole list as returned (Moffat & Zobel 2008):
/// (1 − p) Σ r_i p^(i−1), r_i = the item's gain / the gain of the scale's top level,
/// unjudged items 0. A scale whose top level has no gain gives 0.
pub fn rbp(returned: &[Option<u8>], settings: &ListSettings) -> f64 {
    let top = settings.gains[settings.max_level as usize];
    if top <= 0.0 {
        return 0.0;
    }
    let p = settings.persistence;
    let mut weight = 1.0 - p;
    let mut sum = 0.0;
    for level in returned {
        if let Some(v) = level {
            sum += weight * settings.gains[*v as usize] / top;
        }
        weight *= p;
    }
    sum
}

/// RBP's residual (Moffat & Zobel 2008): the most that the unjudged items
/// and those past the end of the list could add, (1 − p) Σ over unjudged positions of
/// p^(i−1) + p^(list length).
pub fn rbp_residual(returned: &[Option<u8>], persistence: f64) -> f64 {
    let mut reach = 1.0; // p^(i−1)
    let mut unjudged = 0.0;
    for level in returned {
        if level.is_none() {
            unjudged += reach;
        }
        reach *= persistence;
    }
    (1.0 - persistence) * unjudged + reach
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn discount_of_first_rank_is_one() {
        assert_eq!(discount(1), 1.0);
        assert!((discount(3) - 0.5).abs() < 1e-15);
    }

    #[test]
    fn err_of_a_perfect_first_item_on_a_binary_scale_is_half() {
        // With max level 1, R = (2^1 − 1)/2 = 0.5 (Chapelle et al. 2009, eq. 4).
        assert!((err(&[Some(1)], 1, 10) - 0.5).abs() < 1e-15);
    }
}
