//! Bringing grades home: merging studies graded on other machines, and making the
//! reviewer copies that are graded there. Events carry stable uids, so merging the same
//! file twice adds nothing.
//!
//! A file from elsewhere is untrusted: it is opened read-only and immutable and its
//! schema checked (`untrusted`), then every row is validated as strictly as an import
//! before anything is written. Only the reviewer a copy was handed to may bring grades;
//! other reviewers' events and settled grades come in only when the lead accepts their
//! names. A refusal changes neither the study nor the copy.

use std::collections::{BTreeMap, HashMap, HashSet};
use std::path::Path;

use rusqlite::params;
use rusqlite::types::Value;

use super::untrusted::{self, CheckedCopy, integer, number, text};
use super::{Result, Study, StudyError, time};

/// What one merge brought in (or, for a preview, would bring in).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct MergeReport {
    pub file: String,
    pub grades_added: u64,
    pub settled_added: u64,
    pub reviewers_added: u64,
    /// The reviewer the copy was handed to, when this study handed it out.
    pub handed_out_to: Option<String>,
    /// Names whose events need the lead's yes, with how many grades / settled grades.
    pub needs_acceptance: Vec<NameCount>,
}

/// A reviewer (or settler) name and what the file holds from them.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct NameCount {
    pub name: String,
    pub grades: u64,
    pub settled: u64,
}

/// What the lead allows beyond the copy's own reviewer.
#[derive(Debug, Clone, Default)]
pub struct MergeOptions {
    /// Reviewer or settler names whose events may come in although the file was not
    /// handed out to them.
    pub accept: Vec<String>,
}

/// The folder beside a copy that holds its pictures (`rev-birch.plumb` →
/// `rev-birch-pictures`); the copy names it relative to itself.
pub fn pictures_folder_name(copy: &Path) -> String {
    let stem = copy
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "copy".into());
    format!("{stem}-pictures")
}

fn refused(path: &Path, reason: String) -> StudyError {
    StudyError::Refused {
        path: path.display().to_string(),
        reason,
    }
}

/// A grade event as read from a copy, checked.
struct GradeRow {
    uid: String,
    reviewer: String,
    context: String,
    item: String,
    scale: String,
    action: String,
    value: Option<i64>,
    reason: String,
    seconds: Option<f64>,
    graded_at: String,
    note: String,
}

/// A settle event as read from a copy, checked.
struct SettleRow {
    uid: String,
    context: String,
    item: String,
    scale: String,
    value: Option<i64>,
    method: String,
    settled_by: String,
    settled_at: String,
    reason: String,
}

/// Everything a copy would bring, after every check.
struct Incoming {
    grades: Vec<GradeRow>,
    settlements: Vec<SettleRow>,
    handed_out_to: Option<String>,
    copy_id: Option<String>,
}

/// Why names need the lead's yes, in words, with the way to give it.
pub fn not_accepted(report: &MergeReport) -> String {
    let names: Vec<String> = report
        .needs_acceptance
        .iter()
        .map(|n| match (n.grades, n.settled) {
            (g, 0) => format!("{} ({g} grade events)", n.name),
            (0, s) => format!("{} ({s} settled grades)", n.name),
            (g, s) => format!("{} ({g} grade events, {s} settled grades)", n.name),
        })
        .collect();
    let whose = match &report.handed_out_to {
        Some(r) => format!("this copy was handed out to {r}, but it also holds events by"),
        None => "this file is not a reviewer copy this study handed out; it holds events by".into(),
    };
    format!(
        "nothing was merged: {whose} {}; a copy brings its own reviewer's grades only, so bring these in only if you trust them (--accept-reviewer NAME, or tick them in the merge preview)",
        names.join(", ")
    )
}

/// Collects problems, at most a screenful.
#[derive(Default)]
struct Problems(Vec<String>);

impl Problems {
    fn push(&mut self, p: String) {
        if self.0.len() < 12 {
            self.0.push(p);
        }
    }
}

/// Checks a text column: present, text, within bounds.
fn text_field(
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

fn kind(value: &Value) -> &'static str {
    match value {
        Value::Null => "empty",
        Value::Integer(_) => "a whole number",
        Value::Real(_) => "a number",
        Value::Text(_) => "text",
        Value::Blob(_) => "a blob",
    }
}

/// The lead study's definitions an incoming event must agree with.
struct Definitions {
    items: HashMap<String, (String, bool)>,
    contexts: HashMap<String, (String, String, Option<String>)>,
    levels: HashMap<String, Vec<String>>,
}

