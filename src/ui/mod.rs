//! The workbench window. Screens draw from cached view models; loading and computing
//! happen on background threads (see `jobs`), never inside `ui()`.

mod home;
pub mod jobs;
pub mod shell;

use std::path::PathBuf;

use crate::cli::{Failure, ScreenName};

pub use shell::Workbench;

/// Opens the window on a study (or the remembered / demo study) and runs until closed.
pub fn run_workbench(study: Option<PathBuf>, screen: ScreenName) -> Result<(), Failure> {
    let path = match study {
        Some(p) => p,
        None => crate::demo::ensure_demo_study().map_err(|e| Failure::other(e.to_string()))?,
    };
    if !path.exists() {
        return Err(Failure::input(format!("{}: no such study", path.display())));
    }
    let options = eframe::NativeOptions {
        viewport: egui::ViewportBuilder::default()
            .with_inner_size([1280.0, 800.0])
            .with_min_inner_size([800.0, 500.0])
            .with_title(window_title(&path)),
        ..Default::default()
    };
    eframe::run_native(
        "Plumbline",
        options,
        Box::new(move |cc| Ok(Box::new(Workbench::new(cc.egui_ctx.clone(), path, screen)))),
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
