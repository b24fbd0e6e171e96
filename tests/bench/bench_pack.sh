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
#  2. Open + 10,000 lookups for stores of 10k, 100k and 1M rows (dim 300).
#     Open reads only the header, so it stays flat.  Lookups are timed in
#     two passes over the same 10,000 tokens: the first on a fresh mapping
#     (each page of the index, string offsets and strings touched for the
#     first time costs a minor page fault; at 1M rows 10,000 lookups touch
#     nearly all of those ~25 MB), the second on the same mapping (what is
#     left is cache and TLB misses).  Both in CPU and wall time, with page
#     faults per lookup.  Then the 1M store once more after dropping it from
#     the page cache (posix_fadvise on that file only): reads from the disk.
#  3. Peak resident memory of 'vectors near' on the 1M-row store
#     (/usr/bin/time -v): only the pages touched count.
# The load average is printed first and last: the machine may be shared,
# and then wall times say more about the neighbours than about vecsift.
set -euo pipefail
BUILD=${1:-build}
VECSIFT=$BUILD/vecsift
PY=/usr/bin/python3
W=$(mktemp -d "${TMPDIR:-/tmp}/vecsift-bench.XXXXXX")
trap 'rm -rf "$W"' EXIT
here=$(dirname "$0")

cc -O2 -std=c11 -D_POSIX_C_SOURCE=200809L -Iinclude -o "$W/bench_open" "$here/bench_open.c" \
   "$BUILD/libvecsift.a" -lutf8proc -lm -lpthread

# The machine may be shared: CPU seconds (user + system) measure the work
# itself; wall seconds include waiting for the CPU and, for pack, the fsync
# that makes the output durable.  Both are shown.
times() { # times CMD... : "wall cpu" of the run with the least CPU, of 2
  local best_w= best_c=
  for _ in 1 2; do
    /usr/bin/time -f '%e %U %S' -o "$W/t" "$@" >/dev/null
    read -r w u s <"$W/t"
    local c; c=$(echo "$u + $s" | bc -l)
    if [ -z "$best_c" ] || [ "$(echo "$c < $best_c" | bc -l)" = 1 ]; then best_c=$c; best_w=$w; fi
  done
  echo "$best_w $best_c"
}

printf 'machine: %s cores; load average at start: %s\n' "$(nproc)" "$(cut -d' ' -f1-3 /proc/loadavg)"
echo "generating 200000 x 300 text vectors ..." >&2
$PY "$here/gen_vectors.py" 200000 300 "$W/v.txt" 1
mb=$(echo "$(stat -c %s "$W/v.txt") / 1000000" | bc -l)
cat "$W/v.txt" >/dev/null # into the page cache, for every reader alike

read -r w_pack1 c_pack1 < <(times "$VECSIFT" vectors pack "$W/v.txt" -o "$W/v.vecs" --threads 1 --quiet)
read -r w_pack2 c_pack2 < <(times "$VECSIFT" vectors pack "$W/v.txt" -o "$W/v.vecs" --threads 2 --quiet)
# the same with the output on tmpfs, where the final fsync costs nothing:
# the difference in wall time is the wait for the disk
shm=
if [ -d /dev/shm ] && [ -w /dev/shm ]; then
  shm=$(mktemp -d /dev/shm/vecsift-bench.XXXXXX)
  read -r w_shm c_shm < <(times "$VECSIFT" vectors pack "$W/v.txt" -o "$shm/v.vecs" --threads 2 --quiet)
  rm -rf "$shm"
fi
read -r w_ref c_ref < <(/usr/bin/time -f '%e %U %S' -o "$W/t" $PY - "$W/v.txt" <<'PYEOF' >/dev/null && awk '{print $1, $2 + $3}' "$W/t"
import sys
import numpy as np
x = np.loadtxt(sys.argv[1], dtype=np.float32, skiprows=1, usecols=range(1, 301), comments=None)
assert x.shape == (200000, 300)
PYEOF
)
printf '\n== import: %.0f MB text, 200000 x 300 ==\n' "$mb"
printf '%-34s %8s %8s %10s %10s %9s %9s\n' reader "wall s" "CPU s" "MB/s wall" "MB/s CPU" "x np CPU" "x np wall"
row() { printf '%-34s %8.2f %8.2f %10.1f %10.1f %9.1f %9.1f\n' "$1" "$2" "$3" "$(echo "$mb / $2" | bc -l)" \
          "$(echo "$mb / $3" | bc -l)" "$(echo "$c_ref / $3" | bc -l)" "$(echo "$w_ref / $2" | bc -l)"; }
