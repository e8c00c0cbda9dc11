//! Drawing the card: the context (query text or anchor item), the item with its facts
//! and picture, the level buttons with their keys, and the prefetch of the next pictures.

use super::*;
use crate::study::queues::Mark;

impl Desk {
    /// The context on the left, the candidate item on the right.
    pub(super) fn card(&mut self, ui: &mut egui::Ui, ctx: &egui::Context, position: usize) {
        let Some(data) = self.state.as_ref().map(|s| &s.data) else {
            return;
        };
        let (c, i) = data.queue[position];
        let context = &data.contexts[c as usize];
        let item = &data.items[i as usize];
        let anchor = context
            .anchor_item_id
            .as_ref()
            .and_then(|id| data.item_index.get(id))
            .map(|&a| &data.items[a as usize]);
        let images = &mut self.images;
        ui.columns(2, |cols| {
            let left = &mut cols[0];
            if context.kind == "anchor" {
                left.label(egui::RichText::new("Shoppers viewing this item").strong());
                if !context.text.is_empty() {
                    let ink = crate::ui::palette::reading_text(left.visuals());
                    left.label(egui::RichText::new(&context.text).color(ink));
                }
                match anchor {
                    Some(a) => {
                        let picture = images.request(ctx, &a.image, ANCHOR_SIDE);
                        image_cache::show(
                            left,
                            &picture,
                            ANCHOR_SIDE as f32 * 0.75,
                            &format!("picture of {}", a.title),
                        );
                        item_facts(left, a, "anchor");
                    }
                    None => {
                        left.colored_label(
                            left.visuals().warn_fg_color,
                            "The anchor item is not in the catalog.",
                        );
                    }
                }
            } else {
                left.label(egui::RichText::new("Shoppers searching for").strong());
                left.add_space(6.0);
                let ink = crate::ui::palette::reading_text(left.visuals());
                left.label(
                    egui::RichText::new(format!("“{}”", context.text))
                        .size(26.0)
                        .color(ink),
                );
                if !context.segment.is_empty() {
                    left.weak(format!("segment: {}", context.segment));
                }
            }
            let right = &mut cols[1];
            right.label(egui::RichText::new("Candidate item").strong());
            let picture = images.request(ctx, &item.image, ITEM_SIDE);
            image_cache::show(
                right,
                &picture,
                ITEM_SIDE as f32 * 0.8,
                &format!("picture of {}", item.title),
            );
            item_facts(right, item, "candidate");
        });
    }

    pub(super) fn controls(&mut self, ui: &mut egui::Ui, position: usize) {
        let Some(state) = &mut self.state else { return };
        let mark = state.data.marks[position];
        let waiting = state.in_flight.is_some();
        ui.add_space(6.0);
        save_status(ui, state, mark);
        let mut chosen = level_buttons(ui, &state.data.scale.levels, mark, waiting);
        ui.add_space(4.0);
        if let Some(press) = moves_and_note(ui, state, waiting) {
            chosen = Some(press);
        }
        if state.cant_judge_open
            && let Some(press) = cant_judge_reasons(ui, state, waiting)
        {
            chosen = Some(press);
        }
        if let Some(press) = chosen {
            state.push(press);
        }
    }

    /// Asks for the images of the next few open cards so they are ready in time.
    pub(super) fn prefetch(&mut self, ctx: &egui::Context, position: usize) {
        let Some(data) = self.state.as_ref().map(|s| &s.data) else {
            return;
        };
        let n = data.queue.len();
        let mut wanted: Vec<(String, u32)> = Vec::new();
        let mut p = position;
        for _ in 0..PREFETCH {
            let Some(next) = data.next_open(p + 1).filter(|&x| x != position) else {
                break;
            };
            let (c, i) = data.queue[next];
            wanted.push((data.items[i as usize].image.clone(), ITEM_SIDE));
            if let Some(a) = data.contexts[c as usize]
                .anchor_item_id
                .as_ref()
                .and_then(|id| data.item_index.get(id))
            {
                wanted.push((data.items[*a as usize].image.clone(), ANCHOR_SIDE));
            }
            p = next % n;
        }
        for (image, side) in wanted {
            self.images.request(ctx, &image, side);
        }
    }
}

