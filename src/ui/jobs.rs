//! Background work for the screens: a job runs on its own thread and sends its result
//! through a channel; the screen polls once per frame and asks for a repaint on arrival.
//!
//! A job that panics still delivers: its thread catches the panic and sends
//! `JobOutput::from_failure`, so a screen shows an error instead of a spinner forever.

use std::sync::mpsc::{Receiver, TryRecvError, channel};

/// What a job's result becomes when the job dies before it can return one.
pub trait JobOutput {
    fn from_failure(message: String) -> Self;
}

impl<M> JobOutput for Result<M, String> {
    fn from_failure(message: String) -> Self {
        Err(message)
    }
}

/// A file dialog that died is treated as cancelled.
impl<T> JobOutput for Option<T> {
    fn from_failure(_: String) -> Self {
        None
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
    /// Runs `work` on a new thread named "job"; `ctx` is woken when it finishes.
    pub fn spawn(ctx: &egui::Context, work: impl FnOnce() -> T + Send + 'static) -> Pending<T> {
        Pending::spawn_named("job", ctx, work)
    }

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

    /// Waits for the result (tests and benchmarks only).
    pub fn wait(self) -> Option<T> {
        self.receiver.recv().ok()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_panicking_job_reports_an_error() {
        let ctx = egui::Context::default();
        let job: Pending<Result<u32, String>> = Pending::spawn(&ctx, || panic!("boom"));
        let start = std::time::Instant::now();
        loop {
            if let Some(result) = job.poll() {
                let message = result.unwrap_err();
                assert!(message.contains("boom"), "{message}");
                break;
            }
            assert!(start.elapsed().as_secs() < 10, "no result from a dead job");
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
    }
}
