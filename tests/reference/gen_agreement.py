#!/usr/bin/env python3
"""Reference values for inter-grader agreement statistics and Kendall's tau.

Writes agreement_expected.json into the directory given as the first argument
(default: the directory holding this script, i.e. tests/reference/).

All inputs are synthetic, drawn from numpy's default_rng with fixed seeds, so
the output is byte-identical on every run with the pinned requirements.txt.

Grades are integer levels 0..q-1 (q = n_levels, 2..5).

Sources of the expected values:
  two_rater_cases
    kappa / kappa_linear / kappa_quadratic
        sklearn.metrics.cohen_kappa_score(a, b, labels=range(q), weights=...)
    kappa_se / kappa_se0
        statsmodels.stats.inter_rater.cohens_kappa(table).std_kappa / .std_kappa0
        (table = q x q counts, rows = a, cols = b, every level present)
    ac1 irrCAC.raw.CAC(df, weights="identity", categories=range(q)).gwet()
  panel_cases
    fleiss_kappa
        statsmodels.stats.inter_rater.fleiss_kappa(table, method="fleiss")
        over the units graded by every rater only
    alpha_nominal / alpha_ordinal / alpha_interval
        krippendorff.alpha(raters x units, level_of_measurement=...,
                           value_domain=range(q))
    ac1 irrCAC.raw.CAC(units x raters df with NaN, categories=range(q)).gwet()
  kendall_cases
    tau_b / pvalue   scipy.stats.kendalltau(x, y)  (variant "b", method "auto")
"""

import json
import platform
import sys
import warnings
from importlib.metadata import version
from pathlib import Path

import krippendorff
import numpy as np
import pandas as pd
import scipy.stats
from irrCAC.raw import CAC
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import cohens_kappa, fleiss_kappa

# One generator per section: adding cases to one section never shifts the
# random stream of the others.
SEED_TWO_RATER = 30_001
SEED_PANEL = 30_002
SEED_KENDALL = 30_003

N_TWO_RATER = 150
N_PANEL = 130
N_KENDALL = 80

# irrCAC rounds every reported number with round(x, digits) (default 5).
# 15 digits keeps the rounding error below ~1e-15, far inside the 1e-9
# tolerance of the Rust tests.
IRRCAC_DIGITS = 15

# Cycled so every kind of data shows up in every section.
SCENARIOS = ["strong", "moderate", "weak", "dominant", "unused", "adjacent"]


# ---------------------------------------------------------------------------
# Synthetic grade generation
# ---------------------------------------------------------------------------


def level_probs(rng, q, scenario):
    """Marginal distribution of the 'true' level of a unit."""
    if scenario == "dominant":
        # One level takes 80..95 % of the mass.
        p = np.full(q, 0.0)
        top = int(rng.integers(0, q))
        share = rng.uniform(0.80, 0.95)
        p[:] = (1 - share) / (q - 1)
        p[top] = share
        return p, np.arange(q)
    if scenario == "unused":
        # Only a strict subset of the levels is ever used (q >= 3 here).
        used = np.sort(rng.choice(q, size=int(rng.integers(2, q)), replace=False))
        return np.full(len(used), 1 / len(used)), used
    return np.full(q, 1 / q), np.arange(q)


def grade(rng, truth, scenario, q, p, support):
    """One grader's grades for the given true levels."""
    n = len(truth)
    fresh = support[rng.choice(len(support), size=n, p=p)]
    if scenario == "strong":
        keep = rng.random(n) < rng.uniform(0.85, 0.97)
    elif scenario in ("moderate", "unused", "dominant"):
        keep = rng.random(n) < rng.uniform(0.5, 0.75)
    elif scenario == "weak":
        keep = np.zeros(n, dtype=bool)  # independent graders
    elif scenario == "adjacent":
        # Near-misses: off by at most one level, which the weighted
        # coefficients should reward.
        step = rng.choice([-1, 0, 0, 1], size=n)
        return np.clip(truth + step, 0, q - 1)
    else:
        raise ValueError(scenario)
    return np.where(keep, truth, fresh)


def pick_q(rng, scenario):
    # "unused" needs q >= 3 so that a strict subset still has 2 levels.
    low = 3 if scenario == "unused" else 2
    return int(rng.integers(low, 6))


# ---------------------------------------------------------------------------
# irrCAC
# ---------------------------------------------------------------------------


