//! The level editor and the collapse-map editor of the Scales screen. Both hold only
//! text being typed; problems are checked with `Scale::problems` as the user types and
//! shown beside the form, and saving is handed back to the screen (a job thread).

use super::{ScaleEntry, ScalesModel};
use crate::core::agreement::CollapseMap;
use crate::core::scale::{Level, Scale};
use crate::study::scales::{meaning_changed, next_version_name};

/// One level as typed. `origin` is the stored value it was loaded from (None = new).
#[derive(Debug, Clone)]
pub struct LevelRow {
    pub origin: Option<u8>,
    pub label: String,
    pub rubric: String,
    pub key: String,
    /// Empty = the study's gain rule.
    pub gain: String,
    /// `#rrggbb` or empty.
    pub colour: String,
}

pub enum EditorAction {
    Save(Scale, Vec<Option<u8>>),
    Close,
}

/// A scale being edited or created.
#[derive(Debug, Clone)]
pub struct Editor {
    pub name: String,
    /// The stored scale's name; None while creating a new one.
    stored: Option<String>,
    pub rows: Vec<LevelRow>,
    pub closed: bool,
}

impl Editor {
    pub fn for_scale(scale: &Scale, _grades: u64) -> Editor {
        Editor {
            name: scale.name.clone(),
            stored: Some(scale.name.clone()),
            rows: scale
                .levels
                .iter()
                .map(|l| LevelRow {
                    origin: Some(l.value),
                    label: l.label.clone(),
                    rubric: l.rubric.clone(),
                    key: l.key.clone(),
                    gain: l.gain.map(|g| g.to_string()).unwrap_or_default(),
                    colour: l.colour.clone(),
                })
                .collect(),
            closed: false,
        }
    }

    /// A new scale from a preset, named so that it does not clash with `taken`.
    pub fn new_from(preset: Scale, taken: &[String]) -> Editor {
        let mut editor = Editor::for_scale(&preset, 0);
        if taken.contains(&preset.name) {
            editor.name = next_version_name(&preset.name, taken);
        }
        editor.stored = None;
        for row in &mut editor.rows {
            row.origin = None;
        }
        editor
    }

    pub fn stored_name(&self) -> Option<&str> {
        self.stored.as_deref()
    }

    /// The scale as typed, plus problems the typing itself has (bad gains or colours).
    pub fn scale(&self) -> (Scale, Vec<String>) {
        let mut problems = Vec::new();
        let levels = self
            .rows
            .iter()
            .enumerate()
            .map(|(v, r)| {
                let gain = match r.gain.trim() {
                    "" => None,
                    text => match text.parse::<f64>() {
                        Ok(g) => Some(g),
                        Err(_) => {
                            problems.push(format!("level {v}: gain \"{text}\" is not a number"));
                            None
                        }
                    },
                };
                let colour = r.colour.trim().to_string();
                if !colour.is_empty() && crate::ui::palette::parse_hex(&colour).is_none() {
                    problems.push(format!("level {v}: colour must look like #3c9a5f"));
                }
                Level {
                    value: v as u8,
                    label: r.label.trim().to_string(),
                    gain,
                    key: r.key.trim().to_string(),
                    rubric: r.rubric.trim().to_string(),
                    colour,
                }
            })
            .collect();
        let scale = Scale {
            name: self.name.trim().to_string(),
            levels,
        };
        problems.extend(scale.problems());
        (scale, problems)
    }

    fn origins(&self) -> Vec<Option<u8>> {
        self.rows.iter().map(|r| r.origin).collect()
    }

