//! A read-only picture of a study, loaded in a handful of queries, that the analysis
//! layer works from. Nothing downstream touches SQL.

use crate::core::fast_hash::FastMap;
use crate::core::scale::{Level, Scale};

use super::{Result, Study, grade_packs};

#[derive(Debug, Clone)]
pub struct ItemInfo {
    pub id: String,
    pub title: String,
    pub category: String,
    pub is_new: bool,
}

#[derive(Debug, Clone)]
pub struct ContextInfo {
    pub id: String,
    pub kind: String,
    pub text: String,
    pub segment: String,
    /// For an anchor context ("more like this"): the anchor item's id.
    pub anchor_item: Option<String>,
}

/// A reviewer's current grade of one pair on one scale; `value` None = can't judge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GradeRow {
    pub reviewer: u32,
    pub context: u32,
    pub item: u32,
    pub scale: u32,
    pub value: Option<u8>,
    pub seconds: Option<f64>,
    /// UTC day of the grade, counted from 1970-01-01 (see [`day_text`]).
    pub day: i32,
}

/// A day number of [`GradeRow::day`] as `YYYY-MM-DD`.
pub fn day_text(day: i32) -> String {
    let text = super::time::format_millis(i64::from(day) * 86_400_000);
    text.get(..10).unwrap_or(&text).to_string()
}

/// A settled grade in force.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SettledRow {
    pub context: u32,
    pub item: u32,
    pub scale: u32,
    pub value: u8,
}

/// Everything scoring and agreement need, with ids replaced by dense indices.
#[derive(Debug, Clone, Default)]
pub struct Snapshot {
    pub name: String,
    /// The baseline the study stores (`settings.baseline`), which may name a ranker
    /// that no longer exists; `analysis::scoring::scoreboard::resolve_baseline` decides.
    pub stored_baseline: Option<String>,
    /// The scale the study names as active (`settings.active_scale`), if it still exists
    /// among `scales`; `active_scale_index` applies the fallback.
    pub stored_active_scale: Option<String>,
    /// The pooling depth k the study keeps (`settings.pool_depth`).
    pub pool_depth: usize,
    pub items: Vec<ItemInfo>,
    pub contexts: Vec<ContextInfo>,
    pub rankers: Vec<String>,
    /// `lists[ranker][context]`: item indices in rank order (empty when none).
    pub lists: Vec<Vec<Vec<u32>>>,
    pub scales: Vec<Scale>,
    pub reviewers: Vec<String>,
    /// Current grades that make up the panel: the people's, and the machine judges' too
    /// only when the study counts them in the panel.
    pub grades: Vec<GradeRow>,
    /// Every machine judge's current grades (measured against the people's panel grade).
    pub machine_grades: Vec<GradeRow>,
    /// Per reviewer: true for a machine judge.
    pub machines: Vec<bool>,
    /// Whether machine grades also count in `grades` (the study's `machines_in_panel`).
    pub machines_in_panel: bool,
    /// The study's rule for an unsettled pair's panel grade (`panel_rule` setting).
    pub panel_rule: crate::core::panel_rule::PanelRule,
    pub settled: Vec<SettledRow>,
    /// Gold pairs: (context, item, scale, known level).
    pub gold: Vec<(u32, u32, u32, u8)>,
    /// Lists from files for this run (`score --rankings`); empty for a plain snapshot.
    pub outside: super::outside_lists::OutsideLists,
}

impl Snapshot {
    /// The scale screens open on: the stored active scale, else the one with the most
    /// grades, else the first (one rule for the desk, Home, Scales and Agreement).
    pub fn active_scale_index(&self) -> usize {
        self.stored_active_scale
            .as_deref()
            .and_then(|name| self.scale_index(name))
            .or_else(|| self.busiest_scale())
            .unwrap_or(0)
    }

    pub fn scale_index(&self, name: &str) -> Option<usize> {
        self.scales.iter().position(|s| s.name == name)
    }

    pub fn ranker_index(&self, name: &str) -> Option<usize> {
        self.rankers.iter().position(|r| r == name)
    }

    pub fn reviewer_index(&self, name: &str) -> Option<usize> {
        self.reviewers.iter().position(|r| r == name)
    }

