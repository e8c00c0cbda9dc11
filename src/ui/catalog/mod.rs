//! Catalog: searchable, sortable, virtualised tables of items, contexts and rankers; the
//! lead's context view (each ranker's list with its grades); CSV import on a background
//! thread with its problems listed by file, line and column.

mod import;
mod lists;
mod tables;

use std::path::{Path, PathBuf};

use super::image_cache::ImageCache;
use super::jobs::{JobResult, Task};
use crate::analysis::views::catalog_model;
pub use crate::analysis::views::catalog_model::{CatalogModel, RankerRow};
use crate::analysis::views::catalog_view::ContextView;
use crate::study::Problem;
use crate::study::Study;
use crate::study::import::FileReport;
use crate::ui::frame::study_picker::Asked;
use tables::{ContextColumn, ItemColumn, Sort};

/// Reads the catalog; runs on a job thread.
pub fn load(path: &Path) -> JobResult<CatalogModel> {
    Ok(catalog_model::build(&Study::open(path)?)?)
}

#[derive(Clone, Copy, PartialEq, Eq, Default, Debug)]
enum Table {
    #[default]
    Items,
    Contexts,
    Rankers,
    /// The lead's context view.
    Lists,
}

/// What the visible rows were computed for: search, table and sort orders.
type FilterKey = (
    String,
    Table,
    Option<Sort<ItemColumn>>,
    Option<Sort<ContextColumn>>,
);

/// The Catalog screen's state.
pub struct Catalog {
    pub model: Option<JobResult<CatalogModel>>,
    loading: Task<JobResult<CatalogModel>>,
    table: Table,
    search: String,
    item_sort: Option<Sort<ItemColumn>>,
    context_sort: Option<Sort<ContextColumn>>,
    filtered_for: Option<FilterKey>,
    filtered: Vec<usize>,
    images: Option<ImageCache>,
    /// The context and scale picked in the context view, and the view built for them.
    view_context: usize,
    view_scale: Option<usize>,
    view: Option<ContextView>,
    files: [String; 6],
    dialogs: [Task<Asked<PathBuf>>; 6],
    /// Said when no file dialog could open, beside the row (file kind) whose button
    /// asked for it.
    dialog_note: Option<(usize, String)>,
    /// Set when a new, empty study arrives: the import panel opens on the next frame.
    open_import: bool,
    importing: import::ImportJob,
    progress: import::Progress,
    pub reports: Vec<FileReport>,
    /// Every problem of the last failed import, by file, line and column.
    pub problems: Vec<Problem>,
    /// Set when an import changed the study; the workbench reloads the other screens.
    pub study_changed: bool,
    pub merge: super::merge_panel::MergePanel,
}

impl Default for Catalog {
    fn default() -> Catalog {
        Catalog {
            model: None,
            loading: Task::named("catalog-load"),
            table: Table::default(),
            search: String::new(),
            item_sort: None,
            context_sort: None,
            filtered_for: None,
            filtered: Vec::new(),
            images: None,
            view_context: 0,
            view_scale: None,
            view: None,
            files: Default::default(),
            dialogs: std::array::from_fn(|_| Task::named("csv-dialog")),
            dialog_note: None,
            open_import: false,
            importing: Task::named("catalog-import"),
            progress: import::Progress::default(),
            reports: Vec::new(),
            problems: Vec::new(),
            study_changed: false,
            merge: Default::default(),
        }
    }
}

impl Catalog {
    /// Reads the catalog again in the background; the old tables stay until it arrives.
    pub fn reload(&mut self, ctx: &egui::Context, path: &Path) {
        let p = path.to_path_buf();
        self.loading.start(ctx, move || load(&p));
        self.filtered_for = None;
    }

