#!/usr/bin/env bash
# bench_train.sh -- `vecsift train` on the 404 labelled rows of the demo
# inbox against scikit-learn's LogisticRegression fit on the SAME features
# (exported by `vecsift features`), measured in the same run.  vecsift's
# time includes reading the CSV, tokenising and featurizing; the
# reference's is the fit alone (lbfgs, multinomial, same C, tol 1e-6 as
# ours).  Run on demand from the source root:
#   bash tests/bench/bench_train.sh [build/vecsift]
set -eu
VECSIFT=${1:-${VECSIFT:-build/vecsift}}
PY=/usr/bin/python3
D=$(mktemp -d)
trap 'rm -rf "$D"' EXIT
IN=datasets/inbox/labelled.csv
TXT=(--text-col subject --text-col body --label-col queue)

# 300-d seeded random vectors for the inbox's words (nothing learned)
$PY - "$IN" "$D/v.txt" <<'PYEOF'
import csv, re, sys
import numpy as np
words = set()
for r in csv.DictReader(open(sys.argv[1], newline="", encoding="utf-8")):
    words.update(re.findall(r"\w+", (r["subject"] + " " + r["body"]).lower()))
rng = np.random.default_rng(3)
with open(sys.argv[2], "w") as fp:
    for w in sorted(words):
        fp.write(w + " " + " ".join("%.3f" % x for x in rng.normal(size=300)) + "\n")
PYEOF
"$VECSIFT" vectors pack "$D/v.txt" -o "$D/v.vecs" -q

ours() { # best of 5 wall-clock and CPU (user + system) seconds of: vecsift train ARGS...
  local best=1e9 cpu=1e9 w u s
  for run in 1 2 3 4 5; do
    /usr/bin/time -f "%e %U %S" -o "$D/time" "$VECSIFT" train "$IN" "${TXT[@]}" "$@" -o "$D/m.json" -q
    read -r w u s <"$D/time"
    best=$(echo "$w $best" | awk '{ print ($1 < $2 ? $1 : $2) }')
    cpu=$(echo "$u $s $cpu" | awk '{ c = $1 + $2; print (c < $3 ? c : $3) }')
  done
  echo "$best $cpu"
}
theirs() { # best of 5 seconds of LogisticRegression.fit on exported features
  "$VECSIFT" features "$IN" "${TXT[@]}" "$@" -q -o "$D/f.csv"
  $PY - "$D/f.csv" <<'PYEOF'
import csv, sys, time
import numpy as np, scipy.sparse as sp
from sklearn.linear_model import LogisticRegression
rows = list(csv.reader(open(sys.argv[1], newline="", encoding="utf-8")))[1:]
y = [r[1] for r in rows]
X = np.array([[float(v) for v in r[2:]] for r in rows])
if X.shape[1] > 1000:
    X = sp.csr_matrix(X)
best = cpu = 1e9
for _ in range(5):
    t0, c0 = time.perf_counter(), time.process_time()
    LogisticRegression(C=1.0, solver="lbfgs", multi_class="multinomial", tol=1e-6, max_iter=1000).fit(X, y)
    best = min(best, time.perf_counter() - t0)
    cpu = min(cpu, time.process_time() - c0)
print(f"{best:.4f} {cpu:.4f} {X.shape[1]}")
PYEOF
}
sk=$($PY -c 'import sklearn, numpy; print(f"scikit-learn {sklearn.__version__}, numpy {numpy.__version__}")')
echo "bench_train: 404 rows of datasets/inbox/labelled.csv (invented), 7 labels; reference $sk"
printf '%-8s %8s %28s %28s %16s\n' "features" "columns" "vecsift train wall / CPU s" "sklearn fit wall / CPU s" "ratio wall / CPU"
for case in "tfidf" "bow"; do
  if [ "$case" = bow ]; then args=(--pool bow); else args=(--pool tfidf --vectors "$D/v.vecs"); fi
  read -r a ac < <(ours "${args[@]}")
  read -r b bc cols < <(theirs "${args[@]}")
  awk -v c="$case" -v n="$cols" -v a="$a" -v b="$b" -v ac="$ac" -v bc="$bc" \
    'BEGIN { printf "%-8s %8d %18.3f / %7.3f %18.3f / %7.3f %9.1fx / %4.1fx\n", c, n, a, ac, b, bc, b / a, bc / ac }'
done
echo "(ratio = sklearn fit / vecsift train, best of 5 each; vecsift's time includes reading,"
echo " tokenising and featurizing; load average at the end: $(cut -d' ' -f1-3 /proc/loadavg))"
