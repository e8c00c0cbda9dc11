//! Estimates of a mean from a machine judge's values corrected by a uniformly random
//! human sample: prediction-powered inference (Angelopoulos, Bates, Fannjiang, Jordan &
//! Zrnic 2023, Science 382) with the power tuning of PPI++ (Angelopoulos, Duchi & Zrnic
//! 2023, arXiv:2311.01453). The formulas are those of `ppi_py.ppi_mean_pointestimate`
//! and `ppi_py.ppi_mean_ci` (ppi-python 0.2.3) for one dimension, except where that
//! library has no answer: λ = 0 when the machine's values do not vary (ppi_py divides
//! 0 by 0) and the human mean with its classical interval when nothing is left outside
//! the sample (N = 0, where ppi_py divides by zero).
//!
//! Notation: L is the human sample (n contexts, with the people's value Y and the
//! machine's Ŷ), U every other context (N contexts, machine only).

use super::stats::Z_975;

/// Fewer complete sample contexts than this leave no estimate (no spread to measure).
pub const MIN_HUMAN: usize = 2;

/// One estimate with the figures that explain it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PpiEstimate {
    /// θ = mean_U(λŶ) + mean_L(Y − λŶ).
    pub estimate: f64,
    /// θ − z·sqrt(sd_U(λŶ)²/N + sd_L(Y − λŶ)²/n), standard deviations with divisors N, n.
    pub ci_low: f64,
    /// θ + the same half-width.
    pub ci_high: f64,
    /// The power-tuning weight λ in [0, 1].
    pub lambda: f64,
    /// n, the complete sample contexts.
    pub n_human: usize,
    /// N, the contexts outside the sample (machine only).
    pub n_machine: usize,
    /// Mean of Y over L.
    pub human_only_mean: f64,
    /// Classical normal interval of that mean, standard deviation with divisor n.
    pub human_only_ci_low: f64,
    /// Upper end of the same interval.
    pub human_only_ci_high: f64,
    /// Mean of Ŷ over L ∪ U (the machine alone, to show its bias).
    pub machine_only_mean: f64,
    /// n × classical variance / combined variance; NaN when the combined variance is 0.
    pub effective_human_contexts: f64,
    /// Variance of Y − λŶ over L (divisor n), kept for [`humans_needed`].
    pub residual_variance: f64,
    /// Variance of Ŷ over U (divisor N), kept for [`humans_needed`].
    pub machine_variance: f64,
}

impl PpiEstimate {
    /// Half the width of the interval.
    pub fn half_width(&self) -> f64 {
        (self.ci_high - self.ci_low) / 2.0
    }
}

/// Why no estimate can be made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PpiError {
    /// Fewer than [`MIN_HUMAN`] complete sample contexts (the number is n).
    TooFewHuman(usize),
    /// Y and Ŷ over L differ in length (a caller's mistake).
    Mismatch,
}

impl std::fmt::Display for PpiError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            PpiError::TooFewHuman(n) => write!(
                f,
                "only {n} complete sample context{}; an estimate needs at least {MIN_HUMAN}",
                if *n == 1 { "" } else { "s" }
            ),
            PpiError::Mismatch => write!(
                f,
                "the human and machine values of the sample differ in number"
            ),
        }
    }
}

fn mean(xs: &[f64]) -> f64 {
    xs.iter().sum::<f64>() / xs.len() as f64
}

/// Variance with divisor `xs.len()`.
fn variance_n(xs: &[f64]) -> f64 {
    let m = mean(xs);
    xs.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / xs.len() as f64
}

/// The PPI++ weight for a mean: cov(Y, Ŷ over L, divisor n) / ((1 + n/N) · var(Ŷ over
/// L ∪ U, divisor n + N − 1)), clipped to [0, 1]; 0 when Ŷ does not vary over L ∪ U or
/// when N = 0 (Angelopoulos, Duchi & Zrnic 2023, the mean example; `_calc_lam_glm` of
/// ppi_py). `y` and `yhat` are over L, `yhat_u` over U.
pub fn lambda(y: &[f64], yhat: &[f64], yhat_u: &[f64]) -> f64 {
    let (n, big_n) = (y.len(), yhat_u.len());
    if n == 0 || big_n == 0 || y.len() != yhat.len() {
        return 0.0;
    }
    let all = yhat.iter().chain(yhat_u);
    let (lo, hi) = all
        .clone()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
            (lo.min(v), hi.max(v))
        });
    if lo == hi {
        return 0.0;
    }
    let (my, mh) = (mean(y), mean(yhat));
    let cov = y
        .iter()
        .zip(yhat)
        .map(|(a, b)| (a - my) * (b - mh))
        .sum::<f64>()
        / n as f64;
    let total = n + big_n;
    let m_all = all.clone().sum::<f64>() / total as f64;
    let var_all = all.map(|v| (v - m_all) * (v - m_all)).sum::<f64>() / (total - 1) as f64;
    let lam = cov / ((1.0 + n as f64 / big_n as f64) * var_all);
    if lam.is_nan() {
        0.0
    } else {
        lam.clamp(0.0, 1.0)
    }
}

