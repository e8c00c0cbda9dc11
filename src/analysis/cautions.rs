//! Cautions as typed values: each is an enum value with its figures, its words are made
//! here and only here, and its stable code lets scripts act on it (`caution_codes` in
//! JSON, in the same order as `cautions`). Nothing parses a caution's text back.

use serde::ser::{SerializeMap, Serializer};

use crate::core::metrics::Unjudged;

/// Why a number beside the caution could mislead.
#[derive(Debug, Clone, PartialEq)]
pub enum Caution {
    /// Offline scores rank candidates for an online test; they do not replace it.
    OfflineOnly,
    /// The study's stored baseline names no ranker any more; `used` was compared against.
    BaselineReplaced {
        /// The baseline the study keeps.
        stored: String,
        /// The ranker used instead (the first alphabetically).
        used: String,
    },
    /// No context has a relevant item: every figure is undefined.
    NothingToScore,
    /// Fewer scored contexts than [`super::defaults::FEW_CONTEXTS`].
    FewContexts {
        /// Contexts scored.
        scored: usize,
    },
    /// A ranker's judged@k is below [`super::defaults::COVERAGE_CAUTION`].
    LowCoverage {
        /// The ranker.
        ranker: String,
        /// The cut-off.
        k: usize,
        /// Its mean judged@k.
        judged: f64,
        /// What judged@k divides by, in words ("its top 10", "its 4 returned items …").
        of: String,
        /// How unjudged items count.
        unjudged: Unjudged,
    },
    /// A ranker from a file is judged less deeply than any pooled ranker would be without
    /// its own pairs: its score is likely biased low.
    PoolBiasLow {
        /// The ranker.
        ranker: String,
        /// The file its lists came from.
        file: String,
        /// The cut-off.
        k: usize,
        /// Its judged@k.
        judged: f64,
        /// The lowest judged@k a pooled ranker keeps with its own pairs left out.
        floor: f64,
    },
    /// A ranker from a file has no list for some scored contexts; they count as empty
    /// lists (every metric 0 there).
    MissingLists {
        /// The ranker.
        ranker: String,
        /// The file its lists came from.
        file: String,
        /// Scored contexts without a list from the file.
        contexts: usize,
        /// Contexts scored.
        scored: usize,
    },
    /// A caution beside the scale trial.
    Trial(TrialCaution),
    /// One level holds most grades: kappa misleads (Feinstein & Cicchetti 1990).
    DominantLevel {
        /// The level.
        level: usize,
        /// Its share of the grades.
        share: f64,
    },
    /// Two reviewers share fewer grades than a kappa needs (Cicchetti & Fleiss 1977).
    ThinKappa {
        /// One reviewer.
        reviewer_a: String,
        /// The other.
        reviewer_b: String,
        /// Grades they share.
        shared: u64,
        /// Grades needed: 2 × levels².
        needed: u64,
        /// Levels of the scale.
        levels: usize,
    },
    /// One level holds most of two reviewers' shared grades: their kappa can be low
    /// although they mostly agree (Feinstein & Cicchetti 1990).
    PairDominantLevel {
        /// The level.
        level: usize,
        /// Its share of the pair's grades.
        share: f64,
    },
    /// Few pairs have two or more grades: the panel's intervals are wide.
    FewAgreementUnits {
        /// Pairs with two or more grades.
        units: usize,
    },
    /// A caution beside the estimates from a machine judge (`score --machine`).
    Estimate(EstimateCaution),
}

