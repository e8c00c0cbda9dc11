//! The commands that bring files and other studies into a study: import and merge.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

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
    let mut line = ProgressLine::on_terminal();
    let reports = import::import_with_progress(&mut study, &set, &mut |step| {
        if let Some(line) = &mut line {
            line.show(step, Instant::now());
        }
    });
    if let Some(line) = &mut line {
        line.finish(Instant::now());
    }
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
/// the import has run for more than [`QUIET_FOR`] (quick imports and pipelines stay
/// quiet). It shows the rows read, their rate and the expected end of the file.
struct ProgressLine<W: std::io::Write> {
    out: W,
    started: Instant,
    quiet_for: Duration,
    shown: bool,
    /// The file being read, when its first step came, and its bytes then.
    reading: Option<(String, Instant, u64)>,
}

/// How long an import runs before its progress is shown.
const QUIET_FOR: Duration = Duration::from_secs(1);

impl ProgressLine<std::io::Stderr> {
    /// The line on stderr, or None when stderr is not a terminal.
    fn on_terminal() -> Option<ProgressLine<std::io::Stderr>> {
        use std::io::IsTerminal;
        let err = std::io::stderr();
        err.is_terminal()
            .then(|| ProgressLine::new(err, Instant::now(), QUIET_FOR))
    }
}

impl<W: std::io::Write> ProgressLine<W> {
    fn new(out: W, started: Instant, quiet_for: Duration) -> ProgressLine<W> {
        ProgressLine {
            out,
            started,
            quiet_for,
            shown: false,
            reading: None,
        }
    }

    fn show(&mut self, step: &import::ImportStep, now: Instant) {
        let elapsed = now.duration_since(self.started);
        let text = self.text(step, now);
        if elapsed < self.quiet_for {
            return;
        }
        // A progress line that cannot be written is no reason to stop the import.
        let _ = write!(
            self.out,
            "\r\x1b[2Kimporting {} (file {} of {}): {text} · {:.0} s",
            printable(&step.file),
            step.files_done + 1,
            step.files_total,
            elapsed.as_secs_f64()
        );
        let _ = self.out.flush();
        self.shown = true;
    }

    /// What the line says of the file: rows read, their rate and the time left, by the
    /// bytes read so far.
    fn text(&mut self, step: &import::ImportStep, now: Instant) -> String {
        if step.finishing {
            return format!(
                "{} rows read; building indexes and current grades",
                step.rows_done
            );
        }
        let (since, bytes_then) = match &self.reading {
            Some((file, since, bytes)) if *file == step.file => (*since, *bytes),
            _ => {
                self.reading = Some((step.file.clone(), now, step.bytes_done));
                (now, step.bytes_done)
            }
        };
        let mut text = format!("{} rows", step.rows_done);
        let seconds = now.duration_since(since).as_secs_f64();
        if seconds < 0.2 || step.bytes_done <= bytes_then {
            return text;
        }
        let byte_rate = (step.bytes_done - bytes_then) as f64 / seconds;
        let row_rate = step.rows_done as f64 / now.duration_since(since).as_secs_f64().max(1e-3);
        text.push_str(&format!(", {row_rate:.0} rows/s"));
        if step.bytes_total > step.bytes_done {
            let left = (step.bytes_total - step.bytes_done) as f64 / byte_rate;
            let share = 100.0 * step.bytes_done as f64 / step.bytes_total as f64;
            text.push_str(&format!(", {share:.0}%, about {left:.0} s left"));
        }
        text
    }

    fn finish(&mut self, now: Instant) {
        if self.shown {
            let _ = writeln!(
                self.out,
                "\r\x1b[2Kimport finished in {:.1} s",
                now.duration_since(self.started).as_secs_f64()
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn step(rows: u64, bytes: u64) -> import::ImportStep {
        import::ImportStep {
            file: "grades.csv".into(),
            files_done: 1,
            files_total: 2,
            rows_done: rows,
            bytes_done: bytes,
            bytes_total: 1_000_000,
            finishing: false,
        }
    }

    fn shown(line: &ProgressLine<Vec<u8>>) -> String {
        String::from_utf8_lossy(&line.out).into_owned()
    }

    #[test]
    fn a_quick_import_stays_quiet() {
        let t0 = Instant::now();
        let mut line = ProgressLine::new(Vec::new(), t0, QUIET_FOR);
        line.show(&step(0, 0), t0);
        line.show(&step(10_000, 100_000), t0 + Duration::from_millis(500));
        line.finish(t0 + Duration::from_millis(600));
        assert_eq!(shown(&line), "");
    }

    #[test]
    fn a_slow_import_shows_rows_rate_and_the_time_left() {
        let t0 = Instant::now();
        let mut line = ProgressLine::new(Vec::new(), t0, QUIET_FOR);
        line.show(&step(0, 0), t0);
        // Two seconds in: 200 000 rows in 400 000 of 1 000 000 bytes, so three more
        // seconds at that pace.
        line.show(&step(200_000, 400_000), t0 + Duration::from_secs(2));
        let text = shown(&line);
        assert!(
            text.ends_with(
                "importing grades.csv (file 2 of 2): 200000 rows, 100000 rows/s, 40%, about 3 s left · 2 s"
            ),
            "{text:?}"
        );
        line.show(
            &import::ImportStep {
                finishing: true,
                ..step(500_000, 1_000_000)
            },
            t0 + Duration::from_secs(5),
        );
        line.finish(t0 + Duration::from_secs(6));
        let text = shown(&line);
        assert!(
            text.contains("500000 rows read; building indexes and current grades · 5 s"),
            "{text:?}"
        );
        assert!(text.ends_with("import finished in 6.0 s\n"), "{text:?}");
    }
}
