//! A read-only study opens read-only, with a banner in the top bar.

use std::os::unix::fs::PermissionsExt;
use std::time::{Duration, Instant};

use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use plumbline::cli::ScreenName;
use plumbline::ui::Workbench;

#[test]
fn a_read_only_study_shows_a_banner() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("demo.plumb");
    plumbline::demo::build_demo_study(&path).unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o444)).unwrap();
    let before = std::fs::read(&path).unwrap();
    let mut h: Harness<'static, Workbench> = Harness::builder()
        .with_size([1360.0, 860.0])
        .build_ui_state(
            |ui, wb: &mut Workbench| wb.show(ui),
            Workbench::new(path.clone(), ScreenName::Home),
        );
    let start = Instant::now();
    while h.query_by_label_contains("Read-only").is_none() {
        assert!(
            start.elapsed() < Duration::from_secs(20),
            "no read-only banner"
        );
        h.step();
        std::thread::sleep(Duration::from_millis(5));
    }
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
