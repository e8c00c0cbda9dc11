"""NDCG@10 from the same CSV files three ways: pandas + scikit-learn, polars + numpy, Plumbline.

Usage: python tests/bench/living_judgments.py target/release/plumbline [workdir] [--runs N]
       python tests/bench/living_judgments.py any-path [workdir] --peers-only   (peers only)

Writes the files of tests/bench/files_to_numbers.py (same generator, sizes, random state:
5 000 contexts x depth 50 x 3 rankers, every pooled pair graded once), then times
  1. pandas read_csv + merge + scikit-learn ndcg_score per ranker (means only),
  2. polars read_csv + join + group_by with DCG@10 and ideal DCG@10 (means only),
  3. plumbline new + import (peak memory of the import), score --k 10 (with the default
     bootstrap intervals and paired tests), and score --k 10 --rankings rankings.csv
     (the file's lists against the study's judgments, nothing imported).
After one untimed warm-up pass of each peer, each timed part runs --runs times; the medians
are printed, then the ratios the project targets. Ideal DCG rules: the peers' timed means
take the ideal from the ranked list itself (what ndcg_score does); Plumbline takes it from
every graded pair of the context, so polars is also run under that rule to check
Plumbline's means to 1e-9.
Peer versions: tests/bench/requirements.txt (pip install -r it into a venv).
"""
import argparse
import json
import math
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np
import pandas as pd
import polars as pl
import sklearn
from sklearn.metrics import ndcg_score

CONTEXTS, DEPTH, RANKERS, CANDIDATES, ITEMS = 5_000, 50, 3, 80, 20_000
K = 10
TOLERANCE = 1e-9

GOALS = [  # (label, goal, higher is better)
    ("polars / plumbline score", 2.0, True),
    ("polars / plumbline score --rankings", 1.5, True),
    ("pandas+sklearn / plumbline new+import+score", 1.0, True),
    ("plumbline import peak memory (MB)", 200.0, False),
]


def write_files(work):
    """The generator of files_to_numbers.py, unchanged, so both benchmarks see the same files."""
    rng = np.random.default_rng(12)
    pd.DataFrame({"item_id": [f"it{i:05d}" for i in range(ITEMS)],
                  "title": [f"Item {i}" for i in range(ITEMS)]}).to_csv(f"{work}/items.csv", index=False)
    pd.DataFrame({"context_id": [f"c{c:05d}" for c in range(CONTEXTS)], "kind": "query",
                  "text": [f"query {c}" for c in range(CONTEXTS)]}).to_csv(f"{work}/contexts.csv", index=False)
    pd.DataFrame({"scale": "fit", "value": [0, 1, 2, 3],
                  "label": ["Off", "Loose", "Good", "Spot on"]}).to_csv(f"{work}/scales.csv", index=False)
    ranking_parts, grade_parts = [], []
    for c in range(CONTEXTS):
        candidates = rng.choice(ITEMS, CANDIDATES, replace=False)
        levels = rng.choice(4, CANDIDATES, p=[0.6, 0.2, 0.12, 0.08])
        pooled = set()
        for r in range(RANKERS):
            keys = levels + rng.normal(0, 1.2 + 0.2 * r, CANDIDATES)
            order = np.argsort(-keys)[:DEPTH]
            pooled.update(order.tolist())
            ranking_parts.append(pd.DataFrame({"ranker": f"ranker-{r}", "context_id": f"c{c:05d}",
                                               "item_id": [f"it{candidates[i]:05d}" for i in order],
                                               "rank": np.arange(1, DEPTH + 1)}))
        pooled = sorted(pooled)
        grade_parts.append(pd.DataFrame({"reviewer": "rev", "context_id": f"c{c:05d}",
                                         "item_id": [f"it{candidates[i]:05d}" for i in pooled],
                                         "scale": "fit", "value": levels[pooled]}))
    rankings = pd.concat(ranking_parts)
    grades = pd.concat(grade_parts)
    rankings.to_csv(f"{work}/rankings.csv", index=False)
    grades.to_csv(f"{work}/grades.csv", index=False)
    return len(rankings) + len(grades) + ITEMS + CONTEXTS + 4


