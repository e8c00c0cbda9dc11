//! The CLI's outputs on the demo study, byte for byte, against the copies committed in
//! `tests/golden/` (made by `tests/golden/regenerate.sh` from `cases.txt`). A refactor must
//! leave every one unchanged; an intended change regenerates them in the same commit.

use std::path::Path;
use std::process::Command;

struct Case {
    name: String,
    args: Vec<String>,
    /// The file the run writes, kept instead of its stdout.
    written: Option<String>,
}

fn cases(golden: &Path) -> Vec<Case> {
    let text = std::fs::read_to_string(golden.join("cases.txt")).expect("cases.txt");
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|line| {
            let mut parts = line.split('\t');
            let name = parts.next().expect("name").to_string();
            let args = parts
                .next()
                .expect("arguments")
                .split_whitespace()
                .map(str::to_string)
                .collect();
            let written = parts.next().map(|k| k.trim_start_matches("> ").to_string());
            Case {
                name,
                args,
                written,
            }
        })
        .collect()
}

#[test]
fn cli_outputs_on_the_demo_match() {
    let golden = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden");
    let scratch = tempfile::tempdir().unwrap();
    let study = scratch.path().join("demo.plumb");
    let bin = env!("CARGO_BIN_EXE_plumbline");
    let made = Command::new(bin)
        .args(["demo", "--out"])
        .arg(&study)
        .output()
        .unwrap();
    assert!(made.status.success(), "demo: {made:?}");
    let cases = cases(&golden);
    assert!(cases.len() >= 15, "cases.txt lists {} runs", cases.len());
    let mut differ = Vec::new();
    for case in &cases {
        let args: Vec<String> = case
            .args
            .iter()
            .map(|a| {
                a.replace("STUDY", &study.display().to_string())
                    .replace("OUT", &scratch.path().display().to_string())
            })
            .collect();
        let out = Command::new(bin).args(&args).output().unwrap();
        assert!(out.status.success(), "{}: {out:?}", case.name);
        let got = match &case.written {
            Some(file) => std::fs::read(scratch.path().join(file)).unwrap(),
            None => out.stdout,
        };
        let want = std::fs::read(golden.join(format!("{}.out", case.name))).unwrap();
        if got != want {
            std::fs::write(scratch.path().join(format!("{}.got", case.name)), &got).unwrap();
            differ.push(case.name.clone());
        }
    }
    assert!(
        differ.is_empty(),
        "outputs differ from tests/golden: {differ:?} (kept in {})",
        scratch.keep().display()
    );
}
