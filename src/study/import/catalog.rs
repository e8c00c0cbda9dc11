//! Items and contexts.

use std::collections::BTreeMap;

use rusqlite::{OptionalExtension, Statement, Transaction, params};

use super::{
    CONTEXTS, DistinctIds, Fields, FileProgress, FileReport, ITEMS, Source, each_row,
    image_path_problem, input_error, parse_bool, report, unneutralise,
};
use crate::study::Result;
use crate::study::csv_input::ProblemLog;
use crate::study::scratch::Scratch;

#[derive(Debug, Clone, PartialEq)]
struct ItemRow {
    title: String,
    category: String,
    description: String,
    price: Option<f64>,
    image: String,
    is_new: bool,
    attributes: String,
}

/// Items are read, checked and written one row at a time; only the ids met so far are
/// kept (in the scratch database), so a catalog of any size fits in bounded memory.
pub(super) fn import_items(
    tx: &Transaction,
    src: &Source,
    scratch: &Scratch,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let mut log = ProblemLog::default();
    let mut seen = DistinctIds::with_study(tx, scratch, "item_id", "SELECT item_id FROM items")?;
    let mut writer = ItemWriter::new(tx, src)?;
    each_row(src, &ITEMS, progress, &mut log, &mut |f, log| {
        let Some(id) = f.required("item_id", log) else {
            return Ok(());
        };
        if let Some(problem) = seen.check(id, f.row.line)? {
            log.push(f.problem("item_id", problem));
            return Ok(());
        }
        if let Some(item) = checked_item(&f, &src.folder, log)
            && log.0.is_empty()
        {
            writer.write(id, &item)?;
        }
        Ok(())
    })?;
    log.into_result().map_err(input_error)?;
    let (mut report, with_images) = (writer.report, writer.with_images);
    repoint_images(tx, src, with_images, &mut report)?;
    Ok(report)
}

/// One row's fields checked; `None` once a problem is logged.
fn checked_item(f: &Fields, folder: &std::path::Path, log: &mut ProblemLog) -> Option<ItemRow> {
    let title = f.required("title", log)?;
    let price = f.optional_f64("price", log)?;
    let Some(is_new) = parse_bool(f.text("new")) else {
        log.push(f.problem(
            "new",
            format!("new must be true, false, 1 or 0, got \"{}\"", f.text("new")),
        ));
        return None;
    };
    let image = f.text("image").trim();
    if let Some(problem) = (!image.is_empty())
        .then(|| image_path_problem(folder, image))
        .flatten()
    {
        log.push(f.problem("image", problem));
        return None;
    }
    // Columns beyond the known ones are the item's attributes.
    let attributes: BTreeMap<&str, &str> = f
        .row
        .header
        .iter()
        .enumerate()
        .filter(|(i, name)| !is_item_column(name) && !f.row.field(*i).is_empty())
        .map(|(i, name)| (name.as_str(), unneutralise(f.row.field(i))))
        .collect();
    Some(ItemRow {
        title: title.to_string(),
        category: f.text("category").trim().to_string(),
        description: f.text("description").to_string(),
        price,
        image: image.to_string(),
        is_new,
        attributes: serde_json::to_string(&attributes).unwrap_or_else(|_| "{}".into()),
    })
}

fn is_item_column(name: &str) -> bool {
    ITEMS.required.contains(&name) || ITEMS.optional.contains(&name)
}

/// Writes items one by one, comparing each with the study's row of the same id.
struct ItemWriter<'t> {
    stored: Statement<'t>,
    upsert: Statement<'t>,
    report: FileReport,
    /// Items of this file that name a picture.
    with_images: u64,
}

impl<'t> ItemWriter<'t> {
    fn new(tx: &'t Transaction, src: &Source) -> Result<Self> {
        Ok(ItemWriter {
            stored: tx.prepare(
                "SELECT title, category, description, price, image, is_new, attributes FROM items WHERE item_id = ?1",
            )?,
            upsert: tx.prepare(
                "INSERT INTO items(item_id, title, category, description, price, image, is_new, attributes)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)
                 ON CONFLICT(item_id) DO UPDATE SET title = excluded.title, category = excluded.category,
                   description = excluded.description, price = excluded.price, image = excluded.image,
                   is_new = excluded.is_new, attributes = excluded.attributes",
            )?,
            report: report(src, "items"),
            with_images: 0,
        })
    }

    fn write(&mut self, id: &str, item: &ItemRow) -> Result<()> {
        if !item.image.is_empty() {
            self.with_images += 1;
        }
        let old = self
            .stored
            .query_row([id], |r| {
                Ok(ItemRow {
                    title: r.get(0)?,
                    category: r.get(1)?,
                    description: r.get(2)?,
                    price: r.get(3)?,
                    image: r.get(4)?,
                    is_new: r.get(5)?,
                    attributes: r.get(6)?,
                })
            })
            .optional()?;
        match old {
            Some(old) if old == *item => {
                self.report.unchanged += 1;
                return Ok(());
            }
            Some(_) => self.report.updated += 1,
            None => self.report.added += 1,
        }
        self.upsert.execute(params![
            id,
            item.title,
            item.category,
            item.description,
            item.price,
            item.image,
            item.is_new,
            item.attributes
        ])?;
        Ok(())
    }
}

