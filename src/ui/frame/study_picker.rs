//! Opening and creating studies: native dialogs where the desktop offers them, a typed
//! path otherwise, and the list of recent studies (kept in the user's config folder).

use std::path::{Path, PathBuf};

use crate::analysis::scoring::scoreboard::ScoreSettings;
use crate::study::Study;
use crate::ui::jobs::{JobResult, Task};

const RECENT_LIMIT: usize = 10;

/// What the workbench remembers between runs.
#[derive(Debug, Clone, Default, serde::Serialize, serde::Deserialize)]
pub struct Prefs {
    /// Most recent first.
    #[serde(default)]
    pub recent: Vec<PathBuf>,
    /// The Scoreboard's choices (scale, cut-offs, gain, grades, unjudged, baseline,
    /// segment, focus cut-off), per study path.
    #[serde(default)]
    pub scoreboard: Vec<(PathBuf, ScoreboardChoices)>,
    /// Where these prefs are saved; None = not saved (tests).
    #[serde(skip)]
    pub file: Option<PathBuf>,
}

/// What the Scoreboard's controls were set to when a study was last open.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ScoreboardChoices {
    /// The settings the controls chose.
    pub settings: ScoreSettings,
    /// The cut-off the plots and sensitivity use.
    pub focus_k: usize,
}

impl ScoreboardChoices {
    /// Only what the controls choose is taken from the prefs file; resample counts and
    /// the seed stay the study-wide defaults whatever the file says.
    fn restored(&self) -> ScoreboardChoices {
        let s = &self.settings;
        ScoreboardChoices {
            settings: ScoreSettings {
                scale: s.scale.clone(),
                ks: s.ks.clone(),
                gain: s.gain,
                grades: s.grades.clone(),
                unjudged: s.unjudged,
                baseline: s.baseline.clone(),
                segment: s.segment.clone(),
                ..ScoreSettings::default()
            },
            focus_k: self.focus_k,
        }
    }
}

impl Prefs {
    /// The prefs file in the platform's config folder.
    pub fn default_file() -> Option<PathBuf> {
        directories::ProjectDirs::from("", "", "plumbline")
            .map(|d| d.config_dir().join("workbench.json"))
    }

    /// Loads prefs from `file` (missing or unreadable → empty prefs saved there later).
    pub fn load(file: Option<PathBuf>) -> Prefs {
        let mut prefs: Prefs = file
            .as_deref()
            .and_then(|f| std::fs::read(f).ok())
            .and_then(|bytes| serde_json::from_slice(&bytes).ok())
            .unwrap_or_default();
        prefs.file = file;
        prefs
    }

    /// Writes the prefs; failures are ignored (they only cost a convenience).
    pub fn save(&self) {
        let Some(file) = &self.file else { return };
        if let Some(dir) = file.parent() {
            let _ = std::fs::create_dir_all(dir);
        }
        if let Ok(json) = serde_json::to_vec_pretty(self) {
            let tmp = file.with_extension("json.tmp");
            if std::fs::write(&tmp, json).is_ok() {
                let _ = std::fs::rename(&tmp, file);
            }
        }
    }

    pub fn remember_study(&mut self, path: &Path) {
        let path = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
        if self.recent.first() == Some(&path) {
            return;
        }
        self.recent.retain(|p| p != &path);
        self.recent.insert(0, path);
        self.recent.truncate(RECENT_LIMIT);
        self.save();
    }

    /// Keeps the Scoreboard's choices for `study` (saved only when they changed).
    pub fn remember_scoreboard(&mut self, study: &Path, choices: &ScoreboardChoices) {
        let study = std::path::absolute(study).unwrap_or_else(|_| study.to_path_buf());
        if self
            .scoreboard
            .iter()
            .any(|(p, c)| p == &study && c == choices)
        {
            return;
        }
        // Most recent first, so that the one just kept is never the one cut off (which
        // made a full list write the file again on every frame).
        self.scoreboard.retain(|(p, _)| p != &study);
        self.scoreboard.insert(0, (study, choices.clone()));
        self.scoreboard.truncate(RECENT_LIMIT * 5);
        self.save();
    }

    /// The Scoreboard's choices when `study` was last open.
    pub fn scoreboard_for(&self, study: &Path) -> Option<ScoreboardChoices> {
        let study = std::path::absolute(study).unwrap_or_else(|_| study.to_path_buf());
        self.scoreboard
            .iter()
            .find(|(p, _)| p == &study)
            .map(|(_, c)| c.restored())
    }

    /// The most recent study that still exists.
    pub fn last_study(&self) -> Option<PathBuf> {
        self.recent.iter().find(|p| p.exists()).cloned()
    }
}

