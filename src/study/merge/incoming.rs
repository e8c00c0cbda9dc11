//! Reading a copy's rows: its definitions (items, contexts, scales, levels) compared with
//! this study's, then every grade and settle event checked as strictly as an import.

use std::collections::{BTreeMap, HashMap, HashSet};

use rusqlite::types::Value;

use super::refused;
use crate::study::untrusted::{self, CheckedCopy, integer, number, text};
use crate::study::{Result, Study, time};

/// A grade event as read from a copy, checked.
pub(super) struct GradeRow {
    pub(super) uid: String,
    pub(super) reviewer: String,
    pub(super) context: String,
    pub(super) item: String,
    pub(super) scale: String,
    pub(super) action: String,
    pub(super) value: Option<i64>,
    pub(super) reason: String,
    pub(super) seconds: Option<f64>,
    pub(super) graded_at: String,
    pub(super) note: String,
}

/// A settle event as read from a copy, checked.
pub(super) struct SettleRow {
    pub(super) uid: String,
    pub(super) context: String,
    pub(super) item: String,
    pub(super) scale: String,
    pub(super) value: Option<i64>,
    pub(super) method: String,
    pub(super) settled_by: String,
    pub(super) settled_at: String,
    pub(super) reason: String,
}

/// Everything a copy would bring, after every check.
pub(super) struct Incoming {
    pub(super) grades: Vec<GradeRow>,
    pub(super) settlements: Vec<SettleRow>,
    pub(super) handed_out_to: Option<String>,
    pub(super) copy_id: Option<String>,
}

/// Collects problems, at most a screenful.
#[derive(Default)]
pub(super) struct Problems(Vec<String>);

impl Problems {
    fn push(&mut self, p: String) {
        if self.0.len() < 12 {
            self.0.push(p);
        }
    }
}

/// Checks a text column: present, text, within bounds.
pub(super) fn text_field(
    row: &[Value],
    i: usize,
    what: &str,
    at: &str,
    problems: &mut Problems,
) -> Option<String> {
    match text(&row[i]) {
        Some(t) => Some(t.to_string()),
        None => {
            problems.push(format!("{at}: {what} is not text ({})", kind(&row[i])));
            None
        }
    }
}

pub(super) fn kind(value: &Value) -> &'static str {
    match value {
        Value::Null => "empty",
        Value::Integer(_) => "a whole number",
        Value::Real(_) => "a number",
        Value::Text(_) => "text",
        Value::Blob(_) => "a blob",
    }
}

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
    let mut missing: BTreeMap<&str, Vec<String>> = BTreeMap::new();
    for row in untrusted::rows(copy, "SELECT item_id, title, is_new FROM items", 3)? {
        let (Some(id), Some(title)) = (text(&row[0]), text(&row[1])) else {
            continue;
        };
        if !used.items.contains(id) {
            continue;
        }
        let is_new = integer(&row[2]).unwrap_or(-1) != 0;
        match here.items.get(id) {
            Some((t, n)) if t == title && *n == is_new => {}
            Some(_) => problems.push(format!(
                "item \"{id}\" is defined differently in the two studies"
            )),
            None => {}
        }
    }
    for row in untrusted::rows(
        copy,
        "SELECT context_id, kind, text, anchor_item_id FROM contexts",
        4,
    )? {
        let Some(id) = text(&row[0]) else { continue };
        if !used.contexts.contains(id) {
            continue;
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
    }
    let mut their_levels: HashMap<String, Vec<String>> = HashMap::new();
    for row in untrusted::rows(
        copy,
        "SELECT scale, label FROM levels ORDER BY scale, value",
        2,
    )? {
        if let (Some(scale), Some(label)) = (text(&row[0]), text(&row[1])) {
            their_levels
                .entry(scale.to_string())
                .or_default()
                .push(label.to_string());
        }
    }
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
    for (what, mut ids) in missing {
        ids.sort();
        let shown: Vec<&str> = ids.iter().take(10).map(String::as_str).collect();
        problems.push(format!(
            "{what} missing here: {}{}",
            shown.join(", "),
            if ids.len() > 10 {
                format!(" and {} more", ids.len() - 10)
            } else {
                String::new()
            }
        ));
    }
    Ok(())
}

/// Ids the incoming events refer to.
#[derive(Default)]
pub(super) struct Used {
    pub(super) items: HashSet<String>,
    pub(super) contexts: HashSet<String>,
    pub(super) scales: HashSet<String>,
}

pub(super) const ACTIONS: [&str; 3] = ["grade", "cant_judge", "undo"];