/// Image paths are relative to one study-wide catalog folder. It follows this file only
/// when the file names the picture of every item in the study that has one; a partial
/// file (or one with no pictures) from another folder leaves it, with a warning, so that
/// the other items' pictures keep resolving.
fn repoint_images(
    tx: &Transaction,
    src: &Source,
    with_images: u64,
    report: &mut FileReport,
) -> Result<()> {
    let folder = src.folder.to_string_lossy().into_owned();
    let current: Option<String> = tx
        .query_row(
            "SELECT value FROM settings WHERE key = 'catalog_dir'",
            [],
            |r| r.get(0),
        )
        .ok();
    if current.as_deref() == Some(folder.as_str()) {
        return Ok(());
    }
    // Every item of this file is in the study now, with this file's picture (ids are
    // distinct within a file), so the others are the study's pictures beyond these.
    let all_with_images: i64 =
        tx.query_row("SELECT COUNT(*) FROM items WHERE image != ''", [], |r| {
            r.get(0)
        })?;
    let others_with_images = all_with_images - with_images as i64;
    let covers_all = with_images > 0 && others_with_images == 0;
    if current.is_none() || covers_all {
        tx.execute(
            "INSERT INTO settings(key, value) VALUES ('catalog_dir', ?1)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            [&folder],
        )?;
    } else if with_images > 0 {
        report.warnings.push(format!(
            "{}: pictures are still looked up in {} (the study's catalog folder), because {others_with_images} items with pictures are not in this file; keep this file's pictures there, or import the whole catalog from one folder",
            src.name,
            current.unwrap_or_default()
        ));
    }
    Ok(())
}

/// Contexts, read, checked and written one row at a time like items.
pub(super) fn import_contexts(
    tx: &Transaction,
    src: &Source,
    scratch: &Scratch,
    progress: &mut FileProgress,
) -> Result<FileReport> {
    let mut log = ProblemLog::default();
    let mut seen =
        DistinctIds::with_study(tx, scratch, "context_id", "SELECT context_id FROM contexts")?;
    let mut writer = ContextWriter::new(tx, src)?;
    each_row(src, &CONTEXTS, progress, &mut log, &mut |f, log| {
        let Some(id) = f.required("context_id", log) else {
            return Ok(());
        };
        if let Some(problem) = seen.check(id, f.row.line)? {
            log.push(f.problem("context_id", problem));
            return Ok(());
        }
        if let Some(context) = writer.checked(&f, log)?
            && log.0.is_empty()
        {
            writer.write(id, context)?;
        }
        Ok(())
    })?;
    log.into_result().map_err(input_error)?;
    Ok(writer.report)
}

/// A context as stored: kind, text, anchor item and segment.
type ContextRow = (String, String, Option<String>, String);

/// Writes contexts one by one, comparing each with the study's row of the same id.
struct ContextWriter<'t> {
    item_exists: Statement<'t>,
    stored: Statement<'t>,
    upsert: Statement<'t>,
    report: FileReport,
}

impl<'t> ContextWriter<'t> {
    fn new(tx: &'t Transaction, src: &Source) -> Result<Self> {
        Ok(ContextWriter {
            item_exists: tx.prepare("SELECT EXISTS (SELECT 1 FROM items WHERE item_id = ?1)")?,
            stored: tx.prepare(
                "SELECT kind, text, anchor_item_id, segment FROM contexts WHERE context_id = ?1",
            )?,
            upsert: tx.prepare(
                "INSERT INTO contexts(context_id, kind, text, anchor_item_id, segment) VALUES (?1, ?2, ?3, ?4, ?5)
                 ON CONFLICT(context_id) DO UPDATE SET kind = excluded.kind, text = excluded.text,
                   anchor_item_id = excluded.anchor_item_id, segment = excluded.segment",
            )?,
            report: report(src, "contexts"),
        })
    }

    /// One row's fields checked (its anchor must be an item); `None` once a problem is logged.
    fn checked(&mut self, f: &Fields, log: &mut ProblemLog) -> Result<Option<ContextRow>> {
        let kind = f.text("kind").trim().to_ascii_lowercase();
        if kind != "query" && kind != "anchor" {
            log.push(f.problem(
                "kind",
                format!("kind must be query or anchor, got \"{}\"", f.text("kind")),
            ));
            return Ok(None);
        }
        let anchor = f.text("anchor_item_id").trim();
        let anchor = (!anchor.is_empty()).then(|| anchor.to_string());
        match (&anchor, kind.as_str()) {
            (None, "anchor") => {
                log.push(f.problem("anchor_item_id", "an anchor context needs anchor_item_id"));
                return Ok(None);
            }
            (Some(a), _) if !self.item_exists.query_row([a], |r| r.get::<_, bool>(0))? => {
                log.push(f.problem(
                    "anchor_item_id",
                    format!("unknown item \"{a}\"; import it in items.csv first"),
                ));
                return Ok(None);
            }
            _ => {}
        }
        let text = f.text("text").to_string();
        Ok(Some((
            kind,
            text,
            anchor,
            f.text("segment").trim().to_string(),
        )))
    }

    fn write(&mut self, id: &str, values: ContextRow) -> Result<()> {
        let old: Option<ContextRow> = self
            .stored
            .query_row([id], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?)))
            .optional()?;
        match old {
            Some(old) if old == values => {
                self.report.unchanged += 1;
                return Ok(());
            }
            Some(_) => self.report.updated += 1,
            None => self.report.added += 1,
        }
        self.upsert
            .execute(params![id, values.0, values.1, values.2, values.3])?;
        Ok(())
    }
}
