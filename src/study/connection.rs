//! Opening a study's connection: read-only when its file or folder cannot be written
//! (then without creating `-wal` or `-shm` beside it), and giving a read-only `-wal` or
//! `-shm` left by an earlier read-only open its write permission back.

use std::path::{Path, PathBuf};

use rusqlite::{Connection, OpenFlags};

use super::untrusted;

/// True unless the study's folder has no write permission bits: SQLite must create the
/// `-wal` and `-shm` files beside the study to write (and to read a WAL study without
/// them, see `connect`).
pub(super) fn folder_writable(path: &Path) -> bool {
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    std::fs::metadata(folder).is_ok_and(|m| !m.permissions().readonly())
}

/// Opens the connection. A read-only study whose `-wal` holds nothing is opened
/// immutable: SQLite then creates no `-shm` or `-wal` file, which a read-only folder
/// could not hold and which, made from a read-only study, would keep its read-only
/// permissions and block writing once the study is writable again.
pub(super) fn connect(path: &Path, read_only: bool) -> rusqlite::Result<Connection> {
    let no_mutex = OpenFlags::SQLITE_OPEN_NO_MUTEX;
    if !read_only {
        return Connection::open_with_flags(path, OpenFlags::SQLITE_OPEN_READ_WRITE | no_mutex);
    }
    let wal = sidecar(path, "-wal");
    if std::fs::metadata(&wal).is_ok_and(|m| m.len() > 0) {
        return Connection::open_with_flags(path, OpenFlags::SQLITE_OPEN_READ_ONLY | no_mutex);
    }
    Connection::open_with_flags(
        untrusted::immutable_uri(path),
        OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_URI | no_mutex,
    )
}

/// `path` with a suffix such as `-wal` added to its file name.
fn sidecar(path: &Path, suffix: &str) -> PathBuf {
    let mut p = path.as_os_str().to_owned();
    p.push(suffix);
    PathBuf::from(p)
}

/// Gives back write permission to an empty `-wal` and a `-shm` left behind by an
/// earlier read-only open (SQLite makes them with the study's permissions), so they do
/// not keep a study that is writable again from being written. Only the permission
/// bits change; neither file is opened.
pub(super) fn release_read_only_sidecars(path: &Path) {
    let Ok(study_mode) = std::fs::metadata(path).map(|m| m.permissions()) else {
        return;
    };
    for suffix in ["-wal", "-shm"] {
        let side = sidecar(path, suffix);
        if let Ok(m) = std::fs::metadata(&side)
            && m.is_file()
            && m.permissions().readonly()
        {
            let _ = std::fs::set_permissions(&side, study_mode.clone());
        }
    }
}
