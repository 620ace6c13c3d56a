#!/usr/bin/python3
"""bench/volume_memory.py — peak memory of volume runs and the bytes per
voxel it implies (issue 18: "a 1024 x 1024 x 64 stack fits comfortably on
a 24 GiB machine").

Runs bench_sampler (built by bench/run in $PIXPOST_BENCH_BUILD, default
/tmp/pixpost-bench-build) on bench_sampler's synthetic volume with 4 chains
and the default threads (threads=0: OpenMP's default), periodic, for each
sampler and size, reads its peak RSS (VmHWM), fits rss = a + b * voxels by
least squares over the sizes and extrapolates to 64 x 1024 x 1024 voxels.
Usage: bench/volume_memory.py [KIND ...] [DxHxW ...] (default gibbs and hmc;
mtc on request: its chain start takes minutes on the largest volume,
bench/NOTES.md; 16x256x256 32x256x256 64x256x256 64x512x512; the last needs ~2.5 GB
for gibbs and mtc and ~8.5 GB for hmc). gibbs and mtc run 4 iterations
per chain, hmc 2: fewer would miss the peak (the maps at the end need a
few kept draws; measured at 16 x 128 x 128, 1/2/4/8 iterations: gibbs
36.6/40.5/42.3/42.5 MB, hmc 99.4/103.5/103.6/103.6 MB).
Prints one line per run and one fit line per sampler.
"""
import os
import re
import subprocess
import sys

BUILD = os.environ.get("PIXPOST_BENCH_BUILD", "/tmp/pixpost-bench-build")
SIZES = [tuple(int(v) for v in a.split("x")) for a in sys.argv[1:] if "x" in a] or [
    (16, 256, 256), (32, 256, 256), (64, 256, 256), (64, 512, 512)]
TARGET = 64 * 1024 * 1024
GIB = 1024.0 ** 3
RUNS = [r for r in (("gibbs", {"iters": 4}), ("mtc", {"iters": 4}),
                    ("hmc", {"iters": 2, "noise": "poisson:gain=1,offset=0"}))
        if r[0] in ([a for a in sys.argv[1:] if "x" not in a] or ["gibbs", "hmc"])]


def run(kind, d, h, w, kv):
    args = [os.path.join(BUILD, "bench", "bench_sampler"), kind, str(h), str(w),
            "depth=%d" % d, "chains=4", "threads=0"] + \
           ["%s=%s" % (k, v) for k, v in kv.items()]
    out = subprocess.run(args, check=True, capture_output=True, text=True).stdout
    return dict(re.findall(r"(\w+)=(\S+)", out))


def main():
    for kind, kv in RUNS:
        pts = []
        for d, h, w in SIZES:
            r = run(kind, d, h, w, kv)
            n, rss = d * h * w, float(r["rss_kb"]) * 1024
            pts.append((n, rss))
            print("%s %dx%dx%d: peak RSS %.1f MiB, %.1f bytes per voxel (total / voxels)" %
                  (kind, d, h, w, rss / 2 ** 20, rss / n), flush=True)
        mx = sum(p[0] for p in pts) / len(pts)
        my = sum(p[1] for p in pts) / len(pts)
        b = sum((p[0] - mx) * (p[1] - my) for p in pts) / sum((p[0] - mx) ** 2 for p in pts)
        a = my - b * mx
        worst = max(abs(p[1] - (a + b * p[0])) / p[1] for p in pts)
        est = a + b * TARGET
        print("%s fit: %.1f bytes per voxel + %.1f MiB (worst residual %.1f %%); "
              "64x1024x1024: %.2f GiB (%.0f %% of 24 GiB)" %
              (kind, b, a / 2 ** 20, 100 * worst, est / GIB, 100 * est / 24 / GIB), flush=True)


if __name__ == "__main__":
    main()
