//! Grading desk: one pair at a time, blind, one key per grade.
//!
//! The desk's data (queue, marks, cards) is loaded on a thread together with a write
//! handle on the study. Committing a grade is the one piece of SQL on the UI thread by
//! design: a single small transaction that must finish before the next card shows. A
//! failed write keeps the card on screen, is shown on the save indicator and retried.
//!
//! Blindness: nothing here knows rankers, ranks or scores, and other reviewers' grades
//! are never loaded; the queue order is a seeded shuffle (see `study::queues`).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::image_cache::{self, ImageCache};
use super::jobs::Pending;
use crate::core::scale::Scale;
use crate::study::Study;
use crate::study::grades::{GradeAction, NewGrade};
use crate::study::queues::{ContextCard, ItemCard, Mark};

/// Seconds between retries of a failed write.
const RETRY_SECONDS: f64 = 2.0;
/// How many upcoming cards have their images decoded ahead.
const PREFETCH: usize = 3;
/// Pixel sizes the desk asks for.
const ITEM_SIDE: u32 = 360;
const ANCHOR_SIDE: u32 = 240;

pub const REASON_IMAGE: &str = "image missing";
pub const REASON_QUERY: &str = "unclear query";

/// The desk's view of one reviewer's queue on one scale.
pub struct DeskData {
    pub reviewer: String,
    pub scale: Scale,
    pub scale_names: Vec<String>,
    /// (context index, item index) per queue position.
    pub queue: Vec<(u32, u32)>,
    /// None = not graded yet; Some(mark) = the reviewer's current mark.
    pub marks: Vec<Option<Mark>>,
    pub items: Vec<ItemCard>,
    pub contexts: Vec<ContextCard>,
    pub item_index: HashMap<String, u32>,
    pub catalog_dir: Option<PathBuf>,
    /// Grades and seconds before this session, for the pace.
    pub past_grades: u64,
    pub past_seconds: f64,
}

impl DeskData {
    pub fn done(&self) -> usize {
        self.marks.iter().filter(|m| m.is_some()).count()
    }

    /// The first ungraded position at or after `from`, wrapping around.
    pub fn next_open(&self, from: usize) -> Option<usize> {
        let n = self.queue.len();
        (0..n)
            .map(|k| (from + k) % n)
            .find(|&p| self.marks[p].is_none())
    }
}

/// Loads the desk for `reviewer`; `scale` (when given) becomes the active scale.
/// Runs on a job thread; returns the write handle with the data.
pub fn load(
    path: &Path,
    reviewer: &str,
    scale: Option<String>,
) -> Result<(DeskData, Study), String> {
    let err = |e: crate::study::StudyError| e.to_string();
    let mut study = Study::open(path).map_err(err)?;
    if !study.is_read_only() {
        study.add_reviewer(reviewer).map_err(err)?;
    }
    let snapshot = study.snapshot().map_err(err)?;
    if snapshot.scales.is_empty() {
        return Err("This study has no scale yet: import scales.csv on the Catalog screen.".into());
    }
    let scale_index = match &scale {
        Some(name) => {
            let i = snapshot
                .scale_index(name)
                .ok_or_else(|| format!("no scale named {name}"))?;
            if !study.is_read_only() {
                study.set_setting("active_scale", name).map_err(err)?;
            }
            i
        }
        // During a pilot the reviewer works through one scale's block after another.
        None => match study.pilot_block(reviewer).ok().flatten() {
            Some(name) => snapshot
                .scale_index(&name)
                .unwrap_or_else(|| active_scale(&study, &snapshot)),
            None => active_scale(&study, &snapshot),
        },
    };
    let scale = snapshot.scales[scale_index].clone();
    let pairs = study.ensure_queue(reviewer, &scale.name).map_err(err)?;
    let marks_by_pair = study.reviewer_marks(reviewer, &scale.name).map_err(err)?;
    let items = study.item_cards().map_err(err)?;
    let contexts = study.context_cards().map_err(err)?;
    let item_index: HashMap<String, u32> = items
        .iter()
        .enumerate()
        .map(|(i, it)| (it.id.clone(), i as u32))
        .collect();
    let context_index: HashMap<&str, u32> = contexts
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i as u32))
        .collect();
    let mut queue = Vec::with_capacity(pairs.len());
    let mut marks = Vec::with_capacity(pairs.len());
    for pair in &pairs {
        let (Some(&c), Some(&i)) = (
            context_index.get(pair.0.as_str()),
            item_index.get(pair.1.as_str()),
        ) else {
            continue;
        };
        queue.push((c, i));
        marks.push(marks_by_pair.get(pair).copied());
    }
    let (past_grades, past_seconds) = study.reviewer_effort(reviewer, &scale.name).map_err(err)?;
    let catalog_dir = study
        .setting("catalog_dir")
        .map_err(err)?
        .filter(|s| !s.is_empty())
        .map(PathBuf::from);
    Ok((
        DeskData {
            reviewer: reviewer.to_string(),
            scale,
            scale_names: snapshot.scales.iter().map(|s| s.name.clone()).collect(),
            queue,
            marks,
            items,
            contexts,
            item_index,
            catalog_dir,
            past_grades,
            past_seconds,
        },
        study,
    ))
}

