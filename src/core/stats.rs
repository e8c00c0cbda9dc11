//! Statistics over per-context scores: bootstrap intervals, paired tests, multiple-test
//! correction, rank correlation and a sample-size estimate.
//!
//! Sources: Efron & Tibshirani (1993) for the percentile bootstrap; Smucker, Allan &
//! Carterette (2007) for the paired randomization test in IR; Phipson & Smyth (2010) for
//! the (count + 1) / (R + 1) Monte Carlo p-value; Holm (1979) for the step-down
//! correction; Kendall (1945) for tau-b; the t distribution via the regularized incomplete
//! beta function (Press et al., Numerical Recipes, 3rd ed., §6.4).

pub use super::rng::Rng;

/// Arithmetic mean; NaN when `xs` is empty.
pub fn mean(xs: &[f64]) -> f64 {
    if xs.is_empty() {
        return f64::NAN;
    }
    xs.iter().sum::<f64>() / xs.len() as f64
}

/// Sample standard deviation (n − 1 in the denominator).
pub fn sample_sd(xs: &[f64]) -> f64 {
    let n = xs.len();
    if n < 2 {
        return f64::NAN;
    }
    let m = mean(xs);
    (xs.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1) as f64).sqrt()
}

/// Quantile with linear interpolation between order statistics (Hyndman & Fan 1996,
/// type 7 — the default of numpy and R). `sorted` must be ascending.
pub fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = (sorted.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// A mean with its two-sided percentile bootstrap interval.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Interval {
    /// Mean of the values themselves (not of the resamples).
    pub mean: f64,
    /// The (1 − level)/2 quantile of the resampled means; NaN without values or resamples.
    pub low: f64,
    /// The 1 − (1 − level)/2 quantile of the resampled means; NaN without values or resamples.
    pub high: f64,
}

/// Percentile bootstrap interval of the mean (Efron & Tibshirani 1993, §13.3):
/// resample the values with replacement `resamples` times.
pub fn bootstrap_mean(values: &[f64], resamples: usize, level: f64, seed: u64) -> Interval {
    bootstrap_means(&[values], resamples, level, seed)[0]
}

/// Above this many non-zero differences the randomization test samples sign flips
/// instead of enumerating all 2^n of them.
pub const EXACT_SIGN_FLIP_LIMIT: usize = 16;

/// Resamples are drawn in fixed blocks, each with its own seed, so results do not depend
/// on how many threads share the work.
const BLOCK: usize = 64;

/// Bootstrap resamples computed together in one pass over the data.
const BATCH: usize = 8;

fn block_seed(seed: u64, block: usize) -> u64 {
    seed ^ (block as u64)
        .wrapping_mul(0x9E37_79B9_7F4A_7C15)
        .rotate_left(17)
}

/// Runs `blocks` independent jobs on all cores and returns their results in block order.
fn par_blocks<T: Send>(blocks: usize, job: impl Fn(usize) -> T + Sync) -> Vec<T> {
    let threads = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .min(blocks.max(1));
    if threads <= 1 {
        return (0..blocks).map(job).collect();
    }
    let job = &job;
    let mut results: Vec<(usize, T)> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                scope.spawn(move || {
                    (t..blocks)
                        .step_by(threads)
                        .map(|b| (b, job(b)))
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().expect("statistics thread panicked"))
            .collect()
    });
    results.sort_by_key(|(b, _)| *b);
    results.into_iter().map(|(_, r)| r).collect()
}

