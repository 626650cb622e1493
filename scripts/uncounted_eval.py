#!/usr/bin/env python3
"""Scores the uncounted-segment estimate of a `roadtally run` on a generated study.

usage: uncounted_eval.py STUDY OUT

STUDY is a folder written by `roadtally demo` (its truth/segment_truth.csv is the truth), OUT
the folder `roadtally run` wrote. Prints, per functional-class group and overall, the median
absolute percentage error of the published AADT of segments with basis `estimated`, the same
for the class x area median of the counted segments' AADT (the simple alternative), and the
share of 95 % intervals that cover the truth. Standard library only.
"""
import csv
import statistics
import sys
from collections import defaultdict


def rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def group(fc):
    return "freeway" if fc <= 2 else "arterial" if fc <= 4 else "collector_local"


def main(study, out):
    truth = {r["segment_id"]: float(r["true_aadt"]) for r in rows(f"{study}/truth/segment_truth.csv")}
    segs = rows(f"{out}/segment_statistics.csv")
    pool = defaultdict(list)
    for s in segs:
        if s["basis"] != "estimated" and s["aadt"]:
            pool[(s["functional_class"], s["area"])].append(float(s["aadt"]))
            pool[(s["functional_class"], None)].append(float(s["aadt"]))
    med = {k: statistics.median(v) for k, v in pool.items()}
    table = defaultdict(lambda: ([], [], []))
    for s in segs:
        if s["basis"] != "estimated":
            continue
        t = truth[s["segment_id"]]
        a, lo, hi = float(s["aadt"]), float(s["aadt_lo95"]), float(s["aadt_hi95"])
        base = med.get((s["functional_class"], s["area"]), med.get((s["functional_class"], None)))
        hist = "history" if s.get("history_year") else "no_history"
        for g in (group(int(s["functional_class"])), group(int(s["functional_class"])) + "/" + hist, "all"):
            e, b, c = table[g]
            e.append(abs(a - t) / t * 100)
            if base is not None:
                b.append(abs(base - t) / t * 100)
            c.append(lo <= t <= hi)
    print(f"{'group':<16}{'n':>6}{'mdAPE %':>9}{'class-area %':>14}{'ratio':>7}{'cover95':>9}")
    for g in sorted(table):
        if g not in table:
            continue
        e, b, c = table[g]
        me, mb = statistics.median(e), statistics.median(b) if b else float("nan")
        print(f"{g:<16}{len(e):>6}{me:>9.1f}{mb:>14.1f}{me / mb:>7.2f}{sum(c) / len(c):>9.3f}")
    try:
        cv = rows(f"{out}/cross_validation.csv")
        for r in cv:
            if r["class_group"] in ("all", "reweighted_to_uncounted"):
                print("  cv", r["estimator"], r["class_group"], r["median_ape_pct"], r["coverage95"])
    except FileNotFoundError:
        pass


if __name__ == "__main__":
    main(*sys.argv[1:3])
