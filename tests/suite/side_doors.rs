//! Side doors: no path, copy or value may cost a grade, forge one or destroy the study.
//! Each refusal follows the house rule: exit 2, a message naming the file, and every
//! input byte-identical.

use std::path::{Path, PathBuf};

use crate::cli::{args, plumbline};
use crate::common::{Fixture, file_bytes, study_dump};
use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

pub(crate) fn stderr(out: &std::process::Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

pub(crate) fn os(p: &Path) -> &std::ffi::OsStr {
    p.as_os_str()
}

pub(crate) fn sidecar(path: &Path, suffix: &str) -> PathBuf {
    let mut p = path.as_os_str().to_owned();
    p.push(suffix);
    PathBuf::from(p)
}

/// A study file made by the CLI from the fixture, closed again.
pub(crate) fn cli_study(fixture: &Fixture) -> PathBuf {
    let (path, study) = fixture.study();
    drop(study);
    path
}

// ---- 1. the study is never opened as a picture ----

/// A picture path that names the open study (or its -wal) is refused before anything
/// opens it: closing such a descriptor would drop the locks SQLite relies on (SQLite,
/// "How To Corrupt An SQLite Database File", section 2.2).
#[test]
fn a_picture_path_naming_the_open_study_is_not_a_picture() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    assert!(
        sidecar(&path, "-wal").exists(),
        "the study runs in WAL mode"
    );
    let folder = fixture.dir.path();
    for name in ["s.plumb", "s.plumb-wal", "s.plumb-shm"] {
        let err = plumbline::ui::image_cache::resolve(folder, name)
            .unwrap_err()
            .to_string();
        assert!(err.contains("not a picture"), "{name}: {err}");
    }
    let err = plumbline::ui::image_cache::decode_scaled(&path, 64)
        .unwrap_err()
        .to_string();
    assert!(err.contains("not a picture"), "{err}");
    drop(study);
}

#[test]
fn an_import_naming_the_study_as_a_picture_is_refused_by_line_and_column() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let before = study_dump(&path);
    let items = fixture.write("items2.csv", "item_id,title,image\nz1,Odd,s.plumb\n");
    let out = plumbline(args!["import", os(&path), "--items", os(&items)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("items2.csv:2:3:"), "{}", stderr(&out));
    assert!(stderr(&out).contains("not a picture"), "{}", stderr(&out));
    assert_eq!(study_dump(&path), before);
}

// ---- 2. exports never overwrite a study and never leave half files ----

