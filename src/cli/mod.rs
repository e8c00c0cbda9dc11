//! Command-line interface. Every command that prints numbers goes through `analysis`, so
//! the terminal and the screens agree.

mod commands;
mod reports;
mod sample;
mod study_files;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand, ValueEnum};

#[derive(Parser, Debug)]
#[command(
    name = "plumbline",
    version,
    about = "Graded relevance judgments and offline ranker evaluation"
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Option<Command>,
    /// How long a command that writes waits for another program writing to the same
    /// study before it gives up (it says so on stderr after a second).
    #[arg(long, global = true, value_name = "SECONDS", default_value_t = DEFAULT_WAIT_SECONDS)]
    pub wait: u64,
}

/// The settings `score` and `export` share (every one but whose grades count, which
/// `export` reads from `--grades` beside the grades file).
#[derive(clap::Args, Debug, Clone)]
pub struct ScoreOptions {
    #[arg(long)]
    pub scale: Option<String>,
    /// Cut-offs, comma separated.
    #[arg(long, value_delimiter = ',', default_values_t = crate::analysis::defaults::CUTOFFS)]
    pub k: Vec<usize>,
    #[arg(long, value_enum, default_value_t = GainChoice::Exponential)]
    pub gain: GainChoice,
    #[arg(long, value_enum, default_value_t = UnjudgedChoice::Zero)]
    pub unjudged: UnjudgedChoice,
    #[arg(long)]
    pub baseline: Option<String>,
    /// all, new, established, query, anchor, or a context segment label
    /// (`label:NAME` always means a label, even one called "new").
    #[arg(long, default_value = "all")]
    pub segment: String,
    /// How an unsettled pair's panel levels become one level for this run (default:
    /// the study's panel rule, lower-median unless the study chose another).
    #[arg(long = "panel-grade", value_enum)]
    pub panel_grade: Option<PanelGradeChoice>,
    /// RBP's persistence p, above 0 and below 1 (Moffat & Zobel 2008).
    #[arg(long, default_value_t = crate::analysis::defaults::RBP_PERSISTENCE, value_parser = persistence)]
    pub persistence: f64,
    #[arg(long, default_value_t = crate::analysis::defaults::SCORE_BOOTSTRAP)]
    pub bootstrap: usize,
    #[arg(long, default_value_t = crate::analysis::defaults::SCORE_RANDOMIZATION)]
    pub randomization: usize,
}

impl ScoreOptions {
    /// The scoreboard settings these options and `grades` (panel or a reviewer) ask for;
    /// `study_rule` is the study's panel rule, used unless `--panel-grade` chose one.
    pub fn settings(
        &self,
        grades: &str,
        study_rule: crate::core::panel_rule::PanelRule,
    ) -> crate::analysis::scoring::scoreboard::ScoreSettings {
        use crate::analysis::judged::judgments::{GradeSource, PanelRule};
        use crate::core::metrics::{GainKind, Unjudged};
        crate::analysis::scoring::scoreboard::ScoreSettings {
            scale: self.scale.clone(),
            ks: self.k.clone(),
            gain: match self.gain {
                GainChoice::Exponential => GainKind::Exponential,
                GainChoice::Linear => GainKind::Linear,
            },
            grades: GradeSource::parse(grades),
            unjudged: match self.unjudged {
                UnjudgedChoice::Zero => Unjudged::Zero,
                UnjudgedChoice::Condense => Unjudged::Condense,
            },
            // None: the study's stored baseline, else the first ranker (one rule,
            // `scoreboard::resolve_baseline`).
            baseline: self.baseline.clone(),
            segment: crate::analysis::scoring::scoreboard::Segment::parse(&self.segment),
            panel_grade: match self.panel_grade {
                None => study_rule,
                Some(PanelGradeChoice::LowerMedian) => PanelRule::LowerMedian,
                Some(PanelGradeChoice::UpperMedian) => PanelRule::UpperMedian,
                Some(PanelGradeChoice::MeanRounded) => PanelRule::MeanRounded,
            },
            persistence: self.persistence,
            bootstrap_resamples: self.bootstrap,
            randomization_resamples: self.randomization,
            ..Default::default()
        }
    }
}

/// Reads `--persistence`: a number above 0 and below 1.
fn persistence(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(p) if p > 0.0 && p < 1.0 => Ok(p),
        _ => Err(format!(
            "\"{text}\" is not a persistence: give a number above 0 and below 1, such as 0.8"
        )),
    }
}

