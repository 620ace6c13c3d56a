#!/usr/bin/python3
"""bench/fft_table.py — src/fft_table.inc (the padded-grid table of src/fft.c)
from sweeps of bench/bench_fft_sizes.

Usage: bench/fft_table.py SWEEP... > src/fft_table.inc
  SWEEP: files of "n est_ns meas_ns plan_s" lines (bench_fft_sizes output);
  several passes of the same sizes may be given. Per size, the cost is the
  smallest MEASURE pair time over the passes (the least disturbed by other
  load on a shared machine); a size is left out when its ESTIMATE pair was
  more than 3x its MEASURE pair in any pass (what runs without the plan cache
  would meet). Also writes bench/fft_sizes.txt: every pass, per size, and
  whether it was kept.
"""
import os
import sys

RATIO = 3.0
rows = {}
for path in sys.argv[1:]:
    for line in open(path):
        n, est, meas, plan = line.split()
        rows.setdefault(int(n), []).append((float(est), float(meas), float(plan)))
here = os.path.dirname(os.path.abspath(__file__))
print("/* Made by bench/fft_table.py from the sweeps in bench/fft_sizes.txt: {side n,\n"
      " * MEASURE r2c + c2r pair cost in hundredths of a ns per pixel of n x n}. */")
with open(os.path.join(here, "fft_sizes.txt"), "w") as out:
    out.write("# bench/bench_fft_sizes sweeps (n: square n x n grid; est / meas: r2c + c2r\n"
              "# pair, ns per pixel, ESTIMATE / MEASURE plans; plan: seconds of MEASURE\n"
              "# planning), one column group per pass; kept: in src/fft_table.inc.\n"
              "# n  est meas plan [est meas plan ...]  kept\n")
    for n in sorted(rows):
        passes = rows[n]
        keep = all(e <= RATIO * m for e, m, _ in passes)
        out.write("%d  %s  %s\n" % (n, "  ".join("%.3g %.3g %.3g" % p for p in passes),
                                    "kept" if keep else "left out"))
        if keep:
            print("    {%d, %d}," % (n, round(100 * min(m for _, m, _ in passes))))
