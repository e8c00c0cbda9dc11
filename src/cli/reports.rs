//! The commands that print or write figures: score, view, status, agree, trial, export.

use std::path::{Path, PathBuf};

use super::commands::{open, print};
use super::{Command, Failure, Format, ScoreOptions, ViewName};
use crate::analysis::{agreement, output::render, scoring::scoreboard, scoring::trial};
use crate::core::text::printable;
use crate::study::{Study, file_guard};

/// `score`: the scoreboard, or with `--machine` the estimates from a machine judge.
pub(super) fn cmd_score(command: Command) -> Result<(), Failure> {
    let Command::Score {
        study,
        options,
        grades,
        rankings,
        format,
        machine,
        target_width,
    } = command
    else {
        unreachable!("cmd_score is given only the score command")
    };
    if let Some(machine) = machine {
        let study = open(&study)?;
        let rule = study.settings()?.panel_rule;
        return super::sample::score_with_machine(
            &study,
            &options.settings(&grades, rule),
            &rankings,
            format,
            crate::analysis::scoring::estimates::EstimateRequest {
                machine,
                target_width,
            },
        );
    }
    let mut snapshot = open(&study)?.snapshot()?;
    for file in &rankings {
        snapshot.add_rankings_file(file)?;
    }
    let settings = options.settings(&grades, snapshot.panel_rule);
    let board =
        scoreboard::build(&snapshot, &settings).map_err(|e| Failure::input(e.to_string()))?;
    print(match format {
        Format::Text => printable(&render::scoreboard_text(&board)).into_owned(),
        Format::Csv => render::scoreboard_csv(&board),
        Format::Json => render::scoreboard_json(&board),
    })
}

/// Pretty JSON with a final newline, as every JSON output ends.
fn json_line(value: Result<String, serde_json::Error>) -> Result<String, Failure> {
    value
        .map(|mut s| {
            s.push('\n');
            s
        })
        .map_err(|e| Failure::other(e.to_string()))
}

/// `view`: a screen's model as JSON.
pub(super) fn cmd_view(
    screen: ViewName,
    study: &Path,
    viewer: Option<String>,
) -> Result<(), Failure> {
    use crate::analysis::{views::agreement_view, views::home, views::scoreboard_view};
    let study = open(study)?;
    print(match screen {
        ViewName::Home => json_line(serde_json::to_string_pretty(&home::of_study(&study)?))?,
        ViewName::Agreement => {
            let request = agreement_view::AgreementRequest {
                viewer,
                ..Default::default()
            };
            let model = agreement_view::build(&study, request)?
                .ok_or_else(|| Failure::input("the study has no scales"))?;
            json_line(serde_json::to_string_pretty(&model))?
        }
        ViewName::Scoreboard => {
            let snapshot = study.snapshot()?;
            let model = scoreboard_view::build(&snapshot, Default::default())
                .map_err(|e| Failure::input(e.to_string()))?;
            json_line(serde_json::to_string_pretty(&model))?
        }
        ViewName::Trial => json_line(serde_json::to_string_pretty(&trial::of_study(&study)?))?,
    })
}

/// `status`: the home figures as text, JSON, or the coverage rows as CSV.
pub(super) fn cmd_status(study: &Path, format: Format) -> Result<(), Failure> {
    let model = crate::analysis::views::home::of_study(&open(study)?)?;
    print(match format {
        Format::Text => printable(&crate::analysis::views::home::text(&model)).into_owned(),
        Format::Json => json_line(serde_json::to_string_pretty(&model))?,
        Format::Csv => coverage_csv(&model)?,
    })
}

/// The coverage rows of `status --format csv`.
fn coverage_csv(model: &crate::analysis::views::home::HomeModel) -> Result<String, Failure> {
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
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}

