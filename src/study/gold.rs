//! Gold pairs: read back, and entered one at a time (the Scales screen); files go
//! through `import --gold`. Every write checks the pair and the level first.

use super::{Result, Study, StudyError};

impl Study {
    /// Gold pairs of a scale: (context_id, item_id, known level).
    pub fn gold_pairs(&self, scale: &str) -> Result<Vec<(String, String, u8)>> {
        let mut stmt = self.conn().prepare(
            "SELECT context_id, item_id, value FROM gold_pairs WHERE scale = ?1
             ORDER BY context_id, item_id",
        )?;
        let rows = stmt
            .query_map([scale], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Gold pairs of a scale with their rationale: (context_id, item_id, level, rationale).
    pub fn gold_with_rationale(&self, scale: &str) -> Result<Vec<(String, String, u8, String)>> {
        let mut stmt = self.conn().prepare(
            "SELECT context_id, item_id, value, rationale FROM gold_pairs WHERE scale = ?1
             ORDER BY context_id, item_id",
        )?;
        let rows = stmt
            .query_map([scale], |r| {
                Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?))
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// Adds a gold pair or changes its known level and rationale.
    pub fn save_gold_pair(
        &mut self,
        scale: &str,
        context: &str,
        item: &str,
        value: u8,
        rationale: &str,
    ) -> Result<()> {
        let tx = self.begin_write()?;
        let exists = |sql: &str, id: &str| -> Result<bool> {
            Ok(tx.query_row(sql, [id], |r| r.get::<_, bool>(0))?)
        };
        if !exists(
            "SELECT EXISTS (SELECT 1 FROM contexts WHERE context_id = ?1)",
            context,
        )? {
            return Err(StudyError::input(format!("unknown context \"{context}\"")));
        }
        if !exists(
            "SELECT EXISTS (SELECT 1 FROM items WHERE item_id = ?1)",
            item,
        )? {
            return Err(StudyError::input(format!("unknown item \"{item}\"")));
        }
        let levels: i64 = tx.query_row(
            "SELECT COUNT(*) FROM levels WHERE scale = ?1",
            [scale],
            |r| r.get(0),
        )?;
        if levels == 0 {
            return Err(StudyError::input(format!("unknown scale \"{scale}\"")));
        }
        if i64::from(value) >= levels {
            return Err(StudyError::input(format!(
                "scale \"{scale}\" has levels 0 to {}, not {value}",
                levels - 1
            )));
        }
        tx.execute(
            "INSERT INTO gold_pairs(context_id, item_id, scale, value, rationale) VALUES (?1, ?2, ?3, ?4, ?5)
             ON CONFLICT(scale, context_id, item_id) DO UPDATE SET value = excluded.value, rationale = excluded.rationale",
            rusqlite::params![context, item, scale, value, rationale],
        )?;
        tx.commit()?;
        Ok(())
    }

    /// Removes a gold pair (grades already given to it stay; it is just no longer gold).
    pub fn remove_gold_pair(&mut self, scale: &str, context: &str, item: &str) -> Result<()> {
        let tx = self.begin_write()?;
        tx.execute(
            "DELETE FROM gold_pairs WHERE scale = ?1 AND context_id = ?2 AND item_id = ?3",
            [scale, context, item],
        )?;
        tx.commit()?;
        Ok(())
    }
}