#[test]
fn an_export_onto_the_study_or_another_study_is_refused() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let other = fixture.path("other.plumb");
    drop(Study::create(&other).unwrap());
    let before = file_bytes(&path);
    let other_before = file_bytes(&other);
    let wal = sidecar(&path, "-wal");
    for (flag, target) in [
        ("--grades", &path),
        ("--scores", &path),
        ("--report", &path),
        ("--scores", &wal),
        ("--grades", &other),
        ("--report", &other),
    ] {
        let out = plumbline(args!["export", os(&path), flag, os(target)]);
        assert_eq!(out.status.code(), Some(2), "{flag} {}", stderr(&out));
        assert!(
            stderr(&out).contains(&target.display().to_string()),
            "the message names the file: {}",
            stderr(&out)
        );
        assert_eq!(file_bytes(&path), before, "{flag} {target:?}");
        assert_eq!(file_bytes(&other), other_before, "{flag} {target:?}");
    }
    // Exports go through a temporary file renamed into place: none is left over.
    let scores = fixture.path("scores.csv");
    let out = plumbline(args!["export", os(&path), "--scores", os(&scores)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let leftovers: Vec<String> = std::fs::read_dir(fixture.dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(plumbline::study::file_guard::TEMP_MARK))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

// ---- 3. links out of the catalog folder, FIFOs and devices ----

#[test]
fn a_picture_linking_outside_the_catalog_or_a_fifo_is_refused_at_import() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let outside = tempfile::tempdir().unwrap();
    std::fs::write(outside.path().join("secret.png"), b"not yours").unwrap();
    std::os::unix::fs::symlink(outside.path().join("secret.png"), fixture.path("link.png"))
        .unwrap();
    let made = std::process::Command::new("mkfifo")
        .arg(fixture.path("pipe.png"))
        .status()
        .unwrap();
    assert!(made.success());
    std::os::unix::fs::symlink("/dev/zero", fixture.path("zero.png")).unwrap();
    for (picture, why) in [
        ("link.png", "outside the catalog folder"),
        ("pipe.png", "not a regular file"),
        ("zero.png", "outside the catalog folder"),
    ] {
        let before = study_dump(&path);
        let items = fixture.write(
            "more.csv",
            &format!("item_id,title,image\nz1,Odd,{picture}\n"),
        );
        let out = plumbline(args!["import", os(&path), "--items", os(&items)]);
        assert_eq!(out.status.code(), Some(2), "{picture}: {}", stderr(&out));
        let message = stderr(&out);
        assert!(message.contains("more.csv:2:3:"), "{message}");
        assert!(message.contains(why), "{picture}: {message}");
        assert_eq!(study_dump(&path), before);
    }
}

/// A one-pixel grey PNG, encoded by the image crate.
fn tiny_png() -> Vec<u8> {
    let mut out = Vec::new();
    image::DynamicImage::new_luma8(1, 1)
        .write_to(&mut std::io::Cursor::new(&mut out), image::ImageFormat::Png)
        .unwrap();
    out
}

#[test]
fn hand_out_copies_no_picture_that_links_out_of_the_catalog() {
    let fixture = Fixture::new();
    std::fs::create_dir_all(fixture.path("images")).unwrap();
    std::fs::write(fixture.path("images/i1.png"), tiny_png()).unwrap();
    let (path, study) = fixture.study();
    drop(study);
    // After the import, the picture is replaced by a link to a file outside.
    let outside = tempfile::tempdir().unwrap();
    std::fs::write(outside.path().join("secret.txt"), b"system file").unwrap();
    std::fs::remove_file(fixture.path("images/i1.png")).unwrap();
    std::os::unix::fs::symlink(
        outside.path().join("secret.txt"),
        fixture.path("images/i1.png"),
    )
    .unwrap();
    let copy = fixture.path("bo.plumb");
    let out = plumbline(args![
        "hand-out",
        os(&path),
        "--reviewer",
        "bo",
        "--out",
        os(&copy)
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(
        !fixture.path("bo-pictures/images/i1.png").exists(),
        "a link out of the catalog was followed"
    );
}

// ---- 4. the catalog folder is stored absolute ----

#[test]
fn a_bare_file_name_stores_an_absolute_catalog_folder() {
    let fixture = Fixture::new();
    std::fs::create_dir_all(fixture.path("images")).unwrap();
    std::fs::write(fixture.path("images/i1.png"), tiny_png()).unwrap();
    let path = fixture.path("bare.plumb");
    drop(Study::create(&path).unwrap());
    let run = |a: &[&str]| {
        std::process::Command::new(env!("CARGO_BIN_EXE_plumbline"))
            .args(a)
            .current_dir(fixture.dir.path())
            .output()
            .unwrap()
    };
    let out = run(&[
        "import",
        "bare.plumb",
        "--items",
        "items.csv",
        "--contexts",
        "contexts.csv",
        "--scales",
        "scales.csv",
        "--rankings",
        "rankings.csv",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    let study = Study::open(&path).unwrap();
    let folder = study.catalog_dir().unwrap().unwrap();
    assert!(folder.is_absolute(), "{folder:?}");
    assert_eq!(
        folder.canonicalize().unwrap(),
        fixture.dir.path().canonicalize().unwrap()
    );
    drop(study);
    let out = run(&[
        "hand-out",
        "bare.plumb",
        "--reviewer",
        "bo",
        "--out",
        "bo.plumb",
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(fixture.path("bo-pictures/images/i1.png").is_file());
}

// ---- 5 and 6. a copy carries only its own hand-out, and no gold answers ----

fn setting(path: &Path, key: &str) -> Option<String> {
    let conn = rusqlite::Connection::open(path).unwrap();
    conn.query_row("SELECT value FROM settings WHERE key = ?1", [key], |r| {
        r.get(0)
    })
    .ok()
}

fn count(path: &Path, sql: &str) -> i64 {
    let conn = rusqlite::Connection::open(path).unwrap();
    conn.query_row(sql, [], |r| r.get(0)).unwrap()
}

#[test]
fn a_copy_edited_to_claim_another_reviewers_hand_out_is_refused() {
    let fixture = Fixture::new();
    let (path, study) = fixture.study();
    let ann_copy = fixture.path("ann.plumb");
    let bo_copy = fixture.path("bo.plumb");
    study.hand_out("bo", &bo_copy).unwrap();
    study.hand_out("ann", &ann_copy).unwrap();
    drop(study);
    // Ann's copy holds no other hand-out's record, and its own secret has 128 bits.
    assert_eq!(
        count(
            &ann_copy,
            "SELECT COUNT(*) FROM settings WHERE key LIKE 'hand_out:%'"
        ),
        0
    );
    let secret = setting(&ann_copy, "copy_id").unwrap();
    assert!(secret.len() >= 32 && secret.chars().all(|c| c.is_ascii_hexdigit()));
    assert_ne!(setting(&bo_copy, "copy_id").unwrap(), secret);
    // Ann edits her copy to pass as Bo's (the name, and her grades in Bo's name).
    let conn = rusqlite::Connection::open(&ann_copy).unwrap();
    conn.execute_batch(
        "INSERT OR IGNORE INTO reviewers(reviewer) VALUES ('bo');
         UPDATE settings SET value = 'bo' WHERE key = 'handed_out_to';
         UPDATE grade_events SET reviewer = 'bo';",
    )
    .unwrap();
    conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
    drop(conn);
    let before = study_dump(&path);
    let copy_before = file_bytes(&ann_copy);
    let out = plumbline(args!["merge", os(&path), os(&ann_copy)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    let message = stderr(&out);
    assert!(message.contains("ann.plumb"), "{message}");
    assert!(message.contains("claims to be bo's"), "{message}");
    assert_eq!(study_dump(&path), before);
    assert_eq!(file_bytes(&ann_copy), copy_before);
    // A guessed secret is refused too.
    let conn = rusqlite::Connection::open(&ann_copy).unwrap();
    conn.execute(
        "UPDATE settings SET value = ?1 WHERE key = 'copy_id'",
        [format!("{:032x}", 7)],
    )
    .unwrap();
    drop(conn);
    let out = plumbline(args!["merge", os(&path), os(&ann_copy)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("never issued"), "{}", stderr(&out));
    assert_eq!(study_dump(&path), before);
    // Bo's own copy still comes home without asking.
    let out = plumbline(args!["merge", os(&path), os(&bo_copy)]);
    assert!(out.status.success(), "{}", stderr(&out));
}

#[test]
fn a_copy_carries_no_gold_levels_or_rationales() {
    let fixture = Fixture::new();
    let gold = fixture.write(
        "gold.csv",
        "context_id,item_id,scale,value,rationale\nq1,i3,fit,0,A sleeping bag is no tent ZQXJ.\n",
    );
    let (path, mut study) = fixture.study();
    let set = ImportSet {
        gold: Some(Source::from_path(&gold).unwrap()),
        ..ImportSet::default()
    };
    import::import(&mut study, &set).unwrap();
    let copy = fixture.path("bo.plumb");
    study.hand_out("bo", &copy).unwrap();
    drop(study);
    assert_eq!(count(&copy, "SELECT COUNT(*) FROM gold_pairs"), 0);
    let bytes = file_bytes(&copy);
    assert!(
        !bytes.windows(4).any(|w| w == b"ZQXJ"),
        "the rationale's text is somewhere in the copy's bytes"
    );
    // At home the gold pair keeps its level.
    assert_eq!(count(&path, "SELECT COUNT(*) FROM gold_pairs"), 1);
}
