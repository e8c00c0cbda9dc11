//! Which unjudged pairs to grade first so the comparison of rankers can move the most.
//!
//! A pair matters to a comparison in proportion to how differently the rankers place it:
//! an item one ranker puts at rank 1 and another leaves out entirely decides much of the
//! difference between them, while an item both place at rank 9 barely moves it. This is
//! the idea of targeted judgments in Moffat, Webber & Zobel (2007), SIGIR, here with the
//! DCG discount 1/log2(rank + 1) as the weight of a rank (0 beyond the cut-off).

use super::metrics::discount;

/// One unjudged pair with what decides its place in the queue.
#[derive(Debug, Clone, PartialEq)]
pub struct Gap<C, I> {
    /// The context in which the item has no grade yet.
    pub context: C,
    /// The item that has no grade in this context.
    pub item: I,
    /// Largest minus smallest rank weight over the rankers (0 = placed alike everywhere).
    pub spread: f64,
    /// Best (smallest) rank any ranker gives the item within the cut-off.
    pub best_rank: usize,
}

/// The weight a ranked list gives `item` at cut-off `k`: the rank discount, or 0 when the
/// item is absent or below k.
fn weight<I: PartialEq>(list: &[I], item: &I, k: usize) -> f64 {
    list.iter()
        .take(k)
        .position(|i| i == item)
        .map_or(0.0, |at| discount(at + 1))
}

/// Orders the unjudged pairs found in any ranker's top `k`.
///
/// `contexts` holds, per context, every ranker's list in rank order (same ranker order in
/// every context; an empty list when a ranker returned nothing). `judged` says whether a
/// pair already has a grade. Pairs come out by spread (largest first), then best rank,
/// then context and item, so the order is stable.
pub fn order_gaps<C: Clone + Ord, I: Clone + Ord>(
    contexts: &[(C, Vec<Vec<I>>)],
    k: usize,
    judged: impl Fn(&C, &I) -> bool,
) -> Vec<Gap<C, I>> {
    let mut gaps = Vec::new();
    for (context, lists) in contexts {
        let mut seen: Vec<&I> = Vec::new();
        for list in lists {
            for item in list.iter().take(k) {
                if seen.contains(&item) || judged(context, item) {
                    continue;
                }
                seen.push(item);
                let weights: Vec<f64> = lists.iter().map(|l| weight(l, item, k)).collect();
                let high = weights.iter().copied().fold(f64::MIN, f64::max);
                let low = weights.iter().copied().fold(f64::MAX, f64::min);
                let best_rank = lists
                    .iter()
                    .filter_map(|l| l.iter().take(k).position(|i| i == item))
                    .min()
                    .map_or(usize::MAX, |at| at + 1);
                gaps.push(Gap {
                    context: context.clone(),
                    item: item.clone(),
                    spread: high - low,
                    best_rank,
                });
            }
        }
    }
    gaps.sort_by(|a, b| {
        b.spread
            .total_cmp(&a.spread)
            .then(a.best_rank.cmp(&b.best_rank))
            .then_with(|| a.context.cmp(&b.context))
            .then_with(|| a.item.cmp(&b.item))
    });
    gaps
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_item_only_one_ranker_puts_first_comes_before_items_both_rank_low() {
        let contexts = vec![(
            "q1",
            vec![
                vec!["solo", "b", "c", "d", "e"],
                vec!["x", "y", "c", "d", "e"],
            ],
        )];
        let judged = |_: &&str, i: &&str| matches!(*i, "b" | "x" | "y");
        let gaps = order_gaps(&contexts, 5, judged);
        let items: Vec<&str> = gaps.iter().map(|g| g.item).collect();
        assert_eq!(items[0], "solo");
        // "c", "d" and "e" sit at the same rank in both lists: nothing to decide.
        assert!(
            gaps.iter()
                .filter(|g| g.item != "solo")
                .all(|g| g.spread == 0.0)
        );
        assert_eq!(items[1..], ["c", "d", "e"]);
    }

    #[test]
    fn judged_pairs_and_items_below_k_are_left_out() {
        let contexts = vec![("q1", vec![vec![1, 2, 3], vec![3, 2, 1]])];
        let gaps = order_gaps(&contexts, 2, |_, i| *i == 2);
        let items: Vec<i32> = gaps.iter().map(|g| g.item).collect();
        assert_eq!(items, vec![1, 3]);
        assert!(
            (gaps[0].spread - 1.0).abs() < 1e-12,
            "rank 1 against absent"
        );
    }
}
