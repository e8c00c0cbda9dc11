//! Grading desk: one pair at a time, blind, one key per grade.
//!
//! The desk's data (queue, marks, cards) is loaded on a thread together with a write
//! handle on the study, which then moves to the desk's writer thread (`writer`). The
//! window never writes: it hands each grade to the writer and shows the next card when
//! the grade is acknowledged, drawing "waiting to save…" meanwhile. Key presses are
//! taken one by one, in order (`state`), so no press is merged with another.
//!
//! Blindness: nothing here knows rankers, ranks or scores, and other reviewers' grades
//! are never loaded; the queue order is a seeded shuffle (see `study::queues`).

mod card;
pub mod load;
pub mod state;
pub mod writer;

use std::collections::HashMap;
use std::path::Path;

use super::image_cache::{self, ImageCache};
use super::jobs::{JobResult, Task};
use crate::study::Study;
use crate::study::cards::ItemCard;
use card::key_role;
pub use card::{level_key, new_badge};
pub use load::load;
pub use state::{DeskData, DeskState, KeyRole, Press, REASON_IMAGE, REASON_QUERY};
use writer::{GradeWriter, WriterEvent};

/// How many upcoming cards have their images decoded ahead.
const PREFETCH: usize = 3;
/// Pixel sizes the desk asks for.
const ITEM_SIDE: u32 = 360;
const ANCHOR_SIDE: u32 = 240;

/// Whether every grade given is in the study.
#[derive(Debug, Clone, PartialEq)]
pub enum SaveState {
    AllSaved,
    /// A grade is with the writer (normally for a few milliseconds).
    Saving,
    /// The writer could not save yet and keeps trying; the reason.
    Waiting(String),
}

/// The desk between frames.
pub struct Desk {
    state: Option<DeskState>,
    writer: Option<GradeWriter>,
    loading: Task<JobResult<(DeskData, Study)>>,
    /// Why the last load failed (shown instead of a card).
    pub load_error: Option<String>,
    last_time: Option<f64>,
    was_focused: bool,
    images: ImageCache,
    /// The key that gives each level of the loaded scale (built once per load).
    level_keys: HashMap<egui::Key, u8>,
    /// A scale the reviewer picked; the workbench reloads the desk with it.
    pub pending_scale: Option<String>,
    /// The reviewer asked for their next pilot block; the workbench reloads the desk.
    pub pending_reload: bool,
}

impl Default for Desk {
    fn default() -> Self {
        Desk {
            state: None,
            writer: None,
            loading: Task::named("desk-load"),
            load_error: None,
            last_time: None,
            was_focused: true,
            images: ImageCache::new(None, 64),
            level_keys: HashMap::new(),
            pending_scale: None,
            pending_reload: false,
        }
    }
}

impl Desk {
    /// Starts loading for a reviewer (and optionally another scale); the old card stays
    /// drawn until the new data arrives. A grade not yet saved blocks reloading.
    pub fn start_loading(
        &mut self,
        ctx: &egui::Context,
        path: &Path,
        reviewer: &str,
        scale: Option<String>,
    ) {
        if self.has_unsaved() {
            return;
        }
        let path = path.to_path_buf();
        let reviewer = reviewer.to_string();
        self.loading
            .start(ctx, move || load(&path, &reviewer, scale));
    }

    /// Whether the queue is being (re)loaded.
    pub fn is_loading(&self) -> bool {
        self.loading.is_running()
    }

    /// The loaded queue and marks, once loaded.
    pub fn data(&self) -> Option<&DeskData> {
        self.state.as_ref().map(|s| &s.data)
    }

    /// Queue position of the card on screen.
    pub fn current(&self) -> Option<usize> {
        self.state.as_ref().and_then(|s| s.current)
    }

    /// True while a grade (or a press waiting behind it) is not yet in the study.
    pub fn has_unsaved(&self) -> bool {
        self.state
            .as_ref()
            .is_some_and(|s| s.in_flight.is_some() || !s.presses.is_empty())
    }

    pub fn save_state(&self) -> SaveState {
        match self.state.as_ref().and_then(|s| s.in_flight.as_ref()) {
            None => SaveState::AllSaved,
            Some(f) => match &f.error {
                None => SaveState::Saving,
                Some(e) => SaveState::Waiting(e.clone()),
            },
        }
    }

    /// Grades per hour over this reviewer's recorded time on the scale.
    pub fn pace_per_hour(&self) -> Option<f64> {
        self.state.as_ref().and_then(DeskState::pace_per_hour)
    }

