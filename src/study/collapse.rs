//! Saved collapse maps: how one scale's levels map onto a coarser one.

use rusqlite::params;

use super::{Result, Study, StudyError};
use crate::core::agreement::CollapseMap;

impl Study {
    /// Saves (or replaces) a collapse map for `scale`; every level needs a target.
    pub fn save_collapse_map(&self, scale: &str, map: &CollapseMap) -> Result<()> {
        let levels: i64 = self.conn().query_row(
            "SELECT COUNT(*) FROM levels WHERE scale = ?1",
            [scale],
            |r| r.get(0),
        )?;
        if levels == 0 {
            return Err(StudyError::input(format!("unknown scale \"{scale}\"")));
        }
        if map.targets.len() as i64 != levels {
            return Err(StudyError::input(format!(
                "collapse map \"{}\" gives {} targets but scale \"{scale}\" has {levels} levels",
                map.name,
                map.targets.len()
            )));
        }
        let coarse = map.coarse_levels();
        if (0..coarse as u8).any(|v| !map.targets.contains(&v)) {
            return Err(StudyError::input(format!(
                "collapse map \"{}\" must use every coarse level from 0 to {}",
                map.name,
                coarse - 1
            )));
        }
        let targets = serde_json::to_string(&map.targets).unwrap_or_default();
        self.conn().execute(
            "INSERT INTO collapse_maps(name, scale, targets) VALUES (?1, ?2, ?3)
             ON CONFLICT(name) DO UPDATE SET scale = excluded.scale, targets = excluded.targets",
            params![map.name, scale, targets],
        )?;
        Ok(())
    }

    /// Every saved collapse map with the scale it applies to.
    pub fn collapse_maps(&self) -> Result<Vec<(String, CollapseMap)>> {
        let mut stmt = self
            .conn()
            .prepare("SELECT scale, name, targets FROM collapse_maps ORDER BY name")?;
        let rows = stmt.query_map([], |r| {
            Ok((
                r.get::<_, String>(0)?,
                r.get::<_, String>(1)?,
                r.get::<_, String>(2)?,
            ))
        })?;
        let mut maps = Vec::new();
        for row in rows {
            let (scale, name, targets) = row?;
            let targets: Vec<u8> = serde_json::from_str(&targets).unwrap_or_default();
            maps.push((scale, CollapseMap { name, targets }));
        }
        Ok(maps)
    }
}
