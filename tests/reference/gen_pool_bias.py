#!/usr/bin/env python3
"""Reference values for the pool-bias check (leave one ranker's unique pairs out).

Reads the hand-made fixture in tests/fixtures/pool_bias/ and writes
pool_bias_expected.json into the directory given as the first argument
(default: the directory holding this script, i.e. tests/reference/).

Everything is computed here from the definitions below, with the standard
library only, except Kendall's tau-b, which comes from scipy.

Definitions and their sources:
  panel level      lower median of the reviewers' values on a pair (sorted,
                   index (n-1)//2); can't-judge (empty value) is ignored; a pair
                   with only can't-judge is unjudged.            common practice
  gain             2**v - 1                                       common practice
  DCG@k / NDCG@k   discount 1/log2(i+1), ideal from every judged pair of the
                   context, unjudged positions gain 0.
                   Järvelin & Kekäläinen (2002), ACM TOIS
  judged@k         judged positions among the first min(k, len) divided by
                   min(k, len); an empty or missing list gives 0. common practice
  left out         a ranker's unique pairs (judged, in its top k, in no other
                   pooled ranker's top k) are treated as unjudged and taken out
                   of the ideal: Zobel (1998), SIGIR, "How reliable are the
                   results of large-scale information retrieval experiments?"
  kendall_tau_b    ranker order by mean against the order with one mean
                   replaced by its left-out value: Büttcher, Clarke, Yeung &
                   Soboroff (2007), SIGIR (rank-correlation view); tau-b from
                   Kendall (1945), computed by scipy.stats.kendalltau.
"""

import csv
import json
import math
import platform
import sys
from importlib.metadata import version
from pathlib import Path

import scipy.stats

HERE = Path(__file__).resolve().parent
FIXTURE = HERE.parent / "fixtures" / "pool_bias"
SCALE = "fit"
KS = [3, 5]
STUDY_RANKERS = ["alpha", "beta", "gamma"]

CASES = [
    # (name, ranking files added to the run)
    ("study", []),
    ("with_candidate", ["candidate.csv"]),
    ("beta_replaced", ["candidate_replaces.csv"]),
]

SOURCES = {
    "dcg_ndcg": "Järvelin & Kekäläinen (2002), ACM TOIS, "
    '"Cumulated gain-based evaluation of IR techniques"; discount 1/log2(i+1)',
    "gain": "common practice (2**v - 1)",
    "panel_level": "common practice (lower median of the reviewers' values, "
    "can't-judge ignored)",
    "judged_at_k": "common practice (judged share of the first min(k, len) positions)",
    "mean_left_out": 'Zobel (1998), SIGIR, "How reliable are the results of '
    'large-scale information retrieval experiments?" (leave-one-out pool test)',
    "drop": 'Zobel (1998), SIGIR, "How reliable are the results of '
    'large-scale information retrieval experiments?" (leave-one-out pool test)',
    "unique_pairs": 'Zobel (1998), SIGIR, "How reliable are the results of '
    'large-scale information retrieval experiments?" (leave-one-out pool test)',
    "judged_left_out": "common practice (judged@k with the unique pairs unjudged)",
    "kendall_tau_b": "Büttcher, Clarke, Yeung & Soboroff (2007), SIGIR "
    "(rank-correlation view); tau-b: Kendall (1945), "
    "scipy.stats.kendalltau (variant b)",
}


def read_csv(path):
    """Rows as dicts with lower-case header names."""
    with open(path, newline="", encoding="utf-8-sig") as f:
        rows = list(csv.reader(f))
    header = [h.strip().lower() for h in rows[0]]
    return [dict(zip(header, row)) for row in rows[1:]]


