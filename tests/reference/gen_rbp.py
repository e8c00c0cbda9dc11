#!/usr/bin/env python3
"""Reference values for rank-biased precision and its residual.

Writes rbp_expected.json into the directory given as the first argument
(default: the directory holding this script).

Independent code written from the definition of Moffat & Zobel (2008), ACM TOIS
27(1): RBP = (1 - p) * sum_i r_i * p^(i-1), with r_i in [0, 1] the item's gain
divided by the gain of the scale's top level (unjudged items 0), and the residual
(1 - p) * sum over unjudged positions of p^(i-1) + p^(list length), the most that
unjudged and unseen items could add. Computed here with numpy's vectorised
powers and dot products, not with the running products of the Rust code.

Inputs are synthetic, from numpy's default_rng with a fixed seed.
"""

import json
import platform
import sys
from importlib.metadata import version
from pathlib import Path

import numpy as np

SEED = 20_031
N_CASES = 120
PERSISTENCES = [0.5, 0.8, 0.95]
GAINS = ["linear", "exponential"]


def case(rng, i):
    p = PERSISTENCES[i % len(PERSISTENCES)]
    gain = GAINS[(i // len(PERSISTENCES)) % len(GAINS)]
    max_level = int(rng.integers(1, 5))
    n = int(rng.integers(1, 31))
    levels = rng.integers(0, max_level + 1, size=n)
    judged = rng.random(n) < 0.75
    as_gain = (lambda v: v) if gain == "linear" else (lambda v: 2.0**v - 1.0)
    top = as_gain(float(max_level))
    r = np.where(judged, as_gain(levels.astype(float)) / top, 0.0)
    weights = (1.0 - p) * np.power(p, np.arange(n, dtype=float))
    rbp = float(np.dot(weights, r))
    residual = float(np.dot(weights, ~judged) + p**n)
    return {
        "persistence": p,
        "gain": gain,
        "max_level": max_level,
        "levels": [int(v) if j else None for v, j in zip(levels, judged)],
        "rbp": rbp,
        "rbp_residual": residual,
    }


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).parent
    rng = np.random.default_rng(SEED)
    data = {
        "generated_by": {"python": platform.python_version(), "numpy": version("numpy")},
        "rbp_cases": [case(rng, i) for i in range(N_CASES)],
    }
    (out_dir / "rbp_expected.json").write_text(json.dumps(data, indent=1, sort_keys=True) + "\n")


if __name__ == "__main__":
    main()
