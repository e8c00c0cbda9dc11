//! A read-only study opens read-only, with a banner in the top bar and the desk closed.

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

/// A read-only study takes no grade it could not save: the desk says it is closed.
#[test]
fn the_desk_is_closed_on_a_read_only_study() {
    let (_dir, path) = ui_support::demo_copy();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o444)).unwrap();
    let before = std::fs::read(&path).unwrap();
    let mut h = harness(&path, Screen::Desk);
    step_until(&mut h, "the sign-in list", |h| {
        h.query_by_label("Sign in as rev-amber").is_some()
    });
    h.get_by_label("Sign in as rev-amber").click();
    step_until(&mut h, "the closed desk", |h| {
        h.query_by_label_contains("the desk is closed").is_some()
    });
    assert!(h.state().desk.current().is_none(), "no card is offered");
    drop(h);
    assert_eq!(std::fs::read(&path).unwrap(), before);
}
