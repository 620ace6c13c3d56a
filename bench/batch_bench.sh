#!/usr/bin/env bash
# pixpost benchmark (not a test): `pixpost batch` throughput in frames per
# second for FRAMES frames of SIZE x SIZE pixels at --jobs 1 and --jobs 2,
# and the parallel efficiency fps(jobs 2) / (2 fps(jobs 1)) (issue 7 target:
# >= 85 %). Both runs get one thread per frame (--threads equal to --jobs),
# so the comparison is one core against two cores doing the same frames.
# A third run, --jobs 1 with 2 threads, shows what the threads inside one
# frame give instead (the default for a single job on two cores).
#
# Usage: bench/batch_bench.sh [path/to/pixpost]
#   FRAMES=64 SIZE=256 CHAINS=2 BURN=10 ITERS=40 (environment) set the load;
#   the defaults keep the whole run around a minute on an idle 2-core box.
# The frames are made with Debian's /usr/bin/python3 (numpy + Pillow).
# Wall times on a shared machine are noisy: the load average is printed
# before and after, and each run's CPU time (user + sys) too, which is much
# less sensitive to other users than the wall time.
set -euo pipefail

bin="${1:-build/pixpost}"
frames="${FRAMES:-64}"
size="${SIZE:-256}"
chains="${CHAINS:-2}"
burn="${BURN:-10}"
iters="${ITERS:-40}"
work="$(mktemp -d /tmp/pixpost-batch-bench.XXXXXX)"
trap 'rm -rf "$work"' EXIT

/usr/bin/python3 - "$work/in" "$frames" "$size" <<'EOF'
import os, sys
import numpy as np
from PIL import Image
out, n, size = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
os.makedirs(out)
rng = np.random.default_rng(1)
y, x = np.mgrid[0:size, 0:size]
for i in range(n):
    scene = 400 + 300 * np.sin(x / (7 + i % 5)) ** 2 * np.cos(y / 11) ** 2
    Image.fromarray((scene + rng.normal(0, 10, scene.shape)).astype(np.uint16)).save(
        os.path.join(out, "f%03d.png" % i))
EOF

opts=(--psf gaussian:sigma=1.6 --chains "$chains" --burn "$burn" --iters "$iters" --quiet)
echo "pixpost batch benchmark: $frames frames of ${size}x${size}, $chains chains x ($burn + $iters) iterations"
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"

# run NAME JOBS THREADS -> prints one line; sets fps_NAME
run() {
    local name=$1 jobs=$2 threads=$3 t0 t1 c0 c1
    rm -rf "$work/out-$name"
    t0=$(date +%s.%N)
    c0=$(awk '{print $14 + $15 + $16 + $17}' /proc/$$/stat)
    "$bin" batch "$work/in" -o "$work/out-$name" "${opts[@]}" --jobs "$jobs" --threads "$threads"
    t1=$(date +%s.%N)
    c1=$(awk '{print $14 + $15 + $16 + $17}' /proc/$$/stat)
    local wall cpu fps
    wall=$(echo "$t1 - $t0" | bc -l)
    cpu=$(echo "($c1 - $c0) / $(getconf CLK_TCK)" | bc -l)
    fps=$(echo "$frames / $wall" | bc -l)
    printf '  --jobs %d --threads %d: %7.2f s wall, %7.2f s CPU, %6.3f frames/s\n' \
        "$jobs" "$threads" "$wall" "$cpu" "$fps"
    eval "fps_$name=$fps"
}

run j1 1 1
run j2 2 2
run j1t2 1 2
eff=$(echo "100 * $fps_j2 / (2 * $fps_j1)" | bc -l)
printf 'parallel efficiency, jobs 2 vs jobs 1 (one thread per frame): %.1f %%\n' "$eff"
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
for k in $(seq 0 $((frames - 1))); do
    f=$(printf 'f%03d' "$k")
    cmp -s "$work/out-j1/$f/mean.tif" "$work/out-j2/$f/mean.tif" ||
        { echo "mean.tif of $f differs between jobs 1 and jobs 2"; exit 1; }
done
echo "mean.tif identical between --jobs 1 and --jobs 2 for all $frames frames"
