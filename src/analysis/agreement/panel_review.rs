//! What the Agreement screen shows beside the coefficients: how strict each reviewer is,
//! how they do on gold pairs, how their agreement with the rest of the panel moves by
//! day, and the list of disagreeing pairs to settle. Pure: built from rows the study
//! already loaded.

use std::collections::{BTreeMap, HashMap};

use crate::core::agreement::CollapseMap;
use crate::core::settle_rules::spread;
use crate::study::settle::{GradeDetail, SettleRecord};
use crate::study::snapshot::Snapshot;

/// One reviewer's use of the levels.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Strictness {
    /// Name of the reviewer.
    pub reviewer: String,
    /// Share of this reviewer's grades at each level (sums to 1 when `graded` > 0).
    pub shares: Vec<f64>,
    /// Number of this reviewer's grades with a level ("can't judge" left out).
    pub graded: usize,
    /// Mean of (own level − lower median of the other reviewers' levels) over pairs the
    /// others graded too; below 0 = stricter than the rest of the panel. NaN when
    /// `compared` is 0.
    pub mean_difference: f64,
    /// Number of grades behind `mean_difference`: those on pairs where at least one other
    /// reviewer gave a level.
    pub compared: usize,
}

/// Share of gold pairs a reviewer graded at the known level.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct GoldAccuracy {
    /// Name of the reviewer.
    pub reviewer: String,
    /// Gold pairs this reviewer graded at the known level (both mapped through the
    /// collapse map when one is chosen).
    pub correct: usize,
    /// Gold pairs this reviewer gave a level ("can't judge" left out); always above 0.
    pub graded: usize,
}

/// On one day (UTC, from `graded_at`), how often a reviewer's level equalled the lower
/// median of the others' levels on the same pair.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DayAgreement {
    /// Name of the reviewer.
    pub reviewer: String,
    /// The day, the first ten characters of `graded_at` (`YYYY-MM-DD`).
    pub day: String,
    /// Grades that day equal to the others' panel grade (the study's panel rule over
    /// the other reviewers' levels).
    pub agreed: usize,
    /// Grades that day on pairs where at least one other reviewer gave a level.
    pub compared: usize,
}

impl GoldAccuracy {
    /// Share of the graded gold pairs given the known level.
    pub fn share(&self) -> f64 {
        self.correct as f64 / self.graded as f64
    }
}

impl DayAgreement {
    /// Share of that day's compared grades equal to the others' panel grade.
    pub fn share(&self) -> f64 {
        self.agreed as f64 / self.compared as f64
    }
}

/// A disagreeing pair with everything needed to settle it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Disagreement {
    /// Id of the pair's context.
    pub context_id: String,
    /// Text of the context; empty when the snapshot does not hold the context.
    pub context_text: String,
    /// Id of the pair's item.
    pub item_id: String,
    /// Title of the item; empty when the snapshot does not hold the item.
    pub item_title: String,
    /// Highest minus lowest level given (can't-judge left out).
    pub spread: u8,
    /// Every reviewer's current grade of the pair, can't-judge included.
    pub grades: Vec<GradeDetail>,
    /// Rankers that hold the item in their top k for this context.
    pub rankers_in_top_k: usize,
    /// Best rank any ranker gives the item here (1-based).
    pub best_rank: Option<usize>,
    /// What `panel` scoring uses without a settlement.
    pub panel_level: u8,
    /// The settlement in force for the pair, if one was passed in.
    pub settled: Option<SettleRecord>,
}

/// Everything the Agreement screen shows beside the coefficients for one scale.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct PanelReview {
    /// Number of levels behind shares, gold and drift: the scale's, or the coarse scale's
    /// after a collapse map.
    pub levels: usize,
    /// Share of all grades at each level.
    pub panel_shares: Vec<f64>,
    /// One row per reviewer with a grade on the scale, by name.
    pub strictness: Vec<Strictness>,
    /// Number of gold pairs (pairs with a known level) on the scale.
    pub gold_pairs: usize,
    /// One row per reviewer who gave a level to at least one gold pair, by name.
    pub gold: Vec<GoldAccuracy>,
    /// Every day with at least one compared grade, oldest first.
    pub days: Vec<String>,
    /// One row per reviewer and day with compared grades, by reviewer then day.
    pub drift: Vec<DayAgreement>,
    /// The cut-off behind `rankers_in_top_k` of each disagreement.
    pub top_k: usize,
    /// Sorted: widest spread first, then pairs more rankers hold in their top k, then by
    /// best rank, so the pairs that can move a ranker comparison come first.
    pub disagreements: Vec<Disagreement>,
}

