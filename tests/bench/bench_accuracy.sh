#!/usr/bin/env bash
# bench_accuracy.sh -- on demand: build, then compare the macro-F1 of
# vecsift's routes with reference scikit-learn / gensim pipelines on open
# datasets (see bench_accuracy.py).  Not part of meson test; options are
# passed on (--datasets, --routes, --extra, --markdown).
set -eu
cd "$(dirname "$0")/../.."
BUILD=${BUILD:-build}
[ -f "$BUILD/build.ninja" ] || meson setup "$BUILD" -Dwerror=true
ninja -C "$BUILD" >/dev/null
BUILDDIR=$BUILD exec /usr/bin/python3 tests/bench/bench_accuracy.py "$@"
