#!/usr/bin/env bash
# cli/evaluate.sh -- `vecsift evaluate` from the command line: the label
# table before fitting, error paths (exit 2, DESIGN.md "Conventions"), no
# half-written or overwritten files, the cut-off handed to predict, and the
# HTML report loaded in headless Chromium (Debian's chromium) with a
# screenshot that is a real PNG (PNG signature, RFC 2083 section 3.1) of
# non-trivial size.
set -u
. "$(dirname "$0")/lib.sh"
D=datasets/inbox/labelled.csv
COLS=(--text-col subject --text-col body --label-col queue)

# Invented toy sets.
printf 'text,label\nthe cat sat,a\nthe dog ran,a\nmore cats,a\ncats again,a\nsome dogs,a\nbad refund,b\nmore refund,b\n' >"$T_DIR/rare.csv"
printf 'text,label\nthe cat sat,a\nthe dog ran,a\nmore cats,a\n' >"$T_DIR/one.csv"
cp "$T_DIR/rare.csv" "$T_DIR/rare.orig"

# A label with fewer rows than folds: the table comes first, then a message
# naming the label and its count, and a hint.
run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --json "$T_DIR/r.json"
expect_status 2
expect_out '^  b +2 +28\.6%  < folds$'
expect_out 'Rare labels: every label needs at least as many rows as there are folds \(5\)'
expect_err "rare\.csv: label 'b' has 2 rows, fewer than the 5 folds"
expect_err '^hint: lower --folds to 2'
expect_no_file "$T_DIR/r.json"

# Lowering the folds as the hint says works.
run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --folds 2 --quiet
expect_status 0; expect_out 'macro F1'

# One label only.
run "$VECSIFT" evaluate "$T_DIR/one.csv" --pool bow --folds 2
expect_status 2; expect_err "one\.csv: only one label \('a'\)"

# --folds 1.
run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --folds 1
expect_status 2; expect_err_lines 1; expect_err "'--folds'"

# Unknown group column: names the file.
run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --folds 2 --group-col nope
expect_status 2; expect_err "rare\.csv:1: no column 'nope'"

# An output path equal to the input, also by another spelling: refused, input kept.
for opt in --json --predictions --report; do
  run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --folds 2 $opt "$T_DIR/../$(basename "$T_DIR")/rare.csv"
  expect_status 2; expect_err 'also an input'
  if cmp -s "$T_DIR/rare.csv" "$T_DIR/rare.orig"; then ok; else bad "$opt overwrote the input"; fi
done

# --json - writes the JSON alone on stdout (the summary moves to stderr);
# two outputs on stdout are refused.
run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --folds 2 --json -
expect_status 0; expect_err 'macro F1'
if /usr/bin/python3 -c 'import json,sys; json.load(open(sys.argv[1]))' "$T_DIR/out" 2>/dev/null; then ok; else bad "--json - is not JSON alone"; fi
run "$VECSIFT" evaluate "$T_DIR/rare.csv" --pool bow --folds 2 --json - --predictions -
expect_status 2; expect_err_lines 1; expect_err "only one of"

# Groups: a label spread over fewer groups than folds is named in a warning;
# rows of a group share a fold (checked in the predictions file).
{ echo 'text,label,customer'
  for i in $(seq 1 30); do echo "refund invoice $i,billing,c$((i % 10))"; done
  for i in $(seq 1 12); do echo "parcel late $i,delivery,d$((i % 2))"; done; } >"$T_DIR/grp.csv"
run "$VECSIFT" evaluate "$T_DIR/grp.csv" --pool bow --group-col customer --predictions "$T_DIR/grp.oof"
expect_status 0
expect_err "grp\.csv: label 'delivery' spans only 2 values of 'customer', fewer than the 5 folds"
if grep -q "'billing' spans" "$T_DIR/err"; then bad "billing spans 10 groups"; else ok; fi
split=$(/usr/bin/python3 - "$T_DIR/grp.csv" "$T_DIR/grp.oof" <<'PY'
import csv, sys
cust = [r["customer"] for r in csv.DictReader(open(sys.argv[1]))]
seen = {}
for r in csv.DictReader(open(sys.argv[2])):
    seen.setdefault((r["repeat"], cust[int(r["row"]) - 1]), set()).add(r["fold"])
print(sum(len(f) > 1 for f in seen.values()))
PY
)
if [ "$split" = 0 ]; then ok; else bad "$split groups split across folds"; fi

