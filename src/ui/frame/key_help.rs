//! Keyboard help on `?` or F1: every key of the screen on show, in one small window.

use crate::ui::Screen;

/// The rail's shortcuts for the lead (nobody signed in).
const LEAD_RAIL: (&str, &str) = (
    "Ctrl+1 … Ctrl+7",
    "go to Home, Catalog, Scales, Grading desk, Agreement, Scoreboard, Scale trial",
);

/// The rail's shortcuts while a reviewer is signed in.
const REVIEWER_RAIL: (&str, &str) = ("Ctrl+1 … Ctrl+3", "go to Grading desk, My progress, Rubric");

/// The keys that work everywhere besides the rail's.
const EVERYWHERE: &[(&str, &str)] = &[
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

/// Every key of `screen`: its own first, then the rail's (which depend on whether a
/// reviewer is signed in), then those that work everywhere.
pub fn keys_for(screen: Screen, reviewer_signed_in: bool) -> Vec<(&'static str, &'static str)> {
    let own: &[(&str, &str)] = match screen {
        Screen::Desk => DESK,
        _ => &[],
    };
    let rail = if reviewer_signed_in {
        REVIEWER_RAIL
    } else {
        LEAD_RAIL
    };
    own.iter()
        .copied()
        .chain(std::iter::once(rail))
        .chain(EVERYWHERE.iter().copied())
        .collect()
}

/// Toggles the window on `?` or F1 (not while a text field takes the keys) and draws it.
pub fn show(ctx: &egui::Context, screen: Screen, reviewer_signed_in: bool, open: &mut bool) {
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
                for (keys, what) in keys_for(screen, reviewer_signed_in) {
                    ui.strong(keys);
                    ui.label(what);
                    ui.end_row();
                }
            });
        });
}