/// Runs a future to completion on the current (job) thread. The native dialogs are
/// used through rfd's async API, which hands the dialog itself to the thread the
/// desktop requires, so a job thread can wait for the answer without freezing frames.
pub fn block_on<F: std::future::Future>(future: F) -> F::Output {
    use std::sync::Arc;
    use std::task::{Context, Poll, Wake, Waker};

    struct Unpark(std::thread::Thread);
    impl Wake for Unpark {
        fn wake(self: Arc<Self>) {
            self.0.unpark();
        }
    }
    let waker = Waker::from(Arc::new(Unpark(std::thread::current())));
    let mut cx = Context::from_waker(&waker);
    let mut future = std::pin::pin!(future);
    loop {
        match future.as_mut().poll(&mut cx) {
            Poll::Ready(out) => return out,
            Poll::Pending => std::thread::park(),
        }
    }
}

/// What a native file dialog gave back.
#[derive(Debug, Clone, PartialEq)]
pub enum Asked<T> {
    /// The person chose this.
    Chosen(T),
    /// The dialog opened and the person closed it without choosing.
    Cancelled,
    /// No dialog could open (a bare X session, a desktop without a file-chooser
    /// service): the answer came back faster than anyone can cancel.
    Unavailable,
}

/// Faster than this, an empty answer means the dialog never opened.
const QUICKEST_CANCEL: std::time::Duration = std::time::Duration::from_millis(300);

/// What every screen says when no dialog could open.
pub const NO_DIALOG: &str = "No file dialog could open on this desktop (no file-chooser service is running): type the path in the field instead.";

/// Runs a native dialog on the job thread and tells a cancel from a dialog that could
/// not open at all.
pub fn ask<T>(dialog: impl std::future::Future<Output = Option<T>>) -> Asked<T> {
    let started = std::time::Instant::now();
    match block_on(dialog) {
        Some(answer) => Asked::Chosen(answer),
        None if started.elapsed() < QUICKEST_CANCEL => Asked::Unavailable,
        None => Asked::Cancelled,
    }
}

/// What the picker asks the workbench to do.
pub enum PickerOutcome {
    Open(PathBuf),
}

/// The "Studies" window: recent list, typed path, open / create.
pub struct StudyPicker {
    pub open: bool,
    typed: String,
    message: Option<String>,
    dialog: Task<Asked<(PathBuf, bool)>>,
    checking: Task<JobResult<PathBuf>>,
}

impl Default for StudyPicker {
    fn default() -> StudyPicker {
        StudyPicker {
            open: false,
            typed: String::new(),
            message: None,
            dialog: Task::named("study-dialog"),
            checking: Task::named("study-check"),
        }
    }
}

impl StudyPicker {
    pub fn ui(&mut self, ctx: &egui::Context, prefs: &Prefs) -> Option<PickerOutcome> {
        let outcome = self.poll(ctx);
        if !self.open {
            return outcome;
        }
        let mut open = self.open;
        egui::Window::new("Studies")
            .open(&mut open)
            .collapsible(false)
            .default_width(520.0)
            .anchor(egui::Align2::CENTER_TOP, [0.0, 80.0])
            .show(ctx, |ui| {
                self.recent_ui(ui, prefs);
                ui.separator();
                self.dialog_buttons(ui);
                self.typed_path(ui);
            });
        self.open &= open;
        outcome
    }

    /// Takes in a finished dialog (checking the file chosen) and a finished check (the
    /// study to open, or why not).
    fn poll(&mut self, ctx: &egui::Context) -> Option<PickerOutcome> {
        let mut outcome = None;
        if let Some(result) = self.dialog.poll() {
            match result {
                Asked::Chosen((path, create)) => self.check(ctx, path, create),
                Asked::Cancelled => self.message = Some("No file chosen.".into()),
                Asked::Unavailable => self.message = Some(NO_DIALOG.into()),
            }
        }
        if let Some(result) = self.checking.poll() {
            match result {
                Ok(path) => {
                    outcome = Some(PickerOutcome::Open(path));
                    self.open = false;
                    self.message = None;
                }
                Err(e) => self.message = Some(e.to_string()),
            }
        }
        outcome
    }

    /// The recent studies, one button each (off for a file that is gone).
    fn recent_ui(&mut self, ui: &mut egui::Ui, prefs: &Prefs) {
        let ctx = ui.ctx().clone();
        ui.label("Recent studies");
        if prefs.recent.is_empty() {
            ui.weak("None yet.");
        }
        for path in &prefs.recent {
            let exists = path.exists();
            let text = path.display().to_string();
            let button = ui.add_enabled(exists, egui::Button::new(&text).truncate());
            if button.clicked() {
                self.check(&ctx, path.clone(), false);
            }
        }
    }

