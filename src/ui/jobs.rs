//! Background work for the screens: a job runs on its own thread and sends its result
//! through a channel; the screen polls once per frame and asks for a repaint on arrival.

use std::sync::mpsc::{Receiver, channel};

/// A result that will arrive later.
pub struct Pending<T> {
    receiver: Receiver<T>,
}

impl<T: Send + 'static> Pending<T> {
    /// Runs `work` on a new thread; `ctx` is woken when it finishes.
    pub fn spawn(ctx: &egui::Context, work: impl FnOnce() -> T + Send + 'static) -> Pending<T> {
        let (sender, receiver) = channel();
        let ctx = ctx.clone();
        std::thread::spawn(move || {
            let _ = sender.send(work());
            ctx.request_repaint();
        });
        Pending { receiver }
    }

    /// The result if it has arrived; never blocks.
    pub fn poll(&self) -> Option<T> {
        self.receiver.try_recv().ok()
    }

    /// Waits for the result (tests and benchmarks only).
    pub fn wait(self) -> Option<T> {
        self.receiver.recv().ok()
    }
}