# Empty data file.
printf 'text,label\n' >"$T_DIR/empty.csv"
run "$VECSIFT" evaluate "$T_DIR/empty.csv" --pool bow
expect_status 2; expect_err 'empty\.csv'

# The demo inbox: label table, the 0/0 rule, the cut-off line, then predict
# takes the cut-off the JSON reports.
run "$VECSIFT" evaluate "$D" "${COLS[@]}" --pool bow --repeats 1 --json "$T_DIR/ev.json" \
  --predictions "$T_DIR/oof.csv" --report "$T_DIR/ev.html" --target-precision 0.9
expect_status 0
expect_out '^404 labelled rows in'
expect_out '^0/0 counts as 0'
expect_out '^Use it with: vecsift predict --review-below 0\.[0-9]+$'
# The advised value keeps exactly the out-of-fold rows the cut-off keeps
# (a value rounded below the cut-off would admit rows never counted).
expect_file "$T_DIR/ev.json"; expect_file "$T_DIR/oof.csv"; expect_file "$T_DIR/ev.html"
cut=$(sed -n 's/^Use it with: vecsift predict --review-below //p' "$T_DIR/out")
same=$(/usr/bin/python3 - "$T_DIR/ev.json" "$T_DIR/oof.csv" "$cut" <<'PY'
import csv, json, sys
th = json.load(open(sys.argv[1]))["threshold"]
conf = [float(r["confidence"]) for r in csv.DictReader(open(sys.argv[2]))]
adv = float(sys.argv[3])
print(int(adv == th["review_below"] and adv <= th["cutoff"]
          and [c >= adv for c in conf] == [c >= th["cutoff"] for c in conf]))
PY
)
if [ "$same" = 1 ]; then ok; else bad "advised --review-below $cut does not keep the cut-off's rows"; fi
run "$VECSIFT" train "$D" "${COLS[@]}" --pool bow -o "$T_DIR/m.json" --quiet
expect_status 0
run "$VECSIFT" predict "$T_DIR/m.json" "$D" -o "$T_DIR/routed.csv" --review-below "$cut" --quiet
expect_status 0
# Every row below the cut-off goes to review, every row at or above it is routed.
bad_rows=$(/usr/bin/python3 - "$T_DIR/routed.csv" "$cut" <<'EOF'
import csv, sys
cut = float(sys.argv[2])
n = 0
for r in csv.DictReader(open(sys.argv[1], newline="", encoding="utf-8")):
    want = "review" if float(r["confidence"]) < cut else r["predicted"]
    n += r["route"] != want
print(n)
EOF
)
if [ "$bad_rows" = 0 ]; then ok; else bad "$bad_rows rows routed against the cut-off"; fi

# The HTML report: self-contained (no external fetches), loads in headless
# Chromium, and the screenshot is a PNG of real size.
if grep -Eq '(src|href)="https?:' "$T_DIR/ev.html"; then bad "report fetches from the network"; else ok; fi
# The page shows the JSON's pooled figures (3 decimals) and the 0/0 rule.
for key in accuracy macro_f1 weighted_f1 log_loss brier; do
  v=$(/usr/bin/python3 -c 'import json,sys; print("%.3f" % json.load(open(sys.argv[1]))["pooled"][sys.argv[2]])' "$T_DIR/ev.json" $key)
  if grep -q ">$v ±" "$T_DIR/ev.html"; then ok; else bad "report lacks $key $v"; fi
