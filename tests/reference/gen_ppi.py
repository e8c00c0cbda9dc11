#!/usr/bin/env python3
"""Reference values for estimates from a machine judge corrected by a human sample
(prediction-powered inference of a mean with power tuning).

Writes ppi_expected.json into the directory given as the first argument (default:
the directory holding this script, i.e. tests/reference/).

All inputs are synthetic, drawn from numpy's default_rng with fixed seeds (not the
demo study's data), rounded to 6 decimals, so the output is byte-identical on every
run with the pinned requirements.txt.

Sources of the expected values (library ppi-python, module ppi_py; version in
"generated_by"):
  estimate            ppi_py.ppi_mean_pointestimate(Y, Yhat, Yhat_unlabeled, lam=None)
  ci_low, ci_high     ppi_py.ppi_mean_ci(Y, Yhat, Yhat_unlabeled, alpha=0.05, lam=None)
  lambda              ppi_py.ppi._calc_lam_glm called exactly as ppi_mean_ci calls it
                      (gradients at the lam=1 estimate, identity inverse Hessian,
                      clip=True); the script checks that the point estimate with this
                      lam equals the one with lam=None
  human_only_ci_*     ppi_py.baselines.classical_mean_ci(Y, alpha=0.05)
  human_only_mean     numpy mean of Y                            common practice
  machine_only_mean   numpy mean of Yhat and Yhat_unlabeled together  common practice
  effective_human_contexts
                      n * (classical half-width / PPI half-width)**2, both half-widths
                      from the library's intervals (n x classical variance / combined
                      variance)
  humans_needed       plain Python from the definition of issue 30 (below)

Method: Angelopoulos, Bates, Fannjiang, Jordan & Zrnic (2023), Science 382,
"Prediction-powered inference"; power tuning: Angelopoulos, Duchi & Zrnic (2023),
"PPI++: Efficient prediction-powered inference", arXiv:2311.01453.

What ppi_py computes for a mean (read in ppi_py/ppi.py, version 0.2.3), which is
the definition Plumbline uses:
  lambda = cov(Y, Yhat; divisor n) / ((1 + n/N) * var(Yhat over L and U; divisor
           n + N - 1)), clipped to [0, 1]   (_calc_lam_glm: (1/n)(A + A^T) over
           2 (1 + n/N) np.cov(...), np.cov with ddof=1)
  theta  = mean(lambda * Yhat_unlabeled) + mean(Y - lambda * Yhat)
  CI     = theta -/+ z * sqrt(std(lambda * Yhat_unlabeled)**2 / N
                              + std(Y - lambda * Yhat)**2 / n),
           numpy std with ddof=0 (divisors N and n), z = norm.ppf(0.975)
Where the two differ (so no case here covers it): when Yhat does not vary, ppi_py
divides 0 by 0 (nan, or 0 after rounding noise) and Plumbline takes lambda = 0; with
N = 0 ppi_py raises ZeroDivisionError (n / N) and Plumbline reports the human mean
with its classical interval and lambda = 0.

humans_needed (target half-width W): the smallest whole n' from n to n + N - 1 with
  z * sqrt(s2_r / n' + lambda**2 * s2_u / (N - (n' - n))) <= W,
s2_r = variance of Y - lambda * Yhat over L (divisor n), s2_u = variance of
Yhat_unlabeled (divisor N); the answer is n' - n, None when no n' qualifies.
"""

import json
import math
import platform
import sys
import warnings
from importlib.metadata import version
from pathlib import Path

import numpy as np
from scipy.stats import norm

warnings.simplefilter("ignore")

from ppi_py import ppi_mean_ci, ppi_mean_pointestimate  # noqa: E402
from ppi_py.baselines import classical_mean_ci  # noqa: E402
from ppi_py.ppi import _calc_lam_glm  # noqa: E402

HERE = Path(__file__).resolve().parent
SEED = 30_001
ALPHA = 0.05
Z = float(norm.ppf(1 - ALPHA / 2))

# (name, n, N, kind, bias, noise, slope): the machine sees slope * y + bias + noise,
# clipped to [0, 1] for metric-like values.
SCENARIOS = [
    ("ndcg_biased_noisy", 40, 400, "ndcg", 0.12, 0.10, 1.0),
    ("ndcg_small_sample", 8, 150, "ndcg", -0.08, 0.15, 1.0),
    ("ndcg_good_machine", 60, 600, "ndcg", 0.02, 0.03, 1.0),
    ("ndcg_even_split", 50, 50, "ndcg", 0.05, 0.08, 1.0),
    ("flat_machine_lambda_1", 30, 300, "ndcg", 0.3, 0.01, 0.3),
    ("contrary_machine_lambda_0", 30, 300, "ndcg", 0.9, 0.05, -0.8),
    ("precision_steps", 25, 250, "precision", 0.1, 0.1, 1.0),
    ("difference_of_two_rankers", 40, 200, "diff", 0.03, 0.08, 1.0),
    ("two_human_contexts", 2, 40, "ndcg", 0.1, 0.1, 1.0),
    ("one_unlabelled_context", 20, 1, "ndcg", 0.1, 0.1, 1.0),
]


