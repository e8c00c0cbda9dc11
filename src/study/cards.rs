//! The card data the screens show: every item and context with all it shows.

use std::collections::BTreeMap;

use rusqlite::OptionalExtension;

use super::{Result, Study};

/// Everything an item shows on a card or in the catalog.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ItemCard {
    pub id: String,
    pub title: String,
    pub category: String,
    pub description: String,
    pub price: Option<f64>,
    /// Path relative to the catalog folder, as imported.
    pub image: String,
    pub is_new: bool,
    /// Free attributes in the order of the imported columns' names (sorted).
    pub attributes: Vec<(String, String)>,
}

/// Everything a context shows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ContextCard {
    pub id: String,
    pub kind: String,
    pub text: String,
    pub anchor_item_id: Option<String>,
    pub segment: String,
}

impl Study {
    /// Every item with all it shows, ordered by id.
    pub fn item_cards(&self) -> Result<Vec<ItemCard>> {
        let mut stmt = self.conn().prepare(&format!(
            "SELECT {ITEM_CARD_COLUMNS} FROM items ORDER BY item_id"
        ))?;
        let rows = stmt
            .query_map([], item_card)?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }

    /// The cards of the named items (unknown ids are left out), for screens that show a
    /// few items without reading the whole catalog.
    pub fn item_cards_of<'a>(
        &self,
        ids: impl IntoIterator<Item = &'a str>,
    ) -> Result<BTreeMap<String, ItemCard>> {
        let mut stmt = self.conn().prepare_cached(&format!(
            "SELECT {ITEM_CARD_COLUMNS} FROM items WHERE item_id = ?1"
        ))?;
        let mut out = BTreeMap::new();
        for id in ids {
            if out.contains_key(id) {
                continue;
            }
            if let Some(card) = stmt.query_row([id], item_card).optional()? {
                out.insert(id.to_string(), card);
            }
        }
        Ok(out)
    }

    /// Every context, ordered by id.
    pub fn context_cards(&self) -> Result<Vec<ContextCard>> {
        let mut stmt = self.conn().prepare(
            "SELECT context_id, kind, text, anchor_item_id, segment FROM contexts
             ORDER BY context_id",
        )?;
        let rows = stmt
            .query_map([], |r| {
                Ok(ContextCard {
                    id: r.get(0)?,
                    kind: r.get(1)?,
                    text: r.get(2)?,
                    anchor_item_id: r.get(3)?,
                    segment: r.get(4)?,
                })
            })?
            .collect::<std::result::Result<_, _>>()?;
        Ok(rows)
    }
}

/// The free attributes stored as a JSON object; values shown as text.
fn parse_attributes(json: &str) -> Vec<(String, String)> {
    match serde_json::from_str::<serde_json::Value>(json) {
        Ok(serde_json::Value::Object(map)) => map
            .into_iter()
            .map(|(k, v)| {
                let text = match v {
                    serde_json::Value::String(s) => s,
                    other => other.to_string(),
                };
                (k, text)
            })
            .collect(),
        _ => Vec::new(),
    }
}

/// The columns `item_card` reads, in its order.
const ITEM_CARD_COLUMNS: &str =
    "item_id, title, category, description, price, image, is_new, attributes";

/// One row of `ITEM_CARD_COLUMNS` as a card.
fn item_card(r: &rusqlite::Row) -> rusqlite::Result<ItemCard> {
    let attributes: String = r.get(7)?;
    Ok(ItemCard {
        id: r.get(0)?,
        title: r.get(1)?,
        category: r.get(2)?,
        description: r.get(3)?,
        price: r.get(4)?,
        image: r.get(5)?,
        is_new: r.get(6)?,
        attributes: parse_attributes(&attributes),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn attributes_come_back_as_text() {
        assert_eq!(
            parse_attributes(r#"{"weight_g":"2120","season":3}"#),
            vec![
                ("season".to_string(), "3".to_string()),
                ("weight_g".to_string(), "2120".to_string())
            ]
        );
        assert!(parse_attributes("not json").is_empty());
    }
}
