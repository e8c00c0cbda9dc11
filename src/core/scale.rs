//! Graded relevance scales: levels, their validation and the built-in presets.

use serde::{Deserialize, Serialize};

/// Most levels a scale may have. Graded relevance scales in use have two to six levels;
/// the cap keeps every level value inside the `u8` the engines use, with room to spare.
pub const MAX_LEVELS: usize = 32;

/// Keys the grading desk keeps for itself (skip, can't judge, back, note, arrows,
/// undo, cancel, help); a level cannot use them.
pub const DESK_KEYS: &[&str] = &[
    "S",
    "C",
    "B",
    "N",
    "Left",
    "Right",
    "ArrowLeft",
    "ArrowRight",
    "Backspace",
    "Escape",
    "Esc",
    "Enter",
    "Return",
    "F1",
    "?",
];

/// True when `key` (any case) is one of `DESK_KEYS`.
pub fn is_desk_key(key: &str) -> bool {
    let key = key.trim();
    DESK_KEYS.iter().any(|k| k.eq_ignore_ascii_case(key))
}

/// The largest gain a level may carry. DCG sums gains over a list and the statistics
/// square differences of such sums; at 1e12 a list of a million items squared stays
/// far inside f64's range (1e308), while every exponential gain of a 32-level scale
/// (2^31 − 1) fits.
pub const MAX_GAIN: f64 = 1e12;

/// Why a level's gain cannot be used, or None when it can.
pub fn gain_problem(gain: f64) -> Option<String> {
    if !gain.is_finite() {
        Some("gain must be a finite number".into())
    } else if gain < 0.0 {
        Some("gain must not be negative".into())
    } else if gain > MAX_GAIN {
        Some(format!(
            "gain {gain} is above the largest usable gain {MAX_GAIN:e}: sums and squares of such gains would overflow; scale the gains down (NDCG does not change when every gain is multiplied by one factor)"
        ))
    } else {
        None
    }
}

/// True when gains given for consecutive levels fall somewhere as the level rises.
pub fn gains_fall(gains: &[Option<f64>]) -> bool {
    let given: Vec<f64> = gains.iter().flatten().copied().collect();
    given.windows(2).any(|w| w[1] < w[0])
}

/// One level of a scale.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Level {
    /// The level's number, from 0; equal to its position in the scale.
    pub value: u8,
    /// Short name of the level, shown wherever the level is named.
    pub label: String,
    /// The gain this level carries in DCG; None = the study's gain rule (2^v − 1 or v).
    pub gain: Option<f64>,
    /// Keyboard key that gives this level on the grading desk.
    pub key: String,
    /// Guidance for reviewers on when to give this level, shown on the grading desk.
    pub rubric: String,
    /// `#rrggbb`, or empty for the default palette.
    pub colour: String,
}

/// A graded relevance scale with levels 0..n−1.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Scale {
    /// Name of the scale; unique within a study.
    pub name: String,
    /// The levels in value order (level i has value i).
    pub levels: Vec<Level>,
}

impl Scale {
    /// Highest level value: number of levels − 1 (0 for a scale without levels).
    pub fn max_level(&self) -> u8 {
        self.levels.len().saturating_sub(1) as u8
    }

    /// Each level's own gain, None where the study's gain rule applies.
    pub fn gains(&self) -> Vec<Option<f64>> {
        self.levels.iter().map(|l| l.gain).collect()
    }

    /// Label of level `value`, or "?" when the scale has no such level.
    pub fn label(&self, value: u8) -> &str {
        self.levels
            .get(value as usize)
            .map_or("?", |l| l.label.as_str())
    }

