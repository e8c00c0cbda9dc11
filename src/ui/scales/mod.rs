//! Scales: the study's scales, an editor for their levels, collapse maps, the active
//! scale and the pilot. Reading and every write run on job threads; `ui` only draws the
//! cached model and the editor's own text.

use std::path::Path;

use super::jobs::{JobResult, Task};
pub mod editor;
pub mod gold;
pub mod pilot;

use crate::analysis::views::scales_view;
pub use crate::analysis::views::scales_view::{ScaleEntry, ScalesModel};
use crate::core::agreement::CollapseMap;
use crate::core::scale::{self, Scale};
use crate::study::Study;
use crate::study::scales::Saved;
use editor::{Editor, MapEditor};

/// Reads the scales, maps and pilot; runs on a job thread.
pub fn load(path: &Path) -> JobResult<ScalesModel> {
    Ok(scales_view::build(&Study::open(path)?)?)
}

/// A write the screen asks for; applied on a job thread.
#[derive(Debug, Clone)]
pub enum Change {
    SaveScale {
        scale: Scale,
        origins: Vec<Option<u8>>,
    },
    Activate(String),
    SaveMap {
        scale: String,
        map: CollapseMap,
    },
    /// A pilot over `scales` (block order): each of `reviewers` grades the same
    /// `pairs` pairs on every scale.
    StartPilot {
        scales: Vec<String>,
        pairs: usize,
        reviewers: Vec<String>,
    },
    EndPilot,
    SaveGold {
        scale: String,
        context: String,
        item: String,
        value: u8,
        rationale: String,
    },
    RemoveGold {
        scale: String,
        context: String,
        item: String,
    },
}

/// Applies `change` and reloads the model; returns a sentence saying what happened.
pub fn apply(path: &Path, change: Change) -> JobResult<(String, ScalesModel)> {
    let mut study = Study::open(path)?;
    let message = match change {
        Change::SaveScale { scale, origins } => match study.save_scale(&scale, &origins) {
            Ok(Saved::Created(n)) => format!("Scale \"{n}\" created."),
            Ok(Saved::Updated(n)) => format!("Scale \"{n}\" saved."),
            Ok(Saved::NewVersion(n)) => format!(
                "\"{}\" already has grades, so the changed levels were saved as a new scale \"{n}\"; the old grades are untouched.",
                scale.name
            ),
            Err(e) => return Err(e.into()),
        },
        Change::Activate(name) => {
            study.set_active_scale(&name)?;
            format!("The grading desk now grades on \"{name}\".")
        }
        Change::SaveMap { scale, map } => {
            study.save_collapse_map(&scale, &map)?;
            format!("Collapse map \"{}\" saved for \"{scale}\".", map.name)
        }
        Change::StartPilot {
            scales,
            pairs,
            reviewers,
        } => {
            study.start_pilot_for(&scales, pairs, &reviewers)?;
            // Each reviewer's own block order, as the desk will give it.
            let orders: Vec<String> = study
                .pilot_orders()?
                .into_iter()
                .map(|(r, order)| format!("{r}: {}", order.join(", then ")))
                .collect();
            format!(
                "Pilot started: the same {pairs} pairs on each scale, one block at a time, in each reviewer's order ({}).",
                orders.join("; ")
            )
        }
        Change::EndPilot => {
            study.end_pilot()?;
            "Pilot ended; the desk grades on the active scale again.".to_string()
        }
        Change::SaveGold {
            scale,
            context,
            item,
            value,
            rationale,
        } => {
            study.save_gold_pair(&scale, &context, &item, value, &rationale)?;
            format!("Gold pair ({context}, {item}) on \"{scale}\" saved at level {value}.")
        }
        Change::RemoveGold {
            scale,
            context,
            item,
        } => {
            study.remove_gold_pair(&scale, &context, &item)?;
            format!("({context}, {item}) is no longer a gold pair on \"{scale}\".")
        }
    };
    drop(study);
    Ok((message, load(path)?))
}

