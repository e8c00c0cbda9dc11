"""Files to numbers at one or more sizes: Plumbline beside pandas + scikit-learn and polars + numpy.

Usage:
  python tests/bench/living_judgments.py BINARY [WORKDIR] [--scale 1] [--scale 10] [--runs N]
                                         [--bound] [--write-readme] [--peers-only]

For each --scale S (default 1) the files of tests/bench/files_to_numbers.py are written
(same generator, sizes and random state, with S x 5 000 contexts: depth 50, 3 rankers,
every pooled pair graded once; kept in WORKDIR/xS and reused while their stamp matches).
Then, --runs times each (medians printed, peaks the largest seen):
  1. pandas read_csv + merge + scikit-learn ndcg_score per ranker (means only), and
  2. polars read_csv + join + group_by with DCG@10 and ideal DCG@10 (means only), each in a
     child process after one untimed warm-up pass there;
  3. plumbline `new` + `import`, `score --k 10`, `score --k 10 --rankings rankings.csv`,
     `view scoreboard`, `status`, `view home` and `agree`, each timed with its peak
     resident memory (by /usr/bin/time -v, or a small launcher that waits for it).
--bound also times the store's bound: the rows the import keeps, written by bare prepared
inserts (tests/bench/bench_store_bound.rs, built with cargo). Ratios against the peers and
the goals of the project follow. --write-readme rewrites the table between the
`living-judgments` markers of README.md's Performance section, with the machine and date.

Ideal DCG rules: the peers' timed means take the ideal from the ranked list itself (what
ndcg_score does); Plumbline takes it from every graded pair of the context, so polars is
also run under that rule to check Plumbline's means to 1e-9.
Peer versions: tests/bench/requirements.txt (pip install -r it into a venv).
"""
import argparse
import datetime
import json
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

BASE_CONTEXTS, DEPTH, RANKERS, CANDIDATES, ITEMS = 5_000, 50, 3, 80, 20_000
K = 10
TOLERANCE = 1e-9
GENERATOR = "files_to_numbers v1"  # change when write_files changes, so stamps go stale
REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
BEGIN = "<!-- living-judgments: begin (written by tests/bench/living_judgments.py --write-readme) -->"
END = "<!-- living-judgments: end -->"

# The plumbline steps timed after new + import: (label, arguments after the binary).
STEPS = [
    ("score --k 10", lambda s, w: ["score", s, "--k", str(K), "--format", "json"]),
    ("score --k 10 --rankings rankings.csv",
     lambda s, w: ["score", s, "--k", str(K), "--rankings", f"{w}/rankings.csv", "--format", "json"]),
    ("view scoreboard", lambda s, w: ["view", "scoreboard", s]),
    ("status", lambda s, w: ["status", s]),
    ("view home", lambda s, w: ["view", "home", s]),
    ("agree", lambda s, w: ["agree", s]),
]


def write_files(work, contexts):
    """The generator of files_to_numbers.py, unchanged but for the number of contexts."""
    rng = np.random.default_rng(12)
    pd.DataFrame({"item_id": [f"it{i:05d}" for i in range(ITEMS)],
                  "title": [f"Item {i}" for i in range(ITEMS)]}).to_csv(f"{work}/items.csv", index=False)
    pd.DataFrame({"context_id": [f"c{c:05d}" for c in range(contexts)], "kind": "query",
                  "text": [f"query {c}" for c in range(contexts)]}).to_csv(f"{work}/contexts.csv", index=False)
    pd.DataFrame({"scale": "fit", "value": [0, 1, 2, 3],
                  "label": ["Off", "Loose", "Good", "Spot on"]}).to_csv(f"{work}/scales.csv", index=False)
    ranking_parts, grade_parts = [], []
    for c in range(contexts):
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
    return {"rankings": len(rankings), "grades": len(grades), "rows": len(rankings) + len(grades) + ITEMS + contexts + 4}


