//! Catalog: searchable, virtualised tables of items, contexts and rankers, and CSV
//! import on a background thread with its problems listed by file, line and column.

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use super::desk::new_badge;
use super::image_cache::{self, ImageCache};
use super::jobs::{JobResult, Task};
use super::study_picker::{Asked, NO_DIALOG, ask};
use crate::study::Problem;
use crate::study::Study;
use crate::study::import::{FileReport, ImportSet, Source, import_with_progress};
use crate::study::queues::{ContextCard, ItemCard};

const ROW_HEIGHT: f32 = 44.0;
const THUMB: u32 = 40;

/// One ranker's row.
#[derive(Debug, Clone, PartialEq)]
pub struct RankerRow {
    pub name: String,
    pub contexts: usize,
    pub entries: usize,
}

/// What the Catalog shows, loaded on a thread.
#[derive(Debug, Clone, Default)]
pub struct CatalogModel {
    pub items: Vec<ItemCard>,
    pub contexts: Vec<ContextCard>,
    pub rankers: Vec<RankerRow>,
    pub catalog_dir: Option<PathBuf>,
    /// Lower-cased text searched per item / context.
    item_text: Vec<String>,
    context_text: Vec<String>,
}

/// Reads the catalog; runs on a job thread.
pub fn load(path: &Path) -> JobResult<CatalogModel> {
    let study = Study::open(path)?;
    let snapshot = study.snapshot()?;
    let items = study.item_cards()?;
    let contexts = study.context_cards()?;
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
            format!("{} {} {} {}", i.id, i.title, i.category, attrs.join(" ")).to_lowercase()
        })
        .collect();
    let context_text = contexts
        .iter()
        .map(|c| format!("{} {} {} {}", c.id, c.kind, c.text, c.segment).to_lowercase())
        .collect();
    Ok(CatalogModel {
        items,
        contexts,
        rankers,
        catalog_dir: study.catalog_dir()?,
        item_text,
        context_text,
    })
}

#[derive(Clone, Copy, PartialEq, Eq, Default)]
enum Table {
    #[default]
    Items,
    Contexts,
    Rankers,
}

/// The files the import panel takes, in its order; `gold` holds gold pairs (known levels).
const KINDS: [&str; 6] = ["items", "contexts", "rankings", "scales", "grades", "gold"];

/// Shared between the import thread and the screen: (fraction, what is happening).
type Progress = Arc<Mutex<(f32, String)>>;

/// The import running on its thread: per-file reports, or every problem found.
type ImportJob = Task<JobResult<Vec<FileReport>>>;

fn run_import(
    path: &Path,
    files: [Option<PathBuf>; 6],
    progress: &Progress,
) -> JobResult<Vec<FileReport>> {
    let set_progress = |f: f32, text: String| {
        if let Ok(mut p) = progress.lock() {
            *p = (f, text);
        }
    };
    let total = files.iter().flatten().count().max(1) as f32;
    let mut sources: [Option<Source>; 6] = Default::default();
    let mut read = 0.0;
    for (k, file) in files.iter().enumerate() {
        if let Some(file) = file {
            set_progress(0.5 * read / total, format!("reading {}", file.display()));
            sources[k] = Some(Source::from_path(file)?);
            read += 1.0;
        }
    }
    set_progress(
        0.5,
        "checking and writing every row in one transaction".into(),
    );
    let [items, contexts, rankings, scales, grades, gold] = sources;
    let set = ImportSet {
        items,
        contexts,
        rankings,
        scales,
        grades,
        gold,
    };
    let mut study = Study::open(path)?;
    let reports = import_with_progress(&mut study, &set, &mut |step| {
        let file_share = match step.rows_total {
            0 => 0.0,
            total => step.rows_done as f32 / total as f32,
        };
        let done = (step.files_done as f32 + file_share) / step.files_total.max(1) as f32;
        let what = match step.rows_total {
            0 => format!("checking {}", step.file),
            total => format!("writing {}: {} of {total} rows", step.file, step.rows_done),
        };
        set_progress(0.5 + 0.5 * done, what);
    })?;
    set_progress(1.0, "done".into());
    Ok(reports)
}

