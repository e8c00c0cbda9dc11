//! Depth-k pooling and the split of the pool into reviewers' queues.

use crate::core::stats::Rng;

/// Union of every ranker's top `depth` items per context (depth-k pooling, common
/// practice in evaluation campaigns). Input: (context, ranked items) per list.
/// Output pairs are ordered by context, then by first appearance, so pools are stable.
pub fn depth_pool<C: Ord + Clone, I: PartialEq + Clone>(
    lists: &[(C, Vec<I>)],
    depth: usize,
) -> Vec<(C, I)> {
    let mut order: Vec<usize> = (0..lists.len()).collect();
    order.sort_by(|a, b| lists[*a].0.cmp(&lists[*b].0));
    let mut pool: Vec<(C, I)> = Vec::new();
    let mut start_of_context = 0;
    for (n, idx) in order.iter().enumerate() {
        let (context, items) = &lists[*idx];
        if n > 0 && lists[order[n - 1]].0 != *context {
            start_of_context = pool.len();
        }
        for item in items.iter().take(depth) {
            if !pool[start_of_context..].iter().any(|(_, i)| i == item) {
                pool.push((context.clone(), item.clone()));
            }
        }
    }
    pool
}

/// Fisher–Yates shuffle with the project's fixed generator.
pub fn shuffle<T>(items: &mut [T], rng: &mut Rng) {
    for i in (1..items.len()).rev() {
        let j = rng.below(i + 1);
        items.swap(i, j);
    }
}

/// `k` of the indices `0..population` drawn uniformly at random without replacement, in
/// draw order (the first `k` steps of the Fisher–Yates shuffle, Knuth, TAOCP vol. 2,
/// Algorithm 3.4.2P); `k` above `population` draws them all. Each index is the `i`-th
/// draw with probability 1 / (population − i + 1) among those left, so every subset of
/// size `k` is equally likely.
pub fn draw_without_replacement(population: usize, k: usize, seed: u64) -> Vec<usize> {
    let mut rng = Rng::new(seed);
    let mut order: Vec<usize> = (0..population).collect();
    let k = k.min(population);
    for i in 0..k {
        let j = i + rng.below(population - i);
        order.swap(i, j);
    }
    order.truncate(k);
    order
}

/// Splits `pair_count` pairs among `reviewers`: a share `overlap` goes to everyone (for
/// agreement), the rest round-robin. Each queue is shuffled so order says nothing of rank.
/// Returns pair indices per reviewer; the same seed gives the same queues.
pub fn assign_queues(
    pair_count: usize,
    reviewers: usize,
    overlap: f64,
    seed: u64,
) -> Vec<Vec<usize>> {
    let mut rng = Rng::new(seed);
    let mut pairs: Vec<usize> = (0..pair_count).collect();
    shuffle(&mut pairs, &mut rng);
    let shared = ((pair_count as f64) * overlap.clamp(0.0, 1.0)).round() as usize;
    let mut queues: Vec<Vec<usize>> = vec![pairs[..shared].to_vec(); reviewers.max(1)];
    for (n, pair) in pairs[shared..].iter().enumerate() {
        queues[n % reviewers.max(1)].push(*pair);
    }
    for queue in &mut queues {
        shuffle(queue, &mut rng);
    }
    queues.truncate(reviewers);
    queues
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pool_is_the_union_of_top_k() {
        let lists = vec![
            ("q1", vec!["a", "b", "c"]),
            ("q1", vec!["b", "d", "a"]),
            ("q2", vec!["x", "y"]),
        ];
        let pool = depth_pool(&lists, 2);
        assert_eq!(
            pool,
            vec![
                ("q1", "a"),
                ("q1", "b"),
                ("q1", "d"),
                ("q2", "x"),
                ("q2", "y")
            ]
        );
    }

    #[test]
    fn overlap_goes_to_everyone_and_the_rest_once() {
        let queues = assign_queues(100, 3, 0.3, 7);
        let mut seen = vec![0; 100];
        for q in &queues {
            for p in q {
                seen[*p] += 1;
            }
        }
        assert_eq!(seen.iter().filter(|c| **c == 3).count(), 30);
        assert_eq!(seen.iter().filter(|c| **c == 1).count(), 70);
    }
}
