#!/usr/bin/env bash
# interrupt.sh -- SIGINT or SIGTERM in the middle of a long run leaves no
# output file and no temporary file behind (DESIGN.md, Conventions: "a failed
# or interrupted run leaves no half-written file"; src/ofile.c registers the
# temporaries, main.c's handler removes them and re-raises the signal).
#
# predict runs over a generated CSV of about 40 MB and is interrupted once
# its temporary output exists and has grown.  vectors learn runs on the
# invented inbox archive repeated three times, with far more epochs than
# any machine finishes in the 3 s before it is interrupted,
# while it trains (its store is written only at the end, through
# vecset_write, so nothing may exist yet).  Each
# run is checked: killed by the signal (status 128 + signal), no output, the
# directory holds exactly the files it held before (no ".partial" file).
set -uo pipefail
cd "$(dirname "$0")/../.."
. tests/cli/lib.sh
W="$T_DIR/w"
mkdir -p "$W"

# A model and a big input, built once.
"$VECSIFT" train tests/fuzz/train.csv --pool bow -o "$W/m.json" -q -t 1 || exit 1
python3 - "$W/big.csv" <<'PY'
import sys
rows = ["refund for my order please", "cannot login no code", "printer jammed again",
        "invoice delivery printer", "password reset code missing"]
with open(sys.argv[1], "w") as f:
    f.write("text\n")
    for i in range(1_200_000):
        f.write(f"{rows[i % 5]} ticket {i}\n")
PY
for i in 1 2 3; do tail -n +2 datasets/inbox/unlabelled.csv; done > "$W/corpus.txt"

listing() { (cd "$W" && ls -A | sort); }

# interrupt SIG OUTPUT WAITFOR CMD...: start CMD in the background, wait
# until a temporary file for WAITFOR (a dot file starting with its name)
# exists and is not empty, or 20 s ("-" waits 3 s instead), then send SIG
# and check what is left: no OUTPUT, no new file at all.
interrupt() {
  local sig=$1 out=$2 waitfor=$3; shift 3
  local before; before=$(listing)
  LAST_CMD="$* (then SIG$sig)"
  "$@" >/dev/null 2>"$T_DIR/err" &
  local pid=$! waited=0 tmp=""
  if [ "$waitfor" = - ]; then
    sleep 3
  else
    while [ $waited -lt 200 ]; do
      tmp=$(cd "$W" && ls -A | grep -E "^\.$waitfor\." | head -1)
      if [ -n "$tmp" ] && [ -s "$W/$tmp" ]; then break; fi
      kill -0 "$pid" 2>/dev/null || break
      sleep 0.1
      waited=$((waited + 1))
    done
    if [ -n "$tmp" ]; then ok; else bad "no temporary output appeared before the signal (ls: $(listing | tr '\n' ' '))"; fi
  fi
  if kill -0 "$pid" 2>/dev/null; then ok; else bad "the command ended before the signal; make its input bigger"; fi
  kill -"$sig" "$pid" 2>/dev/null
  wait "$pid"
  LAST_STATUS=$?
  local want=$((128 + $(kill -l "$sig")))
  expect_status "$want"
  expect_no_file "$W/$out"
  [ "$waitfor" != - ] && expect_no_file "$W/$waitfor"
  local after; after=$(listing)
  if [ "$before" = "$after" ]; then ok; else bad "files left behind: $(diff <(echo "$before") <(echo "$after") | grep '^>' | tr '\n' ' ')"; fi
}

interrupt INT out.csv out.csv "$VECSIFT" predict "$W/m.json" "$W/big.csv" -o "$W/out.csv" -t 1
interrupt TERM out.csv out.csv "$VECSIFT" predict "$W/m.json" "$W/big.csv" -o "$W/out.csv" -t 1
interrupt INT v.vecs - "$VECSIFT" vectors learn "$W/corpus.txt" --dimensions 50 --epochs 5000 -t 1 -o "$W/v.vecs"
interrupt TERM v.vecs - "$VECSIFT" vectors learn "$W/corpus.txt" --dimensions 50 --epochs 5000 -t 1 -o "$W/v.vecs"
finish
