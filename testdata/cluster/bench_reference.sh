#!/bin/sh
# Go benchmarks of cluster/ and the reference libraries, on the same points, in one sitting.
# Needs Debian's python3-sklearn. Run from the repository root.
set -e
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
COHORTMIX_BENCH_DUMP="$dir" go test -run='^$' -bench=. -benchtime=3x -benchmem ./cluster/
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE /usr/bin/python3 testdata/cluster/bench_reference.py "$dir"
