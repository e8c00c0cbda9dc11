//! The window frame: top bar (study, reviewer, save indicator), navigation rail and the
//! current screen. Every screen draws from cached models; jobs load them.

use std::path::{Path, PathBuf};

use super::sign_in::SignIn;
use super::study_picker::{PickerOutcome, Prefs, ScoreboardChoices, StudyPicker};
use crate::ui::Screen;
use crate::ui::agreement::AgreementScreen;
use crate::ui::catalog::Catalog;
use crate::ui::desk::{Desk, SaveState};
use crate::ui::home::{self, HomeModel};
use crate::ui::jobs::{JobResult, Task};
use crate::ui::own_view::OwnView;
use crate::ui::scales::ScalesScreen;
use crate::ui::scoreboard::{ScoreboardAction, ScoreboardScreen};
use crate::ui::trial::TrialScreen;

/// One rail entry: the screen, its name, its shortcut key and how the shortcut reads.
type RailEntry = (Screen, &'static str, egui::Key, &'static str);

/// The lead's screens, in rail order, with their shortcut digit.
const LEAD_RAIL: [RailEntry; 7] = [
    (Screen::Home, "Home", egui::Key::Num1, "Ctrl+1"),
    (Screen::Catalog, "Catalog", egui::Key::Num2, "Ctrl+2"),
    (Screen::Scales, "Scales", egui::Key::Num3, "Ctrl+3"),
    (Screen::Desk, "Grading desk", egui::Key::Num4, "Ctrl+4"),
    (Screen::Agreement, "Agreement", egui::Key::Num5, "Ctrl+5"),
    (Screen::Scoreboard, "Scoreboard", egui::Key::Num6, "Ctrl+6"),
    (Screen::Trial, "Scale trial", egui::Key::Num7, "Ctrl+7"),
];

/// A signed-in reviewer's screens: the desk, their own progress and the rubric. Nothing
/// else is drawn while a reviewer is signed in (a guard against seeing gold levels,
/// rankers or other reviewers' grades by accident on a shared machine).
const REVIEWER_RAIL: [RailEntry; 3] = [
    (Screen::Desk, "Grading desk", egui::Key::Num1, "Ctrl+1"),
    (Screen::Progress, "My progress", egui::Key::Num2, "Ctrl+2"),
    (Screen::Rubric, "Rubric", egui::Key::Num3, "Ctrl+3"),
];

/// The rail for a window with (`true`) or without a reviewer signed in.
pub fn rail(reviewer_signed_in: bool) -> &'static [RailEntry] {
    if reviewer_signed_in {
        &REVIEWER_RAIL
    } else {
        &LEAD_RAIL
    }
}

/// The workbench application state.
pub struct Workbench {
    pub path: PathBuf,
    pub screen: Screen,
    pub reviewer: Option<String>,
    pub prefs: Prefs,
    pub home: Option<JobResult<HomeModel>>,
    home_loading: Task<JobResult<HomeModel>>,
    pub catalog: Catalog,
    pub desk: Desk,
    pub agreement: AgreementScreen,
    pub scoreboard: ScoreboardScreen,
    pub scales: ScalesScreen,
    pub trial: TrialScreen,
    /// The signed-in reviewer's own progress and rubric.
    pub own: OwnView,
    sign_in: SignIn,
    picker: StudyPicker,
    title: Option<String>,
    /// Whether the keyboard help (`?` / F1) is open.
    pub key_help_open: bool,
    /// A reviewer to sign in on the first frame (`plumbline open --reviewer`).
    pub sign_in_at_start: Option<String>,
    shown_screen: Option<Screen>,
}

impl Workbench {
    /// A workbench that remembers nothing between runs (tests, benchmarks).
    pub fn new(path: PathBuf, screen: Screen) -> Workbench {
        Workbench::with_prefs(path, screen, Prefs::default())
    }

