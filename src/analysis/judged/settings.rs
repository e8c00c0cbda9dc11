//! Everything that decides the numbers of a scoring pass, printed beside them in every
//! export: which grades, which gains, which contexts, how intervals are drawn.

use serde::Serialize;

use crate::analysis::defaults;
use crate::analysis::judged::judgments::{self, GradeSource};
use crate::analysis::judged::segment::Segment;
use crate::core::metrics::{GainKind, Unjudged};

/// Everything that decides the numbers; printed beside them in every export.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct ScoreSettings {
    /// Name of the scale to score; None = the scale with the most grades.
    pub scale: Option<String>,
    /// Cut-offs k to score at, each at least 1 (default [`defaults::CUTOFFS`]).
    pub ks: Vec<usize>,
    /// Gain rule for levels the scale gives no gain of its own.
    pub gain: GainKind,
    /// Whose grades are scored: the panel's or one reviewer's.
    pub grades: GradeSource,
    /// Whether unjudged items in a list count as gain 0 or are dropped before cutting at k.
    pub unjudged: Unjudged,
    /// Ranker the others are compared against. As asked for when building; in a built
    /// scoreboard, the baseline actually used (see [`resolve_baseline`]).
    pub baseline: Option<String>,
    /// Which items carry gain and which contexts count.
    pub segment: Segment,
    /// How an unsettled pair's panel levels become one level.
    pub panel_grade: judgments::PanelRule,
    /// Level from which an item is relevant for precision and RR.
    pub relevant_from: u8,
    /// RBP's persistence p (Moffat & Zobel 2008), strictly between 0 and 1 (default
    /// [`defaults::RBP_PERSISTENCE`]).
    #[serde(default = "defaults::rbp_persistence")]
    pub persistence: f64,
    /// Bootstrap resamples of contexts behind every interval (default
    /// [`defaults::SCORE_BOOTSTRAP`]).
    pub bootstrap_resamples: usize,
    /// Random sign flips behind each randomization p-value when there are too many
    /// non-zero differences for the exact test (default [`defaults::SCORE_RANDOMIZATION`]).
    pub randomization_resamples: usize,
    /// Base seed of every resampling; each purpose derives its own seed from it.
    pub seed: u64,
}

impl Default for ScoreSettings {
    fn default() -> Self {
        ScoreSettings {
            scale: None,
            ks: defaults::CUTOFFS.to_vec(),
            gain: GainKind::Exponential,
            grades: GradeSource::Panel,
            unjudged: Unjudged::Zero,
            baseline: None,
            segment: Segment::All,
            panel_grade: judgments::PanelRule::LowerMedian,
            relevant_from: 1,
            persistence: defaults::RBP_PERSISTENCE,
            bootstrap_resamples: defaults::SCORE_BOOTSTRAP,
            randomization_resamples: defaults::SCORE_RANDOMIZATION,
            seed: defaults::SEED,
        }
    }
}
