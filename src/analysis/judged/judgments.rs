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

pub use crate::core::panel_rule::PanelRule;

/// Per context: judged (item, level) pairs sorted by item, for binary search.
pub type ContextJudgments = Vec<Vec<(u32, u8)>>;

/// Resolves the grades of one scale into one level per judged pair under the study's
/// panel rule. Can't-judge grades are ignored; a pair nobody could judge stays unjudged.
pub fn resolve(snapshot: &Snapshot, scale: usize, source: &GradeSource) -> ContextJudgments {
    resolve_with(snapshot, scale, source, snapshot.panel_rule)
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