    /// The native open and create dialogs.
    fn dialog_buttons(&mut self, ui: &mut egui::Ui) {
        let ctx = ui.ctx().clone();
        ui.horizontal(|ui| {
            if ui.button("Browse to open…").clicked() {
                self.dialog.start(&ctx, || {
                    let dialog = rfd::AsyncFileDialog::new()
                        .add_filter("Plumbline study", &["plumb"])
                        .pick_file();
                    ask(async { dialog.await.map(|h| (h.path().to_path_buf(), false)) })
                });
            }
            if ui.button("Browse to create…").clicked() {
                self.dialog.start(&ctx, || {
                    let dialog = rfd::AsyncFileDialog::new()
                        .add_filter("Plumbline study", &["plumb"])
                        .set_file_name("study.plumb")
                        .save_file();
                    ask(async { dialog.await.map(|h| (h.path().to_path_buf(), true)) })
                });
            }
            if self.dialog.is_running() {
                ui.spinner();
            }
        });
    }

    /// A typed path to open or create, and the last problem.
    fn typed_path(&mut self, ui: &mut egui::Ui) {
        let ctx = ui.ctx().clone();
        let label = ui.label("Or type the path of a study file:");
        ui.add(
            egui::TextEdit::singleline(&mut self.typed)
                .hint_text("/path/to/study.plumb")
                .desired_width(f32::INFINITY),
        )
        .labelled_by(label.id);
        ui.horizontal(|ui| {
            let typed = PathBuf::from(self.typed.trim());
            let has = !self.typed.trim().is_empty();
            if ui.add_enabled(has, egui::Button::new("Open")).clicked() {
                self.check(&ctx, typed.clone(), false);
            }
            if ui.add_enabled(has, egui::Button::new("Create")).clicked() {
                self.check(&ctx, typed, true);
            }
        });
        if let Some(m) = &self.message {
            ui.colored_label(ui.visuals().error_fg_color, m);
        }
    }

    /// Opens (or creates) on a thread; the study is used only once that succeeded.
    fn check(&mut self, ctx: &egui::Context, path: PathBuf, create: bool) {
        self.message = None;
        self.checking.start(ctx, move || {
            if create {
                Study::create(&path)?;
            } else {
                Study::open(&path)?;
            }
            Ok(path)
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recent_studies_survive_a_restart_most_recent_first() {
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("prefs.json");
        let a = dir.path().join("a.plumb");
        let b = dir.path().join("b.plumb");
        std::fs::write(&a, b"").unwrap();
        let mut prefs = Prefs::load(Some(file.clone()));
        prefs.remember_study(&a);
        prefs.remember_study(&b);
        prefs.remember_study(&a);
        let again = Prefs::load(Some(file));
        assert_eq!(again.recent, vec![a.clone(), b]);
        // b does not exist on disk, a does.
        assert_eq!(again.last_study(), Some(a.clone()));
    }

    /// Once the list is full, keeping the same choices again writes nothing.
    #[test]
    fn a_full_scoreboard_list_is_written_only_when_it_changes() {
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("prefs.json");
        let mut prefs = Prefs::load(Some(file.clone()));
        let choices = ScoreboardChoices {
            settings: ScoreSettings::default(),
            focus_k: 10,
        };
        for i in 0..=RECENT_LIMIT * 5 {
            prefs.remember_scoreboard(&dir.path().join(format!("s{i}.plumb")), &choices);
        }
        let last = dir.path().join(format!("s{}.plumb", RECENT_LIMIT * 5));
        assert!(
            prefs
                .scoreboard
                .iter()
                .any(|(p, _)| p.ends_with(last.file_name().unwrap()))
        );
        std::fs::remove_file(&file).unwrap();
        prefs.remember_scoreboard(&last, &choices);
        prefs.remember_study(&last);
        prefs.remember_study(&last);
        std::fs::remove_file(&file).unwrap();
        prefs.remember_study(&last);
        assert!(!file.exists(), "an unchanged list was written again");
        prefs.remember_scoreboard(&last, &choices);
        assert!(!file.exists(), "unchanged choices were written again");
    }

    #[test]
    fn an_instant_empty_answer_means_no_dialog_and_a_slow_one_a_cancel() {
        assert_eq!(ask(async { None::<u8> }), Asked::Unavailable);
        assert_eq!(ask(async { Some(3u8) }), Asked::Chosen(3));
        let slow = async {
            std::thread::sleep(QUICKEST_CANCEL + std::time::Duration::from_millis(50));
            None::<u8>
        };
        assert_eq!(ask(slow), Asked::Cancelled);
    }
}
