//! What the Catalog shows: item and context cards, each ranker's counts, the text its
//! search reads, and the lead's context view ([`ContextLists`]); built on a job thread.

use std::path::PathBuf;

use crate::analysis::views::catalog_view::ContextLists;
use crate::study::cards::{ContextCard, ItemCard};
use crate::study::settings::keys;
use crate::study::{Study, StudyError};

/// One ranker's row.
#[derive(Debug, Clone, PartialEq)]
pub struct RankerRow {
    /// The ranker.
    pub name: String,
    /// Contexts it has a list for.
    pub contexts: usize,
    /// Entries over all its lists.
    pub entries: usize,
}

/// What the Catalog shows, loaded on a thread.
#[derive(Debug, Clone, Default)]
pub struct CatalogModel {
    /// Every item's card.
    pub items: Vec<ItemCard>,
    /// Every context's card.
    pub contexts: Vec<ContextCard>,
    /// One row per ranker.
    pub rankers: Vec<RankerRow>,
    /// The folder item pictures are read from.
    pub catalog_dir: Option<PathBuf>,
    /// In a reviewer's copy: whom it was handed out to. The context view is then absent.
    pub copy_for: Option<String>,
    /// The context view's index (lead's studies only; never built for a reviewer copy).
    pub lists: Option<ContextLists>,
    /// Lower-cased text searched per item / context.
    pub item_text: Vec<String>,
    /// Lower-cased text searched per context.
    pub context_text: Vec<String>,
}

impl CatalogModel {
    /// Whether the study has no catalog yet (a new study): the import panel opens.
    pub fn is_empty(&self) -> bool {
        self.items.is_empty() && self.contexts.is_empty() && self.rankers.is_empty()
    }
}

/// Reads the catalog in one read transaction: cards, per-ranker counts, the search
/// text, and the lead's context view.
pub fn build(study: &Study) -> Result<CatalogModel, StudyError> {
    let model = study.read_together(|study| {
        let snapshot = study.snapshot()?;
        let items = study.item_cards()?;
        let contexts = study.context_cards()?;
        let copy_for = study
            .setting(keys::HANDED_OUT_TO)?
            .filter(|r| !r.is_empty());
        let catalog_dir = study.catalog_dir()?;
        Ok((snapshot, items, contexts, copy_for, catalog_dir))
    })?;
    let (snapshot, items, contexts, copy_for, catalog_dir) = model;
    let rankers = snapshot
        .rankers
        .iter()
        .zip(&snapshot.lists)
        .map(|(name, lists)| RankerRow {
            name: name.clone(),
            contexts: lists.iter().filter(|l| !l.is_empty()).count(),
            entries: lists.iter().map(Vec::len).sum(),
        })
        .collect();
    let item_text = items
        .iter()
        .map(|i| {
            let attrs: Vec<String> = i
                .attributes
                .iter()
                .map(|(k, v)| format!("{k} {v}"))
                .collect();
            format!(
                "{} {} {} {} {}",
                i.id,
                i.title,
                i.category,
                i.description,
                attrs.join(" ")
            )
            .to_lowercase()
        })
        .collect();
    let context_text = contexts
        .iter()
        .map(|c| {
            let anchor = c.anchor_item_id.as_deref().unwrap_or_default();
            format!("{} {} {} {} {anchor}", c.id, c.kind, c.text, c.segment).to_lowercase()
        })
        .collect();
    // Other reviewers' grades are the lead's to see: a reviewer copy gets no view at all.
    let lists = copy_for.is_none().then(|| ContextLists::build(snapshot));
    Ok(CatalogModel {
        items,
        contexts,
        rankers,
        catalog_dir,
        copy_for,
        lists,
        item_text,
        context_text,
    })
}