    /// A workbench that keeps recent studies and the Scoreboard's choices in `prefs`.
    /// It opens signed out: the lead's screens, until a reviewer signs in.
    pub fn with_prefs(path: PathBuf, screen: Screen, mut prefs: Prefs) -> Workbench {
        let screen = match screen {
            Screen::Catalog
            | Screen::Desk
            | Screen::Agreement
            | Screen::Scoreboard
            | Screen::Scales
            | Screen::Trial => screen,
            _ => Screen::Home,
        };
        prefs.remember_study(&path);
        let mut scoreboard = ScoreboardScreen::default();
        if let Some(choices) = prefs.scoreboard_for(&path) {
            scoreboard.wanted = choices.settings;
            scoreboard.focus_k = choices.focus_k;
        }
        Workbench {
            path,
            screen,
            reviewer: None,
            prefs,
            home: None,
            home_loading: Task::named("home-load"),
            catalog: Catalog::default(),
            desk: Desk::default(),
            agreement: AgreementScreen::default(),
            scoreboard,
            scales: ScalesScreen::default(),
            trial: TrialScreen::default(),
            own: OwnView::default(),
            sign_in: SignIn::default(),
            picker: StudyPicker::default(),
            title: None,
            key_help_open: false,
            sign_in_at_start: None,
            shown_screen: None,
        }
    }

    /// Signs a reviewer in (as picking a name does) and starts loading their queue.
    pub fn sign_in(&mut self, ctx: &egui::Context, reviewer: &str) {
        self.sign_in_on(ctx, reviewer, None);
    }

    /// Signs a reviewer in and loads their queue on `scale` (None: their pilot block,
    /// else the active scale).
    pub fn sign_in_on(&mut self, ctx: &egui::Context, reviewer: &str, scale: Option<String>) {
        self.reviewer = Some(reviewer.to_string());
        self.desk = Desk::default();
        self.own = OwnView::default();
        self.desk.start_loading(ctx, &self.path, reviewer, scale);
        self.screen = Screen::Desk;
        self.shown_screen = Some(Screen::Desk);
    }

    /// Signs the reviewer out (not while a grade waits to be saved): the lead's screens
    /// come back, on Home. Returns whether it happened.
    pub fn sign_out(&mut self) -> bool {
        if self.desk.has_unsaved() {
            return false;
        }
        self.reviewer = None;
        self.desk = Desk::default();
        self.own = OwnView::default();
        self.sign_in.reset();
        self.screen = Screen::Home;
        true
    }

    /// The screen to draw: `screen` when the rail of the current role has it, else the
    /// rail's first (a reviewer never reaches a lead's screen, by key, link or field).
    pub fn allowed_screen(&self) -> Screen {
        let rail = rail(self.reviewer.is_some());
        if rail.iter().any(|(s, ..)| *s == self.screen) {
            self.screen
        } else {
            rail[0].0
        }
    }

    fn switch_study(&mut self, path: PathBuf) {
        if self.desk.has_unsaved() {
            return; // a grade is waiting to be saved; keep this study until it is
        }
        // Another study opens on Home, whatever screen the last one showed.
        let prefs = std::mem::take(&mut self.prefs);
        *self = Workbench::with_prefs(path, Screen::Home, prefs);
    }

    fn reload_home(&mut self, ctx: &egui::Context) {
        let p = self.path.clone();
        self.home_loading.start(ctx, move || home::load(&p));
    }

