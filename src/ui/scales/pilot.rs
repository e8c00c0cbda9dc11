//! The pilot on the Scales screen: which scales, how many pairs and which reviewers, with
//! what each chosen reviewer will grade shown before the pilot starts; while one runs,
//! what each of its reviewers has and how far they are. Writes go through the screen's
//! job thread like every other change here.

use super::{Change, ScalesModel};
use crate::analysis::defaults;
use crate::study::pilot::PilotStatus;

/// The form's choices between frames.
#[derive(Debug, Clone, Default)]
pub struct PilotForm {
    /// The chosen scales in the order they were ticked: the block order.
    pub scales: Vec<String>,
    /// The number field's text; None until the first model proposes the default.
    pub pairs: Option<String>,
    /// People left out of the pilot; everyone else on the panel grades it.
    pub left_out: Vec<String>,
}

/// Why the typed number of pairs cannot start a pilot.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PairsProblem {
    NotANumber,
    None,
    /// More than the pool holds outside the gold pairs (this many).
    MoreThanRoom(usize),
}

impl std::fmt::Display for PairsProblem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            PairsProblem::NotANumber => f.write_str("Type the number of pairs as a whole number."),
            PairsProblem::None => f.write_str("A pilot needs at least one pair."),
            PairsProblem::MoreThanRoom(room) => write!(
                f,
                "The pool has {} outside the gold pairs; a pilot cannot ask for more.",
                pairs_text(*room)
            ),
        }
    }
}

/// "1 pair" / "40 pairs".
fn pairs_text(n: usize) -> String {
    if n == 1 {
        "1 pair".to_string()
    } else {
        format!("{n} pairs")
    }
}

/// "rev-amber: 40 pairs × 2 scales".
pub fn share_text(reviewer: &str, pairs: usize, scales: usize) -> String {
    format!("{reviewer}: {} × {scales} scales", pairs_text(pairs))
}

impl PilotForm {
    /// Draws the pilot section; returns the change asked for.
    pub fn ui(&mut self, ui: &mut egui::Ui, model: &ScalesModel, busy: bool) -> Option<Change> {
        ui.strong("Pilot");
        ui.label(
            "Reviewers grade the same pairs under each chosen scale, one scale's block \
             after another (the block order rotates between reviewers), each pair once \
             per scale. Compare the results on the Scale trial screen.",
        );
        if let Some(status) = &model.pilot_status {
            return running(ui, status, model.read_only || busy);
        }
        self.form(ui, model, busy)
    }

    fn form(&mut self, ui: &mut egui::Ui, model: &ScalesModel, busy: bool) -> Option<Change> {
        self.scale_choices(ui, model);
        let pairs = self.pairs_field(ui, model);
        let chosen = self.reviewer_choices(ui, model);
        let why_not = if self.scales.len() < 2 {
            Some("Choose two or more scales".to_string())
        } else if let Err(why) = &pairs {
            Some(why.to_string())
        } else if chosen.is_empty() {
            Some("Choose at least one reviewer".to_string())
        } else {
            None
        };
        if let (Ok(n), None) = (&pairs, &why_not) {
            self.preview(ui, *n, &chosen);
        }
        let start = ui
            .add_enabled(
                why_not.is_none() && !model.read_only && !busy,
                egui::Button::new("Start pilot"),
            )
            .on_disabled_hover_text(why_not.unwrap_or_default());
        match (start.clicked(), pairs) {
            (true, Ok(pairs)) => Some(Change::StartPilot {
                scales: self.scales.clone(),
                pairs,
                reviewers: chosen,
            }),
            _ => None,
        }
    }

    /// A box per scale; the order they are ticked in is the block order.
    fn scale_choices(&mut self, ui: &mut egui::Ui, model: &ScalesModel) {
        for entry in &model.scales {
            let name = entry.scale.name.clone();
            let mut on = self.scales.contains(&name);
            if ui.checkbox(&mut on, format!("Pilot with {name}")).changed() {
                if on {
                    self.scales.push(name);
                } else {
                    self.scales.retain(|n| *n != name);
                }
            }
        }
        self.scales.retain(|n| model.entry(n).is_some());
    }

