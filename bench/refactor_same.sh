#!/bin/sh
# Same-seed outputs of two pixpost binaries compared byte for byte: the
# proof that a pure refactor (issue #18 step 0) changed no result.
#   bench/refactor_same.sh REF_BIN NEW_BIN [WORKDIR]
# e.g. bench/refactor_same.sh /work/ref-build/pixpost build/pixpost
# Every file an output folder holds is cmp'ed; summary.json, report.html and
# the output marker first lose what differs between any two runs (the
# command line, timings and per-second rates, the FFT plan cache's state).
# Small runs (the demo frames, short fixed chains, 1 thread): the whole
# check takes about 8 minutes on 2 shared cores. Last, the noise fit of
# `pixpost calibrate --frame` on the camera frame.
# Exit 0 when every output is identical, 1 otherwise.
set -u
REF=$1
NEW=$2
WORK=${3:-/tmp/pp_refactor_same}
HERE=$(cd "$(dirname "$0")/.." && pwd)
G=$HERE/images/demo_gaussian.tif
P=$HERE/images/demo_photons.tif
AIRY=airy:na=1.4,wavelength=0.52,pixel=0.065
COMMON="--seed 7 --threads 1 --chains 2 --no-plan-cache --quiet --overwrite"

# name | arguments after the frame
RUNS="gibbs|$G --psf gaussian:sigma=1.6 --noise gaussian --sampler gibbs --prior gmrf1 --iters 200 --burn 100
mtc|$G --psf gaussian:sigma=1.6 --noise gaussian --sampler mtc --prior gmrf1 --boundary periodic --iters 200 --burn 100
pcn|$G --psf gaussian:sigma=1.6 --noise gaussian:sigma=2.5 --sampler pcn --prior matern:range=6,nu=1 --boundary periodic --iters 100 --burn 100
adaptive_pad|$G --psf gaussian:sigma=1.6 --noise gaussian --prior adaptive --boundary pad --iters 100 --burn 100
hmc_camera|$P --psf $AIRY --noise camera:gain=0.5,offset=100,read=1.6 --sampler hmc --iters 60 --burn 60"

rm -rf "$WORK"
mkdir -p "$WORK"
status=0
echo "$RUNS" | while IFS='|' read -r name args; do
    for side in ref new; do
        if [ $side = ref ]; then bin=$REF; else bin=$NEW; fi
        # shellcheck disable=SC2086
        nice "$bin" sample $args $COMMON -o "$WORK/$side/$name" >"$WORK/$side.$name.out" 2>&1
        echo "$?" >"$WORK/$side.$name.rc"
        for f in summary.json report.html .pixpost-output; do
            [ -f "$WORK/$side/$name/$f" ] &&
                sed -E 's/(_per_second"?:? *)[-0-9.e+]+/\1T/g' "$WORK/$side/$name/$f" |
                grep -v -E '"command"|seconds|"plan_cache"|plan cache|wisdom|written by' \
                    >"$WORK/$side/$name/$f.filtered" &&
                rm "$WORK/$side/$name/$f"
        done
    done
    if ! cmp -s "$WORK/ref.$name.rc" "$WORK/new.$name.rc"; then
        echo "DIFF $name: exit codes $(cat "$WORK/ref.$name.rc") vs $(cat "$WORK/new.$name.rc")"
        echo 1 >"$WORK/failed"
    fi
    files=$(cd "$WORK/ref/$name" && find . -type f | sort)
    nfiles=0
    for f in $files; do
        nfiles=$((nfiles + 1))
        if ! cmp -s "$WORK/ref/$name/$f" "$WORK/new/$name/$f"; then
            echo "DIFF $name: $f"
            echo 1 >"$WORK/failed"
        fi
    done
    [ "$(cd "$WORK/new/$name" && find . -type f | sort)" = "$files" ] ||
        { echo "DIFF $name: file lists differ"; echo 1 >"$WORK/failed"; }
    echo "$name: exit $(cat "$WORK/new.$name.rc"), $nfiles files compared"
done
# The noise fit's JSON (pixpost calibrate --frame): no timing in it.
for side in ref new; do
    if [ $side = ref ]; then bin=$REF; else bin=$NEW; fi
    nice "$bin" calibrate --frame "$P" -o "$WORK/$side.calibrate.json" --quiet \
        >"$WORK/$side.calibrate.out" 2>&1
    echo "$?" >"$WORK/$side.calibrate.rc"
done
for f in calibrate.json calibrate.out calibrate.rc; do
    cmp -s "$WORK/ref.$f" "$WORK/new.$f" || { echo "DIFF calibrate: $f"; echo 1 >"$WORK/failed"; }
done
echo "calibrate: exit $(cat "$WORK/new.calibrate.rc"), JSON and output compared"
if [ -f "$WORK/failed" ]; then status=1; echo "NOT identical"; else echo "all identical"; fi
exit $status