/// The Catalog screen's state.
pub struct Catalog {
    pub model: Option<JobResult<CatalogModel>>,
    loading: Task<JobResult<CatalogModel>>,
    table: Table,
    search: String,
    filtered_for: Option<(String, Table)>,
    filtered: Vec<usize>,
    images: Option<ImageCache>,
    files: [String; 6],
    dialogs: [Task<Asked<PathBuf>>; 6],
    /// Said when no file dialog could open.
    dialog_note: Option<String>,
    importing: ImportJob,
    progress: Progress,
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
            filtered_for: None,
            filtered: Vec::new(),
            images: None,
            files: Default::default(),
            dialogs: std::array::from_fn(|_| Task::named("csv-dialog")),
            dialog_note: None,
            importing: Task::named("catalog-import"),
            progress: Progress::default(),
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

    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path) {
        let ctx = ui.ctx().clone();
        if self.model.is_none() && !self.loading.is_running() {
            self.reload(&ctx, path);
        }
        if let Some(result) = self.loading.poll() {
            if let Ok(m) = &result {
                let dir = m.catalog_dir.clone();
                self.images = Some(ImageCache::new(dir, 400));
            }
            self.model = Some(result);
            self.filtered_for = None;
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
        match &self.model {
            None => {
                ui.spinner();
                return;
            }
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
                return;
            }
            Some(Ok(_)) => {}
        }
        ui.horizontal(|ui| {
            let counts = match &self.model {
                Some(Ok(m)) => (m.items.len(), m.contexts.len(), m.rankers.len()),
                _ => (0, 0, 0),
            };
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
            ui.separator();
            let label = ui.label("Search");
            ui.add(
                egui::TextEdit::singleline(&mut self.search)
                    .hint_text("id, title, category, attributes…")
                    .desired_width(320.0),
            )
            .labelled_by(label.id);
        });
        self.refilter();
        let Some(Ok(model)) = &self.model else { return };
        match self.table {
            Table::Items => items_table(ui, model, &self.filtered, self.images.as_mut()),
            Table::Contexts => contexts_table(ui, model, &self.filtered),
            Table::Rankers => rankers_table(ui, model),
        }
    }

    /// Recomputes the visible rows only when the search or the table changed.
    fn refilter(&mut self) {
        let key = (self.search.trim().to_lowercase(), self.table);
        if self.filtered_for.as_ref() == Some(&key) {
            return;
        }
        let Some(Ok(model)) = &self.model else { return };
        let haystack = match self.table {
            Table::Items => &model.item_text,
            Table::Contexts => &model.context_text,
            Table::Rankers => &Vec::new(),
        };
        let words: Vec<&str> = key.0.split_whitespace().collect();
        self.filtered = haystack
            .iter()
            .enumerate()
            .filter(|(_, h)| words.iter().all(|w| h.contains(w)))
            .map(|(i, _)| i)
            .collect();
        self.filtered_for = Some(key);
    }

    fn import_panel(&mut self, ui: &mut egui::Ui, path: &Path) {
        let ctx = ui.ctx().clone();
        for k in 0..KINDS.len() {
            match self.dialogs[k].poll() {
                Some(Asked::Chosen(p)) => {
                    self.files[k] = p.display().to_string();
                    self.dialog_note = None;
                }
                Some(Asked::Unavailable) => self.dialog_note = Some(NO_DIALOG.to_string()),
                Some(Asked::Cancelled) | None => {}
            }
        }
        if let Some(result) = self.importing.poll() {
            match result {
                Ok(reports) => {
                    self.reports = reports;
                    self.problems.clear();
                    self.study_changed = true;
                    self.reload(&ctx, path);
                }
                Err(error) => {
                    self.reports.clear();
                    self.problems = error.problems();
                }
            }
        }
        egui::CollapsingHeader::new("Import CSV files")
            .default_open(false)
            .show(ui, |ui| {
                egui::Grid::new("import_files")
                    .num_columns(3)
                    .show(ui, |ui| {
                        for (k, kind) in KINDS.iter().enumerate() {
                            let label = ui.label(format!("{kind}.csv"));
                            ui.add(
                                egui::TextEdit::singleline(&mut self.files[k])
                                    .hint_text("path, or choose…")
                                    .desired_width(360.0),
                            )
                            .labelled_by(label.id);
                            if ui
                                .add_enabled(
                                    !self.dialogs[k].is_running(),
                                    egui::Button::new(format!("Choose {kind}.csv…")),
                                )
                                .clicked()
                            {
                                self.dialogs[k].start(&ctx, || {
                                    let dialog = rfd::AsyncFileDialog::new()
                                        .add_filter("CSV", &["csv"])
                                        .pick_file();
                                    ask(async { dialog.await.map(|h| h.path().to_path_buf()) })
                                });
                            }
                            ui.end_row();
                        }
                    });
                if let Some(note) = &self.dialog_note {
                    ui.colored_label(ui.visuals().warn_fg_color, note);
                }
                let chosen: [Option<PathBuf>; 6] = std::array::from_fn(|k| {
                    let t = self.files[k].trim();
                    (!t.is_empty()).then(|| PathBuf::from(t))
                });
                let any = chosen.iter().any(Option::is_some);
                ui.horizontal(|ui| {
                    if ui
                        .add_enabled(
                            any && !self.importing.is_running(),
                            egui::Button::new("Import"),
                        )
                        .clicked()
                    {
                        self.progress = Arc::new(Mutex::new((0.0, "starting".into())));
                        let p = path.to_path_buf();
                        let shared = self.progress.clone();
                        self.importing
                            .start(&ctx, move || run_import(&p, chosen, &shared));
                    }
                    if self.importing.is_running() {
                        let (f, text) = self.progress.lock().map(|p| p.clone()).unwrap_or_default();
                        ui.add(
                            egui::ProgressBar::new(f)
                                .animate(true)
                                .text(text)
                                .desired_width(420.0),
                        );
                        ctx.request_repaint_after_secs(0.1);
                    }
                });
                for r in &self.reports {
                    ui.label(format!(
                        "{} ({}): {} added, {} updated, {} unchanged",
                        r.file, r.kind, r.added, r.updated, r.unchanged
                    ));
                }
                if !self.problems.is_empty() {
                    ui.colored_label(
                        ui.visuals().error_fg_color,
                        format!("Nothing was imported: {} problem(s).", self.problems.len()),
                    );
                    egui::ScrollArea::vertical()
                        .max_height(160.0)
                        .show(ui, |ui| {
                            egui::Grid::new("import_problems")
                                .striped(true)
                                .num_columns(4)
                                .show(ui, |ui| {
                                    ui.strong("File");
                                    ui.strong("Line");
                                    ui.strong("Column");
                                    ui.strong("Problem");
                                    ui.end_row();
                                    for p in &self.problems {
                                        let (line, column) = match p.line {
                                            0 => (String::new(), String::new()),
                                            l => (l.to_string(), p.column.to_string()),
                                        };
                                        ui.label(&p.file);
                                        ui.label(line);
                                        ui.label(column);
                                        ui.label(&p.message);
                                        ui.end_row();
                                    }
                                });
                        });
                }
            });
    }
}