/// Title, new badge, price, category, description and attributes of an item.
pub(super) fn item_facts(ui: &mut egui::Ui, item: &ItemCard, role: &str) {
    ui.horizontal_wrapped(|ui| {
        let ink = crate::ui::palette::reading_text(ui.visuals());
        ui.label(egui::RichText::new(&item.title).heading().color(ink));
        if item.is_new {
            new_badge(ui);
        }
    });
    ui.horizontal(|ui| {
        if let Some(price) = item.price {
            ui.label(egui::RichText::new(format!("{price:.2}")).strong());
        }
        if !item.category.is_empty() {
            ui.weak(&item.category);
        }
    });
    if !item.description.is_empty() {
        ui.add(egui::Label::new(&item.description).wrap());
    }
    if !item.attributes.is_empty() {
        egui::Grid::new(("attributes", role))
            .num_columns(2)
            .show(ui, |ui| {
                for (k, v) in &item.attributes {
                    ui.weak(k.replace('_', " "));
                    ui.label(v);
                    ui.end_row();
                }
            });
    }
}

/// The small "new" badge for items without interaction history.
pub fn new_badge(ui: &mut egui::Ui) -> egui::Response {
    let text = egui::RichText::new(" NEW ")
        .small()
        .strong()
        .color(egui::Color32::WHITE)
        .background_color(crate::ui::palette::NEW_BADGE);
    ui.label(text).on_hover_text("No interaction history yet")
}

/// What a key does on the desk apart from giving a level.
pub(super) fn key_role(key: egui::Key) -> KeyRole {
    use egui::Key;
    match key {
        Key::C => KeyRole::CantJudge,
        Key::S | Key::ArrowRight => KeyRole::Skip,
        Key::B | Key::ArrowLeft => KeyRole::Back,
        Key::Backspace => KeyRole::Undo,
        Key::N => KeyRole::Note,
        Key::I => KeyRole::ReasonImage,
        Key::Q => KeyRole::ReasonQuery,
        Key::O => KeyRole::ReasonOther,
        Key::Escape => KeyRole::Cancel,
        _ => KeyRole::None,
    }
}

/// The key that gives a level: the scale's key, else the level's digit.
pub fn level_key(key: &str, value: u8) -> Option<egui::Key> {
    let key = key.trim();
    if key.is_empty() {
        egui::Key::from_name(&value.to_string())
    } else {
        egui::Key::from_name(key).or_else(|| egui::Key::from_name(&key.to_uppercase()))
    }
}

pub(super) fn level_key_text(key: &str, value: u8) -> String {
    let key = key.trim();
    if key.is_empty() {
        value.to_string()
    } else {
        key.to_string()
    }
}

/// What happens to the grade: saving (and presses waiting their turn), or the pair's
/// current mark.
fn save_status(ui: &mut egui::Ui, state: &DeskState, mark: Option<Mark>) {
    if let Some(flight) = &state.in_flight {
        let queued = state.presses.len();
        let more = if queued > 0 {
            format!(" ({queued} more key presses wait their turn)")
        } else {
            String::new()
        };
        match &flight.error {
            None => ui.label(format!("Saving…{more}")),
            Some(e) => ui.colored_label(
                ui.visuals().warn_fg_color,
                format!("Waiting to save: {e}{more}"),
            ),
        };
    } else if let Some(m) = mark {
        let text = match m {
            Some(v) => format!(
                "Your grade now: {}. Press a level to change it.",
                state.data.scale.label(v)
            ),
            None => "You marked this pair can't judge. Press a level to grade it.".to_string(),
        };
        ui.label(text);
    }
}

