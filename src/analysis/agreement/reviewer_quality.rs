//! Can a reviewer be trusted? Gold accuracy per reviewer (and by day, for drift), and
//! each machine judge measured against the people's panel grade. Agreement with the
//! panel is not correctness: a judge can agree with people who share its blind spots.

use std::collections::{BTreeMap, HashMap};

use serde::Serialize;

use crate::analysis::judged::judgments;
use crate::core::agreement::{self, Confusion, Weights};
use crate::study::snapshot::{GradeRow, Snapshot, day_text};

/// One reviewer's grades on the scale and how they do on gold pairs.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewerQuality {
    /// Name of the reviewer.
    pub reviewer: String,
    /// `person` or `machine`.
    pub kind: &'static str,
    /// Current grades on the scale, can't-judge included.
    pub grades: usize,
    /// Gold pairs this reviewer gave a level.
    pub gold_n: usize,
    /// Share of those at exactly the known level; None without any.
    pub gold_exact: Option<f64>,
    /// Share within one level of the known level; None without any.
    pub gold_within_one: Option<f64>,
    /// Gold pairs marked can't-judge (left out of the shares).
    pub gold_cant_judge: usize,
    /// Gold grades by UTC day of grading, to see drift.
    pub gold_by_day: Vec<GoldDay>,
}

/// Gold grades of one day.
#[derive(Debug, Clone, Serialize)]
pub struct GoldDay {
    /// The day, `YYYY-MM-DD` (UTC).
    pub day: String,
    /// Gold pairs given a level that day.
    pub n: usize,
    /// Share of them at exactly the known level.
    pub exact: f64,
}

/// A machine judge against the people's panel grade, on the pairs both have.
#[derive(Debug, Clone, Serialize)]
pub struct MachineAgreement {
    /// Name of the machine judge.
    pub reviewer: String,
    /// Pairs where the judge gave a level and the people have a panel grade.
    pub n: usize,
    /// Cohen's kappa (Cohen 1960) of judge against panel.
    pub kappa: f64,
    /// Cohen's weighted kappa with quadratic weights (Cohen 1968).
    pub kappa_quadratic: f64,
    /// Gwet's AC1 (Gwet 2008) of the two.
    pub ac1: f64,
    /// Share of pairs where the judge's level equals the panel grade.
    pub exact: f64,
    /// Row = the judge's level, column = the panel grade.
    pub confusion: Vec<Vec<u64>>,
    /// The same split by new and established items and by context kind.
    pub by_segment: Vec<SegmentAgreement>,
}

/// A machine judge against the panel within one segment.
#[derive(Debug, Clone, Serialize)]
pub struct SegmentAgreement {
    /// `new`, `established`, `query` or `anchor`.
    pub segment: &'static str,
    /// Pairs in the segment.
    pub n: usize,
    /// Cohen's kappa; None when undefined (no pairs, or one level on both sides).
    pub kappa: Option<f64>,
    /// Share equal; None without pairs.
    pub exact: Option<f64>,
}

/// The caution shown beside every machine figure.
pub const MACHINE_CAUTION: &str = "Agreement with the panel is not correctness: a judge that shares the people's blind spots agrees with them and is still wrong. Machine grades stay out of the panel grade, agreement and settling unless the study counts them in.";

/// Every reviewer who graded `scale`, by name, with gold accuracy.
pub fn reviewers(snapshot: &Snapshot, scale: usize) -> Vec<ReviewerQuality> {
    let gold: HashMap<(u32, u32), u8> = snapshot
        .gold
        .iter()
        .filter(|g| g.2 as usize == scale)
        .map(|g| ((g.0, g.1), g.3))
        .collect();
    let mut by_reviewer: BTreeMap<&str, (usize, Vec<&GradeRow>)> = BTreeMap::new();
    let machines_apart = !snapshot.machines_in_panel;
    let all = snapshot
        .grades
        .iter()
        .chain(snapshot.machine_grades.iter().filter(|_| machines_apart));
    for g in all.filter(|g| g.scale as usize == scale) {
        let entry = by_reviewer
            .entry(snapshot.reviewers[g.reviewer as usize].as_str())
            .or_default();
        entry.0 = g.reviewer as usize;
        entry.1.push(g);
    }
    by_reviewer
        .into_iter()
        .map(|(name, (index, grades))| {
            let mut n = 0;
            let (mut exact, mut within, mut cant) = (0, 0, 0);
            let mut days: BTreeMap<i32, (usize, usize)> = BTreeMap::new();
            for g in &grades {
                let Some(&known) = gold.get(&(g.context, g.item)) else {
                    continue;
                };
                let Some(v) = g.value else {
                    cant += 1;
                    continue;
                };
                n += 1;
                let day = days.entry(g.day).or_default();
                day.0 += 1;
                if v == known {
                    exact += 1;
                    day.1 += 1;
                }
                if v.abs_diff(known) <= 1 {
                    within += 1;
                }
            }
            let share = |k: usize| (n > 0).then(|| k as f64 / n as f64);
            ReviewerQuality {
                reviewer: name.to_string(),
                kind: if snapshot.is_machine(index) {
                    "machine"
                } else {
                    "person"
                },
                grades: grades.len(),
                gold_n: n,
                gold_exact: share(exact),
                gold_within_one: share(within),
                gold_cant_judge: cant,
                gold_by_day: days
                    .into_iter()
                    .map(|(day, (n, right))| GoldDay {
                        day: day_text(day),
                        n,
                        exact: right as f64 / n as f64,
                    })
                    .collect(),
            }
        })
        .collect()
}