fn header(ui: &mut egui::Ui, columns: &[(&str, f32)]) {
    ui.horizontal(|ui| {
        for (name, width) in columns {
            left_aligned(ui, *width, 18.0, egui::RichText::new(*name).strong());
        }
    });
}

fn left_aligned(ui: &mut egui::Ui, width: f32, height: f32, text: impl Into<egui::WidgetText>) {
    ui.allocate_ui_with_layout(
        egui::vec2(width, height),
        egui::Layout::left_to_right(egui::Align::Center),
        |ui| {
            ui.set_min_size(egui::vec2(width, height));
            ui.add(egui::Label::new(text).truncate());
        },
    );
}

fn cell(ui: &mut egui::Ui, width: f32, text: impl Into<egui::WidgetText>) {
    left_aligned(ui, width, ROW_HEIGHT - 4.0, text);
}

fn items_table(
    ui: &mut egui::Ui,
    model: &CatalogModel,
    rows: &[usize],
    mut images: Option<&mut ImageCache>,
) {
    let cols = [
        ("", 56.0),
        ("Item", 80.0),
        ("Title", 280.0),
        ("Category", 120.0),
        ("Price", 70.0),
        ("", 44.0),
        ("Attributes", 320.0),
    ];
    header(ui, &cols);
    let ctx = ui.ctx().clone();
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show_rows(ui, ROW_HEIGHT, rows.len(), |ui, range| {
            for &r in &rows[range] {
                let item = &model.items[r];
                ui.horizontal(|ui| {
                    match images.as_deref_mut() {
                        Some(cache) => {
                            let picture = cache.request(&ctx, &item.image, THUMB);
                            image_cache::show(
                                ui,
                                &picture,
                                THUMB as f32,
                                &format!("thumbnail of {}", item.title),
                            );
                        }
                        None => {
                            ui.add_space(THUMB as f32);
                        }
                    }
                    ui.add_space(8.0);
                    cell(ui, cols[1].1, &item.id);
                    cell(ui, cols[2].1, &item.title);
                    cell(ui, cols[3].1, &item.category);
                    cell(
                        ui,
                        cols[4].1,
                        item.price.map(|p| format!("{p:.2}")).unwrap_or_default(),
                    );
                    let size = egui::vec2(cols[5].1, ROW_HEIGHT - 4.0);
                    let layout = egui::Layout::left_to_right(egui::Align::Center);
                    ui.allocate_ui_with_layout(size, layout, |ui| {
                        ui.set_min_size(size);
                        if item.is_new {
                            new_badge(ui);
                        }
                    });
                    let attrs: Vec<String> = item
                        .attributes
                        .iter()
                        .map(|(k, v)| format!("{}: {v}", k.replace('_', " ")))
                        .collect();
                    cell(ui, cols[6].1, attrs.join(" · "));
                });
            }
        });
}

