//! The Catalog's context view: one context's ranked lists, ranker by ranker, with the
//! panel grade and every reviewer's own grade of each listed pair on a chosen scale.
//! [`ContextLists`] is built once from a snapshot on a job thread; [`ContextLists::view`]
//! then answers one (context, scale) choice with binary searches only.

use crate::analysis::judged::judgments::{self, ContextJudgments, GradeSource, PanelRule};
use crate::study::snapshot::{GradeRow, Snapshot};

/// One reviewer's grade of a pair, as the view shows it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// The reviewer has no grade of this pair on the scale.
    NotGraded,
    /// The reviewer said they could not judge the pair.
    CantJudge,
    /// The level the reviewer gave.
    Level(u8),
}

/// The panel's one level of a pair.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PanelMark {
    /// The level in force.
    pub level: u8,
    /// True when a settled grade decides it, false when the panel rule does.
    pub settled: bool,
}

/// One entry of a ranked list with its grades.
#[derive(Debug, Clone, PartialEq)]
pub struct ListRow {
    /// 1-based rank in the ranker's list.
    pub rank: usize,
    /// The item's id.
    pub item_id: String,
    /// The item's title.
    pub title: String,
    /// The panel grade; None when nobody could grade the pair yet.
    pub panel: Option<PanelMark>,
    /// One mark per column of [`ContextView::reviewers`].
    pub marks: Vec<Mark>,
}

/// One ranker's list for the context; empty rows when the ranker has no list for it.
#[derive(Debug, Clone, PartialEq)]
pub struct RankerList {
    /// The ranker's name.
    pub ranker: String,
    /// The list in rank order.
    pub rows: Vec<ListRow>,
}

/// What the screen draws for one context on one scale.
#[derive(Debug, Clone, PartialEq)]
pub struct ContextView {
    /// Index of the context in [`ContextLists::contexts`].
    pub context: usize,
    /// Index of the scale in [`ContextLists::scales`]; None in a study without scales.
    pub scale: Option<usize>,
    /// The reviewers who graded anything on this scale, one column each.
    pub reviewers: Vec<String>,
    /// Per column: true for a machine judge.
    pub machine: Vec<bool>,
    /// Every ranker of the study, in the study's order.
    pub lists: Vec<RankerList>,
}

/// A context as the picker names it.
#[derive(Debug, Clone, PartialEq)]
pub struct ContextName {
    /// The context's id.
    pub id: String,
    /// `query` or `anchor`.
    pub kind: String,
    /// The search text, or the anchor's text.
    pub text: String,
    /// For an anchor context, the anchor item's id.
    pub anchor_item: Option<String>,
}

/// A scale as the view names its levels.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaleName {
    /// The scale's name.
    pub name: String,
    /// Level labels in value order.
    pub labels: Vec<String>,
}

impl ScaleName {
    /// `2 Good alternative`, or the bare number for a level the scale does not name.
    pub fn level_text(&self, level: u8) -> String {
        match self.labels.get(usize::from(level)) {
            Some(label) => format!("{level} {label}"),
            None => level.to_string(),
        }
    }
}

/// Everything the context view needs, from one snapshot.
#[derive(Debug, Clone)]
pub struct ContextLists {
    /// Every context, in the study's order.
    pub contexts: Vec<ContextName>,
    /// Every scale, in the study's order.
    pub scales: Vec<ScaleName>,
    /// The scale the view opens on (the study's active scale).
    pub active_scale: usize,
    /// The study's pooling depth k: ranks up to k are in the pool.
    pub pool_depth: usize,
    /// How the panel grade is formed where nobody settled a pair.
    pub rule: PanelRule,
    snapshot: Snapshot,
    /// Per scale: the panel grade of every judged pair.
    panel: Vec<ContextJudgments>,
    /// Every current grade, people's and machines' alike, sorted by
    /// (scale, context, item, reviewer).
    grades: Vec<GradeRow>,
    /// Per scale: the reviewers with a grade on it, in the study's order.
    columns: Vec<Vec<usize>>,
    /// Settled pairs in force as (scale, context, item), sorted.
    settled: Vec<(u32, u32, u32)>,
}

