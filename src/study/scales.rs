//! Designing scales in a study: create, edit wording, version and choose the active one
//! (the pilot that grades the same pairs under several scales is in `pilot`).
//!
//! Nothing already graded is ever rewritten. Once a scale has grades, a change of
//! meaning (adding, removing or renumbering levels) is saved as a new scale version
//! ("fit4" → "fit4 v2"); wording (labels, rubric), keys, colours and gains may still be
//! edited in place because no stored grade refers to them.

use rusqlite::{OptionalExtension, params};

use super::{Result, Study, StudyError};
use crate::core::scale::Scale;

/// Setting naming the scale the grading desk grades on.
pub use super::settings::keys::ACTIVE_SCALE;
/// Setting holding the pilot's scales as a JSON list, in block order.
pub use super::settings::keys::PILOT_SCALES;

/// What saving an edited scale did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Saved {
    /// A scale that did not exist before.
    Created(String),
    /// The scale was changed in place (no grades, or wording only).
    Updated(String),
    /// The scale has grades and its meaning changed: saved under this new name.
    NewVersion(String),
}

impl Saved {
    pub fn name(&self) -> &str {
        match self {
            Saved::Created(n) | Saved::Updated(n) | Saved::NewVersion(n) => n,
        }
    }
}

/// True when `edited` means something different from `stored`: levels were added or
/// removed, or a level moved to another value. `origins[i]` is the stored value the
/// edited level `i` started from (None = a new level).
pub fn meaning_changed(stored: &Scale, edited: &Scale, origins: &[Option<u8>]) -> bool {
    stored.levels.len() != edited.levels.len()
        || origins.len() != edited.levels.len()
        || origins.iter().enumerate().any(|(i, o)| *o != Some(i as u8))
}

/// "fit4" → "fit4 v2", "fit4 v2" → "fit4 v3"; skips names in `taken`.
pub fn next_version_name(name: &str, taken: &[String]) -> String {
    let (base, mut n) = match name.rsplit_once(" v") {
        Some((base, v)) if v.parse::<u32>().is_ok_and(|v| v >= 2) => {
            (base, v.parse::<u32>().unwrap_or(1))
        }
        _ => (name, 1),
    };
    loop {
        n += 1;
        let candidate = format!("{base} v{n}");
        if !taken.contains(&candidate) {
            return candidate;
        }
    }
}

fn refuse_problems(scale: &Scale) -> Result<()> {
    let problems = scale.problems();
    if problems.is_empty() {
        Ok(())
    } else {
        Err(StudyError::input(format!(
            "scale \"{}\": {}",
            scale.name,
            problems.join("; ")
        )))
    }
}

impl Study {
    /// Names of every scale, sorted.
    pub fn scale_names(&self) -> Result<Vec<String>> {
        let mut stmt = self
            .conn()
            .prepare("SELECT scale FROM scales ORDER BY scale")?;
        let names = stmt
            .query_map([], |r| r.get(0))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(names)
    }

    /// How many grade events (grades, can't-judge, undo) refer to `scale`.
    pub fn grade_count(&self, scale: &str) -> Result<u64> {
        let n: i64 = self.conn().query_row(
            "SELECT COUNT(*) FROM grade_events WHERE scale = ?1",
            [scale],
            |r| r.get(0),
        )?;
        Ok(n as u64)
    }