/// Builds the review. `grades` are the scale's current grades (already without any
/// pairs hidden by the blind rule); `collapse` applies to shares, gold and drift, not
/// to disagreements, which are settled on the scale's own levels.
pub fn build(
    snapshot: &Snapshot,
    scale: usize,
    grades: &[GradeDetail],
    settled: &[SettleRecord],
    gold: &[(String, String, u8)],
    collapse: Option<&CollapseMap>,
    top_k: usize,
) -> PanelReview {
    let fine_levels = snapshot.scales[scale].levels.len();
    let levels = collapse.map_or(fine_levels, |m| m.coarse_levels());
    let map = |v: u8| collapse.map_or(v, |m| m.targets[v as usize]);
    let mut by_pair: BTreeMap<(&str, &str), Vec<&GradeDetail>> = BTreeMap::new();
    for g in grades {
        by_pair
            .entry((g.context_id.as_str(), g.item_id.as_str()))
            .or_default()
            .push(g);
    }
    let mut reviewers: Vec<&str> = grades.iter().map(|g| g.reviewer.as_str()).collect();
    reviewers.sort_unstable();
    reviewers.dedup();

    let tally = Tally::of(snapshot, &by_pair, &reviewers, levels, &map);
    let (panel_shares, strictness) = strictness(&reviewers, &tally);
    let gold_rows = gold_accuracy(&reviewers, grades, gold, &map);
    let (days, drift) = drift_rows(&reviewers, tally.drift);
    PanelReview {
        levels,
        panel_shares,
        strictness,
        gold_pairs: gold.len(),
        gold: gold_rows,
        days,
        drift,
        top_k,
        disagreements: disagreements(snapshot, &by_pair, settled, top_k),
    }
}

/// Per reviewer: grades per level, the summed difference from the others' panel grade,
/// and per (reviewer, day) the grades equal to it.
struct Tally {
    counts: Vec<Vec<usize>>,
    diff_sum: Vec<(i64, usize)>,
    drift: BTreeMap<(usize, String), (usize, usize)>,
}

impl Tally {
    /// Compares every grade with the others' panel grade on the same pair (the study's
    /// panel rule over the other reviewers' levels).
    fn of(
        snapshot: &Snapshot,
        by_pair: &BTreeMap<(&str, &str), Vec<&GradeDetail>>,
        reviewers: &[&str],
        levels: usize,
        map: &dyn Fn(u8) -> u8,
    ) -> Tally {
        let mut tally = Tally {
            counts: vec![vec![0usize; levels]; reviewers.len()],
            diff_sum: vec![(0i64, 0usize); reviewers.len()],
            drift: BTreeMap::new(),
        };
        for list in by_pair.values() {
            for g in list {
                let Some(v) = g.value.map(map) else { continue };
                let r = reviewers
                    .binary_search(&g.reviewer.as_str())
                    .expect("listed");
                tally.counts[r][v as usize] += 1;
                let mut others: Vec<u8> = list
                    .iter()
                    .filter(|o| o.reviewer != g.reviewer)
                    .filter_map(|o| o.value.map(map))
                    .collect();
                if let Some(m) = snapshot.panel_rule.apply(&mut others) {
                    tally.diff_sum[r].0 += v as i64 - m as i64;
                    tally.diff_sum[r].1 += 1;
                    let day = g.graded_at.get(..10).unwrap_or(&g.graded_at).to_string();
                    let cell = tally.drift.entry((r, day)).or_default();
                    cell.0 += (v == m) as usize;
                    cell.1 += 1;
                }
            }
        }
        tally
    }
}

/// Shares of each count of `c` (all 0 when `c` sums to 0).
fn shares(c: &[usize]) -> Vec<f64> {
    let total: usize = c.iter().sum();
    c.iter()
        .map(|x| {
            if total == 0 {
                0.0
            } else {
                *x as f64 / total as f64
            }
        })
        .collect()
}

/// The panel's level shares and each reviewer's shares and mean difference.
fn strictness(reviewers: &[&str], tally: &Tally) -> (Vec<f64>, Vec<Strictness>) {
    let levels = tally.counts.first().map_or(0, Vec::len);
    let mut panel_counts = vec![0usize; levels];
    for c in &tally.counts {
        for (l, x) in c.iter().enumerate() {
            panel_counts[l] += x;
        }
    }
    let rows = reviewers
        .iter()
        .enumerate()
        .map(|(r, name)| Strictness {
            reviewer: name.to_string(),
            shares: shares(&tally.counts[r]),
            graded: tally.counts[r].iter().sum(),
            mean_difference: if tally.diff_sum[r].1 == 0 {
                f64::NAN
            } else {
                tally.diff_sum[r].0 as f64 / tally.diff_sum[r].1 as f64
            },
            compared: tally.diff_sum[r].1,
        })
        .collect();
    (shares(&panel_counts), rows)
}

