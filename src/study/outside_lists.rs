//! Lists scored from a file without importing them (`score --rankings FILE`, the
//! Scoreboard's "score lists from a file"): next week's candidate against the judgments
//! the study already has. The study file is only read.

use std::path::Path;

use crate::core::fast_hash::FastMap;

use serde::Serialize;

use super::csv_input::{self, CsvRows, ProblemLog, Problems};
use super::import::{KnownIds, ListsRead, Order, ParsedList, RANKINGS, read_lists};
use super::scratch::Scratch;
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

/// A file's lists with their ids turned into the snapshot's indices, not yet applied.
struct FileRead {
    file: String,
    /// The file's rankers by name, sorted; lists name them by position here.
    rankers: Vec<String>,
    /// (ranker, context index, item indices) of each list.
    lists: Vec<(usize, usize, Vec<u32>)>,
    /// Ids the snapshot lacks, in the order met; their indices follow its items.
    stand_ins: Vec<String>,
    entries: usize,
    unknown_items: usize,
    /// Lists left out for a context the snapshot lacks, and those contexts.
    lists_left_out: usize,
    contexts_left_out: usize,
}

impl Snapshot {
    /// Adds the lists of a rankings file (the rankings.csv columns, `rank` or `score`)
    /// for this run: a ranker the study has is replaced, a new one is added after the
    /// study's. Bad rows are refused with their line and column, as by import.
    pub fn add_rankings_file(&mut self, path: &Path) -> Result<FileLists> {
        let read = self.read_file_lists(path)?;
        if self.outside.source.len() < self.rankers.len() {
            self.outside.source.resize(self.rankers.len(), None);
        }
        for name in &read.rankers {
            if let Some(r) = self.ranker_index(name)
                && let Some(earlier) = &self.outside.source[r]
            {
                return Err(StudyError::Input(Problems(vec![csv_input::whole_file(
                    &read.file,
                    format!(
                        "ranker \"{name}\" is also in {earlier}; give each ranker's lists in one file"
                    ),
                )])));
            }
        }
        let mut summary = FileLists {
            file: read.file.clone(),
            rankers: read.rankers.clone(),
            replaced: Vec::new(),
            lists: read.lists.len(),
            entries: read.entries,
            contexts_left_out: read.contexts_left_out,
            lists_left_out: read.lists_left_out,
            unknown_items: read.unknown_items,
        };
        let at: Vec<usize> = read
            .rankers
            .iter()
            .map(|name| self.take_ranker(name, &read.file, &mut summary))
            .collect();
        for id in read.stand_ins {
            // Not in the catalog: a stand-in nobody judged.
            self.items.push(ItemInfo {
                id: id.clone(),
                title: id,
                category: String::new(),
                is_new: false,
            });
            self.outside.stand_in_items += 1;
        }
        for (ranker, context, items) in read.lists {
            self.lists[at[ranker]][context] = items;
        }
        self.outside.files.push(summary.clone());
        Ok(summary)
    }

