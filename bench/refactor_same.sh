#!/bin/sh
# Same-seed outputs of two pixpost binaries compared byte for byte: the
# proof that a pure refactor (issue #18 step 0) changed no result.
#   bench/refactor_same.sh REF_BIN NEW_BIN [WORKDIR]
# e.g. bench/refactor_same.sh /work/ref-build/pixpost build/pixpost
# Runs: gibbs (gmrf1, periodic), the adaptive prior with --boundary pad,
# mtc (periodic, and pad: its pad scheme), pcn, gpcn with --noise poisson,
# hmc with --noise camera, a --mask run, a batch of 2 frames. Every file
# of every output folder (report.html included) is cmp'ed, plus the exit
# code and the printed lines. Before comparing, summary.json, report.html,
# the folder marker and the batch index lose only what differs between any
# two runs: the command line, timings and per-second rates, the FFT plan
# cache's state. Small frames (the demo frames), short fixed chains, one
# thread: a few minutes on 2 cores. Exit 0 when all is identical, 1 not.
set -u
REF=$1
NEW=$2
WORK=${3:-/tmp/pp_refactor_same}
HERE=$(cd "$(dirname "$0")/.." && pwd)
G=$HERE/images/demo_gaussian.tif
P=$HERE/images/demo_photons.tif
AIRY=airy:na=1.4,wavelength=0.52,pixel=0.065
COMMON="--seed 7 --threads 1 --chains 2 --no-plan-cache --quiet --overwrite"
rm -rf "$WORK"
mkdir -p "$WORK/in/batch"
# inputs of our own: a mask (a 12 x 20 block and a column of 1s on 0s) and
# a folder of two frames (the two demo frames' gaussian one and its flip)
/usr/bin/python3 - "$WORK/in" "$G" <<'PY'
import sys, numpy as np, tifffile
d, g = sys.argv[1], sys.argv[2]
a = tifffile.imread(g)
m = np.zeros(a.shape, np.uint8)
m[40:52, 60:80] = 1
m[:, 150] = 1
tifffile.imwrite(d + "/mask.tif", m)
tifffile.imwrite(d + "/batch/a.tif", a)
tifffile.imwrite(d + "/batch/b.tif", np.ascontiguousarray(a[::-1, :]))
PY

# name | command and arguments (the output folder follows)
RUNS="gibbs|sample $G --psf gaussian:sigma=1.6 --noise gaussian --sampler gibbs --prior gmrf1 --boundary periodic --iters 200 --burn 100
adaptive_pad|sample $G --psf gaussian:sigma=1.6 --noise gaussian --prior adaptive --boundary pad --iters 100 --burn 100
mtc|sample $G --psf gaussian:sigma=1.6 --noise gaussian --sampler mtc --prior gmrf1 --boundary periodic --iters 200 --burn 100
mtc_pad|sample $G --psf gaussian:sigma=1.6 --noise gaussian --sampler mtc --prior gmrf1 --boundary pad --iters 100 --burn 100
pcn|sample $G --psf gaussian:sigma=1.6 --noise gaussian:sigma=2.5 --sampler pcn --prior matern:range=6,nu=1 --boundary periodic --iters 100 --burn 100
gpcn_poisson|sample $P --psf $AIRY --noise poisson:gain=0.5,offset=100 --sampler gpcn --prior gmrf1 --iters 60 --burn 60
hmc_camera|sample $P --psf $AIRY --noise camera:gain=0.5,offset=100,read=1.6 --sampler hmc --iters 60 --burn 60
mask|sample $G --psf gaussian:sigma=1.6 --noise gaussian --prior gmrf1 --mask $WORK/in/mask.tif --iters 100 --burn 100
batch|batch $WORK/in/batch --psf gaussian:sigma=1.6 --noise gaussian --prior gmrf1 --iters 100 --burn 50 --jobs 1"

echo "$RUNS" | while IFS='|' read -r name args; do
    for side in ref new; do
        if [ $side = ref ]; then bin=$REF; else bin=$NEW; fi
        # shellcheck disable=SC2086
        nice "$bin" $args $COMMON -o "$WORK/$side/$name" >"$WORK/$side.$name.out" 2>&1
        echo "$?" >>"$WORK/$side.$name.out"
        find "$WORK/$side/$name" -type f \( -name summary.json -o -name report.html \
            -o -name .pixpost-output -o -name 'index.*' \) | while read -r f; do
            sed -E 's/(_per_second"?:? *)[-0-9.e+]+/\1T/g; s/"seconds": *[-0-9.e+]+/"seconds": T/g' "$f" |
                grep -v -E '"command"|seconds|"plan_cache"|plan cache|wisdom|written by|[0-9] s</' \
                    >"$f.filtered"
            rm "$f"
        done
        [ -f "$WORK/$side/$name/index.csv.filtered" ] &&
            { cut -d, -f1-4,6- "$WORK/$side/$name/index.csv.filtered" >"$WORK/$side/$name/index.csv.cut" && rm "$WORK/$side/$name/index.csv.filtered"; }
    done
    cmp -s "$WORK/ref.$name.out" "$WORK/new.$name.out" ||
        { echo "DIFF $name: printed lines or exit code"; echo 1 >"$WORK/failed"; }
    files=$(cd "$WORK/ref/$name" && find . -type f | sort)
    nfiles=0
    for f in $files; do
        nfiles=$((nfiles + 1))
        cmp -s "$WORK/ref/$name/$f" "$WORK/new/$name/$f" ||
            { echo "DIFF $name: $f"; echo 1 >"$WORK/failed"; }
    done
    [ "$(cd "$WORK/new/$name" && find . -type f | sort)" = "$files" ] ||
        { echo "DIFF $name: file lists differ"; echo 1 >"$WORK/failed"; }
    echo "$name: exit $(tail -n 1 "$WORK/new.$name.out"), $nfiles files compared"
done
if [ -f "$WORK/failed" ]; then echo "NOT identical"; exit 1; fi
echo "all identical"