/// Each reviewer's accuracy on the gold pairs they graded.
fn gold_accuracy(
    reviewers: &[&str],
    grades: &[GradeDetail],
    gold: &[(String, String, u8)],
    map: &dyn Fn(u8) -> u8,
) -> Vec<GoldAccuracy> {
    let gold_level: HashMap<(&str, &str), u8> = gold
        .iter()
        .map(|(c, i, v)| ((c.as_str(), i.as_str()), *v))
        .collect();
    reviewers
        .iter()
        .map(|name| {
            let mut acc = GoldAccuracy {
                reviewer: name.to_string(),
                correct: 0,
                graded: 0,
            };
            for g in grades.iter().filter(|g| g.reviewer == *name) {
                if let (Some(v), Some(known)) = (
                    g.value,
                    gold_level.get(&(g.context_id.as_str(), g.item_id.as_str())),
                ) {
                    acc.graded += 1;
                    acc.correct += (map(v) == map(*known)) as usize;
                }
            }
            acc
        })
        .filter(|a| a.graded > 0)
        .collect()
}

/// The days graded and each reviewer's agreement with the others per day.
fn drift_rows(
    reviewers: &[&str],
    drift: BTreeMap<(usize, String), (usize, usize)>,
) -> (Vec<String>, Vec<DayAgreement>) {
    let mut days: Vec<String> = drift.keys().map(|(_, d)| d.clone()).collect();
    days.sort();
    days.dedup();
    let drift = drift
        .into_iter()
        .map(|((r, day), (agreed, compared))| DayAgreement {
            reviewer: reviewers[r].to_string(),
            day,
            agreed,
            compared,
        })
        .collect();

    (days, drift)
}

fn disagreements(
    snapshot: &Snapshot,
    by_pair: &BTreeMap<(&str, &str), Vec<&GradeDetail>>,
    settled: &[SettleRecord],
    top_k: usize,
) -> Vec<Disagreement> {
    let contexts: HashMap<&str, usize> = snapshot
        .contexts
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    let items: HashMap<&str, usize> = snapshot
        .items
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    let settled: HashMap<(&str, &str), &SettleRecord> = settled
        .iter()
        .map(|s| ((s.context_id.as_str(), s.item_id.as_str()), s))
        .collect();
    let mut out = Vec::new();
    for ((context_id, item_id), list) in by_pair {
        let mut levels: Vec<u8> = list.iter().filter_map(|g| g.value).collect();
        let spread = spread(&levels);
        if spread == 0 {
            continue;
        }
        let (c, i) = (contexts.get(context_id), items.get(item_id));
        let mut rankers_in_top_k = 0;
        let mut best_rank: Option<usize> = None;
        if let (Some(&c), Some(&i)) = (c, i) {
            for lists in &snapshot.lists {
                if let Some(pos) = lists[c].iter().position(|x| *x as usize == i) {
                    rankers_in_top_k += (pos < top_k) as usize;
                    best_rank = Some(best_rank.map_or(pos + 1, |b| b.min(pos + 1)));
                }
            }
        }
        out.push(Disagreement {
            context_id: context_id.to_string(),
            context_text: c.map(|&c| context_words(snapshot, c)).unwrap_or_default(),
            item_id: item_id.to_string(),
            item_title: i
                .map(|&i| snapshot.items[i].title.clone())
                .unwrap_or_default(),
            spread,
            grades: list.iter().map(|g| (*g).clone()).collect(),
            rankers_in_top_k,
            best_rank,
            panel_level: snapshot
                .panel_rule
                .apply(&mut levels)
                .expect("two levels at least"),
            settled: settled.get(&(*context_id, *item_id)).map(|s| (*s).clone()),
        });
    }
    out.sort_by(|a, b| {
        b.spread
            .cmp(&a.spread)
            .then(b.rankers_in_top_k.cmp(&a.rankers_in_top_k))
            .then(
                a.best_rank
                    .unwrap_or(usize::MAX)
                    .cmp(&b.best_rank.unwrap_or(usize::MAX)),
            )
            .then(a.context_id.cmp(&b.context_id))
            .then(a.item_id.cmp(&b.item_id))
    });
    out
}

/// A reviewer's pace: grades per hour over the time recorded on the cards; `None` until
/// it rests on [`crate::analysis::defaults::PACE_MIN_GRADES`] timed grades (the desk shows it).
pub fn grades_per_hour(grades: u64, seconds: f64) -> Option<f64> {
    (grades >= crate::analysis::defaults::PACE_MIN_GRADES && seconds > 0.0)
        .then(|| grades as f64 * 3600.0 / seconds)
}

/// A context as a person reads it: its text, or for an anchor context without text the
/// anchor item's title ("more like Reed Trail Tent (i2)").
pub fn context_words(snapshot: &Snapshot, c: usize) -> String {
    let info = &snapshot.contexts[c];
    if !info.text.is_empty() {
        return info.text.clone();
    }
    match &info.anchor_item {
        Some(anchor) => {
            let title = snapshot
                .items
                .binary_search_by(|i| i.id.as_str().cmp(anchor))
                .ok()
                .map(|i| snapshot.items[i].title.clone());
            match title {
                Some(t) => format!("more like {t} ({anchor})"),
                None => format!("more like {anchor}"),
            }
        }
        None => String::new(),
    }
}