    fn collect(&mut self, ctx: &egui::Context) {
        if let Some(result) = self.loading.poll() {
            match result {
                Ok((data, study)) => {
                    if self.data().map(|d| &d.catalog_dir) != Some(&data.catalog_dir) {
                        self.images = ImageCache::new(data.catalog_dir.clone(), 64);
                    }
                    let wake = ctx.clone();
                    self.writer = Some(GradeWriter::start(study, move || wake.request_repaint()));
                    self.level_keys = data
                        .scale
                        .levels
                        .iter()
                        .filter_map(|l| level_key(&l.key, l.value).map(|k| (k, l.value)))
                        .collect();
                    self.state = Some(DeskState::new(data));
                    self.load_error = None;
                }
                Err(e) => self.load_error = Some(e.to_string()),
            }
        }
        if let (Some(writer), Some(state)) = (&self.writer, &mut self.state) {
            for event in writer.events() {
                match event {
                    WriterEvent::Saved { ticket } => state.saved(ticket),
                    WriterEvent::Failed { ticket, error } => state.failed(ticket, error),
                }
            }
        }
        self.images.collect(ctx);
    }

    /// Applies waiting presses until one needs the writer, and hands that one over.
    fn run_presses(&mut self) {
        let (Some(state), Some(writer)) = (&mut self.state, &self.writer) else {
            return;
        };
        if let Some((ticket, grade)) = state.run() {
            writer.send(ticket, grade);
        }
    }

    /// Adds the time since the last frame when the window had focus during it.
    fn tick(&mut self, ctx: &egui::Context) {
        let (now, focused) = ctx.input(|i| (i.time, i.focused));
        if let Some(last) = self.last_time
            && self.was_focused
            && let Some(state) = &mut self.state
        {
            state.tick(now - last);
        }
        self.last_time = Some(now);
        self.was_focused = focused;
    }

    fn push(&mut self, press: Press) {
        if let Some(state) = &mut self.state {
            state.push(press);
        }
    }

