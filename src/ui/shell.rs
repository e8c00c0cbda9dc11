//! The window frame: top bar, navigation rail and the current screen.

use std::path::PathBuf;

use super::home::{self, HomeModel};
use super::jobs::Pending;
use crate::cli::ScreenName;

/// The workbench application state.
pub struct Workbench {
    pub path: PathBuf,
    pub screen: ScreenName,
    home: Option<Result<HomeModel, String>>,
    loading: Option<Pending<Result<HomeModel, String>>>,
}

impl Workbench {
    pub fn new(ctx: egui::Context, path: PathBuf, screen: ScreenName) -> Workbench {
        let job_path = path.clone();
        Workbench {
            loading: Some(Pending::spawn(&ctx, move || home::load(&job_path))),
            path,
            screen,
            home: None,
        }
    }

    /// Takes finished background results; cheap, called every frame.
    fn collect_jobs(&mut self) {
        if let Some(result) = self.loading.as_ref().and_then(Pending::poll) {
            self.home = Some(result);
            self.loading = None;
        }
    }

    /// Draws one frame into `ui` (used by eframe and by headless tests alike).
    pub fn show(&mut self, ui: &mut egui::Ui) {
        self.collect_jobs();
        egui::Panel::top("top_bar").show(ui, |ui| {
            ui.horizontal(|ui| {
                ui.strong("Plumbline");
                ui.separator();
                ui.label(format!("Study: {}", self.path.display()));
            });
        });
        egui::Panel::left("navigation")
            .resizable(false)
            .default_size(150.0)
            .show(ui, |ui| {
                ui.add_space(6.0);
                ui.selectable_value(&mut self.screen, ScreenName::Home, "Home");
            });
        egui::CentralPanel::default_margins().show(ui, |ui| match &self.home {
            None => {
                ui.spinner();
                ui.label("Opening the study…");
            }
            Some(Err(message)) => {
                ui.colored_label(ui.visuals().error_fg_color, message);
            }
            Some(Ok(model)) => home::ui(ui, model),
        });
    }
}

impl eframe::App for Workbench {
    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        self.show(ui);
    }
}