    /// Draws the screen. `signed_in` is the reviewer grading in this window: the context
    /// view, which shows every reviewer's grades, is the lead's and is not drawn then.
    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path, signed_in: Option<&str>) {
        let ctx = ui.ctx().clone();
        if self.model.is_none() && !self.loading.is_running() {
            self.reload(&ctx, path);
        }
        if let Some(result) = self.loading.poll() {
            if let Ok(m) = &result {
                let dir = m.catalog_dir.clone();
                self.images = Some(ImageCache::new(dir, 400));
                // A study without a catalog starts with importing one.
                if self.model.is_none() && m.is_empty() {
                    self.open_import = true;
                }
            }
            self.model = Some(result);
            self.filtered_for = None;
            self.view = None;
        }
        if let Some(images) = &mut self.images {
            images.collect(&ctx);
        }
        self.import_panel(ui, path);
        self.merge.ui(ui, path);
        if std::mem::take(&mut self.merge.study_changed) {
            self.study_changed = true;
            self.reload(&ctx, path);
        }
        ui.separator();
        let lead_view = match &self.model {
            None => {
                ui.spinner();
                return;
            }
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
                return;
            }
            Some(Ok(m)) => m.lists.is_some() && signed_in.is_none(),
        };
        if !lead_view && self.table == Table::Lists {
            self.table = Table::Items;
        }
        self.tabs(ui, lead_view);
        let Some(Ok(model)) = &self.model else { return };
        match self.table {
            Table::Items => {
                let clicked = tables::items_table(
                    ui,
                    model,
                    &self.filtered,
                    self.item_sort,
                    self.images.as_mut(),
                );
                if let Some(column) = clicked {
                    self.item_sort = Sort::next(self.item_sort, column);
                }
            }
            Table::Contexts => {
                let (clicked, opened) =
                    tables::contexts_table(ui, model, &self.filtered, self.context_sort, lead_view);
                if let Some(column) = clicked {
                    self.context_sort = Sort::next(self.context_sort, column);
                }
                if let Some(context) = opened {
                    self.view_context = context;
                    self.table = Table::Lists;
                }
            }
            Table::Rankers => tables::rankers_table(ui, model),
            Table::Lists => self.lists_ui(ui),
        }
    }

    /// The table tabs, the search field and its match count.
    fn tabs(&mut self, ui: &mut egui::Ui, lead_view: bool) {
        let Some(Ok(model)) = &self.model else { return };
        let counts = (model.items.len(), model.contexts.len(), model.rankers.len());
        ui.horizontal(|ui| {
            ui.selectable_value(
                &mut self.table,
                Table::Items,
                format!("Items ({})", counts.0),
            );
            ui.selectable_value(
                &mut self.table,
                Table::Contexts,
                format!("Contexts ({})", counts.1),
            );
            ui.selectable_value(
                &mut self.table,
                Table::Rankers,
                format!("Rankers ({})", counts.2),
            );
            if lead_view {
                ui.selectable_value(&mut self.table, Table::Lists, "Context lists")
                    .on_hover_text(
                        "One context's ranked lists, ranker by ranker, with the panel grade \
                         and each reviewer's grade of every listed item",
                    );
            }
            if matches!(self.table, Table::Items | Table::Contexts) {
                ui.separator();
                let label = ui.label("Search");
                ui.add(
                    egui::TextEdit::singleline(&mut self.search)
                        .hint_text(match self.table {
                            Table::Contexts => "id, kind, text, segment, anchor item…",
                            _ => "id, title, category, description, attributes…",
                        })
                        // Room left for the match count at 1100 px.
                        .desired_width((ui.available_width() - 200.0).clamp(140.0, 320.0)),
                )
                .labelled_by(label.id);
            }
            // Counted after this frame's typing, so the number never lags a key behind.
            self.refilter();
            let count = match self.table {
                Table::Items => self.match_count(counts.0, "items"),
                Table::Contexts => self.match_count(counts.1, "contexts"),
                Table::Rankers | Table::Lists => None,
            };
            if let Some(text) = count {
                ui.label(text);
            }
        });
    }

    /// Recomputes the visible rows only when the search, the table or a sort changed.
    fn refilter(&mut self) {
        let key: FilterKey = (
            self.search.trim().to_lowercase(),
            self.table,
            self.item_sort,
            self.context_sort,
        );
        if self.filtered_for.as_ref() == Some(&key) {
            return;
        }
        let Some(Ok(model)) = &self.model else { return };
        let haystack = match self.table {
            Table::Items => &model.item_text,
            Table::Contexts => &model.context_text,
            Table::Rankers | Table::Lists => &Vec::new(),
        };
        let words: Vec<&str> = key.0.split_whitespace().collect();
        self.filtered = haystack
            .iter()
            .enumerate()
            .filter(|(_, h)| words.iter().all(|w| h.contains(w)))
            .map(|(i, _)| i)
            .collect();
        match self.table {
            Table::Items => tables::sort_items(&mut self.filtered, &model.items, self.item_sort),
            Table::Contexts => {
                tables::sort_contexts(&mut self.filtered, &model.contexts, self.context_sort);
            }
            Table::Rankers | Table::Lists => {}
        }
        self.filtered_for = Some(key);
    }

    /// "12 of 240 items match" while a search is typed; None without one.
    fn match_count(&self, total: usize, noun: &str) -> Option<String> {
        if self.search.trim().is_empty() {
            return None;
        }
        let n = self.filtered.len();
        let verb = if n == 1 { "matches" } else { "match" };
        Some(format!("{n} of {total} {noun} {verb}"))
    }
}