def pandas_sklearn(work):
    """The notebook way, as in files_to_numbers.py: timed from read_csv to the means."""
    t0 = time.perf_counter()
    rankings = pd.read_csv(f"{work}/rankings.csv")
    grades = pd.read_csv(f"{work}/grades.csv")
    merged = rankings.merge(grades[["context_id", "item_id", "value"]], on=["context_id", "item_id"], how="left")
    merged["gain"] = 2.0 ** merged["value"].fillna(0) - 1.0
    merged = merged.sort_values(["ranker", "context_id", "rank"])
    # Rows arrive in rank order, so descending scores reproduce each ranking exactly.
    scores = np.tile(np.arange(DEPTH, 0, -1, dtype=float), (CONTEXTS, 1))
    means = {}
    for ranker, part in merged.groupby("ranker"):
        y_true = part["gain"].to_numpy().reshape(CONTEXTS, DEPTH)
        means[ranker] = float(ndcg_score(y_true, scores, k=K))
    return time.perf_counter() - t0, means


def _best_k_dcg(gain):
    # Sorted top-k gains against the discounts 1/log2(position+1); int_range keeps lists
    # shorter than k right.
    return (pl.col(gain).top_k(K).sort(descending=True)
            / (pl.int_range(pl.len().clip(upper_bound=K)) + 2).log(2)).sum()


def _polars_lists(work):
    # Only the columns used are parsed; the rest of the work stays lazy so polars can fuse it.
    rankings = pl.read_csv(f"{work}/rankings.csv", columns=["ranker", "context_id", "item_id", "rank"])
    grades = pl.read_csv(f"{work}/grades.csv", columns=["context_id", "item_id", "value"])
    gains = grades.lazy().select("context_id", "item_id", gain=pl.lit(2.0).pow(pl.col("value")) - 1.0)
    lists = (rankings.lazy().join(gains, on=["context_id", "item_id"], how="left")
             .with_columns(pl.col("gain").fill_null(0.0)))  # unjudged counts as gain 0
    return lists, gains


def _dcg():
    return (pl.col("gain") / (pl.col("rank") + 1).log(2)).filter(pl.col("rank") <= K).sum()


def polars_notebook_rule(work):
    """Ideal DCG@10 from each ranked list's own best ten, like ndcg_score; 0 when it is 0."""
    t0 = time.perf_counter()
    lists, _ = _polars_lists(work)
    per_list = lists.group_by("ranker", "context_id").agg(dcg=_dcg(), ideal=_best_k_dcg("gain"))
    means = (per_list.group_by("ranker")
             .agg(ndcg=pl.when(pl.col("ideal") > 0).then(pl.col("dcg") / pl.col("ideal")).otherwise(0.0).mean())
             .collect(engine="streaming"))
    return time.perf_counter() - t0, dict(zip(means["ranker"], means["ndcg"]))


def polars_plumbline_rule(work):
    """Ideal DCG@10 from every graded pair of the context; contexts with ideal 0 are left out,
    as Plumbline scores only contexts with a relevant item."""
    t0 = time.perf_counter()
    lists, gains = _polars_lists(work)
    ideals = gains.group_by("context_id").agg(ideal=_best_k_dcg("gain")).filter(pl.col("ideal") > 0)
    per_list = lists.group_by("ranker", "context_id").agg(dcg=_dcg())
    means = (per_list.join(ideals, on="context_id", how="inner").group_by("ranker")
             .agg(ndcg=(pl.col("dcg") / pl.col("ideal")).mean())
             .collect(engine="streaming"))
    return time.perf_counter() - t0, dict(zip(means["ranker"], means["ndcg"]))


def remove_study(study):
    for suffix in ("", "-wal", "-shm"):
        if os.path.exists(study + suffix):
            os.remove(study + suffix)


# A child started from this big Python process inherits its peak RSS at exec (Linux keeps
# the old address space's high-water mark), so wait4 or RUSAGE_CHILDREN here would report
# pandas' memory. A small launcher in between keeps only the import's own peak.
TIME_V = "/usr/bin/time"
LAUNCHER = ("import os, subprocess, sys; p = subprocess.Popen(sys.argv[1:]); _, s, u = os.wait4(p.pid, 0); "
            "print(u.ru_maxrss, file=sys.stderr); sys.exit(os.waitstatus_to_exitcode(s))")


def memory_probe():
    if os.access(TIME_V, os.X_OK) and subprocess.run([TIME_V, "-v", "true"], capture_output=True).returncode == 0:
        return "/usr/bin/time -v"
    return "a small python launcher (wait4)"