/// How long a "saved" note stays on the Scales screen.
const MESSAGE_SHOWN_FOR: std::time::Duration = std::time::Duration::from_secs(8);

/// The Scales screen's state between frames.
pub struct ScalesScreen {
    pub model: Option<JobResult<ScalesModel>>,
    loading: Task<JobResult<ScalesModel>>,
    writing: Task<JobResult<(String, ScalesModel)>>,
    /// The last write's outcome: Ok(what happened) or Err(why not).
    pub message: Option<JobResult<String>>,
    /// When `message` arrived.
    message_at: Option<std::time::Instant>,
    pub editor: Option<Editor>,
    pub map_editor: MapEditor,
    pub gold_form: gold::GoldForm,
    pub pilot_form: pilot::PilotForm,
}

impl Default for ScalesScreen {
    fn default() -> ScalesScreen {
        ScalesScreen {
            model: None,
            loading: Task::named("scales-load"),
            writing: Task::named("scales-write"),
            message: None,
            editor: None,
            map_editor: MapEditor::default(),
            gold_form: Default::default(),
            message_at: None,
            pilot_form: Default::default(),
        }
    }
}

impl ScalesScreen {
    /// Reads the scales again in the background.
    pub fn reload(&mut self, ctx: &egui::Context, path: &Path) {
        let p = path.to_path_buf();
        self.loading.start(ctx, move || load(&p));
    }

    /// Whether a read or a write is in flight.
    pub fn is_busy(&self) -> bool {
        self.loading.is_running() || self.writing.is_running()
    }

    fn request(&mut self, ctx: &egui::Context, path: &Path, change: Change) {
        let p = path.to_path_buf();
        self.writing.start(ctx, move || apply(&p, change));
    }

    fn collect(&mut self) {
        if let Some(result) = self.loading.poll() {
            self.model = Some(result);
        }
        if let Some(result) = self.writing.poll() {
            match result {
                Ok((message, model)) => {
                    self.message = Some(Ok(message));
                    self.model = Some(Ok(model));
                    self.editor = None;
                }
                Err(e) => self.message = Some(Err(e)),
            }
            self.message_at = Some(std::time::Instant::now());
        }
        // A success note fades after a while so it never describes an older state; a
        // refusal stays until the next write.
        if matches!(self.message, Some(Ok(_)))
            && self
                .message_at
                .is_some_and(|t| t.elapsed() > MESSAGE_SHOWN_FOR)
        {
            self.message = None;
        }
    }

