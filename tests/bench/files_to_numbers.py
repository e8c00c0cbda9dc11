"""From CSV files to NDCG@10: Plumbline's command line against the notebook way.

Generates 5 000 contexts x depth 50 x 3 rankers with every pooled pair graded (about a
million CSV rows, fixed seed), then times
  (a) plumbline new + import + score --k 10 (with bootstrap intervals and paired tests), and
  (b) pandas read_csv + merge + scikit-learn ndcg_score per ranker (no intervals, no tests).
Usage: python tests/bench/files_to_numbers.py target/release/plumbline [workdir]
The notebook way takes the ideal DCG from each ranked list alone (what ndcg_score does);
Plumbline takes it from every judged item of the context, so the means differ slightly.
"""
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
import pandas as pd
from sklearn.metrics import ndcg_score

CONTEXTS, DEPTH, RANKERS, CANDIDATES, ITEMS = 5_000, 50, 3, 80, 20_000

binary = os.path.abspath(sys.argv[1])
work = sys.argv[2] if len(sys.argv) > 2 else tempfile.mkdtemp(prefix="plumbline-bench-")
os.makedirs(work, exist_ok=True)
rng = np.random.default_rng(12)


def write_files():
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


rows = write_files()
study = f"{work}/bench.plumb"
for suffix in ("", "-wal", "-shm"):
    if os.path.exists(study + suffix):
        os.remove(study + suffix)

t0 = time.perf_counter()
subprocess.run([binary, "new", study], check=True, capture_output=True)
subprocess.run([binary, "import", study, "--items", f"{work}/items.csv", "--contexts", f"{work}/contexts.csv",
                "--scales", f"{work}/scales.csv", "--rankings", f"{work}/rankings.csv",
                "--grades", f"{work}/grades.csv"], check=True, capture_output=True)
t1 = time.perf_counter()
out = subprocess.run([binary, "score", study, "--k", "10", "--baseline", "ranker-0", "--format", "json"],
                     check=True, capture_output=True, text=True).stdout
t2 = time.perf_counter()
import json
board = json.loads(out)
ours = {r["ranker"]: r["metrics"]["ndcg@10"]["mean"] for r in board["rankers"]}

t3 = time.perf_counter()
rankings = pd.read_csv(f"{work}/rankings.csv")
grades = pd.read_csv(f"{work}/grades.csv")
merged = rankings.merge(grades[["context_id", "item_id", "value"]], on=["context_id", "item_id"], how="left")
merged["gain"] = 2.0 ** merged["value"].fillna(0) - 1.0
merged = merged.sort_values(["ranker", "context_id", "rank"])
theirs = {}
scores = np.tile(np.arange(DEPTH, 0, -1, dtype=float), (CONTEXTS, 1))
for ranker, part in merged.groupby("ranker"):
    y_true = part["gain"].to_numpy().reshape(CONTEXTS, DEPTH)
    theirs[ranker] = ndcg_score(y_true, scores, k=10)
t4 = time.perf_counter()

print(f"{rows} CSV rows in {work}")
print(f"plumbline new+import: {t1 - t0:.2f} s, score (with CIs and tests): {t2 - t1:.2f} s, total {t2 - t0:.2f} s")
print(f"pandas+scikit-learn (means only): {t4 - t3:.2f} s")
print(f"ratio notebook / plumbline end to end: {(t4 - t3) / (t2 - t0):.2f}x")
for r in sorted(ours):
    print(f"{r}: plumbline ndcg@10 {ours[r]:.4f}, notebook {theirs[r]:.4f}")