/// Two-sided paired randomization (sign-flip) test of mean difference zero
/// (Smucker, Allan & Carterette 2007). Exact when few differences are non-zero, else
/// Monte Carlo with `(count + 1) / (R + 1)` (Phipson & Smyth 2010).
pub fn randomization_test(diffs: &[f64], resamples: usize, seed: u64) -> f64 {
    let nonzero: Vec<f64> = diffs.iter().copied().filter(|d| *d != 0.0).collect();
    if nonzero.is_empty() {
        return 1.0;
    }
    let observed = nonzero.iter().sum::<f64>().abs();
    // Tolerance so that a flip reproducing the observed sum counts despite the different
    // order of summation.
    let threshold = observed - 1e-9 * (1.0 + observed);
    if nonzero.len() <= EXACT_SIGN_FLIP_LIMIT {
        let total = 1u64 << nonzero.len();
        let hits = (0..total)
            .filter(|mask| {
                let s: f64 = nonzero
                    .iter()
                    .enumerate()
                    .map(|(i, d)| if mask >> i & 1 == 1 { -d } else { *d })
                    .sum();
                s.abs() >= threshold
            })
            .count();
        return hits as f64 / total as f64;
    }
    // Each group of 8 differences has 256 possible signed sums; a random byte picks one,
    // so a resample costs n/8 table look-ups instead of n multiply-adds.
    let tables: Vec<[f64; 256]> = nonzero
        .chunks(8)
        .map(|group| {
            let mut table = [0.0; 256];
            for (mask, slot) in table.iter_mut().enumerate() {
                *slot = group
                    .iter()
                    .enumerate()
                    .map(|(i, d)| if mask >> i & 1 == 1 { -d } else { *d })
                    .sum();
            }
            table
        })
        .collect();
    let blocks = resamples.div_ceil(BLOCK);
    let hits: usize = par_blocks(blocks, |block| {
        let count = BLOCK.min(resamples - block * BLOCK);
        sign_flip_sums(&tables, count, block_seed(seed, block))
            .iter()
            .filter(|sum| sum.abs() >= threshold)
            .count()
    })
    .into_iter()
    .sum();
    (hits + 1) as f64 / (resamples + 1) as f64
}

/// The signed sums of `count` resamples drawn from one seed: resample r takes one
/// random word per eight tables, in order, and adds the entry each byte picks. The
/// words are drawn first, in that same order, so that the sums can then be built table
/// group by table group: each group's 16 KiB stays in cache for every resample of the
/// block instead of being fetched once per resample (each sum still adds its terms in
/// the same order, so the result is the same to the last bit).
fn sign_flip_sums(tables: &[[f64; 256]], count: usize, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    let groups = tables.len().div_ceil(8);
    // words[g * count + r]: resample r's word for table group g.
    let mut words = vec![0u64; groups * count];
    for r in 0..count {
        for g in 0..groups {
            words[g * count + r] = rng.next_u64();
        }
    }
    let mut sums = vec![0.0; count];
    for (eight, column) in tables.chunks(8).zip(words.chunks_exact(count)) {
        for (sum, bits) in sums.iter_mut().zip(column) {
            for (j, table) in eight.iter().enumerate() {
                *sum += table[(bits >> (8 * j)) as usize & 0xFF];
            }
        }
    }
    sums
}

/// Percentile bootstrap intervals for the means of several series over the same
/// contexts, all from the same resampled contexts (one draw serves every series, and
/// paired differences stay paired). Every series must have the same length.
pub fn bootstrap_means(
    series: &[&[f64]],
    resamples: usize,
    level: f64,
    seed: u64,
) -> Vec<Interval> {
    let m = series.len();
    let n = series.first().map_or(0, |s| s.len());
    let means: Vec<f64> = series.iter().map(|s| mean(s)).collect();
    if n == 0 || resamples == 0 {
        return means
            .iter()
            .map(|&mean| Interval {
                mean,
                low: f64::NAN,
                high: f64::NAN,
            })
            .collect();
    }
    // Row-major copy: one resampled context adds one contiguous row.
    let mut rows = vec![0.0; n * m];
    for (j, s) in series.iter().enumerate() {
        assert_eq!(s.len(), n, "bootstrap series must have equal lengths");
        for (i, v) in s.iter().enumerate() {
            rows[i * m + j] = *v;
        }
    }
    let blocks = resamples.div_ceil(BLOCK);
    let per_block: Vec<Vec<f64>> = par_blocks(blocks, |block| {
        let count = BLOCK.min(resamples - block * BLOCK);
        resample_block(&rows, n, count, block_seed(seed, block))
    });
    let tail = (1.0 - level) / 2.0;
    (0..m)
        .map(|j| {
            let mut draws: Vec<f64> = per_block
                .iter()
                .flat_map(|b| b.chunks(m).map(move |r| r[j]))
                .collect();
            draws.sort_by(f64::total_cmp);
            Interval {
                mean: means[j],
                low: quantile_sorted(&draws, tail),
                high: quantile_sorted(&draws, 1.0 - tail),
            }
        })
        .collect()
}

