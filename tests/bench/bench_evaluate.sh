#!/usr/bin/env bash
# bench_evaluate.sh -- on-demand benchmark of `vecsift evaluate` against
# scikit-learn's cross_validate (see bench_evaluate.py); not in meson test.
# usage: tests/bench/bench_evaluate.sh [BUILDDIR]   (from the source root)
set -eu
BUILDDIR=${1:-build}
ninja -C "$BUILDDIR" >/dev/null
BUILDDIR="$BUILDDIR" exec /usr/bin/python3 "$(dirname "$0")/bench_evaluate.py"