/// Why a row of the scale trial could mislead (`analysis::trial`).
#[derive(Debug, Clone, PartialEq)]
pub enum TrialCaution {
    /// Kappa is not comparable across scales with different numbers of levels.
    KappaAcrossLevelCounts,
    /// The trial's rows share one pilot sample: the pairs graded on every scale.
    SharedPilotSample,
    /// The pilot has fewer than 100 common pairs.
    FewCommonPairs {
        /// Common pairs.
        pairs: usize,
    },
    /// How wide the trial's alpha intervals are on average, and how to narrow them.
    AlphaIntervalWidth {
        /// Common pairs.
        pairs: usize,
        /// Mean half-width of the rows' alpha intervals.
        half_width: f64,
    },
    /// Some uncollapsed scales' alpha intervals overlap.
    AlphaIntervalsOverlap,
    /// Separating rankers offline picks candidates; it does not replace an online test.
    SeparationIsOffline,
    /// Reviewers with a level on some compared scales but not on all are left out of
    /// every row, so that the rows compare the scales within the same reviewers.
    ReviewersLeftOut {
        /// Their names.
        reviewers: Vec<String>,
    },
}

impl TrialCaution {
    /// The stable code scripts read.
    pub fn code(&self) -> &'static str {
        match self {
            TrialCaution::KappaAcrossLevelCounts => "kappa_across_level_counts",
            TrialCaution::SharedPilotSample => "shared_pilot_sample",
            TrialCaution::FewCommonPairs { .. } => "few_common_pairs",
            TrialCaution::AlphaIntervalWidth { .. } => "alpha_interval_width",
            TrialCaution::AlphaIntervalsOverlap => "alpha_intervals_overlap",
            TrialCaution::SeparationIsOffline => "separation_is_offline",
            TrialCaution::ReviewersLeftOut { .. } => "reviewers_left_out",
        }
    }

    /// The caution in words.
    pub fn words(&self) -> String {
        match self {
            TrialCaution::KappaAcrossLevelCounts => "Kappa values are not comparable across scales with different numbers of levels; compare Krippendorff's alpha.".into(),
            TrialCaution::SharedPilotSample => "Rows are computed on the pairs graded on every scale, so they share one pilot sample.".into(),
            TrialCaution::FewCommonPairs { pairs } => {
                format!("The pilot has only {pairs} common pairs; intervals are wide.")
            }
            TrialCaution::AlphaIntervalWidth { pairs, half_width } => format!(
                "A pilot of {pairs} pairs gives alpha intervals about ±{half_width:.2} wide; quadrupling the pairs roughly halves them."
            ),
            TrialCaution::AlphaIntervalsOverlap => "Some alpha intervals overlap: those scales are not shown to differ by this pilot.".into(),
            TrialCaution::SeparationIsOffline => "Separating rankers offline picks candidates for an online experiment; it does not replace one.".into(),
            TrialCaution::ReviewersLeftOut { reviewers } => format!(
                "{} gave no level on some of the compared scales and {} left out of every row, so that every row compares the scales within the same reviewers.",
                reviewers.join(", "),
                if reviewers.len() == 1 { "is" } else { "are" }
            ),
        }
    }
}

/// Why an estimate from a machine judge corrected by the human sample could mislead
/// (`analysis::estimates`); its words and codes are made here like every caution's.
#[derive(Debug, Clone, PartialEq)]
pub enum EstimateCaution {
    /// The interval holds only if the machine judge was not tuned on the human
    /// sample's grades.
    UntunedJudge {
        /// The machine judge.
        machine: String,
    },
    /// In estimates a context without a relevant item counts as NDCG 0, so estimates
    /// and plain means differ.
    NoRelevantCountsZero,
    /// Drawn contexts not completely graded by people are left out of the human sample.
    SamplePending {
        /// Drawn contexts still pending.
        pending: usize,
    },
    /// Fewer complete sample contexts than `few`: the normal approximation is rough.
    FewSampleContexts {
        /// Complete sample contexts.
        complete: usize,
        /// The threshold ([`super::scoring::estimates::FEW_HUMAN`]).
        few: usize,
    },
    /// Every context with lists is in the human sample (N = 0): the estimates are the
    /// human means with their classical intervals.
    WholeStudySampled,
    /// λ is below `below` for some estimates: the machine judge adds little there.
    SmallLambda {
        /// `(ranker, metric)` of each such estimate, in output order.
        estimates: Vec<(String, String)>,
        /// The threshold ([`super::scoring::estimates::SMALL_LAMBDA`]).
        below: f64,
    },
    /// Cut-offs above the pool depth reach items people were not asked to grade.
    CutoffAbovePoolDepth {
        /// The study's pool depth.
        depth: usize,
        /// The smallest cut-off above it.
        k: usize,
    },
    /// The machine judge did not grade every pool pair of the contexts estimated.
    MachineMissedPairs {
        /// The machine judge.
        machine: String,
        /// Pool pairs it graded.
        graded: usize,
        /// Pool pairs of the complete sample contexts and the machine-only ones.
        pool: usize,
    },
    /// The study counts machine judges in the panel, so the people's values include
    /// machine grades.
    MachinesInPanel,
}

