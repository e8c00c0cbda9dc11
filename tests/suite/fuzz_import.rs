//! Property-based fuzzing of every CSV importer: arbitrary bytes and CSV-shaped noise
//! must never panic, and every refusal must name file, line and column. CI runs the
//! default case count; `PROPTEST_CASES=20000 cargo test --release --test fuzz_import`
//! runs a longer campaign.

use crate::common;

use plumbline::study::import::{self, ImportSet, Source};
use proptest::prelude::*;

#[derive(Debug, Clone, Copy)]
enum Kind {
    Items,
    Contexts,
    Rankings,
    Scales,
    Grades,
}

const HEADERS: [&str; 5] = [
    "item_id,title,category,price,new,image",
    "context_id,kind,text,anchor_item_id,segment",
    "ranker,context_id,item_id,rank,score",
    "scale,value,label,gain,key",
    "reviewer,context_id,item_id,scale,value,seconds,graded_at",
];

fn kind() -> impl Strategy<Value = Kind> {
    prop_oneof![
        Just(Kind::Items),
        Just(Kind::Contexts),
        Just(Kind::Rankings),
        Just(Kind::Scales),
        Just(Kind::Grades)
    ]
}

/// Cells that look like the real thing, and some that do not.
fn cell() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("q1".to_string()),
        Just("i1".to_string()),
        Just("fit".to_string()),
        Just("query".to_string()),
        Just("2026-11-16T09:00:00Z".to_string()),
        (0u32..5).prop_map(|n| n.to_string()),
        "[a-z0-9 ,\"=.-]{0,8}",
        Just(String::new()),
    ]
}

fn csv_like(k: Kind) -> impl Strategy<Value = Vec<u8>> {
    let header = HEADERS[k as usize].to_string();
    prop::collection::vec(prop::collection::vec(cell(), 1..8), 0..12).prop_map(move |rows| {
        let mut text = header.clone();
        text.push('\n');
        for row in rows {
            text.push_str(&row.join(","));
            text.push('\n');
        }
        text.into_bytes()
    })
}

fn check(kind: Kind, bytes: &[u8]) -> Result<(), TestCaseError> {
    let fixture = common::Fixture::new();
    let (_, mut study) = fixture.study();
    let source = Some(Source::from_bytes(
        "fuzz.csv",
        bytes.to_vec(),
        fixture.dir.path().to_path_buf(),
    ));
    let mut set = ImportSet::default();
    match kind {
        Kind::Items => set.items = source,
        Kind::Contexts => set.contexts = source,
        Kind::Rankings => set.rankings = source,
        Kind::Scales => set.scales = source,
        Kind::Grades => set.grades = source,
    }
    if let Err(e) = import::import(&mut study, &set) {
        prop_assert!(e.is_bad_input(), "{e}");
        let first = e.to_string();
        let first = first.lines().next().unwrap_or_default().to_string();
        let mut parts = first.splitn(4, ':');
        prop_assert_eq!(parts.next(), Some("fuzz.csv"));
        let line: u64 = parts
            .next()
            .unwrap_or("x")
            .parse()
            .map_err(|_| TestCaseError::fail(first.clone()))?;
        let column: u64 = parts
            .next()
            .unwrap_or("x")
            .parse()
            .map_err(|_| TestCaseError::fail(first.clone()))?;
        prop_assert!(line >= 1 && column >= 1, "{}", first);
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_bytes_never_panic(k in kind(), bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        check(k, &bytes)?;
    }

    #[test]
    fn csv_shaped_noise_never_panics(k in kind(), bytes in kind().prop_flat_map(csv_like)) {
        check(k, &bytes)?;
    }
}
