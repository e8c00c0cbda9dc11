//! The desk's writer: one long-lived thread ("grade-writer") owns the desk's connection
//! and commits each grade in its own transaction, so a busy study never freezes the
//! window. It retries a grade until it is saved and reports every attempt.

use std::sync::mpsc::{Receiver, Sender, channel};
use std::time::Duration;

use crate::study::grades::NewGrade;
use crate::study::{Study, StudyError};

/// How long one attempt waits for another program's write before it reports "busy" and
/// tries again (the window shows the wait meanwhile).
pub const ATTEMPT_WAIT: Duration = Duration::from_secs(1);
/// Pause before retrying after a failure that is not a busy study.
pub const RETRY_PAUSE: Duration = Duration::from_secs(2);

/// What the writer reports about a grade.
#[derive(Debug)]
pub enum WriterEvent {
    Saved { ticket: u64 },
    Failed { ticket: u64, error: String },
}

/// The desk's handle on its writer thread.
pub struct GradeWriter {
    requests: Sender<(u64, NewGrade)>,
    events: Receiver<WriterEvent>,
    /// Why no thread runs, if it could not start: every grade then reports it.
    dead: Option<String>,
    refused: std::cell::RefCell<Vec<u64>>,
}

impl GradeWriter {
    /// Moves `study` onto a new writer thread; `wake` is called after every event.
    pub fn start(mut study: Study, wake: impl Fn() + Send + 'static) -> GradeWriter {
        let (requests, incoming) = channel::<(u64, NewGrade)>();
        let (report, events) = channel();
        let _ = study.set_write_wait(ATTEMPT_WAIT);
        let spawned = std::thread::Builder::new()
            .name("grade-writer".into())
            .spawn(move || {
                for (ticket, grade) in incoming {
                    loop {
                        match study.record_grade(&grade) {
                            Ok(_) => {
                                let _ = report.send(WriterEvent::Saved { ticket });
                                wake();
                                break;
                            }
                            Err(e) => {
                                let busy = matches!(e, StudyError::Busy);
                                let error = if busy {
                                    "another program is writing to the study; waiting to save…"
                                        .to_string()
                                } else {
                                    format!("grade not saved yet, retrying: {e}")
                                };
                                if report.send(WriterEvent::Failed { ticket, error }).is_err() {
                                    return; // Nobody listens any more (the window closed).
                                }
                                wake();
                                if !busy {
                                    std::thread::sleep(RETRY_PAUSE);
                                }
                            }
                        }
                    }
                }
            });
        GradeWriter {
            requests,
            events,
            dead: spawned
                .err()
                .map(|e| format!("the writer could not start: {e}")),
            refused: std::cell::RefCell::new(Vec::new()),
        }
    }

    pub fn send(&self, ticket: u64, grade: NewGrade) {
        if self.dead.is_some() || self.requests.send((ticket, grade)).is_err() {
            self.refused.borrow_mut().push(ticket);
        }
    }

    /// Events that have arrived; never blocks.
    pub fn events(&self) -> Vec<WriterEvent> {
        let mut events: Vec<WriterEvent> = self.events.try_iter().collect();
        let why = self
            .dead
            .clone()
            .unwrap_or_else(|| "the writer stopped".into());
        for &ticket in self.refused.borrow().iter() {
            events.push(WriterEvent::Failed {
                ticket,
                error: why.clone(),
            });
        }
        events
    }
}