impl EstimateCaution {
    /// The stable code scripts read.
    pub fn code(&self) -> &'static str {
        match self {
            EstimateCaution::UntunedJudge { .. } => "untuned_judge",
            EstimateCaution::NoRelevantCountsZero => "no_relevant_counts_zero",
            EstimateCaution::SamplePending { .. } => "sample_pending",
            EstimateCaution::FewSampleContexts { .. } => "few_sample_contexts",
            EstimateCaution::WholeStudySampled => "whole_study_sampled",
            EstimateCaution::SmallLambda { .. } => "small_lambda",
            EstimateCaution::CutoffAbovePoolDepth { .. } => "cutoff_above_pool_depth",
            EstimateCaution::MachineMissedPairs { .. } => "machine_missed_pairs",
            EstimateCaution::MachinesInPanel => "machines_in_panel",
        }
    }

    /// The caution in words.
    pub fn words(&self) -> String {
        match self {
            EstimateCaution::UntunedJudge { machine } => format!(
                "The interval is valid only if the machine judge {machine} was not tuned on these human grades."
            ),
            EstimateCaution::NoRelevantCountsZero => NO_RELEVANT_COUNTS_ZERO_WORDS.to_string(),
            EstimateCaution::SamplePending { pending } => format!(
                "{pending} drawn context{} not completely graded by people yet and {} left out of the human sample; drawn contexts left ungraded on purpose would bias the correction.",
                if *pending == 1 { " is" } else { "s are" },
                if *pending == 1 { "is" } else { "are" }
            ),
            EstimateCaution::FewSampleContexts { complete, few } => format!(
                "Only {complete} complete sample contexts: with fewer than {few} the normal approximation behind the intervals is rough."
            ),
            EstimateCaution::WholeStudySampled => "Every context with lists is in the human sample (N = 0): the estimates are the human means with their classical intervals, λ = 0.".into(),
            EstimateCaution::SmallLambda { estimates, below } => format!(
                "λ is below {below} for {}: the machine judge adds little there, and the estimate is close to the human-only mean.",
                estimates
                    .iter()
                    .map(|(ranker, metric)| format!("{ranker} {metric}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            EstimateCaution::CutoffAbovePoolDepth { depth, k } => format!(
                "Cut-offs above the pool depth {depth} (from @{k}) reach items people were not asked to grade; they count by the unjudged rule, so treat those estimates with care."
            ),
            EstimateCaution::MachineMissedPairs {
                machine,
                graded,
                pool,
            } => format!(
                "The machine judge {machine} graded {graded} of the {pool} pool pairs of these contexts; the rest count by the unjudged rule in its values."
            ),
            EstimateCaution::MachinesInPanel => "The study counts machine judges in the panel grade, so the people's values Y include machine grades; turn that off for a clean correction.".into(),
        }
    }
}

impl Caution {
    /// The stable code scripts read.
    pub fn code(&self) -> &'static str {
        match self {
            Caution::OfflineOnly => "offline_only",
            Caution::BaselineReplaced { .. } => "baseline_replaced",
            Caution::NothingToScore => "nothing_to_score",
            Caution::FewContexts { .. } => "few_contexts",
            Caution::LowCoverage { .. } => "low_coverage",
            Caution::PoolBiasLow { .. } => "pool_bias_low",
            Caution::MissingLists { .. } => "missing_lists",
            Caution::Trial(t) => t.code(),
            Caution::DominantLevel { .. } => "dominant_level",
            Caution::ThinKappa { .. } => "thin_kappa",
            Caution::PairDominantLevel { .. } => "pair_dominant_level",
            Caution::FewAgreementUnits { .. } => "few_agreement_units",
            Caution::Estimate(e) => e.code(),
        }
    }

    /// The ranker the caution is about, if it is about one.
    pub fn ranker(&self) -> Option<&str> {
        match self {
            Caution::LowCoverage { ranker, .. }
            | Caution::PoolBiasLow { ranker, .. }
            | Caution::MissingLists { ranker, .. } => Some(ranker),
            _ => None,
        }
    }

    /// The caution in words, as every output prints it.
    pub fn words(&self) -> String {
        match self {
            Caution::OfflineOnly => OFFLINE_WORDS.to_string(),
            Caution::BaselineReplaced { stored, used } => format!(
                "The study's baseline \"{stored}\" is not among the rankers any more; comparing against {used} (the first ranker alphabetically)."
            ),
            Caution::NothingToScore => NOTHING_TO_SCORE_WORDS.to_string(),
            Caution::FewContexts { scored } => format!(
                "Only {scored} {} a relevant item; intervals are wide and tests weak.",
                if *scored == 1 {
                    "context has"
                } else {
                    "contexts have"
                }
            ),
            Caution::LowCoverage {
                ranker,
                judged,
                of,
                unjudged,
                ..
            } => format!(
                "{ranker} has only {:.0} % of {of} judged; unjudged items count as {}.",
                judged * 100.0,
                match unjudged {
                    Unjudged::Zero => "gain 0",
                    Unjudged::Condense => "absent (condensed)",
                }
            ),
            Caution::PoolBiasLow {
                ranker,
                file,
                k,
                judged,
                floor,
            } => format!(
                "{ranker} (from {file}) has {:.0} % of its top {k} judged, below the {:.0} % every pooled ranker keeps without the pairs only it found: its ndcg@{k} is likely biased low. Judge the gaps (Scoreboard, \"Judge the gaps\") before trusting it.",
                judged * 100.0,
                floor * 100.0,
            ),
            Caution::MissingLists {
                ranker,
                file,
                contexts,
                scored,
            } => format!(
                "{ranker} (from {file}) has no list for {contexts} of the {scored} scored contexts; they count as empty lists, so every metric is 0 there."
            ),
            Caution::Trial(t) => t.words(),
            Caution::DominantLevel { level, share } => format!(
                "Level {level} holds {:.0} % of grades: kappa can be low even when reviewers mostly agree (Feinstein & Cicchetti 1990); read AC1 and the observed agreement beside it.",
                100.0 * share
            ),
            Caution::ThinKappa {
                reviewer_a,
                reviewer_b,
                shared,
                needed,
                levels,
            } => format!(
                "{reviewer_a} and {reviewer_b} share only {shared} grades, fewer than {needed} (2 × {levels}² for {levels} levels, Cicchetti & Fleiss 1977): their kappa gets no Landis & Koch word and its interval is not to be trusted."
            ),
            Caution::PairDominantLevel { level, share } => format!(
                "Level {level} holds {:.0} % of this pair's grades: kappa can be low although they mostly agree.",
                100.0 * share
            ),
            Caution::FewAgreementUnits { units } => {
                format!("Only {units} pairs have two or more grades; the intervals are wide.")
            }
            Caution::Estimate(e) => e.words(),
        }
    }
}

