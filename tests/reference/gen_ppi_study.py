#!/usr/bin/env python3
"""Reference values for `plumbline score --machine` on a small hand-made study: the
per-context metrics computed here in plain Python, the estimates by ppi-python.

Reads the catalog, contexts, scale and rankings of tests/fixtures/pool_bias/ and the
grades of tests/fixtures/ppi_study/grades.csv (people on c01-c07, c07 missing one
pair; the machine judge `judge-q` on every pool pair), and writes
ppi_study_expected.json into the directory given as the first argument (default: the
directory holding this script). The Rust test draws every context into the human
sample, so L = the contexts every pool pair of which a person graded (c01-c06) and U =
the others (c07-c12).

Definitions and their sources:
  panel level      lower median of the people's values on a pair (sorted, index
                   (n-1)//2), can't-judge ignored              common practice
  machine level    judge-q's value on the pair
  gain             2**v - 1                                      common practice
  NDCG@k           discount 1/log2(i+1), ideal from every judged pair of the context
                   under the grades used, unjudged positions gain 0; a context with
                   no level above 0 counts as 0 (issue 30's rule for estimates).
                   Järvelin & Kekäläinen (2002), ACM TOIS
  precision@k      levels >= 1 among the first k positions, over k   common practice
  complete         every pair of every ranker's top 10 (the pool depth) has a
                   person's grade, can't-judge included
  estimates        ppi_py.ppi_mean_pointestimate(lam=None), ppi_py.ppi_mean_ci(
                   alpha=0.05, lam=None), ppi_py.baselines.classical_mean_ci(
                   alpha=0.05); Angelopoulos et al. (2023), Science 382; PPI++:
                   Angelopoulos, Duchi & Zrnic (2023)
  comparisons      the same on the per-context differences ranker - alpha
"""

import csv
import json
import math
import platform
import sys
import warnings
from importlib.metadata import version
from pathlib import Path

import numpy as np

warnings.simplefilter("ignore")

from ppi_py import ppi_mean_ci, ppi_mean_pointestimate  # noqa: E402
from ppi_py.baselines import classical_mean_ci  # noqa: E402

HERE = Path(__file__).resolve().parent
CATALOG = HERE.parent / "fixtures" / "pool_bias"
GRADES = HERE.parent / "fixtures" / "ppi_study" / "grades.csv"
MACHINE = "judge-q"
BASELINE = "alpha"
KS = [3, 5]
DEPTH = 10


def read_csv(path):
    with open(path, newline="", encoding="utf-8-sig") as f:
        return list(csv.DictReader(f))


def lower_median(values):
    values = sorted(values)
    return values[(len(values) - 1) // 2]


def gain(level):
    return 2.0**level - 1.0


def dcg(gains, k):
    return sum(g / math.log2(pos + 1) for pos, g in enumerate(gains[:k], start=1))


def ndcg(ranked, levels, k):
    if not any(v > 0 for v in levels.values()):
        return 0.0
    got = dcg([gain(levels[i]) if i in levels else 0.0 for i in ranked], k)
    ideal = dcg(sorted((gain(v) for v in levels.values()), reverse=True), k)
    return got / ideal


def precision(ranked, levels, k):
    return sum(1 for i in ranked[:k] if levels.get(i, 0) >= 1) / k


def load():
    contexts = [r["context_id"] for r in read_csv(CATALOG / "contexts.csv")]
    lists = {}
    for r in read_csv(CATALOG / "rankings.csv"):
        lists.setdefault(r["ranker"], {}).setdefault(r["context_id"], []).append(
            (int(r["rank"]), r["item_id"])
        )
    lists = {n: {c: [i for _, i in sorted(e)] for c, e in ctx.items()} for n, ctx in lists.items()}
    people, machine, touched = {}, {}, set()
    for r in read_csv(GRADES):
        pair = (r["context_id"], r["item_id"])
        if r["kind"] == "machine":
            if r["value"] != "":
                machine[pair] = int(r["value"])
            continue
        touched.add(pair)
        if r["value"] != "":
            people.setdefault(pair, []).append(int(r["value"]))
    people = {p: lower_median(v) for p, v in people.items()}
    return contexts, lists, people, machine, touched


def by_context(levels, c):
    return {i: v for (cc, i), v in levels.items() if cc == c}


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    contexts, lists, people, machine, touched = load()
    rankers = sorted(lists)
    pool = {c: {i for r in rankers for i in lists[r].get(c, [])[:DEPTH]} for c in contexts}
    labelled = [c for c in contexts if all((c, i) in touched for i in pool[c])]
    unlabelled = [c for c in contexts if c not in labelled]
    metrics = [(f"ndcg@{k}", ndcg, k) for k in KS] + [(f"precision@{k}", precision, k) for k in KS]

    def values(r, name_fn, k, levels, cs):
        fn = name_fn
        return [fn(lists[r].get(c, []), by_context(levels, c), k) for c in cs]

    def estimate(y, yl, yu):
        y, yl, yu = np.array(y), np.array(yl), np.array(yu)
        lo, hi = ppi_mean_ci(y, yl, yu, alpha=0.05, lam=None)
        c_lo, c_hi = classical_mean_ci(y, alpha=0.05)
        return {
            "estimate": float(np.asarray(ppi_mean_pointestimate(y, yl, yu, lam=None)).item()),
            "ci_low": float(np.asarray(lo).item()),
            "ci_high": float(np.asarray(hi).item()),
            "human_only_mean": float(np.mean(y)),
            "human_only_ci_low": float(c_lo),
            "human_only_ci_high": float(c_hi),
            "machine_only_mean": float(np.mean(np.concatenate([yl, yu]))),
            "n_human": len(y),
            "n_machine": len(yu),
        }

    table = {}
    estimates = []
    for r in rankers:
        for name, fn, k in metrics:
            y = values(r, fn, k, people, labelled)
            yl = values(r, fn, k, machine, labelled)
            yu = values(r, fn, k, machine, unlabelled)
            table[(r, name)] = (y, yl, yu)
            estimates.append({"ranker": r, "metric": name, **estimate(y, yl, yu)})
    comparisons = []
    for r in rankers:
        if r == BASELINE:
            continue
        for name, _, _ in metrics:
            if not name.startswith("ndcg@"):
                continue
            a, b = table[(r, name)], table[(BASELINE, name)]
            d = [[x - z for x, z in zip(a[j], b[j])] for j in range(3)]
            comparisons.append(
                {"ranker": r, "baseline": BASELINE, "metric": name, **estimate(*d)}
            )
    obj = {
        "generated_by": {
            "python": platform.python_version(),
            "ppi-python": version("ppi-python"),
            "numpy": version("numpy"),
        },
        "fixture": "tests/fixtures/pool_bias (catalog, rankings) + tests/fixtures/ppi_study/grades.csv",
        "machine": MACHINE,
        "labelled": labelled,
        "unlabelled": unlabelled,
        "estimates": estimates,
        "estimate_comparisons": comparisons,
    }
    out_dir.mkdir(parents=True, exist_ok=True)
    path = out_dir / "ppi_study_expected.json"
    with open(path, "w", encoding="utf-8") as f:
        json.dump(obj, f, indent=1, sort_keys=True, allow_nan=False)
        f.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
