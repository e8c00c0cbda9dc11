"""Times scikit-learn's ndcg_score on the arrays written by tests/bench_scoring.rs.

Usage: PLUMBLINE_BENCH_DIR=/tmp/pb cargo test --release --test bench_scoring -- --ignored --nocapture
       python tests/bench/sklearn_ndcg.py /tmp/pb [plumbline_metrics_seconds]
Prints the mean NDCG@10 per ranker (to confirm both computed the same thing), the time,
and the ratio against Plumbline's time when given.
"""
import sys
import time

import numpy as np
import sklearn
from sklearn.metrics import ndcg_score

RANKERS, CONTEXTS, DEPTH = 3, 20_000, 100

folder = sys.argv[1]
levels = np.fromfile(f"{folder}/ranked_levels.u8", dtype=np.uint8).reshape(RANKERS, CONTEXTS, DEPTH)
gains = (2.0 ** levels.astype(np.float64)) - 1.0
# Items arrive in rank order, so a descending score reproduces the ranking exactly.
scores = np.tile(np.arange(DEPTH, 0, -1, dtype=np.float64), (CONTEXTS, 1))

runs = []
for _ in range(3):
    start = time.perf_counter()
    means = [ndcg_score(gains[r], scores, k=10) for r in range(RANKERS)]
    runs.append(time.perf_counter() - start)
elapsed = sorted(runs)[1]
print(f"scikit-learn {sklearn.__version__}, numpy {np.__version__}")
for r, m in enumerate(means):
    print(f"ranker-{r} mean ndcg@10 = {m:.12f}")
print(f"ndcg_score, 3 rankers x {CONTEXTS} contexts x depth {DEPTH}: {elapsed:.3f} s (median of 3)")
if len(sys.argv) > 2:
    ours = float(sys.argv[2])
    print(f"ratio scikit-learn / Plumbline: {elapsed / ours:.1f}x")
