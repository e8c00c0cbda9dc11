//! Every path the program opens besides the study itself goes through here: pictures,
//! the catalog folder, export targets, hand-out outputs and temporary files.
//!
//! Two dangers are closed in one place. A path that names an open study (or its `-wal`,
//! `-shm` or `-journal`) must never be opened with plain file I/O: closing any
//! descriptor of a file drops the POSIX locks this process holds on it, and SQLite's
//! locks are POSIX locks (SQLite, "How To Corrupt An SQLite Database File", 2.2). And a
//! picture path must not lead out of the catalog folder (a link, `..`) or to something
//! that is not a regular file (a FIFO blocks `open`, a device never ends).

use std::io::Write;
use std::path::{Component, Path, PathBuf};

use super::{Result, StudyError, open_files};

/// What every temporary file of this program carries in its name, so that a stale one
/// (left by a killed export, hand-out or merge) is recognised and removed.
pub const TEMP_MARK: &str = ".plumbline-partial-";

/// Why a path inside the catalog folder cannot be used.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PathRefusal {
    /// The path is absolute or has `..`.
    LeavesFolder,
    /// The path resolves (through a link) to a place outside the catalog folder.
    LinksOutside,
    /// Nothing is there.
    Missing,
    /// A folder, FIFO, socket or device.
    NotRegularFile,
    /// One of the study files this process has open.
    StudyFile,
    /// The catalog folder itself cannot be resolved.
    NoFolder(String),
}

impl std::fmt::Display for PathRefusal {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            PathRefusal::LeavesFolder => "it leaves the catalog folder (absolute or with \"..\")",
            PathRefusal::LinksOutside => "it leads outside the catalog folder through a link",
            PathRefusal::Missing => "there is no file there",
            PathRefusal::NotRegularFile => "it is not a regular file",
            PathRefusal::StudyFile => "it is a study file, not a picture",
            PathRefusal::NoFolder(why) => return write!(f, "the catalog folder: {why}"),
        })
    }
}

/// The plain relative shape a catalog path must have: no root, no `..`.
pub fn is_plain_relative(path: &str) -> bool {
    let p = Path::new(path);
    !p.is_absolute()
        && p.components()
            .all(|c| matches!(c, Component::Normal(_) | Component::CurDir))
}

/// Resolves `relative` inside `root`: the real path (links followed) of a regular file
/// that lies inside the real catalog folder and is not a study file of this process.
pub fn resolve_inside(root: &Path, relative: &str) -> std::result::Result<PathBuf, PathRefusal> {
    if !is_plain_relative(relative) {
        return Err(PathRefusal::LeavesFolder);
    }
    let root = root
        .canonicalize()
        .map_err(|e| PathRefusal::NoFolder(format!("{}: {e}", root.display())))?;
    let full = root.join(relative);
    if std::fs::symlink_metadata(&full).is_err() {
        return Err(PathRefusal::Missing);
    }
    let real = full.canonicalize().map_err(|_| PathRefusal::Missing)?;
    if !real.starts_with(&root) {
        return Err(PathRefusal::LinksOutside);
    }
    if !std::fs::metadata(&real).is_ok_and(|m| m.is_file()) {
        return Err(PathRefusal::NotRegularFile);
    }
    if is_study_file(&real) {
        return Err(PathRefusal::StudyFile);
    }
    Ok(real)
}

/// The real path of `path` (links followed); for a file that does not exist yet, its
/// real folder joined with its name.
fn real_path(path: &Path) -> Option<PathBuf> {
    if let Ok(p) = path.canonicalize() {
        return Some(p);
    }
    let name = path.file_name()?;
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    Some(parent.canonicalize().ok()?.join(name))
}

/// True when `path` is a study file this process has open, or one of its `-wal`,
/// `-shm` or `-journal` files, by device and inode (links followed) or, for a sidecar
/// that does not exist yet, by its resolved name.
pub fn is_study_file(path: &Path) -> bool {
    let Some(real) = real_path(path) else {
        return false;
    };
    let key = open_files::key_of(&real).ok();
    open_files::open_paths().iter().any(|study| {
        if key.is_some() && open_files::key_of(study).ok() == key {
            return true;
        }
        ["-wal", "-shm", "-journal"].iter().any(|suffix| {
            let mut side = study.as_os_str().to_owned();
            side.push(suffix);
            let side = PathBuf::from(side);
            side == real || (key.is_some() && open_files::key_of(&side).ok() == key)
        })
    })
}

/// True when the file at `path` begins with SQLite's header, read only when no study
/// of this process is that file (reading ours would drop its locks).
fn is_sqlite_file(path: &Path) -> bool {
    use std::io::Read;
    if is_study_file(path) {
        return true;
    }
    if !std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
        return false;
    }
    let mut head = [0u8; 16];
    std::fs::File::open(path)
        .and_then(|mut f| f.read_exact(&mut head))
        .is_ok_and(|_| &head == b"SQLite format 3\0")
}

