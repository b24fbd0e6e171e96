#!/bin/sh
# bench_learn.sh -- on-demand benchmark of `vecsift vectors learn` against
# gensim's Word2Vec in the same run (see bench_learn.py).  Not part of
# `meson test`.  Usage: tests/bench/bench_learn.sh [BUILDDIR]  (default: build)
set -eu
top=$(cd "$(dirname "$0")/../.." && pwd)
build=${1:-$top/build}
ninja -C "$build" >/dev/null
VECSIFT="$build/vecsift" SRCDIR="$top" exec /usr/bin/python3 "$top/tests/bench/bench_learn.py"