    /// Every rule the scale breaks, in words a scale designer can act on.
    pub fn problems(&self) -> Vec<String> {
        let mut problems = Vec::new();
        if self.name.trim().is_empty() {
            problems.push("the scale needs a name".to_string());
        }
        if self.levels.len() < 2 {
            problems.push("a scale needs at least two levels".to_string());
        }
        if self.levels.len() > MAX_LEVELS {
            problems.push(format!("a scale may have at most {MAX_LEVELS} levels"));
        }
        for (i, level) in self.levels.iter().enumerate() {
            if level.value as usize != i {
                problems.push(format!(
                    "values must run 0, 1, 2… without gaps; found {} where {} was expected",
                    level.value, i
                ));
                break;
            }
        }
        for level in &self.levels {
            if level.label.trim().is_empty() {
                problems.push(format!("level {} has no label", level.value));
            }
        }
        for (i, a) in self.levels.iter().enumerate() {
            if a.key.is_empty() {
                continue;
            }
            if self.levels[..i].iter().any(|b| b.key == a.key) {
                problems.push(format!("key \"{}\" is used by more than one level", a.key));
            }
            if is_desk_key(&a.key) {
                problems.push(format!(
                    "key \"{}\" is kept by the grading desk ({}); choose another",
                    a.key,
                    DESK_KEYS.join(" ")
                ));
            }
        }
        let gains: Vec<f64> = self.levels.iter().filter_map(|l| l.gain).collect();
        if gains_fall(&self.gains()) {
            problems.push("gains must not decrease as the level rises".to_string());
        }
        if let Some(problem) = gains.iter().find_map(|g| gain_problem(*g)) {
            problems.push(problem);
        }
        problems
    }
}

fn level(value: u8, label: &str, rubric: &str) -> Level {
    Level {
        value,
        label: label.to_string(),
        gain: None,
        key: value.to_string(),
        rubric: rubric.to_string(),
        colour: String::new(),
    }
}

/// The project's own starting points for 2-, 3-, 4- and 5-level scales.
pub fn preset(levels: usize) -> Option<Scale> {
    let (name, defs): (&str, &[(&str, &str)]) = match levels {
        2 => (
            "binary",
            &[
                (
                    "Not useful",
                    "A shopper would not want to see this item here.",
                ),
                ("Useful", "A shopper would be glad to see this item here."),
            ],
        ),
        3 => (
            "three-step",
            &[
                ("Off target", "Unrelated to what the shopper asked for."),
                (
                    "Partly fits",
                    "Related, but misses something the shopper asked for.",
                ),
                ("Fits", "What the shopper asked for."),
            ],
        ),
        4 => (
            "four-step",
            &[
                ("Off target", "Unrelated to what the shopper asked for."),
                (
                    "Loosely related",
                    "Same broad area, but not what was asked for.",
                ),
                (
                    "Good alternative",
                    "Not exactly it, but a shopper could take it instead.",
                ),
                ("Spot on", "Exactly what the shopper asked for."),
            ],
        ),
        5 => (
            "five-step",
            &[
                ("Off target", "Unrelated to what the shopper asked for."),
                ("Faint link", "Shares a word or a category, little else."),
                (
                    "Loosely related",
                    "Same broad area, but not what was asked for.",
                ),
                (
                    "Good alternative",
                    "Not exactly it, but a shopper could take it instead.",
                ),
                ("Spot on", "Exactly what the shopper asked for."),
            ],
        ),
        _ => return None,
    };
    Some(Scale {
        name: name.to_string(),
        levels: defs
            .iter()
            .enumerate()
            .map(|(v, (label, rubric))| level(v as u8, label, rubric))
            .collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn presets_are_valid() {
        for n in 2..=5 {
            assert!(preset(n).unwrap().problems().is_empty(), "preset {n}");
        }
    }

    #[test]
    fn duplicate_keys_and_falling_gains_are_reported() {
        let mut s = preset(3).unwrap();
        s.levels[2].key = "1".into();
        s.levels[0].gain = Some(2.0);
        s.levels[1].gain = Some(1.0);
        let p = s.problems();
        assert!(p.iter().any(|m| m.contains("key \"1\"")), "{p:?}");
        assert!(p.iter().any(|m| m.contains("decrease")), "{p:?}");
    }
}
