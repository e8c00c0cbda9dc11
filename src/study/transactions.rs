//! Write transactions that take the write lock at `BEGIN` and wait for another program's
//! write (saying so on stderr when asked), reads that share one transaction, and the
//! size cap used to test a full disk.

use std::path::Path;
use std::time::Duration;

use rusqlite::{Transaction, TransactionBehavior};

use super::{Result, Study};

/// How long one write waits for another program holding the study's write lock before
/// it gives up, unless the caller sets its own limit (`Study::set_write_wait`).
pub const DEFAULT_WRITE_WAIT: Duration = Duration::from_secs(60);

/// How long a write waits quietly before a command-line writer says it is waiting.
pub const WAIT_NOTICE_AFTER: Duration = Duration::from_secs(1);

impl Study {
    /// How long each write waits for another program's write to finish.
    pub fn set_write_wait(&mut self, wait: Duration) -> Result<()> {
        self.write_wait = wait;
        self.conn.busy_timeout(wait)?;
        Ok(())
    }

    /// The limit set by `set_write_wait` (or the default).
    pub fn write_wait(&self) -> Duration {
        self.write_wait
    }

    /// Makes writes that wait longer than `WAIT_NOTICE_AFTER` say so on stderr (for the
    /// command line, where a silent wait looks like a hang).
    pub fn announce_waits_on_stderr(&mut self) {
        self.announce_waits = true;
    }

    /// Begins a write transaction that holds the write lock from its first statement
    /// (`BEGIN IMMEDIATE`). A deferred transaction that reads and then writes is refused
    /// by SQLite at once, without waiting, when another writer committed meanwhile.
    pub(crate) fn begin_write(&mut self) -> Result<Transaction<'_>> {
        if self.read_only {
            return Err(self.read_only_error());
        }
        let notice = self.announce_waits.then(|| WaitNotice::start(&self.path));
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate);
        drop(notice);
        Ok(tx?)
    }

    /// Runs `read` inside one read transaction, so every query it makes (a snapshot and the
    /// reads a view model adds to it) sees the same state of the file, even while another
    /// program writes. Nothing may be written inside.
    pub fn read_together<T>(&self, read: impl FnOnce(&Study) -> Result<T>) -> Result<T> {
        if !self.conn.is_autocommit() {
            return read(self);
        }
        let together = self.conn.unchecked_transaction()?;
        let out = read(self);
        drop(together); // a rollback: nothing was written
        out
    }

    /// Caps the file at `pages` pages for this connection, which makes SQLite answer
    /// "disk full" once the study would grow past it (used to test full-disk handling).
    pub fn limit_size_in_pages(&self, pages: u64) -> Result<()> {
        self.conn
            .pragma_update(None, "max_page_count", pages as i64)?;
        Ok(())
    }
}

/// Says on stderr that a write is waiting for another program, once it has waited for
/// `WAIT_NOTICE_AFTER`; dropping it before then says nothing.
struct WaitNotice {
    _stop: std::sync::mpsc::Sender<()>,
}

impl WaitNotice {
    fn start(path: &Path) -> WaitNotice {
        let (stop, stopped) = std::sync::mpsc::channel::<()>();
        let name = path.display().to_string();
        let _ = std::thread::Builder::new()
            .name("write-wait-notice".into())
            .spawn(move || {
                if let Err(std::sync::mpsc::RecvTimeoutError::Timeout) =
                    stopped.recv_timeout(WAIT_NOTICE_AFTER)
                {
                    eprintln!("waiting for another program writing to {name}…");
                }
            });
        WaitNotice { _stop: stop }
    }
}
