//! Items and contexts.

use std::collections::{BTreeMap, HashMap};

use rusqlite::{Transaction, params};

use super::{
    CONTEXTS, DistinctIds, Fields, FileReport, ITEMS, Source, id_set, image_path_problem,
    input_error, parse, parse_bool, report, unneutralise,
};
use crate::study::Result;
use crate::study::csv_input::ProblemLog;

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

pub(super) fn import_items(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &ITEMS)?;
    let mut log = ProblemLog::default();
    let known: Vec<&str> = ITEMS
        .required
        .iter()
        .chain(ITEMS.optional)
        .copied()
        .collect();
    let extra: Vec<usize> = (0..table.header.len())
        .filter(|i| !known.contains(&table.header[*i].as_str()))
        .collect();
    let mut seen = DistinctIds::with_study(tx, "item_id", "SELECT item_id FROM items")?;
    let mut parsed: Vec<(String, ItemRow)> = Vec::with_capacity(table.rows.len());
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let Some(id) = f.required("item_id", &mut log) else {
            continue;
        };
        if let Some(problem) = seen.check(id, row.line) {
            log.push(f.problem("item_id", problem));
            continue;
        }
        let Some(title) = f.required("title", &mut log) else {
            continue;
        };
        let Some(price) = f.optional_f64("price", &mut log) else {
            continue;
        };
        let Some(is_new) = parse_bool(f.text("new")) else {
            log.push(f.problem(
                "new",
                format!("new must be true, false, 1 or 0, got \"{}\"", f.text("new")),
            ));
            continue;
        };
        let image = f.text("image").trim();
        if let Some(problem) = (!image.is_empty())
            .then(|| image_path_problem(&src.folder, image))
            .flatten()
        {
            log.push(f.problem("image", problem));
            continue;
        }
        let attributes: BTreeMap<&str, &str> = extra
            .iter()
            .filter(|i| !table.field(row, **i).is_empty())
            .map(|i| {
                (
                    table.header[*i].as_str(),
                    unneutralise(table.field(row, *i)),
                )
            })
            .collect();
        parsed.push((
            id.to_string(),
            ItemRow {
                title: title.to_string(),
                category: f.text("category").trim().to_string(),
                description: f.text("description").to_string(),
                price,
                image: image.to_string(),
                is_new,
                attributes: serde_json::to_string(&attributes).unwrap_or_else(|_| "{}".into()),
            },
        ));
        if log.is_full() {
            break;
        }
    }
    log.into_result().map_err(input_error)?;
    let mut existing: HashMap<String, ItemRow> = HashMap::new();
    {
        let mut stmt = tx.prepare(
            "SELECT item_id, title, category, description, price, image, is_new, attributes FROM items",
        )?;
        let rows = stmt.query_map([], |r| {
            Ok((
                r.get::<_, String>(0)?,
                ItemRow {
                    title: r.get(1)?,
                    category: r.get(2)?,
                    description: r.get(3)?,
                    price: r.get(4)?,
                    image: r.get(5)?,
                    is_new: r.get(6)?,
                    attributes: r.get(7)?,
                },
            ))
        })?;
        for row in rows {
            let (id, item) = row?;
            existing.insert(id, item);
        }
    }
    let mut report = report(src, "items");
    let mut upsert = tx.prepare(
        "INSERT INTO items(item_id, title, category, description, price, image, is_new, attributes)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)
         ON CONFLICT(item_id) DO UPDATE SET title = excluded.title, category = excluded.category,
           description = excluded.description, price = excluded.price, image = excluded.image,
           is_new = excluded.is_new, attributes = excluded.attributes",
    )?;
    for (id, item) in &parsed {
        match existing.get(id) {
            Some(old) if old == item => {
                report.unchanged += 1;
                continue;
            }
            Some(_) => report.updated += 1,
            None => report.added += 1,
        }
        upsert.execute(params![
            id,
            item.title,
            item.category,
            item.description,
            item.price,
            item.image,
            item.is_new,
            item.attributes
        ])?;
    }
    repoint_images(tx, src, &parsed, &mut report)?;
    Ok(report)
}