def gwet_ac1(units_by_raters, q):
    """Gwet's AC1 from irrCAC.

    units_by_raters: float array, one row per unit, one column per rater,
    np.nan for a missing grade.

    How irrCAC 0.4.4 (raw.CAC.gwet) treats missing grades, read from its
    source:
      * units with no grade at all are dropped (dropna(how="all"));
      * percent agreement pa = mean over units with >= 2 grades of
        sum_k r_ik (r_ik - 1) / (r_i (r_i - 1)); units with a single grade
        are left out of pa;
      * chance agreement pe = sum_k pi_k (1 - pi_k) / (q - 1), with
        pi_k = (1/n) sum_i r_ik / r_i averaged over ALL n units, including
        units with a single grade;
      * q is len(categories), so unused levels still count.
    """
    df = pd.DataFrame(units_by_raters)
    cac = CAC(df, weights="identity", categories=list(range(q)), digits=IRRCAC_DIGITS)
    return float(cac.gwet()["est"]["coefficient_value"])


# ---------------------------------------------------------------------------
# Two-rater cases
# ---------------------------------------------------------------------------


def two_rater_cases():
    rng = np.random.default_rng(SEED_TWO_RATER)
    cases = []
    i = 0
    while len(cases) < N_TWO_RATER:
        scenario = SCENARIOS[i % len(SCENARIOS)]
        i += 1
        q = pick_q(rng, scenario)
        n = int(rng.integers(10, 81))
        p, support = level_probs(rng, q, scenario)
        truth = support[rng.choice(len(support), size=n, p=p)]
        a = grade(rng, truth, scenario, q, p, support)
        b = grade(rng, truth, scenario, q, p, support)
        if np.array_equal(a, b):
            # Perfect agreement: the kappa variance is 0 up to rounding noise
            # and its square root would be noise of order 1e-8.
            continue
        labels = list(range(q))
        with np.errstate(divide="ignore", invalid="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore")
            kappa = cohen_kappa_score(a, b, labels=labels)
            kappa_lin = cohen_kappa_score(a, b, labels=labels, weights="linear")
            kappa_quad = cohen_kappa_score(a, b, labels=labels, weights="quadratic")
            table = np.zeros((q, q), dtype=np.int64)
            np.add.at(table, (a, b), 1)
            sm = cohens_kappa(table)
        values = [kappa, kappa_lin, kappa_quad, sm.var_kappa, sm.var_kappa0]
        if not all(np.isfinite(values)) or sm.var_kappa <= 0 or sm.var_kappa0 <= 0:
            # Undefined kappa (chance agreement 1) or a degenerate variance.
            continue
        ac1 = gwet_ac1(np.column_stack([a, b]).astype(float), q)
        cases.append(
            {
                "scenario": scenario,
                "n_levels": q,
                "a": [int(v) for v in a],
                "b": [int(v) for v in b],
                "kappa": float(kappa),
                "kappa_linear": float(kappa_lin),
                "kappa_quadratic": float(kappa_quad),
                # statsmodels' std_kappa: large-sample standard error of
                # Fleiss, Cohen & Everitt (1969); std_kappa0: the same under
                # the null hypothesis kappa = 0.
                "kappa_se": float(sm.std_kappa),
                "kappa_se0": float(sm.std_kappa0),
                "ac1": ac1,
            }
        )
    return cases


# ---------------------------------------------------------------------------
# Panel cases (3..6 graders, missing grades)
# ---------------------------------------------------------------------------