/// The setting `active_scale` when it names a scale, else the scale with the most grades.
pub fn active_scale(study: &Study, snapshot: &crate::study::snapshot::Snapshot) -> usize {
    study
        .setting("active_scale")
        .ok()
        .flatten()
        .and_then(|name| snapshot.scale_index(&name))
        .or_else(|| snapshot.busiest_scale())
        .unwrap_or(0)
}

/// A write that has not been committed yet.
struct Unsaved {
    position: usize,
    grade: NewGrade,
    error: String,
    next_try: f64,
}

#[derive(Default)]
struct CantJudgeForm {
    other: String,
    focus_other: bool,
}

/// The desk's state between frames.
pub struct Desk {
    pub data: Option<DeskData>,
    study: Option<Study>,
    loading: Option<Pending<Result<(DeskData, Study), String>>>,
    pub load_error: Option<String>,
    /// Queue position of the card on screen.
    pub current: Option<usize>,
    shown_for: f64,
    last_time: Option<f64>,
    was_focused: bool,
    /// Positions graded this session, newest last (for undo).
    undo_stack: Vec<usize>,
    /// Positions left by skip or grade, newest last (for back).
    trail: Vec<usize>,
    note: String,
    focus_note: bool,
    cant_judge: Option<CantJudgeForm>,
    unsaved: Option<Unsaved>,
    session_grades: u64,
    session_seconds: f64,
    images: ImageCache,
    /// A scale the reviewer picked; the workbench reloads the desk with it.
    pub pending_scale: Option<String>,
}

impl Default for Desk {
    fn default() -> Self {
        Desk {
            data: None,
            study: None,
            loading: None,
            load_error: None,
            current: None,
            shown_for: 0.0,
            last_time: None,
            was_focused: true,
            undo_stack: Vec::new(),
            trail: Vec::new(),
            note: String::new(),
            focus_note: false,
            cant_judge: None,
            unsaved: None,
            session_grades: 0,
            session_seconds: 0.0,
            images: ImageCache::new(None, 64),
            pending_scale: None,
        }
    }
}

impl Desk {
    /// Starts loading for a reviewer (and optionally another scale); the old card stays
    /// drawn until the new data arrives. A pending unsaved grade blocks reloading.
    pub fn start_loading(
        &mut self,
        ctx: &egui::Context,
        path: &Path,
        reviewer: &str,
        scale: Option<String>,
    ) {
        if self.unsaved.is_some() {
            return;
        }
        let path = path.to_path_buf();
        let reviewer = reviewer.to_string();
        self.loading = Some(Pending::spawn(ctx, move || load(&path, &reviewer, scale)));
    }