fn refused(path: &Path, reason: &str) -> StudyError {
    StudyError::Refused {
        path: path.display().to_string(),
        reason: reason.into(),
    }
}

/// Refuses an output path that would overwrite a study: an open one, its sidecar
/// files, or any other SQLite file; also one that is not a regular file.
pub fn check_output(path: &Path) -> Result<()> {
    if is_study_file(path) {
        return Err(refused(
            path,
            "this is the study (or one of its -wal/-shm/-journal files); writing there would destroy it; choose another file",
        ));
    }
    if is_sqlite_file(path) {
        return Err(refused(
            path,
            "this is an SQLite database (perhaps another study); it is not overwritten; choose another file",
        ));
    }
    if std::fs::metadata(path).is_ok_and(|m| !m.is_file()) {
        return Err(refused(
            path,
            "this is not a regular file (a folder, pipe or device); choose a file",
        ));
    }
    Ok(())
}

/// A temporary file beside `target` with the recognisable mark and this process's id
/// in its name; removed when dropped unless it was renamed into place.
pub struct PartialFile {
    path: PathBuf,
    kept: bool,
}

impl PartialFile {
    /// Names (but does not create) a temporary file beside `target`.
    pub fn beside(target: &Path) -> PartialFile {
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "file".into());
        let folder = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let unique: u64 = rand::random();
        PartialFile {
            path: folder.join(format!(
                "{TEMP_MARK}{}-{unique:016x}-{name}",
                std::process::id()
            )),
            kept: false,
        }
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Renames the finished file over `target` (atomic within one folder).
    pub fn put_in_place(mut self, target: &Path) -> Result<()> {
        std::fs::rename(&self.path, target)?;
        self.kept = true;
        Ok(())
    }
}

impl Drop for PartialFile {
    fn drop(&mut self) {
        if !self.kept {
            if self.path.is_dir() {
                let _ = std::fs::remove_dir_all(&self.path);
            }
            for suffix in ["", "-wal", "-shm", "-journal"] {
                let mut p = self.path.clone().into_os_string();
                p.push(suffix);
                let _ = std::fs::remove_file(PathBuf::from(p));
            }
        }
    }
}

/// Writes `target` through a temporary file in its folder that is synced and renamed
/// into place, so an interrupted write never leaves a half file under the final name.
/// Refuses a target that is a study or another SQLite file.
pub fn write_atomically(
    target: &Path,
    write: impl FnOnce(&mut dyn Write) -> Result<()>,
) -> Result<()> {
    check_output(target)?;
    let partial = PartialFile::beside(target);
    if let Some(folder) = partial.path().parent() {
        sweep_stale(folder);
    }
    {
        let file = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(partial.path())?;
        let mut out = std::io::BufWriter::new(file);
        write(&mut out)?;
        let file = out.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
    }
    partial.put_in_place(target)
}

/// Removes temporary files that a killed run left in `folder`: those with the mark
/// whose process is gone (a running one's are left alone). Returns how many went.
pub fn sweep_stale(folder: &Path) -> usize {
    let Ok(entries) = std::fs::read_dir(folder) else {
        return 0;
    };
    let mut removed = 0;
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        let Some(rest) = name.strip_prefix(TEMP_MARK) else {
            continue;
        };
        let pid = rest.split('-').next().and_then(|p| p.parse::<u32>().ok());
        let running = pid
            .is_some_and(|p| p == std::process::id() || Path::new(&format!("/proc/{p}")).exists());
        if running {
            continue;
        }
        let gone = match entry.file_type() {
            Ok(t) if t.is_dir() => std::fs::remove_dir_all(entry.path()).is_ok(),
            Ok(t) if t.is_file() => std::fs::remove_file(entry.path()).is_ok(),
            _ => false,
        };
        removed += usize::from(gone);
    }
    removed
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stale_partials_go_and_live_ones_stay() {
        let dir = tempfile::tempdir().unwrap();
        let dead = dir
            .path()
            .join(format!("{TEMP_MARK}999999999-00-scores.csv"));
        let live = dir
            .path()
            .join(format!("{TEMP_MARK}{}-00-scores.csv", std::process::id()));
        let other = dir.path().join("scores.csv");
        for p in [&dead, &live, &other] {
            std::fs::write(p, b"x").unwrap();
        }
        assert_eq!(sweep_stale(dir.path()), 1);
        assert!(!dead.exists() && live.exists() && other.exists());
    }

    #[test]
    fn an_interrupted_write_leaves_nothing_under_the_name() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out.csv");
        let result = write_atomically(&target, |w| {
            w.write_all(b"half")?;
            Err(StudyError::input("stopped"))
        });
        assert!(result.is_err());
        assert!(!target.exists());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
        write_atomically(&target, |w| Ok(w.write_all(b"whole")?)).unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"whole");
    }
}
