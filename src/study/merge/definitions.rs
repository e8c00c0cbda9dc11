//! The definitions a copy's events rely on (items, contexts, scales and their levels),
//! compared with this study's before anything is merged.

use std::collections::{BTreeMap, HashMap};

use super::incoming::{Problems, Used};
use crate::study::untrusted::{self, CheckedCopy, integer, text};
use crate::study::{Result, Study};

/// The lead study's definitions an incoming event must agree with.
pub(super) struct Definitions {
    pub(super) items: HashMap<String, (String, bool)>,
    pub(super) contexts: HashMap<String, (String, String, Option<String>)>,
    pub(super) levels: HashMap<String, Vec<String>>,
}

impl Study {
    pub(super) fn definitions(&self) -> Result<Definitions> {
        let conn = self.conn();
        let mut items = HashMap::new();
        let mut stmt = conn.prepare("SELECT item_id, title, is_new FROM items")?;
        for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get(1)?, r.get(2)?)))? {
            let (id, title, is_new) = row?;
            items.insert(id, (title, is_new));
        }
        let mut contexts = HashMap::new();
        let mut stmt =
            conn.prepare("SELECT context_id, kind, text, anchor_item_id FROM contexts")?;
        for row in stmt.query_map([], |r| {
            Ok((r.get::<_, String>(0)?, r.get(1)?, r.get(2)?, r.get(3)?))
        })? {
            let (id, kind, text, anchor) = row?;
            contexts.insert(id, (kind, text, anchor));
        }
        let mut levels: HashMap<String, Vec<String>> = HashMap::new();
        let mut stmt = conn.prepare("SELECT scale, label FROM levels ORDER BY scale, value")?;
        for row in stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))? {
            let (scale, label) = row?;
            levels.entry(scale).or_default().push(label);
        }
        Ok(Definitions {
            items,
            contexts,
            levels,
        })
    }
}

/// Compares the copy's definitions of the ids its events use with the lead's.
pub(super) fn definition_problems(
    copy: &CheckedCopy,
    used: &Used,
    here: &Definitions,
    problems: &mut Problems,
) -> Result<()> {
    item_problems(copy, used, here, problems)?;
    context_problems(copy, used, here, problems)?;
    let mut missing: BTreeMap<&str, Vec<String>> = BTreeMap::new();
    let their_levels = levels_of(copy)?;
    for scale in &used.scales {
        match (here.levels.get(scale), their_levels.get(scale)) {
            (Some(a), Some(b)) if a == b => {}
            (Some(_), _) => problems.push(format!(
                "scale \"{scale}\" has different levels in the two studies"
            )),
            (None, _) => missing.entry("scales").or_default().push(scale.clone()),
        }
    }
    for id in &used.items {
        if !here.items.contains_key(id) {
            missing.entry("items").or_default().push(id.clone());
        }
    }
    for id in &used.contexts {
        if !here.contexts.contains_key(id) {
            missing.entry("contexts").or_default().push(id.clone());
        }
    }
    for (what, ids) in missing {
        problems.push(missing_here(what, ids));
    }
    Ok(())
}

/// Items the events use that the copy defines otherwise than the lead (title, new flag).
fn item_problems(
    copy: &CheckedCopy,
    used: &Used,
    here: &Definitions,
    problems: &mut Problems,
) -> Result<()> {
    untrusted::for_each_row(copy, "SELECT item_id, title, is_new FROM items", 3, |row| {
        let (Some(id), Some(title)) = (text(&row[0]), text(&row[1])) else {
            return Ok(());
        };
        if !used.items.contains(id) {
            return Ok(());
        }
        let is_new = integer(&row[2]).unwrap_or(-1) != 0;
        match here.items.get(id) {
            Some((t, n)) if t == title && *n == is_new => {}
            Some(_) => problems.push(format!(
                "item \"{id}\" is defined differently in the two studies"
            )),
            None => {}
        }
        Ok(())
    })
}

/// Contexts the events use that the copy defines otherwise than the lead.
fn context_problems(
    copy: &CheckedCopy,
    used: &Used,
    here: &Definitions,
    problems: &mut Problems,
) -> Result<()> {
    untrusted::for_each_row(
        copy,
        "SELECT context_id, kind, text, anchor_item_id FROM contexts",
        4,
        |row| {
            let Some(id) = text(&row[0]) else {
                return Ok(());
            };
            if !used.contexts.contains(id) {
                return Ok(());
            }
            let theirs = (
                text(&row[1]).unwrap_or_default().to_string(),
                text(&row[2]).unwrap_or_default().to_string(),
                text(&row[3]).map(str::to_string),
            );
            if let Some(ours) = here.contexts.get(id)
                && *ours != theirs
            {
                problems.push(format!(
                    "context \"{id}\" is defined differently in the two studies"
                ));
            }
            Ok(())
        },
    )
}

/// The copy's level labels per scale, in value order.
fn levels_of(copy: &CheckedCopy) -> Result<HashMap<String, Vec<String>>> {
    let mut levels: HashMap<String, Vec<String>> = HashMap::new();
    untrusted::for_each_row(
        copy,
        "SELECT scale, label FROM levels ORDER BY scale, value",
        2,
        |row| {
            if let (Some(scale), Some(label)) = (text(&row[0]), text(&row[1])) {
                levels
                    .entry(scale.to_string())
                    .or_default()
                    .push(label.to_string());
            }
            Ok(())
        },
    )?;
    Ok(levels)
}

/// "WHAT missing here: ..." naming the first ten ids in order and counting the rest.
fn missing_here(what: &str, mut ids: Vec<String>) -> String {
    ids.sort();
    let shown: Vec<&str> = ids.iter().take(10).map(String::as_str).collect();
    format!(
        "{what} missing here: {}{}",
        shown.join(", "),
        if ids.len() > 10 {
            format!(" and {} more", ids.len() - 10)
        } else {
            String::new()
        }
    )
}
