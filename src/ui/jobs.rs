//! Background work for the screens: a job runs on its own named thread and sends its
//! result through a channel; the screen polls once per frame and asks for a repaint on
//! arrival. `Task` is the one holder every screen uses: at most one run in flight.
//!
//! A job that panics still delivers: its thread catches the panic and sends
//! `JobOutput::from_failure`, so a screen shows an error instead of a spinner forever.

use std::sync::mpsc::{Receiver, TryRecvError, channel};

use crate::analysis::scoring::scoreboard::ScoreError;
use crate::study::{Problem, StudyError};

/// Why a screen's background task has no result.
#[derive(Debug, thiserror::Error)]
pub enum JobError {
    /// The study refused or failed (bad input keeps its file/line/column problems).
    #[error(transparent)]
    Study(#[from] StudyError),
    /// The scoreboard could not be built with these settings.
    #[error(transparent)]
    Score(#[from] ScoreError),
    /// What the screen asked for is not in the study (any more).
    #[error("{0}")]
    Missing(String),
    /// A file the screen was asked to write could not be written.
    #[error("{path}: {source}")]
    Write {
        /// The file, as the user chose it.
        path: String,
        /// What the system said.
        source: std::io::Error,
    },
    /// The task panicked or its thread vanished; nothing it wrote is half done, because
    /// every write is one transaction.
    #[error("{0}")]
    Stopped(String),
}

impl JobError {
    /// The problems to list in a table: an import's own, else the error as one line.
    pub fn problems(&self) -> Vec<Problem> {
        match self {
            JobError::Study(StudyError::Input(problems)) => problems.0.clone(),
            other => vec![Problem::general(other.to_string())],
        }
    }
}

impl From<crate::study::Problems> for JobError {
    fn from(problems: crate::study::Problems) -> JobError {
        JobError::Study(StudyError::Input(problems))
    }
}

/// What every screen job returns.
pub type JobResult<T> = Result<T, JobError>;

/// What a job's result becomes when the job dies before it can return one.
pub trait JobOutput {
    /// The result standing for a job that could not deliver its own.
    fn from_failure(message: String) -> Self;
}

impl<M> JobOutput for JobResult<M> {
    fn from_failure(message: String) -> Self {
        Err(JobError::Stopped(message))
    }
}

/// A file dialog that died is treated as cancelled.
impl<T> JobOutput for Option<T> {
    fn from_failure(_: String) -> Self {
        None
    }
}

/// A file dialog job that died counts as a dialog that could not open.
impl<T> JobOutput for crate::ui::frame::study_picker::Asked<T> {
    fn from_failure(_: String) -> Self {
        crate::ui::frame::study_picker::Asked::Unavailable
    }
}

impl JobOutput for Vec<std::path::PathBuf> {
    fn from_failure(_: String) -> Self {
        Vec::new()
    }
}

/// A result that will arrive later.
pub struct Pending<T> {
    receiver: Receiver<T>,
    /// Set when the thread ended without sending (it could not even report a panic).
    gone: std::cell::Cell<bool>,
}

fn panic_text(payload: &(dyn std::any::Any + Send)) -> String {
    payload
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "unknown cause".into())
}

impl<T: JobOutput + Send + 'static> Pending<T> {
    /// Runs `work` on a new thread with `name` (shown by debuggers and in panics).
    pub fn spawn_named(
        name: &str,
        ctx: &egui::Context,
        work: impl FnOnce() -> T + Send + 'static,
    ) -> Pending<T> {
        let (sender, receiver) = channel();
        let ctx = ctx.clone();
        let job_name = name.to_string();
        let started = std::thread::Builder::new()
            .name(name.to_string())
            .spawn(move || {
                let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(work))
                    .unwrap_or_else(|payload| {
                        T::from_failure(format!(
                            "the background task \"{job_name}\" stopped unexpectedly ({}); nothing was lost — try again",
                            panic_text(payload.as_ref())
                        ))
                    });
                let _ = sender.send(result);
                ctx.request_repaint();
            });
        let gone = std::cell::Cell::new(started.is_err());
        Pending { receiver, gone }
    }

    /// The result if it has arrived; never blocks. A thread that vanished without a
    /// word yields `from_failure`.
    pub fn poll(&self) -> Option<T> {
        if self.gone.get() {
            self.gone.set(false);
            return Some(T::from_failure(
                "a background task could not run; try again".into(),
            ));
        }
        match self.receiver.try_recv() {
            Ok(value) => Some(value),
            Err(TryRecvError::Empty) => None,
            Err(TryRecvError::Disconnected) => Some(T::from_failure(
                "a background task ended without a result; try again".into(),
            )),
        }
    }
}

/// One kind of background work of a screen (loading its model, saving a change): at most
/// one run in flight; starting again drops the old run's result when it arrives.
pub struct Task<T> {
    name: &'static str,
    running: Option<Pending<T>>,
}

impl<T> Task<T> {
    /// A task whose threads are called `name` (shown by debuggers and in panic messages).
    pub const fn named(name: &'static str) -> Task<T> {
        Task {
            name,
            running: None,
        }
    }

    /// Whether a run is in flight.
    pub fn is_running(&self) -> bool {
        self.running.is_some()
    }
}

impl<T: JobOutput + Send + 'static> Task<T> {
    /// Starts `work` on a new thread; `ctx` is woken when it finishes.
    pub fn start(&mut self, ctx: &egui::Context, work: impl FnOnce() -> T + Send + 'static) {
        self.running = Some(Pending::spawn_named(self.name, ctx, work));
    }

    /// The result once it has arrived (then the task is idle again); never blocks.
    pub fn poll(&mut self) -> Option<T> {
        let result = self.running.as_ref().and_then(Pending::poll)?;
        self.running = None;
        Some(result)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_panicking_job_reports_an_error() {
        let ctx = egui::Context::default();
        let mut job: Task<JobResult<u32>> = Task::named("boom-test");
        job.start(&ctx, || panic!("boom"));
        let start = std::time::Instant::now();
        loop {
            if let Some(result) = job.poll() {
                assert!(!job.is_running());
                let message = result.unwrap_err().to_string();
                assert!(message.contains("boom-test"), "{message}");
                assert!(message.contains("boom"), "{message}");
                break;
            }
            assert!(start.elapsed().as_secs() < 10, "no result from a dead job");
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
    }
}
