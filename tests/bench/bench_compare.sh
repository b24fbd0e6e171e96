#!/usr/bin/env bash
# bench_compare.sh -- on demand: build, then time `vecsift compare` on a
# 3 vector sets x 3 poolings x 2 classifiers grid against scikit-learn on the
# same folds (see bench_compare.py).  Not part of meson test.
set -eu
cd "$(dirname "$0")/../.."
BUILD=${BUILD:-build}
[ -f "$BUILD/build.ninja" ] || meson setup "$BUILD" -Dwerror=true
ninja -C "$BUILD" >/dev/null
BUILDDIR=$BUILD exec /usr/bin/python3 tests/bench/bench_compare.py
