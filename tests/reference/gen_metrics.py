#!/usr/bin/env python3
"""Reference values for ranking metrics (DCG / nDCG) and the paired t-test.

Writes metrics_expected.json into the directory given as the first argument
(default: the directory holding this script, i.e. tests/reference/).

All inputs are synthetic, drawn from numpy's default_rng with fixed seeds, so
the output is byte-identical on every run with the pinned requirements.txt.

Sources of the expected values:
  dcg   sklearn.metrics.dcg_score([y_true], [scores], k=k)
  ndcg  sklearn.metrics.ndcg_score([y_true], [scores], k=k)
  t     scipy.stats.ttest_rel(a, b)   (two-sided)
"""

import json
import platform
import sys
from importlib.metadata import version
from pathlib import Path

import numpy as np
import scipy.stats
from sklearn.metrics import dcg_score, ndcg_score

# One generator per section: adding cases to one section never shifts the
# random stream of the other.
SEED_NDCG = 20_001
SEED_TTEST = 20_002

N_NDCG = 300
N_TTEST = 80

# Cycled (not random) so every (k, gain) combination is covered evenly.
K_CHOICES = [None, 1, 3, 5, 10, 20]
GAINS = ["linear", "exponential"]


def draw_levels(rng, n, max_level):
    """Graded levels 0..max_level with at least one level > 0."""
    while True:
        if rng.random() < 0.5:
            # Uniform levels.
            levels = rng.integers(0, max_level + 1, size=n)
        else:
            # Sparse: mostly non-relevant, as in typical judged pools.
            p = np.full(max_level + 1, 0.25 / max_level)
            p[0] = 0.75
            levels = rng.choice(max_level + 1, size=n, p=p)
        if levels.max() > 0:
            return [int(v) for v in levels]


def draw_scores(rng, n):
    """Distinct ranker scores, so ranking never depends on tie handling."""
    if rng.random() < 0.5:
        # A random permutation of 0..n-1.
        return [float(v) for v in rng.permutation(n)]
    while True:
        # Distinct floats rounded to 6 decimals: the JSON text is then the
        # exact value the library saw.
        scores = np.round(rng.uniform(-5.0, 5.0, size=n), 6)
        if len(np.unique(scores)) == n:
            return [float(v) for v in scores]


def ndcg_cases():
    rng = np.random.default_rng(SEED_NDCG)
    cases = []
    for i in range(N_NDCG):
        k = K_CHOICES[i % len(K_CHOICES)]
        gain = GAINS[(i // len(K_CHOICES)) % len(GAINS)]
        n = int(rng.integers(3, 41))  # list length 3..40
        max_level = int(rng.integers(1, 5))  # 1..4
        levels = draw_levels(rng, n, max_level)
        scores = draw_scores(rng, n)
        if gain == "linear":
            y_true = levels
        else:
            y_true = [2**v - 1 for v in levels]
        dcg = dcg_score([y_true], [scores], k=k)
        ndcg = ndcg_score([y_true], [scores], k=k)
        cases.append(
            {
                "levels": levels,
                "scores": scores,
                "k": k,
                "gain": gain,
                "dcg": float(dcg),
                "ndcg": float(ndcg),
            }
        )
    return cases


def ttest_cases():
    rng = np.random.default_rng(SEED_TTEST)
    cases = []
    while len(cases) < N_TTEST:
        n = int(rng.integers(5, 61))  # 5..60 pairs
        # Per-query scores of two systems: b is correlated with a plus a
        # small systematic shift, like two rankers on the same queries.
        a = rng.uniform(0.0, 1.0, size=n)
        rho = rng.uniform(0.0, 1.0)
        shift = rng.normal(0.0, 0.05)
        b = rho * a + (1 - rho) * rng.uniform(0.0, 1.0, size=n) + shift
        a = np.round(a, 6)
        b = np.round(b, 6)
        d = a - b
        if np.ptp(d) == 0.0:
            # Constant differences give a zero variance: t is undefined.
            continue
        res = scipy.stats.ttest_rel(a, b)
        cases.append(
            {
                "a": [float(v) for v in a],
                "b": [float(v) for v in b],
                "statistic": float(res.statistic),
                "pvalue": float(res.pvalue),
            }
        )
    return cases


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parent
    out_dir.mkdir(parents=True, exist_ok=True)
    obj = {
        "generated_by": {
            "python": platform.python_version(),
            "numpy": version("numpy"),
            "scikit-learn": version("scikit-learn"),
            "scipy": version("scipy"),
        },
        "seeds": {"ndcg": SEED_NDCG, "ttest": SEED_TTEST},
        "ndcg_cases": ndcg_cases(),
        "ttest_cases": ttest_cases(),
    }
    path = out_dir / "metrics_expected.json"
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        # allow_nan=False: a NaN would not be valid JSON for the Rust side.
        json.dump(obj, f, indent=1, sort_keys=True, allow_nan=False)
        f.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