/// `--gain`: how a level becomes a gain (a scale's own gains win over it).
#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum GainChoice {
    /// 2^v − 1 (Burges et al. 2005).
    Exponential,
    /// v itself (Järvelin & Kekäläinen 2002).
    Linear,
}

/// `--unjudged`: what an unjudged item in a ranked list counts as.
#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum UnjudgedChoice {
    /// Gain 0.
    Zero,
    /// Removed before cutting at k (Sakai 2007).
    Condense,
}

/// `--panel-grade`: how an unsettled pair's panel levels become one level.
#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum PanelGradeChoice {
    /// The lower of the two middle levels on a tie ([1, 3] → 1).
    LowerMedian,
    /// The upper of the two middle levels on a tie ([1, 3] → 3).
    UpperMedian,
    /// The mean rounded to the nearest level, halves up ([1, 2] → 2).
    MeanRounded,
}

/// The command line's default for `--wait`: long, because giving up loses the work.
pub const DEFAULT_WAIT_SECONDS: u64 = 600;

#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum Format {
    Text,
    Csv,
    Json,
}

/// Screens whose whole view model `plumbline view` prints.
#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum ViewName {
    Home,
    Agreement,
    Scoreboard,
    Trial,
}

/// `--screen` values; the workbench's own `ui::Screen` knows nothing of the command line.
#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum ScreenName {
    Home,
    Catalog,
    Scales,
    Desk,
    Agreement,
    Scoreboard,
    Trial,
}