/// `count` resampled means of every series from one seed: `rows` holds `n` contexts,
/// each a contiguous row of one value per series; the result holds one row of means
/// per resample.
fn resample_block(rows: &[f64], n: usize, count: usize, seed: u64) -> Vec<f64> {
    // A context is drawn at most n times per resample, so below 2^16 contexts two-byte
    // tallies suffice: half the memory, which keeps the tallies of a batch in the
    // core's own cache for studies of tens of thousands of contexts.
    match u16::try_from(n) {
        Ok(_) => resample_block_with::<u16>(rows, n, count, seed),
        Err(_) => resample_block_with::<u32>(rows, n, count, seed),
    }
}

/// A per-context tally of draws within one resample.
trait Tally: Copy + Default + PartialEq + Into<f64> {
    fn bump(&mut self);
}

impl Tally for u16 {
    fn bump(&mut self) {
        *self += 1;
    }
}

impl Tally for u32 {
    fn bump(&mut self) {
        *self += 1;
    }
}

fn resample_block_with<T: Tally>(rows: &[f64], n: usize, count: usize, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    let m = rows.len() / n;
    let mut out = Vec::with_capacity(count * m);
    // Resamples go in batches of BATCH: first how often each context was drawn in
    // each resample of the batch, then one sequential pass over the rows adds
    // count × row into every resample's sums. The rows are read once per batch
    // instead of once per draw, which keeps the pass compute-bound.
    let mut counts = vec![T::default(); n * BATCH];
    let mut sums = vec![0.0; BATCH * m];
    let mut done = 0;
    while done < count {
        let batch = BATCH.min(count - done);
        counts.iter_mut().for_each(|c| *c = T::default());
        sums.iter_mut().for_each(|x| *x = 0.0);
        for r in 0..batch {
            for _ in 0..n {
                counts[rng.below(n) * BATCH + r].bump();
            }
        }
        for (i, row) in rows.chunks_exact(m).enumerate() {
            let drawn = &counts[i * BATCH..][..BATCH];
            for (r, &c) in drawn.iter().enumerate().take(batch) {
                if c != T::default() {
                    let w: f64 = c.into();
                    for (acc, v) in sums[r * m..][..m].iter_mut().zip(row) {
                        *acc += w * v;
                    }
                }
            }
        }
        for r in 0..batch {
            out.extend(sums[r * m..][..m].iter().map(|s| s / n as f64));
        }
        done += batch;
    }
    out
}

/// Result of a paired t-test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TTest {
    /// t = mean / (sd / √n) of the differences; NaN with fewer than two or when all are zero.
    pub statistic: f64,
    /// Degrees of freedom, n − 1.
    pub df: f64,
    /// Two-sided p-value; NaN when the statistic is NaN.
    pub p: f64,
}

/// Two-sided paired t-test of mean(a − b) = 0 (Student 1908), as scipy's `ttest_rel`.
pub fn paired_t_test(diffs: &[f64]) -> TTest {
    let n = diffs.len() as f64;
    let sd = sample_sd(diffs);
    let statistic = mean(diffs) / (sd / n.sqrt());
    let df = n - 1.0;
    let p = if statistic.is_nan() {
        f64::NAN
    } else {
        student_t_two_sided_p(statistic, df)
    };
    TTest { statistic, df, p }
}

/// P(|T| ≥ |t|) for Student's t with `df` degrees of freedom:
/// I_{df/(df+t²)}(df/2, 1/2) (Abramowitz & Stegun 1964, 26.7.1 with 26.5.27).
pub fn student_t_two_sided_p(t: f64, df: f64) -> f64 {
    if t.is_infinite() {
        return 0.0;
    }
    regularized_incomplete_beta(df / 2.0, 0.5, df / (df + t * t))
}

