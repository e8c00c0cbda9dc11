//! Pure computation: metrics, agreement, statistics, pooling and scales.
//! Nothing here touches the screen or the study file, so it is easy to test and reuse.

#![warn(missing_docs)]

pub mod agreement;
pub mod digest;
pub mod fast_hash;
pub mod gaps;
pub mod metric_table;
pub mod metrics;
pub mod panel_rule;
pub mod pooling;
pub mod ppi;
pub mod rng;
pub mod scale;
pub mod settle_rules;
pub mod stats;
pub mod text;
