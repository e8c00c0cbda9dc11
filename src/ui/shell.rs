//! The window frame: top bar (study, reviewer, save indicator), navigation rail and the
//! current screen. Every screen draws from cached models; jobs load them.

use std::path::{Path, PathBuf};

use super::Screen;
use super::agreement::AgreementScreen;
use super::catalog::Catalog;
use super::desk::{Desk, SaveState};
use super::home::{self, HomeModel};
use super::jobs::{JobResult, Task};
use super::scales::ScalesScreen;
use super::scoreboard::{ScoreboardAction, ScoreboardScreen};
use super::sign_in::SignIn;
use super::study_picker::{PickerOutcome, Prefs, ScoreboardChoices, StudyPicker};
use super::trial::TrialScreen;

/// The screens that exist, in rail order, with their shortcut digit.
const SCREENS: [(Screen, &str, egui::Key, &str); 7] = [
    (Screen::Home, "Home", egui::Key::Num1, "Ctrl+1"),
    (Screen::Catalog, "Catalog", egui::Key::Num2, "Ctrl+2"),
    (Screen::Scales, "Scales", egui::Key::Num3, "Ctrl+3"),
    (Screen::Desk, "Grading desk", egui::Key::Num4, "Ctrl+4"),
    (Screen::Agreement, "Agreement", egui::Key::Num5, "Ctrl+5"),
    (Screen::Scoreboard, "Scoreboard", egui::Key::Num6, "Ctrl+6"),
    (Screen::Trial, "Scale trial", egui::Key::Num7, "Ctrl+7"),
];

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
    sign_in: SignIn,
    picker: StudyPicker,
    title: Option<String>,
    /// Whether the keyboard help (`?` / F1) is open.
    pub key_help_open: bool,
    shown_screen: Option<Screen>,
}

impl Workbench {
    /// A workbench that remembers nothing between runs (tests, benchmarks).
    pub fn new(path: PathBuf, screen: Screen) -> Workbench {
        Workbench::with_prefs(path, screen, Prefs::default())
    }

    /// A workbench that keeps recent studies and the last reviewer in `prefs`.
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
        let reviewer = prefs.reviewer_for(&path);
        let mut scoreboard = ScoreboardScreen::default();
        if let Some(choices) = prefs.scoreboard_for(&path) {
            scoreboard.wanted = choices.settings;
            scoreboard.focus_k = choices.focus_k;
        }
        Workbench {
            path,
            screen,
            reviewer,
            prefs,
            home: None,
            home_loading: Task::named("home-load"),
            catalog: Catalog::default(),
            desk: Desk::default(),
            agreement: AgreementScreen::default(),
            scoreboard,
            scales: ScalesScreen::default(),
            trial: TrialScreen::default(),
            sign_in: SignIn::default(),
            picker: StudyPicker::default(),
            title: None,
            key_help_open: false,
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
        self.prefs.remember_reviewer(&self.path.clone(), reviewer);
        self.desk = Desk::default();
        self.desk.start_loading(ctx, &self.path, reviewer, scale);
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
        for (screen, _, key, _) in SCREENS {
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
        self.shortcuts(&ctx);
        super::key_help::show(&ctx, self.screen, &mut self.key_help_open);
        self.collect_jobs(&ctx);
        if let Some(PickerOutcome::Open(path)) = self.picker.ui(&ctx, &self.prefs) {
            self.switch_study(path);
            return;
        }
        egui::Panel::top("top_bar").show(ui, |ui| self.top_bar(ui));
        egui::Panel::left("navigation")
            .resizable(false)
            .exact_size(170.0)
            .show(ui, |ui| {
                ui.add_space(8.0);
                for (screen, label, _, keys) in SCREENS {
                    let button = egui::Button::selectable(self.screen == screen, label)
                        .shortcut_text(keys)
                        .min_size(egui::vec2(156.0, 30.0));
                    if ui.add(button).clicked() {
                        self.screen = screen;
                    }
                }
            });
        egui::CentralPanel::default_margins().show(ui, |ui| match self.screen {
            Screen::Catalog => self.catalog.ui(ui, &self.path, self.reviewer.as_deref()),
            Screen::Desk => self.desk_screen(ui),
            Screen::Agreement => self.agreement.ui(ui, &self.path, self.reviewer.as_deref()),
            Screen::Scoreboard => {
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
            Screen::Scales => self.scales.ui(ui, &self.path),
            Screen::Trial => self.trial.ui(ui, &self.path),
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
        });
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
                    if ui.button("Switch reviewer").clicked() && !self.desk.has_unsaved() {
                        self.reviewer = None;
                        self.desk = Desk::default();
                        self.sign_in.reset();
                        self.screen = Screen::Desk;
                    }
                }
                None => {
                    if ui.button("Sign in").clicked() {
                        self.screen = Screen::Desk;
                    }
                }
            }
            ui.with_layout(
                egui::Layout::right_to_left(egui::Align::Center),
                |ui| match self.desk.save_state() {
                    SaveState::AllSaved => {
                        ui.label(
                            egui::RichText::new("All grades saved").color(super::palette::GOOD),
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
