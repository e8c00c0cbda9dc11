//! `plumbline sample` (draw the human sample) and `plumbline score --machine` (estimates
//! from a machine judge corrected by it).

use std::path::PathBuf;

use super::commands::print;
use super::{Failure, Format};
use crate::analysis::scoring::estimates::{self, EstimateRequest};
use crate::analysis::{output::estimates_text, output::render, scoring::scoreboard};
use crate::study::Study;
use crate::study::sample::DrawRequest;

/// `sample`: draws the sample contexts and queues them for the reviewers.
pub(super) fn cmd_sample(command: super::Command) -> Result<(), Failure> {
    let super::Command::Sample {
        study,
        contexts,
        seed,
        reviewer,
        scale,
    } = command
    else {
        unreachable!("cmd_sample is given only the sample command")
    };
    sample(
        &mut super::commands::open(&study)?,
        DrawRequest {
            contexts,
            seed,
            reviewers: reviewer,
            scale,
        },
    )
}

/// Draws the sample and says what was drawn and queued.
pub fn sample(study: &mut Study, request: DrawRequest) -> Result<(), Failure> {
    let asked = request.contexts;
    let outcome = study.draw_sample(&request)?;
    let mut out = String::new();
    if asked > outcome.left_before {
        out.push_str(&format!(
            "Only {} contexts with lists were left undrawn; drew them all instead of {asked}.\n",
            outcome.left_before
        ));
    }
    out.push_str(&format!(
        "Drew {} contexts (seed {}): {}\n",
        outcome.drawn.len(),
        outcome.seed,
        outcome.drawn.join(", ")
    ));
    out.push_str(&format!(
        "{} of their pool pairs on {} have no person's grade yet",
        outcome.pairs_to_grade, outcome.scale
    ));
    let queued: Vec<String> = outcome
        .queued
        .iter()
        .filter(|(_, n)| *n > 0)
        .map(|(r, n)| format!("{n} first in {r}'s queue"))
        .collect();
    if queued.is_empty() {
        out.push_str(".\n");
    } else {
        out.push_str(&format!(": {}.\n", queued.join(", ")));
    }
    print(out)
}

/// The scoreboard with the estimates added, in the chosen format. Bad input (the machine
/// judge, no draw, no machine grade) exits 2; nothing is written to the study.
pub fn score_with_machine(
    study: &Study,
    settings: &scoreboard::ScoreSettings,
    rankings: &[PathBuf],
    format: Format,
    request: EstimateRequest,
) -> Result<(), Failure> {
    let (mut snapshot, draws) = study.read_together(|s| Ok((s.snapshot()?, s.sample_draws()?)))?;
    for file in rankings {
        snapshot.add_rankings_file(file)?;
    }
    let board =
        scoreboard::build(&snapshot, settings).map_err(|e| Failure::input(e.to_string()))?;
    let est = estimates::build(&snapshot, &board, &draws, &request)
        .map_err(|e| Failure::input(e.to_string()))?;
    print(match format {
        Format::Text => render::scoreboard_text(&board) + &estimates_text::text(&est, &board),
        Format::Csv => {
            let cautions = est.estimate_cautions.0.words();
            for c in est.estimate_reason.iter().chain(&cautions) {
                eprintln!("plumbline: caution: {c}");
            }
            estimates_text::csv(&est, &board)
        }
        Format::Json => estimates_text::json(&est, &board),
    })
}

/// Adds the estimates section and its picture to a report about to be written at
/// `path` (`export --report … --machine NAME`).
pub fn add_estimates(
    files: &mut crate::analysis::output::report::ReportFiles,
    study: &Study,
    (snapshot, board): (&crate::study::snapshot::Snapshot, &scoreboard::Scoreboard),
    path: &std::path::Path,
    request: EstimateRequest,
) -> Result<(), Failure> {
    let draws = study.sample_draws()?;
    let est = estimates::build(snapshot, board, &draws, &request)
        .map_err(|e| Failure::input(e.to_string()))?;
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "report".into());
    crate::analysis::output::report_estimates::add_to(files, &stem, board, &est)
        .map_err(|e| Failure::other(e.to_string()))
}