/// The words of [`Caution::OfflineOnly`].
pub const OFFLINE_WORDS: &str = "Offline judgments rank candidates for an online experiment; they do not replace it. These grades reflect this panel only, and small samples give wide intervals.";

/// The words of [`Caution::NothingToScore`].
pub const NOTHING_TO_SCORE_WORDS: &str = "No context has a relevant item yet (nothing graded above the lowest level on this scale), so no NDCG, interval or test is defined: every figure shows –. Grade the pool first.";

/// The words of [`EstimateCaution::NoRelevantCountsZero`].
pub const NO_RELEVANT_COUNTS_ZERO_WORDS: &str = "In estimates a context with no relevant item under the grades used counts as NDCG 0 (plain scores leave such contexts out; an estimate cannot, since for the machine-only contexts nobody knows whether the panel would find one), so estimates and plain means differ.";

/// A model's cautions: serialised as `cautions` (the words, as before) followed by
/// `caution_codes` (the stable codes in the same order); use with `#[serde(flatten)]`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Cautions(pub Vec<Caution>);

impl Cautions {
    /// Every caution's words, in order.
    pub fn words(&self) -> Vec<String> {
        self.0.iter().map(Caution::words).collect()
    }

    /// Every caution's code, in order.
    pub fn codes(&self) -> Vec<&'static str> {
        self.0.iter().map(Caution::code).collect()
    }

    /// Whether there is none.
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// The cautions in order.
    pub fn iter(&self) -> std::slice::Iter<'_, Caution> {
        self.0.iter()
    }
}

