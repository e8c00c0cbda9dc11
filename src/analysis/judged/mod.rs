//! From grades to judged contexts: one level per pair (settled first, then the panel
//! rule; machine judges and gold apart), the segment's gains, the ideal ordering of
//! every context and which contexts can be scored. [`JudgedContexts::build`] is the one
//! step every score reads (scoreboard, pool bias, estimates, trial).

pub mod judgments;
pub mod per_context;
pub mod segment;
pub mod settings;

use crate::core::metric_table::Metric;
use crate::core::metrics::ListSettings;
use crate::study::snapshot::Snapshot;
use judgments::{ContextJudgments, GradeSource};
use settings::ScoreSettings;

/// The judged contexts of one scale under one set of settings and one source of grades.
#[derive(Debug, Clone)]
pub struct JudgedContexts {
    /// Gains, top level, relevance threshold, unjudged rule and persistence.
    pub list_settings: ListSettings,
    /// Per context: (item, level) of every judged pair, sorted by item; items outside the
    /// segment keep their judgment at level 0.
    pub judged: ContextJudgments,
    /// Per context: the gains of its judged items, highest first (the ideal ordering).
    pub ideal: Vec<Vec<f64>>,
    /// Contexts in the segment with at least one item above level 0, in study order:
    /// the contexts every mean is taken over.
    pub scored: Vec<usize>,
    /// Contexts in the segment with lists and judgments, none above level 0.
    pub without_relevant: usize,
    /// Contexts in the segment with lists but no judged pair on this scale.
    pub without_grades: usize,
}

impl JudgedContexts {
    /// Resolves `source`'s grades on `scale` under `settings` (panel rule, segment,
    /// gains) and splits the contexts into scored and left out.
    pub fn build(
        snapshot: &Snapshot,
        scale: usize,
        settings: &ScoreSettings,
        source: &GradeSource,
    ) -> JudgedContexts {
        let list_settings = per_context::list_settings(snapshot, scale, settings);
        let judged = per_context::judgments(snapshot, scale, settings, source);
        let ideal = judged
            .iter()
            .map(|pairs| per_context::ideal_gains(pairs, &list_settings))
            .collect();
        let mut split = JudgedContexts {
            list_settings,
            judged,
            ideal,
            scored: Vec::new(),
            without_relevant: 0,
            without_grades: 0,
        };
        split.split_contexts(snapshot, settings);
        split
    }

    /// Sorts the segment's contexts: with no list and no grade (ignored), graded on no
    /// pair (counted), with no relevant item (counted), or scored.
    fn split_contexts(&mut self, snapshot: &Snapshot, settings: &ScoreSettings) {
        for c in 0..snapshot.contexts.len() {
            if !per_context::context_included(snapshot, &settings.segment, c) {
                continue;
            }
            if self.judged[c].is_empty() {
                let has_any_list = snapshot.lists.iter().any(|l| !l[c].is_empty());
                self.without_grades += usize::from(has_any_list);
            } else if self.has_relevant(c) {
                self.scored.push(c);
            } else {
                self.without_relevant += 1;
            }
        }
    }

    /// Whether context `c` has a judged item above level 0.
    pub fn has_relevant(&self, c: usize) -> bool {
        self.judged[c].iter().any(|(_, level)| *level > 0)
    }

    /// One ranker's values `[metric][context]` over `contexts` (see
    /// [`per_context::ranker_values`]).
    pub fn ranker_values(
        &self,
        lists: &[Vec<u32>],
        metrics: &[Metric],
        contexts: &[usize],
    ) -> Vec<Vec<f64>> {
        per_context::ranker_values(
            lists,
            &self.judged,
            &self.ideal,
            &self.list_settings,
            metrics,
            contexts,
        )
    }
}
