//! View models built from a study snapshot. Screens and the command line both use these,
//! so they always show the same numbers.

pub mod agreement;
pub mod gaps;
pub mod judgments;
pub mod panel_review;
pub mod render;
pub mod report;
pub mod scoreboard;
pub mod trial;