def run_measured(cmd, work, name):
    """Runs cmd and returns its peak RSS in MB."""
    with_time = memory_probe().startswith("/usr/bin/time")
    wrapped = [TIME_V, "-v", *cmd] if with_time else [sys.executable, "-c", LAUNCHER, *cmd]
    with open(f"{work}/{name}.out", "wb") as out, open(f"{work}/{name}.err", "wb") as err:
        code = subprocess.run(wrapped, stdout=out, stderr=err).returncode
    lines = open(f"{work}/{name}.err", errors="replace").read().splitlines()
    if code != 0:
        sys.exit(f"{' '.join(cmd)} failed ({code}): {chr(10).join(lines[:40])}")
    if with_time:
        kib = next(int(l.split(":")[1]) for l in lines if "Maximum resident set size" in l)
    else:
        kib = int(lines[-1])
    return kib / 1024.0  # both report KiB


def ndcg_means(board):
    return {r["ranker"]: r["metrics"][f"ndcg@{K}"]["mean"] for r in board["rankers"]}


def plumbline(binary, work):
    """One timed pass: new + import (with peak memory), score, score --rankings."""
    study = f"{work}/bench.plumb"
    remove_study(study)
    t0 = time.perf_counter()
    subprocess.run([binary, "new", study], check=True, capture_output=True)
    peak_mb = run_measured([binary, "import", study, "--items", f"{work}/items.csv",
                            "--contexts", f"{work}/contexts.csv", "--scales", f"{work}/scales.csv",
                            "--rankings", f"{work}/rankings.csv", "--grades", f"{work}/grades.csv"],
                           work, "import")
    t1 = time.perf_counter()
    out = subprocess.run([binary, "score", study, "--k", str(K), "--format", "json"],
                         check=True, capture_output=True, text=True).stdout
    t2 = time.perf_counter()
    from_file = subprocess.run([binary, "score", study, "--k", str(K), "--rankings", f"{work}/rankings.csv",
                                "--format", "json"], capture_output=True, text=True)
    t3 = time.perf_counter()
    result = {"new_import": t1 - t0, "score": t2 - t1, "peak_mb": peak_mb, "means": ndcg_means(json.loads(out))}
    if from_file.returncode == 0:
        result["score_rankings"] = t3 - t2
        result["rankings_means"] = ndcg_means(json.loads(from_file.stdout))
    else:
        result["rankings_refused"] = (from_file.stderr.strip().splitlines() or ["(no message)"])[0]
    return result