    /// Takes finished background results; cheap, called every frame.
    fn collect_jobs(&mut self, ctx: &egui::Context) {
        if self.home.is_none() && !self.home_loading.is_running() {
            self.reload_home(ctx);
        }
        if let Some(result) = self.home_loading.poll() {
            if let Ok(m) = &result
                && self.title.as_deref() != Some(m.title().as_str())
            {
                self.title = Some(m.title());
                ctx.send_viewport_cmd(egui::ViewportCommand::Title(format!(
                    "{} — Plumbline",
                    m.title()
                )));
            }
            self.home = Some(result);
        }
        if std::mem::take(&mut self.catalog.study_changed) {
            self.reload_home(ctx);
            self.sign_in.reset();
            if let Some(r) = self.reviewer.clone() {
                self.desk.start_loading(ctx, &self.path, &r, None);
            }
        }
        if let Some(scale) = self.desk.pending_scale.take()
            && let Some(r) = self.reviewer.clone()
        {
            self.desk.start_loading(ctx, &self.path, &r, Some(scale));
        }
        if std::mem::take(&mut self.desk.pending_reload)
            && let Some(r) = self.reviewer.clone()
        {
            self.desk.start_loading(ctx, &self.path, &r, None);
        }
        if self.shown_screen != Some(self.screen) {
            // Entering a screen refreshes what it shows (grades may have changed): the one
            // place that notices it.
            if self.screen == Screen::Home && self.shown_screen.is_some() {
                self.reload_home(ctx);
            }
            if self.screen == Screen::Scales && !self.scales.is_busy() {
                self.scales.reload(ctx, &self.path);
            }
            if self.screen == Screen::Agreement {
                self.agreement.entered();
            }
            if self.screen == Screen::Scoreboard {
                self.scoreboard.entered();
            }
            if self.screen == Screen::Trial && !self.trial.is_loading() {
                self.trial.reload(ctx, &self.path);
            }
            if matches!(self.screen, Screen::Progress | Screen::Rubric)
                && let Some(r) = self.reviewer.clone()
                && !self.own.is_loading()
            {
                self.own.reload(ctx, &self.path, &r);
            }
            if self.screen == Screen::Desk
                && let Some(r) = self.reviewer.clone()
                && !self.desk.is_loading()
                && !self.desk.has_unsaved()
            {
                self.desk.start_loading(ctx, &self.path, &r, None);
            }
            self.shown_screen = Some(self.screen);
        }
    }

    fn shortcuts(&mut self, ctx: &egui::Context) {
        for &(screen, _, key, _) in rail(self.reviewer.is_some()) {
            if ctx.input_mut(|i| i.consume_key(egui::Modifiers::COMMAND, key)) {
                self.screen = screen;
            }
        }
        if ctx.input_mut(|i| i.consume_key(egui::Modifiers::COMMAND, egui::Key::O)) {
            self.picker.open = true;
        }
    }

    /// Draws one frame into `ui` (used by eframe and by headless tests alike).
    pub fn show(&mut self, ui: &mut egui::Ui) {
        let ctx = ui.ctx().clone();
        if let Some(reviewer) = self.sign_in_at_start.take() {
            self.sign_in(&ctx, &reviewer);
        }
        self.shortcuts(&ctx);
        self.screen = self.allowed_screen();
        let signed_in = self.reviewer.is_some();
        super::key_help::show(&ctx, self.screen, signed_in, &mut self.key_help_open);
        self.collect_jobs(&ctx);
        if let Some(PickerOutcome::Open(path)) = self.picker.ui(&ctx, &self.prefs) {
            self.switch_study(path);
            return;
        }
        egui::Panel::top("top_bar").show(ui, |ui| self.top_bar(ui));
        egui::Panel::left("navigation")
            .resizable(false)
            .exact_size(170.0)
            .show(ui, |ui| self.rail_ui(ui, signed_in));
        egui::CentralPanel::default_margins().show(ui, |ui| self.screen_ui(ui));
    }

    /// The rail of the role's screens, each with its keys.
    fn rail_ui(&mut self, ui: &mut egui::Ui, signed_in: bool) {
        ui.add_space(8.0);
        for &(screen, label, _, keys) in rail(signed_in) {
            let button = egui::Button::selectable(self.screen == screen, label)
                .shortcut_text(keys)
                .min_size(egui::vec2(156.0, 30.0));
            if ui.add(button).clicked() {
                self.screen = screen;
            }
        }
    }

    /// The screen on show, in the central panel.
    fn screen_ui(&mut self, ui: &mut egui::Ui) {
        match self.screen {
            Screen::Catalog => self.catalog.ui(ui, &self.path, self.reviewer.as_deref()),
            Screen::Desk => self.desk_screen(ui),
            Screen::Agreement => self.agreement_screen(ui),
            Screen::Scoreboard => self.scoreboard_screen(ui),
            Screen::Scales => self.scales.ui(ui, &self.path),
            Screen::Trial => self.trial.ui(ui, &self.path),
            Screen::Progress => {
                let scale = self.desk.data().map(|d| d.scale.name.clone());
                self.own.progress_ui(ui, scale.as_deref());
            }
            Screen::Rubric => {
                let scale = self.desk.data().map(|d| d.scale.name.clone());
                self.own.rubric_ui(ui, scale.as_deref());
            }
            _ => match &self.home {
                None => {
                    ui.horizontal(|ui| {
                        ui.spinner();
                        ui.label("Opening the study…");
                    });
                }
                Some(Err(e)) => {
                    ui.colored_label(ui.visuals().error_fg_color, e.to_string());
                }
                Some(Ok(model)) => home::ui(ui, model),
            },
        }
    }

