//! Reviewer quality on the Agreement screen: how each reviewer uses the levels, their
//! agreement with the others by day, gold accuracy (with drift by day) and each machine
//! judge against the people's panel grade, drawn from the cached model.

use crate::analysis::agreement::panel_review::PanelReview;
use crate::analysis::agreement::reviewer_quality::MACHINE_CAUTION;
use crate::analysis::views::agreement_view::AgreementModel;
use crate::core::panel_rule::PanelRule;

/// A setting the lead changed in this section, for the screen to write.
#[derive(Debug, Clone, PartialEq)]
pub enum QualityChange {
    /// The new list of reviewers in training.
    Training(Vec<String>),
    /// Whether machine judges count in the panel.
    MachinesInPanel(bool),
    /// The study's panel rule for an unsettled pair.
    PanelRule(PanelRule),
    /// Open the Scoreboard's estimates section for this machine judge.
    OpenEstimates(String),
}

fn share(x: Option<f64>) -> String {
    x.map_or("–".into(), |v| format!("{:.0} %", v * 100.0))
}

fn figure(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.3}")
    } else {
        "–".into()
    }
}

/// Where a machine judge's estimates are, said beside its agreement figures.
pub const ESTIMATES_THERE: &str = "Estimates of every ranker's metrics from a machine judge corrected by a random human sample (prediction-powered inference) are on the Scoreboard (Ctrl+6), in its section \"Estimates from a machine judge\".";

/// The study's panel rule for pairs nobody settled, which every figure from panel
/// grades reads; returns the rule the lead chose.
pub fn panel_rule_choice(ui: &mut egui::Ui, model: &AgreementModel) -> Option<QualityChange> {
    let editable = !model.read_only && model.request.viewer.is_none();
    let mut rule = model.panel_rule;
    ui.horizontal(|ui| {
        let label = ui.label("Panel grade of an unsettled pair:");
        ui.add_enabled_ui(editable, |ui| {
            egui::ComboBox::from_id_salt("panel-rule")
                .selected_text(rule.label())
                .show_ui(ui, |ui| {
                    for choice in [
                        PanelRule::LowerMedian,
                        PanelRule::UpperMedian,
                        PanelRule::MeanRounded,
                    ] {
                        ui.selectable_value(&mut rule, choice, choice.label())
                            .on_hover_text(choice.words());
                    }
                })
                .response
                .labelled_by(label.id)
        });
    })
    .response
    .on_hover_text("Every figure made from panel grades follows it: scores, the Catalog, reviewer quality, this review and the median settling rule. `score --panel-grade` may choose another for one run.");
    (rule != model.panel_rule).then_some(QualityChange::PanelRule(rule))
}

/// Gold pairs per reviewer, then the machine judges (or how to add one).
/// Returns a setting the lead changed (training, machines in the panel).
pub fn gold_and_machines(ui: &mut egui::Ui, model: &AgreementModel) -> Option<QualityChange> {
    let report = &model.report;
    let editable = !model.read_only && model.request.viewer.is_none();
    let mut change = None;
    if report
        .reviewers
        .iter()
        .any(|r| r.gold_n + r.gold_cant_judge > 0)
    {
        change = gold_by_reviewer(ui, model, editable);
        ui.weak("A few gold pairs give a rough check only; a falling share day by day is drift worth a word with the reviewer.");
        ui.add_space(10.0);
    }
    if report.machines.is_empty() {
        ui.weak(crate::analysis::views::estimates_view::NO_MACHINE);
        return change;
    }
    ui.heading("Machine judges against the people's panel grade");
    machines_against_panel(ui, model);
    ui.colored_label(ui.visuals().warn_fg_color, MACHINE_CAUTION);
    ui.horizontal_wrapped(|ui| {
        for m in &report.machines {
            let label = format!("Estimates from {} on the Scoreboard", m.reviewer);
            if ui.button(&label).on_hover_text(ESTIMATES_THERE).clicked() {
                change = Some(QualityChange::OpenEstimates(m.reviewer.clone()));
            }
        }
    });
    let mut counted = model.machines_in_panel;
    if ui
        .add_enabled(
            editable,
            egui::Checkbox::new(
                &mut counted,
                "Count machine judges in the panel grade, agreement and settling",
            ),
        )
        .changed()
    {
        change = Some(QualityChange::MachinesInPanel(counted));
    }
    change
}

