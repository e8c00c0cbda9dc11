//! A read-only study opens read-only, with a banner in the top bar.

use crate::ui_support;

use std::os::unix::fs::PermissionsExt;

use egui_kittest::kittest::Queryable;
use plumbline::ui::Screen;
use ui_support::{harness, step_until};

#[test]
fn a_read_only_study_shows_a_banner() {
    let (_dir, path) = ui_support::demo_copy();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o444)).unwrap();
    let before = std::fs::read(&path).unwrap();
    let mut h = harness(&path, Screen::Home);
    step_until(&mut h, "the read-only banner", |h| {
        h.query_by_label_contains("Read-only").is_some()
    });
    for _ in 0..5 {
        h.step();
    }
    drop(h);
    assert_eq!(
        std::fs::read(&path).unwrap(),
        before,
        "a read-only study is not changed"
    );
}