    fn agreement_screen(&mut self, ui: &mut egui::Ui) {
        self.agreement.ui(ui, &self.path, self.reviewer.as_deref());
        if let Some(machine) = self.agreement.take_open_estimates() {
            // The machine judge's estimates sit in the Scoreboard's last section.
            self.scoreboard.estimates.machine = Some(machine);
            self.scoreboard.estimates.stale = true;
            self.screen = Screen::Scoreboard;
        }
    }

    fn scoreboard_screen(&mut self, ui: &mut egui::Ui) {
        let signed_in = self.reviewer.clone();
        let action = self.scoreboard.ui(ui, &self.path, signed_in.as_deref());
        // The choices are kept per study, so reopening it shows the same scores.
        self.prefs.remember_scoreboard(
            &self.path,
            &ScoreboardChoices {
                settings: self.scoreboard.wanted.clone(),
                focus_k: self.scoreboard.focus_k,
            },
        );
        if let Some(ScoreboardAction::OpenDesk { reviewer, scale }) = action
            && !self.desk.has_unsaved()
        {
            // The gaps lead the reviewer's queue on the scale they were queued for.
            self.sign_in_on(&ui.ctx().clone(), &reviewer, Some(scale));
            self.screen = Screen::Desk;
        }
    }

    fn desk_screen(&mut self, ui: &mut egui::Ui) {
        if self.reviewer.is_none() {
            let path = self.path.clone();
            if let Some(name) = self.sign_in.ui(ui, &path) {
                let ctx = ui.ctx().clone();
                self.sign_in(&ctx, &name);
            }
            return;
        }
        self.desk.ui(ui);
    }

    fn top_bar(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
            ui.strong("Plumbline");
            ui.separator();
            let name = match &self.home {
                Some(Ok(m)) => m.title(),
                _ => study_label(&self.path),
            };
            ui.label(format!("Study: {name}"))
                .on_hover_text(self.path.display().to_string());
            if matches!(&self.home, Some(Ok(m)) if m.read_only) {
                ui.colored_label(
                    ui.visuals().warn_fg_color,
                    "Read-only: this study can be viewed but not changed",
                );
            }
            if ui
                .add(egui::Button::new("Studies…").shortcut_text("Ctrl+O"))
                .clicked()
            {
                self.picker.open = true;
            }
            ui.separator();
            match self.reviewer.clone() {
                Some(r) => {
                    ui.label(format!("Signed in: {r}"));
                    let saved = !self.desk.has_unsaved();
                    if ui
                        .add_enabled(saved, egui::Button::new("Sign out"))
                        .on_hover_text(
                            "Back to the lead's screens; the desk and your own progress \
                             only while you are signed in",
                        )
                        .on_disabled_hover_text("A grade is still being saved")
                        .clicked()
                    {
                        self.sign_out();
                    }
                }
                None => {
                    ui.label("Lead (nobody signed in)");
                    if ui
                        .button("Sign in")
                        .on_hover_text(
                            "A reviewer sees only the desk, their progress and the rubric",
                        )
                        .clicked()
                    {
                        self.screen = Screen::Desk;
                    }
                }
            }
            ui.with_layout(
                egui::Layout::right_to_left(egui::Align::Center),
                |ui| match self.desk.save_state() {
                    SaveState::AllSaved => {
                        ui.label(
                            egui::RichText::new("All grades saved").color(crate::ui::palette::GOOD),
                        );
                    }
                    SaveState::Saving => {
                        ui.label("Saving…");
                    }
                    SaveState::Waiting(e) => {
                        ui.colored_label(
                            ui.visuals().error_fg_color,
                            format!("Not saved yet: {e}"),
                        );
                    }
                },
            );
        });
    }
}

fn study_label(path: &Path) -> String {
    path.file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.display().to_string())
}

impl eframe::App for Workbench {
    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        self.show(ui);
    }
}
