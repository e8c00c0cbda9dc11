//! The workbench window. Screens draw from cached view models; loading and computing
//! happen on background threads (see `jobs`), never inside `ui()`. The one exception
//! by design is committing a grade on the desk: one small transaction.

pub mod agreement;
pub mod catalog;
pub mod desk;
pub mod home;
pub mod image_cache;
pub mod jobs;
pub mod merge_panel;
pub mod scale_editor;
pub mod scales;
pub mod scoreboard;
pub mod scoreboard_model;
pub mod scoreboard_plots;
pub mod scoreboard_tables;
pub mod settling;
pub mod shell;
pub mod sign_in;
pub mod study_picker;
pub mod trial;

use std::path::PathBuf;

use crate::cli::{Failure, ScreenName};

pub use shell::Workbench;
pub use study_picker::Prefs;

/// Opens the window on a study (else the last study, else the demo study) and runs
/// until closed.
pub fn run_workbench(study: Option<PathBuf>, screen: ScreenName) -> Result<(), Failure> {
    let prefs = Prefs::load(Prefs::default_file());
    let path = match study.or_else(|| prefs.last_study()) {
        Some(p) => p,
        None => crate::demo::ensure_demo_study().map_err(|e| Failure::other(e.to_string()))?,
    };
    if !path.exists() {
        return Err(Failure::input(format!("{}: no such study", path.display())));
    }
    crate::study::Study::open(&path).map_err(|e| {
        if e.is_bad_input() {
            Failure::input(e.to_string())
        } else {
            Failure::other(e.to_string())
        }
    })?;
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_inner_size([1360.0, 860.0])
            .with_min_inner_size([900.0, 560.0])
            .with_title(window_title(&path)),
        ..Default::default()
    };
    eframe::run_native(
        "Plumbline",
        options,
        Box::new(move |_cc| Ok(Box::new(Workbench::with_prefs(path, screen, prefs)))),
    )
    .map_err(|e| Failure::other(format!("the window could not start: {e}")))
}

pub fn window_title(path: &std::path::Path) -> String {
    let name = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    format!("{name} — Plumbline")
}
