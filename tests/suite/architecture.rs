//! The layers as DEVELOPERS.md draws them, held by a test: `core` and `analysis` stay free
//! of the window and the database, nothing but the binary names the CLI, the screens keep
//! no stringly errors, and every source file can be read in one sitting.

use std::path::{Path, PathBuf};

fn rust_files(dir: &Path) -> Vec<PathBuf> {
    let mut files = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            files.extend(rust_files(&path));
        } else if path.extension().is_some_and(|e| e == "rs") {
            files.push(path);
        }
    }
    files.sort();
    files
}

fn src(sub: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("src").join(sub)
}

/// Lines of code, with `//` comments dropped so a doc comment may name a layer.
fn code_lines(path: &Path) -> Vec<(usize, String)> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .enumerate()
        .map(|(n, l)| (n + 1, l.split("//").next().unwrap_or("").to_string()))
        .collect()
}

fn offenders(dirs: &[&str], names: &[&str]) -> Vec<String> {
    let mut found = Vec::new();
    for dir in dirs {
        let files = rust_files(&src(dir));
        assert!(!files.is_empty(), "no files under src/{dir}");
        for file in files {
            for (n, line) in code_lines(&file) {
                for name in names {
                    if line.contains(name) {
                        found.push(format!("{}:{n}: {}", file.display(), line.trim()));
                    }
                }
            }
        }
    }
    found
}

#[test]
fn core_and_analysis_name_neither_the_window_nor_the_database() {
    let found = offenders(
        &["core", "analysis"],
        &["egui", "eframe", "rusqlite", "rfd::"],
    );
    assert!(found.is_empty(), "{found:#?}");
}

#[test]
fn only_the_binary_names_the_command_line() {
    let mut found = Vec::new();
    for dir in ["core", "analysis", "study", "ui", "demo"] {
        found.extend(offenders(&[dir], &["crate::cli", "plumbline::cli"]));
    }
    assert!(found.is_empty(), "{found:#?}");
}

#[test]
fn screens_carry_typed_errors_not_strings() {
    let found = offenders(&["ui"], &[", String>"]);
    assert!(found.is_empty(), "{found:#?}");
}

#[test]
fn every_source_file_reads_in_one_sitting() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut long = Vec::new();
    for dir in ["src", "tests"] {
        for file in rust_files(&root.join(dir)) {
            let lines = std::fs::read_to_string(&file).unwrap().lines().count();
            if lines > 600 {
                long.push(format!("{}: {lines} lines", file.display()));
            }
        }
    }
    assert!(long.is_empty(), "over 600 lines: {long:#?}");
}

/// The checks above must be able to fail: a line that names the database is caught.
#[test]
fn the_layer_check_sees_a_forbidden_name() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("x.rs");
    std::fs::write(
        &file,
        "// rusqlite in a comment is fine\nuse rusqlite::Connection;\n",
    )
    .unwrap();
    let lines = code_lines(&file);
    let hits: Vec<_> = lines
        .iter()
        .filter(|(_, l)| l.contains("rusqlite"))
        .collect();
    assert_eq!(hits.len(), 1);
    assert_eq!(hits[0].0, 2);
}

/// `analysis/` is grouped in rooms with arrows one way: a room names only the leaves,
/// itself and the rooms before it, so models never import their renderings (output) or
/// the screens' view models (views), and no two rooms import each other.
#[test]
fn analysis_rooms_import_one_way() {
    const LEAVES: [&str; 4] = ["cautions", "colours", "defaults", "format"];
    const ROOMS: [&str; 5] = ["judged", "agreement", "scoring", "views", "output"];
    let analysis = src("analysis");
    let mut found = Vec::new();
    for file in rust_files(&analysis) {
        let relative = file.strip_prefix(&analysis).unwrap();
        let first = relative
            .iter()
            .next()
            .unwrap()
            .to_string_lossy()
            .to_string();
        let room = first.trim_end_matches(".rs").to_string();
        let allowed: Vec<&str> = match ROOMS.iter().position(|r| *r == room) {
            Some(at) => ROOMS[..=at].to_vec(),
            None => Vec::new(),
        };
        for (n, line) in code_lines(&file) {
            for (other_at, other) in ROOMS.iter().enumerate() {
                let named = line.contains(&format!("analysis::{other}"));
                if named && !allowed.contains(other) {
                    found.push(format!(
                        "{}:{n}: {} (room {other_at})",
                        file.display(),
                        line.trim()
                    ));
                }
            }
        }
        if LEAVES.contains(&room.as_str()) || room == "mod" {
            continue;
        }
        assert!(
            ROOMS.contains(&room.as_str()),
            "{} sits flat in analysis/: give it a room",
            file.display()
        );
    }
    assert!(found.is_empty(), "imports against the arrows: {found:#?}");
}

/// No more than ten files sit flat in `src/ui`; the rest live in one folder per screen.
#[test]
fn the_screens_sit_in_folders() {
    let flat: Vec<_> = std::fs::read_dir(src("ui"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "rs"))
        .collect();
    assert!(
        flat.len() <= 10,
        "{} files flat in src/ui: {flat:#?}",
        flat.len()
    );
}

/// Lengths of the functions of one file: from the `fn` line to the closing brace at the
/// same indentation (rustfmt's layout), so strings and comments inside do not matter.
fn function_lengths(path: &Path) -> Vec<(String, usize, usize)> {
    let lines: Vec<String> = std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .map(str::to_string)
        .collect();
    let mut found = Vec::new();
    for (start, line) in lines.iter().enumerate() {
        let body = line.trim_start();
        let indent = &line[..line.len() - body.len()];
        let signature = body
            .trim_start_matches("pub ")
            .trim_start_matches("pub(crate) ")
            .trim_start_matches("pub(super) ")
            .trim_start_matches("const ")
            .trim_start_matches("async ");
        let Some(rest) = signature.strip_prefix("fn ") else {
            continue;
        };
        let name: String = rest
            .chars()
            .take_while(|c| c.is_alphanumeric() || *c == '_')
            .collect();
        let closing = format!("{indent}}}");
        if let Some(end) = lines[start..].iter().position(|l| *l == closing) {
            let declaration_only = lines[start..start + end].iter().any(|l| l.ends_with(';'))
                && !lines[start..start + end].iter().any(|l| l.ends_with('{'));
            if !declaration_only {
                found.push((name, start + 1, end + 1));
            }
        }
    }
    found
}

/// No function in `src` is longer than 80 lines, so each reads in one sitting.
#[test]
fn every_function_reads_in_one_sitting() {
    let mut long = Vec::new();
    for file in rust_files(&src("")) {
        for (name, line, length) in function_lengths(&file) {
            if length > 80 {
                long.push(format!("{}:{line} {name}: {length} lines", file.display()));
            }
        }
    }
    assert!(long.is_empty(), "functions over 80 lines: {long:#?}");
}

/// The length check counts a function to its own closing brace, not a nested one.
#[test]
fn the_length_check_counts_to_the_functions_own_brace() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("x.rs");
    let mut text = String::from("pub fn long() {\n    let s = \"}\n}\";\n    if true {\n    }\n");
    text.push_str(&"    let _ = 1;\n".repeat(80));
    text.push_str("}\n\nfn short() {}\n");
    std::fs::write(&file, text).unwrap();
    let lengths = function_lengths(&file);
    assert_eq!(lengths, vec![("long".to_string(), 1, 86)]);
}