def panel_fleiss(ratings, q):
    """Fleiss' kappa over the units graded by every rater (None if undefined)."""
    full = ratings[~np.isnan(ratings).any(axis=1)].astype(np.int64)
    n_full = int(full.shape[0])
    if n_full < 2:
        return None, n_full
    # units x q table of category counts, all q columns even if unused.
    table = np.stack([(full == k).sum(axis=1) for k in range(q)], axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        value = fleiss_kappa(table, method="fleiss")
    if not np.isfinite(value):
        # All complete units in one category: chance agreement is 1.
        return None, n_full
    return float(value), n_full


def panel_cases():
    rng = np.random.default_rng(SEED_PANEL)
    cases = []
    i = 0
    while len(cases) < N_PANEL:
        scenario = SCENARIOS[i % len(SCENARIOS)]
        i += 1
        q = pick_q(rng, scenario)
        n_raters = int(rng.integers(3, 7))
        n_units = int(rng.integers(8, 61))
        # Every fifth draw has no missing grades so Fleiss covers all units.
        miss_rate = 0.0 if i % 5 == 0 else float(rng.uniform(0.0, 0.35))
        p, support = level_probs(rng, q, scenario)
        truth = support[rng.choice(len(support), size=n_units, p=p)]
        ratings = np.column_stack(
            [grade(rng, truth, scenario, q, p, support) for _ in range(n_raters)]
        ).astype(float)
        missing = rng.random(ratings.shape) < miss_rate
        # Every unit keeps at least one grade: un-hide one random rater.
        empty = missing.all(axis=1)
        keep_col = rng.integers(0, n_raters, size=n_units)
        missing[empty, keep_col[empty]] = False
        ratings[missing] = np.nan
        graded = (~np.isnan(ratings)).sum(axis=1)
        if (graded >= 2).sum() < 2:
            continue
        with np.errstate(divide="ignore", invalid="ignore"):
            alphas = {
                lvl: float(
                    krippendorff.alpha(
                        reliability_data=ratings.T,
                        level_of_measurement=lvl,
                        value_domain=list(range(q)),
                    )
                )
                for lvl in ("nominal", "ordinal", "interval")
            }
        if not all(np.isfinite(list(alphas.values()))):
            # All pairable grades identical: expected disagreement is 0.
            continue
        fleiss, fleiss_n = panel_fleiss(ratings, q)
        cases.append(
            {
                "scenario": scenario,
                "n_levels": q,
                "missing_rate": round(miss_rate, 6),
                "ratings": [
                    [None if np.isnan(v) else int(v) for v in row] for row in ratings
                ],
                "fleiss_kappa": fleiss,
                "fleiss_n": fleiss_n,
                "alpha_nominal": alphas["nominal"],
                "alpha_ordinal": alphas["ordinal"],
                "alpha_interval": alphas["interval"],
                "ac1": gwet_ac1(ratings, q),
            }
        )
    return cases


# ---------------------------------------------------------------------------
# Kendall's tau-b with ties
# ---------------------------------------------------------------------------


def has_ties(v):
    return len(np.unique(v)) < len(v)


def kendall_cases():
    rng = np.random.default_rng(SEED_KENDALL)
    kinds = ["both", "x_only", "y_only", "both_correlated"]
    cases = []
    i = 0
    while len(cases) < N_KENDALL:
        kind = kinds[i % len(kinds)]
        i += 1
        n = int(rng.integers(4, 41))
        # Small integer ranges create ties; a permutation has none.
        x = rng.integers(0, int(rng.integers(2, 7)), size=n).astype(float)
        if kind == "both_correlated":
            y = x + rng.integers(-1, 2, size=n)
        else:
            y = rng.integers(0, int(rng.integers(2, 7)), size=n).astype(float)
        if kind == "x_only":
            y = rng.permutation(n).astype(float)
        elif kind == "y_only":
            x = rng.permutation(n).astype(float)
        if np.ptp(x) == 0 or np.ptp(y) == 0:
            continue  # a constant vector makes tau undefined
        if not (has_ties(x) or has_ties(y)):
            continue  # keep every case on the tie-corrected code path
        res = scipy.stats.kendalltau(x, y)
        if not (np.isfinite(res.statistic) and np.isfinite(res.pvalue)):
            continue
        cases.append(
            {
                "x": [float(v) for v in x],
                "y": [float(v) for v in y],
                "tau_b": float(res.statistic),
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
            "scipy": version("scipy"),
            "scikit-learn": version("scikit-learn"),
            "statsmodels": version("statsmodels"),
            "pandas": version("pandas"),
            "krippendorff": version("krippendorff"),
            "irrCAC": version("irrCAC"),
        },
        "seeds": {
            "two_rater": SEED_TWO_RATER,
            "panel": SEED_PANEL,
            "kendall": SEED_KENDALL,
        },
        "two_rater_cases": two_rater_cases(),
        "panel_cases": panel_cases(),
        "kendall_cases": kendall_cases(),
    }
    path = out_dir / "agreement_expected.json"
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        # allow_nan=False: a NaN would not be valid JSON for the Rust side.
        json.dump(obj, f, indent=1, sort_keys=True, allow_nan=False)
        f.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