    pub fn is_loading(&self) -> bool {
        self.loading.is_some()
    }

    /// "all grades saved", or the error of the write waiting to be retried.
    pub fn save_status(&self) -> Result<(), String> {
        match &self.unsaved {
            None => Ok(()),
            Some(u) => Err(u.error.clone()),
        }
    }

    /// Grades per hour over this reviewer's recorded time on the scale.
    pub fn pace_per_hour(&self) -> Option<f64> {
        let data = self.data.as_ref()?;
        let grades = data.past_grades + self.session_grades;
        let seconds = data.past_seconds + self.session_seconds;
        (grades > 0 && seconds > 0.0).then(|| grades as f64 * 3600.0 / seconds)
    }

    fn collect(&mut self, ctx: &egui::Context) {
        if let Some(result) = self.loading.as_ref().and_then(Pending::poll) {
            self.loading = None;
            match result {
                Ok((data, study)) => {
                    if self.data.as_ref().map(|d| &d.catalog_dir) != Some(&data.catalog_dir) {
                        self.images = ImageCache::new(data.catalog_dir.clone(), 64);
                    }
                    self.current = data.next_open(0);
                    self.data = Some(data);
                    self.study = Some(study);
                    self.load_error = None;
                    self.undo_stack.clear();
                    self.trail.clear();
                    self.session_grades = 0;
                    self.session_seconds = 0.0;
                    self.reset_card();
                }
                Err(e) => self.load_error = Some(e),
            }
        }
        self.images.collect(ctx);
    }

    fn reset_card(&mut self) {
        self.shown_for = 0.0;
        self.note.clear();
        self.cant_judge = None;
    }

    /// Adds the time since the last frame when the window had focus during it.
    fn tick(&mut self, ctx: &egui::Context) {
        let (now, focused) = ctx.input(|i| (i.time, i.focused));
        if let Some(last) = self.last_time
            && self.was_focused
        {
            self.shown_for += (now - last).clamp(0.0, 600.0);
        }
        self.last_time = Some(now);
        self.was_focused = focused;
    }

    /// Commits `action` on the pair at `position`; on success moves on, on failure keeps
    /// the grade to retry.
    fn commit(&mut self, position: usize, action: GradeAction) {
        let Some(data) = &self.data else { return };
        let (c, i) = data.queue[position];
        let undo = matches!(action, GradeAction::Undo);
        let seconds = if undo {
            0.0
        } else {
            (self.shown_for * 10.0).round() / 10.0
        };
        let grade = NewGrade {
            reviewer: data.reviewer.clone(),
            context_id: data.contexts[c as usize].id.clone(),
            item_id: data.items[i as usize].id.clone(),
            scale: data.scale.name.clone(),
            action,
            seconds,
            note: if undo {
                String::new()
            } else {
                self.note.trim().to_string()
            },
        };
        self.write(position, grade, 0.0);
    }

    fn write(&mut self, position: usize, grade: NewGrade, now: f64) {
        let Some(study) = self.study.as_mut() else {
            self.unsaved = Some(Unsaved {
                position,
                grade,
                error: "the study is not open for writing".into(),
                next_try: now + RETRY_SECONDS,
            });
            return;
        };
        match study.record_grade(&grade) {
            Ok(_) => {
                self.unsaved = None;
                self.applied(position, &grade);
            }
            Err(e) => {
                self.unsaved = Some(Unsaved {
                    position,
                    grade,
                    error: format!("grade not saved yet, retrying: {e}"),
                    next_try: now + RETRY_SECONDS,
                });
            }
        }
    }

    /// Brings the screen in step with a committed write.
    fn applied(&mut self, position: usize, grade: &NewGrade) {
        let Some(data) = self.data.as_mut() else {
            return;
        };
        match &grade.action {
            GradeAction::Undo => {
                data.marks[position] = None;
                self.current = Some(position);
            }
            action => {
                data.marks[position] = Some(match action {
                    GradeAction::Grade(v) => Some(*v),
                    _ => None,
                });
                self.session_grades += 1;
                self.session_seconds += grade.seconds;
                self.undo_stack.push(position);
                self.trail.push(position);
                self.current = data.next_open(position + 1);
            }
        }
        self.reset_card();
    }

