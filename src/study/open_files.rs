//! Which study files this process has open, so that nothing reads a study with plain
//! file I/O while one of our own SQLite connections holds locks on it.
//!
//! POSIX advisory locks belong to the process, not to the descriptor: closing *any*
//! descriptor of a file releases every lock the process holds on it. SQLite relies on
//! those locks to know that a connection still uses the WAL; without them, another
//! program that closes the study deletes the WAL under our feet and committed grades
//! vanish. Files are keyed by device and inode, read with `stat` (which opens nothing).

use std::collections::HashMap;
use std::path::Path;
use std::sync::{Mutex, MutexGuard, PoisonError};

use super::{Result, StudyError};

type FileKey = (u64, u64);

static OPEN: Mutex<Option<HashMap<FileKey, usize>>> = Mutex::new(None);

fn table() -> MutexGuard<'static, Option<HashMap<FileKey, usize>>> {
    OPEN.lock().unwrap_or_else(PoisonError::into_inner)
}

fn key_of(path: &Path) -> std::io::Result<FileKey> {
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
            && let Some(n) = map.get_mut(&self.key)
        {
            *n -= 1;
            if *n == 0 {
                map.remove(&self.key);
            }
        }
    }
}

fn add(map: &mut Option<HashMap<FileKey, usize>>, key: FileKey) -> Registration {
    *map.get_or_insert_with(HashMap::new).entry(key).or_insert(0) += 1;
    Registration { key }
}

/// Registers a file that a connection has just created.
pub fn register(path: &Path) -> Result<Registration> {
    let key = key_of(path)?;
    Ok(add(&mut table(), key))
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
    Ok((value, add(&mut guard, key)))
}

/// True when this process has a study connection to the file at `path`: such a file
/// must not be opened with plain file I/O (for example as a CSV to import).
pub fn is_open_study(path: &Path) -> bool {
    match key_of(path) {
        Ok(key) => table().as_ref().is_some_and(|m| m.contains_key(&key)),
        Err(_) => false,
    }
}
