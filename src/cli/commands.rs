//! What each command does.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::{Command, Failure, Format};
use crate::analysis::{agreement, render, scoreboard, trial};
use crate::core::text::printable;
use crate::study::import::{self, ImportSet, Source};
use crate::study::{Study, file_guard};

pub fn dispatch(command: Option<Command>) -> Result<(), Failure> {
    match command {
        None => Ok(crate::ui::run_workbench(
            None,
            crate::ui::Screen::Home,
            None,
        )?),
        Some(Command::Open {
            study,
            screen,
            reviewer,
        }) => Ok(crate::ui::run_workbench(
            Some(study),
            screen.into(),
            reviewer,
        )?),
        Some(Command::New { study }) => {
            Study::create(&study)?;
            println!("{}", study.display());
            Ok(())
        }
        Some(Command::Demo { out }) => {
            let path = match out {
                Some(p) => p,
                None => crate::demo::default_demo_path().map_err(Failure::other)?,
            };
            crate::demo::build_demo_study(&path)?;
            println!("{}", path.display());
            Ok(())
        }
        Some(Command::Import {
            study,
            items,
            contexts,
            rankings,
            scales,
            grades,
            gold,
        }) => import_files(
            &study,
            ImportPaths {
                items,
                contexts,
                rankings,
                scales,
                grades,
                gold,
            },
        ),
        Some(Command::Score {
            study,
            options,
            grades,
            rankings,
            format,
            machine: Some(machine),
            target_width,
        }) => super::sample::score_with_machine(
            &open(&study)?,
            &options.settings(&grades),
            &rankings,
            format,
            crate::analysis::estimates::EstimateRequest {
                machine,
                target_width,
            },
        ),
        Some(Command::Sample {
            study,
            contexts,
            seed,
            reviewer,
            scale,
        }) => super::sample::sample(
            &mut open(&study)?,
            crate::study::sample::DrawRequest {
                contexts,
                seed,
                reviewers: reviewer,
                scale,
            },
        ),
        Some(Command::Score {
            study,
            options,
            grades,
            rankings,
            format,
            ..
        }) => {
            let mut snapshot = open(&study)?.snapshot()?;
            for file in &rankings {
                snapshot.add_rankings_file(file)?;
            }
            let settings = options.settings(&grades);
            let board = scoreboard::build(&snapshot, &settings)
                .map_err(|e| Failure::input(e.to_string()))?;
            print(match format {
                Format::Text => printable(&render::scoreboard_text(&board)).into_owned(),
                Format::Csv => render::scoreboard_csv(&board),
                Format::Json => render::scoreboard_json(&board),
            })
        }
        Some(Command::View {
            screen,
            study,
            viewer,
        }) => {
            use crate::analysis::{agreement_view, home, scoreboard_view};
            let study = open(&study)?;
            let json = |value: Result<String, serde_json::Error>| {
                value
                    .map(|mut s| {
                        s.push('\n');
                        s
                    })
                    .map_err(|e| Failure::other(e.to_string()))
            };
            print(match screen {
                super::ViewName::Home => {
                    json(serde_json::to_string_pretty(&home::of_study(&study)?))?
                }
                super::ViewName::Agreement => {
                    let request = agreement_view::AgreementRequest {
                        viewer,
                        ..Default::default()
                    };
                    let model = agreement_view::build(&study, request)?
                        .ok_or_else(|| Failure::input("the study has no scales"))?;
                    json(serde_json::to_string_pretty(&model))?
                }
                super::ViewName::Scoreboard => {
                    let snapshot = study.snapshot()?;
                    let model = scoreboard_view::build(&snapshot, Default::default())
                        .map_err(|e| Failure::input(e.to_string()))?;
                    json(serde_json::to_string_pretty(&model))?
                }
                super::ViewName::Trial => {
                    json(serde_json::to_string_pretty(&trial::of_study(&study)?))?
                }
            })
        }
        Some(Command::Status { study, format }) => {
            let model = crate::analysis::home::of_study(&open(&study)?)?;
            print(match format {
                Format::Text => printable(&crate::analysis::home::text(&model)).into_owned(),
                Format::Json => {
                    let mut json = serde_json::to_string_pretty(&model)
                        .map_err(|e| Failure::other(e.to_string()))?;
                    json.push('\n');
                    json
                }
                Format::Csv => {
                    let mut csv = csv::Writer::from_writer(Vec::new());
                    let io = |e: csv::Error| Failure::other(e.to_string());
                    csv.write_record(["ranker", "graded", "pairs"])
                        .map_err(io)?;
                    for c in &model.coverage {
                        let ranker = crate::study::export::neutralise_cell(&c.ranker);
                        csv.write_record([&*ranker, &c.graded.to_string(), &c.pairs.to_string()])
                            .map_err(io)?;
                    }
                    let bytes = csv
                        .into_inner()
                        .map_err(|e| Failure::other(e.to_string()))?;
                    String::from_utf8_lossy(&bytes).into_owned()
                }
            })
        }
        Some(Command::Agree {
            study,
            scale,
            format,
        }) => {
            let snapshot = open(&study)?.snapshot()?;
            let scale_index = match &scale {
                Some(name) => snapshot
                    .scale_index(name)
                    .ok_or_else(|| Failure::input(format!("unknown scale \"{name}\"")))?,
                None => snapshot
                    .busiest_scale()
                    .ok_or_else(|| Failure::input("the study has no scales"))?,
            };
            let report = agreement::with_defaults(&snapshot, scale_index, None);
            print(match format {
                Format::Text => printable(&render::agreement_text(&report)).into_owned(),
                Format::Csv => render::agreement_csv(&report),
                Format::Json => render::agreement_json(&report),
            })
        }
        Some(Command::Trial { study, format }) => {
            let trial = trial::of_study(&open(&study)?)?;
            print(match format {
                Format::Text => printable(&render::trial_text(&trial)).into_owned(),
                Format::Csv => render::trial_csv(&trial),
                Format::Json => render::trial_json(&trial),
            })
        }
        Some(Command::Export {
            study,
            grades,
            scores,
            report,
            options,
            machine,
        }) => {
            let study_file = open(&study)?;
            // `--grades` names the grades file, or (as for `score`) whose grades count.
            let reviewers = study_file.snapshot()?.reviewers;
            let (sources, files): (Vec<String>, Vec<String>) = grades
                .into_iter()
                .partition(|g| g == "panel" || reviewers.contains(g));
            if sources.len() > 1 || files.len() > 1 {
                return Err(Failure::input(
                    "give --grades at most twice: once a file to write the grades to, once panel or a reviewer whose grades the scores use",
                ));
            }
            let source = sources.into_iter().next().unwrap_or_else(|| "panel".into());
            let grades = files.into_iter().next().map(PathBuf::from);
            if grades.is_none() && scores.is_none() && report.is_none() {
                return Err(Failure::input(
                    "name at least one of --grades FILE, --scores or --report",
                ));
            }
            if let Some(path) = grades {
                let mut rows = 0;
                file_guard::write_atomically(&path, |out| {
                    rows = study_file.export_grades(out)?;
                    Ok(())
                })?;
                eprintln!("{}: {rows} grades written", path.display());
            }
            if scores.is_some() || report.is_some() {
                let snapshot = study_file.snapshot()?;
                let settings = options.settings(&source);
                let board = scoreboard::build(&snapshot, &settings)
                    .map_err(|e| Failure::input(e.to_string()))?;
                let write = |path: &Path, text: String, what: &str| {
                    file_guard::write_atomically(path, |out| Ok(out.write_all(text.as_bytes())?))?;
                    eprintln!("{}: {what} written", path.display());
                    Ok::<(), Failure>(())
                };
                if let Some(path) = scores {
                    write(&path, render::scoreboard_csv(&board), "scores")?;
                }
                if let Some(path) = report {
                    let agreement = snapshot
                        .scale_index(&board.scale)
                        .map(|s| agreement::with_defaults(&snapshot, s, None));
                    let curves =
                        crate::analysis::scoreboard_view::curves(&snapshot, &board.settings)
                            .map_err(|e| Failure::input(e.to_string()))?;
                    let mut files =
                        crate::analysis::report::files(&path, &board, &curves, agreement.as_ref())
                            .map_err(|e| Failure::other(e.to_string()))?;
                    if let Some(machine) = machine {
                        let request = crate::analysis::estimates::EstimateRequest {
                            machine,
                            target_width: None,
                        };
                        super::sample::add_estimates(
                            &mut files,
                            &study_file,
                            (&snapshot, &board),
                            &path,
                            request,
                        )?;
                    }
                    let written = files.write(&path)?;
                    for file in written {
                        eprintln!("{}: written", file.display());
                    }
                }
            }
            Ok(())
        }
        Some(Command::Merge {
            study,
            others,
            accept_reviewer,
        }) => {
            let mut target = open(&study)?;
            let mut refused = Vec::new();
            let options = crate::study::merge::MergeOptions {
                accept: accept_reviewer,
            };
            for other in &others {
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
        Some(Command::HandOut {
            study,
            reviewer,
            out,
        }) => {
            open(&study)?.hand_out(&reviewer, &out)?;
            println!("{}", out.display());
            Ok(())
        }
        Some(Command::GradeLoop {
            study,
            reviewer,
            count,
        }) => grade_loop(&study, &reviewer, count),
        Some(Command::GenerateDemoCatalog { out }) => {
            crate::demo::generate::write_demo_catalog(&out)
                .map_err(|e| Failure::other(format!("{}: {e}", out.display())))?;
            println!("{}", out.display());
            Ok(())
        }
    }
}

pub(super) fn print(text: String) -> Result<(), Failure> {
    let mut out = std::io::stdout().lock();
    // A closed pipe (e.g. `| head`) is not a failure of ours.
    let _ = out.write_all(text.as_bytes());
    Ok(())
}

static WRITE_WAIT: std::sync::OnceLock<std::time::Duration> = std::sync::OnceLock::new();

/// Sets `--wait` for every study this run opens (once, at start).
pub fn set_write_wait(wait: std::time::Duration) {
    let _ = WRITE_WAIT.set(wait);
}

/// The `--wait` of this run.
pub fn write_wait() -> std::time::Duration {
    WRITE_WAIT
        .get()
        .copied()
        .unwrap_or(std::time::Duration::from_secs(super::DEFAULT_WAIT_SECONDS))
}

pub(super) fn open(path: &Path) -> Result<Study, Failure> {
    if !path.exists() {
        return Err(Failure::input(format!("{}: no such study", path.display())));
    }
    let mut study = Study::open(path)?;
    study.set_write_wait(write_wait())?;
    study.announce_waits_on_stderr();
    Ok(study)
}

/// The files `plumbline import` was given.
struct ImportPaths {
    items: Option<PathBuf>,
    contexts: Option<PathBuf>,
    rankings: Option<PathBuf>,
    scales: Option<PathBuf>,
    grades: Option<PathBuf>,
    gold: Option<PathBuf>,
}

fn import_files(study: &Path, paths: ImportPaths) -> Result<(), Failure> {
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

/// Records `count` grades in a tight loop over the study's ranked pairs; after each commit
/// prints `ack EVENT_ID` and flushes, so a test can kill the process at any moment and
/// check that every acknowledged grade survived.
fn grade_loop(path: &Path, reviewer: &str, count: usize) -> Result<(), Failure> {
    use crate::study::grades::{GradeAction, NewGrade};
    let mut study = open(path)?;
    let snapshot = study.snapshot()?;
    let scale = snapshot
        .busiest_scale()
        .or((!snapshot.scales.is_empty()).then_some(0))
        .ok_or_else(|| Failure::input("the study has no scale"))?;
    let levels = snapshot.scales[scale].levels.len();
    let pairs: Vec<(usize, u32)> = snapshot
        .lists
        .iter()
        .flat_map(|per_context| {
            per_context
                .iter()
                .enumerate()
                .flat_map(|(c, list)| list.iter().map(move |i| (c, *i)))
        })
        .collect();
    if pairs.is_empty() {
        return Err(Failure::input("the study has no ranked pairs to grade"));
    }
    let mut out = std::io::stdout().lock();
    for n in 0..count {
        let (context, item) = pairs[n % pairs.len()];
        let id = study.record_grade(&NewGrade {
            reviewer: reviewer.to_string(),
            context_id: snapshot.contexts[context].id.clone(),
            item_id: snapshot.items[item as usize].id.clone(),
            scale: snapshot.scales[scale].name.clone(),
            action: GradeAction::Grade((n % levels) as u8),
            seconds: 1.0 + n as f64 * 1e-3,
            note: String::new(),
        })?;
        writeln!(out, "ack {id}").map_err(|e| Failure::other(e.to_string()))?;
        out.flush().map_err(|e| Failure::other(e.to_string()))?;
    }
    Ok(())
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