done
if grep -q '0/0 counts as 0' "$T_DIR/ev.html"; then ok; else bad "report lacks the 0/0 rule"; fi
if command -v chromium >/dev/null; then
  prof=$(mktemp -d)
  timeout 120 chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync --user-data-dir="$prof" \
    --screenshot="$T_DIR/ev.png" --window-size=1200,2400 "file://$(realpath "$T_DIR/ev.html")" >/dev/null 2>&1
  rm -rf "$prof"
  if [ "$(head -c 8 "$T_DIR/ev.png" 2>/dev/null | od -An -tx1 | tr -d ' \n')" = 89504e470d0a1a0a ]; then ok; else bad "no PNG screenshot"; fi
  size=$(stat -c %s "$T_DIR/ev.png" 2>/dev/null || echo 0)
  # A blank 1200x2400 page compresses to a few kilobytes; a drawn report is far larger.
  if [ "$size" -gt 40000 ]; then ok; else bad "screenshot only $size bytes"; fi
else
  bad "chromium not installed (tools/install-deps)"
fi

# train --search: the same grid and inner folds (3) as evaluate --search, on
# all rows with --seed.  Its choice must be the grid value with the best
# pooled macro F1 of `evaluate --folds 3 --repeats 1` with that C and seed
# (the same folds: both draw one repeat of stratified folds from the seed),
# the first one on ties; and the model must store it.
run "$VECSIFT" train "$D" "${COLS[@]}" --pool bow --search --seed 5 -o "$T_DIR/ms.json"
expect_status 0
expect_err '^parameter search \(3-fold, macro F1\) chose C = '
chosen=$(sed -n 's/^parameter search (3-fold, macro F1) chose C = //p' "$T_DIR/err")
stored=$(/usr/bin/python3 -c 'import json,sys; print("%g" % json.load(open(sys.argv[1]))["pipeline"]["classifier"]["C"])' "$T_DIR/ms.json")
if [ "$chosen" = "$stored" ]; then ok; else bad "printed C $chosen, model holds $stored"; fi
best=; best_f=-1
for C in 0.01 0.1 1 10 100; do
  "$VECSIFT" evaluate "$D" "${COLS[@]}" --pool bow --folds 3 --repeats 1 --seed 5 --C $C --quiet \
    --json "$T_DIR/g.json" >/dev/null
  f=$(/usr/bin/python3 -c 'import json,sys; print(repr(json.load(open(sys.argv[1]))["pooled"]["macro_f1"]))' "$T_DIR/g.json")
  if /usr/bin/python3 -c 'import sys; sys.exit(0 if float(sys.argv[1]) > float(sys.argv[2]) + 1e-12 else 1)' "$f" "$best_f"; then
    best=$C; best_f=$f
  fi
done
if [ "$(/usr/bin/python3 -c "print('%g' % $best)")" = "$chosen" ]; then ok; else bad "search chose $chosen, grid best is $best"; fi
# svm-rbf searches gamma too and says what it chose (on the first 120 rows,
# to keep the 15-point grid quick).
/usr/bin/python3 - "$D" "$T_DIR/small.csv" <<'PY'
import csv, sys
rows = list(csv.reader(open(sys.argv[1], newline="", encoding="utf-8")))
csv.writer(open(sys.argv[2], "w", newline="", encoding="utf-8")).writerows(rows[:121])
PY
run "$VECSIFT" train "$T_DIR/small.csv" "${COLS[@]}" --pool bow --classifier svm-rbf --search -o "$T_DIR/mr.json"
expect_status 0
expect_err 'chose C = [0-9.e+-]+, gamma = (0\.25|1|4) x the default$'
# evaluate --search reports one choice per fold.
run "$VECSIFT" evaluate "$T_DIR/small.csv" "${COLS[@]}" --pool bow --classifier svm-rbf --search --folds 2 --repeats 1 --quiet
expect_status 0
expect_out '^Parameter search chose C =( [0-9.e+-]+){2} \(one per fold\)$'
expect_out '^and gamma =( (0\.25|1|4)){2} x the default \(one per fold\)$'

finish