    pub fn ui(&mut self, ui: &mut egui::Ui, path: &Path) {
        let ctx = ui.ctx().clone();
        if self.model.is_none() && !self.loading.is_running() {
            self.reload(&ctx, path);
        }
        self.collect();
        ui.heading("Scales");
        let model = match &self.model {
            None => {
                ui.horizontal(|ui| {
                    ui.spinner();
                    ui.label("Reading the scales…");
                });
                return;
            }
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, e.to_string());
                return;
            }
            Some(Ok(m)) => m.clone(),
        };
        self.notes(ui, &model);
        ui.separator();
        let mut change: Option<Change> = None;
        egui::ScrollArea::vertical().show(ui, |ui| {
            ui.horizontal_top(|ui| {
                ui.vertical(|ui| {
                    ui.set_width(330.0);
                    self.list(ui, &model, &mut change);
                    ui.add_space(12.0);
                    if let Some(c) = self.pilot_form.ui(ui, &model, self.writing.is_running()) {
                        change = Some(c);
                    }
                });
                ui.separator();
                ui.vertical(|ui| {
                    if let Some(c) = self.editors(ui, &model) {
                        change = Some(c);
                    }
                });
            });
        });
        if let Some(c) = change
            && !model.read_only
        {
            self.request(&ctx, path, c);
        }
    }

    /// What a save does to graded scales, the last write's outcome, and read-only state.
    fn notes(&self, ui: &mut egui::Ui, model: &ScalesModel) {
        ui.label(
            "Grades are never rewritten: once a scale has grades, adding, removing or \
             reordering its levels saves a new version; wording, keys, colours and gains \
             can still change in place.",
        );
        match &self.message {
            Some(Ok(m)) => {
                ui.colored_label(crate::ui::palette::GOOD, m);
                ui.ctx().request_repaint_after(MESSAGE_SHOWN_FOR);
            }
            Some(Err(e)) => {
                ui.colored_label(ui.visuals().error_fg_color, format!("Not saved: {e}"));
            }
            None => {}
        }
        if model.read_only {
            ui.colored_label(
                ui.visuals().warn_fg_color,
                "This study is open read-only; nothing here can be saved.",
            );
        }
    }

    /// The open level editor, the collapse-map editor and the gold pairs; returns the
    /// change the last of them asked for.
    fn editors(&mut self, ui: &mut egui::Ui, model: &ScalesModel) -> Option<Change> {
        let mut change = None;
        if let Some(editor) = &mut self.editor {
            let entry = editor.stored_name().and_then(|n| model.entry(n));
            match editor.ui(ui, entry, self.writing.is_running()) {
                Some(editor::EditorAction::Save(scale, origins)) => {
                    change = Some(Change::SaveScale { scale, origins });
                }
                Some(editor::EditorAction::Close) => {}
                None => {}
            }
            if editor.closed {
                self.editor = None;
            }
            ui.add_space(12.0);
            ui.separator();
        }
        if let Some((scale, map)) = self.map_editor.ui(ui, model) {
            change = Some(Change::SaveMap { scale, map });
        }
        ui.add_space(12.0);
        ui.separator();
        if let Some(c) = self.gold_form.ui(ui, model, self.writing.is_running()) {
            change = Some(c);
        }
        change
    }

    fn list(&mut self, ui: &mut egui::Ui, model: &ScalesModel, change: &mut Option<Change>) {
        ui.strong("Scales in this study");
        if model.scales.is_empty() {
            ui.label("No scale yet. Start one from a preset below.");
        }
        for entry in &model.scales {
            let name = &entry.scale.name;
            let active = model.active.as_deref() == Some(name.as_str());
            // A stable id per scale, so a status line above does not shift the buttons'.
            ui.push_id(name, |ui| {
                ui.group(|ui| {
                    ui.set_width(310.0);
                    ui.horizontal(|ui| {
                        ui.strong(name);
                        if active {
                            ui.label(egui::RichText::new("active on the desk").italics());
                        }
                    });
                    ui.label(format!(
                        "{} levels · {} grades in force on {} pairs · {}",
                        entry.scale.levels.len(),
                        entry.in_force.0,
                        entry.in_force.1,
                        entry
                            .scale
                            .levels
                            .iter()
                            .map(|l| l.label.as_str())
                            .collect::<Vec<_>>()
                            .join(" / ")
                    ));
                    ui.horizontal(|ui| {
                        if ui.button(format!("Edit {name}")).clicked() {
                            self.editor = Some(Editor::for_scale(&entry.scale, entry.grades));
                        }
                        if !active
                            && ui
                                .add_enabled(
                                    !model.read_only,
                                    egui::Button::new(format!("Grade on {name}")),
                                )
                                .clicked()
                        {
                            *change = Some(Change::Activate(name.clone()));
                        }
                    });
                })
            });
        }
        ui.add_space(8.0);
        ui.strong("New scale from a preset");
        ui.horizontal_wrapped(|ui| {
            for n in 2..=5 {
                let Some(preset) = scale::preset(n) else {
                    continue;
                };
                if ui.button(format!("{n} levels ({})", preset.name)).clicked() {
                    let taken: Vec<String> =
                        model.scales.iter().map(|e| e.scale.name.clone()).collect();
                    self.editor = Some(Editor::new_from(preset, &taken));
                }
            }
        });
    }
}