row "numpy.loadtxt (reference)" "$w_ref" "$c_ref"
row "vecsift vectors pack --threads 1" "$w_pack1" "$c_pack1"
row "vecsift vectors pack --threads 2" "$w_pack2" "$c_pack2"
[ -n "$shm" ] && row "  same, output on tmpfs (no fsync)" "$w_shm" "$c_shm"
echo "(x np CPU: CPU seconds of numpy.loadtxt / CPU seconds of the row; x np wall: the"
echo " same for wall seconds.  The numpy figures include starting Python and importing"
echo " numpy, about 0.1-0.2 s.  For scale, reading the file once with cat costs:"
/usr/bin/time -f '%e %U %S' -o "$W/t" cat "$W/v.txt" >/dev/null
awk '{printf " %.2f s wall, %.2f s CPU)\n", $1, $2 + $3}' "$W/t"

printf '\n== open + 10000 lookups (dim 300), best of 3 runs per column ==\n'
printf '%-8s %8s %8s | %-28s | %-28s\n' "" "" "open" "1st pass (fresh mapping)" "2nd pass (same mapping)"
printf '%-8s %8s %8s | %8s %8s %10s | %8s %8s %10s\n' rows "store MB" "CPU ms" "wall ms" "CPU ms" "faults/lk" \
  "wall ms" "CPU ms" "CPU ns/lk"
ms() { echo "$1 * 1000" | bc -l; }
for n in 10000 100000 1000000; do
  "$W/bench_open" make $n 300 "$W/s$n.vecs"
  for _ in 1 2 3; do "$W/bench_open" lookup "$W/s$n.vecs" 10000; done >"$W/look"
  # per column, the least over the runs
  read -r ow oc w1 c1 f1 j1 w2 c2 f2 j2 < <(awk '{for (i = 1; i <= NF; i++) if (NR == 1 || $i < m[i]) m[i] = $i}
    END {for (i = 1; i <= NF; i++) printf "%s ", m[i]; print ""}' "$W/look")
  printf '%-8s %8.0f %8.3f | %8.2f %8.2f %10.4f | %8.2f %8.2f %10.0f\n' $n \
    "$(echo "$(stat -c %s "$W/s$n.vecs") / 1000000" | bc -l)" "$(ms "$oc")" "$(ms "$w1")" "$(ms "$c1")" \
    "$(echo "($f1 + $j1) / 10000" | bc -l)" "$(ms "$w2")" "$(ms "$c2")" "$(echo "$c2 * 100000" | bc -l)"
done
read -r ow oc w1 c1 f1 j1 w2 c2 f2 j2 < <("$W/bench_open" lookup "$W/s1000000.vecs" 10000 evict)
printf '1M, dropped from the page cache first: 1st pass %.1f ms wall, %.1f ms CPU, %s minor + %s major faults\n' \
  "$(ms "$w1")" "$(ms "$c1")" "$f1" "$j1"
echo "(faults/lk: page faults per lookup; the kernel maps a fault's neighbouring pages"
echo " too, so a few hundred faults cover the sections a 1M store's lookups touch)"

printf '\n== vectors near on the 1M-row store ==\n'
/usr/bin/time -v "$VECSIFT" vectors near "$W/s1000000.vecs" w0000042 -k 10 >"$W/near.out" 2>"$W/time.err"
rss=$(sed -n 's/.*Maximum resident set size (kbytes): //p' "$W/time.err")
wall=$(sed -n 's/.*Elapsed (wall clock) time (h:mm:ss or m:ss): //p' "$W/time.err")
printf 'peak RSS %.0f MB, wall %s, store %.0f MB\n' "$(echo "$rss / 1024" | bc -l)" "$wall" \
  "$(echo "$(stat -c %s "$W/s1000000.vecs") / 1048576" | bc -l)"
printf '\nload average at end: %s\n' "$(cut -d' ' -f1-3 /proc/loadavg)"