impl From<ScreenName> for crate::ui::Screen {
    fn from(name: ScreenName) -> crate::ui::Screen {
        use crate::ui::Screen;
        match name {
            ScreenName::Home => Screen::Home,
            ScreenName::Catalog => Screen::Catalog,
            ScreenName::Scales => Screen::Scales,
            ScreenName::Desk => Screen::Desk,
            ScreenName::Agreement => Screen::Agreement,
            ScreenName::Scoreboard => Screen::Scoreboard,
            ScreenName::Trial => Screen::Trial,
        }
    }
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Open a study in the workbench.
    Open {
        study: PathBuf,
        #[arg(long, value_enum, default_value = "home")]
        screen: ScreenName,
        /// Sign this reviewer in at once (the window then shows only the desk, their
        /// progress and the rubric); without it the study opens signed out.
        #[arg(long)]
        reviewer: Option<String>,
    },
    /// Create a new, empty study file.
    New { study: PathBuf },
    /// Build the demo study from the built-in demo catalog and print its path.
    Demo {
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Import CSV files into a study (all files in one transaction).
    Import {
        study: PathBuf,
        #[arg(long)]
        items: Option<PathBuf>,
        #[arg(long)]
        contexts: Option<PathBuf>,
        #[arg(long)]
        rankings: Option<PathBuf>,
        #[arg(long)]
        scales: Option<PathBuf>,
        #[arg(long)]
        grades: Option<PathBuf>,
        /// Gold pairs: context_id, item_id, scale, value (the known level), rationale.
        #[arg(long)]
        gold: Option<PathBuf>,
    },
    /// Score every ranker with graded metrics, intervals and paired tests.
    Score {
        study: PathBuf,
        #[command(flatten)]
        options: ScoreOptions,
        /// `panel` or a reviewer's name.
        #[arg(long, default_value = "panel")]
        grades: String,
        /// Score the lists in this file (rankings.csv columns, `rank` or `score`) beside
        /// the study's, without importing them; a ranker the study has is replaced for
        /// this run. May be given more than once. The study is only read.
        #[arg(long = "rankings", value_name = "FILE")]
        rankings: Vec<PathBuf>,
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
        /// Also estimate every metric for the whole study from this machine judge's
        /// grades corrected by the human sample (prediction-powered inference).
        #[arg(long, value_name = "NAME")]
        machine: Option<String>,
        /// With --machine: how many more sample contexts would bring each interval's
        /// half-width to W.
        #[arg(long = "target-width", value_name = "W", requires = "machine")]
        target_width: Option<f64>,
    },
    /// Draw more contexts uniformly at random into the human sample, record the draw, and
    /// put their pool pairs that no person has graded at the front of people's queues.
    Sample {
        study: PathBuf,
        /// How many more contexts to draw (what is left when fewer are).
        #[arg(long)]
        contexts: usize,
        /// The random seed (recorded with the draw); taken from the clock when absent.
        #[arg(long)]
        seed: Option<u64>,
        /// A person whose queue gets the pairs first; repeat for several. Without it the
        /// pairs go first in the queues the study assigned them to.
        #[arg(long = "reviewer", value_name = "NAME")]
        reviewer: Vec<String>,
        /// The scale the queues are on (default: the study's active scale).
        #[arg(long)]
        scale: Option<String>,
    },
    /// What the study holds, how far the pool is graded and what to do next (Home's figures).
    Status {
        study: PathBuf,
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
    /// Print everything a screen shows, as JSON: its whole view model with the default
    /// settings (Home, Agreement with its panel review, Scoreboard with curves and
    /// reviewer sensitivity, Scale trial).
    View {
        #[arg(value_enum)]
        screen: ViewName,
        study: PathBuf,
        /// For the Agreement screen: whose blind rule applies (pairs they still have to
        /// grade are left out).
        #[arg(long)]
        viewer: Option<String>,
    },
    /// Reviewer agreement on one scale.
    Agree {
        study: PathBuf,
        #[arg(long)]
        scale: Option<String>,
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
    /// Compare piloted scales (and saved collapse maps): agreement, speed and ranker separation.
    Trial {
        study: PathBuf,
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
    /// Write grades or scores to files.
    Export {
        study: PathBuf,
        /// Where to write the grades (a file, e.g. grades.csv); given `panel` or a
        /// reviewer's name instead, whose grades the scores and report use (as `score
        /// --grades`). May be given twice, once for each.
        #[arg(long, value_name = "FILE|panel|REVIEWER")]
        grades: Vec<String>,
        #[arg(long)]
        scores: Option<PathBuf>,
        /// A Markdown report: settings, rankers with intervals, comparisons, agreement, cautions.
        #[arg(long)]
        report: Option<PathBuf>,
        /// The settings of the scores and the report, as for `score`.
        #[command(flatten)]
        options: ScoreOptions,
        /// With --report: add a section on the estimates from this machine judge corrected
        /// by the human sample, with a picture of the three intervals per ranker.
        #[arg(long, value_name = "NAME", requires = "report")]
        machine: Option<String>,
    },
    /// Bring in grades and settled grades from studies graded elsewhere.
    Merge {
        study: PathBuf,
        #[arg(required = true)]
        others: Vec<PathBuf>,
        /// Also bring in events by this reviewer (or settled grades by this settler),
        /// although the copy was not handed out to them. Repeat for several names.
        #[arg(long = "accept-reviewer", value_name = "NAME")]
        accept_reviewer: Vec<String>,
    },
    /// Write a reviewer copy of a study for grading on another machine (merge it back later).
    HandOut {
        study: PathBuf,
        #[arg(long)]
        reviewer: String,
        #[arg(long)]
        out: PathBuf,
    },
    /// Grade pairs as fast as possible, printing each acknowledged event id (for the
    /// crash-safety tests).
    #[command(hide = true)]
    GradeLoop {
        study: PathBuf,
        #[arg(long)]
        reviewer: String,
        #[arg(long)]
        count: usize,
    },
    /// Regenerate the demo catalog files (for maintainers).
    #[command(hide = true)]
    GenerateDemoCatalog { out: PathBuf },
}

/// A failure with the exit code it deserves: 2 for bad input, 1 for anything else.
#[derive(Debug)]
pub struct Failure {
    pub code: u8,
    pub message: String,
}

impl Failure {
    pub fn input(message: impl Into<String>) -> Failure {
        Failure {
            code: 2,
            message: message.into(),
        }
    }
    pub fn other(message: impl Into<String>) -> Failure {
        Failure {
            code: 1,
            message: message.into(),
        }
    }
}

impl From<crate::ui::WorkbenchError> for Failure {
    fn from(e: crate::ui::WorkbenchError) -> Failure {
        Failure {
            code: if e.is_bad_input() { 2 } else { 1 },
            message: e.to_string(),
        }
    }
}

impl From<crate::study::StudyError> for Failure {
    fn from(e: crate::study::StudyError) -> Failure {
        let mut message = e.to_string();
        if matches!(e, crate::study::StudyError::Busy) {
            message.push_str(&format!(
                " (waited {} s; wait longer with --wait SECONDS)",
                commands::write_wait().as_secs()
            ));
        }
        Failure {
            code: if e.is_bad_input() { 2 } else { 1 },
            message,
        }
    }
}

pub fn run() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(if e.use_stderr() { 2 } else { 0 });
        }
    };
    commands::set_write_wait(std::time::Duration::from_secs(cli.wait));
    match commands::dispatch(cli.command) {
        Ok(()) => ExitCode::SUCCESS,
        Err(f) => {
            eprintln!("plumbline: {}", crate::core::text::printable(&f.message));
            ExitCode::from(f.code)
        }
    }
}
