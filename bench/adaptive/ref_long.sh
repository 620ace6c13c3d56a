#!/bin/sh
# Longer runs of the adaptive prior's two reference checks
# (tests/ref_adaptive_chain.py, tests/ref_adaptive_coverage.py): both read
# PP_REF_SCALE, which multiplies the chain lengths of the first (numpy
# 40000 x K iterations, pixpost 4 chains x 25000 x K) and the frame count of
# the second (128 x K frames). Results: bench/adaptive/REF_LONG.md.
# Usage: bench/adaptive/ref_long.sh [K] [BUILD_DIR]   (K = 4 by default)
set -e
K=${1:-4}
BUILD=${2:-build}
PP_REF_SCALE=$K nice ctest --test-dir "$BUILD" -R 'ref_adaptive_(chain|coverage)' -V