    pub fn ui(
        &mut self,
        ui: &mut egui::Ui,
        stored: Option<&ScaleEntry>,
        saving: bool,
    ) -> Option<EditorAction> {
        let mut action = None;
        match &self.stored {
            Some(name) => ui.strong(format!("Editing scale {name}")),
            None => ui.strong("New scale"),
        };
        if self.stored.is_none() {
            ui.horizontal(|ui| {
                let label = ui.label("Scale name");
                ui.add(egui::TextEdit::singleline(&mut self.name).desired_width(200.0))
                    .labelled_by(label.id);
            });
        }
        self.level_grid(ui);
        if ui.button("Add level").clicked() && self.rows.len() < 10 {
            let v = self.rows.len();
            self.rows.push(LevelRow {
                origin: None,
                label: String::new(),
                rubric: String::new(),
                key: v.to_string(),
                gain: String::new(),
                colour: String::new(),
            });
        }
        let (scale, problems) = self.scale();
        for p in &problems {
            ui.colored_label(ui.visuals().error_fg_color, format!("- {p}"));
        }
        if let Some(entry) = stored
            && meaning_changed(&entry.scale, &scale, &self.origins())
        {
            let text = if entry.grades > 0 {
                format!(
                    "The levels changed meaning and \"{}\" has {} grades: saving creates a new \
                     version \"{}\" and leaves those grades as they are.",
                    entry.scale.name,
                    entry.grades,
                    next_version_name(&entry.scale.name, &[])
                )
            } else {
                "The levels changed meaning; this scale has no grades yet, so it is changed in \
                 place and its collapse maps are dropped."
                    .to_string()
            };
            ui.colored_label(ui.visuals().warn_fg_color, text);
        }
        ui.horizontal(|ui| {
            let ok = problems.is_empty() && !saving;
            if ui
                .add_enabled(ok, egui::Button::new("Save scale"))
                .clicked()
            {
                action = Some(EditorAction::Save(scale.clone(), self.origins()));
            }
            if ui.button("Close editor").clicked() {
                self.closed = true;
                action = Some(EditorAction::Close);
            }
            if saving {
                ui.spinner();
            }
        });
        action
    }

    fn level_grid(&mut self, ui: &mut egui::Ui) {
        let mut move_up: Option<usize> = None;
        let mut remove: Option<usize> = None;
        egui::Grid::new("level_grid")
            .num_columns(8)
            .spacing([6.0, 4.0])
            .striped(true)
            .show(ui, |ui| {
                for head in ["Value", "Label", "Key", "Gain", "Colour", "Rubric", "", ""] {
                    ui.strong(head);
                }
                ui.end_row();
                for (v, row) in self.rows.iter_mut().enumerate() {
                    ui.label(v.to_string());
                    text_cell(ui, &mut row.label, &format!("Level {v} label"), 130.0);
                    text_cell(ui, &mut row.key, &format!("Level {v} key"), 30.0);
                    text_cell(ui, &mut row.gain, &format!("Level {v} gain"), 44.0);
                    ui.horizontal(|ui| {
                        let (rect, _) =
                            ui.allocate_exact_size(egui::vec2(14.0, 14.0), egui::Sense::hover());
                        if let Some(c) = crate::ui::palette::parse_hex(&row.colour) {
                            ui.painter().rect_filled(rect, 3.0, c);
                        }
                        text_cell(ui, &mut row.colour, &format!("Level {v} colour"), 64.0);
                    });
                    text_cell(ui, &mut row.rubric, &format!("Level {v} rubric"), 320.0);
                    if ui
                        .add_enabled(v > 0, egui::Button::new("Up"))
                        .on_hover_text("Move up")
                        .accessible_name(format!("Move level {v} up"))
                        .clicked()
                    {
                        move_up = Some(v);
                    }
                    if ui
                        .button("Remove")
                        .on_hover_text("Remove level")
                        .accessible_name(format!("Remove level {v}"))
                        .clicked()
                    {
                        remove = Some(v);
                    }
                    ui.end_row();
                }
            });
        if let Some(v) = move_up {
            self.rows.swap(v - 1, v);
        }
        if let Some(v) = remove {
            self.rows.remove(v);
        }
    }
}

/// A one-line text field whose accessible name is `name` (the grid heading says the same).
fn text_cell(ui: &mut egui::Ui, text: &mut String, name: &str, width: f32) {
    // add_sized: a grid cell would otherwise shrink the field to its narrowest.
    ui.add_sized([width, 20.0], egui::TextEdit::singleline(text))
        .accessible_name(name);
}

/// The collapse-map editor: one fine scale, a name, a coarse target per level.
#[derive(Debug, Clone, Default)]
pub struct MapEditor {
    pub scale: String,
    pub name: String,
    pub targets: Vec<u8>,
    /// Whether the lead has edited the form yet: problems are shown only after that.
    pub touched: bool,
}

