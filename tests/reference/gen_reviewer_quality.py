#!/usr/bin/env python3
"""Reference values for reviewer quality: a machine judge against the people,
each reviewer against the gold pairs, and Fleiss' kappa of the people.

Reads the hand-made fixture in tests/fixtures/reviewer_quality/ and writes
reviewer_quality_expected.json into the directory given as the first argument
(default: the directory holding this script, i.e. tests/reference/).

Definitions and their sources:
  current grade    per (reviewer, pair) the row with the latest graded_at
                   (RFC 3339, compared as instants in UTC); the fixture has one
                   row each.                                      common practice
  settled value    the row with settled_by filled in (its reviewer column is
                   not read); a settled row with an empty value undoes the
                   settlement.                                    Plumbline's import format
  people           reviewers whose kind is person (an empty kind is a person);
                   the machine never enters the people's panel.   common practice
  panel grade      the settled value if the pair has one, else the lower median
                   of the people's levels (sorted, index (n-1)//2), can't-judge
                   left out; none when no person gave a level.    common practice
  kappa            Cohen (1960), sklearn.metrics.cohen_kappa_score(m, p,
                   labels=[0, 1, 2, 3])
  kappa_quadratic  Cohen (1968) weighted kappa, same with weights="quadratic"
  ac1              Gwet (2008) AC1, irrCAC.raw.CAC(df, weights="identity",
                   categories=[0, 1, 2, 3], digits=15).gwet()
  exact, confusion, within one, gold shares, by day        common practice
  fleiss_kappa     Fleiss (1971), statsmodels.stats.inter_rater.fleiss_kappa(
                   aggregate_raters(rows)[0]) over pairs with the same number
                   of people's levels
"""

import csv
import datetime as dt
import json
import math
import platform
import sys
import warnings
from collections import Counter
from importlib.metadata import version
from pathlib import Path

import pandas as pd
from irrCAC.raw import CAC
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import aggregate_raters, fleiss_kappa

HERE = Path(__file__).resolve().parent
FIXTURE = HERE.parent / "fixtures" / "reviewer_quality"
SCALE = "fit"
LEVELS = [0, 1, 2, 3]
SEGMENTS = ["new", "established", "query", "anchor"]

# irrCAC rounds what it reports with round(x, digits), default 5; 15 digits keep
# that rounding far below the 1e-9 tolerance of the Rust tests.
IRRCAC_DIGITS = 15

SOURCES = {
    "current_grade": "common practice (latest graded_at per reviewer and pair, "
    "compared in UTC)",
    "panel_grade": "common practice (the settled value, else the lower median of "
    "the people's levels, sorted, index (n-1)//2, can't-judge left out)",
    "machines.kappa": "Cohen (1960) kappa, sklearn.metrics.cohen_kappa_score("
    "machine, panel, labels=[0, 1, 2, 3])",
    "machines.kappa_quadratic": "Cohen (1968) weighted kappa, "
    'sklearn.metrics.cohen_kappa_score(..., weights="quadratic")',
    "machines.ac1": "Gwet (2008) AC1, irrCAC.raw.CAC(df, weights=\"identity\", "
    'categories=[0, 1, 2, 3], digits=15).gwet()["est"]["coefficient_value"]',
    "machines.exact": "common practice (share of pairs with equal levels)",
    "machines.confusion": "common practice (rows: machine level, columns: panel level)",
    "machines.by_segment": "same sources as above, per item segment (new flag) "
    "and per context kind",
    "reviewers.gold": "common practice (share of gold pairs with the gold level, "
    "within one level; can't-judge counted apart)",
    "reviewers.gold_by_day": "common practice (UTC day of graded_at)",
    "fleiss_kappa": "Fleiss (1971), statsmodels.stats.inter_rater.fleiss_kappa("
    "aggregate_raters(rows)[0]), people only",
    "fleiss_grades_per_pair": "common practice (most common number of people's "
    "levels per pair among pairs with at least 2, ties to the larger)",
}


