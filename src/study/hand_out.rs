//! Reviewer copies: a study for grading on another machine that carries the catalog,
//! scales, rankings and pictures, the reviewer's own grades and queue, and nobody else's.
//! `merge` brings the copy's grades back and trusts only this reviewer's without asking.

use std::path::Path;

use rusqlite::params;

use super::file_guard::{self, PartialFile};
use super::merge::{pictures_folder_name, refused};
use super::settings::keys;
use super::{Result, Study};

impl Study {
    /// Copies the pictures of the items the reviewer will see (the queue, else every
    /// ranked item, and the anchors) into `folder`, keeping their relative paths. Only
    /// regular files whose real path lies inside the catalog folder are copied (a link
    /// out of it, a FIFO or a device is skipped), into a folder made new for the copy.
    fn copy_pictures(&self, reviewer: &str, folder: &Path) -> Result<()> {
        let Some(root) = self.catalog_dir()? else {
            return Ok(());
        };
        let mut stmt = self.conn().prepare(
            "SELECT DISTINCT i.image FROM items i WHERE i.image != '' AND (
                 i.item_id IN (SELECT item_id FROM queue_entries WHERE reviewer = ?1)
              OR (NOT EXISTS (SELECT 1 FROM queue_entries WHERE reviewer = ?1)
                  AND i.item_id IN (SELECT item_id FROM ranked_items))
              OR i.item_id IN (SELECT anchor_item_id FROM contexts WHERE anchor_item_id IS NOT NULL))",
        )?;
        let images: Vec<String> = stmt
            .query_map([reviewer], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        for image in images {
            // A missing or refused picture stays missing in the copy, as it shows here.
            let Ok(source) = file_guard::resolve_inside(&root, &image) else {
                continue;
            };
            let target = folder.join(&image);
            if let Some(parent) = target.parent() {
                std::fs::create_dir_all(parent)?;
            }
            std::fs::copy(&source, &target)?;
        }
        Ok(())
    }

    /// Writes a reviewer copy: the same catalog, scales and rankings, this reviewer's own
    /// grades and queue, and nobody else's grades, queues or settled grades.
    pub fn hand_out(&self, reviewer: &str, out: &Path) -> Result<()> {
        if self.is_read_only() {
            return Err(self.read_only_error());
        }
        if std::fs::symlink_metadata(out).is_ok() {
            return Err(refused(
                out,
                "a file already exists there; choose another name".into(),
            ));
        }
        file_guard::check_output(out)?;
        let pictures = pictures_folder_name(out);
        let pictures_path = out.with_file_name(&pictures);
        if std::fs::symlink_metadata(&pictures_path).is_ok() {
            return Err(refused(
                &pictures_path,
                "the copy's pictures folder already exists; remove it or choose another name for the copy".into(),
            ));
        }
        let known: bool = self.conn().query_row(
            "SELECT EXISTS (SELECT 1 FROM reviewers WHERE reviewer = ?1)",
            [reviewer],
            |r| r.get(0),
        )?;
        if !known {
            self.add_reviewer(reviewer)?;
        }
        // Everything is made under temporary names and renamed into place at the end,
        // so an interrupted hand-out leaves no half copy under the copy's name.
        let partial_copy = PartialFile::beside(out);
        self.conn()
            .execute("VACUUM INTO ?1", [partial_copy.path().to_string_lossy()])?;
        let secret = new_copy_secret();
        keep_only_own(partial_copy.path(), reviewer, &secret, &pictures)?;
        let partial_pictures = PartialFile::beside(&pictures_path);
        std::fs::create_dir(partial_pictures.path())?;
        self.copy_pictures(reviewer, partial_pictures.path())?;
        // This study remembers whom the secret was issued to: on the way back only that
        // reviewer's grades come in without asking, and only under this secret.
        self.set_setting(&format!("{}{secret}", keys::HAND_OUT_PREFIX), reviewer)?;
        partial_pictures.put_in_place(&pictures_path)?;
        partial_copy.put_in_place(out)
    }
}

/// A fresh secret naming one hand-out: 128 random bits from the thread's
/// cryptographically secure generator (ChaCha, seeded by the operating system), so a
/// copy edited to claim another reviewer's hand-out cannot guess theirs.
fn new_copy_secret() -> String {
    format!("{:032x}", rand::random::<u128>())
}

/// Leaves in the copy at `path` only what its reviewer may hold: their own grades and
/// queue, no settled grades, no other hand-out's secret, no gold pair's known level or
/// rationale (their queue still holds the gold pairs as pairs; accuracy against gold is
/// computed at home after merge), no human-sample draws, and this hand-out's own secret.
fn keep_only_own(path: &Path, reviewer: &str, secret: &str, pictures: &str) -> Result<()> {
    let mut copy = Study::open(path)?;
    let tx = copy.begin_write()?;
    for sql in [
        "DELETE FROM current_grades WHERE reviewer != ?1",
        "DELETE FROM grade_events WHERE reviewer != ?1",
        "DELETE FROM queue_entries WHERE reviewer != ?1",
        "DELETE FROM reviewers WHERE reviewer != ?1",
        "DELETE FROM reviewer_numbers WHERE reviewer != ?1",
    ] {
        tx.execute(sql, params![reviewer])?;
    }
    // Packed again from what is left, so no pack holds another reviewer's grade.
    super::grade_packs::pack_all(&tx)?;
    tx.execute("DELETE FROM settle_events", [])?;
    tx.execute("DELETE FROM gold_pairs", [])?;
    // Which contexts are in the human sample is the lead's to know: a reviewer who knew
    // might grade them differently.
    tx.execute("DELETE FROM sample_draws", [])?;
    tx.execute(
        "DELETE FROM settings WHERE substr(key, 1, length(?1)) = ?1",
        params![keys::HAND_OUT_PREFIX],
    )?;
    for (key, value) in [
        (keys::HANDED_OUT_TO, reviewer),
        (keys::COPY_ID, secret),
        (keys::CATALOG_DIR, pictures),
    ] {
        tx.execute(
            "INSERT INTO settings(key, value) VALUES (?1, ?2)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            params![key, value],
        )?;
    }
    tx.commit()?;
    copy.conn().execute_batch("VACUUM")?;
    Ok(())
}
