//! How the grades of several reviewers on one pair become the panel's one level when
//! nobody settled the pair. The study keeps its rule (`panel_rule` setting); scoring may
//! choose another for one run.

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

impl std::str::FromStr for PanelRule {
    type Err = String;

    fn from_str(text: &str) -> Result<PanelRule, String> {
        PanelRule::parse(text).ok_or_else(|| format!("unknown panel rule \"{text}\""))
    }
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
}
