//! The workbench window. Screens draw from cached view models; loading and computing
//! happen on background threads (see `jobs`), never inside `ui()`. The one exception
//! by design is committing a grade on the desk: one small transaction.

pub mod agreement;
pub mod catalog;
pub mod desk;
pub mod frame;
pub mod home;
pub mod image_cache;
pub mod jobs;
pub mod merge_panel;
pub mod own_view;
pub mod palette;
pub mod scales;
pub mod scoreboard;
pub mod trial;

use std::path::PathBuf;

use crate::study::StudyError;

pub use frame::shell::Workbench;
pub use frame::study_picker::Prefs;

/// The workbench's screens, in the order of the rail.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Screen {
    #[default]
    Home,
    Catalog,
    Scales,
    Desk,
    Agreement,
    Scoreboard,
    Trial,
    /// A signed-in reviewer's own progress.
    Progress,
    /// Every scale's levels, read only (for a signed-in reviewer).
    Rubric,
}

/// Why the window did not open.
#[derive(Debug, thiserror::Error)]
pub enum WorkbenchError {
    /// The study named (or remembered) cannot be used.
    #[error(transparent)]
    Study(#[from] StudyError),
    /// The study file is not there.
    #[error("{0}: no such study")]
    Missing(String),
    /// The demo study could not be made.
    #[error("{0}")]
    Demo(String),
    /// eframe could not start a window (no display, no OpenGL).
    #[error("the window could not start: {0}")]
    Window(String),
}

impl WorkbenchError {
    /// Whether the user named something wrong (as opposed to the machine failing).
    pub fn is_bad_input(&self) -> bool {
        match self {
            WorkbenchError::Study(e) => e.is_bad_input(),
            WorkbenchError::Missing(_) => true,
            WorkbenchError::Demo(_) | WorkbenchError::Window(_) => false,
        }
    }
}

/// Opens the window on a study (else the last study, else the demo study) and runs
/// until closed; signed out, unless `reviewer` is named to be signed in at once.
pub fn run_workbench(
    study: Option<PathBuf>,
    screen: Screen,
    reviewer: Option<String>,
) -> Result<(), WorkbenchError> {
    let prefs = Prefs::load(Prefs::default_file());
    let path = match study.or_else(|| prefs.last_study()) {
        Some(p) => p,
        None => {
            crate::demo::ensure_demo_study().map_err(|e| WorkbenchError::Demo(e.to_string()))?
        }
    };
    if !path.exists() {
        return Err(WorkbenchError::Missing(path.display().to_string()));
    }
    crate::study::Study::open(&path)?;
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
        Box::new(move |_cc| {
            let mut workbench = Workbench::with_prefs(path, screen, prefs);
            workbench.sign_in_at_start = reviewer;
            Ok(Box::new(workbench))
        }),
    )
    .map_err(|e| WorkbenchError::Window(e.to_string()))
}

pub fn window_title(path: &std::path::Path) -> String {
    let name = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    format!("{name} — Plumbline")
}