    /// Draws the desk. `ui()` reads only the loaded data and never writes.
    pub fn ui(&mut self, ui: &mut egui::Ui) {
        let ctx = ui.ctx().clone();
        self.collect(&ctx);
        self.tick(&ctx);
        if let Some(e) = &self.load_error {
            ui.colored_label(ui.visuals().error_fg_color, e);
            return;
        }
        if self.state.is_none() {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label("Preparing the queue…");
            });
            return;
        }
        self.keys(&ctx);
        self.run_presses();
        self.header(ui);
        ui.separator();
        if let Some(notice) = self.state.as_ref().and_then(DeskState::undo_notice) {
            ui.colored_label(super::palette::CAUTION, notice);
        }
        self.gold_feedback(ui);
        if self.data().is_some_and(|d| d.queue.is_empty()) {
            ui.add_space(24.0);
            ui.heading("Nothing to grade yet");
            ui.label(
                "The pool is empty: import the rankers' lists (rankings.csv) on the Catalog screen.",
            );
            return;
        }
        let Some(position) = self.current() else {
            ui.add_space(24.0);
            match self.data().and_then(|d| d.pilot_block) {
                Some((n, of)) => self.pilot_block_done(ui, n, of),
                None => {
                    ui.heading("Queue complete");
                    ui.label("Every pair in your queue on this scale has a grade. Thank you!");
                }
            }
            ui.label("Undo (Ctrl+Z) brings back the last pair you graded in this session.");
            let undo = egui::Button::new("Undo last grade").shortcut_text("Ctrl+Z");
            let can_undo = self
                .state
                .as_ref()
                .is_some_and(|s| !s.undo_stack.is_empty() && s.in_flight.is_none());
            if ui.add_enabled(can_undo, undo).clicked() {
                self.push(Press::Undo);
                self.run_presses();
            }
            return;
        };
        egui::Panel::bottom("desk_controls")
            .resizable(false)
            .show(ui, |ui| self.controls(ui, position));
        self.run_presses();
        egui::CentralPanel::default_margins().show(ui, |ui| {
            egui::ScrollArea::vertical()
                .auto_shrink([false, false])
                .show(ui, |ui| self.card(ui, &ctx, position));
        });
        self.prefetch(&ctx, position);
        // Keep counting visible time for the pace even when nothing else repaints.
        ctx.request_repaint_after_secs(1.0);
    }

    /// The end of a pilot block: on to the next block, or back to the active scale.
    fn pilot_block_done(&mut self, ui: &mut egui::Ui, n: usize, of: usize) {
        let saved = !self.has_unsaved();
        if n < of {
            ui.heading(format!("Pilot block {n} of {of} done"));
            ui.label("The next block has the same pairs on another scale: read its levels before you start.");
            if ui
                .add_enabled(saved, egui::Button::new("Go on to the next pilot block"))
                .clicked()
            {
                self.pending_reload = true;
            }
        } else {
            ui.heading("Pilot complete");
            ui.label("Every pair of every pilot block has a grade. Thank you!");
            if ui
                .add_enabled(saved, egui::Button::new("Back to the active scale"))
                .clicked()
            {
                self.pending_reload = true;
            }
        }
    }

    /// For a reviewer in training: the gold pair just graded, its known level and why.
    fn gold_feedback(&self, ui: &mut egui::Ui) {
        let Some(state) = &self.state else { return };
        let Some(f) = &state.feedback else { return };
        let label = |v: u8| {
            state
                .data
                .scale
                .levels
                .get(v as usize)
                .map_or(v.to_string(), |l| format!("{v} ({})", l.label))
        };
        let verdict = match f.given {
            Some(v) if v == f.known => format!("You gave {}: right.", label(v)),
            Some(v) => format!(
                "You gave {}; the known level is {}.",
                label(v),
                label(f.known)
            ),
            None => format!(
                "You could not judge it; the known level is {}.",
                label(f.known)
            ),
        };
        egui::Frame::group(ui.style()).show(ui, |ui| {
            ui.strong("Training: that was a gold pair");
            ui.label(verdict);
            if !f.rationale.is_empty() {
                ui.label(format!("Why: {}", f.rationale));
            }
        });
    }

    /// Takes the desk's key presses out of this frame's events, one by one, in order.
    fn keys(&mut self, ctx: &egui::Context) {
        use egui::{Event, Key};
        if self.state.is_none() {
            return;
        }
        let levels = &self.level_keys;
        let typing = ctx.egui_wants_keyboard_input();
        let mut presses = Vec::new();
        ctx.input_mut(|i| {
            i.events.retain(|event| {
                let Event::Key {
                    key,
                    pressed: true,
                    repeat,
                    modifiers,
                    ..
                } = event
                else {
                    return true;
                };
                if modifiers.command && !modifiers.alt && *key == Key::Z {
                    presses.push(Press::UndoChord);
                    return false;
                }
                if typing || modifiers.command || modifiers.ctrl || modifiers.alt {
                    return true;
                }
                if *repeat {
                    // A held key must not grade card after card.
                    return !(levels.contains_key(key) || key_role(*key) != KeyRole::None);
                }
                let level = levels.get(key).copied();
                let role = key_role(*key);
                if level.is_none() && role == KeyRole::None {
                    return true;
                }
                presses.push(Press::Key { level, role });
                false
            });
        });
        for press in presses {
            self.push(press);
        }
    }
    fn header(&mut self, ui: &mut egui::Ui) {
        let Some(data) = self.data() else { return };
        let done = data.done();
        let total = data.queue.len();
        let pace = self.pace_per_hour();
        let mut chosen: Option<String> = None;
        ui.horizontal(|ui| {
            let label = ui.label("Scale");
            let combo = egui::ComboBox::from_id_salt("desk_scale")
                .selected_text(&data.scale.name)
                .show_ui(ui, |ui| {
                    for name in &data.scale_names {
                        if ui
                            .selectable_label(*name == data.scale.name, name)
                            .clicked()
                            && *name != data.scale.name
                        {
                            chosen = Some(name.clone());
                        }
                    }
                });
            let _ = combo.response.labelled_by(label.id);
            ui.separator();
            let fraction = if total == 0 {
                1.0
            } else {
                done as f32 / total as f32
            };
            let pace_text = pace.map_or_else(
                || {
                    format!(
                        "pace: shown after {} timed grades",
                        crate::analysis::defaults::PACE_MIN_GRADES
                    )
                },
                |p| format!("{p:.0} grades per hour"),
            );
            let text = format!("{done} / {total} graded · {pace_text}");
            ui.add(
                egui::ProgressBar::new(fraction)
                    .desired_width(ui.available_width().min(520.0))
                    .text(text),
            );
        });
        if let Some((n, of)) = data.pilot_block {
            ui.label(
                egui::RichText::new(format!(
                    "Pilot block {n} of {of} · {total} pairs on {}",
                    data.scale.name
                ))
                .strong(),
            );
        }
        if let Some(name) = chosen {
            self.pending_scale = Some(name);
        }
    }
}
