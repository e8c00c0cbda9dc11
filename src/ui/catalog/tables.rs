//! The Catalog's tables: fixed-width cells, headers that sort on a click, and the sort
//! orders themselves (case-insensitive text, numbers as numbers, empty cells last).

use std::cmp::Ordering;

use super::CatalogModel;
use crate::study::cards::{ContextCard, ItemCard};
use crate::ui::desk::new_badge;
use crate::ui::image_cache::{self, ImageCache};

pub(super) const ROW_HEIGHT: f32 = 44.0;
const THUMB: u32 = 40;

/// A column of the items table that sorts.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub(super) enum ItemColumn {
    Id,
    Title,
    Category,
    Price,
    New,
}

/// A column of the contexts table that sorts.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub(super) enum ContextColumn {
    Id,
    Kind,
    Text,
    Anchor,
    Segment,
}

/// The order a table is sorted by; without one it keeps the catalog's own order.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub(super) struct Sort<C> {
    pub column: C,
    pub descending: bool,
}

impl<C: PartialEq + Copy> Sort<C> {
    /// A click on `column`: ascending first, then descending, then the catalog's order.
    pub fn next(current: Option<Sort<C>>, column: C) -> Option<Sort<C>> {
        match current {
            Some(s) if s.column == column && !s.descending => Some(Sort {
                column,
                descending: true,
            }),
            Some(s) if s.column == column => None,
            _ => Some(Sort {
                column,
                descending: false,
            }),
        }
    }
}

/// Text order as a reader expects it: letters compared without their case first.
fn text_order(a: &str, b: &str) -> Ordering {
    let (x, y) = (
        a.chars().flat_map(char::to_lowercase),
        b.chars().flat_map(char::to_lowercase),
    );
    x.cmp(y).then_with(|| a.cmp(b))
}

/// `order` in the sort's direction, with empty values last either way.
fn directed<T>(
    a: Option<T>,
    b: Option<T>,
    descending: bool,
    order: impl Fn(T, T) -> Ordering,
) -> Ordering {
    match (a, b) {
        (Some(a), Some(b)) if descending => order(b, a),
        (Some(a), Some(b)) => order(a, b),
        (Some(_), None) => Ordering::Less,
        (None, Some(_)) => Ordering::Greater,
        (None, None) => Ordering::Equal,
    }
}

fn non_empty(s: &str) -> Option<&str> {
    (!s.is_empty()).then_some(s)
}

/// Sorts item rows (indices into `items`); ties keep the catalog's order.
pub(super) fn sort_items(rows: &mut [usize], items: &[ItemCard], sort: Option<Sort<ItemColumn>>) {
    let Some(Sort { column, descending }) = sort else {
        return;
    };
    rows.sort_by(|&a, &b| {
        let (a, b) = (&items[a], &items[b]);
        match column {
            ItemColumn::Id => directed(Some(&a.id), Some(&b.id), descending, |x, y| {
                text_order(x, y)
            }),
            ItemColumn::Title => directed(
                non_empty(&a.title),
                non_empty(&b.title),
                descending,
                text_order,
            ),
            ItemColumn::Category => directed(
                non_empty(&a.category),
                non_empty(&b.category),
                descending,
                text_order,
            ),
            ItemColumn::Price => directed(a.price, b.price, descending, |x: f64, y: f64| {
                x.total_cmp(&y)
            }),
            // Ascending puts the new items (no interaction history yet) first.
            ItemColumn::New => directed(Some(!a.is_new), Some(!b.is_new), descending, |x, y| {
                x.cmp(&y)
            }),
        }
    });
}

/// Sorts context rows (indices into `contexts`); ties keep the catalog's order.
pub(super) fn sort_contexts(
    rows: &mut [usize],
    contexts: &[ContextCard],
    sort: Option<Sort<ContextColumn>>,
) {
    let Some(Sort { column, descending }) = sort else {
        return;
    };
    rows.sort_by(|&a, &b| {
        let (a, b) = (&contexts[a], &contexts[b]);
        let (x, y) = match column {
            ContextColumn::Id => (Some(a.id.as_str()), Some(b.id.as_str())),
            ContextColumn::Kind => (non_empty(&a.kind), non_empty(&b.kind)),
            ContextColumn::Text => (non_empty(&a.text), non_empty(&b.text)),
            ContextColumn::Anchor => (
                a.anchor_item_id.as_deref().and_then(non_empty),
                b.anchor_item_id.as_deref().and_then(non_empty),
            ),
            ContextColumn::Segment => (non_empty(&a.segment), non_empty(&b.segment)),
        };
        directed(x, y, descending, text_order)
    });
}

