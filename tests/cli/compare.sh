#!/usr/bin/env bash
# cli/compare.sh -- compare and curve on the invented demo inbox: results do
# not depend on --threads, bad inputs fail cleanly (exit 2, one message naming
# the culprit, no output file), curve writes its table and a well-formed SVG
# (parsed with Python's xml.etree, an XML 1.0 parser).
set -u
. "$(dirname "$0")/lib.sh"
PY=/usr/bin/python3
D=datasets/inbox/labelled.csv
COLS=(--text-col subject --text-col body --label-col queue)
QUICK=(--folds 3 --repeats 1)

# Small vector sets: PPMI-SVD of the unlabelled tickets and random numbers.
"$PY" tests/ext/svdvec.py "$T_DIR/svd.txt" datasets/inbox/unlabelled.csv subject,body --dim 12 2>/dev/null
"$PY" tests/ext/svdvec.py "$T_DIR/rnd.txt" datasets/inbox/unlabelled.csv subject,body --dim 12 --random 4 2>/dev/null
"$VECSIFT" vectors pack "$T_DIR/svd.txt" -o "$T_DIR/svd.vecs" -q
"$VECSIFT" vectors pack "$T_DIR/rnd.txt" -o "$T_DIR/rnd.vecs" -q
V=(--vectors "$T_DIR/svd.vecs" --vectors "$T_DIR/rnd.vecs")

# The same results for any thread count (seconds aside: wall time), SVM
# included (libsvm draws from rand(); svmfit serialises it).
for t in 1 2; do
  run "$VECSIFT" compare "$D" "${COLS[@]}" "${QUICK[@]}" "${V[@]}" --pool mean,sif --classifier logreg,svm-rbf --threads $t \
      --json "$T_DIR/c$t.json" -q
  expect_status 0
  grep -v '"seconds"' "$T_DIR/c$t.json" >"$T_DIR/c$t.cmp"
done
if cmp -s "$T_DIR/c1.cmp" "$T_DIR/c2.cmp" && [ -s "$T_DIR/c1.cmp" ]; then ok; else bad "JSON differs between --threads 1 and 2"; fi
expect_out '^ +1 .*best'
expect_out 'Nadeau and Bengio'
expect_out 'roughly normal'

# The HTML report: an interval plot and the table.
run "$VECSIFT" compare "$D" "${COLS[@]}" "${QUICK[@]}" --vectors "$T_DIR/svd.vecs" --pool mean --report "$T_DIR/c.html" -q
expect_status 0; expect_file "$T_DIR/c.html"
if grep -q '<svg' "$T_DIR/c.html" && grep -q 'What the test assumes' "$T_DIR/c.html"; then ok; else bad "report lacks the plot or the assumptions"; fi

# Bad inputs.
run "$VECSIFT" compare "$D" "${COLS[@]}" --pool mean --json "$T_DIR/bad.json"
expect_status 2; expect_err "pooling 'mean' needs word vectors"; expect_no_file "$T_DIR/bad.json"
run "$VECSIFT" compare "$D" "${COLS[@]}" "${V[@]}" --pool mean,wavelet
expect_status 2; expect_err_lines 1; expect_err "'wavelet' is not one"
run "$VECSIFT" compare "$D" "${COLS[@]}" --vectors "$T_DIR/svd.vecs" --vectors "$T_DIR/gone.vecs" --json "$T_DIR/bad.json"
expect_status 2; expect_err "gone\.vecs"; expect_no_file "$T_DIR/bad.json"
run "$VECSIFT" compare "$D" "${COLS[@]}" --classifier logreg,forest
expect_status 2; expect_err "'forest' is not one"
run "$VECSIFT" compare "$D" "${COLS[@]}" --json "$D"
expect_status 2

# curve: the table and a well-formed SVG.
run "$VECSIFT" curve "$D" "${COLS[@]}" "${QUICK[@]}" --pool bow --sizes 0.25,0.5,1 --plot "$T_DIR/c.svg" -q
expect_status 0
expect_out '^ *share +training rows +macro F1'
expect_out '^ *1\.00 '
expect_out 'Figueroa'
if "$PY" -c 'import sys, xml.etree.ElementTree as E; r = E.parse(sys.argv[1]).getroot(); sys.exit(r.tag != "{http://www.w3.org/2000/svg}svg")' "$T_DIR/c.svg"; then ok; else bad "curve SVG is not well-formed SVG"; fi
run "$VECSIFT" curve "$D" "${COLS[@]}" --sizes 0.5,0
expect_status 2; expect_err "sizes"
run "$VECSIFT" curve "$D" "${COLS[@]}" --pool sif
expect_status 2; expect_err "needs word vectors"

finish