/// One button per level with its key and rubric, the current mark selected; returns the
/// level pressed.
fn level_buttons(
    ui: &mut egui::Ui,
    levels: &[crate::core::scale::Level],
    mark: Option<Mark>,
    waiting: bool,
) -> Option<Press> {
    let mut chosen: Option<Press> = None;
    ui.horizontal_wrapped(|ui| {
        let width = ((ui.available_width() - 8.0 * levels.len() as f32)
            / levels.len().max(1) as f32)
            .clamp(140.0, 260.0);
        for level in levels {
            let key = level_key_text(&level.key, level.value);
            ui.vertical(|ui| {
                ui.set_width(width);
                let mut text = egui::RichText::new(&level.label).size(17.0);
                if mark == Some(Some(level.value)) {
                    text = text.strong();
                }
                let mut button = egui::Button::new(text)
                    .shortcut_text(format!("key {key}"))
                    .min_size(egui::vec2(width, 40.0))
                    .selected(mark == Some(Some(level.value)));
                if let Some(colour) = crate::ui::palette::parse_hex(&level.colour) {
                    button = button.stroke(egui::Stroke::new(2.0, colour));
                }
                if ui.add_enabled(!waiting, button).clicked() {
                    chosen = Some(Press::Grade(level.value));
                }
                ui.add(egui::Label::new(egui::RichText::new(&level.rubric).size(12.5)).wrap());
            });
        }
    });
    chosen
}

/// Can't judge, skip, back, undo and the note field; returns the button pressed.
fn moves_and_note(ui: &mut egui::Ui, state: &mut DeskState, waiting: bool) -> Option<Press> {
    let mut chosen: Option<Press> = None;
    let (can_back, can_undo) = (!state.trail.is_empty(), !state.undo_stack.is_empty());
    ui.horizontal_wrapped(|ui| {
        let mut button =
            |ui: &mut egui::Ui, enabled: bool, text: &str, keys: &str, press: Press| {
                if ui
                    .add_enabled(
                        enabled && !waiting,
                        egui::Button::new(text).shortcut_text(keys),
                    )
                    .clicked()
                {
                    chosen = Some(press);
                }
            };
        button(ui, true, "Can't judge…", "C", Press::OpenCantJudge);
        button(ui, true, "Skip", "S / Right", Press::Skip);
        button(ui, can_back, "Back", "B / Left", Press::Back);
        button(ui, can_undo, "Undo", "Ctrl+Z / Backspace", Press::Undo);
        ui.separator();
        let label = ui.label("Note (N)");
        let note = ui
            .add(
                egui::TextEdit::singleline(&mut state.note)
                    .hint_text("optional, saved with the grade")
                    .desired_width(280.0),
            )
            .labelled_by(label.id);
        if std::mem::take(&mut state.focus_note) {
            note.request_focus();
        }
    });
    chosen
}

/// The reasons a pair cannot be judged (image, query, another typed), and cancel;
/// returns the one chosen.
fn cant_judge_reasons(ui: &mut egui::Ui, state: &mut DeskState, waiting: bool) -> Option<Press> {
    let mut chosen: Option<Press> = None;
    egui::Frame::group(ui.style()).show(ui, |ui| {
        ui.horizontal_wrapped(|ui| {
            ui.label("Can't judge because:");
            if ui
                .add_enabled(
                    !waiting,
                    egui::Button::new("Image missing").shortcut_text("I"),
                )
                .clicked()
            {
                chosen = Some(Press::CantJudge(REASON_IMAGE.to_string()));
            }
            if ui
                .add_enabled(
                    !waiting,
                    egui::Button::new("Unclear query").shortcut_text("Q"),
                )
                .clicked()
            {
                chosen = Some(Press::CantJudge(REASON_QUERY.to_string()));
            }
            let label = ui.label("Other reason (O)");
            let other = ui
                .add(
                    egui::TextEdit::singleline(&mut state.other_reason)
                        .hint_text("say why, then Enter")
                        .desired_width(220.0),
                )
                .labelled_by(label.id);
            if std::mem::take(&mut state.focus_other) {
                other.request_focus();
            }
            let enter = other.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
            let ok = !state.other_reason.trim().is_empty();
            if (ui
                .add_enabled(
                    ok && !waiting,
                    egui::Button::new("Save reason").shortcut_text("Enter"),
                )
                .clicked()
                || enter)
                && ok
            {
                chosen = Some(Press::CantJudge(format!(
                    "other: {}",
                    state.other_reason.trim()
                )));
            }
            if ui
                .add(egui::Button::new("Cancel").shortcut_text("Esc"))
                .clicked()
            {
                chosen = Some(Press::CloseCantJudge);
            }
        });
    });
    chosen
}
