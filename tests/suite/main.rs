//! The integration tests, in one binary so the GUI stack is linked once. Each module is
//! one area; `common` and `ui_support` hold the shared fixtures and harness helpers.

#![allow(clippy::unwrap_used)]

mod architecture;
mod catalog_view;
mod cli;
mod cli_conventions;
mod common;
mod demo;
mod engines;
mod export;
mod fuzz_import;
mod gaps;
mod golden;
mod human_sample;
mod import;
mod import_limits;
mod merge;
mod migration;
mod panel_review;
mod pilot;
mod ppi_estimates;
mod properties;
mod published_examples;
mod rankings_file;
mod reference_libraries;
mod reliability;
mod report;
mod reviewer_quality;
mod scales;
mod settle;
mod side_doors;
mod side_doors_input;
mod side_doors_merge;
mod store;
mod trial;
mod ui_agreement;
mod ui_catalog;
mod ui_desk;
mod ui_desk_saving;
mod ui_estimates;
mod ui_home;
mod ui_merge;
mod ui_no_nan;
mod ui_pair_detail;
mod ui_pilot;
mod ui_quality;
mod ui_read_only;
mod ui_scales;
mod ui_scoreboard;
mod ui_scoreboard_layout;
mod ui_support;
mod ui_titles;