/// Reads and checks every event of a copy.
pub(super) fn read_incoming(copy: &CheckedCopy, here: &Definitions) -> Result<Incoming> {
    let path = &copy.path;
    let mut problems = Problems::default();
    let setting = |key: &str| -> Result<Option<String>> {
        let rows = untrusted::rows(
            copy,
            &format!("SELECT value FROM settings WHERE key = '{key}'"),
            1,
        )?;
        Ok(rows.first().and_then(|r| text(&r[0]).map(str::to_string)))
    };
    let handed_out_to = setting(crate::study::settings::keys::HANDED_OUT_TO)?;
    let copy_id = setting(crate::study::settings::keys::COPY_ID)?;
    let mut used = Used::default();
    let mut grades = Vec::new();
    let rows = untrusted::rows(
        copy,
        "SELECT uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note, id
         FROM grade_events ORDER BY graded_at, id",
        12,
    )?;
    for row in rows {
        let at = format!("grade event {}", integer(&row[11]).unwrap_or(0));
        let fields: Vec<Option<String>> = [
            (0, "uid"),
            (1, "reviewer"),
            (2, "context_id"),
            (3, "item_id"),
            (4, "scale"),
            (5, "action"),
            (7, "reason"),
            (9, "graded_at"),
            (10, "note"),
        ]
        .iter()
        .map(|(i, what)| text_field(&row, *i, what, &at, &mut problems))
        .collect();
        let [
            Some(uid),
            Some(reviewer),
            Some(context),
            Some(item),
            Some(scale),
            Some(action),
            Some(reason),
            Some(graded_at),
            Some(note),
        ] = <[Option<String>; 9]>::try_from(fields).unwrap_or_default()
        else {
            continue;
        };
        if !ACTIONS.contains(&action.as_str()) {
            problems.push(format!("{at}: unknown action \"{action}\""));
            continue;
        }
        if reviewer.trim().is_empty() || uid.is_empty() || uid.len() > 64 {
            problems.push(format!("{at}: reviewer or uid is empty or too long"));
            continue;
        }
        let levels = here.levels.get(&scale).map_or(0, Vec::len) as i64;
        let value = match (&row[6], action.as_str()) {
            (Value::Null, "cant_judge" | "undo") => None,
            (Value::Integer(v), "grade") if (0..levels.max(1)).contains(v) => Some(*v),
            (Value::Integer(v), "grade") if levels > 0 => {
                problems.push(format!(
                    "{at}: value {v} is not a level of scale \"{scale}\" (0 to {})",
                    levels - 1
                ));
                continue;
            }
            (Value::Integer(_), "grade") => None, // scale unknown here: reported below
            (other, _) => {
                problems.push(format!(
                    "{at}: value is {} for a \"{action}\" row",
                    kind(other)
                ));
                continue;
            }
        };
        let seconds = match &row[8] {
            Value::Null => None,
            v => match number(v) {
                Some(s) if s.is_finite() && s >= 0.0 => Some(s),
                _ => {
                    problems.push(format!("{at}: seconds is {} and not a time", kind(v)));
                    continue;
                }
            },
        };
        if time::normalise_checked(&graded_at).ok().as_deref() != Some(graded_at.as_str()) {
            problems.push(format!(
                "{at}: graded_at \"{graded_at}\" is not a time in the study's form"
            ));
            continue;
        }
        used.items.insert(item.clone());
        used.contexts.insert(context.clone());
        used.scales.insert(scale.clone());
        grades.push(GradeRow {
            uid,
            reviewer,
            context,
            item,
            scale,
            action,
            value,
            reason,
            seconds,
            graded_at,
            note,
        });
    }
    let mut settlements = Vec::new();
    let rows = untrusted::rows(
        copy,
        "SELECT uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason, id
         FROM settle_events ORDER BY settled_at, id",
        10,
    )?;
    for row in rows {
        let at = format!("settled grade {}", integer(&row[9]).unwrap_or(0));
        let fields: Vec<Option<String>> = [
            (0, "uid"),
            (1, "context_id"),
            (2, "item_id"),
            (3, "scale"),
            (5, "method"),
            (6, "settled_by"),
            (7, "settled_at"),
            (8, "reason"),
        ]
        .iter()
        .map(|(i, what)| text_field(&row, *i, what, &at, &mut problems))
        .collect();
        let [
            Some(uid),
            Some(context),
            Some(item),
            Some(scale),
            Some(method),
            Some(settled_by),
            Some(settled_at),
            Some(reason),
        ] = <[Option<String>; 8]>::try_from(fields).unwrap_or_default()
        else {
            continue;
        };
        let levels = here.levels.get(&scale).map_or(0, Vec::len) as i64;
        let value = match &row[4] {
            Value::Null => None,
            Value::Integer(v) if (0..levels).contains(v) || levels == 0 => Some(*v),
            other => {
                problems.push(format!(
                    "{at}: value {other:?} is not a level of scale \"{scale}\""
                ));
                continue;
            }
        };
        if settled_by.trim().is_empty() || uid.is_empty() || uid.len() > 64 {
            problems.push(format!("{at}: settled_by or uid is empty or too long"));
            continue;
        }
        if time::normalise_checked(&settled_at).ok().as_deref() != Some(settled_at.as_str()) {
            problems.push(format!(
                "{at}: settled_at \"{settled_at}\" is not a time in the study's form"
            ));
            continue;
        }
        used.items.insert(item.clone());
        used.contexts.insert(context.clone());
        used.scales.insert(scale.clone());
        settlements.push(SettleRow {
            uid,
            context,
            item,
            scale,
            value,
            method,
            settled_by,
            settled_at,
            reason,
        });
    }
    definition_problems(copy, &used, here, &mut problems)?;
    if !problems.0.is_empty() {
        return Err(refused(
            path,
            format!("nothing was merged: {}", problems.0.join("; ")),
        ));
    }
    Ok(Incoming {
        grades,
        settlements,
        handed_out_to,
        copy_id,
    })
}
