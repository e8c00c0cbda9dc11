//! Side doors, continued: numbers at the edges, read-only folders, leftovers of killed
//! runs, messages, and formulas in the CSV the program writes.

use crate::cli::{args, plumbline};
use crate::common::{Fixture, file_bytes, study_dump};
use crate::side_doors::{cli_study, os, sidecar, stderr};

// ---- 11. -0 and 0 are one score ----

/// The written tie rule (README, rankings.csv): higher score first, ties by item id
/// ascending. IEEE 754 (2019), section 5.11: -0 and +0 compare equal.
#[test]
fn minus_zero_and_zero_tie_and_break_by_item_id() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let rankings = fixture.write(
        "scored.csv",
        "ranker,context_id,item_id,score\nz,q1,i3,0\nz,q1,i1,-0\nz,q1,i2,-0.0\nz,q1,i4,0.0\n",
    );
    let out = plumbline(args!["import", os(&path), "--rankings", os(&rankings)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let conn = rusqlite::Connection::open(&path).unwrap();
    let order: Vec<String> = conn
        .prepare("SELECT item_id FROM ranked_items WHERE ranker = 'z' AND context_id = 'q1' ORDER BY rank")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .map(Result::unwrap)
        .collect();
    assert_eq!(order, ["i1", "i2", "i3", "i4"]);
    // And Kendall's tau-b (Kendall 1945) counts -0 and 0 as a tie.
    let tau = plumbline::core::stats::kendall_tau_b(&[0.0, -0.0, 1.0], &[1.0, 2.0, 3.0]);
    // Pairs: (1,2) tied in x; (1,3), (2,3) concordant → tau-b = 2 / sqrt(2 × 3).
    assert!((tau - 2.0 / 6f64.sqrt()).abs() < 1e-12, "{tau}");
}

// ---- 12. gains the program cannot use ----

#[test]
fn a_gain_too_large_to_use_is_refused_when_entered() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let before = study_dump(&path);
    let scales = fixture.write(
        "huge.csv",
        "scale,value,label,gain\nhuge,0,No,0\nhuge,1,Yes,1e308\n",
    );
    let out = plumbline(args!["import", os(&path), "--scales", os(&scales)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("huge.csv:3:4:"), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("largest usable gain"),
        "{}",
        stderr(&out)
    );
    assert_eq!(study_dump(&path), before);
}

// ---- 13. read-only folders ----

#[test]
fn a_study_in_a_read_only_folder_reads_and_refuses_writes_by_name() {
    use std::os::unix::fs::PermissionsExt;
    let fixture = Fixture::new();
    let folder = fixture.path("shelf");
    std::fs::create_dir(&folder).unwrap();
    let path = folder.join("s.plumb");
    std::fs::copy(cli_study(&fixture), &path).unwrap();
    let before = file_bytes(&path);
    std::fs::set_permissions(&folder, std::fs::Permissions::from_mode(0o555)).unwrap();
    for command in [&["score"][..], &["agree"], &["trial"], &["status"]] {
        let mut a: Vec<&std::ffi::OsStr> = command.iter().map(std::ffi::OsStr::new).collect();
        a.push(os(&path));
        let out = plumbline(&a);
        assert!(out.status.success(), "{command:?}: {}", stderr(&out));
    }
    let view = plumbline(args!["view", "home", os(&path)]);
    assert!(view.status.success(), "{}", stderr(&view));
    let out_csv = fixture.path("scores.csv");
    let out = plumbline(args!["export", os(&path), "--scores", os(&out_csv)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let grades = fixture.path("grades.csv");
    let out = plumbline(args!["import", os(&path), "--grades", os(&grades)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("the study is read-only"),
        "{}",
        stderr(&out)
    );
    assert!(stderr(&out).contains("s.plumb"), "{}", stderr(&out));
    let leftovers: Vec<_> = std::fs::read_dir(&folder).unwrap().collect();
    assert_eq!(
        leftovers.len(),
        1,
        "nothing is created beside a read-only study"
    );
    assert_eq!(file_bytes(&path), before);
    // Writable again: nothing left behind blocks writing.
    std::fs::set_permissions(&folder, std::fs::Permissions::from_mode(0o755)).unwrap();
    let out = plumbline(args!["import", os(&path), "--grades", os(&grades)]);
    assert!(out.status.success(), "{}", stderr(&out));
}

/// A read-only study file opened by an older build could leave a read-only `-shm`
/// beside it; once the study is writable again it must not block writing.
#[test]
fn a_read_only_leftover_shm_does_not_block_writing() {
    use std::os::unix::fs::PermissionsExt;
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let shm = sidecar(&path, "-shm");
    std::fs::write(&shm, vec![0u8; 32768]).unwrap();
    std::fs::set_permissions(&shm, std::fs::Permissions::from_mode(0o444)).unwrap();
    let grades = fixture.path("grades.csv");
    let out = plumbline(args!["import", os(&path), "--grades", os(&grades)]);
    assert!(out.status.success(), "{}", stderr(&out));
}

// ---- 14. stale temporary files ----

#[test]
fn the_next_command_removes_a_killed_runs_temporary_files() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let stale = fixture.path(&format!(
        "{}999999999-0000000000000000-scores.csv",
        plumbline::study::file_guard::TEMP_MARK
    ));
    std::fs::write(&stale, vec![b'x'; 4096]).unwrap();
    let out = plumbline(args![
        "import",
        os(&path),
        "--grades",
        os(&fixture.path("grades.csv"))
    ]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(!stale.exists(), "the stale temporary file is still there");
}

// ---- 15. messages ----

#[test]
fn a_utf16_file_is_named_as_utf16() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let text = "item_id,title\nz1,Odd\n";
    let mut le: Vec<u8> = vec![0xFF, 0xFE];
    le.extend(text.encode_utf16().flat_map(u16::to_le_bytes));
    let no_bom: Vec<u8> = text.encode_utf16().flat_map(u16::to_le_bytes).collect();
    for bytes in [le, no_bom] {
        let items = fixture.path("wide.csv");
        std::fs::write(&items, bytes).unwrap();
        let out = plumbline(args!["import", os(&path), "--items", os(&items)]);
        assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
        assert!(stderr(&out).contains("UTF-16"), "{}", stderr(&out));
        assert!(!stderr(&out).contains("NUL"), "{}", stderr(&out));
    }
}

#[test]
fn lf_cr_line_ends_keep_line_numbers() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let items = fixture.write("lfcr.csv", "item_id,title,price\n\rz1,A,1\n\rz2,B,x\n\r");
    let out = plumbline(args!["import", os(&path), "--items", os(&items)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("lfcr.csv:3:3:"), "{}", stderr(&out));
}

/// Unicode Standard Annex #15: "é" as one code point (U+00E9) and as "e" + U+0301 are
/// canonically equivalent (both normalise to NFC U+00E9).
#[test]
fn ids_equal_after_nfc_are_refused_naming_both_lines() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let before = study_dump(&path);
    let items = fixture.write(
        "nfc.csv",
        "item_id,title\ncaf\u{e9},One\nother,Two\ncafe\u{301},Three\n",
    );
    let out = plumbline(args!["import", os(&path), "--items", os(&items)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    let message = stderr(&out);
    assert!(message.contains("nfc.csv:4:1:"), "{message}");
    assert!(message.contains("line 2"), "{message}");
    assert_eq!(study_dump(&path), before);
}

#[test]
fn escape_sequences_in_names_are_printed_escaped() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let rankings = fixture.write(
        "esc.csv",
        "ranker,context_id,item_id,rank\n\u{1b}[31mred\u{202e},q1,nope,1\n",
    );
    let out = plumbline(args!["import", os(&path), "--rankings", os(&rankings)]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    let message = stderr(&out);
    assert!(!message.contains('\u{1b}'), "{message:?}");
    assert!(!message.contains('\u{202e}'), "{message:?}");
    let scored = fixture.write(
        "esc-ok.csv",
        "ranker,context_id,item_id,rank\n\u{1b}[31mred\u{202e},q1,i1,1\n",
    );
    let out = plumbline(args!["import", os(&path), "--rankings", os(&scored)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let text = plumbline(args!["score", os(&path)]);
    let shown = String::from_utf8_lossy(&text.stdout);
    assert!(
        !shown.contains('\u{1b}') && !shown.contains('\u{202e}'),
        "{shown:?}"
    );
    assert!(shown.contains("\\u{1b}[31mred\\u{202e}"), "{shown}");
    // JSON keeps the exact text.
    let json = plumbline(args!["score", os(&path), "--format", "json"]);
    let value: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let names: Vec<&str> = value["rankers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["ranker"].as_str().unwrap())
        .collect();
    assert!(names.contains(&"\u{1b}[31mred\u{202e}"), "{names:?}");
}

// ---- 16. formulas in every CSV the program writes ----

#[test]
fn every_csv_output_guards_formulas_and_keeps_numbers() {
    let fixture = Fixture::new();
    let path = cli_study(&fixture);
    let rankings = fixture.write(
        "formula.csv",
        "ranker,context_id,item_id,rank\n=2+3,q1,i2,1\n=2+3,q1,i1,2\n=2+3,q2,i3,1\n",
    );
    let out = plumbline(args!["import", os(&path), "--rankings", os(&rankings)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let grades = fixture.write(
        "g.csv",
        "reviewer,context_id,item_id,scale,value,graded_at\n@bo,q1,i1,fit,2,2026-11-16T11:00:00Z\n@bo,q1,i2,fit,1,2026-11-16T11:00:01Z\n",
    );
    let out = plumbline(args!["import", os(&path), "--grades", os(&grades)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let outputs = [
        plumbline(args![
            "score",
            os(&path),
            "--format",
            "csv",
            "--baseline",
            "=2+3"
        ]),
        plumbline(args!["agree", os(&path), "--format", "csv"]),
        plumbline(args!["status", os(&path), "--format", "csv"]),
    ];
    for out in &outputs {
        assert!(out.status.success(), "{}", stderr(out));
        let text = String::from_utf8_lossy(&out.stdout);
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        for record in reader.records() {
            for cell in record.unwrap().iter() {
                let starts_formula = cell.trim_start().starts_with(['=', '+', '@']);
                assert!(!starts_formula, "unguarded cell {cell:?} in\n{text}");
                if cell.starts_with('-') {
                    assert!(cell.parse::<f64>().is_ok(), "{cell:?}");
                }
            }
        }
    }
    let score = String::from_utf8_lossy(&outputs[0].stdout);
    assert!(score.contains("'=2+3"), "{score}");
    let agree = String::from_utf8_lossy(&outputs[1].stdout);
    assert!(agree.contains("'@bo"), "{agree}");
}
