//! Reviewer copies: a study for grading on another machine that carries the catalog,
//! scales, rankings and pictures, the reviewer's own grades and queue, and nobody else's.
//! `merge` brings the copy's grades back and trusts only this reviewer's without asking.

use std::path::Path;

use rusqlite::params;

use super::merge::{pictures_folder_name, refused};
use super::{Result, Study, time};

impl Study {
    /// Copies the pictures of the items the reviewer will see (the queue, else every
    /// ranked item, and the anchors) into `folder`, keeping their relative paths.
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
            let relative = Path::new(&image);
            // Only plain relative paths inside the catalog (import checked them too).
            if relative.is_absolute()
                || relative.components().any(|c| {
                    !matches!(
                        c,
                        std::path::Component::Normal(_) | std::path::Component::CurDir
                    )
                })
            {
                continue;
            }
            let source = root.join(relative);
            if !std::fs::metadata(&source).is_ok_and(|m| m.is_file()) {
                continue; // a missing picture stays missing in the copy, as here
            }
            let target = folder.join(relative);
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
        if out.exists() {
            return Err(refused(
                out,
                "a file already exists there; choose another name".into(),
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
        self.conn()
            .execute("VACUUM INTO ?1", [out.to_string_lossy()])?;
        let mut copy = Study::open(out)?;
        let tx = copy.begin_write()?;
        tx.execute(
            "DELETE FROM current_grades WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute(
            "DELETE FROM grade_events WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute(
            "DELETE FROM queue_entries WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute("DELETE FROM settle_events", [])?;
        tx.execute(
            "DELETE FROM reviewers WHERE reviewer != ?1",
            params![reviewer],
        )?;
        tx.execute(
            "INSERT INTO settings(key, value) VALUES ('handed_out_to', ?1)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            params![reviewer],
        )?;
        let copy_id =
            super::import::content_uid(&[reviewer, &out.display().to_string(), &time::now()]);
        tx.execute(
            "INSERT INTO settings(key, value) VALUES ('copy_id', ?1)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            params![copy_id],
        )?;
        let pictures = pictures_folder_name(out);
        tx.execute(
            "INSERT INTO settings(key, value) VALUES ('catalog_dir', ?1)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            params![pictures],
        )?;
        tx.commit()?;
        copy.conn().execute_batch("VACUUM")?;
        drop(copy);
        // This study remembers whom the copy went to: on the way back only that
        // reviewer's grades come in without asking.
        self.set_setting(&format!("hand_out:{copy_id}"), reviewer)?;
        self.copy_pictures(reviewer, &out.with_file_name(&pictures))?;
        Ok(())
    }
}