/// Image paths are relative to one study-wide catalog folder. It follows this file only
/// when the file names the picture of every item in the study that has one; a partial
/// file (or one with no pictures) from another folder leaves it, with a warning, so that
/// the other items' pictures keep resolving.
fn repoint_images(
    tx: &Transaction,
    src: &Source,
    parsed: &[(String, ItemRow)],
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
    let with_image: std::collections::HashSet<&str> = parsed
        .iter()
        .filter(|(_, item)| !item.image.is_empty())
        .map(|(id, _)| id.as_str())
        .collect();
    let others_with_images: i64 = {
        let mut stmt = tx.prepare("SELECT item_id FROM items WHERE image != ''")?;
        let ids = stmt.query_map([], |r| r.get::<_, String>(0))?;
        let mut n = 0;
        for id in ids {
            if !with_image.contains(id?.as_str()) {
                n += 1;
            }
        }
        n
    };
    let covers_all = !with_image.is_empty() && others_with_images == 0;
    if current.is_none() || covers_all {
        tx.execute(
            "INSERT INTO settings(key, value) VALUES ('catalog_dir', ?1)
             ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            [&folder],
        )?;
    } else if !with_image.is_empty() {
        report.warnings.push(format!(
            "{}: pictures are still looked up in {} (the study's catalog folder), because {others_with_images} items with pictures are not in this file; keep this file's pictures there, or import the whole catalog from one folder",
            src.name,
            current.unwrap_or_default()
        ));
    }
    Ok(())
}

pub(super) fn import_contexts(tx: &Transaction, src: &Source) -> Result<FileReport> {
    let table = parse(src, &CONTEXTS)?;
    let items = id_set(tx, "SELECT item_id FROM items")?;
    let mut log = ProblemLog::default();
    let mut seen = DistinctIds::with_study(tx, "context_id", "SELECT context_id FROM contexts")?;
    type ContextRow = (String, String, String, Option<String>, String);
    let mut parsed: Vec<ContextRow> = Vec::new();
    for row in &table.rows {
        let f = Fields { table: &table, row };
        let Some(id) = f.required("context_id", &mut log) else {
            continue;
        };
        if let Some(problem) = seen.check(id, row.line) {
            log.push(f.problem("context_id", problem));
            continue;
        }
        let kind = f.text("kind").trim().to_ascii_lowercase();
        if kind != "query" && kind != "anchor" {
            log.push(f.problem(
                "kind",
                format!("kind must be query or anchor, got \"{}\"", f.text("kind")),
            ));
            continue;
        }
        let anchor = f.text("anchor_item_id").trim();
        let anchor = (!anchor.is_empty()).then(|| anchor.to_string());
        match (&anchor, kind.as_str()) {
            (None, "anchor") => {
                log.push(f.problem("anchor_item_id", "an anchor context needs anchor_item_id"));
                continue;
            }
            (Some(a), _) if !items.contains(a) => {
                log.push(f.problem(
                    "anchor_item_id",
                    format!("unknown item \"{a}\"; import it in items.csv first"),
                ));
                continue;
            }
            _ => {}
        }
        parsed.push((
            id.to_string(),
            kind,
            f.text("text").to_string(),
            anchor,
            f.text("segment").trim().to_string(),
        ));
    }
    log.into_result().map_err(input_error)?;
    let mut report = report(src, "contexts");
    let mut existing: HashMap<String, (String, String, Option<String>, String)> = HashMap::new();
    {
        let mut stmt =
            tx.prepare("SELECT context_id, kind, text, anchor_item_id, segment FROM contexts")?;
        for row in stmt.query_map([], |r| {
            Ok((r.get(0)?, (r.get(1)?, r.get(2)?, r.get(3)?, r.get(4)?)))
        })? {
            let (id, values) = row?;
            existing.insert(id, values);
        }
    }
    let mut upsert = tx.prepare(
        "INSERT INTO contexts(context_id, kind, text, anchor_item_id, segment) VALUES (?1, ?2, ?3, ?4, ?5)
         ON CONFLICT(context_id) DO UPDATE SET kind = excluded.kind, text = excluded.text,
           anchor_item_id = excluded.anchor_item_id, segment = excluded.segment",
    )?;
    for (id, kind, text, anchor, segment) in parsed {
        let values = (kind, text, anchor, segment);
        match existing.get(&id) {
            Some(old) if *old == values => {
                report.unchanged += 1;
                continue;
            }
            Some(_) => report.updated += 1,
            None => report.added += 1,
        }
        upsert.execute(params![id, values.0, values.1, values.2, values.3])?;
    }
    Ok(report)
}
