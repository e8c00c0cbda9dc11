//! Rules that turn a disagreeing pair's levels into one settled level, for settling the
//! pairs a lead did not settle by hand.

use serde::Serialize;

use crate::core::panel_rule::PanelRule;

/// A bulk settling rule. Each gives a level that at least one reviewer chose.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum SettleRule {
    /// The study's panel rule (lower median unless the study chose another): the level
    /// panel scoring already gives the pair, made final.
    Median,
    /// The most frequent level; a tie goes to the lower level.
    Majority,
    /// The lowest level any reviewer gave.
    Strictest,
}

impl SettleRule {
    /// Every rule, in the order their buttons are offered.
    pub const ALL: [SettleRule; 3] = [
        SettleRule::Median,
        SettleRule::Majority,
        SettleRule::Strictest,
    ];

    /// The name stored in `settle_events.method`.
    pub fn method(self) -> &'static str {
        match self {
            SettleRule::Median => "median",
            SettleRule::Majority => "majority",
            SettleRule::Strictest => "strictest",
        }
    }

    /// One line on what the rule does, shown beside its button.
    pub fn explain(self) -> &'static str {
        match self {
            SettleRule::Median => "the study's panel rule (what panel scoring already uses)",
            SettleRule::Majority => "most frequent level; a tie goes to the lower level",
            SettleRule::Strictest => "lowest level any reviewer gave",
        }
    }

    /// The settled level for `levels` (can't-judge already left out) when the study's
    /// panel rule is `panel`; None when empty.
    pub fn apply(self, levels: &[u8], panel: PanelRule) -> Option<u8> {
        if levels.is_empty() {
            return None;
        }
        let mut sorted = levels.to_vec();
        sorted.sort_unstable();
        Some(match self {
            SettleRule::Median => panel.apply(&mut sorted)?,
            SettleRule::Strictest => sorted[0],
            SettleRule::Majority => {
                let mut best = (0usize, sorted[0]);
                let mut i = 0;
                while i < sorted.len() {
                    let run = sorted[i..].iter().take_while(|v| **v == sorted[i]).count();
                    // Ascending walk + strict `>` keeps the lower level on a tie.
                    if run > best.0 {
                        best = (run, sorted[i]);
                    }
                    i += run;
                }
                best.1
            }
        })
    }
}

/// max − min of the levels; 0 when they all agree (or there are none).
pub fn spread(levels: &[u8]) -> u8 {
    match (levels.iter().min(), levels.iter().max()) {
        (Some(lo), Some(hi)) => hi - lo,
        _ => 0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rules_on_small_cases() {
        let lower = PanelRule::LowerMedian;
        assert_eq!(SettleRule::Median.apply(&[3, 1], lower), Some(1));
        assert_eq!(
            SettleRule::Median.apply(&[3, 1], PanelRule::UpperMedian),
            Some(3)
        );
        assert_eq!(SettleRule::Median.apply(&[2, 0, 3], lower), Some(2));
        assert_eq!(SettleRule::Majority.apply(&[2, 3, 3], lower), Some(3));
        assert_eq!(SettleRule::Majority.apply(&[3, 1], lower), Some(1));
        assert_eq!(SettleRule::Majority.apply(&[0, 2, 2, 0, 3], lower), Some(0));
        assert_eq!(SettleRule::Strictest.apply(&[2, 3, 1], lower), Some(1));
        assert_eq!(SettleRule::Strictest.apply(&[], lower), None);
        assert_eq!(spread(&[1, 3, 2]), 2);
        assert_eq!(spread(&[]), 0);
    }
}
