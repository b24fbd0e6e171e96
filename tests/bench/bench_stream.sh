#!/usr/bin/env bash
# bench_stream.sh -- on-demand benchmark: does predict stream?  Generates CSV
# inputs of about 200 MB, 1 GB and 2 GB (invented ticket texts), predicts over
# each with a small bag-of-words model, and reports wall time and peak
# resident memory (/usr/bin/time -v, "Maximum resident set size").  The
# reference is the 200 MB run of the same invocation: the ratios of peak
# memory against it should stay near 1 (flat) while the input grows tenfold.
# Not part of `meson test`.  Needs about 2.3 GB of free disk in TMPDIR (the
# output goes to /dev/null); every generated file is deleted at the end.
#
#   tests/bench/bench_stream.sh [BUILDDIR] [SIZES_MB...]   (default: build 200 1000 2000)
set -euo pipefail
top=$(cd "$(dirname "$0")/../.." && pwd)
build=${1:-$top/build}
shift || true
sizes=("$@")
[ ${#sizes[@]} -eq 0 ] && sizes=(200 1000 2000)
ninja -C "$build" >/dev/null
V="$build/vecsift"
w=$(mktemp -d)
trap 'rm -rf "$w"' EXIT
need=$(( ${sizes[-1]} + 300 ))
avail=$(df -Pm "$w" | awk 'NR == 2 {print $4}')
if [ "$avail" -lt "$need" ]; then
  echo "bench_stream: $avail MB free in $w, need $need MB" >&2; exit 1
fi
"$V" train "$top/tests/fuzz/train.csv" --pool bow -o "$w/m.json" -q
ref_rss="" ref_rate=""
printf '%8s %10s %9s %12s %9s %10s\n' "input" "rows" "seconds" "peak RSS KB" "RSS/ref" "MB/s"
for mb in "${sizes[@]}"; do
  python3 - "$w/in.csv" "$mb" <<'PY'
import sys
# invented support-inbox lines, cycled with a running ticket number
texts = ["my refund for order {} has not arrived yet, can you check",
         "cannot sign in, the login code for account {} never comes",
         "the printer in room {} jams on every second page",
         "invoice {} lists a delivery I never received",
         "please reset the password for user {}, locked out since monday"]
labels = ["returns", "access", "hardware", "billing", "access"]
target = int(sys.argv[2]) * 1000 * 1000
with open(sys.argv[1], "w", buffering=1 << 20) as f:
    f.write("id,text,label\n")
    size, i = 0, 0
    while size < target:
        chunk = []
        for _ in range(10000):
            line = f'{i},"{texts[i % 5].format(i)}",{labels[i % 5]}\n'
            chunk.append(line)
            i += 1
        s = "".join(chunk)
        f.write(s)
        size += len(s)
PY
  rows=$(($(wc -l <"$w/in.csv") - 1))
  bytes=$(stat -c %s "$w/in.csv")
  /usr/bin/time -v "$V" predict "$w/m.json" "$w/in.csv" -o - -q >/dev/null 2>"$w/time.txt" || {
    cat "$w/time.txt" >&2; exit 1; }
  rss=$(sed -nE 's/.*Maximum resident set size \(kbytes\): ([0-9]+)/\1/p' "$w/time.txt")
  wall=$(sed -nE 's/.*Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): (.*)/\1/p' "$w/time.txt")
  secs=$(awk -F: '{ if (NF == 3) print $1 * 3600 + $2 * 60 + $3; else print $1 * 60 + $2 }' <<<"$wall")
  [ -z "$ref_rss" ] && ref_rss=$rss
  printf '%6s MB %10s %9.1f %12s %9.2f %10.1f\n' "$mb" "$rows" "$secs" "$rss" \
    "$(awk -v a="$rss" -v b="$ref_rss" 'BEGIN { print a / b }')" \
    "$(awk -v b="$bytes" -v s="$secs" 'BEGIN { print b / 1e6 / s }')"
  rm -f "$w/in.csv"
done
echo "reference: the ${sizes[0]} MB run (RSS/ref = peak memory relative to it; flat means streaming)"
