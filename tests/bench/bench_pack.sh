#!/usr/bin/env bash
# bench_pack.sh -- speed of 'vecsift vectors pack' and of the packed store.
# Run on demand from the source root (not part of 'meson test'):
#     tests/bench/bench_pack.sh [BUILD-DIR]     (default: build)
# Needs ~2.5 GB of free space under ${TMPDIR:-/tmp}; removes it at the end.
#
#  1. Import speed: an invented 200,000 x 300 text vector file (fixed seed,
#     tests/bench/gen_vectors.py) is packed with 1 and 2 threads; in the same
#     run numpy.loadtxt (Debian python3-numpy, a general-purpose reader, the
#     reference) reads the same file into float32.  MB/s and the ratio.
#     Goals: pack at least 20x the reference; at least 300 MB/s on one core.
#  2. Open + 10,000 lookups for stores of 10k, 100k and 1M rows (dim 300):
#     should stay flat, as open reads only the header.
#  3. Peak resident memory of 'vectors near' on the 1M-row store
#     (/usr/bin/time -v): only the pages touched count.
set -euo pipefail
BUILD=${1:-build}
VECSIFT=$BUILD/vecsift
PY=/usr/bin/python3
W=$(mktemp -d "${TMPDIR:-/tmp}/vecsift-bench.XXXXXX")
trap 'rm -rf "$W"' EXIT
here=$(dirname "$0")

cc -O2 -std=c11 -D_POSIX_C_SOURCE=200809L -Iinclude -o "$W/bench_open" "$here/bench_open.c" \
   "$BUILD/libvecsift.a" -lutf8proc -lm -lpthread

secs() { # secs CMD... : wall seconds of the command, best of 2
  local best=
  for _ in 1 2; do
    local t0 t1
    t0=$(date +%s.%N); "$@" >/dev/null; t1=$(date +%s.%N)
    local d; d=$(echo "$t1 - $t0" | bc -l)
    if [ -z "$best" ] || [ "$(echo "$d < $best" | bc -l)" = 1 ]; then best=$d; fi
  done
  echo "$best"
}

echo "generating 200000 x 300 text vectors ..." >&2
$PY "$here/gen_vectors.py" 200000 300 "$W/v.txt" 1
mb=$(echo "$(stat -c %s "$W/v.txt") / 1000000" | bc -l)
cat "$W/v.txt" >/dev/null # into the page cache, for every reader alike

t_pack1=$(secs "$VECSIFT" vectors pack "$W/v.txt" -o "$W/v.vecs" --threads 1 --quiet)
t_pack2=$(secs "$VECSIFT" vectors pack "$W/v.txt" -o "$W/v.vecs" --threads 2 --quiet)
t_ref=$($PY - "$W/v.txt" <<'PYEOF'
import sys, time
import numpy as np
t = time.perf_counter()
x = np.loadtxt(sys.argv[1], dtype=np.float32, skiprows=1, usecols=range(1, 301), comments=None)
assert x.shape == (200000, 300)
print(time.perf_counter() - t)
PYEOF
)
printf '\n== import: %.0f MB text, 200000 x 300 ==\n' "$mb"
printf '%-34s %8s %9s %9s\n' reader seconds MB/s "x numpy"
row() { printf '%-34s %8.2f %9.1f %9.1f\n' "$1" "$2" "$(echo "$mb / $2" | bc -l)" "$(echo "$t_ref / $2" | bc -l)"; }
row "numpy.loadtxt (reference)" "$t_ref"
row "vecsift vectors pack --threads 1" "$t_pack1"
row "vecsift vectors pack --threads 2" "$t_pack2"

printf '\n== open + 10000 lookups (dim 300) ==\n'
printf '%-10s %10s %12s %14s\n' rows "store MB" "open ms" "lookups ms"
for n in 10000 100000 1000000; do
  "$W/bench_open" make $n 300 "$W/s$n.vecs"
  best_o=9; best_l=9
  for _ in 1 2 3; do
    read -r o l < <("$W/bench_open" lookup "$W/s$n.vecs" 10000)
    best_o=$(echo "if ($o < $best_o) $o else $best_o" | bc -l)
    best_l=$(echo "if ($l < $best_l) $l else $best_l" | bc -l)
  done
  printf '%-10s %10.0f %12.3f %14.3f\n' $n "$(echo "$(stat -c %s "$W/s$n.vecs") / 1000000" | bc -l)" \
    "$(echo "$best_o * 1000" | bc -l)" "$(echo "$best_l * 1000" | bc -l)"
done

printf '\n== vectors near on the 1M-row store ==\n'
/usr/bin/time -v "$VECSIFT" vectors near "$W/s1000000.vecs" w0000042 -k 10 >"$W/near.out" 2>"$W/time.err"
rss=$(sed -n 's/.*Maximum resident set size (kbytes): //p' "$W/time.err")
wall=$(sed -n 's/.*Elapsed (wall clock) time (h:mm:ss or m:ss): //p' "$W/time.err")
printf 'peak RSS %.0f MB, wall %s, store %.0f MB\n' "$(echo "$rss / 1024" | bc -l)" "$wall" \
  "$(echo "$(stat -c %s "$W/s1000000.vecs") / 1048576" | bc -l)"
