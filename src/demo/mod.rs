//! The invented demo scenario: its catalog files come from a deterministic generator
//! compiled into the binary, so an installed binary can build the demo study anywhere.

pub mod generate;
mod pictograms;
mod words;

use std::path::{Path, PathBuf};

use crate::study::import::{self, ImportSet, Source};
use crate::study::sample::DrawRequest;
use crate::study::settings::keys;
use crate::study::{Study, StudyError};

/// Where the workbench keeps the demo study: the platform's data folder.
pub fn default_demo_path() -> Result<PathBuf, String> {
    let dirs = directories::ProjectDirs::from("", "", "plumbline")
        .ok_or("no home folder to keep the demo study in")?;
    Ok(dirs.data_dir().join("demo.plumb"))
}

/// The catalog folder that goes with a demo study (`demo.plumb` → `demo-catalog/`).
pub fn catalog_folder(study: &Path) -> PathBuf {
    let stem = study
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "demo".into());
    study.with_file_name(format!("{stem}-catalog"))
}

/// Builds (or rebuilds) the demo study at `path` through the ordinary import code.
/// An existing file is replaced only if it is itself a demo study.
pub fn build_demo_study(path: &Path) -> Result<(), StudyError> {
    if path.exists() {
        let existing = Study::open(path)?;
        if existing.setting(keys::DEMO)?.as_deref() != Some("true") {
            return Err(StudyError::Refused {
                path: path.display().to_string(),
                reason: "a study that is not the demo is already there; choose another --out"
                    .into(),
            });
        }
        drop(existing);
        for suffix in ["", "-wal", "-shm"] {
            let mut p = path.as_os_str().to_owned();
            p.push(suffix);
            let _ = std::fs::remove_file(PathBuf::from(p));
        }
    }
    if let Some(parent) = path.parent() {
        std::fs::create_dir_all(parent)?;
    }
    let folder = catalog_folder(path);
    generate::write_demo_catalog(&folder)?;
    let source = |name: &str| -> Result<Option<Source>, StudyError> {
        Source::from_path(&folder.join(name))
            .map(Some)
            .map_err(|e| StudyError::input(e.to_string()))
    };
    let set = ImportSet {
        items: source("items.csv")?,
        contexts: source("contexts.csv")?,
        rankings: source("rankings.csv")?,
        scales: source("scales.csv")?,
        grades: source("grades.csv")?,
        gold: source("gold.csv")?,
    };
    let mut study = Study::create(path)?;
    import::import(&mut study, &set)?;
    let machine = ImportSet {
        grades: source("machine-grades.csv")?,
        ..ImportSet::default()
    };
    import::import(&mut study, &machine)?;
    study.set_setting(keys::DEMO, "true")?;
    study.set_setting(keys::NAME, "Fennel Hollow demo")?;
    study.set_setting(keys::BASELINE, generate::BASELINE_RANKER)?;
    study.set_setting(keys::POOL_DEPTH, "10")?;
    // Every pooled pair is graded by people already, so the draw queues nothing.
    study.draw_sample(&DrawRequest {
        contexts: DEMO_SAMPLE_CONTEXTS,
        seed: Some(DEMO_SAMPLE_SEED),
        reviewers: Vec::new(),
        scale: Some("fit4".into()),
    })?;
    Ok(())
}

/// How many contexts the demo study's human sample draws.
pub const DEMO_SAMPLE_CONTEXTS: usize = 12;

/// The seed of the demo study's human sample.
pub const DEMO_SAMPLE_SEED: u64 = 20_261_120;

/// The demo study's path, building it first if it is missing (first run, or deleted).
pub fn ensure_demo_study() -> Result<PathBuf, StudyError> {
    let path = default_demo_path().map_err(|e| StudyError::Io(std::io::Error::other(e)))?;
    if !path.exists() {
        build_demo_study(&path)?;
    }
    Ok(path)
}
