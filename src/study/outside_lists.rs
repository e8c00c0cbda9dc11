//! Lists scored from a file without importing them (`score --rankings FILE`, the
//! Scoreboard's "score lists from a file"): next week's candidate against the judgments
//! the study already has. The study file is only read.

use std::collections::HashMap;
use std::path::Path;

use crate::core::fast_hash::FastMap;

use serde::Serialize;

use super::csv_input::{self, ProblemLog, Problems};
use super::import::{KnownIds, RANKINGS, read_lists};
use super::snapshot::{ItemInfo, Snapshot};
use super::{Result, StudyError};

/// What one rankings file brought to a run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FileLists {
    /// The file's name, as messages call it.
    pub file: String,
    /// Rankers whose lists the file holds, by name.
    pub rankers: Vec<String>,
    /// Those of them the study also has: the file's lists replace the study's for this run.
    pub replaced: Vec<String>,
    /// Lists read: one per ranker and context the study has, scored or not.
    pub lists: usize,
    /// Entries in those lists, every rank (not cut at k).
    pub entries: usize,
    /// Contexts of the file the study lacks, each once: their lists are left out.
    pub contexts_left_out: usize,
    /// Lists left out because the study has no such context (one per ranker and such
    /// context; `lists + lists_left_out` is every list of the file).
    pub lists_left_out: usize,
    /// Entries (not distinct items) of `lists` whose item the catalog lacks; they count
    /// as unjudged, so `unknown_items / entries` is the share of such entries.
    pub unknown_items: usize,
}

/// Lists from files in a snapshot, beside the study's own.
#[derive(Debug, Clone, Default)]
pub struct OutsideLists {
    /// Per ranker of the snapshot: the file its lists came from (None = the study's).
    pub source: Vec<Option<String>>,
    /// The study's own lists of rankers a file replaced, by ranker index: the pool as
    /// it was judged, which pool-bias figures compare against.
    pub replaced: Vec<(usize, Vec<Vec<u32>>)>,
    /// One summary per file, in the order given.
    pub files: Vec<FileLists>,
    /// Stand-in items appended to the snapshot's items for ids the catalog lacks.
    pub stand_in_items: usize,
}

impl Snapshot {
    /// Adds the lists of a rankings file (the rankings.csv columns, `rank` or `score`)
    /// for this run: a ranker the study has is replaced, a new one is added after the
    /// study's. Bad rows are refused with their line and column, as by import.
    pub fn add_rankings_file(&mut self, path: &Path) -> Result<FileLists> {
        let table = csv_input::read_file(path, &RANKINGS).map_err(StudyError::Input)?;
        let context_index: FastMap<&str, u32> = self
            .contexts
            .iter()
            .enumerate()
            .map(|(i, c)| (c.id.as_str(), i as u32))
            .collect();
        let mut log = ProblemLog::default();
        let known = KnownIds {
            contexts: &|c| context_index.contains_key(c),
            items: &|_| true,
            refuse_unknown: false,
        };
        let read = read_lists(&table, &known, &mut log);
        log.into_result().map_err(StudyError::Input)?;
        if self.outside.source.len() < self.rankers.len() {
            self.outside.source.resize(self.rankers.len(), None);
        }
        let mut names: Vec<&str> = read.lists.iter().map(|l| l.ranker).collect();
        names.dedup();
        for name in &names {
            if let Some(r) = self.ranker_index(name)
                && let Some(earlier) = &self.outside.source[r]
            {
                return Err(StudyError::Input(Problems(vec![csv_input::whole_file(
                    &table.file,
                    format!(
                        "ranker \"{name}\" is also in {earlier}; give each ranker's lists in one file"
                    ),
                )])));
            }
        }
        let mut item_index: FastMap<String, u32> = self
            .items
            .iter()
            .enumerate()
            .map(|(i, item)| (item.id.clone(), i as u32))
            .collect();
        let mut summary = FileLists {
            file: table.file.clone(),
            rankers: names.iter().map(|n| n.to_string()).collect(),
            replaced: Vec::new(),
            lists: read.lists.len(),
            entries: 0,
            contexts_left_out: read.left_out_contexts,
            lists_left_out: read.left_out,
            unknown_items: 0,
        };
        let catalog = self.items.len() - self.outside.stand_in_items;
        let mut ranker_at: HashMap<&str, usize> = HashMap::new();
        for name in &names {
            let r = match self.ranker_index(name) {
                Some(r) => {
                    summary.replaced.push(name.to_string());
                    let own = std::mem::replace(
                        &mut self.lists[r],
                        vec![Vec::new(); self.contexts.len()],
                    );
                    self.outside.replaced.push((r, own));
                    r
                }
                None => {
                    self.rankers.push(name.to_string());
                    self.lists.push(vec![Vec::new(); self.contexts.len()]);
                    self.outside.source.push(None);
                    self.rankers.len() - 1
                }
            };
            self.outside.source[r] = Some(table.file.clone());
            ranker_at.insert(name, r);
        }
        for list in &read.lists {
            let r = ranker_at[list.ranker];
            let c = context_index[list.context] as usize;
            let mut items = Vec::with_capacity(list.entries.len());
            for (id, _) in &list.entries {
                let next = self.items.len() as u32;
                let index = match item_index.get(*id) {
                    Some(&index) => index,
                    None => {
                        item_index.insert((*id).to_string(), next);
                        next
                    }
                };
                if index == next {
                    // Not in the catalog: a stand-in nobody judged.
                    self.items.push(ItemInfo {
                        id: (*id).to_string(),
                        title: (*id).to_string(),
                        category: String::new(),
                        is_new: false,
                    });
                    self.outside.stand_in_items += 1;
                }
                if index as usize >= catalog {
                    summary.unknown_items += 1;
                }
                items.push(index);
            }
            summary.entries += items.len();
            self.lists[r][c] = items;
        }
        self.outside.files.push(summary.clone());
        Ok(summary)
    }

    /// The file a ranker's lists came from in this run; None for the study's own.
    pub fn ranker_file(&self, ranker: usize) -> Option<&str> {
        self.outside.source.get(ranker).and_then(|s| s.as_deref())
    }

    /// A ranker's lists as the study stores them (the pool as judged); None for a
    /// ranker that only a file brought.
    pub fn pooled_lists(&self, ranker: usize) -> Option<&[Vec<u32>]> {
        if let Some((_, own)) = self.outside.replaced.iter().find(|(r, _)| *r == ranker) {
            return Some(own);
        }
        match self.ranker_file(ranker) {
            Some(_) => None,
            None => self.lists.get(ranker).map(Vec::as_slice),
        }
    }
}
