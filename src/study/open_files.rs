//! Which study files this process has open, so that nothing reads a study with plain
//! file I/O while one of our own SQLite connections holds locks on it.
//!
//! POSIX advisory locks belong to the process, not to the descriptor: closing *any*
//! descriptor of a file releases every lock the process holds on it. SQLite relies on
//! those locks to know that a connection still uses the WAL; without them, another
//! program that closes the study deletes the WAL under our feet and committed grades
//! vanish. Files are keyed by device and inode, read with `stat` (which opens nothing).

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard, PoisonError};

use super::{Result, StudyError};

type FileKey = (u64, u64);

/// Per open file: how many studies hold it, and its real path (for its sidecar files).
type Table = HashMap<FileKey, (usize, PathBuf)>;

static OPEN: Mutex<Option<Table>> = Mutex::new(None);

fn table() -> MutexGuard<'static, Option<Table>> {
    OPEN.lock().unwrap_or_else(PoisonError::into_inner)
}

/// The real paths of every study file this process has open.
pub fn open_paths() -> Vec<PathBuf> {
    table()
        .as_ref()
        .map(|m| m.values().map(|(_, p)| p.clone()).collect())
        .unwrap_or_default()
}

/// Device and inode of the file at `path` (links followed); `stat` opens nothing.
pub fn key_of(path: &Path) -> std::io::Result<FileKey> {
    use std::os::unix::fs::MetadataExt;
    let m = std::fs::metadata(path)?;
    Ok((m.dev(), m.ino()))
}

/// Held by an open `Study`; releases its count when dropped (after the connection).
#[derive(Debug)]
pub struct Registration {
    key: FileKey,
}

impl Drop for Registration {
    fn drop(&mut self) {
        let mut guard = table();
        if let Some(map) = guard.as_mut()
            && let Some((n, _)) = map.get_mut(&self.key)
        {
            *n -= 1;
            if *n == 0 {
                map.remove(&self.key);
            }
        }
    }
}

fn add(map: &mut Option<Table>, key: FileKey, path: &Path) -> Registration {
    let real = path.canonicalize().unwrap_or_else(|_| path.to_path_buf());
    map.get_or_insert_with(HashMap::new)
        .entry(key)
        .or_insert((0, real))
        .0 += 1;
    Registration { key }
}

/// Runs `close` with the table locked. Opening and closing connections to one file are
/// thereby never interleaved in this process: SQLite 3.51.1's unix VFS takes its global
/// mutex and then a file's inode mutex when it opens the file (`findReusableFd`), but
/// the inode mutex and then the global mutex when a closing connection takes its last
/// exclusive lock (`unixLock` → `unixIsSharingShmNode`), and two job threads doing
/// both at once on one study deadlocked the workbench.
pub fn while_locked<T>(close: impl FnOnce() -> T) -> T {
    let _guard = table();
    close()
}

/// Registers a file that a connection has just created.
pub fn register(path: &Path) -> Result<Registration> {
    let key = key_of(path)?;
    Ok(add(&mut table(), key, path))
}

/// Runs `open` with the table locked, telling it whether this process already has the
/// file open (if not, a raw read of the file is safe), and registers the result.
pub fn open_checked<T>(
    path: &Path,
    open: impl FnOnce(bool) -> Result<T>,
) -> Result<(T, Registration)> {
    let key = key_of(path).map_err(|e| StudyError::Refused {
        path: path.display().to_string(),
        reason: format!("cannot be opened: {e}"),
    })?;
    let mut guard = table();
    let first = guard.as_ref().is_none_or(|m| !m.contains_key(&key));
    let value = open(first)?;
    Ok((value, add(&mut guard, key, path)))
}