def files_for(work, scale):
    """The files of one scale, written unless a stamp says they are there already."""
    os.makedirs(work, exist_ok=True)
    stamp_path = f"{work}/stamp.json"
    wanted = {"generator": GENERATOR, "contexts": BASE_CONTEXTS * scale}
    try:
        stamp = json.load(open(stamp_path))
        if all(stamp.get(k) == v for k, v in wanted.items()):
            return stamp
    except (OSError, ValueError):
        pass
    t = time.perf_counter()
    counts = write_files(work, BASE_CONTEXTS * scale)
    stamp = {**wanted, **counts,
             "bytes": sum(os.path.getsize(f"{work}/{n}.csv") for n in ("items", "contexts", "scales", "rankings", "grades"))}
    json.dump(stamp, open(stamp_path, "w"))
    print(f"  {stamp['rows']} CSV rows written to {work} in {time.perf_counter() - t:.0f} s")
    return stamp


def pandas_sklearn(work, contexts):
    """The notebook way, as in files_to_numbers.py: timed from read_csv to the means."""
    t0 = time.perf_counter()
    rankings = pd.read_csv(f"{work}/rankings.csv")
    grades = pd.read_csv(f"{work}/grades.csv")
    merged = rankings.merge(grades[["context_id", "item_id", "value"]], on=["context_id", "item_id"], how="left")
    merged["gain"] = 2.0 ** merged["value"].fillna(0) - 1.0
    merged = merged.sort_values(["ranker", "context_id", "rank"])
    # Rows arrive in rank order, so descending scores reproduce each ranking exactly.
    scores = np.tile(np.arange(DEPTH, 0, -1, dtype=float), (contexts, 1))
    means = {}
    for ranker, part in merged.groupby("ranker"):
        y_true = part["gain"].to_numpy().reshape(contexts, DEPTH)
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


def polars_notebook_rule(work, contexts):
    """Ideal DCG@10 from each ranked list's own best ten, like ndcg_score; 0 when it is 0."""
    t0 = time.perf_counter()
    lists, _ = _polars_lists(work)
    per_list = lists.group_by("ranker", "context_id").agg(dcg=_dcg(), ideal=_best_k_dcg("gain"))
    means = (per_list.group_by("ranker")
             .agg(ndcg=pl.when(pl.col("ideal") > 0).then(pl.col("dcg") / pl.col("ideal")).otherwise(0.0).mean())
             .collect(engine="streaming"))
    return time.perf_counter() - t0, dict(zip(means["ranker"], means["ndcg"]))


def polars_plumbline_rule(work, contexts):
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


PEERS = {"pandas": pandas_sklearn, "polars": polars_notebook_rule, "polars_rule": polars_plumbline_rule}


def run_peer_here(which, work, contexts, runs):
    """Child mode: one untimed warm-up pass (thread pools, lazy imports), then the timed runs."""
    PEERS[which](work, contexts)
    seconds, means = [], {}
    for _ in range(runs):
        s, means = PEERS[which](work, contexts)
        seconds.append(s)
    print(json.dumps({"seconds": seconds, "means": means}))


# A child started from a big Python process inherits its peak RSS at exec (Linux keeps the
# old address space's high-water mark), so wait4 here would report this process's memory.
# /usr/bin/time -v, or a small launcher in between, keeps only the child's own peak.
TIME_V = "/usr/bin/time"
LAUNCHER = ("import os, subprocess, sys; p = subprocess.Popen(sys.argv[1:]); _, s, u = os.wait4(p.pid, 0); "
            "print(u.ru_maxrss, file=sys.stderr); sys.exit(os.waitstatus_to_exitcode(s))")


def memory_probe():
    if os.access(TIME_V, os.X_OK) and subprocess.run([TIME_V, "-v", "true"], capture_output=True).returncode == 0:
        return "/usr/bin/time -v"
    return "a small python launcher (wait4)"


