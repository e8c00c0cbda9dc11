//! The demo catalog's README, written from the generated data so every count in it is
//! true of the files beside it.

use super::{Ctx, Grade, Item, LIST_DEPTH, POOL_DEPTH, Plan, RANKERS, REVIEWERS};
use crate::demo::words::CATS;

/// Catalog README; every count is computed from the generated data.
pub(super) fn readme(
    items: &[Item],
    ctxs: &[Ctx],
    grades: &[Grade],
    pairs: usize,
    plan: &Plan,
) -> String {
    [
        how_it_was_made(),
        counts(items, ctxs, grades, pairs, plan),
        files(),
    ]
    .concat()
}

/// The title, what is invented, and how the generator made the data.
fn how_it_was_made() -> String {
    format!(
        r#"# Fennel Hollow Outfitters demo catalog

Everything in this folder is invented for the Plumbline demo: the shop, its items, the search
queries, the rankers, the reviewers and their grades. No real shop, brand, product or person is
described, and the pictures are simple shapes drawn by the generator.

## How it was made

- Items are assembled from word lists and random attributes (weight, price, capacity, feature tags).
- Every context/item pair gets a hidden relevance on a 0-3 scale from category, capacity and feature
  overlap with the query (or similarity to the anchor item), plus noise. Most pairs are irrelevant.
- Each ranker orders all items by that hidden relevance seen through noise. `lexical-prod` pushes new
  items down (they have no interaction history); `embed-cand` is noisier but ignores item age;
  `hybrid-cand` is slightly sharper and does not penalise new items.
- The judging pool is the union of the three rankers' top {POOL_DEPTH} per context. Reviewers see the hidden
  relevance through their own noise; rev-cedar is systematically a little stricter. The binary pilot
  grade is "useful" when the reviewer's own fit4 view is at least 2.
- A machine judge, `{machine}`, graded every pooled pair on fit4 in one run. It sees the hidden
  relevance through more noise than the people, rates anchor contexts too generously and tail
  queries a little strictly: a bias of its own, not a copy of the panel. Building the demo study
  draws a human sample of {sample} contexts with a fixed seed, so `plumbline score --machine
  {machine}` shows estimates on first run.
- A fixed seed (ChaCha8) drives everything, so regenerating gives byte-identical files.

"#,
        machine = super::MACHINE_JUDGE,
        sample = crate::demo::DEMO_SAMPLE_CONTEXTS,
    )
}

/// The table of counts, each computed from the generated data.
fn counts(items: &[Item], ctxs: &[Ctx], grades: &[Grade], pairs: usize, plan: &Plan) -> String {
    let seg = |name: &str| ctxs.iter().filter(|c| c.segment == name).count();
    let queries = ctxs.iter().filter(|c| c.anchor.is_none()).count();
    let fit4 = grades.iter().filter(|g| !g.useful2).count();
    let rankers = RANKERS
        .iter()
        .map(|r| format!("`{}`", r.name))
        .collect::<Vec<_>>()
        .join(", ");
    format!(
        r#"## Counts

| what | count |
| --- | --- |
| items | {items} |
| new items | {new} |
| categories | {cats} |
| query contexts (head / torso / tail) | {queries} ({head} / {torso} / {tail}) |
| anchor contexts | {anchors} |
| rankers | {rankers} |
| ranked list depth | {LIST_DEPTH} |
| pooled pairs | {pairs} |
| reviewers | {reviewers} |
| machine judges | 1 |
| machine judge grades (fit4) | {pairs} |
| human sample drawn by the demo study | {sample} contexts |
| fit4 grades | {fit4} |
| useful2 grades | {useful2} |
| pairs graded by all three reviewers | {overlap} ({share:.1} %) |
| pilot pairs on useful2 (taken from the shared pairs) | {pilot} |
| can't-judge grades | {cj} |
| images | {items} |

"#,
        items = items.len(),
        new = items.iter().filter(|i| i.new).count(),
        cats = CATS.len(),
        head = seg("head"),
        torso = seg("torso"),
        tail = seg("tail"),
        anchors = ctxs.len() - queries,
        reviewers = REVIEWERS.len(),
        sample = crate::demo::DEMO_SAMPLE_CONTEXTS,
        useful2 = grades.len() - fit4,
        overlap = plan.overlap,
        share = 100.0 * plan.overlap as f64 / pairs as f64,
        pilot = plan.pilot,
        cj = plan.cant_judge.len(),
    )
}

/// What each file beside the README holds.
fn files() -> String {
    format!(
        r#"## Files

- `items.csv`: the catalog; `image` is relative to this folder.
- `contexts.csv`: search queries and anchor items ("similar items" placements).
- `rankings.csv`: top {LIST_DEPTH} per ranker and context, rank 1-based.
- `scales.csv`: the `fit4` and `useful2` grading scales with rubrics.
- `grades.csv`: one row per reviewer grade; an empty value is a can't-judge verdict with a reason.
- `machine-grades.csv`: the machine judge's grades, with `kind` = `machine`.
"#
    )
}