/// The estimate, its 95 % interval and the figures beside it (see [`PpiEstimate`]).
/// With N = 0 the estimate is the human mean with its classical interval and λ = 0.
pub fn estimate(y: &[f64], yhat: &[f64], yhat_u: &[f64]) -> Result<PpiEstimate, PpiError> {
    let (n, big_n) = (y.len(), yhat_u.len());
    if n != yhat.len() {
        return Err(PpiError::Mismatch);
    }
    if n < MIN_HUMAN {
        return Err(PpiError::TooFewHuman(n));
    }
    let lam = lambda(y, yhat, yhat_u);
    let residual: Vec<f64> = y.iter().zip(yhat).map(|(a, b)| a - lam * b).collect();
    let residual_variance = variance_n(&residual);
    let (imputed_mean, machine_variance) = if big_n == 0 {
        (0.0, 0.0)
    } else {
        (lam * mean(yhat_u), variance_n(yhat_u))
    };
    let estimate = imputed_mean + mean(&residual);
    let imputed_part = if big_n == 0 {
        0.0
    } else {
        lam * lam * machine_variance / big_n as f64
    };
    let combined = imputed_part + residual_variance / n as f64;
    let half = Z_975 * combined.sqrt();
    let human_mean = mean(y);
    let classical = variance_n(y) / n as f64;
    let human_half = Z_975 * classical.sqrt();
    let machine_all: Vec<f64> = yhat.iter().chain(yhat_u).copied().collect();
    Ok(PpiEstimate {
        estimate,
        ci_low: estimate - half,
        ci_high: estimate + half,
        lambda: lam,
        n_human: n,
        n_machine: big_n,
        human_only_mean: human_mean,
        human_only_ci_low: human_mean - human_half,
        human_only_ci_high: human_mean + human_half,
        machine_only_mean: mean(&machine_all),
        effective_human_contexts: if combined > 0.0 {
            n as f64 * classical / combined
        } else {
            f64::NAN
        },
        residual_variance,
        machine_variance,
    })
}

/// How many more sample contexts a target half-width needs.
#[derive(Debug, Clone, PartialEq)]
pub enum HumansNeeded {
    /// This many more (0 when today's interval already meets the target).
    More(usize),
    /// No number of further sample contexts reaches the target; the reason in words.
    Impossible(String),
}

/// The smallest whole n' from n to n + N − 1 with z·sqrt(σ²_r/n' + λ²σ²_Ŷ/(N − (n' −
/// n))) ≤ `width` at today's figures (σ²_r and σ²_Ŷ as kept in `est`; each new sample
/// context leaves U), as n' − n. Follows from the variance of the PPI estimate
/// (Angelopoulos et al. 2023) with λ, σ²_r and σ²_Ŷ held at today's values.
pub fn humans_needed(est: &PpiEstimate, width: f64) -> HumansNeeded {
    let (n, big_n) = (est.n_human, est.n_machine);
    if !(width > 0.0 && width.is_finite()) {
        return HumansNeeded::Impossible("the target half-width must be above 0".into());
    }
    if est.half_width() <= width {
        return HumansNeeded::More(0);
    }
    let lam2_var = est.lambda * est.lambda * est.machine_variance;
    for more in 0..big_n {
        let left = (big_n - more) as f64;
        let half = Z_975 * (est.residual_variance / (n + more) as f64 + lam2_var / left).sqrt();
        if half <= width {
            return HumansNeeded::More(more);
        }
    }
    HumansNeeded::Impossible(if big_n == 0 {
        "every context is already in the human sample".into()
    } else {
        format!(
            "even {} more (all but one of the rest) leave it wider than ±{width}",
            big_n - 1
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hand computation (common practice): Y = [0, 1], Ŷ = [0, 1], U = [1, 1]: cov = 0.25,
    /// var(0, 1, 1, 1; divisor 3) = 0.25, λ = 0.25 / (2 · 0.25) = 0.5.
    #[test]
    fn lambda_by_hand() {
        assert!((lambda(&[0.0, 1.0], &[0.0, 1.0], &[1.0, 1.0]) - 0.5).abs() < 1e-15);
    }

    #[test]
    fn a_machine_that_never_varies_gets_no_weight() {
        assert_eq!(lambda(&[0.2, 0.9, 0.4], &[0.5; 3], &[0.5; 4]), 0.0);
    }

    /// N = 0: the classical interval of the human mean (Y = [0, 1]: mean 0.5, sd 0.5,
    /// half-width z · 0.5 / √2).
    #[test]
    fn nothing_outside_the_sample_gives_the_human_mean() {
        let e = estimate(&[0.0, 1.0], &[0.3, 0.8], &[]).unwrap();
        assert_eq!(e.lambda, 0.0);
        assert_eq!(e.estimate, 0.5);
        assert!((e.half_width() - Z_975 * 0.5 / 2f64.sqrt()).abs() < 1e-15);
        assert_eq!(
            (e.ci_low, e.ci_high),
            (e.human_only_ci_low, e.human_only_ci_high)
        );
        assert!(matches!(
            humans_needed(&e, 0.01),
            HumansNeeded::Impossible(_)
        ));
    }

    #[test]
    fn fewer_than_two_sample_contexts_give_no_estimate() {
        assert_eq!(
            estimate(&[0.4], &[0.5], &[0.1, 0.2]),
            Err(PpiError::TooFewHuman(1))
        );
    }
}
