//! Keyboard help on `?` or F1: every key of the screen on show, in one small window.

use super::Screen;

/// The keys that work everywhere.
const EVERYWHERE: &[(&str, &str)] = &[
    (
        "Ctrl+1 … Ctrl+7",
        "go to Home, Catalog, Scales, Grading desk, Agreement, Scoreboard, Scale trial",
    ),
    ("Ctrl+O", "open or create another study"),
    ("? or F1", "show or hide this list"),
    ("Tab / Shift+Tab", "move between fields and buttons"),
    ("Enter or Space", "press the focused button"),
];

/// The grading desk's own keys (a scale's level keys are on its level buttons).
const DESK: &[(&str, &str)] = &[
    (
        "the level's key (0, 1, 2… or the scale's own)",
        "grade the card at that level and show the next",
    ),
    (
        "C",
        "can't judge: then I (image missing), Q (query unclear) or O (other, type why)",
    ),
    ("Esc", "close the can't-judge choice"),
    ("S or Right arrow", "skip to the next ungraded card"),
    ("B or Left arrow", "back to the card before"),
    ("Backspace or Ctrl+Z", "undo the last grade of this session"),
    ("N", "write a note on this card"),
];

/// Every key of `screen`: its own first, then those that work everywhere.
pub fn keys_for(screen: Screen) -> Vec<(&'static str, &'static str)> {
    let own: &[(&str, &str)] = match screen {
        Screen::Desk => DESK,
        _ => &[],
    };
    own.iter().chain(EVERYWHERE).copied().collect()
}

/// Toggles the window on `?` or F1 (not while a text field takes the keys) and draws it.
pub fn show(ctx: &egui::Context, screen: Screen, open: &mut bool) {
    let typing = ctx.egui_wants_keyboard_input();
    let pressed = ctx.input_mut(|i| {
        i.consume_key(egui::Modifiers::NONE, egui::Key::F1)
            || (!typing
                && (i.consume_key(egui::Modifiers::NONE, egui::Key::Questionmark)
                    || i.consume_key(egui::Modifiers::SHIFT, egui::Key::Questionmark)))
    });
    if pressed {
        *open = !*open;
    }
    egui::Window::new("Keys on this screen")
        .open(open)
        .collapsible(false)
        .resizable(false)
        .show(ctx, |ui| {
            egui::Grid::new("key_help").striped(true).show(ui, |ui| {
                for (keys, what) in keys_for(screen) {
                    ui.strong(keys);
                    ui.label(what);
                    ui.end_row();
                }
            });
        });
}