impl ContextLists {
    /// Indexes the snapshot's lists and grades under the study's panel rule (the settled
    /// grade where one exists, else the study's `panel_rule` over the reviewers' levels).
    pub fn build(snapshot: Snapshot) -> ContextLists {
        let rule = snapshot.panel_rule;
        let panel = (0..snapshot.scales.len())
            .map(|s| judgments::resolve_with(&snapshot, s, &GradeSource::Panel, rule))
            .collect();
        let mut grades: Vec<GradeRow> = snapshot.grades.clone();
        // With machines counted in the panel their grades are in both vectors already.
        if !snapshot.machines_in_panel {
            grades.extend(snapshot.machine_grades.iter().copied());
        }
        grades.sort_by_key(|g| (g.scale, g.context, g.item, g.reviewer));
        let mut graded = vec![vec![false; snapshot.reviewers.len()]; snapshot.scales.len()];
        for g in &grades {
            if let Some(cell) = graded
                .get_mut(g.scale as usize)
                .and_then(|row| row.get_mut(g.reviewer as usize))
            {
                *cell = true;
            }
        }
        let columns = graded
            .iter()
            .map(|row| (0..row.len()).filter(|&r| row[r]).collect())
            .collect();
        let mut settled: Vec<(u32, u32, u32)> = snapshot
            .settled
            .iter()
            .map(|r| (r.scale, r.context, r.item))
            .collect();
        settled.sort_unstable();
        ContextLists {
            contexts: snapshot
                .contexts
                .iter()
                .map(|c| ContextName {
                    id: c.id.clone(),
                    kind: c.kind.clone(),
                    text: c.text.clone(),
                    anchor_item: c.anchor_item.clone(),
                })
                .collect(),
            scales: snapshot
                .scales
                .iter()
                .map(|s| ScaleName {
                    name: s.name.clone(),
                    labels: s.levels.iter().map(|l| l.label.clone()).collect(),
                })
                .collect(),
            active_scale: snapshot.active_scale_index(),
            pool_depth: snapshot.pool_depth,
            rule,
            panel,
            grades,
            columns,
            settled,
            snapshot,
        }
    }

    /// The rankers' lists for `context` with their grades on `scale` (no grades without a
    /// scale); None when the context is out of range.
    pub fn view(&self, context: usize, scale: Option<usize>) -> Option<ContextView> {
        if context >= self.contexts.len() {
            return None;
        }
        let scale = scale.filter(|&s| s < self.scales.len());
        let s = &self.snapshot;
        let columns: &[usize] = scale.map_or(&[], |k| &self.columns[k]);
        let judged: &[(u32, u8)] = scale.map_or(&[], |k| &self.panel[k][context]);
        let settled = |item: u32| {
            scale.is_some_and(|k| {
                self.settled
                    .binary_search(&(k as u32, context as u32, item))
                    .is_ok()
            })
        };
        let lists = s
            .rankers
            .iter()
            .enumerate()
            .map(|(r, ranker)| {
                let items = s
                    .lists
                    .get(r)
                    .and_then(|l| l.get(context))
                    .map(Vec::as_slice)
                    .unwrap_or_default();
                let rows = items
                    .iter()
                    .enumerate()
                    .map(|(at, &item)| {
                        let info = &s.items[item as usize];
                        let pair = match scale {
                            Some(k) => self.pair_grades(k, context, item),
                            None => &[],
                        };
                        ListRow {
                            rank: at + 1,
                            item_id: info.id.clone(),
                            title: info.title.clone(),
                            panel: judgments::level_of(judged, item).map(|level| PanelMark {
                                level,
                                settled: settled(item),
                            }),
                            marks: columns
                                .iter()
                                .map(|&c| match pair.iter().find(|g| g.reviewer as usize == c) {
                                    None => Mark::NotGraded,
                                    Some(g) => match g.value {
                                        Some(v) => Mark::Level(v),
                                        None => Mark::CantJudge,
                                    },
                                })
                                .collect(),
                        }
                    })
                    .collect();
                RankerList {
                    ranker: ranker.clone(),
                    rows,
                }
            })
            .collect();
        Some(ContextView {
            context,
            scale,
            reviewers: columns.iter().map(|&c| s.reviewers[c].clone()).collect(),
            machine: columns.iter().map(|&c| s.is_machine(c)).collect(),
            lists,
        })
    }

    /// The current grades of one pair on one scale.
    fn pair_grades(&self, scale: usize, context: usize, item: u32) -> &[GradeRow] {
        let key = (scale as u32, context as u32, item);
        let at = |g: &GradeRow| (g.scale, g.context, g.item);
        let start = self.grades.partition_point(|g| at(g) < key);
        let end = self.grades.partition_point(|g| at(g) <= key);
        &self.grades[start..end]
    }
}
