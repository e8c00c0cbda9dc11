//! Plumbline: graded relevance judgments and offline ranker evaluation in one study file.
//!
//! Layers (data flows one way): `study` (SQLite, CSV) → `analysis` (view models) →
//! `ui` / `cli`. `core` is pure computation used by `analysis`.

// Unit tests may unwrap: a panic there is the failure report.
#![cfg_attr(test, allow(clippy::unwrap_used))]

pub mod analysis;
pub mod cli;
pub mod core;
pub mod demo;
pub mod study;
pub mod ui;
