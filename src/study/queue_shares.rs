//! How the pool is shared into the panel's queues: the first split, a latecomer's queue,
//! and pairs that entered the pool after the queues were made. No SQL here.

use std::collections::HashSet;

use super::queues::{PairId, mix_gold, text_hash};
use crate::core::pooling::{assign_queues, shuffle};
use crate::core::stats::Rng;

/// What the queues are made from: the pool, the study's seed, and the sharing settings.
pub(super) struct QueuePlan {
    pub pool: Vec<PairId>,
    pub seed: u64,
    pub overlap: f64,
    pub gold_rate: f64,
    pub gold: Vec<(String, String, u8)>,
}

impl QueuePlan {
    /// First assignment on this scale: the pool split over the whole panel.
    pub fn first_split(&self, scale: &str, queues: &mut [Vec<PairId>]) {
        let mut rng = Rng::new(self.seed ^ text_hash(scale));
        let split = assign_queues(self.pool.len(), queues.len(), self.overlap, rng.next_u64());
        for (r, share) in split.iter().enumerate() {
            let pairs: Vec<PairId> = share.iter().map(|&p| self.pool[p].clone()).collect();
            queues[r] = mix_gold(pairs, &self.gold, self.gold_rate, &mut rng);
        }
    }

    /// A reviewer who joins later: the shared pairs everyone has, plus an even share of
    /// the rest, shuffled.
    pub fn latecomer_queue(
        &self,
        queues: &[Vec<PairId>],
        scale: &str,
        reviewer: &str,
    ) -> Vec<PairId> {
        let mut rng = Rng::new(self.seed ^ text_hash(scale) ^ text_hash(reviewer));
        let sets: Vec<HashSet<&PairId>> = queues
            .iter()
            .filter(|q| !q.is_empty())
            .map(|q| q.iter().collect())
            .collect();
        let gold_set: HashSet<PairId> = self
            .gold
            .iter()
            .map(|(c, i, _)| (c.clone(), i.clone()))
            .collect();
        let mut shared = Vec::new();
        let mut rest = Vec::new();
        for pair in &self.pool {
            if sets.iter().all(|s| s.contains(pair)) {
                shared.push(pair.clone());
            } else if !gold_set.contains(pair) {
                rest.push(pair.clone());
            }
        }
        shuffle(&mut rest, &mut rng);
        let n = sets.len() + 1;
        let mut mine: Vec<PairId> = shared;
        mine.extend(rest.into_iter().step_by(n));
        shuffle(&mut mine, &mut rng);
        mix_gold(mine, &self.gold, self.gold_rate, &mut rng)
    }

    /// Pairs that entered the pool after the queues were made go to the ends of the
    /// queues that hold something (and `me`'s).
    pub fn share_fresh_pairs(&self, queues: &mut [Vec<PairId>], stored: &[usize], me: usize) {
        let queued: HashSet<&PairId> = queues.iter().flatten().collect();
        let fresh: Vec<PairId> = self
            .pool
            .iter()
            .filter(|p| !queued.contains(p))
            .cloned()
            .collect();
        if fresh.is_empty() {
            return;
        }
        let holders: Vec<usize> = (0..queues.len())
            .filter(|&r| stored[r] > 0 || r == me)
            .collect();
        let split = assign_queues(
            fresh.len(),
            holders.len(),
            self.overlap,
            self.seed ^ fresh.len() as u64,
        );
        for (h, share) in split.iter().enumerate() {
            queues[holders[h]].extend(share.iter().map(|&p| fresh[p].clone()));
        }
    }
}