/// ln Γ(x) by the Lanczos approximation (g = 7, 9 terms), accurate to ~1e-15.
pub fn ln_gamma(x: f64) -> f64 {
    const G: f64 = 7.0;
    const C: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        // Reflection formula.
        let pi = std::f64::consts::PI;
        return (pi / (pi * x).sin()).ln() - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = C[0];
    let t = x + G + 0.5;
    for (i, c) in C.iter().enumerate().skip(1) {
        a += c / (x + i as f64);
    }
    0.5 * (2.0 * std::f64::consts::PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// Regularized incomplete beta I_x(a, b), continued fraction by the modified Lentz method.
pub fn regularized_incomplete_beta(a: f64, b: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let ln_front = ln_gamma(a + b) - ln_gamma(a) - ln_gamma(b) + a * x.ln() + b * (1.0 - x).ln();
    if x < (a + 1.0) / (a + b + 2.0) {
        ln_front.exp() * beta_continued_fraction(a, b, x) / a
    } else {
        1.0 - ln_front.exp() * beta_continued_fraction(b, a, 1.0 - x) / b
    }
}

fn beta_continued_fraction(a: f64, b: f64, x: f64) -> f64 {
    const TINY: f64 = 1e-300;
    const EPS: f64 = 1e-16;
    let mut c = 1.0;
    let mut d = 1.0 - (a + b) * x / (a + 1.0);
    if d.abs() < TINY {
        d = TINY;
    }
    d = 1.0 / d;
    let mut h = d;
    for m in 1..1000 {
        let m = m as f64;
        let m2 = 2.0 * m;
        let even = m * (b - m) * x / ((a + m2 - 1.0) * (a + m2));
        d = 1.0 + even * d;
        d = if d.abs() < TINY { TINY } else { d };
        c = 1.0 + even / c;
        c = if c.abs() < TINY { TINY } else { c };
        d = 1.0 / d;
        h *= d * c;
        let odd = -(a + m) * (a + b + m) * x / ((a + m2) * (a + m2 + 1.0));
        d = 1.0 + odd * d;
        d = if d.abs() < TINY { TINY } else { d };
        c = 1.0 + odd / c;
        c = if c.abs() < TINY { TINY } else { c };
        d = 1.0 / d;
        let step = d * c;
        h *= step;
        if (step - 1.0).abs() < EPS {
            break;
        }
    }
    h
}

/// Holm (1979) step-down adjusted p-values, in the order given.
pub fn holm(p_values: &[f64]) -> Vec<f64> {
    let m = p_values.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|&a, &b| p_values[a].total_cmp(&p_values[b]));
    let mut adjusted = vec![0.0; m];
    let mut running = 0.0f64;
    for (step, &i) in order.iter().enumerate() {
        let candidate = ((m - step) as f64 * p_values[i]).min(1.0);
        running = running.max(candidate);
        adjusted[i] = running;
    }
    adjusted
}

/// Orders two numbers the way the written tie rules read them: equal values are equal,
/// `-0` and `0` included (IEEE 754 compares them equal; `f64::total_cmp` does not).
/// NaN, which no figure here should be, sorts after every number.
pub fn value_order(a: f64, b: f64) -> std::cmp::Ordering {
    (a + 0.0).total_cmp(&(b + 0.0))
}

/// Kendall's tau-b between two paired score vectors (Kendall 1945), ties allowed.
/// Returns NaN when either vector is constant.
pub fn kendall_tau_b(x: &[f64], y: &[f64]) -> f64 {
    assert_eq!(x.len(), y.len(), "kendall_tau_b needs paired vectors");
    let n = x.len();
    let (mut concordant, mut discordant) = (0i64, 0i64);
    let (mut tied_x, mut tied_y) = (0i64, 0i64);
    for i in 0..n {
        for j in (i + 1)..n {
            let dx = value_order(x[i], x[j]) as i64;
            let dy = value_order(y[i], y[j]) as i64;
            if dx == 0 {
                tied_x += 1;
            }
            if dy == 0 {
                tied_y += 1;
            }
            match dx * dy {
                1 => concordant += 1,
                -1 => discordant += 1,
                _ => {}
            }
        }
    }
    let pairs = (n * n.saturating_sub(1) / 2) as i64;
    let denom = (((pairs - tied_x) * (pairs - tied_y)) as f64).sqrt();
    if denom == 0.0 {
        f64::NAN
    } else {
        (concordant - discordant) as f64 / denom
    }
}

/// z quantiles used by the sample-size estimate (two-sided α = 0.05, power 0.8).
pub const Z_975: f64 = 1.959_963_984_540_054;
/// Standard normal quantile at 0.8, for power 0.8.
pub const Z_80: f64 = 0.841_621_233_572_914_3;

/// How many contexts a paired comparison needs for 80 % power at two-sided α = 0.05,
/// by the normal approximation n = ((z_{0.975} + z_{0.8}) · sd / diff)² (Webber, Moffat
/// & Zobel 2008 use the same reasoning for topic-set size). None when the difference is 0.
pub fn contexts_needed(mean_diff: f64, sd_diff: f64) -> Option<u64> {
    if mean_diff == 0.0 || !mean_diff.is_finite() || !sd_diff.is_finite() {
        return None;
    }
    let n = ((Z_975 + Z_80) * sd_diff / mean_diff).powi(2);
    Some(n.ceil().max(2.0) as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Written rule: at least 2 contexts, the fewest a paired test can run on. Hand
    /// computation: diff 1, SD 0.1 gives ((1.959964 + 0.841621) · 0.1)² = 0.0785, which
    /// rounds up to 1 and is raised to 2; diff 0.1, SD 0.1 gives 7.849 → 8.
    /// The block's sums built table group by table group equal, bit for bit, the sums of
    /// resamples taken one after another (each drawing its words as it goes), for a
    /// count of tables that is not a multiple of eight.
    #[test]
    fn sign_flip_sums_match_resamples_taken_one_by_one() {
        let mut tables = vec![[0.0; 256]; 21];
        let mut fill = Rng::new(7);
        for t in tables.iter_mut() {
            t.iter_mut().for_each(|x| *x = fill.normal());
        }
        let mut rng = Rng::new(99);
        let one_by_one: Vec<f64> = (0..BLOCK)
            .map(|_| {
                let mut sum = 0.0;
                for eight in tables.chunks(8) {
                    let bits = rng.next_u64();
                    for (j, table) in eight.iter().enumerate() {
                        sum += table[(bits >> (8 * j)) as usize & 0xFF];
                    }
                }
                sum
            })
            .collect();
        let together = sign_flip_sums(&tables, BLOCK, 99);
        assert_eq!(
            one_by_one.iter().map(|x| x.to_bits()).collect::<Vec<_>>(),
            together.iter().map(|x| x.to_bits()).collect::<Vec<_>>()
        );
    }

    #[test]
    fn contexts_needed_has_a_floor_of_two() {
        assert_eq!(contexts_needed(1.0, 0.1), Some(2));
        assert_eq!(contexts_needed(0.1, 0.1), Some(8));
        assert_eq!(contexts_needed(0.0, 0.1), None);
    }

    #[test]
    fn holm_matches_hand_computation() {
        // p = 0.01, 0.04, 0.03 → sorted 0.01·3, 0.03·2, 0.04·1 → 0.03, 0.06, 0.06 (monotone).
        let adjusted = holm(&[0.01, 0.04, 0.03]);
        assert!((adjusted[0] - 0.03).abs() < 1e-15);
        assert!((adjusted[1] - 0.06).abs() < 1e-15);
        assert!((adjusted[2] - 0.06).abs() < 1e-15);
    }

    #[test]
    fn ln_gamma_of_integers_is_log_factorial() {
        assert!((ln_gamma(5.0) - 24f64.ln()).abs() < 1e-13);
        assert!((ln_gamma(0.5) - std::f64::consts::PI.sqrt().ln()).abs() < 1e-13);
    }

    #[test]
    fn exact_randomization_of_identical_rankers_is_one() {
        assert_eq!(randomization_test(&[0.0; 30], 100, 1), 1.0);
    }
}