impl MapEditor {
    /// Draws the saved maps and the form; returns a map to save.
    pub fn ui(&mut self, ui: &mut egui::Ui, model: &ScalesModel) -> Option<(String, CollapseMap)> {
        saved_maps(ui, model);
        if model.scales.is_empty() {
            return None;
        }
        if model.entry(&self.scale).is_none() {
            self.scale = model.scales[0].scale.name.clone();
            self.targets.clear();
        }
        let fine = model.entry(&self.scale).map_or(0, |e| e.scale.levels.len());
        if self.targets.len() != fine {
            // A starting point: split the levels into a lower and an upper half.
            self.targets = (0..fine).map(|v| (v * 2 / fine.max(1)) as u8).collect();
        }
        let mut result = None;
        self.scale_and_name(ui, model);
        let entry = model.entry(&self.scale)?;
        for (v, level) in entry.scale.levels.iter().enumerate() {
            ui.horizontal(|ui| {
                let label = ui.label(format!("{v} {} becomes", level.label));
                let drag = ui.add(egui::DragValue::new(&mut self.targets[v]).range(0..=9));
                self.touched |= drag.changed();
                let _ = drag.labelled_by(label.id);
            });
        }
        let map = CollapseMap {
            name: self.name.trim().to_string(),
            targets: self.targets.clone(),
        };
        let problems = map_problems(&map, fine);
        if self.touched {
            for p in &problems {
                ui.colored_label(ui.visuals().error_fg_color, format!("- {p}"));
            }
        }
        if ui
            .add_enabled(
                problems.is_empty() && !model.read_only,
                egui::Button::new("Save collapse map"),
            )
            .clicked()
        {
            result = Some((self.scale.clone(), map));
        }
        result
    }

    /// The fine scale to map and the map's name.
    fn scale_and_name(&mut self, ui: &mut egui::Ui, model: &ScalesModel) {
        ui.horizontal(|ui| {
            let label = ui.label("Map scale");
            let combo = egui::ComboBox::from_id_salt("map_scale")
                .selected_text(&self.scale)
                .show_ui(ui, |ui| {
                    for e in &model.scales {
                        ui.selectable_value(&mut self.scale, e.scale.name.clone(), &e.scale.name);
                    }
                });
            let _ = combo.response.labelled_by(label.id);
            let label = ui.label("Map name");
            let name = ui
                .add(egui::TextEdit::singleline(&mut self.name).desired_width(140.0))
                .labelled_by(label.id);
            self.touched |= name.changed();
        });
    }
}

/// The saved collapse maps, one line each, under the editor's heading.
fn saved_maps(ui: &mut egui::Ui, model: &ScalesModel) {
    ui.strong("Collapse maps");
    ui.label(
        "Map a scale's levels onto a coarser one (for example levels 0 and 1 become 0, levels 2 and 3 become 1). \
         Agreement and the scale trial compute every saved map beside its scale.",
    );
    for (scale, map) in &model.maps {
        let arrows: Vec<String> = map
            .targets
            .iter()
            .enumerate()
            .map(|(v, t)| format!("{v} to {t}"))
            .collect();
        ui.label(format!("{} on {scale}: {}", map.name, arrows.join(", ")));
    }
}

/// What keeps a typed map of a scale with `fine` levels from being saved.
fn map_problems(map: &CollapseMap, fine: usize) -> Vec<String> {
    let mut problems = Vec::new();
    if map.name.is_empty() {
        problems.push("the map needs a name".to_string());
    }
    let coarse = map.coarse_levels();
    if coarse < 2 || coarse >= fine {
        problems.push("a collapse map needs at least two and fewer coarse levels".into());
    }
    if (0..coarse as u8).any(|c| !map.targets.contains(&c)) {
        problems.push(format!(
            "use every coarse level from 0 to {}",
            coarse.saturating_sub(1)
        ));
    }
    if map.targets.windows(2).any(|w| w[1] < w[0]) {
        problems.push("coarse levels must not fall as the fine level rises".into());
    }
    problems
}
