//! Benchmarks: every test here is ignored, prints figures against a peer run in the same
//! process and asserts no timings. Run one with
//! `cargo test --release --test bench -- --ignored --nocapture MODULE`.

#![allow(clippy::unwrap_used)]

mod bench_import;
mod bench_merge;
mod bench_scoring;
mod bench_store_bound;
mod ui_bench;
