#!/usr/bin/env bash
# bench_serve.sh -- `vecsift serve --threads 2` answering single-ticket
# requests over loopback, against a minimal Python service doing the same
# job (standard library http.server + scikit-learn, bench_serve.py),
# measured in the same run with the same load client
# (bench_serve_load.c: kept-alive connections, one request in flight per
# connection, bounded by time and by count).  Run on demand from the
# source root:
#   bash tests/bench/bench_serve.sh [build/vecsift]
# Environment: SECONDS_EACH (load per service, default 10), CLIENTS
# (client threads, default 2), MAXREQ (per client thread, default 200000).
# Prints requests per second, p50 and p99 latency for both, and the ratio;
# the goals are at least 20x the reference's requests per second and a p99
# under 5 ms.  Both services and the client share the machine's cores.
set -eu
VECSIFT=${1:-${VECSIFT:-build/vecsift}}
PY=/usr/bin/python3
HERE=$(dirname "$0")
SECONDS_EACH=${SECONDS_EACH:-10}
CLIENTS=${CLIENTS:-2}
MAXREQ=${MAXREQ:-200000}
D=$(mktemp -d)
SPID=""
cleanup() {
  [ -n "$SPID" ] && kill "$SPID" 2>/dev/null && wait "$SPID" 2>/dev/null
  rm -rf "$D"
}
trap cleanup EXIT

cc -O2 -std=c11 -D_POSIX_C_SOURCE=200809L -D_GNU_SOURCE -o "$D/load" "$HERE/bench_serve_load.c" -lpthread
$PY "$HERE/bench_serve.py" bodies "$D/bodies.jsonl" 2000
"$VECSIFT" train datasets/inbox/labelled.csv --text-col subject --text-col body --label-col queue \
  --pool bow -o "$D/m.json" -q
port() { $PY -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])'; }

# wait_for FILE WORD: until FILE holds WORD (at most 120 s)
wait_for() {
  for _ in $(seq 1200); do grep -q "$2" "$1" 2>/dev/null && return 0; sleep 0.1; done
  echo "bench_serve: the service did not start:" >&2; cat "$1" >&2; exit 1
}

P=$(port)
"$VECSIFT" serve "$D/m.json" --listen 127.0.0.1:$P --threads 2 -q 2>"$D/v.err" &
SPID=$!
wait_for "$D/v.err" "listening on"
"$D/load" $P /route "$D/bodies.jsonl" $CLIENTS 1 1000 >/dev/null   # warm-up
read -r vn vbad vs vrps vp50 vp99 < <("$D/load" $P /route "$D/bodies.jsonl" $CLIENTS $SECONDS_EACH $MAXREQ)
kill -TERM $SPID; wait $SPID || true; SPID=""

P=$(port)
$PY "$HERE/bench_serve.py" reference $P >"$D/r.out" 2>&1 &
SPID=$!
wait_for "$D/r.out" "ready"
"$D/load" $P /route "$D/bodies.jsonl" $CLIENTS 1 200 >/dev/null    # warm-up
read -r rn rbad rs rrps rp50 rp99 < <("$D/load" $P /route "$D/bodies.jsonl" $CLIENTS $SECONDS_EACH $MAXREQ)
kill -TERM $SPID; wait $SPID 2>/dev/null || true; SPID=""

echo "single-ticket requests over loopback, $CLIENTS client threads, ${SECONDS_EACH} s each; $(nproc) cores, load average $(cut -d' ' -f1 /proc/loadavg)"
printf '%-28s %9s %8s %10s %9s %9s\n' service requests errors "req/s" "p50 ms" "p99 ms"
printf '%-28s %9s %8s %10s %9s %9s\n' "vecsift serve --threads 2" "$vn" "$vbad" "$vrps" "$vp50" "$vp99"
printf '%-28s %9s %8s %10s %9s %9s\n' "http.server + scikit-learn" "$rn" "$rbad" "$rrps" "$rp50" "$rp99"
awk -v v="$vrps" -v r="$rrps" -v p="$vp99" 'BEGIN {
  printf "requests per second: %.1fx the reference (goal: at least 20x)\n", v / r
  printf "vecsift p99: %.3f ms (goal: under 5 ms)\n", p }'
