//! The commands that bring files and other studies into a study: import and merge.

use std::path::{Path, PathBuf};

use super::Failure;
use super::commands::open;
use crate::core::text::printable;
use crate::study::import::{self, ImportSet, Source};

/// The files `plumbline import` was given.
pub(super) struct ImportPaths {
    pub items: Option<PathBuf>,
    pub contexts: Option<PathBuf>,
    pub rankings: Option<PathBuf>,
    pub scales: Option<PathBuf>,
    pub grades: Option<PathBuf>,
    pub gold: Option<PathBuf>,
}

/// `import`: every named file, all in one transaction.
pub(super) fn cmd_import(study: &Path, paths: ImportPaths) -> Result<(), Failure> {
    let read = |p: Option<PathBuf>| -> Result<Option<Source>, Failure> {
        p.map(|p| Source::from_path(&p).map_err(|e| Failure::input(e.to_string())))
            .transpose()
    };
    let set = ImportSet {
        items: read(paths.items)?,
        contexts: read(paths.contexts)?,
        rankings: read(paths.rankings)?,
        scales: read(paths.scales)?,
        grades: read(paths.grades)?,
        gold: read(paths.gold)?,
    };
    if set.items.is_none()
        && set.contexts.is_none()
        && set.rankings.is_none()
        && set.scales.is_none()
        && set.grades.is_none()
        && set.gold.is_none()
    {
        return Err(Failure::input(
            "name at least one file to import (--items, --contexts, --rankings, --scales, --grades, --gold)",
        ));
    }
    let mut study = open(study)?;
    let mut line = ProgressLine::new();
    let reports = import::import_with_progress(&mut study, &set, &mut |step| line.show(step));
    line.finish();
    let reports = reports?;
    for r in reports {
        println!(
            "{} ({}): {} added, {} updated, {} unchanged",
            r.file, r.kind, r.added, r.updated, r.unchanged
        );
        for warning in &r.warnings {
            eprintln!("plumbline: warning: {warning}");
        }
    }
    Ok(())
}

/// `merge`: every other study in turn; a refused one is reported and the rest still merged.
pub(super) fn cmd_merge(
    study: &Path,
    others: &[PathBuf],
    accept_reviewer: Vec<String>,
) -> Result<(), Failure> {
    let mut target = open(study)?;
    let mut refused = Vec::new();
    let options = crate::study::merge::MergeOptions {
        accept: accept_reviewer,
    };
    for other in others {
        match target.merge_with(other, &options) {
            Ok(r) => println!(
                "{}: {} grades, {} settled grades and {} reviewers came in",
                r.file, r.grades_added, r.settled_added, r.reviewers_added
            ),
            Err(e) => {
                eprintln!("plumbline: {e}");
                refused.push(e);
            }
        }
    }
    match refused.into_iter().next() {
        None => Ok(()),
        Some(e) => Err(Failure {
            code: if e.is_bad_input() { 2 } else { 1 },
            message: "some studies were not merged (see above)".into(),
        }),
    }
}

/// An import's progress on stderr, rewritten in place: only on a terminal, and only once
/// the import has run for more than a second (quick imports and pipelines stay quiet).
struct ProgressLine {
    started: std::time::Instant,
    terminal: bool,
    shown: bool,
    /// The file being written, when its first rows were reported, and how many.
    writing: Option<(String, std::time::Instant, u64)>,
}

impl ProgressLine {
    fn new() -> ProgressLine {
        use std::io::IsTerminal;
        ProgressLine {
            started: std::time::Instant::now(),
            terminal: std::io::stderr().is_terminal(),
            shown: false,
            writing: None,
        }
    }

    /// Rows per second of the file being written and the seconds left at that rate.
    fn rate(&mut self, step: &import::ImportStep) -> Option<(f64, f64)> {
        let now = std::time::Instant::now();
        match &self.writing {
            Some((file, since, first)) if *file == step.file => {
                let seconds = now.duration_since(*since).as_secs_f64();
                let rate = (step.rows_done - first) as f64 / seconds;
                (seconds > 0.2 && rate > 0.0)
                    .then(|| (rate, (step.rows_total - step.rows_done) as f64 / rate))
            }
            _ => {
                self.writing = Some((step.file.clone(), now, step.rows_done));
                None
            }
        }
    }

    fn show(&mut self, step: &import::ImportStep) {
        let elapsed = self.started.elapsed().as_secs_f64();
        if !self.terminal || elapsed < 1.0 {
            return;
        }
        let rows = match (step.rows_total, step.rows_done) {
            (0, _) => "reading".to_string(),
            (total, 0) => format!("checked {total} rows, writing"),
            (total, done) => match self.rate(step) {
                Some((rate, left)) => format!(
                    "{done} of {total} rows written, {rate:.0} rows/s, about {left:.0} s left"
                ),
                None => format!("{done} of {total} rows written"),
            },
        };
        eprint!(
            "\r\x1b[2Kimporting {} (file {} of {}): {rows} · {elapsed:.0} s",
            printable(&step.file),
            step.files_done + 1,
            step.files_total
        );
        self.shown = true;
    }

    fn finish(&self) {
        if self.shown {
            eprintln!(
                "\r\x1b[2Kimport finished in {:.1} s",
                self.started.elapsed().as_secs_f64()
            );
        }
    }
}
