#!/usr/bin/env python3
"""Short-count QC and expansion figures of one generated study against its truth.

Usage: python3 scripts/short_qc_eval.py STUDY OUT [--misses]

STUDY is a folder written by `roadtally demo`, OUT the folder of `roadtally run STUDY`.
Prints, for short counts only:
  catch      injected faulty direction-days (truth/faults.csv) with any QC finding other
             than a flagged `incomplete`, as tests/cli/generated.rs counts them;
  clean      complete (23+ counted hours) direction-days without a fault, shares rejected
             and flagged (a flag does not keep a day out of expansion);
  disturbed  the clean ones on a day of truth/disturbed_days.csv, share rejected;
  unexpanded short counts with status other than `expanded` in short_counts.csv.
Also the catch rate on faulty direction-days of at least 500 counted vehicles.
With --misses, lists the faults missed and the clean days rejected.
"""

import csv
import sys
from collections import defaultdict


def rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def main():
    study, out = sys.argv[1], sys.argv[2]
    misses = "--misses" in sys.argv
    short = {s["station_id"] for s in rows(f"{study}/stations.csv") if s["kind"] == "short"}
    hours = defaultdict(int)  # (station, dir, date) -> counted minutes
    volume = defaultdict(float)  # (station, dir, date) -> vehicles (axle hits / 2)
    for r in rows(f"{study}/counts/short_counts.csv"):
        if r["vehicles"] or r["axles"]:
            key = (r["station_id"], r["direction"], r["start"][:10])
            hours[key] += int(r["minutes"])
            volume[key] += float(r["vehicles"]) if r["vehicles"] else float(r["axles"]) / 2
    faults = {
        (f["station_id"], f["direction"], f["date"]): f
        for f in rows(f"{study}/truth/faults.csv")
        if f["station_id"] in short
    }
    found = defaultdict(list)
    rejected = set()
    for q in rows(f"{out}/qc_log.csv"):
        key = (q["station_id"], q["direction"], q["date"])
        if q["station_id"] not in short:
            continue
        if q["action"] == "rejected":
            rejected.add(key)
        if q["rule"] != "incomplete" or q["action"] == "rejected":
            found[key].append(q)
    disturbed = defaultdict(list)
    for d in rows(f"{study}/truth/disturbed_days.csv"):
        disturbed[(d["station_id"], d["date"])].append(d["kind"])
    caught = sum(1 for k in faults if k in found)
    by_kind = defaultdict(lambda: [0, 0])
    for k, f in faults.items():
        by_kind[f["fault"]][0] += 1
        by_kind[f["fault"]][1] += k in found
    clean = [k for k, m in hours.items() if m >= 23 * 60 and k not in faults]
    clean_rej = [k for k in clean if k in rejected]
    clean_flag = [k for k in clean if k in found and k not in rejected]
    dist = [k for k in clean if (k[0], k[2]) in disturbed]
    dist_rej = [k for k in dist if k in rejected]
    counts = rows(f"{out}/short_counts.csv")
    unexp = [c for c in counts if c["status"] != "expanded"]
    pct = lambda a, b: 100.0 * a / max(b, 1)
    print(
        f"catch {pct(caught, len(faults)):.1f} % ({caught}/{len(faults)}); "
        f"clean rejected {pct(len(clean_rej), len(clean)):.2f} % ({len(clean_rej)}/{len(clean)}); "
        f"clean flagged {pct(len(clean_flag), len(clean)):.1f} %; "
        f"disturbed rejected {pct(len(dist_rej), len(dist)):.2f} % ({len(dist_rej)}/{len(dist)}); "
        f"unexpanded {pct(len(unexp), len(counts)):.1f} % ({len(unexp)}/{len(counts)})"
    )
    print("  by kind: " + ", ".join(f"{k} {c}/{n}" for k, (n, c) in sorted(by_kind.items())))
    big = [k for k in faults if volume[k] >= 500]
    print(
        f"  catch on direction-days of at least 500 counted vehicles: "
        f"{pct(sum(k in found for k in big), len(big)):.1f} % ({sum(k in found for k in big)}/{len(big)})"
    )
    if misses:
        for k, f in sorted(faults.items()):
            if k not in found:
                print(
                    f"  missed {k} {f['fault']} {f['detail']} "
                    f"({hours.get(k, 0) // 60} h, {volume[k]:.0f} veh)"
                )
        for k in sorted(clean_rej):
            why = [q["rule"] for q in found[k] if q["action"] == "rejected"]
            print(f"  rejected clean {k} {why} {disturbed.get((k[0], k[2]), [])}")
        for c in unexp:
            print(f"  unexpanded {c['station_id']} {c['hours']} h: {c['reason']}")


if __name__ == "__main__":
    main()
