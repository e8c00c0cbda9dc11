//! What each screen draws, built once per snapshot on a background job and cached.

pub mod agreement_view;
pub mod catalog_model;
pub mod catalog_view;
pub mod estimates_view;
pub mod home;
pub mod own_progress;
pub mod scales_view;
pub mod scoreboard_rest;
pub mod scoreboard_view;
