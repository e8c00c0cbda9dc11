//! Turning a snapshot's grades into one level per pair: the panel's or one reviewer's.

use crate::study::snapshot::Snapshot;

/// Which grades scoring uses.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum GradeSource {
    /// Settled grade where one exists, else the lower median of the reviewers' levels.
    Panel,
    /// One reviewer's own grades.
    Reviewer(String),
}

impl GradeSource {
    /// Reads a source as typed: exactly `panel` is the panel, any other text a reviewer
    /// name (not checked here; an unknown reviewer resolves to no judgments).
    pub fn parse(text: &str) -> GradeSource {
        if text == "panel" {
            GradeSource::Panel
        } else {
            GradeSource::Reviewer(text.to_string())
        }
    }

    /// `panel` or the reviewer's name, the inverse of [`GradeSource::parse`].
    pub fn label(&self) -> String {
        match self {
            GradeSource::Panel => "panel".into(),
            GradeSource::Reviewer(r) => r.clone(),
        }
    }
}

/// How the panel's levels of one pair become one level when nobody settled it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PanelRule {
    /// The middle level; on an even panel the lower of the two middle ones ([1, 3] → 1).
    /// The default: it never claims more relevance than half the panel gave, and it
    /// never invents a level between two that were given.
    #[default]
    LowerMedian,
    /// The middle level; on an even panel the upper of the two ([1, 3] → 3).
    UpperMedian,
    /// The mean of the levels rounded to the nearest level, halves up ([1, 2] → 2).
    MeanRounded,
}

impl PanelRule {
    /// Reads `lower-median`, `upper-median` or `mean-rounded`; None for anything else.
    pub fn parse(text: &str) -> Option<PanelRule> {
        match text {
            "lower-median" => Some(PanelRule::LowerMedian),
            "upper-median" => Some(PanelRule::UpperMedian),
            "mean-rounded" => Some(PanelRule::MeanRounded),
            _ => None,
        }
    }

    /// The rule's short name, as [`PanelRule::parse`] reads it and the scoreboard text
    /// prints it.
    pub fn label(self) -> &'static str {
        match self {
            PanelRule::LowerMedian => "lower-median",
            PanelRule::UpperMedian => "upper-median",
            PanelRule::MeanRounded => "mean-rounded",
        }
    }

    /// In words, for settings lines and the report.
    pub fn words(self) -> &'static str {
        match self {
            PanelRule::LowerMedian => {
                "lower median of the reviewers (on a tie the lower middle level)"
            }
            PanelRule::UpperMedian => {
                "upper median of the reviewers (on a tie the upper middle level)"
            }
            PanelRule::MeanRounded => {
                "mean of the reviewers rounded to the nearest level, halves up"
            }
        }
    }

    /// The one level of `levels` under this rule; None when there are none.
    pub fn apply(self, levels: &mut [u8]) -> Option<u8> {
        if levels.is_empty() {
            return None;
        }
        levels.sort_unstable();
        Some(match self {
            PanelRule::LowerMedian => levels[(levels.len() - 1) / 2],
            PanelRule::UpperMedian => levels[levels.len() / 2],
            PanelRule::MeanRounded => {
                let sum: u32 = levels.iter().map(|&v| u32::from(v)).sum();
                let n = levels.len() as u32;
                // Nearest integer with halves up: floor((2·sum + n) / 2n).
                ((2 * sum + n) / (2 * n)) as u8
            }
        })
    }
}

/// Lower median of levels (the lower middle value on an even count), common practice
/// for turning several ordinal grades into one without inventing half levels.
pub fn lower_median(levels: &mut [u8]) -> Option<u8> {
    PanelRule::LowerMedian.apply(levels)
}

/// Per context: judged (item, level) pairs sorted by item, for binary search.
pub type ContextJudgments = Vec<Vec<(u32, u8)>>;

/// Resolves the grades of one scale into one level per judged pair. Can't-judge grades
/// are ignored; a pair nobody could judge stays unjudged.
pub fn resolve(snapshot: &Snapshot, scale: usize, source: &GradeSource) -> ContextJudgments {
    resolve_with(snapshot, scale, source, PanelRule::LowerMedian)
}

