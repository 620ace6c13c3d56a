#!/bin/sh
# Runs bench/mtc_bench.py (ESS per second of delta, mtc vs gibbs) against a
# build folder: bench/mtc_bench.sh BUILD_DIR [SIZES...]. Single-threaded,
# one chain per run; a few minutes in all on one core.
set -e
build=${1:?usage: bench/mtc_bench.sh BUILD_DIR [SIZES...]}
shift
exec /usr/bin/python3 "$(dirname "$0")/mtc_bench.py" "$build/pixpost" "$@"
