//! Scores from judged contexts: the scoreboard with intervals and paired tests, pool
//! bias, estimates from a machine judge corrected by a human sample, and the scale trial.

pub mod estimates;
pub mod gaps;
pub mod human_sample;
pub mod pool_bias;
pub mod scoreboard;
pub mod trial;
