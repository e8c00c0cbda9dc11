//! The Scoreboard's controls: scale, grades, gain, unjudged rule, segment, baseline and
//! cut-offs, each holding the typed setting it chooses.

use super::ScoreboardScreen;
use crate::analysis::judged::judgments::GradeSource;
use crate::analysis::scoring::scoreboard::Segment;
use crate::analysis::views::scoreboard_view::{OFFERED_KS, ScoreboardModel};
use crate::core::metrics::{GainKind, Unjudged};

impl ScoreboardScreen {
    pub(super) fn controls(&mut self, ui: &mut egui::Ui, model: &ScoreboardModel) {
        ui.horizontal_wrapped(|ui| self.setting_choices(ui, &model.choices));
        self.cut_off_choices(ui);
    }

    /// The row of combo boxes; each holds the typed setting it chooses, so a reviewer
    /// called "panel" or a segment label spelled like a kind stays what it is.
    fn setting_choices(
        &mut self,
        ui: &mut egui::Ui,
        c: &crate::analysis::views::scoreboard_view::Choices,
    ) {
        let scale = self.wanted.scale.clone().unwrap_or_default();
        if let Some(s) = pick(ui, "Scale", "sb_scale", &scale, &c.scales, |s| s.clone()) {
            self.wanted.scale = Some(s);
        }
        let mut sources = vec![GradeSource::Panel];
        sources.extend(c.reviewers.iter().cloned().map(GradeSource::Reviewer));
        if let Some(g) = pick(
            ui,
            "Grades",
            "sb_grades",
            &self.wanted.grades,
            &sources,
            |g| match g {
                GradeSource::Panel => "panel (settled, else median)".into(),
                GradeSource::Reviewer(r) => format!("{r} only"),
            },
        ) {
            self.wanted.grades = g;
        }
        let gains = [GainKind::Exponential, GainKind::Linear];
        if let Some(g) = pick(
            ui,
            "Gain",
            "sb_gain",
            &self.wanted.gain,
            &gains,
            |g| match g {
                GainKind::Exponential => "exponential (2^level − 1)".into(),
                GainKind::Linear => "linear (level)".into(),
            },
        ) {
            self.wanted.gain = g;
        }
        let policies = [Unjudged::Zero, Unjudged::Condense];
        if let Some(u) = pick(
            ui,
            "Unjudged",
            "sb_unjudged",
            &self.wanted.unjudged,
            &policies,
            |u| match u {
                Unjudged::Zero => "count as gain 0".into(),
                Unjudged::Condense => "condense (drop)".into(),
            },
        ) {
            self.wanted.unjudged = u;
        }
        // The model names its segments as `Segment::label` writes them; read back once here.
        let segments: Vec<Segment> = c.segments.iter().map(|s| Segment::parse(s)).collect();
        if let Some(s) = pick(
            ui,
            "Segment",
            "sb_segment",
            &self.wanted.segment,
            &segments,
            segment_words,
        ) {
            self.wanted.segment = s;
        }
        let baseline = self.wanted.baseline.clone().unwrap_or_default();
        if let Some(b) = pick(ui, "Baseline", "sb_baseline", &baseline, &c.rankers, |b| {
            b.clone()
        }) {
            self.wanted.baseline = Some(b);
        }
    }

    /// The cut-off toggles and the cut-off the plots and sensitivity use.
    fn cut_off_choices(&mut self, ui: &mut egui::Ui) {
        ui.horizontal_wrapped(|ui| {
            ui.label("Cut-offs");
            let mut offered: Vec<usize> = OFFERED_KS.to_vec();
            offered.extend(self.wanted.ks.iter().copied());
            offered.sort_unstable();
            offered.dedup();
            for k in offered {
                let mut on = self.wanted.ks.contains(&k);
                let response = ui
                    .toggle_value(&mut on, format!("k={k}"))
                    .on_hover_text(format!("Score at cut-off {k}"));
                if response.changed() {
                    if on {
                        self.wanted.ks.push(k);
                        self.wanted.ks.sort_unstable();
                    } else if self.wanted.ks.len() > 1 {
                        self.wanted.ks.retain(|x| *x != k);
                    }
                }
            }
            ui.separator();
            if let Some(k) = pick(
                ui,
                "Cut-off for plots and sensitivity",
                "sb_focus",
                &self.focus_k,
                &self.wanted.ks,
                |k| format!("k={k}"),
            ) {
                self.focus_k = k;
            }
        });
    }
}

/// A labelled combo box over `options`; returns the option picked this frame, if any.
pub(super) fn pick<T: PartialEq + Clone>(
    ui: &mut egui::Ui,
    label: &str,
    id: &str,
    current: &T,
    options: &[T],
    shown: impl Fn(&T) -> String,
) -> Option<T> {
    let mut chosen = None;
    let label_response = ui.label(label);
    let current_text = options
        .iter()
        .find(|o| *o == current)
        .map_or_else(|| shown(current), &shown);
    // As wide as the longest choice, so the controls after it do not shift sideways
    // when the choice changes.
    let font = egui::TextStyle::Button.resolve(ui.style());
    let widest = options
        .iter()
        .map(|o| {
            ui.fonts_mut(|f| f.layout_no_wrap(shown(o), font.clone(), egui::Color32::WHITE))
                .size()
                .x
        })
        .fold(0.0f32, f32::max);
    let combo = egui::ComboBox::from_id_salt(id)
        .width(
            widest
                + ui.spacing().icon_width
                + ui.spacing().item_spacing.x
                + 2.0 * ui.spacing().button_padding.x
                + 2.0,
        )
        .selected_text(current_text)
        .show_ui(ui, |ui| {
            for option in options {
                let response = ui.selectable_label(option == current, shown(option));
                // Screen readers (and tests) hear which control the option belongs to.
                response.widget_info(|| {
                    egui::WidgetInfo::selected(
                        egui::Role::Button,
                        true,
                        option == current,
                        format!("{label}: {}", shown(option)),
                    )
                });
                if response.clicked() && option != current {
                    chosen = Some(option.clone());
                }
            }
        });
    let _ = combo.response.labelled_by(label_response.id);
    chosen
}

/// How a segment reads in its combo box.
fn segment_words(segment: &Segment) -> String {
    match segment {
        Segment::All => "all contexts".into(),
        Segment::New => "new items carry gain".into(),
        Segment::Established => "established items carry gain".into(),
        Segment::Kind(kind) => format!("{kind} contexts (kind)"),
        Segment::ContextSegment(label) => format!("label “{label}” (segment column)"),
    }
}