impl Cautions {
    /// The words under `words_key` and the codes under `codes_key`, in one map.
    fn serialize_as<S: Serializer>(
        &self,
        serializer: S,
        words_key: &str,
        codes_key: &str,
    ) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_map(Some(2))?;
        map.serialize_entry(words_key, &self.words())?;
        map.serialize_entry(codes_key, &self.codes())?;
        map.end()
    }
}

impl serde::Serialize for Cautions {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        self.serialize_as(serializer, "cautions", "caution_codes")
    }
}

/// The estimates' cautions, printed in the same JSON object as the scoreboard's own:
/// serialised as `estimate_cautions` (the words, as before) followed by
/// `estimate_caution_codes`; use with `#[serde(flatten)]`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct EstimateCautions(pub Cautions);

impl serde::Serialize for EstimateCautions {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        self.0
            .serialize_as(serializer, "estimate_cautions", "estimate_caution_codes")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn json_keeps_the_words_and_adds_the_codes_in_the_same_order() {
        #[derive(serde::Serialize)]
        struct Model {
            n: usize,
            #[serde(flatten)]
            cautions: Cautions,
        }
        let model = Model {
            n: 1,
            cautions: Cautions(vec![
                Caution::OfflineOnly,
                Caution::FewContexts { scored: 1 },
            ]),
        };
        let json = serde_json::to_value(&model).unwrap();
        assert_eq!(json["caution_codes"][1], "few_contexts");
        assert_eq!(
            json["cautions"][1],
            "Only 1 context has a relevant item; intervals are wide and tests weak."
        );
    }

    #[test]
    fn estimate_cautions_sit_beside_the_scoreboards_under_their_own_keys() {
        #[derive(serde::Serialize)]
        struct Both {
            #[serde(flatten)]
            cautions: Cautions,
            #[serde(flatten)]
            estimate_cautions: EstimateCautions,
        }
        let both = Both {
            cautions: Cautions(vec![Caution::OfflineOnly]),
            estimate_cautions: EstimateCautions(Cautions(vec![
                Caution::Estimate(EstimateCaution::SamplePending { pending: 1 }),
                Caution::Estimate(EstimateCaution::MachinesInPanel),
            ])),
        };
        let json = serde_json::to_value(&both).unwrap();
        assert_eq!(json["caution_codes"], serde_json::json!(["offline_only"]));
        assert_eq!(
            json["estimate_caution_codes"],
            serde_json::json!(["sample_pending", "machines_in_panel"])
        );
        assert_eq!(
            json["estimate_cautions"][0],
            "1 drawn context is not completely graded by people yet and is left out of the human sample; drawn contexts left ungraded on purpose would bias the correction."
        );
    }
}