    /// Whether a reviewer is a machine judge.
    pub fn is_machine(&self, reviewer: usize) -> bool {
        self.machines.get(reviewer).copied().unwrap_or(false)
    }

    /// One reviewer's current grades, people's and machines' alike.
    pub fn grades_of(&self, reviewer: usize) -> impl Iterator<Item = &GradeRow> {
        let source = match self.is_machine(reviewer) && !self.machines_in_panel {
            true => &self.machine_grades,
            false => &self.grades,
        };
        source
            .iter()
            .filter(move |g| g.reviewer as usize == reviewer)
    }

    /// The scale with the most grades (ties: first by name); the default for `--scale`.
    pub fn busiest_scale(&self) -> Option<usize> {
        let mut counts = vec![0usize; self.scales.len()];
        for g in &self.grades {
            counts[g.scale as usize] += 1;
        }
        (0..self.scales.len()).max_by(|a, b| counts[*a].cmp(&counts[*b]).then(b.cmp(a)))
    }
}

/// A stored list's item ids, borrowed from the row's text unless an id has escapes.
#[derive(serde::Deserialize)]
struct JsonIds<'a>(#[serde(borrow)] Vec<std::borrow::Cow<'a, str>>);

type IdMap<'a> = FastMap<&'a str, u32>;

fn index_of(ids: &[String]) -> IdMap<'_> {
    ids.iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i as u32))
        .collect()
}

impl Study {
    /// Loads the snapshot. Cost is a few sequential scans; no per-context queries.
    pub fn snapshot(&self) -> Result<Snapshot> {
        // One read transaction: every query below sees the same state of the file, even
        // while another process adds reviewers or grades (WAL readers see a fixed point).
        // Inside `read_together` the caller's transaction already holds that point.
        let _own = match self.conn().is_autocommit() {
            true => Some(self.conn().unchecked_transaction()?),
            false => None,
        };
        let conn = self.conn();
        conn.pragma_update(None, "cache_size", super::opening::SCAN_CACHE_KIB)?;
        let snapshot = self.read_snapshot();
        conn.pragma_update(None, "cache_size", super::opening::DEFAULT_CACHE_KIB)?;
        snapshot
    }

    /// The reads of [`Study::snapshot`], inside its read transaction.
    fn read_snapshot(&self) -> Result<Snapshot> {
        let conn = self.conn();
        let settings = self.settings()?;
        let items = read_items(conn)?;
        let contexts = read_contexts(conn)?;
        let rankers = read_rankers(conn)?;
        let (reviewers, machines) = read_reviewers(conn)?;
        let scales = read_scales(conn)?;
        let item_ids: Vec<String> = items.iter().map(|i| i.id.clone()).collect();
        let context_ids: Vec<String> = contexts.iter().map(|c| c.id.clone()).collect();
        let scale_names: Vec<String> = scales.iter().map(|s| s.name.clone()).collect();
        let index = Indexes {
            item: index_of(&item_ids),
            context: index_of(&context_ids),
            ranker: index_of(&rankers),
            reviewer: index_of(&reviewers),
            scale: index_of(&scale_names),
        };
        let lists = read_lists(conn, &index, rankers.len(), contexts.len())?;
        let mut grades = read_grades(conn, &index)?;
        let machine_grades: Vec<GradeRow> = grades
            .iter()
            .filter(|g| machines[g.reviewer as usize])
            .copied()
            .collect();
        if !settings.machines_in_panel && !machine_grades.is_empty() {
            grades.retain(|g| !machines[g.reviewer as usize]);
        }
        let settled = read_settled(conn, &index)?;
        let gold = read_gold(conn, &index)?;
        Ok(Snapshot {
            name: settings.name,
            stored_baseline: settings.baseline,
            stored_active_scale: settings.active_scale,
            panel_rule: settings.panel_rule,
            pool_depth: settings.pool_depth,
            items,
            contexts,
            rankers,
            lists,
            scales,
            reviewers,
            grades,
            machine_grades,
            machines,
            machines_in_panel: settings.machines_in_panel,
            settled,
            gold,
            outside: Default::default(),
        })
    }
}

/// Each kind of id to its position in the snapshot's vectors.
struct Indexes<'a> {
    item: IdMap<'a>,
    context: IdMap<'a>,
    ranker: IdMap<'a>,
    reviewer: IdMap<'a>,
    scale: IdMap<'a>,
}