/// Each reviewer's gold pairs: right, within one level, by day, with the training tick.
/// Returns the new training list when a tick changed.
fn gold_by_reviewer(
    ui: &mut egui::Ui,
    model: &AgreementModel,
    editable: bool,
) -> Option<QualityChange> {
    let report = &model.report;
    let mut change = None;
    ui.heading("Gold pairs: graded against the known level");
    egui::Grid::new("gold_by_reviewer")
        .striped(true)
        .show(ui, |ui| {
            for title in [
                "Reviewer",
                "Kind",
                "Gold pairs graded",
                "Exactly right",
                "Within one level",
                "Can't judge",
                "Exactly right by day",
                "In training",
            ] {
                ui.strong(title);
            }
            ui.end_row();
            for r in &report.reviewers {
                ui.label(&r.reviewer);
                ui.label(r.kind);
                ui.label(r.gold_n.to_string());
                ui.label(share(r.gold_exact));
                ui.label(share(r.gold_within_one));
                ui.label(r.gold_cant_judge.to_string());
                ui.label(
                    r.gold_by_day
                        .iter()
                        .map(|d| format!("{}: {:.0} % of {}", d.day, d.exact * 100.0, d.n))
                        .collect::<Vec<_>>()
                        .join(" · "),
                );
                let mut training = model.training_reviewers.contains(&r.reviewer);
                let tick = ui
                    .add_enabled(
                        editable && r.kind == "person",
                        egui::Checkbox::new(&mut training, "in training"),
                    )
                    .on_hover_text("A reviewer in training sees a gold pair's known level and rationale on the desk right after grading it.");
                if tick.changed() {
                    let mut list: Vec<String> = model
                        .training_reviewers
                        .iter()
                        .filter(|t| **t != r.reviewer)
                        .cloned()
                        .collect();
                    if training {
                        list.push(r.reviewer.clone());
                    }
                    change = Some(QualityChange::Training(list));
                }
                ui.end_row();
            }
        });
    change
}

/// Each machine judge against the panel grade: kappas, AC1, exact share, by segment.
fn machines_against_panel(ui: &mut egui::Ui, model: &AgreementModel) {
    let report = &model.report;
    egui::Grid::new("machines_against_panel")
        .striped(true)
        .show(ui, |ui| {
            for title in [
                "Judge",
                "Pairs",
                "Cohen's kappa",
                "Quadratic kappa",
                "Gwet's AC1",
                "Exactly equal",
                "New items",
                "Established items",
                "Queries",
                "Anchors",
            ] {
                ui.strong(title);
            }
            ui.end_row();
            for m in &report.machines {
                ui.label(&m.reviewer);
                ui.label(m.n.to_string());
                ui.label(figure(m.kappa))
                    .on_hover_text("Cohen (1960), judge against the panel grade (settled, else the study's panel rule over the people)");
                ui.label(figure(m.kappa_quadratic))
                    .on_hover_text("Cohen (1968), quadratic weights");
                ui.label(figure(m.ac1)).on_hover_text("Gwet (2008)");
                ui.label(if m.n == 0 {
                    "–".into()
                } else {
                    format!("{:.0} %", m.exact * 100.0)
                });
                for s in &m.by_segment {
                    ui.label(match (s.kappa, s.exact) {
                        (Some(k), Some(e)) => format!("κ {k:.2}, {:.0} % equal (n {})", e * 100.0, s.n),
                        (None, Some(e)) => format!("{:.0} % equal (n {})", e * 100.0, s.n),
                        _ => "no pairs".into(),
                    });
                }
                ui.end_row();
            }
        });
}

pub fn strictness(ui: &mut egui::Ui, model: &AgreementModel) {
    let review = &model.review;
    ui.heading("How each reviewer uses the levels");
    egui::Grid::new("strictness")
        .striped(true)
        .show(ui, |ui| {
            ui.strong("Reviewer");
            for l in 0..review.levels {
                ui.strong(format!("level {l}"));
            }
            ui.strong("grades");
            ui.strong("mean difference from the others")
                .on_hover_text("Own level minus the others' panel grade on the same pair (the study's panel rule over the other reviewers' levels); below 0 means stricter.");
            ui.strong("gold pairs right");
            ui.end_row();
            for s in &review.strictness {
                ui.label(&s.reviewer);
                for (l, share) in s.shares.iter().enumerate() {
                    let panel = review.panel_shares.get(l).copied().unwrap_or(0.0);
                    ui.label(format!("{:.0} % (panel {:.0} %)", 100.0 * share, 100.0 * panel));
                }
                ui.label(s.graded.to_string());
                if s.compared == 0 {
                    ui.weak("no shared pairs");
                } else {
                    ui.label(format!("{:+.2} over {} pairs", s.mean_difference, s.compared));
                }
                match review.gold.iter().find(|g| g.reviewer == s.reviewer) {
                    Some(g) => ui.label(format!(
                        "{} of {} ({:.0} %)",
                        g.correct,
                        g.graded,
                        100.0 * g.share()
                    )),
                    None => ui.weak("none graded"),
                };
                ui.end_row();
            }
        });
    if review.gold_pairs == 0 {
        ui.weak("This scale has no gold pairs, so there is no gold accuracy to show.");
    }
}

pub fn drift(ui: &mut egui::Ui, review: &PanelReview) {
    ui.heading("Agreement with the others by day");
    ui.weak("Share of a reviewer's grades equal to the others' panel grade on the same pair, by the day graded (UTC). A falling share can mean drift; few pairs on a day mean a wide margin.");
    if review.days.is_empty() {
        ui.weak("No pairs were graded by two or more reviewers yet.");
        return;
    }
    egui::Grid::new("drift").striped(true).show(ui, |ui| {
        ui.strong("Reviewer");
        for d in &review.days {
            ui.strong(d);
        }
        ui.end_row();
        for s in &review.strictness {
            ui.label(&s.reviewer);
            for d in &review.days {
                match review
                    .drift
                    .iter()
                    .find(|x| x.reviewer == s.reviewer && &x.day == d)
                {
                    Some(x) => ui.label(format!("{:.0} % of {}", 100.0 * x.share(), x.compared)),
                    None => ui.weak("—"),
                };
            }
            ui.end_row();
        }
    });
}
