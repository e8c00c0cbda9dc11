//! Turning a snapshot's grades into one level per pair: the panel's or one reviewer's.

use crate::study::snapshot::Snapshot;

/// Which grades scoring uses.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum GradeSource {
    /// Settled grade where one exists, else the lower median of the reviewers' levels.
    Panel,
    /// One reviewer's own grades.
    Reviewer(String),
}

impl GradeSource {
    pub fn parse(text: &str) -> GradeSource {
        if text == "panel" {
            GradeSource::Panel
        } else {
            GradeSource::Reviewer(text.to_string())
        }
    }

    pub fn label(&self) -> String {
        match self {
            GradeSource::Panel => "panel".into(),
            GradeSource::Reviewer(r) => r.clone(),
        }
    }
}

/// Lower median of levels (the lower middle value on an even count), common practice
/// for turning several ordinal grades into one without inventing half levels.
pub fn lower_median(levels: &mut [u8]) -> Option<u8> {
    if levels.is_empty() {
        return None;
    }
    levels.sort_unstable();
    Some(levels[(levels.len() - 1) / 2])
}

/// Per context: judged (item, level) pairs sorted by item, for binary search.
pub type ContextJudgments = Vec<Vec<(u32, u8)>>;

/// Resolves the grades of one scale into one level per judged pair. Can't-judge grades
/// are ignored; a pair nobody could judge stays unjudged.
pub fn resolve(snapshot: &Snapshot, scale: usize, source: &GradeSource) -> ContextJudgments {
    let mut by_context: ContextJudgments = vec![Vec::new(); snapshot.contexts.len()];
    let reviewer = match source {
        GradeSource::Reviewer(name) => match snapshot.reviewer_index(name) {
            Some(r) => Some(r as u32),
            None => return by_context,
        },
        GradeSource::Panel => None,
    };
    // Grades are sorted by (scale, context, item, reviewer): walk runs of one pair.
    let grades: Vec<_> = snapshot
        .grades
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
                && let Some(v) = g.value
            {
                levels.push(v);
            }
            i += 1;
        }
        if let Some(level) = lower_median(&mut levels) {
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

    #[test]
    fn lower_median_takes_the_lower_middle() {
        assert_eq!(lower_median(&mut [3, 1]), Some(1));
        assert_eq!(lower_median(&mut [2, 0, 3]), Some(2));
        assert_eq!(lower_median(&mut []), None);
    }
}