    /// (grades in force, pairs they cover) on `scale`: every reviewer's current grade or
    /// can't-judge per pair, the figure Home's "Grades in force" sums over all scales.
    pub fn grades_in_force(&self, scale: &str) -> Result<(u64, u64)> {
        let (grades, pairs): (i64, i64) = self.conn().query_row(
            "SELECT COUNT(*), (SELECT COUNT(*) FROM
                 (SELECT DISTINCT context_id, item_id FROM current_grades WHERE scale = ?1))
             FROM current_grades WHERE scale = ?1",
            [scale],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )?;
        Ok((grades as u64, pairs as u64))
    }

    /// Adds a new scale; refuses an invalid one or a name already in use.
    pub fn create_scale(&mut self, scale: &Scale) -> Result<()> {
        refuse_problems(scale)?;
        if self.scale_names()?.contains(&scale.name) {
            return Err(StudyError::input(format!(
                "a scale named \"{}\" already exists; choose another name",
                scale.name
            )));
        }
        let tx = self.begin_write()?;
        tx.execute("INSERT INTO scales(scale) VALUES (?1)", [&scale.name])?;
        insert_levels(&tx, scale)?;
        tx.commit()?;
        Ok(())
    }

    /// Saves an edited scale (see the module doc for when it becomes a new version).
    /// `origins` as in [`meaning_changed`].
    pub fn save_scale(&mut self, edited: &Scale, origins: &[Option<u8>]) -> Result<Saved> {
        refuse_problems(edited)?;
        let Some(stored) = self.stored_scale(&edited.name)? else {
            self.create_scale(edited)?;
            return Ok(Saved::Created(edited.name.clone()));
        };
        let changed = meaning_changed(&stored, edited, origins);
        if changed && self.grade_count(&edited.name)? > 0 {
            let name = next_version_name(&edited.name, &self.scale_names()?);
            let version = Scale {
                name: name.clone(),
                levels: edited.levels.clone(),
            };
            self.create_scale(&version)?;
            return Ok(Saved::NewVersion(name));
        }
        let tx = self.begin_write()?;
        if changed {
            // No grades yet, so levels may be replaced; collapse maps no longer fit.
            tx.execute("DELETE FROM levels WHERE scale = ?1", [&edited.name])?;
            tx.execute("DELETE FROM collapse_maps WHERE scale = ?1", [&edited.name])?;
            insert_levels(&tx, edited)?;
        } else {
            let mut update = tx.prepare(
                "UPDATE levels SET label = ?3, gain = ?4, key = ?5, rubric = ?6, colour = ?7
                 WHERE scale = ?1 AND value = ?2",
            )?;
            for l in &edited.levels {
                update.execute(params![
                    edited.name,
                    l.value,
                    l.label,
                    l.gain,
                    l.key,
                    l.rubric,
                    l.colour
                ])?;
            }
        }
        tx.commit()?;
        Ok(Saved::Updated(edited.name.clone()))
    }

    /// One scale as stored, or None.
    pub fn stored_scale(&self, name: &str) -> Result<Option<Scale>> {
        let exists = self
            .conn()
            .query_row("SELECT 1 FROM scales WHERE scale = ?1", [name], |_| Ok(()))
            .optional()?
            .is_some();
        if !exists {
            return Ok(None);
        }
        let mut stmt = self.conn().prepare(
            "SELECT value, label, gain, key, rubric, colour FROM levels
             WHERE scale = ?1 ORDER BY value",
        )?;
        let levels = stmt
            .query_map([name], |r| {
                Ok(crate::core::scale::Level {
                    value: r.get(0)?,
                    label: r.get(1)?,
                    gain: r.get(2)?,
                    key: r.get(3)?,
                    rubric: r.get(4)?,
                    colour: r.get(5)?,
                })
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(Some(Scale {
            name: name.to_string(),
            levels,
        }))
    }

    /// Makes `scale` the one the grading desk grades on.
    pub fn set_active_scale(&self, scale: &str) -> Result<()> {
        if !self.scale_names()?.iter().any(|s| s == scale) {
            return Err(StudyError::input(format!("unknown scale \"{scale}\"")));
        }
        self.set_setting(ACTIVE_SCALE, scale)
    }
}

fn insert_levels(tx: &rusqlite::Transaction, scale: &Scale) -> Result<()> {
    let mut insert = tx.prepare(
        "INSERT INTO levels(scale, value, label, gain, key, rubric, colour)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
    )?;
    for l in &scale.levels {
        insert.execute(params![
            scale.name, l.value, l.label, l.gain, l.key, l.rubric, l.colour
        ])?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn version_names_count_up_and_skip_taken_names() {
        assert_eq!(next_version_name("fit4", &[]), "fit4 v2");
        assert_eq!(next_version_name("fit4 v2", &[]), "fit4 v3");
        assert_eq!(next_version_name("fit4", &["fit4 v2".into()]), "fit4 v3");
        assert_eq!(next_version_name("kit v1", &[]), "kit v1 v2");
    }
}
