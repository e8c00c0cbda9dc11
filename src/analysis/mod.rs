//! View models built from a study snapshot. Screens and the command line both use these,
//! so they always show the same numbers.
//!
//! Rooms, with arrows one way (a room imports only the rooms above it and the leaves):
//! - leaves: [`defaults`], [`cautions`], [`format`], [`colours`];
//! - [`judged`]: grades → one level per pair, gains, ideal orderings (judged contexts);
//! - [`agreement`]: how reviewers agree, their quality against gold and panel;
//! - [`scoring`]: the scoreboard, pool bias, estimates from a machine judge, the trial;
//! - [`views`]: what each screen draws, cached;
//! - [`output`]: text, report and pictures made from the models (models never import it).

#![warn(missing_docs)]

pub mod agreement;
pub mod cautions;
pub mod colours;
pub mod defaults;
pub mod format;
pub mod judged;
pub mod output;
pub mod scoring;
pub mod views;