def measured(cmd):
    """Runs cmd; returns (seconds, peak RSS in MB, stdout)."""
    with_time = memory_probe().startswith("/usr/bin/time")
    wrapped = [TIME_V, "-v", *cmd] if with_time else [sys.executable, "-c", LAUNCHER, *cmd]
    t = time.perf_counter()
    out = subprocess.run(wrapped, capture_output=True, text=True)
    seconds = time.perf_counter() - t
    lines = out.stderr.splitlines()
    if out.returncode != 0:
        sys.exit(f"{' '.join(cmd)} failed ({out.returncode}): {chr(10).join(lines[:40])}")
    if with_time:
        kib = next(int(l.split(":")[1]) for l in lines if "Maximum resident set size" in l)
    else:
        kib = int(lines[-1])
    return seconds, kib / 1024.0, out.stdout


def peer(which, work, contexts, runs):
    """A peer in a child process: (median seconds, peak MB, means)."""
    _, peak, out = measured([sys.executable, os.path.abspath(__file__), "--peer", which,
                             "--contexts", str(contexts), "--runs", str(runs), "unused", work])
    result = json.loads(out.strip().splitlines()[-1])
    return statistics.median(result["seconds"]), peak, result["means"]


def ndcg_means(board):
    return {r["ranker"]: r["metrics"][f"ndcg@{K}"]["mean"] for r in board["rankers"]}


def plumbline_run(binary, work):
    """One pass of every step on a fresh study: {step: (seconds, peak MB)} and the means."""
    study = f"{work}/bench.plumb"
    for suffix in ("", "-wal", "-shm"):
        if os.path.exists(study + suffix):
            os.remove(study + suffix)
    t_new, m_new, _ = measured([binary, "new", study])
    t_imp, m_imp, _ = measured([binary, "import", study, "--items", f"{work}/items.csv",
                                "--contexts", f"{work}/contexts.csv", "--scales", f"{work}/scales.csv",
                                "--rankings", f"{work}/rankings.csv", "--grades", f"{work}/grades.csv"])
    steps = {"new + import": (t_new + t_imp, max(m_new, m_imp))}
    means = {}
    for label, args in STEPS:
        seconds, peak, out = measured([binary, *args(study, work)])
        steps[label] = (seconds, peak)
        if label.startswith("score"):
            means[label] = ndcg_means(json.loads(out))
    return steps, means


def store_bound(work):
    """The bare-insert bound of tests/bench/bench_store_bound.rs: (rows, seconds), or None."""
    env = {**os.environ, "PLUMBLINE_BENCH_FILES": work}
    out = subprocess.run(["cargo", "test", "--release", "--test", "bench", "--", "--ignored", "--nocapture",
                          "store_bound"], cwd=REPO, env=env, capture_output=True, text=True)
    for line in out.stdout.splitlines():
        if line.startswith("store bound:"):
            words = line.split()
            return int(words[2]), float(words[5])
    print(f"  store bound not measured: {(out.stderr.strip().splitlines() or ['?'])[-1]}")
    return None


def agree(a, b):
    return set(a) == set(b) and all(abs(a[r] - b[r]) <= TOLERANCE for r in a)


def one_scale(args, binary, scale):
    work = os.path.join(args.workdir, f"x{scale}")
    contexts = BASE_CONTEXTS * scale
    print(f"\n== {scale}x: {contexts} contexts x depth {DEPTH} x {RANKERS} rankers ({work})")
    stamp = files_for(work, scale)
    runs = args.runs if scale == 1 else 1  # a larger study is long to run: once
    r = {"scale": scale, "stamp": stamp, "runs": runs}
    for which in PEERS:
        r[which] = peer(which, work, contexts, runs)
        print(f"  {which}: {r[which][0]:.3f} s, peak {r[which][1]:.0f} MB")
    if args.peers_only:
        return r
    passes = []
    for n in range(runs):
        steps, means = plumbline_run(binary, work)
        passes.append(steps)
        print(f"  run {n + 1}: " + ", ".join(f"{k} {s:.2f} s / {m:.0f} MB" for k, (s, m) in steps.items()))
    r["steps"] = {k: (statistics.median(p[k][0] for p in passes), max(p[k][1] for p in passes))
                  for k in passes[0]}
    r["means"] = means
    if args.bound:
        r["bound"] = store_bound(work)
    return r


