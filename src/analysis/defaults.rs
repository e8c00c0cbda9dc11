//! The one home of every default a figure depends on. The command line, the screens and
//! the report read these, so a figure is the same wherever it is shown.

/// Seed of every resampling (bootstrap, randomization tests): the same study and settings
/// give the same intervals and p-values every time, on every machine.
pub const SEED: u64 = 20_261_201;

/// Cut-offs scored when none are chosen.
pub const CUTOFFS: [usize; 3] = [5, 10, 20];

/// RBP's persistence p: a reader goes on to the next item four times in five (the
/// middle of the values Moffat & Zobel 2008 discuss, 0.5 to 0.95; common practice).
pub const RBP_PERSISTENCE: f64 = 0.8;

/// [`RBP_PERSISTENCE`] as a function, for serde defaults of older saved settings.
pub fn rbp_persistence() -> f64 {
    RBP_PERSISTENCE
}

/// Bootstrap resamples behind a scoreboard interval (common practice: 1000–2000 for a
/// 95 % percentile interval).
pub const SCORE_BOOTSTRAP: usize = 2000;

/// Randomization-test resamples behind a paired comparison's p-value; 10 000 keeps the
/// Monte Carlo error of p near 0.05 at about ±0.004 (binomial standard error).
pub const SCORE_RANDOMIZATION: usize = 10_000;

/// Bootstrap resamples behind Krippendorff's alpha's interval on the Agreement screen,
/// `plumbline agree` and the report.
pub const AGREEMENT_BOOTSTRAP: usize = 1000;

/// Bootstrap resamples behind each piloted scale's figures in the scale trial.
pub const TRIAL_BOOTSTRAP: usize = 2000;

/// Pairs per reviewer and scale the Scales screen proposes for a pilot, before the lead
/// changes the number; the Scale trial then says how wide the pilot's intervals came out.
pub const PILOT_PAIRS: usize = 50;

/// judged@k below this share of the top k earns a coverage caution.
pub const COVERAGE_CAUTION: f64 = 0.9;

/// Fewer contexts with a relevant item than this earns a "wide intervals" caution.
pub const FEW_CONTEXTS: usize = 30;

/// Shared grades per cell of a q × q agreement table a reviewer pair needs before its
/// kappa gets a Landis & Koch word: at least 2·q² shared grades for q levels (32 on a
/// four-level scale, 8 on a binary one). Cicchetti & Fleiss (1977), Applied
/// Psychological Measurement 1(2), found the large-sample variance of (weighted) kappa
/// usable from about 2q² graded subjects (from memory; the rule of thumb is repeated in
/// Fleiss, Levin & Paik 2003, ch. 18). Below it the pair's kappa carries a caution.
pub const KAPPA_GRADES_PER_CELL: u64 = 2;

/// The fewest shared grades a reviewer pair needs on a scale of `levels` levels before its
/// kappa is read against the Landis & Koch bands (see [`KAPPA_GRADES_PER_CELL`]).
pub fn kappa_min_shared(levels: usize) -> u64 {
    KAPPA_GRADES_PER_CELL * (levels * levels) as u64
}

/// Grades a reviewer must have given on a scale before the desk states a pace in grades
/// per hour: with fewer, one slow or quick card moves the figure by a large share
/// (common practice: ten or more timings before quoting a rate).
pub const PACE_MIN_GRADES: u64 = 10;

/// The cut-off the single-k columns (precision, ERR) and the screen's focus use: 10 when
/// it is scored, else the first cut-off asked for.
pub fn focus_k(ks: &[usize]) -> usize {
    if ks.contains(&10) {
        10
    } else {
        ks.first().copied().unwrap_or(10)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn focus_is_ten_when_scored_else_the_first_cutoff() {
        assert_eq!(focus_k(&[5, 10, 20]), 10);
        assert_eq!(focus_k(&[3, 20]), 3);
        assert_eq!(focus_k(&[]), 10);
    }

    #[test]
    fn kappa_needs_two_q_squared_shared_grades() {
        // Cicchetti & Fleiss (1977): 2q² subjects for q categories (from memory).
        assert_eq!(kappa_min_shared(4), 32);
        assert_eq!(kappa_min_shared(2), 8);
    }
}