def draw_truth(rng, size, kind):
    """Per-context values of a metric under the people's grades."""
    if kind == "ndcg":
        # Many contexts near 0.6-0.9, some with nothing relevant (0).
        values = rng.beta(4.0, 1.8, size=size)
        values[rng.random(size) < 0.1] = 0.0
    elif kind == "precision":
        values = rng.integers(0, 11, size=size) / 10.0
    else:
        values = rng.beta(4.0, 1.8, size=size) - rng.beta(3.5, 1.8, size=size)
    return values


def machine(rng, truth, kind, bias, noise, slope):
    seen = slope * truth + bias + rng.normal(0.0, noise, size=truth.size)
    if kind == "diff":
        return np.clip(seen, -1.0, 1.0)
    return np.clip(seen, 0.0, 1.0)


def r6(values):
    return [round(float(v), 6) for v in values]


def humans_needed(y, yhat, yhat_u, lam, width):
    n, N = len(y), len(yhat_u)
    r = [a - lam * b for a, b in zip(y, yhat)]
    mr = sum(r) / n
    s2_r = sum((x - mr) ** 2 for x in r) / n
    mu = sum(yhat_u) / N
    s2_u = sum((x - mu) ** 2 for x in yhat_u) / N
    for n_new in range(n, n + N):
        left = N - (n_new - n)
        half = Z * math.sqrt(s2_r / n_new + lam * lam * s2_u / left)
        if half <= width:
            return n_new - n
    return None


def case(rng, name, n, N, kind, bias, noise, slope):
    truth = draw_truth(rng, n + N, kind)
    seen = machine(rng, truth, kind, bias, noise, slope)
    Y = np.array(r6(truth[:n]))
    Yhat = np.array(r6(seen[:n]))
    Yhat_u = np.array(r6(seen[n:]))

    estimate = float(np.asarray(ppi_mean_pointestimate(Y, Yhat, Yhat_u, lam=None)).item())
    lo, hi = ppi_mean_ci(Y, Yhat, Yhat_u, alpha=ALPHA, lam=None)
    lo, hi = float(np.asarray(lo).item()), float(np.asarray(hi).item())

    # lambda exactly as ppi_mean_ci computes it before calling itself with it.
    Y2, Yh2, Yu2 = Y.reshape(-1, 1), Yhat.reshape(-1, 1), Yhat_u.reshape(-1, 1)
    theta1 = ppi_mean_pointestimate(Y2, Yh2, Yu2, lam=1)
    lam = float(
        np.asarray(
            _calc_lam_glm(Y2 - theta1, Yh2 - theta1, Yu2 - theta1, np.eye(1), clip=True)
        ).item()
    )
    again = float(np.asarray(ppi_mean_pointestimate(Y, Yhat, Yhat_u, lam=lam)).item())
    assert again == estimate, (name, again, estimate)

    c_lo, c_hi = classical_mean_ci(Y, alpha=ALPHA)
    c_lo, c_hi = float(c_lo), float(c_hi)
    half, c_half = (hi - lo) / 2.0, (c_hi - c_lo) / 2.0
    effective = n * (c_half / half) ** 2 if half > 0 else None

    widths = [round(half * f, 6) for f in (1.2, 0.9, 0.75, 0.5, 0.2)]
    return {
        "name": name,
        "n": n,
        "N": N,
        "y": list(Y),
        "yhat": list(Yhat),
        "yhat_unlabeled": list(Yhat_u),
        "lambda": lam,
        "estimate": estimate,
        "ci_low": lo,
        "ci_high": hi,
        "human_only_mean": float(np.mean(Y)),
        "human_only_ci_low": c_lo,
        "human_only_ci_high": c_hi,
        "machine_only_mean": float(np.mean(np.concatenate([Yhat, Yhat_u]))),
        "effective_human_contexts": effective,
        "humans_needed": [
            {"width": w, "more": humans_needed(list(Y), list(Yhat), list(Yhat_u), lam, w)}
            for w in widths
        ],
    }


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    rng = np.random.default_rng(SEED)
    cases = [case(rng, *scenario) for scenario in SCENARIOS]
    obj = {
        "generated_by": {
            "python": platform.python_version(),
            "ppi-python": version("ppi-python"),
            "numpy": version("numpy"),
            "scipy": version("scipy"),
        },
        "seeds": {"default_rng": SEED},
        "alpha": ALPHA,
        "z": Z,
        "sources": {
            "estimate": "ppi_py.ppi_mean_pointestimate(lam=None); Angelopoulos et al. "
            "(2023), Science 382; PPI++ power tuning: Angelopoulos, Duchi & Zrnic (2023)",
            "interval": "ppi_py.ppi_mean_ci(alpha=0.05, lam=None)",
            "lambda": "ppi_py.ppi._calc_lam_glm as called by ppi_mean_ci (clip=True)",
            "human_only": "ppi_py.baselines.classical_mean_ci(alpha=0.05)",
            "machine_only_mean": "common practice (mean of every machine value)",
            "effective_human_contexts": "n x (classical half-width / PPI half-width)^2 "
            "from the library's intervals",
            "humans_needed": "issue 30's definition, plain Python",
        },
        "cases": cases,
    }
    out_dir.mkdir(parents=True, exist_ok=True)
    path = out_dir / "ppi_expected.json"
    with open(path, "w", encoding="utf-8") as f:
        json.dump(obj, f, indent=1, sort_keys=True, allow_nan=False)
        f.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
