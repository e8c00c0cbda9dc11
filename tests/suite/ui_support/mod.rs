//! Shared helpers for the egui_kittest tests that drive the real workbench.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use egui_kittest::Harness;
use plumbline::ui::Screen;
use plumbline::ui::Workbench;

pub type Bench = Harness<'static, Workbench>;

/// A fresh demo study in a temporary folder (keep the folder alive while testing).
pub fn demo_copy() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    (dir, path)
}

/// The workbench on `path`, opened at `screen`, in a window of the screenshots' size.
pub fn harness(path: &Path, screen: Screen) -> Bench {
    Harness::builder()
        .with_size([1360.0, 860.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.to_path_buf(), screen),
        )
}

/// Steps frames until `done` holds (background jobs run on threads meanwhile).
pub fn step_until(h: &mut Bench, what: &str, done: impl Fn(&Bench) -> bool) {
    step_until_within(h, what, 20, done);
}

/// `step_until` with its own limit, for jobs that take long on a busy machine.
pub fn step_until_within(h: &mut Bench, what: &str, seconds: u64, done: impl Fn(&Bench) -> bool) {
    let start = Instant::now();
    while !done(h) {
        assert!(
            start.elapsed() < Duration::from_secs(seconds),
            "timed out after {seconds} s waiting for {what}"
        );
        h.step();
        std::thread::sleep(Duration::from_millis(2));
    }
}