impl Study {
    fn definitions(&self) -> Result<Definitions> {
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
fn definition_problems(
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
struct Used {
    items: HashSet<String>,
    contexts: HashSet<String>,
    scales: HashSet<String>,
}

const ACTIONS: [&str; 3] = ["grade", "cant_judge", "undo"];

/// Reads and checks every event of a copy.
fn read_incoming(copy: &CheckedCopy, here: &Definitions) -> Result<Incoming> {
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
    let handed_out_to = setting("handed_out_to")?;
    let copy_id = setting("copy_id")?;
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

impl Study {
    /// Merges reviewers, grade history and settled grades from `other` in one transaction.
    /// Refuses the whole file, naming the ids, when its definitions do not match.
    pub fn merge_from(&mut self, other: &Path) -> Result<MergeReport> {
        self.merge_with(other, &MergeOptions::default())
    }

    /// `merge_from` with names the lead accepts beyond the copy's own reviewer.
    pub fn merge_with(&mut self, other: &Path, options: &MergeOptions) -> Result<MergeReport> {
        let report = self.merge_or_preview(other, options, true)?;
        if !report.needs_acceptance.is_empty() {
            return Err(refused(other, not_accepted(&report)));
        }
        Ok(report)
    }

    /// What `merge_with` would bring in, without changing the study: the same checks and
    /// inserts inside a transaction that is rolled back. Names that need the lead's yes
    /// are listed in `needs_acceptance` instead of refusing.
    pub fn merge_preview(&mut self, other: &Path) -> Result<MergeReport> {
        self.merge_preview_with(other, &MergeOptions::default())
    }

    pub fn merge_preview_with(
        &mut self,
        other: &Path,
        options: &MergeOptions,
    ) -> Result<MergeReport> {
        self.merge_or_preview(other, options, false)
    }

    fn merge_or_preview(
        &mut self,
        other: &Path,
        options: &MergeOptions,
        commit: bool,
    ) -> Result<MergeReport> {
        if self.is_read_only() {
            return Err(StudyError::ReadOnly);
        }
        if std::fs::canonicalize(other).ok() == std::fs::canonicalize(self.path()).ok() {
            return Err(refused(
                other,
                "a study cannot be merged into itself".into(),
            ));
        }
        let copy = untrusted::open_copy(other)?;
        let here = self.definitions()?;
        let incoming = read_incoming(&copy, &here)?;
        drop(copy);
        // Whom this study handed the copy to, by its own record (a copy's word alone is
        // not trusted: it could name anyone).
        let handed_out_to = match (&incoming.copy_id, &incoming.handed_out_to) {
            (Some(id), Some(named)) => self
                .setting(&format!("hand_out:{id}"))?
                .filter(|recorded| recorded == named),
            _ => None,
        };
        let mut allowed: HashSet<&str> = options.accept.iter().map(String::as_str).collect();
        if let Some(r) = &handed_out_to {
            allowed.insert(r);
        }
        let mut waiting: BTreeMap<&str, (u64, u64)> = BTreeMap::new();
        for g in &incoming.grades {
            if !allowed.contains(g.reviewer.as_str()) {
                waiting.entry(&g.reviewer).or_default().0 += 1;
            }
        }
        // Settling is the lead's work: a settled grade comes in only when its settler is
        // accepted by name, even if it is the reviewer the copy went to.
        let accepted: HashSet<&str> = options.accept.iter().map(String::as_str).collect();
        for s in &incoming.settlements {
            if !accepted.contains(s.settled_by.as_str()) {
                waiting.entry(&s.settled_by).or_default().1 += 1;
            }
        }
        let needs_acceptance: Vec<NameCount> = waiting
            .into_iter()
            .map(|(name, (grades, settled))| NameCount {
                name: name.to_string(),
                grades,
                settled,
            })
            .collect();
        let file = other.display().to_string();
        if commit && !needs_acceptance.is_empty() {
            return Ok(MergeReport {
                file,
                grades_added: 0,
                settled_added: 0,
                reviewers_added: 0,
                handed_out_to,
                needs_acceptance,
            });
        }
        let tx = self.begin_write()?;
        let mut reviewers_added = 0;
        let mut grades_added = 0;
        let mut settled_added = 0;
        {
            let mut add_reviewer =
                tx.prepare("INSERT OR IGNORE INTO reviewers(reviewer) VALUES (?1)")?;
            let mut add_grade = tx.prepare(
                "INSERT OR IGNORE INTO grade_events(uid, reviewer, context_id, item_id, scale, action, value, reason, seconds, graded_at, note)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
            )?;
            let mut add_settlement = tx.prepare(
                "INSERT OR IGNORE INTO settle_events(uid, context_id, item_id, scale, value, method, settled_by, settled_at, reason)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
            )?;
            for g in incoming
                .grades
                .iter()
                .filter(|g| allowed.contains(g.reviewer.as_str()))
            {
                reviewers_added += add_reviewer.execute([&g.reviewer])? as u64;
                grades_added += add_grade.execute(params![
                    g.uid,
                    g.reviewer,
                    g.context,
                    g.item,
                    g.scale,
                    g.action,
                    g.value,
                    g.reason,
                    g.seconds,
                    g.graded_at,
                    g.note
                ])? as u64;
            }
            for s in incoming
                .settlements
                .iter()
                .filter(|s| accepted.contains(s.settled_by.as_str()))
            {
                settled_added += add_settlement.execute(params![
                    s.uid,
                    s.context,
                    s.item,
                    s.scale,
                    s.value,
                    s.method,
                    s.settled_by,
                    s.settled_at,
                    s.reason
                ])? as u64;
            }
        }
        if commit {
            tx.commit()?;
        } else {
            tx.rollback()?;
        }
        Ok(MergeReport {
            file,
            grades_added,
            settled_added,
            reviewers_added,
            handed_out_to,
            needs_acceptance,
        })
    }

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
