//! "Judge the gaps": which unjudged pairs go first, and that they reach the desk first.
//! The priority follows Moffat, Webber & Zobel (2007), SIGIR (targeted judgments): a pair
//! one ranker places at rank 1 and another leaves out can change the comparison far more
//! than a pair both rank low.

use crate::common;

use common::Fixture;
use plumbline::analysis::judged::judgments::GradeSource;
use plumbline::analysis::scoring::gaps::gap_pairs;
use plumbline::study::Study;

/// Two rankers over two contexts. In `solo`, ranker `a` puts `x1` first and `b` never
/// returns it. In `low`, both rankers put `y9` and `y10` at ranks 9 and 10. Every other
/// pair has a grade, so those three pairs are the gaps.
fn two_ranker_study(fixture: &Fixture) -> std::path::PathBuf {
    let mut items = String::from("item_id,title,category\nx1,Solo Lantern,lights\n");
    let mut rankings = String::from("ranker,context_id,item_id,rank\na,solo,x1,1\n");
    let mut grades =
        String::from("reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note\n");
    for n in 1..=10 {
        items.push_str(&format!("y{n},Filler Pot {n},cookware\n"));
        if n <= 8 {
            grades.push_str(&format!(
                "ann,low,y{n},fit,{},,1.0,2026-11-16T09:00:00Z,\n",
                n % 3
            ));
        }
        for ranker in ["a", "b"] {
            rankings.push_str(&format!("{ranker},low,y{n},{n}\n"));
        }
        // In `solo`, ranker a lists y1..y9 after x1; ranker b lists y1..y10. All graded.
        if n <= 9 {
            rankings.push_str(&format!("a,solo,y{n},{}\n", n + 1));
        }
        rankings.push_str(&format!("b,solo,y{n},{n}\n"));
        grades.push_str(&format!(
            "ann,solo,y{n},fit,{},,1.0,2026-11-16T09:00:00Z,\n",
            (n + 1) % 3
        ));
    }
    fixture.write("items.csv", &items);
    fixture.write(
        "contexts.csv",
        "context_id,kind,text\nlow,query,camp cookware\nsolo,query,lantern\n",
    );
    fixture.write("rankings.csv", &rankings);
    fixture.write("grades.csv", &grades);
    let (path, _study) = fixture.study();
    path
}

#[test]
fn a_pair_only_one_ranker_puts_first_leads_pairs_both_rank_low() {
    let fixture = Fixture::new();
    let path = two_ranker_study(&fixture);
    let study = Study::open(&path).unwrap();
    let snapshot = study.snapshot().unwrap();
    let scale = snapshot.scale_index("fit").unwrap();
    let gaps = gap_pairs(&snapshot, scale, &GradeSource::Panel, 10);
    let ids: Vec<(&str, &str)> = gaps
        .iter()
        .map(|g| (g.context_id.as_str(), g.item_id.as_str()))
        .collect();
    assert_eq!(
        ids,
        vec![("solo", "x1"), ("low", "y9"), ("low", "y10")],
        "the solo rank-1 pair first, then the low pairs by rank"
    );
    assert!(gaps[0].spread > gaps[1].spread);
    assert_eq!(gaps[0].best_rank, 1);
    // At k = 9, y10 (rank 10 for both) is outside everyone's top k.
    let at_nine = gap_pairs(&snapshot, scale, &GradeSource::Panel, 9);
    assert!(at_nine.iter().all(|g| g.item_id != "y10"));
}

#[test]
fn queued_gaps_come_first_on_the_desk_and_the_rest_of_the_queue_stays() {
    let fixture = Fixture::new();
    let path = two_ranker_study(&fixture);
    let mut study = Study::open(&path).unwrap();
    let before = study.ensure_queue("ann", "fit").unwrap();
    assert!(!before.is_empty());
    let snapshot = study.snapshot().unwrap();
    let scale = snapshot.scale_index("fit").unwrap();
    let gaps: Vec<(String, String)> = gap_pairs(&snapshot, scale, &GradeSource::Panel, 10)
        .into_iter()
        .map(|g| (g.context_id, g.item_id))
        .collect();
    study.queue_gaps_first("ann", "fit", &gaps).unwrap();
    let after = study.queue("ann", "fit").unwrap();
    assert_eq!(after[..gaps.len()], gaps[..]);
    let mut old: Vec<_> = before.clone();
    old.retain(|p| !gaps.contains(p));
    assert_eq!(after[gaps.len()..], old[..], "the rest keeps its order");
    drop(study);

    // The desk opens on the first gap.
    let (data, _study) = plumbline::ui::desk::load(&path, "ann", None).unwrap();
    let first = data.next_open(0).unwrap();
    let (c, i) = data.queue[first];
    assert_eq!(data.contexts[c as usize].id, "solo");
    assert_eq!(data.items[i as usize].id, "x1");

    // A reviewer new to the panel gets the gaps first, then their share of the pool.
    let mut study = Study::open(&path).unwrap();
    let added = study.queue_gaps_first("newcomer", "fit", &gaps).unwrap();
    assert!(added <= gaps.len());
    let queue = study.queue("newcomer", "fit").unwrap();
    assert_eq!(queue[..gaps.len()], gaps[..]);
}
