//! The Scoreboard's estimates section as a view model: the machine judges to choose
//! from, the people whose queues can take more sample contexts, and per ranker at the
//! focus cut-off the combined interval, the human-only interval, the machine-only point,
//! the machine's bias and the effective human contexts (`analysis::scoring::estimates`, the same
//! function `plumbline score --machine` prints).

use crate::analysis::cautions::Cautions;
use crate::analysis::scoring::estimates::{self, Estimate, EstimateRequest, Estimates};
use crate::analysis::scoring::scoreboard::{self, ScoreSettings};
use crate::study::{Study, StudyError};

/// One ranker's line at the focus metric.
#[derive(Debug, Clone)]
pub struct EstimateLine {
    /// The ranker.
    pub ranker: String,
    /// "0.849 [0.795, 0.902]".
    pub combined: String,
    /// The human-only mean with its classical interval.
    pub human_only: String,
    /// The machine-only mean.
    pub machine_only: String,
    /// Machine-only mean − estimate, signed ("+0.026").
    pub bias: String,
    /// n × classical variance / combined variance, one decimal.
    pub effective: String,
    /// λ, three decimals.
    pub lambda: String,
}

/// Everything the section shows.
#[derive(Debug, Clone, Default)]
pub struct EstimatesPanel {
    /// Machine judges of the study, by name.
    pub machines: Vec<String>,
    /// People of the study, by name (who can grade more sample contexts).
    pub people: Vec<String>,
    /// The machine judge the figures are for.
    pub machine: Option<String>,
    /// The scale scored.
    pub scale: String,
    /// The focus metric key (`ndcg@10`).
    pub metric: String,
    /// One line per ranker.
    pub lines: Vec<EstimateLine>,
    /// "Grade N more contexts (about H reviewer-hours)" for the target width, if any.
    pub more: Option<String>,
    /// How many more contexts that is (the button's draw).
    pub more_contexts: usize,
    /// Why there are no figures (no machine judge, no draw, too few complete contexts…).
    pub note: Option<String>,
    /// The sample: drawn, complete, pending, in words.
    pub sample: String,
    /// Cautions beside the figures.
    pub cautions: Cautions,
}

/// How to add a machine judge, for a study without one.
pub const NO_MACHINE: &str = "This study has no machine judge. Import its grades with a grades.csv whose kind column says machine (Catalog screen or `plumbline import STUDY --grades FILE`), draw a human sample with `plumbline sample STUDY --contexts N`, and its estimates appear here.";

fn line(e: &Estimate) -> EstimateLine {
    let f = &e.figures;
    let with = crate::analysis::views::scoreboard_view::with_interval;
    EstimateLine {
        ranker: e.ranker.clone(),
        combined: with(e.estimate, f.ci_low, f.ci_high),
        human_only: with(f.human_only_mean, f.human_only_ci_low, f.human_only_ci_high),
        machine_only: crate::analysis::format::fixed(f.machine_only_mean, 3),
        bias: if (f.machine_only_mean - e.estimate).is_finite() {
            format!("{:+.3}", f.machine_only_mean - e.estimate)
        } else {
            "–".into()
        },
        effective: crate::analysis::format::fixed(f.effective_human_contexts, 1),
        lambda: crate::analysis::format::fixed(f.lambda, 3),
    }
}

/// The most further sample contexts any ranker needs at `metric`, in words.
fn more_text(est: &Estimates, metric: &str) -> (Option<String>, usize) {
    est.target_width.map_or((None, 0), |w| {
        let at_metric = || est.estimates.iter().filter(|e| e.metric == metric);
        if let Some(why) = at_metric().find_map(|e| e.figures.humans_needed_reason.clone()) {
            return (
                Some(format!(
                    "No number of further sample contexts brings every interval to ±{w}: {why}."
                )),
                0,
            );
        }
        let most = at_metric().max_by_key(|e| e.figures.humans_needed.unwrap_or(0));
        match most.and_then(|e| e.figures.humans_needed.map(|m| (m, e))) {
            Some((0, _)) => (Some(format!("Every interval is already within ±{w}.")), 0),
            Some((m, e)) => {
                let hours = e
                    .figures
                    .humans_needed_reviewer_hours
                    .map_or(String::new(), |h| {
                        format!(
                            " (about {} reviewer-hours)",
                            crate::analysis::format::fixed(h, 1)
                        )
                    });
                (
                    Some(format!(
                        "Grade {m} more contexts{hours} to bring every interval to ±{w}."
                    )),
                    m,
                )
            }
            None => (None, 0),
        }
    })
}

/// Builds the section for `settings` (the Scoreboard's), the chosen machine judge (the
/// first one when none is chosen) and an optional target half-width, in one read.
pub fn build(
    study: &Study,
    settings: &ScoreSettings,
    machine: Option<&str>,
    target_width: Option<f64>,
) -> Result<EstimatesPanel, StudyError> {
    let (snapshot, draws) = study.read_together(|s| Ok((s.snapshot()?, s.sample_draws()?)))?;
    let names = |machines: bool| -> Vec<String> {
        (0..snapshot.reviewers.len())
            .filter(|&r| snapshot.is_machine(r) == machines)
            .map(|r| snapshot.reviewers[r].clone())
            .collect()
    };
    let mut panel = EstimatesPanel {
        machines: names(true),
        people: names(false),
        ..Default::default()
    };
    panel.machine = machine
        .filter(|m| panel.machines.iter().any(|x| x == m))
        .map(str::to_string)
        .or_else(|| panel.machines.first().cloned());
    let Some(machine) = panel.machine.clone() else {
        panel.note = Some(NO_MACHINE.into());
        return Ok(panel);
    };
    // Only the scale and baseline of the board are used: no resampling needed.
    let quick = ScoreSettings {
        bootstrap_resamples: 0,
        randomization_resamples: 0,
        ..settings.clone()
    };
    let board = match scoreboard::build(&snapshot, &quick) {
        Ok(board) => board,
        Err(e) => {
            panel.note = Some(e.to_string());
            return Ok(panel);
        }
    };
    panel.scale = board.scale.clone();
    panel.metric = format!("ndcg@{}", crate::analysis::defaults::focus_k(&settings.ks));
    let request = EstimateRequest {
        machine,
        target_width,
    };
    match estimates::build(&snapshot, &board, &draws, &request) {
        Err(e) => panel.note = Some(e.to_string()),
        Ok(est) => {
            let s = &est.sample;
            panel.sample = format!(
                "Human sample on {}: {} contexts drawn, {} complete, {} pending.",
                board.scale, s.drawn, s.complete, s.pending
            );
            panel.note = est.estimate_reason.clone();
            panel.lines = est
                .estimates
                .iter()
                .filter(|e| e.metric == panel.metric)
                .map(line)
                .collect();
            (panel.more, panel.more_contexts) = more_text(&est, &panel.metric);
            panel.cautions = est.estimate_cautions.0.clone();
        }
    }
    Ok(panel)
}