fn contexts_table(ui: &mut egui::Ui, model: &CatalogModel, rows: &[usize]) {
    let cols = [
        ("Context", 80.0),
        ("Kind", 70.0),
        ("Text", 420.0),
        ("Anchor item", 110.0),
        ("Segment", 120.0),
    ];
    header(ui, &cols);
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show_rows(ui, ROW_HEIGHT, rows.len(), |ui, range| {
            for &r in &rows[range] {
                let c = &model.contexts[r];
                ui.horizontal(|ui| {
                    cell(ui, cols[0].1, &c.id);
                    cell(ui, cols[1].1, &c.kind);
                    cell(ui, cols[2].1, &c.text);
                    cell(ui, cols[3].1, c.anchor_item_id.clone().unwrap_or_default());
                    cell(ui, cols[4].1, &c.segment);
                });
            }
        });
}

fn rankers_table(ui: &mut egui::Ui, model: &CatalogModel) {
    egui::Grid::new("rankers")
        .striped(true)
        .num_columns(3)
        .show(ui, |ui| {
            ui.strong("Ranker");
            ui.strong("Contexts with a list");
            ui.strong("Ranked entries");
            ui.end_row();
            for r in &model.rankers {
                ui.label(&r.name);
                ui.label(r.contexts.to_string());
                ui.label(r.entries.to_string());
                ui.end_row();
            }
        });
    if model.rankers.is_empty() {
        ui.weak("No rankers yet: import rankings.csv.");
    }
}