fn read_items(conn: &rusqlite::Connection) -> Result<Vec<ItemInfo>> {
    Ok(conn
        .prepare("SELECT item_id, title, category, is_new FROM items ORDER BY item_id")?
        .query_map([], |r| {
            Ok(ItemInfo {
                id: r.get(0)?,
                title: r.get(1)?,
                category: r.get(2)?,
                is_new: r.get(3)?,
            })
        })?
        .collect::<std::result::Result<_, _>>()?)
}

fn read_contexts(conn: &rusqlite::Connection) -> Result<Vec<ContextInfo>> {
    Ok(conn
        .prepare(
            "SELECT context_id, kind, text, segment, anchor_item_id FROM contexts ORDER BY context_id",
        )?
        .query_map([], |r| {
            Ok(ContextInfo {
                id: r.get(0)?,
                kind: r.get(1)?,
                text: r.get(2)?,
                segment: r.get(3)?,
                anchor_item: r.get(4)?,
            })
        })?
        .collect::<std::result::Result<_, _>>()?)
}

fn read_rankers(conn: &rusqlite::Connection) -> Result<Vec<String>> {
    Ok(conn
        .prepare("SELECT ranker FROM rankers ORDER BY ranker")?
        .query_map([], |r| r.get(0))?
        .collect::<std::result::Result<_, _>>()?)
}

/// The reviewers in name order, and whether each is a machine judge.
fn read_reviewers(conn: &rusqlite::Connection) -> Result<(Vec<String>, Vec<bool>)> {
    Ok(conn
        .prepare("SELECT reviewer, kind = 'machine' FROM reviewers ORDER BY reviewer")?
        .query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, bool>(1)?)))?
        .collect::<std::result::Result<Vec<_>, _>>()?
        .into_iter()
        .unzip())
}

/// Every ranker's list per context, as item positions.
fn read_lists(
    conn: &rusqlite::Connection,
    index: &Indexes<'_>,
    rankers: usize,
    contexts: usize,
) -> Result<Vec<Vec<Vec<u32>>>> {
    let mut lists = vec![vec![Vec::new(); contexts]; rankers];
    let mut stmt = conn.prepare("SELECT ranker, context_id, items FROM ranked_lists")?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        let ranker = index.ranker[r.get_ref(0)?.as_str()?] as usize;
        let context = index.context[r.get_ref(1)?.as_str()?] as usize;
        let ids: Vec<std::borrow::Cow<str>> =
            serde_json::from_str::<JsonIds>(r.get_ref(2)?.as_str()?)
                .map_err(|e| {
                    rusqlite::Error::FromSqlConversionFailure(
                        2,
                        rusqlite::types::Type::Text,
                        Box::new(e),
                    )
                })?
                .0;
        lists[ranker][context] = ids.iter().map(|id| index.item[id.as_ref()]).collect();
    }
    Ok(lists)
}

/// The scales in name order, each with its levels in value order.
fn read_scales(conn: &rusqlite::Connection) -> Result<Vec<Scale>> {
    let mut scales: Vec<Scale> = Vec::new();
    let mut stmt = conn.prepare(
        "SELECT s.scale, l.value, l.label, l.gain, l.key, l.rubric, l.colour
         FROM scales s JOIN levels l ON l.scale = s.scale ORDER BY s.scale, l.value",
    )?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        let name: String = r.get(0)?;
        if scales.last().is_none_or(|s| s.name != name) {
            scales.push(Scale {
                name,
                levels: Vec::new(),
            });
        }
        scales.last_mut().expect("pushed above").levels.push(Level {
            value: r.get(1)?,
            label: r.get(2)?,
            gain: r.get(3)?,
            key: r.get(4)?,
            rubric: r.get(5)?,
            colour: r.get(6)?,
        });
    }
    Ok(scales)
}