def read_csv(path):
    """Rows as dicts with lower-case header names."""
    with open(path, newline="", encoding="utf-8-sig") as f:
        rows = list(csv.reader(f))
    header = [h.strip().lower() for h in rows[0]]
    return [dict(zip(header, row)) for row in rows[1:]]


def instant(text):
    """RFC 3339 time as an aware datetime in UTC."""
    return dt.datetime.fromisoformat(text.strip().replace("Z", "+00:00")).astimezone(
        dt.timezone.utc
    )


def level(text):
    text = text.strip()
    return None if text == "" else int(text)


def lower_median(values):
    values = sorted(values)
    return values[(len(values) - 1) // 2]


def finite_or_none(x):
    x = float(x)
    return x if math.isfinite(x) else None


def share(hits, n):
    return hits / n if n else None


def kappa_of(a, b, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return finite_or_none(cohen_kappa_score(a, b, labels=LEVELS, **kw))


def ac1_of(a, b):
    df = pd.DataFrame({"m": a, "p": b})
    cac = CAC(df, weights="identity", categories=LEVELS, digits=IRRCAC_DIGITS)
    return finite_or_none(cac.gwet()["est"]["coefficient_value"])


def load(folder):
    new_item = {
        r["item_id"]: r.get("new", "").strip().lower() in ("true", "1")
        for r in read_csv(folder / "items.csv")
    }
    context_kind = {r["context_id"]: r["kind"].strip() for r in read_csv(folder / "contexts.csv")}

    latest = {}  # (reviewer, pair) -> (instant, level)
    kinds = {}  # reviewer -> "person" | "machine"
    settled_rows = {}  # pair -> (instant, level)
    for r in read_csv(folder / "grades.csv"):
        if r["scale"] != SCALE:
            continue
        pair = (r["context_id"], r["item_id"])
        t = instant(r["graded_at"])
        v = level(r["value"])
        if r.get("settled_by", "").strip():
            if pair not in settled_rows or t >= settled_rows[pair][0]:
                settled_rows[pair] = (t, v)
            continue
        who = r["reviewer"]
        kinds[who] = "machine" if r.get("kind", "").strip() == "machine" else "person"
        key = (who, pair)
        if key not in latest or t >= latest[key][0]:
            latest[key] = (t, v)
    settled = {p: v for p, (_, v) in settled_rows.items() if v is not None}

    gold = {
        (r["context_id"], r["item_id"]): int(r["value"])
        for r in read_csv(folder / "gold.csv")
        if r["scale"] == SCALE
    }
    return new_item, context_kind, latest, kinds, settled, gold


def main():
    out_dir = Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    new_item, context_kind, latest, kinds, settled, gold = load(FIXTURE)

    people = sorted(r for r, k in kinds.items() if k == "person")
    machines = sorted(r for r, k in kinds.items() if k == "machine")
    pairs = sorted({p for (_, p) in latest} | set(settled))

    people_levels = {p: [] for p in pairs}
    for (who, p), (_, v) in sorted(latest.items()):
        if who in people and v is not None:
            people_levels[p].append(v)
    panel = {}
    for p in pairs:
        if p in settled:
            panel[p] = settled[p]
        elif people_levels[p]:
            panel[p] = lower_median(people_levels[p])
        else:
            panel[p] = None

    # --- machine judges against the people's panel --------------------------
    machine_out = []
    for m in machines:
        rows = [
            (p, latest[(m, p)][1], panel[p])
            for p in pairs
            if (m, p) in latest and latest[(m, p)][1] is not None and panel[p] is not None
        ]
        a = [v for _, v, _ in rows]
        b = [w for _, _, w in rows]
        confusion = [[0] * len(LEVELS) for _ in LEVELS]
        for v, w in zip(a, b):
            confusion[v][w] += 1
        by_segment = []
        for seg in SEGMENTS:
            if seg in ("new", "established"):
                sel = [(v, w) for p, v, w in rows if new_item[p[1]] == (seg == "new")]
            else:
                sel = [(v, w) for p, v, w in rows if context_kind[p[0]] == seg]
            sa = [v for v, _ in sel]
            sb = [w for _, w in sel]
            by_segment.append(
                {
                    "segment": seg,
                    "n": len(sel),
                    "kappa": kappa_of(sa, sb) if sel else None,
                    "exact": share(sum(v == w for v, w in sel), len(sel)),
                }
            )
        machine_out.append(
            {
                "reviewer": m,
                "n": len(rows),
                "kappa": kappa_of(a, b),
                "kappa_quadratic": kappa_of(a, b, weights="quadratic"),
                "ac1": ac1_of(a, b),
                "exact": share(sum(v == w for v, w in zip(a, b)), len(rows)),
                "confusion": confusion,
                "by_segment": by_segment,
            }
        )

    # --- every reviewer against the gold pairs ------------------------------
    reviewers_out = []
    for who in sorted(kinds):
        mine = {p: tv for (r, p), tv in latest.items() if r == who}
        on_gold = [(p, t, v) for p, (t, v) in mine.items() if p in gold]
        graded = [(p, t, v) for p, t, v in on_gold if v is not None]
        days = {}
        for p, t, v in graded:
            d = days.setdefault(t.date().isoformat(), [0, 0])
            d[0] += 1
            d[1] += v == gold[p]
        reviewers_out.append(
            {
                "reviewer": who,
                "kind": kinds[who],
                "grades": len(mine),
                "gold_n": len(graded),
                "gold_exact": share(sum(v == gold[p] for p, _, v in graded), len(graded)),
                "gold_within_one": share(
                    sum(abs(v - gold[p]) <= 1 for p, _, v in graded), len(graded)
                ),
                "gold_cant_judge": len(on_gold) - len(graded),
                "gold_by_day": [
                    {"day": day, "n": n, "exact": hits / n}
                    for day, (n, hits) in sorted(days.items())
                ],
            }
        )

    # --- Fleiss' kappa of the people ----------------------------------------
    graded_by_person = [p for p in pairs if any((who, p) in latest for who in people)]
    counts = {p: len(people_levels[p]) for p in graded_by_person}
    tally = Counter(c for c in counts.values() if c >= 2)
    per_pair = max(tally, key=lambda c: (tally[c], c)) if tally else None

    def fleiss_over(sel):
        if not sel:
            return None
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            table = aggregate_raters([people_levels[p] for p in sel])[0]
            return finite_or_none(fleiss_kappa(table))

    same_count = [p for p in graded_by_person if counts[p] == per_pair]
    complete = [
        p
        for p in graded_by_person
        if all((who, p) in latest and latest[(who, p)][1] is not None for who in people)
    ]

    obj = {
        "generated_by": {
            "python": platform.python_version(),
            "numpy": version("numpy"),
            "pandas": version("pandas"),
            "scikit-learn": version("scikit-learn"),
            "statsmodels": version("statsmodels"),
            "irrCAC": version("irrCAC"),
        },
        "fixture": "tests/fixtures/reviewer_quality",
        "scale": SCALE,
        "sources": SOURCES,
        "people": people,
        "machines": machine_out,
        "reviewers": reviewers_out,
        "fleiss_grades_per_pair": per_pair,
        "fleiss_kappa": fleiss_over(same_count),
        "fleiss_n": len(same_count),
        "fleiss_kappa_complete": fleiss_over(complete),
        "fleiss_n_complete": len(complete),
        "people_panel": [
            {"context_id": c, "item_id": i, "level": panel[(c, i)]} for c, i in pairs
        ],
    }
    out_dir.mkdir(parents=True, exist_ok=True)
    path = out_dir / "reviewer_quality_expected.json"
    with open(path, "w", encoding="utf-8") as f:
        json.dump(obj, f, indent=1, sort_keys=True, allow_nan=False)
        f.write("\n")
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
