#!/usr/bin/python3
"""Headline of a calibration run (bench/calib/suite.py's results.csv) beside
another (e.g. the stationary-prior baseline), paired by scene x PSF x noise x
boundary. Usage: summarise.py NEW.csv [OLD.csv] [--noises gauss1,gauss5]
Prints a Markdown table of medians (min-max) of the judged numbers, the
count of targets missed per key, and the paired median change."""
import csv
import statistics
import sys

KEYS = ["cov95", "cov50", "cov95_edges", "cov95_bright", "cov95_dark", "cov95_flat",
        "cov95_border", "z_sd", "z_sd_flat", "z_sd_edges", "spearman", "rmse_ratio"]


def load(path, noises):
    with open(path, newline="") as f:
        rows = [r for r in csv.DictReader(f) if not noises or r["noise"] in noises]
    return {(r["scene"], r["psf"], r["noise"], r["boundary"]): r for r in rows}


def fnum(v):
    try:
        return float(v)
    except ValueError:
        return float("nan")


def main():
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    noises = None
    for a in sys.argv[1:]:
        if a.startswith("--noises="):
            noises = set(a.split("=", 1)[1].split(","))
    new = load(args[0], noises)
    old = load(args[1], noises) if len(args) > 1 else {}
    keys = sorted(new)
    print("| number | new: median (min–max) | misses (new) | old: median | paired median change |")
    print("|---|---|---|---|---|")
    for k in KEYS:
        v = [fnum(new[r][k]) for r in keys]
        v = [x for x in v if x == x]
        miss = sum(1 for r in keys if k in new[r]["misses"].split(";"))
        o = [fnum(old[r][k]) for r in keys if r in old]
        o = [x for x in o if x == x]
        d = [fnum(new[r][k]) - fnum(old[r][k]) for r in keys if r in old]
        d = [x for x in d if x == x]
        print("| %s | %.3f (%.3f–%.3f) | %d of %d | %s | %s |" % (
            k, statistics.median(v), min(v), max(v), miss, len(keys),
            "%.3f" % statistics.median(o) if o else "–",
            "%+.3f" % statistics.median(d) if d else "–"))
    full = sum(1 for r in keys if not new[r]["misses"])
    print("\nRows meeting every target: %d of %d." % (full, len(keys)))


if __name__ == "__main__":
    main()