/// `agree`: agreement on the named scale, or the busiest one.
pub(super) fn cmd_agree(
    study: &Path,
    scale: Option<String>,
    format: Format,
) -> Result<(), Failure> {
    let snapshot = open(study)?.snapshot()?;
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

/// `trial`: the trial's figures.
pub(super) fn cmd_trial(study: &Path, format: Format) -> Result<(), Failure> {
    let trial = trial::of_study(&open(study)?)?;
    print(match format {
        Format::Text => printable(&render::trial_text(&trial)).into_owned(),
        Format::Csv => render::trial_csv(&trial),
        Format::Json => render::trial_json(&trial),
    })
}

/// `export`: the grades file, the scores CSV and the report, whichever were named.
pub(super) fn cmd_export(command: Command) -> Result<(), Failure> {
    let Command::Export {
        study,
        grades,
        scores,
        report,
        options,
        machine,
    } = command
    else {
        unreachable!("cmd_export is given only the export command")
    };
    let study_file = open(&study)?;
    let (source, grades) = grades_file_and_source(&study_file, grades)?;
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
        let targets = ExportTargets {
            scores,
            report,
            machine,
        };
        export_scores_and_report(&study_file, &options, &source, targets)?;
    }
    Ok(())
}

/// `--grades` names the grades file, or (as for `score`) whose grades count: at most one of each.
fn grades_file_and_source(
    study: &Study,
    grades: Vec<String>,
) -> Result<(String, Option<PathBuf>), Failure> {
    let reviewers = study.snapshot()?.reviewers;
    let (sources, files): (Vec<String>, Vec<String>) = grades
        .into_iter()
        .partition(|g| g == "panel" || reviewers.contains(g));
    if sources.len() > 1 || files.len() > 1 {
        return Err(Failure::input(
            "give --grades at most twice: once a file to write the grades to, once panel or a reviewer whose grades the scores use",
        ));
    }
    let source = sources.into_iter().next().unwrap_or_else(|| "panel".into());
    Ok((source, files.into_iter().next().map(PathBuf::from)))
}

/// Where `export` writes the scores and the report, and whose estimates the report adds.
struct ExportTargets {
    scores: Option<PathBuf>,
    report: Option<PathBuf>,
    machine: Option<String>,
}

fn export_scores_and_report(
    study: &Study,
    options: &ScoreOptions,
    source: &str,
    targets: ExportTargets,
) -> Result<(), Failure> {
    let snapshot = study.snapshot()?;
    let settings = options.settings(source, snapshot.panel_rule);
    let board =
        scoreboard::build(&snapshot, &settings).map_err(|e| Failure::input(e.to_string()))?;
    if let Some(path) = targets.scores {
        let text = render::scoreboard_csv(&board);
        file_guard::write_atomically(&path, |out| Ok(out.write_all(text.as_bytes())?))?;
        eprintln!("{}: scores written", path.display());
    }
    if let Some(path) = targets.report {
        write_report(study, (&snapshot, &board), &path, targets.machine)?;
    }
    Ok(())
}

/// The report's files, with the machine judge's estimates when one was named.
fn write_report(
    study: &Study,
    (snapshot, board): (&crate::study::snapshot::Snapshot, &scoreboard::Scoreboard),
    path: &Path,
    machine: Option<String>,
) -> Result<(), Failure> {
    let agreement = snapshot
        .scale_index(&board.scale)
        .map(|s| agreement::with_defaults(snapshot, s, None));
    let curves = crate::analysis::views::scoreboard_view::curves(snapshot, &board.settings)
        .map_err(|e| Failure::input(e.to_string()))?;
    let mut files =
        crate::analysis::output::report::files(path, board, &curves, agreement.as_ref())
            .map_err(|e| Failure::other(e.to_string()))?;
    if let Some(machine) = machine {
        let request = crate::analysis::scoring::estimates::EstimateRequest {
            machine,
            target_width: None,
        };
        super::sample::add_estimates(&mut files, study, (snapshot, board), path, request)?;
    }
    for file in files.write(path)? {
        eprintln!("{}: written", file.display());
    }
    Ok(())
}