def machine():
    model = next((l.split(":", 1)[1].strip() for l in open("/proc/cpuinfo") if l.startswith("model name")),
                 platform.processor() or "unknown CPU")
    kib = next((int(l.split()[1]) for l in open("/proc/meminfo") if l.startswith("MemTotal")), 0)
    return {"cores": os.cpu_count(), "ram_gib": kib / 2**20, "cpu": model,
            "os": f"{platform.system()} {platform.machine()}", "load": os.getloadavg()[0],
            "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d")}


def fmt_rows(n):
    return f"{n / 1e6:.2f} M" if n >= 1e6 else f"{n / 1e3:.0f} k"


def grouped(n):
    """A whole number with spaces between groups of three digits, as the README writes them."""
    return f"{n:,.0f}".replace(",", " ")


def goals(results):
    """(label, {scale: text}) rows of ratios and goals."""
    by = {r["scale"]: r for r in results if "steps" in r}
    out = []

    def ratio(label, goal, value_of, higher=True, unit="×"):
        cells = {}
        for s, r in by.items():
            v = value_of(r)
            if v is None:
                continue
            met = v >= goal if higher else v <= goal
            shown = f"{v:.0f}" if unit.strip() in ("MB", "s") else f"{v:.2f}"
            cells[s] = f"{shown}{unit} ({'met' if met else '**missed**'})"
        out.append((f"{label} (goal {'≥' if higher else '≤'} {goal:g}{unit})", cells))

    st = lambda r, k: r["steps"][k][0]
    ratio("pandas + scikit-learn / plumbline `new` + `import` + `score`", 1.0,
          lambda r: r["pandas"][0] / (st(r, "new + import") + st(r, "score --k 10")))
    ratio("polars / plumbline `score`", 2.0, lambda r: r["polars"][0] / st(r, "score --k 10"))
    ratio("polars / plumbline `score --rankings`", 1.5,
          lambda r: r["polars"][0] / st(r, "score --k 10 --rankings rankings.csv"))
    ratio("import peak memory", 300, lambda r: r["steps"]["new + import"][1], higher=False, unit=" MB")
    if 1 in by:
        per_row = lambda r: st(r, "new + import") / r["stamp"]["rows"]
        ratio("import cost per row against 1×", 1.25,
              lambda r: per_row(r) / per_row(by[1]) if r["scale"] != 1 else None, higher=False)
    ratio("10× `new` + `import`", 25, lambda r: st(r, "new + import") if r["scale"] == 10 else None,
          higher=False, unit=" s")
    return out


def markdown(results, info, args):
    scales = [r for r in results if "steps" in r]
    head = "| step | " + " | ".join(
        f"{r['scale']}× ({grouped(r['stamp']['contexts'])} contexts; {fmt_rows(r['stamp']['rows'])} CSV rows, "
        f"{r['stamp']['bytes'] / 1e6:.0f} MB)" for r in scales) + " |"
    lines = [BEGIN, "",
             f"Measured {info['date']} on {info['os']}, {info['cores']} cores ({info['cpu']}), "
             f"{info['ram_gib']:.0f} GiB RAM, load average {info['load']:.1f} when the run began "
             f"(a shared machine: figures vary with it); release build; {memory_probe()} for peak memory; "
             + "; ".join(f"{r['scale']}×: median of {r['runs']} run{'s' if r['runs'] > 1 else ''}" for r in scales)
             + f"; pandas {pd.__version__} + "
             f"scikit-learn {sklearn.__version__}, polars {pl.__version__} + numpy {np.__version__}. "
             f"Written by `python tests/bench/living_judgments.py target/release/plumbline --scale 1 --scale 10 "
             f"--runs {args.runs} --bound --write-readme`.", "",
             head, "|---|" + "---|" * len(scales)]

    def row(label, cell):
        lines.append(f"| {label} | " + " | ".join(cell(r) for r in scales) + " |")

    row("`new` + `import`", lambda r: f"{r['steps']['new + import'][0]:.2f} s, {r['steps']['new + import'][1]:.0f} MB peak, "
        f"{grouped(r['stamp']['rows'] / r['steps']['new + import'][0])} CSV rows/s")
    row("store's bound: the rows the import keeps, bare prepared inserts (`bench_store_bound`)",
        lambda r: "—" if not r.get("bound") else f"{r['bound'][1]:.2f} s ({grouped(r['bound'][0])} rows, "
                                                   f"{grouped(r['bound'][0] / r['bound'][1])} rows/s)")
    for label, _ in STEPS:
        row(f"`{label}`", lambda r, label=label: f"{r['steps'][label][0]:.2f} s, {r['steps'][label][1]:.0f} MB")
    row("pandas + scikit-learn `ndcg_score` (CSV → NDCG@10 means)",
        lambda r: f"{r['pandas'][0]:.2f} s, {r['pandas'][1]:.0f} MB")
    row("polars + numpy (same)", lambda r: f"{r['polars'][0]:.2f} s, {r['polars'][1]:.0f} MB")
    for label, cells in goals(results):
        row(label, lambda r, cells=cells: cells.get(r["scale"], "—"))
    lines += ["", END]
    return "\n".join(lines)