/// A header: plain text for a column that does not sort, else a button that says the
/// order it is in. Returns the column clicked.
pub(super) fn header<C: Copy + PartialEq>(
    ui: &mut egui::Ui,
    columns: &[(&str, f32, Option<C>)],
    sort: Option<Sort<C>>,
) -> Option<C> {
    let mut clicked = None;
    ui.horizontal(|ui| {
        for &(name, width, column) in columns {
            let size = egui::vec2(width, 20.0);
            let layout = egui::Layout::left_to_right(egui::Align::Center);
            ui.allocate_ui_with_layout(size, layout, |ui| {
                ui.set_min_size(size);
                let Some(column) = column else {
                    ui.add(egui::Label::new(egui::RichText::new(name).strong()).truncate());
                    return;
                };
                let text = match sort {
                    Some(s) if s.column == column && s.descending => format!("{name} (desc)"),
                    Some(s) if s.column == column => format!("{name} (asc)"),
                    _ => name.to_string(),
                };
                let button = egui::Button::new(egui::RichText::new(text).strong()).frame(false);
                if ui
                    .add(button)
                    .on_hover_text(format!("Sort by {}", name.to_lowercase()))
                    .clicked()
                {
                    clicked = Some(column);
                }
            });
        }
    });
    clicked
}

pub(super) fn left_aligned(
    ui: &mut egui::Ui,
    width: f32,
    height: f32,
    text: impl Into<egui::WidgetText>,
) {
    ui.allocate_ui_with_layout(
        egui::vec2(width, height),
        egui::Layout::left_to_right(egui::Align::Center),
        |ui| {
            ui.set_min_size(egui::vec2(width, height));
            ui.add(egui::Label::new(text).truncate());
        },
    );
}

pub(super) fn cell(ui: &mut egui::Ui, width: f32, text: impl Into<egui::WidgetText>) {
    left_aligned(ui, width, ROW_HEIGHT - 4.0, text);
}

/// The items table; returns a header clicked to sort.
pub(super) fn items_table(
    ui: &mut egui::Ui,
    model: &CatalogModel,
    rows: &[usize],
    sort: Option<Sort<ItemColumn>>,
    mut images: Option<&mut ImageCache>,
) -> Option<ItemColumn> {
    let cols = [
        ("", 56.0, None),
        ("Item", 96.0, Some(ItemColumn::Id)),
        ("Title", 280.0, Some(ItemColumn::Title)),
        ("Category", 130.0, Some(ItemColumn::Category)),
        ("Price", 90.0, Some(ItemColumn::Price)),
        ("New", 90.0, Some(ItemColumn::New)),
        ("Attributes", 320.0, None),
    ];
    let clicked = header(ui, &cols, sort);
    if model.items.is_empty() {
        ui.weak("No items yet: import items.csv.");
    }
    let ctx = ui.ctx().clone();
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show_rows(ui, ROW_HEIGHT, rows.len(), |ui, range| {
            for &r in &rows[range] {
                let item = &model.items[r];
                ui.horizontal(|ui| {
                    // The thumbnail keeps to its cell, whatever it says.
                    let size = egui::vec2(cols[0].1, ROW_HEIGHT - 4.0);
                    let layout = egui::Layout::left_to_right(egui::Align::Center);
                    ui.allocate_ui_with_layout(size, layout, |ui| {
                        ui.set_min_size(size);
                        ui.set_max_size(size);
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
                    });
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
    clicked
}

/// The contexts table; returns a header clicked to sort and a context whose lists the
/// lead asked to see (its id is a link only when `lead_view`).
pub(super) fn contexts_table(
    ui: &mut egui::Ui,
    model: &CatalogModel,
    rows: &[usize],
    sort: Option<Sort<ContextColumn>>,
    lead_view: bool,
) -> (Option<ContextColumn>, Option<usize>) {
    let cols = [
        ("Context", 96.0, Some(ContextColumn::Id)),
        ("Kind", 80.0, Some(ContextColumn::Kind)),
        ("Text", 420.0, Some(ContextColumn::Text)),
        ("Anchor item", 130.0, Some(ContextColumn::Anchor)),
        ("Segment", 120.0, Some(ContextColumn::Segment)),
    ];
    let clicked = header(ui, &cols, sort);
    if model.contexts.is_empty() {
        ui.weak("No contexts yet: import contexts.csv.");
    }
    let mut opened = None;
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show_rows(ui, ROW_HEIGHT, rows.len(), |ui, range| {
            for &r in &rows[range] {
                let c = &model.contexts[r];
                ui.horizontal(|ui| {
                    if lead_view {
                        let size = egui::vec2(cols[0].1, ROW_HEIGHT - 4.0);
                        let layout = egui::Layout::left_to_right(egui::Align::Center);
                        ui.allocate_ui_with_layout(size, layout, |ui| {
                            ui.set_min_size(size);
                            if ui
                                .link(&c.id)
                                .on_hover_text("See each ranker's list for this context")
                                .clicked()
                            {
                                opened = Some(r);
                            }
                        });
                    } else {
                        cell(ui, cols[0].1, &c.id);
                    }
                    cell(ui, cols[1].1, &c.kind);
                    cell(ui, cols[2].1, &c.text);
                    cell(ui, cols[3].1, c.anchor_item_id.clone().unwrap_or_default());
                    cell(ui, cols[4].1, &c.segment);
                });
            }
        });
    (clicked, opened)
}

pub(super) fn rankers_table(ui: &mut egui::Ui, model: &CatalogModel) {
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
