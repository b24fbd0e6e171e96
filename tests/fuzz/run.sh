#!/usr/bin/env bash
# run.sh -- run each libFuzzer harness for a while from its seed corpus.
#
#   tests/fuzz/run.sh [SECONDS] [NAME...]
#
# SECONDS per harness (default 30); NAMEs among csv text vecimport vecopen
# model (default all).  BUILD names the clang build directory (default
# build-fuzz; created with CC=clang when missing).  The seeds in
# tests/fuzz/corpus/NAME are read, never written: new inputs go to a scratch
# corpus under $FUZZ_OUT (default a temporary directory, removed unless
# KEEP=1), and a crashing input is kept as $FUZZ_OUT/crash-NAME-*.
# Prints one line per harness (executions, cov, ft, crashes) and ends with
# "N passed, N failed" (a harness passes when it ran its time without a
# crash, leak or timeout).
set -uo pipefail
cd "$(dirname "$0")/../.."
SECS=${1:-30}
shift || true
NAMES=("$@")
[ ${#NAMES[@]} -eq 0 ] && NAMES=(csv text vecimport vecopen model)
BUILD=${BUILD:-build-fuzz}
if [ ! -f "$BUILD/build.ninja" ]; then
  CC=clang meson setup "$BUILD" -Dwerror=true >/dev/null || exit 1
fi
targets=()
for n in "${NAMES[@]}"; do targets+=("tests/fuzz/fuzz_$n"); done
ninja -C "$BUILD" "${targets[@]}" >/dev/null || { echo "0 passed, ${#NAMES[@]} failed"; exit 1; }
OUT=${FUZZ_OUT:-$(mktemp -d)}
mkdir -p "$OUT"
export VECSIFT_FUZZ_VECTORS="$PWD/tests/fuzz/vectors.txt"
# The harnesses that write a packed store do so through ofile, which syncs
# the file before renaming it: on a busy disk that costs seconds.  A tmpfs
# scratch directory (when /dev/shm is there) keeps them at full speed.
SCRATCH=$(mktemp -d /dev/shm/vecsift-fuzz.XXXXXX 2>/dev/null || mktemp -d "$OUT/scratch.XXXXXX")
trap 'rm -rf "$SCRATCH"' EXIT
export TMPDIR="$SCRATCH"
export ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-halt_on_error=1:print_stacktrace=1}
pass=0 fail=0
for n in "${NAMES[@]}"; do
  exe="$BUILD/tests/fuzz/fuzz_$n"
  if [ ! -x "$exe" ]; then
    echo "fuzz_$n: not built (is $BUILD a clang build?)"; fail=$((fail + 1)); continue
  fi
  work="$OUT/corpus-$n"
  mkdir -p "$work"
  log="$OUT/fuzz_$n.log"
  # -rss_limit_mb: the 2 GB default is more than a CI machine spares per run;
  # -max_len: big enough for a model file seed, small enough to stay fast;
  # -timeout: generous, as a shared CI machine can stall a run for seconds
  # (no input here takes more than about a second on an idle one).
  "$exe" "$work" "tests/fuzz/corpus/$n" -max_total_time="$SECS" -timeout=60 \
    -rss_limit_mb=1024 -max_len=16384 -artifact_prefix="$OUT/crash-$n-" \
    -print_final_stats=1 -report_slow_units=30 >"$log" 2>&1
  rc=$?
  runs=$(grep -E '^stat::number_of_executed_units' "$log" | awk '{print $2}')
  last=$(grep -E '#[0-9]+.*cov: ' "$log" | tail -1)
  cov=$(sed -nE 's/.*cov: ([0-9]+).*/\1/p' <<<"$last")
  ft=$(sed -nE 's/.*ft: ([0-9]+).*/\1/p' <<<"$last")
  # libFuzzer also writes "slow-unit" files with the artifact prefix: an
  # input over -report_slow_units seconds.  They are reported, not failed
  # (on a loaded machine a stall makes any input slow; replay to check).
  crashes=$(ls "$OUT" | grep "^crash-$n-" | grep -vc -- '-slow-unit-' || true)
  slow=$(ls "$OUT" | grep -c "^crash-$n-slow-unit-" || true)
  [ "$slow" -gt 0 ] && echo "fuzz_$n: $slow slow input(s) kept as $OUT/crash-$n-slow-unit-* (replay: $exe FILE)"
  printf 'fuzz_%-10s %4ss  executions %-9s cov %-6s ft %-6s crashes %s\n' \
    "$n" "$SECS" "${runs:-?}" "${cov:-?}" "${ft:-?}" "$crashes"
  if [ "$rc" -eq 0 ] && [ "$crashes" -eq 0 ]; then
    pass=$((pass + 1))
  else
    fail=$((fail + 1))
    echo "  exit $rc; last lines of $log:"; grep -E 'ERROR|runtime error|SUMMARY|Test unit written' "$log" | head -8 | sed 's/^/    /'
    tail -5 "$log" | sed 's/^/    /'
  fi
done
if [ -z "${FUZZ_OUT:-}" ] && [ "${KEEP:-0}" != 1 ] && [ "$fail" -eq 0 ]; then
  rm -rf "$OUT"
else
  echo "fuzz output kept in $OUT"
fi
echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