def write_readme(block):
    path = os.path.join(REPO, "README.md")
    text = open(path).read()
    if BEGIN in text and END in text:
        before, rest = text.split(BEGIN, 1)
        after = rest.split(END, 1)[1]
        text = before + block + after
    else:
        sys.exit(f"README.md has no markers {BEGIN!r} … {END!r} to write between")
    open(path, "w").write(text)
    print(f"\nREADME.md: the living-judgments table rewritten")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("binary", help="path to the plumbline binary")
    parser.add_argument("workdir", nargs="?", help="where the CSV files and studies go (default: a new temp dir)")
    parser.add_argument("--scale", type=int, action="append", help="1 (5 000 contexts), 10 …; repeatable")
    parser.add_argument("--runs", type=int, default=1,
                        help="repeat each timed part of the 1x study N times, print medians (larger ones run once)")
    parser.add_argument("--bound", action="store_true", help="also time bare inserts of the rows kept (cargo)")
    parser.add_argument("--write-readme", action="store_true", help="rewrite README.md's living-judgments table")
    parser.add_argument("--peers-only", action="store_true", help="time pandas and polars only")
    parser.add_argument("--peer", choices=sorted(PEERS), help=argparse.SUPPRESS)
    parser.add_argument("--contexts", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.peer:
        return run_peer_here(args.peer, args.workdir, args.contexts, args.runs)
    binary = os.path.abspath(args.binary)
    if not args.peers_only and not os.access(binary, os.X_OK):
        sys.exit(f"{binary} is not an executable; build it, or pass --peers-only to time the peers alone")
    args.workdir = os.path.abspath(args.workdir or tempfile.mkdtemp(prefix="plumbline-bench-"))
    info = machine()
    print(f"{info['date']}: {info['os']}, {info['cores']} cores ({info['cpu']}), {info['ram_gib']:.0f} GiB, "
          f"load {info['load']:.1f}; python {platform.python_version()}, pandas {pd.__version__}, "
          f"scikit-learn {sklearn.__version__}, polars {pl.__version__}, numpy {np.__version__}")
    results = [one_scale(args, binary, s) for s in (args.scale or [1])]
    for r in results:
        if "means" not in r:
            continue
        pd_means, pl_means, rule_means = r["pandas"][2], r["polars"][2], r["polars_rule"][2]
        print(f"\n{r['scale']}x: pandas and polars agree to {TOLERANCE:g} under the notebook rule: "
              f"{'OK' if agree(pd_means, pl_means) else 'DIFFERS'}")
        for label, means in r["means"].items():
            print(f"  polars under Plumbline's rule vs plumbline {label}: "
                  f"{'OK' if agree(rule_means, means) else 'DIFFERS'}")
    if args.peers_only:
        return
    block = markdown(results, info, args)
    print("\n" + block)
    if args.write_readme:
        write_readme(block)


if __name__ == "__main__":
    main()