/// `resolve` with a chosen rule for unsettled panel pairs.
pub fn resolve_with(
    snapshot: &Snapshot,
    scale: usize,
    source: &GradeSource,
    rule: PanelRule,
) -> ContextJudgments {
    let reviewer = match source {
        GradeSource::Reviewer(name) => match snapshot.reviewer_index(name) {
            Some(r) => Some(r as u32),
            None => return vec![Vec::new(); snapshot.contexts.len()],
        },
        GradeSource::Panel => None,
    };
    resolve_grades(snapshot, scale, reviewer, false, rule)
}

/// The people's panel grade of every pair of `scale`: the settled grade, else `rule`
/// over the people's levels; machine judges never count here, even in a study that
/// counts them in the panel (reviewer quality compares machines against this).
pub fn people_panel(snapshot: &Snapshot, scale: usize, rule: PanelRule) -> ContextJudgments {
    resolve_grades(snapshot, scale, None, true, rule)
}

/// The one place a pair's level is decided: one reviewer's level, or the panel's
/// (settled first, then `rule`), optionally without machine judges.
fn resolve_grades(
    snapshot: &Snapshot,
    scale: usize,
    reviewer: Option<u32>,
    people_only: bool,
    rule: PanelRule,
) -> ContextJudgments {
    let mut by_context: ContextJudgments = vec![Vec::new(); snapshot.contexts.len()];
    // Grades are sorted by (scale, context, item, reviewer): walk runs of one pair. A
    // machine judge's own grades live apart from the panel's unless the study counts
    // machines in the panel.
    let source = match reviewer {
        Some(r) if snapshot.is_machine(r as usize) && !snapshot.machines_in_panel => {
            &snapshot.machine_grades
        }
        _ => &snapshot.grades,
    };
    let grades: Vec<_> = source
        .iter()
        .filter(|g| g.scale as usize == scale)
        .collect();
    let mut i = 0;
    let mut levels: Vec<u8> = Vec::new();
    while i < grades.len() {
        let (context, item) = (grades[i].context, grades[i].item);
        levels.clear();
        while i < grades.len() && grades[i].context == context && grades[i].item == item {
            let g = grades[i];
            if reviewer.is_none_or(|r| r == g.reviewer)
                && !(people_only && snapshot.is_machine(g.reviewer as usize))
                && let Some(v) = g.value
            {
                levels.push(v);
            }
            i += 1;
        }
        if let Some(level) = rule.apply(&mut levels) {
            by_context[context as usize].push((item, level));
        }
    }
    if reviewer.is_none() {
        for s in snapshot
            .settled
            .iter()
            .filter(|s| s.scale as usize == scale)
        {
            let list = &mut by_context[s.context as usize];
            match list.iter_mut().find(|(item, _)| *item == s.item) {
                Some(entry) => entry.1 = s.value,
                None => list.push((s.item, s.value)),
            }
        }
    }
    for list in &mut by_context {
        list.sort_unstable_by_key(|(item, _)| *item);
    }
    by_context
}

/// The level of `item` in a context's sorted judgments.
pub fn level_of(judged: &[(u32, u8)], item: u32) -> Option<u8> {
    judged
        .binary_search_by_key(&item, |(i, _)| *i)
        .ok()
        .map(|at| judged[at].1)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand-checked: [1, 3] gives 1, 3 and 2; [1, 2] gives 1, 2 and 2 (1.5 rounds up);
    /// [0, 1, 3] gives 1 under both medians and 1 as a rounded mean (4/3).
    #[test]
    fn panel_rules_on_small_panels() {
        use PanelRule::*;
        let cases: [(&[u8], [u8; 3]); 3] = [
            (&[3, 1], [1, 3, 2]),
            (&[2, 1], [1, 2, 2]),
            (&[0, 3, 1], [1, 1, 1]),
        ];
        for (levels, want) in cases {
            for (rule, w) in [LowerMedian, UpperMedian, MeanRounded]
                .into_iter()
                .zip(want)
            {
                assert_eq!(
                    rule.apply(&mut levels.to_vec()),
                    Some(w),
                    "{rule:?} {levels:?}"
                );
            }
        }
    }

    #[test]
    fn lower_median_takes_the_lower_middle() {
        assert_eq!(lower_median(&mut [3, 1]), Some(1));
        assert_eq!(lower_median(&mut [2, 0, 3]), Some(2));
        assert_eq!(lower_median(&mut []), None);
    }
}