    fn retry(&mut self, now: f64) {
        if let Some(u) = self.unsaved.take() {
            if now >= u.next_try {
                self.write(u.position, u.grade, now);
            } else {
                self.unsaved = Some(u);
            }
        }
    }

    fn grade(&mut self, value: u8) {
        if let Some(p) = self.current {
            self.commit(p, GradeAction::Grade(value));
        }
    }

    fn cant_judge_with(&mut self, reason: String) {
        if let Some(p) = self.current {
            self.commit(p, GradeAction::CantJudge { reason });
        }
    }

    fn skip(&mut self) {
        let (Some(p), Some(data)) = (self.current, &self.data) else {
            return;
        };
        let next = data.next_open(p + 1).filter(|&n| n != p);
        if let Some(n) = next {
            self.trail.push(p);
            self.current = Some(n);
            self.reset_card();
        }
    }

    fn back(&mut self) {
        if let Some(p) = self.trail.pop() {
            self.current = Some(p);
            self.reset_card();
        }
    }

    fn undo(&mut self) {
        if let Some(p) = self.undo_stack.pop() {
            self.trail.retain(|&t| t != p);
            self.commit(p, GradeAction::Undo);
        }
    }

    /// Draws the desk. `ui()` reads only the loaded data; the one write is the grade.
    pub fn ui(&mut self, ui: &mut egui::Ui) {
        let ctx = ui.ctx().clone();
        self.collect(&ctx);
        self.tick(&ctx);
        let now = ctx.input(|i| i.time);
        self.retry(now);
        if let Some(u) = &self.unsaved {
            ctx.request_repaint_after_secs((u.next_try - now).max(0.05) as f32);
        }
        if let Some(e) = &self.load_error {
            ui.colored_label(ui.visuals().error_fg_color, e);
            return;
        }
        if self.data.is_none() {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label("Preparing the queue…");
            });
            return;
        }
        self.keys(&ctx);
        self.header(ui);
        ui.separator();
        if self.data.as_ref().is_some_and(|d| d.queue.is_empty()) {
            ui.add_space(24.0);
            ui.heading("Nothing to grade yet");
            ui.label(
                "The pool is empty: import the rankers' lists (rankings.csv) on the Catalog screen.",
            );
            return;
        }
        let Some(position) = self.current else {
            ui.add_space(24.0);
            ui.heading("Queue complete");
            ui.label("Every pair in your queue on this scale has a grade. Thank you!");
            ui.label("Undo (Ctrl+Z) brings back the last pair you graded in this session.");
            let undo = egui::Button::new("Undo last grade").shortcut_text("Ctrl+Z");
            if ui.add_enabled(!self.undo_stack.is_empty(), undo).clicked() {
                self.undo();
            }
            return;
        };
        egui::Panel::bottom("desk_controls")
            .resizable(false)
            .show(ui, |ui| self.controls(ui, position));
        egui::CentralPanel::default_margins().show(ui, |ui| {
            egui::ScrollArea::vertical()
                .auto_shrink([false, false])
                .show(ui, |ui| self.card(ui, &ctx, position));
        });
        self.prefetch(&ctx, position);
        // Keep counting visible time for the pace even when nothing else repaints.
        ctx.request_repaint_after_secs(1.0);
    }

    fn keys(&mut self, ctx: &egui::Context) {
        use egui::{Key, Modifiers};
        if self.unsaved.is_some() {
            return; // nothing moves until the waiting grade is saved
        }
        if ctx.input_mut(|i| i.consume_key(Modifiers::COMMAND, Key::Z)) {
            self.undo();
            return;
        }
        if ctx.egui_wants_keyboard_input() {
            return;
        }
        let pressed = |key: Key| ctx.input_mut(|i| i.consume_key(Modifiers::NONE, key));
        if self.cant_judge.is_some() {
            if pressed(Key::I) {
                self.cant_judge_with(REASON_IMAGE.into());
            } else if pressed(Key::Q) {
                self.cant_judge_with(REASON_QUERY.into());
            } else if pressed(Key::O) {
                if let Some(f) = &mut self.cant_judge {
                    f.focus_other = true;
                }
            } else if pressed(Key::Escape) {
                self.cant_judge = None;
            }
            return;
        }
        let levels: Vec<(u8, Option<Key>)> = self
            .data
            .as_ref()
            .map(|d| {
                d.scale
                    .levels
                    .iter()
                    .map(|l| (l.value, level_key(&l.key, l.value)))
                    .collect()
            })
            .unwrap_or_default();
        for (value, key) in levels {
            if let Some(key) = key
                && pressed(key)
            {
                self.grade(value);
                return;
            }
        }
        if pressed(Key::C) {
            self.cant_judge = Some(CantJudgeForm::default());
        } else if pressed(Key::S) || pressed(Key::ArrowRight) {
            self.skip();
        } else if pressed(Key::B) || pressed(Key::ArrowLeft) {
            self.back();
        } else if pressed(Key::Backspace) {
            self.undo();
        } else if pressed(Key::N) {
            self.focus_note = true;
        }
    }

    fn header(&mut self, ui: &mut egui::Ui) {
        let Some(data) = &self.data else { return };
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
            let pace_text = pace.map_or("pace: not yet known".to_string(), |p| {
                format!("{p:.0} grades per hour")
            });
            let text = format!("{done} / {total} graded · {pace_text}");
            ui.add(
                egui::ProgressBar::new(fraction)
                    .desired_width(ui.available_width().min(520.0))
                    .text(text),
            );
        });
        if let Some(name) = chosen {
            self.pending_scale = Some(name);
        }
    }
}