def lower_median(values):
    values = sorted(values)
    return values[(len(values) - 1) // 2]


def load_study(folder):
    contexts = [r["context_id"] for r in read_csv(folder / "contexts.csv")]
    items = {r["item_id"] for r in read_csv(folder / "items.csv")}

    # Latest row per (reviewer, context, item) wins; the fixture has one each.
    by_reviewer = {}
    for r in read_csv(folder / "grades.csv"):
        if r["scale"] != SCALE:
            continue
        by_reviewer[(r["reviewer"], r["context_id"], r["item_id"])] = r["value"].strip()
    values = {}
    for (_, c, i), v in by_reviewer.items():
        values.setdefault((c, i), [])
        if v != "":
            values[(c, i)].append(int(v))
    # levels[c][i]: panel level of every judged pair of context c
    levels = {c: {} for c in contexts}
    for (c, i), vs in values.items():
        if vs and c in levels:
            levels[c][i] = lower_median(vs)

    lists = {}
    for r in read_csv(folder / "rankings.csv"):
        lists.setdefault(r["ranker"], {}).setdefault(r["context_id"], []).append(
            (int(r["rank"]), r["item_id"])
        )
    study = {
        name: {c: [i for _, i in sorted(entries)] for c, entries in ctx.items()}
        for name, ctx in lists.items()
    }
    return contexts, items, levels, study


def load_file(path, contexts):
    """Score-ordered lists of a rankings file: higher score first, ties by
    item_id ascending as strings. Lists of unknown contexts are left out;
    returns (lists, number of distinct unknown contexts of the file)."""
    grouped = {}
    for r in read_csv(path):
        grouped.setdefault((r["ranker"], r["context_id"]), []).append(
            (float(r["score"]), r["item_id"])
        )
    known = set(contexts)
    lists = {}
    left_out = set()
    for (name, c), entries in grouped.items():
        if c not in known:
            left_out.add(c)
            continue
        entries.sort(key=lambda e: (-e[0], e[1]))
        lists.setdefault(name, {})[c] = [i for _, i in entries]
    return lists, len(left_out)


def gain(level):
    return 2.0**level - 1.0


def dcg(gains, k):
    return sum(g / math.log2(pos + 1) for pos, g in enumerate(gains[:k], start=1))


def ndcg(ranked, judged, k):
    """judged: item -> level of the pairs that count as judged."""
    got = dcg([gain(judged[i]) if i in judged else 0.0 for i in ranked], k)
    ideal = dcg(sorted((gain(v) for v in judged.values()), reverse=True), k)
    return got / ideal


def judged_at(ranked, judged, k):
    top = ranked[:k]
    if not top:
        return 0.0
    return sum(1 for i in top if i in judged) / len(top)


def mean(xs):
    return sum(xs) / len(xs)


def unique_pairs(name, c, k, ranked, judged, pool):
    """Judged items in ranked[:k] that no pooled ranker of another name has
    in its top k for context c (pool = the study's stored lists)."""
    others = set()
    for other, ctx in pool.items():
        if other != name:
            others.update(ctx.get(c, [])[:k])
    return {i for i in ranked[:k] if i in judged and i not in others}


def tau_b(x, y):
    if len(x) < 2:
        return None
    t = scipy.stats.kendalltau(x, y).statistic
    return None if math.isnan(t) else float(t)


def run_case(name, files, folder, contexts, levels, study):
    run = {r: dict(study[r]) for r in STUDY_RANKERS}
    left_out_of_files = 0
    for fname in files:
        lists, left_out = load_file(folder / fname, contexts)
        left_out_of_files += left_out
        for ranker, ctx in lists.items():
            run[ranker] = ctx  # a file ranker replaces every list of that name
    pool = {r: study[r] for r in STUDY_RANKERS}

    scored = [c for c in contexts if any(v > 0 for v in levels[c].values())]
    rankers = sorted(run)

    means = {}
    for r in rankers:
        m = {}
        for k in KS:
            m[f"ndcg@{k}"] = mean([ndcg(run[r].get(c, []), levels[c], k) for c in scored])
        for k in KS:
            m[f"judged@{k}"] = mean([judged_at(run[r].get(c, []), levels[c], k) for c in scored])
        means[r] = m

    rows = []
    for r in rankers:
        for k in KS:
            metric = f"ndcg@{k}"
            kept, judged_lo = [], []
            n_unique = 0
            for c in scored:
                ranked = run[r].get(c, [])
                u = unique_pairs(r, c, k, ranked, levels[c], pool)
                n_unique += len(u)
                reduced = {i: v for i, v in levels[c].items() if i not in u}
                judged_lo.append(judged_at(ranked, reduced, k))
                if any(v > 0 for v in reduced.values()):
                    kept.append(ndcg(ranked, reduced, k))
            full = means[r][metric]
            lo = mean(kept) if kept else None
            if lo is None:
                tau = None
            else:
                before = [means[x][metric] for x in rankers]
                after = [lo if x == r else means[x][metric] for x in rankers]
                tau = tau_b(before, after)
            rows.append(
                {
                    "ranker": r,
                    "metric": metric,
                    "mean": full,
                    "mean_left_out": lo,
                    "drop": None if lo is None else full - lo,
                    "contexts": len(kept),
                    "unique_pairs": n_unique,
                    "judged_left_out": mean(judged_lo),
                    "kendall_tau_b": tau,
                }
            )

    return {
        "name": name,
        "rankings_files": list(files),
        "ks": list(KS),
        "means": means,
        "contexts_scored": len(scored),
        "contexts_left_out_of_files": left_out_of_files,
        "pool_bias": rows,
    }


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    contexts, _items, levels, study = load_study(FIXTURE)
    obj = {
        "generated_by": {
            "python": platform.python_version(),
            "scipy": version("scipy"),
        },
        "fixture": "tests/fixtures/pool_bias",
        "scale": SCALE,
        "sources": SOURCES,
        "cases": [
            run_case(name, files, FIXTURE, contexts, levels, study) for name, files in CASES
        ],
    }
    out_dir.mkdir(parents=True, exist_ok=True)
    path = out_dir / "pool_bias_expected.json"
    with open(path, "w", encoding="utf-8") as f:
        json.dump(obj, f, indent=1, sort_keys=True, allow_nan=False)
        f.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