/// The people's panel grade per pair of `scale`: the settled grade, else the study's
/// panel rule over the people's levels (machines never count here; `judgments::people_panel`).
pub fn people_panel(snapshot: &Snapshot, scale: usize) -> HashMap<(u32, u32), u8> {
    judgments::people_panel(snapshot, scale, snapshot.panel_rule)
        .into_iter()
        .enumerate()
        .flat_map(|(c, pairs)| {
            pairs
                .into_iter()
                .map(move |(item, level)| ((c as u32, item), level))
        })
        .collect()
}

/// Every machine judge that graded `scale`, by name, against the people's panel grade.
pub fn machines(snapshot: &Snapshot, scale: usize) -> Vec<MachineAgreement> {
    let levels = snapshot.scales[scale].levels.len();
    let panel = people_panel(snapshot, scale);
    let mut by_machine: BTreeMap<&str, Vec<(u32, u32, u8, u8)>> = BTreeMap::new();
    for g in snapshot
        .machine_grades
        .iter()
        .filter(|g| g.scale as usize == scale)
    {
        let name = snapshot.reviewers[g.reviewer as usize].as_str();
        let list = by_machine.entry(name).or_default();
        if let (Some(v), Some(&p)) = (g.value, panel.get(&(g.context, g.item))) {
            list.push((g.context, g.item, v, p));
        }
    }
    by_machine
        .into_iter()
        .map(|(name, pairs)| {
            let figures = compare(levels, pairs.iter().map(|p| (p.2, p.3)));
            let segment = |label: &'static str, keep: &dyn Fn(u32, u32) -> bool| {
                let part: Vec<(u8, u8)> = pairs
                    .iter()
                    .filter(|p| keep(p.0, p.1))
                    .map(|p| (p.2, p.3))
                    .collect();
                let f = compare(levels, part.iter().copied());
                SegmentAgreement {
                    segment: label,
                    n: f.n,
                    kappa: f.kappa.is_finite().then_some(f.kappa),
                    exact: (f.n > 0).then_some(f.exact),
                }
            };
            let is_new = |_c: u32, i: u32| snapshot.items[i as usize].is_new;
            let kind = |c: u32| snapshot.contexts[c as usize].kind.as_str();
            MachineAgreement {
                reviewer: name.to_string(),
                n: figures.n,
                kappa: figures.kappa,
                kappa_quadratic: figures.kappa_quadratic,
                ac1: figures.ac1,
                exact: figures.exact,
                confusion: figures.confusion,
                by_segment: vec![
                    segment("new", &is_new),
                    segment("established", &|c, i| !is_new(c, i)),
                    segment("query", &|c, _| kind(c) == "query"),
                    segment("anchor", &|c, _| kind(c) == "anchor"),
                ],
            }
        })
        .collect()
}

struct Figures {
    n: usize,
    kappa: f64,
    kappa_quadratic: f64,
    ac1: f64,
    exact: f64,
    confusion: Vec<Vec<u64>>,
}

/// Kappa, weighted kappa, AC1 and the share equal of (judge, panel) level pairs.
fn compare(levels: usize, pairs: impl Iterator<Item = (u8, u8)>) -> Figures {
    let (a, b): (Vec<Option<u8>>, Vec<Option<u8>>) = pairs.map(|(x, y)| (Some(x), Some(y))).unzip();
    let confusion = Confusion::from_pairs(levels, &a, &b);
    let n = confusion.total() as usize;
    let rows: Vec<Vec<Option<u8>>> = a.iter().zip(&b).map(|(x, y)| vec![*x, *y]).collect();
    let same: u64 = (0..levels).map(|i| confusion.get(i, i)).sum();
    Figures {
        n,
        kappa: agreement::cohen_kappa(&confusion, Weights::Unweighted),
        kappa_quadratic: agreement::cohen_kappa(&confusion, Weights::Quadratic),
        ac1: agreement::gwet_ac1(levels, &rows),
        exact: if n == 0 {
            f64::NAN
        } else {
            same as f64 / n as f64
        },
        confusion: (0..levels)
            .map(|i| (0..levels).map(|j| confusion.get(i, j)).collect())
            .collect(),
    }
}