/// Every reviewer's current grades, sorted by (scale, context, item, reviewer): from
/// the packs where the study has them (`study::grade_packs`), each stale or unreadable
/// context from `current_grades`; from `current_grades` alone in a study too old to
/// have packs (opened read-only, so not migrated).
fn read_grades(conn: &rusqlite::Connection, index: &Indexes<'_>) -> Result<Vec<GradeRow>> {
    let mut grades = Vec::new();
    let packed = conn
        .prepare("SELECT 1 FROM sqlite_schema WHERE type = 'table' AND name = 'grade_packs'")?
        .exists([])?;
    match packed
        .then(|| Numbers::read(conn, index))
        .transpose()?
        .flatten()
    {
        Some(numbers) => read_packed_grades(conn, index, &numbers, &mut grades)?,
        None => {
            let mut stmt = conn.prepare(&format!("{GRADE_COLUMNS} FROM current_grades"))?;
            push_grade_rows(stmt.query([])?, index, &mut grades)?;
        }
    }
    // Keys are unique, so an unstable sort gives the same order without a buffer of
    // half the grades beside them (packs arrive in this order already).
    if !grades.is_sorted_by_key(grade_order) {
        grades.sort_unstable_by_key(grade_order);
    }
    Ok(grades)
}

fn grade_order(g: &GradeRow) -> (u32, u32, u32, u32) {
    (g.scale, g.context, g.item, g.reviewer)
}

const GRADE_COLUMNS: &str =
    "SELECT reviewer, context_id, item_id, scale, value, seconds, graded_day";

/// The packs of every key that is not stale, then each stale key's rows (and those of
/// a pack that names an item or reviewer this snapshot does not have).
fn read_packed_grades(
    conn: &rusqlite::Connection,
    index: &Indexes<'_>,
    numbers: &Numbers,
    grades: &mut Vec<GradeRow>,
) -> Result<()> {
    let mut from_rows: Vec<(String, String)> = conn
        .prepare("SELECT scale, context_id FROM grade_packs_stale")?
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
        .collect::<std::result::Result<_, _>>()?;
    let stale: crate::core::fast_hash::FastSet<(String, String)> =
        from_rows.iter().cloned().collect();
    let mut stmt = conn.prepare("SELECT scale, context_id, grades FROM grade_packs")?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        let (scale, context) = (r.get_ref(0)?.as_str()?, r.get_ref(1)?.as_str()?);
        if !stale.is_empty() && stale.contains(&(scale.to_string(), context.to_string())) {
            continue;
        }
        let at = (index.scale.get(scale), index.context.get(context));
        let unpacked = match (at, grade_packs::decode(r.get_ref(2)?.as_blob()?)) {
            ((Some(&scale), Some(&context)), Some(entries)) => {
                let before = grades.len();
                let whole = entries
                    .map(|g| numbers.row(scale, context, g))
                    .try_for_each(|g| g.map(|g| grades.push(g)));
                whole.is_none().then(|| grades.truncate(before))
            }
            _ => Some(()),
        };
        if unpacked.is_some() {
            from_rows.push((scale.to_string(), context.to_string()));
        }
    }
    let mut stmt = conn.prepare(&format!(
        "{GRADE_COLUMNS} FROM current_grades WHERE scale = ?1 AND context_id = ?2"
    ))?;
    for (scale, context) in &from_rows {
        push_grade_rows(stmt.query([scale, context])?, index, grades)?;
    }
    Ok(())
}

/// Stable item and reviewer numbers to the snapshot's positions (`u32::MAX`: none).
struct Numbers {
    items: Vec<u32>,
    reviewers: Vec<u32>,
}

impl Numbers {
    /// None when the numbers are too sparse for a table by number (never, as the
    /// study numbers them: the caller then reads `current_grades` row by row).
    fn read(conn: &rusqlite::Connection, index: &Indexes<'_>) -> Result<Option<Numbers>> {
        let table = |sql: &str, ids: &IdMap<'_>| -> Result<Option<Vec<u32>>> {
            let mut positions = Vec::new();
            let mut stmt = conn.prepare(sql)?;
            let mut rows = stmt.query([])?;
            while let Some(r) = rows.next()? {
                let number = r.get::<_, i64>(0)?;
                let fits = usize::try_from(number)
                    .ok()
                    .filter(|&n| n <= 2 * ids.len() + 1024);
                let Some(number) = fits else {
                    return Ok(None);
                };
                if positions.len() <= number {
                    positions.resize(number + 1, u32::MAX);
                }
                if let Some(&at) = ids.get(r.get_ref(1)?.as_str()?) {
                    positions[number] = at;
                }
            }
            Ok(Some(positions))
        };
        let items = table("SELECT number, item_id FROM item_numbers", &index.item)?;
        let reviewers = table(
            "SELECT number, reviewer FROM reviewer_numbers",
            &index.reviewer,
        )?;
        Ok(items
            .zip(reviewers)
            .map(|(items, reviewers)| Numbers { items, reviewers }))
    }

    /// The snapshot's row for a packed grade, or None when a number names nothing here.
    fn row(&self, scale: u32, context: u32, g: grade_packs::PackedGrade) -> Option<GradeRow> {
        let at = |table: &[u32], n: u32| table.get(n as usize).copied().filter(|&p| p != u32::MAX);
        Some(GradeRow {
            reviewer: at(&self.reviewers, g.reviewer)?,
            context,
            item: at(&self.items, g.item)?,
            scale,
            value: g.value,
            seconds: g.seconds,
            day: g.day,
        })
    }
}

