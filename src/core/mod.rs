//! Pure computation: metrics, agreement, statistics, pooling and scales.
//! Nothing here touches the screen or the study file, so it is easy to test and reuse.

pub mod agreement;
pub mod gaps;
pub mod metrics;
pub mod pooling;
pub mod scale;
pub mod settle_rules;
pub mod stats;
