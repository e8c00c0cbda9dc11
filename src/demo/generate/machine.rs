//! The demo's machine judge: an invented automatic grader that graded every pooled pair
//! on fit4 in one run, with a bias of its own (not a copy of the panel): it sees the
//! hidden relevance through its own noise, rates anchor contexts ("more like this") too
//! generously and tail queries a little strictly.

use super::{Csv, Ctx, Item, Rng, level, timestamp};

/// The machine judge's name in the demo study.
pub(crate) const MACHINE_JUDGE: &str = "judge-sorrel";

/// How far the machine judge's view is lifted on anchor contexts.
const ANCHOR_LIFT: f64 = 0.7;
/// How far it is lowered on tail queries.
const TAIL_DROP: f64 = 0.35;
/// Its own noise (the people's is smaller).
const NOISE: f64 = 0.3;

/// grades.csv rows (with `kind` = `machine`) for every pooled pair, in pool order;
/// graded on the Friday after the people's week, one second apart.
pub(super) fn machine_grades_csv(
    pairs: &[(usize, usize)],
    ctxs: &[Ctx],
    items: &[Item],
    util: &[Vec<f64>],
    rng: &mut Rng,
) -> String {
    let mut csv = Csv::new("reviewer,kind,context_id,item_id,scale,value,seconds,graded_at");
    let start = 4 * 86_400 + 20 * 3600;
    for (k, &(c, i)) in pairs.iter().enumerate() {
        let lift = match (ctxs[c].anchor, ctxs[c].segment) {
            (Some(_), _) => ANCHOR_LIFT,
            (None, "tail") => -TAIL_DROP,
            _ => 0.0,
        };
        let value = level(util[c][i] + lift + NOISE * rng.normal());
        csv.row(&[
            MACHINE_JUDGE,
            "machine",
            &ctxs[c].id,
            &items[i].id,
            "fit4",
            &value.to_string(),
            "0.4",
            &timestamp(start + k as u32),
        ]);
    }
    csv.0
}