/// Appends `current_grades` rows (read with [`GRADE_COLUMNS`]) as grade rows.
fn push_grade_rows(
    mut rows: rusqlite::Rows<'_>,
    index: &Indexes<'_>,
    grades: &mut Vec<GradeRow>,
) -> Result<()> {
    // Rows come in key order (scale, context, item, reviewer): a run of rows shares
    // its scale and context, so those are looked up once per run.
    let (mut scale_key, mut context_key, mut reviewer_key) =
        (String::new(), String::new(), String::new());
    let (mut scale_at, mut context_at, mut reviewer_at) = (0u32, 0u32, 0u32);
    while let Some(r) = rows.next()? {
        let scale = r.get_ref(3)?.as_str()?;
        if scale != scale_key || scale_key.is_empty() {
            scale_at = index.scale[scale];
            scale_key = scale.to_string();
        }
        let context = r.get_ref(1)?.as_str()?;
        if context != context_key || context_key.is_empty() {
            context_at = index.context[context];
            context_key = context.to_string();
        }
        // Most pairs have one grade, so the reviewer usually repeats from the row before.
        let reviewer = r.get_ref(0)?.as_str()?;
        if reviewer != reviewer_key || reviewer_key.is_empty() {
            reviewer_at = index.reviewer[reviewer];
            reviewer_key.clear();
            reviewer_key.push_str(reviewer);
        }
        grades.push(GradeRow {
            reviewer: reviewer_at,
            context: context_at,
            item: index.item[r.get_ref(2)?.as_str()?],
            scale: scale_at,
            value: r.get(4)?,
            seconds: r.get(5)?,
            day: r.get::<_, Option<i32>>(6)?.unwrap_or(0),
        });
    }
    Ok(())
}

/// The settled grades in force: the latest settle event per pair and scale; NULL = undone.
fn read_settled(conn: &rusqlite::Connection, index: &Indexes<'_>) -> Result<Vec<SettledRow>> {
    let mut settled = Vec::new();
    let mut stmt = conn.prepare(
        "SELECT context_id, item_id, scale, value FROM settle_events s
         WHERE NOT EXISTS (
           SELECT 1 FROM settle_events t
           WHERE t.scale = s.scale AND t.context_id = s.context_id AND t.item_id = s.item_id
             AND (t.settled_at > s.settled_at OR (t.settled_at = s.settled_at AND t.id > s.id)))
         AND value IS NOT NULL",
    )?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        settled.push(SettledRow {
            context: index.context[r.get_ref(0)?.as_str()?],
            item: index.item[r.get_ref(1)?.as_str()?],
            scale: index.scale[r.get_ref(2)?.as_str()?],
            value: r.get(3)?,
        });
    }
    Ok(settled)
}

/// The gold pairs as (context, item, scale, value) positions.
fn read_gold(conn: &rusqlite::Connection, index: &Indexes<'_>) -> Result<Vec<(u32, u32, u32, u8)>> {
    let mut gold = Vec::new();
    let mut stmt = conn.prepare("SELECT context_id, item_id, scale, value FROM gold_pairs")?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        gold.push((
            index.context[r.get_ref(0)?.as_str()?],
            index.item[r.get_ref(1)?.as_str()?],
            index.scale[r.get_ref(2)?.as_str()?],
            r.get(3)?,
        ));
    }
    Ok(gold)
}
