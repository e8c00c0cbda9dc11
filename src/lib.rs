//! Plumbline: graded relevance judgments and offline ranker evaluation in one study file.
//!
//! Layers (data flows one way): `study` (SQLite, CSV) → `analysis` (view models) →
//! `ui` / `cli`. `core` is pure computation used by `analysis`.

pub mod analysis;
pub mod cli;
pub mod core;
pub mod demo;
pub mod study;
pub mod ui;