def agree(a, b):
    return set(a) == set(b) and all(abs(a[r] - b[r]) <= TOLERANCE for r in a)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("binary", help="path to the plumbline binary")
    parser.add_argument("workdir", nargs="?", help="where the CSV files and the study go (default: a new temp dir)")
    parser.add_argument("--runs", type=int, default=1, help="repeat each timed part N times, print medians")
    parser.add_argument("--peers-only", action="store_true", help="time pandas and polars only")
    args = parser.parse_args()
    binary = os.path.abspath(args.binary)
    run_plumbline = not args.peers_only
    if run_plumbline and not os.access(binary, os.X_OK):
        sys.exit(f"{binary} is not an executable; build it, or pass --peers-only to time the peers alone")
    work = os.path.abspath(args.workdir or tempfile.mkdtemp(prefix="plumbline-bench-"))
    os.makedirs(work, exist_ok=True)

    t = time.perf_counter()
    rows = write_files(work)
    print(f"{rows} CSV rows written to {work} in {time.perf_counter() - t:.1f} s")
    print(f"python {platform.python_version()}, pandas {pd.__version__}, scikit-learn {sklearn.__version__}, "
          f"polars {pl.__version__}, numpy {np.__version__}; polars threads {pl.thread_pool_size()}, "
          f"cores {os.cpu_count()}")

    # One untimed pass of each peer first: their one-off start-up (thread pools, lazy
    # imports) would otherwise land in run 1, and the targets are against them warmed up.
    pandas_sklearn(work)
    polars_notebook_rule(work)
    polars_plumbline_rule(work)

    timings = {k: [] for k in ("pandas", "polars", "polars_plumbline_rule",
                               "new_import", "score", "score_rankings", "peak_mb")}
    for run in range(args.runs):
        # Interleaved so that drift on the machine hits every contender alike.
        t_pd, pd_means = pandas_sklearn(work)
        t_pl, pl_means = polars_notebook_rule(work)
        t_plr, pl_rule_means = polars_plumbline_rule(work)
        timings["pandas"].append(t_pd)
        timings["polars"].append(t_pl)
        timings["polars_plumbline_rule"].append(t_plr)
        line = f"run {run + 1}: pandas+sklearn {t_pd:.3f} s, polars {t_pl:.3f} s (plumbline rule {t_plr:.3f} s)"
        if run_plumbline:
            pb = plumbline(binary, work)
            for key in ("new_import", "score", "score_rankings", "peak_mb"):
                if key in pb:
                    timings[key].append(pb[key])
            line += f", plumbline new+import {pb['new_import']:.3f} s ({pb['peak_mb']:.0f} MB), score {pb['score']:.3f} s"
            if "score_rankings" in pb:
                line += f", score --rankings {pb['score_rankings']:.3f} s"
        print(line)

    med = {k: statistics.median(v) for k, v in timings.items() if v}
    runs_note = f" (median of {args.runs})" if args.runs > 1 else ""
    print(f"\nTimings{runs_note}, from reading the CSV files to the NDCG@{K} means:")
    print(f"  pandas + scikit-learn ndcg_score:          {med['pandas']:.3f} s")
    print(f"  polars + numpy (ideal from the list):      {med['polars']:.3f} s")
    print(f"  polars + numpy (ideal from the context):   {med['polars_plumbline_rule']:.3f} s")
    if run_plumbline:
        print(f"  plumbline new + import:                    {med['new_import']:.3f} s")
        print(f"  plumbline import peak memory:              {med['peak_mb']:.1f} MB (by {memory_probe()})")
        print(f"  plumbline score (intervals + tests):       {med['score']:.3f} s")
        if "score_rankings" in med:
            print(f"  plumbline score --rankings rankings.csv:   {med['score_rankings']:.3f} s")
        else:
            print(f"  plumbline score --rankings rankings.csv:   refused: {pb['rankings_refused']}")

    print(f"\nIdeal DCG rule of the peers' timed means: the notebook rule (each ranked list's own "
          f"best {K} gains, as ndcg_score does).")
    print(f"pandas and polars agree to {TOLERANCE:g} under that rule: {'OK' if agree(pd_means, pl_means) else 'DIFFERS'}")
    print(f"\nNDCG@{K} means per ranker:")
    header = f"  {'ranker':<10} {'pandas+sklearn':>15} {'polars':>15} {'polars ctx-ideal':>17}"
    if run_plumbline:
        header += f" {'plumbline':>15}"
        if "rankings_means" in pb:
            header += f" {'pb --rankings':>15}"
    print(header)
    for r in sorted(pd_means):
        line = f"  {r:<10} {pd_means[r]:>15.12f} {pl_means[r]:>15.12f} {pl_rule_means.get(r, math.nan):>17.12f}"
        if run_plumbline:
            line += f" {pb['means'].get(r, math.nan):>15.12f}"
            if "rankings_means" in pb:
                line += f" {pb['rankings_means'].get(r, math.nan):>15.12f}"
        print(line)
    if not run_plumbline:
        print("\nPlumbline part skipped (--peers-only).")
        return
    print(f"polars under Plumbline's rule (ideal from every graded pair of the context) vs plumbline score, "
          f"to {TOLERANCE:g}: {'OK' if agree(pl_rule_means, pb['means']) else 'DIFFERS'}")
    if "rankings_means" in pb:
        print(f"same vs plumbline score --rankings: {'OK' if agree(pl_rule_means, pb['rankings_means']) else 'DIFFERS'}")

    values = [med["polars"] / med["score"],
              med["polars"] / med["score_rankings"] if "score_rankings" in med else None,
              med["pandas"] / (med["new_import"] + med["score"]),
              med["peak_mb"]]
    print("\nTargets:")
    for (label, goal, higher), value in zip(GOALS, values):
        if value is None:
            print(f"  {label:<46} {'n/a':>8}   goal >= {goal:g}  (option refused)")
            continue
        met = value >= goal if higher else value <= goal
        unit = "" if label.endswith("(MB)") else "x"
        print(f"  {label:<46} {value:8.2f}{unit:<2} goal {'>=' if higher else '<='} {goal:g}  "
              f"{'MET' if met else 'MISSED'}")
    print(f"  (polars under Plumbline's rule / plumbline score: {med['polars_plumbline_rule'] / med['score']:.2f}x)")


if __name__ == "__main__":
    main()
