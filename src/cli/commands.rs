//! What each command does.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::{Command, Failure};
use crate::study::Study;
use crate::ui::Screen;

/// Runs one command: each has its own function, here or in the module of its concern.
pub fn dispatch(command: Option<Command>) -> Result<(), Failure> {
    use super::{reports, study_files};
    match command {
        None => Ok(crate::ui::run_workbench(None, Screen::Home, None)?),
        Some(Command::Open {
            study,
            screen,
            reviewer,
        }) => Ok(crate::ui::run_workbench(
            Some(study),
            screen.into(),
            reviewer,
        )?),
        Some(Command::New { study }) => cmd_new(&study),
        Some(Command::Demo { out }) => cmd_demo(out),
        Some(Command::Import {
            study,
            items,
            contexts,
            rankings,
            scales,
            grades,
            gold,
        }) => study_files::cmd_import(
            &study,
            study_files::ImportPaths {
                items,
                contexts,
                rankings,
                scales,
                grades,
                gold,
            },
        ),
        Some(command @ Command::Score { .. }) => reports::cmd_score(command),
        Some(command @ Command::Sample { .. }) => super::sample::cmd_sample(command),
        Some(Command::View {
            screen,
            study,
            viewer,
        }) => reports::cmd_view(screen, &study, viewer),
        Some(Command::Status { study, format }) => reports::cmd_status(&study, format),
        Some(Command::Agree {
            study,
            scale,
            format,
        }) => reports::cmd_agree(&study, scale, format),
        Some(Command::Trial { study, format }) => reports::cmd_trial(&study, format),
        Some(command @ Command::Export { .. }) => reports::cmd_export(command),
        Some(Command::Merge {
            study,
            others,
            accept_reviewer,
        }) => study_files::cmd_merge(&study, &others, accept_reviewer),
        Some(Command::HandOut {
            study,
            reviewer,
            out,
        }) => cmd_hand_out(&study, &reviewer, &out),
        Some(Command::GradeLoop {
            study,
            reviewer,
            count,
        }) => grade_loop(&study, &reviewer, count),
        Some(Command::GenerateDemoCatalog { out }) => cmd_generate_demo_catalog(&out),
    }
}

/// `new`: an empty study.
fn cmd_new(study: &Path) -> Result<(), Failure> {
    Study::create(study)?;
    println!("{}", study.display());
    Ok(())
}

/// `demo`: the demo study, at the given path or the default one.
fn cmd_demo(out: Option<PathBuf>) -> Result<(), Failure> {
    let path = match out {
        Some(p) => p,
        None => crate::demo::default_demo_path().map_err(Failure::other)?,
    };
    crate::demo::build_demo_study(&path)?;
    println!("{}", path.display());
    Ok(())
}

/// `hand-out`: a reviewer copy of the study.
fn cmd_hand_out(study: &Path, reviewer: &str, out: &Path) -> Result<(), Failure> {
    open(study)?.hand_out(reviewer, out)?;
    println!("{}", out.display());
    Ok(())
}

/// `generate-demo-catalog`: the demo's catalog file.
fn cmd_generate_demo_catalog(out: &Path) -> Result<(), Failure> {
    crate::demo::generate::write_demo_catalog(out)
        .map_err(|e| Failure::other(format!("{}: {e}", out.display())))?;
    println!("{}", out.display());
    Ok(())
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
