//! View models built from a study snapshot. Screens and the command line both use these,
//! so they always show the same numbers.

#![warn(missing_docs)]

pub mod agreement;
pub mod agreement_view;
pub mod catalog_view;
pub mod cautions;
pub mod colours;
pub mod defaults;
pub mod estimates;
pub mod estimates_text;
pub mod estimates_view;
pub mod format;
pub mod gaps;
pub mod home;
pub mod human_sample;
pub mod judgments;
pub mod own_progress;
pub mod panel_review;
pub mod per_context;
pub mod pool_bias;
pub mod render;
pub mod report;
pub mod report_estimates;
pub mod report_pictures;
pub mod reviewer_quality;
pub mod scoreboard;
pub mod scoreboard_cautions;
pub mod scoreboard_view;
pub mod segment;
pub mod trial;