    /// The snapshot's place for a ranker of `file`: the study's ranker of that name, its
    /// own lists kept aside as the pool judged, or a new ranker after the study's.
    fn take_ranker(&mut self, name: &str, file: &str, summary: &mut FileLists) -> usize {
        let r = match self.ranker_index(name) {
            Some(r) => {
                summary.replaced.push(name.to_string());
                let own =
                    std::mem::replace(&mut self.lists[r], vec![Vec::new(); self.contexts.len()]);
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
        self.outside.source[r] = Some(file.to_string());
        r
    }

    /// Reads a rankings file's lists as a stream (once more, sorted by list in a
    /// scratch database, when its lists are scattered), without changing the snapshot.
    fn read_file_lists(&self, path: &Path) -> Result<FileRead> {
        let context_index: FastMap<&str, u32> = self
            .contexts
            .iter()
            .enumerate()
            .map(|(i, c)| (c.id.as_str(), i as u32))
            .collect();
        let known = KnownIds {
            contexts: &|c| context_index.contains_key(c),
            items: &|_| true,
            refuse_unknown: false,
        };
        let scratch = Scratch::open()?;
        let mut order = Order::AsWritten;
        loop {
            let mut log = ProblemLog::default();
            let mut rows = CsvRows::open(path, &RANKINGS, &mut log).map_err(StudyError::Input)?;
            let mut gathered = Gathered::new(self, &context_index);
            let read = read_lists(
                &mut rows,
                &known,
                &scratch,
                order,
                &mut log,
                &mut |list| {
                    gathered.add(list);
                    Ok(())
                },
                &mut |_, _| {},
            )?;
            log.into_result().map_err(StudyError::Input)?;
            match read {
                ListsRead::Scattered => order = Order::Sorted,
                ListsRead::Done {
                    left_out,
                    left_out_contexts,
                    ..
                } => {
                    return Ok(gathered.into_read(rows.file(), left_out, left_out_contexts));
                }
            }
        }
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

/// Lists of a file as they are read, their ids turned into the snapshot's indices.
struct Gathered<'s> {
    contexts: &'s FastMap<&'s str, u32>,
    /// Every id the snapshot has, and the stand-ins met so far, by index.
    items: FastMap<String, u32>,
    /// Items from index `catalog` on are not in the catalog (stand-ins).
    catalog: usize,
    first_new: usize,
    rankers: Vec<String>,
    ranker_at: FastMap<String, usize>,
    lists: Vec<(usize, usize, Vec<u32>)>,
    stand_ins: Vec<String>,
    entries: usize,
    unknown_items: usize,
}

impl<'s> Gathered<'s> {
    fn new(snapshot: &Snapshot, contexts: &'s FastMap<&'s str, u32>) -> Gathered<'s> {
        Gathered {
            contexts,
            items: snapshot
                .items
                .iter()
                .enumerate()
                .map(|(i, item)| (item.id.clone(), i as u32))
                .collect(),
            catalog: snapshot.items.len() - snapshot.outside.stand_in_items,
            first_new: snapshot.items.len(),
            rankers: Vec::new(),
            ranker_at: FastMap::default(),
            lists: Vec::new(),
            stand_ins: Vec::new(),
            entries: 0,
            unknown_items: 0,
        }
    }

    fn add(&mut self, list: &ParsedList) {
        let ranker = match self.ranker_at.get(list.ranker) {
            Some(&r) => r,
            None => {
                self.rankers.push(list.ranker.to_string());
                self.ranker_at
                    .insert(list.ranker.to_string(), self.rankers.len() - 1);
                self.rankers.len() - 1
            }
        };
        let mut items = Vec::with_capacity(list.entries.len());
        for (id, _) in &list.entries {
            let index = match self.items.get(*id) {
                Some(&index) => index,
                None => {
                    let next = (self.first_new + self.stand_ins.len()) as u32;
                    self.items.insert((*id).to_string(), next);
                    self.stand_ins.push((*id).to_string());
                    next
                }
            };
            if index as usize >= self.catalog {
                self.unknown_items += 1;
            }
            items.push(index);
        }
        self.entries += items.len();
        self.lists
            .push((ranker, self.contexts[list.context] as usize, items));
    }

    /// The file's lists with the rankers sorted by name.
    fn into_read(
        mut self,
        file: &str,
        lists_left_out: usize,
        contexts_left_out: usize,
    ) -> FileRead {
        let mut by_name: Vec<usize> = (0..self.rankers.len()).collect();
        by_name.sort_by(|a, b| self.rankers[*a].cmp(&self.rankers[*b]));
        let mut place = vec![0; by_name.len()];
        for (sorted, &r) in by_name.iter().enumerate() {
            place[r] = sorted;
        }
        for list in &mut self.lists {
            list.0 = place[list.0];
        }
        FileRead {
            file: file.to_string(),
            rankers: by_name.iter().map(|&r| self.rankers[r].clone()).collect(),
            lists: self.lists,
            stand_ins: self.stand_ins,
            entries: self.entries,
            unknown_items: self.unknown_items,
            lists_left_out,
            contexts_left_out,
        }
    }
}