impl Desk {
    /// The context on the left, the candidate item on the right.
    fn card(&mut self, ui: &mut egui::Ui, ctx: &egui::Context, position: usize) {
        let Some(data) = &self.data else { return };
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
                    left.label(&context.text);
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
                left.label(egui::RichText::new(format!("“{}”", context.text)).size(26.0));
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

    fn controls(&mut self, ui: &mut egui::Ui, position: usize) {
        let Some(data) = &self.data else { return };
        let mark = data.marks[position];
        let levels = data.scale.levels.clone();
        let saving_blocked = self.unsaved.is_some();
        ui.add_space(6.0);
        if let Some(m) = mark {
            let text = match m {
                Some(v) => format!(
                    "Your grade now: {}. Press a level to change it.",
                    data.scale.label(v)
                ),
                None => "You marked this pair can't judge. Press a level to grade it.".to_string(),
            };
            ui.label(text);
        }
        let mut chosen = None;
        ui.horizontal_wrapped(|ui| {
            let width = ((ui.available_width() - 8.0 * levels.len() as f32)
                / levels.len().max(1) as f32)
                .clamp(140.0, 260.0);
            for level in &levels {
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
                    if let Some(colour) = parse_colour(&level.colour) {
                        button = button.stroke(egui::Stroke::new(2.0, colour));
                    }
                    if ui.add_enabled(!saving_blocked, button).clicked() {
                        chosen = Some(level.value);
                    }
                    ui.add(egui::Label::new(egui::RichText::new(&level.rubric).size(12.5)).wrap());
                });
            }
        });
        if let Some(v) = chosen {
            self.grade(v);
            return;
        }
        ui.add_space(4.0);
        let mut action: Option<fn(&mut Desk)> = None;
        ui.horizontal_wrapped(|ui| {
            if ui
                .add_enabled(
                    !saving_blocked,
                    egui::Button::new("Can't judge…").shortcut_text("C"),
                )
                .clicked()
            {
                self.cant_judge = Some(CantJudgeForm::default());
            }
            if ui
                .add_enabled(
                    !saving_blocked,
                    egui::Button::new("Skip").shortcut_text("S / Right"),
                )
                .clicked()
            {
                action = Some(Desk::skip);
            }
            if ui
                .add_enabled(
                    !saving_blocked && !self.trail.is_empty(),
                    egui::Button::new("Back").shortcut_text("B / Left"),
                )
                .clicked()
            {
                action = Some(Desk::back);
            }
            if ui
                .add_enabled(
                    !saving_blocked && !self.undo_stack.is_empty(),
                    egui::Button::new("Undo").shortcut_text("Ctrl+Z / Backspace"),
                )
                .clicked()
            {
                action = Some(Desk::undo);
            }
            ui.separator();
            let label = ui.label("Note (N)");
            let note = ui
                .add(
                    egui::TextEdit::singleline(&mut self.note)
                        .hint_text("optional, saved with the grade")
                        .desired_width(280.0),
                )
                .labelled_by(label.id);
            if std::mem::take(&mut self.focus_note) {
                note.request_focus();
            }
        });
        if let Some(f) = action {
            f(self);
            return;
        }
        let mut reason = None;
        if let Some(form) = &mut self.cant_judge {
            egui::Frame::group(ui.style()).show(ui, |ui| {
                ui.horizontal_wrapped(|ui| {
                    ui.label("Can't judge because:");
                    if ui
                        .add(egui::Button::new("Image missing").shortcut_text("I"))
                        .clicked()
                    {
                        reason = Some(REASON_IMAGE.to_string());
                    }
                    if ui
                        .add(egui::Button::new("Unclear query").shortcut_text("Q"))
                        .clicked()
                    {
                        reason = Some(REASON_QUERY.to_string());
                    }
                    let label = ui.label("Other reason (O)");
                    let other = ui
                        .add(
                            egui::TextEdit::singleline(&mut form.other)
                                .hint_text("say why, then Enter")
                                .desired_width(220.0),
                        )
                        .labelled_by(label.id);
                    if std::mem::take(&mut form.focus_other) {
                        other.request_focus();
                    }
                    let enter = other.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
                    let ok = !form.other.trim().is_empty();
                    if (ui
                        .add_enabled(ok, egui::Button::new("Save reason").shortcut_text("Enter"))
                        .clicked()
                        || enter)
                        && ok
                    {
                        reason = Some(format!("other: {}", form.other.trim()));
                    }
                    if ui
                        .add(egui::Button::new("Cancel").shortcut_text("Esc"))
                        .clicked()
                    {
                        form.focus_other = false;
                        reason = Some(String::new());
                    }
                });
            });
        }
        match reason {
            Some(r) if r.is_empty() => self.cant_judge = None,
            Some(r) => self.cant_judge_with(r),
            None => {}
        }
    }

    /// Asks for the images of the next few open cards so they are ready in time.
    fn prefetch(&mut self, ctx: &egui::Context, position: usize) {
        let Some(data) = &self.data else { return };
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
fn item_facts(ui: &mut egui::Ui, item: &ItemCard, role: &str) {
    ui.horizontal_wrapped(|ui| {
        ui.label(egui::RichText::new(&item.title).heading());
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
        .background_color(egui::Color32::from_rgb(0x2f, 0x7d, 0x5b));
    ui.label(text).on_hover_text("No interaction history yet")
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

fn level_key_text(key: &str, value: u8) -> String {
    let key = key.trim();
    if key.is_empty() {
        value.to_string()
    } else {
        key.to_string()
    }
}

fn parse_colour(text: &str) -> Option<egui::Color32> {
    let hex = text.trim().strip_prefix('#')?;
    if hex.len() != 6 {
        return None;
    }
    let v = u32::from_str_radix(hex, 16).ok()?;
    Some(egui::Color32::from_rgb(
        (v >> 16) as u8,
        (v >> 8) as u8,
        v as u8,
    ))
}