    /// The number of pairs, typed, with the room the pool leaves; the number or why it
    /// cannot be used.
    fn pairs_field(
        &mut self,
        ui: &mut egui::Ui,
        model: &ScalesModel,
    ) -> Result<usize, PairsProblem> {
        let room = model.pilot_room;
        let text = self
            .pairs
            .get_or_insert_with(|| defaults::PILOT_PAIRS.min(room).max(1).to_string());
        ui.horizontal(|ui| {
            let label = ui.label("Pairs per reviewer and scale");
            ui.add(egui::TextEdit::singleline(text).desired_width(56.0))
                .labelled_by(label.id);
        });
        // On its own line, so it wraps in the column instead of widening it.
        let gold = model.gold_in_pool();
        ui.add(
            egui::Label::new(
                egui::RichText::new(format!(
                    "of {room} pool pairs that are not gold pairs (the pool has {}; its {gold} \
                     gold pairs stay out of a pilot)",
                    model.pool_size
                ))
                .weak(),
            )
            .wrap(),
        );
        let pairs = match text.trim().parse::<usize>() {
            Err(_) => Err(PairsProblem::NotANumber),
            Ok(0) => Err(PairsProblem::None),
            Ok(n) if n > room => Err(PairsProblem::MoreThanRoom(room)),
            Ok(n) => Ok(n),
        };
        if let Err(why) = &pairs {
            ui.colored_label(ui.visuals().error_fg_color, why.to_string());
        }
        pairs
    }

    /// A box per person on the panel (all ticked at first); returns those ticked.
    fn reviewer_choices(&mut self, ui: &mut egui::Ui, model: &ScalesModel) -> Vec<String> {
        ui.label("Reviewers (people only: machine judges are measured against them, not piloted)");
        if model.people.is_empty() {
            ui.weak("No reviewer on the panel yet: reviewers join when they first sign in or when grades are imported.");
        }
        for person in &model.people {
            let mut on = !self.left_out.contains(person);
            if ui.checkbox(&mut on, format!("Reviewer {person}")).changed() {
                if on {
                    self.left_out.retain(|r| r != person);
                } else {
                    self.left_out.push(person.clone());
                }
            }
        }
        model
            .people
            .iter()
            .filter(|p| !self.left_out.contains(p))
            .cloned()
            .collect()
    }

    /// What each chosen reviewer will grade, shown before the pilot starts.
    fn preview(&self, ui: &mut egui::Ui, n: usize, chosen: &[String]) {
        ui.add_space(4.0);
        ui.label("Each chosen reviewer will grade:");
        for r in chosen {
            ui.label(share_text(r, n, self.scales.len()));
        }
        ui.weak(format!(
            "The same {} for everyone, {} grades in all, in blocks of {}; the pairs they have graded least on these scales come first, gold pairs never (a pair a reviewer graded before counts as done in their block).",
            pairs_text(n),
            n * chosen.len() * self.scales.len(),
            self.scales.join(", then ")
        ));
    }
}

/// The running pilot: its blocks, each reviewer's share and progress, and its end.
fn running(ui: &mut egui::Ui, status: &PilotStatus, locked: bool) -> Option<Change> {
    ui.label(format!("Running: {}", status.scales.join(", then ")));
    let blocks = status.scales.len();
    match status.pairs {
        Some(n) => ui.label(format!(
            "{} per reviewer and scale, the same for every reviewer.",
            pairs_text(n)
        )),
        None => ui.label(format!(
            "Each reviewer's queue on {} is graded again on every other scale.",
            status
                .scales
                .first()
                .map_or("the first scale", String::as_str)
        )),
    };
    for share in &status.shares {
        if share.pairs == 0 {
            ui.label(format!(
                "{}: pairs set when they first open the desk",
                share.reviewer
            ));
        } else {
            ui.label(format!(
                "{} · {} of {} graded",
                share_text(&share.reviewer, share.pairs, blocks),
                share.graded,
                share.pairs * blocks
            ));
        }
    }
    ui.add_enabled(!locked, egui::Button::new("End pilot"))
        .clicked()
        .then_some(Change::EndPilot)
}
