#!/usr/bin/env bash
# cli/train_predict.sh -- train, predict and features on good and bad input.
# Conventions checked (DESIGN.md): exit 2 and a one-line "vecsift: FILE..."
# message for bad input, no output file (nor a temporary one) left behind on
# failure, inputs never overwritten, '-' for stdin/stdout, and predict's
# output independent of --threads and of splitting the input.
# Data: the invented demo inbox (datasets/inbox) and small files made here.
set -u
. "$(dirname "$0")/lib.sh"
PY=/usr/bin/python3
IN=datasets/inbox/labelled.csv
NEW=datasets/inbox/incoming.csv
D=$T_DIR
TXT=(--text-col subject --text-col body --label-col queue)

# no file named like an output, and no temporary left in the directory
expect_clean() {
  expect_no_file "$1"
  if ls "$(dirname "$1")" | grep -q 'partial'; then bad "temporary output left in $(dirname "$1")"; else ok; fi
}

# Vectors: 8 dimensions for every word of the inbox, from a seeded hash of
# the word (nothing learned); the second set differs in one number.
$PY - "$IN" "$D/v.txt" "$D/w.txt" <<'PYEOF'
import csv, re, sys, zlib
words = set()
for r in csv.DictReader(open(sys.argv[1], newline="", encoding="utf-8")):
    words.update(re.findall(r"[a-z]+", (r["subject"] + " " + r["body"]).lower()))
with open(sys.argv[2], "w") as a, open(sys.argv[3], "w") as b:
    for i, w in enumerate(sorted(words)):
        h = zlib.crc32(w.encode())
        v = [((h >> (3 * j)) % 17 - 8) / 8 for j in range(8)]
        a.write(w + " " + " ".join(map(str, v)) + "\n")
        v[0] += 1 if i == 0 else 0
        b.write(w + " " + " ".join(map(str, v)) + "\n")
PYEOF
run "$VECSIFT" vectors pack "$D/v.txt" -o "$D/v.vecs" -q; expect_status 0
run "$VECSIFT" vectors pack "$D/w.txt" -o "$D/w.vecs" -q; expect_status 0

# ---- training that works ----
run "$VECSIFT" train "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --pool tfidf -o "$D/m.json" -q
expect_status 0; expect_file "$D/m.json"
run "$VECSIFT" train "$IN" "${TXT[@]}" --pool bow -o "$D/bow.json" -q
expect_status 0; expect_file "$D/bow.json"

# features --model applies the model's featurizer to new, unlabelled rows
run "$VECSIFT" features "$NEW" --model "$D/m.json" -o "$D/fnew.csv" -q
expect_status 0; expect_file "$D/fnew.csv"
run head -c 40 "$D/fnew.csv"; expect_out '^row,x1,x2,'
run "$VECSIFT" features "$NEW" --model "$D/m.json" --label-col queue -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $NEW:1: no column 'queue'"; expect_clean "$D/x.csv"
# and gives the training rows the numbers the model was fitted on
run "$VECSIFT" features "$IN" --model "$D/m.json" -o "$D/fm.csv" -q; expect_status 0
run "$VECSIFT" features "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --pool tfidf -o "$D/ff.csv" -q; expect_status 0
if cmp -s "$D/fm.csv" "$D/ff.csv"; then ok; else bad "features --model differs from a fresh fit on the same rows"; fi

# ---- bad training input ----
run "$VECSIFT" train "$IN" --text-col subject --label-col nope --pool bow -o "$D/x.json"
expect_status 2; expect_err_lines 2; expect_err "^vecsift: $IN:1: no column 'nope'"; expect_clean "$D/x.json"

run "$VECSIFT" train "$IN" --text-col nope --label-col queue --pool bow -o "$D/x.json"
expect_status 2; expect_err "^vecsift: $IN:1: no column 'nope'"; expect_clean "$D/x.json"

# every text empty: a clear message naming the file, not a fit error
printf 'text,label\n,a\n"",b\n ,a\n,b\n' >"$D/empty.csv"
for pool in bow tfidf; do
  run "$VECSIFT" train "$D/empty.csv" --vectors "$D/v.vecs" --pool $pool -o "$D/x.json"
  expect_status 2; expect_err "^vecsift: $D/empty.csv: no row has a word in the text column \('text'\)"
  expect_err "hint: check --text-col"; expect_clean "$D/x.json"
done
run "$VECSIFT" features "$D/empty.csv" --pool bow -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/empty.csv: the training rows have no words"; expect_clean "$D/x.csv"

# words, but none with a vector: the message names the data file
printf 'text,label\nzzz qqq,a\nqqq zzz,b\nxx,a\nyy,b\n' >"$D/novec.csv"
run "$VECSIFT" train "$D/novec.csv" --vectors "$D/v.vecs" -o "$D/x.json"
expect_status 2; expect_err "^vecsift: $D/novec.csv: no training row has a single word with a vector"
expect_clean "$D/x.json"

# a label with one example
printf 'text,label\nmy parcel is late,delivery\nwhere is my parcel,delivery\nrefund please,returns\nI want a refund,returns\nlove the kettle,praise\n' >"$D/one.csv"
run "$VECSIFT" train "$D/one.csv" --pool bow -o "$D/x.json"
expect_status 2; expect_err "^vecsift: $D/one.csv: label 'praise' has only 1 row"; expect_clean "$D/x.json"

# output equal to an input: refused, input unchanged
cp "$IN" "$D/copy.csv"
run "$VECSIFT" train "$D/copy.csv" "${TXT[@]}" --pool bow -o "$D/copy.csv"
expect_status 2; expect_err "copy.csv"
if cmp -s "$IN" "$D/copy.csv"; then ok; else bad "input changed"; fi
run "$VECSIFT" train "$IN" "${TXT[@]}" --vectors "$D/v.vecs" -o "$D/v.vecs"
expect_status 2; run cmp "$D/v.vecs" "$D/v.vecs"; expect_status 0
cp "$D/m.json" "$D/m0.json"
run "$VECSIFT" predict "$D/m.json" "$D/copy.csv" -o "$D/copy.csv"
expect_status 2; if cmp -s "$IN" "$D/copy.csv"; then ok; else bad "input changed"; fi
run "$VECSIFT" predict "$D/m.json" "$NEW" -o "$D/m.json"
expect_status 2; if cmp -s "$D/m.json" "$D/m0.json"; then ok; else bad "model changed"; fi
run "$VECSIFT" features "$D/copy.csv" "${TXT[@]}" --pool bow -o "$D/copy.csv"
expect_status 2; if cmp -s "$IN" "$D/copy.csv"; then ok; else bad "input changed"; fi

# ---- bad models ----
run "$VECSIFT" predict "$D/m.json" "$NEW" --vectors "$D/w.vecs" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/w.vecs: vector set fingerprint"
expect_err "hint: .*pass the same --vectors, or retrain"; expect_clean "$D/x.csv"

head -c 3000 "$D/m.json" >"$D/cut.json"
run "$VECSIFT" predict "$D/cut.json" "$NEW" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/cut.json:[0-9]+: not valid JSON"; expect_clean "$D/x.csv"

sed -E 's/"version":[[:space:]]*1,/"version": 7,/' "$D/m.json" >"$D/v7.json"
run "$VECSIFT" predict "$D/v7.json" "$NEW" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/v7.json: model format version 7"; expect_clean "$D/x.csv"

run "$VECSIFT" predict "$IN" "$NEW" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $IN:1: not valid JSON"; expect_clean "$D/x.csv"

run "$VECSIFT" predict "$D/nothere.json" "$NEW" -o "$D/x.csv"
expect_status 2; expect_err "nothere.json"; expect_clean "$D/x.csv"

# ---- bad prediction input ----
printf 'subject,body,predicted\nhi,my parcel is late,x\n' >"$D/has_pred.csv"
run "$VECSIFT" predict "$D/m.json" "$D/has_pred.csv" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/has_pred.csv:1: input already has a column 'predicted'"
expect_clean "$D/x.csv"

printf 'title,text\nhi,my parcel is late\n' >"$D/nocol.csv"
run "$VECSIFT" predict "$D/m.json" "$D/nocol.csv" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/nocol.csv:1: no column 'subject'"; expect_clean "$D/x.csv"

# a broken row after the first batch: nothing written
$PY - "$NEW" "$D/broken.csv" <<'PYEOF'
import sys
data = open(sys.argv[1], encoding="utf-8", newline="").read()
open(sys.argv[2], "w", encoding="utf-8", newline="").write(data * 10 + 'T9,C9,"unclosed,\r\n')
PYEOF
run "$VECSIFT" predict "$D/m.json" "$D/broken.csv" -o "$D/x.csv"
expect_status 2; expect_err "^vecsift: $D/broken.csv:[0-9]+:"; expect_clean "$D/x.csv"

# to stdout, a bad row among the first rows leaves stdout empty (not even
# the header): nothing there can be thrown away afterwards
printf 'subject,body\r\nhi,refund please\r\nhi,caf\xe9\r\n' >"$D/latin1.csv"
run "$VECSIFT" predict "$D/m.json" "$D/latin1.csv" -o -
expect_status 2; expect_err "^vecsift: $D/latin1.csv:3: invalid UTF-8"
if [ -s "$T_DIR/out" ]; then bad "stdout not empty: $(head -c 200 "$T_DIR/out")"; else ok; fi
printf 'subject,body\r\n' >"$D/header_only.csv"
run "$VECSIFT" predict "$D/m.json" "$D/header_only.csv" -o - -q
expect_status 0; expect_out '^subject,body,predicted,confidence,route'

run "$VECSIFT" predict "$D/m.json" "$NEW" --top 0 -o "$D/x.csv"
expect_status 2; expect_clean "$D/x.csv"
run "$VECSIFT" predict "$D/m.json" "$NEW" --review-below 1.5 -o "$D/x.csv"
expect_status 2; expect_clean "$D/x.csv"
run "$VECSIFT" predict "$D/m.json" -o "$D/x.csv"
expect_status 2; expect_clean "$D/x.csv"

# ---- predictions ----
run "$VECSIFT" predict "$D/m.json" "$NEW" -o "$D/p1.csv" --threads 1 -q
expect_status 0
run "$VECSIFT" predict "$D/m.json" "$NEW" -o "$D/p2.csv" --threads 2 -q
expect_status 0
if cmp -s "$D/p1.csv" "$D/p2.csv"; then ok; else bad "--threads 1 and 2 differ"; fi

# stdin to stdout
run_in "$NEW" "$VECSIFT" predict "$D/m.json" - -o - --threads 2 -q
expect_status 0
if cmp -s "$T_DIR/out" "$D/p1.csv"; then ok; else bad "stdin/stdout output differs from file output"; fi

# the input in two parts (split between rows, not lines: bodies hold line
# breaks); the parts' outputs, the second without its header, make the whole
$PY - "$NEW" "$D/part1.csv" "$D/part2.csv" <<'PYEOF'
import csv, sys
rows = list(csv.reader(open(sys.argv[1], newline="", encoding="utf-8")))
for path, part in ((sys.argv[2], rows[1:173]), (sys.argv[3], rows[173:])):
    with open(path, "w", newline="", encoding="utf-8") as fp:
        w = csv.writer(fp, lineterminator="\r\n")
        w.writerow(rows[0])
        w.writerows(part)
PYEOF
run "$VECSIFT" predict "$D/m.json" "$D/part1.csv" -o "$D/q1.csv" -q; expect_status 0
run "$VECSIFT" predict "$D/m.json" "$D/part2.csv" -o "$D/q2.csv" --threads 2 -q; expect_status 0
{ cat "$D/q1.csv"; tail -n +2 "$D/q2.csv"; } >"$D/q.csv"
if cmp -s "$D/q.csv" "$D/p1.csv"; then ok; else bad "two parts differ from the whole"; fi

# --review-below, --top 3 and --explain: check the columns with Python's csv
run "$VECSIFT" predict "$D/m.json" "$NEW" --review-below 0.6 --top 3 --explain 2 -o "$D/r.csv" -q
expect_status 0
cat >"$D/check_routes.py" <<'PYEOF'
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1], newline="", encoding="utf-8")))
want = ["predicted", "confidence", "route", "label_2", "confidence_2", "label_3", "confidence_3", "evidence"]
assert list(rows[0].keys())[-8:] == want, list(rows[0].keys())
review = 0
for r in rows:
    c = float(r["confidence"])
    assert (r["route"] == "review") == (c < 0.6), r
    assert r["route"] in ("review", r["predicted"]), r
    assert c >= float(r["confidence_2"]) >= float(r["confidence_3"]), r
    assert len({r["predicted"], r["label_2"], r["label_3"]}) == 3, r
    assert r["evidence"].count("(") == 2 or not r["evidence"], r
    review += r["route"] == "review"
assert 0 < review < len(rows), review
print(f"{review} of {len(rows)} rows to review")
PYEOF
run $PY "$D/check_routes.py" "$D/r.csv"
expect_status 0; expect_out "rows to review"

# the model's stored cut-off is the default
run "$VECSIFT" train "$IN" "${TXT[@]}" --pool bow --review-below 0.9 -o "$D/cut9.json" -q
expect_status 0
run "$VECSIFT" predict "$D/cut9.json" "$NEW" -o "$D/r9.csv"
expect_status 0; expect_err "to review \(cut-off 0.900\)"

# --explain needs logreg
run "$VECSIFT" train "$IN" "${TXT[@]}" --pool bow --classifier svm-linear -o "$D/svm.json" -q
expect_status 0
run "$VECSIFT" predict "$D/svm.json" "$NEW" --explain 2 -o "$D/x.csv"
expect_status 2; expect_err "needs a logreg model"; expect_clean "$D/x.csv"

# SVM probabilities too are independent of --threads
run "$VECSIFT" predict "$D/svm.json" "$NEW" -o "$D/s1.csv" --threads 1 -q; expect_status 0
run "$VECSIFT" predict "$D/svm.json" "$NEW" -o "$D/s2.csv" --threads 2 -q; expect_status 0
if cmp -s "$D/s1.csv" "$D/s2.csv"; then ok; else bad "svm: --threads 1 and 2 differ"; fi

# a row without text, or without a single word that has a vector, goes to
# review whatever the cut-off (its features are the zero vector)
printf 'subject,body
,
zzzq,qqqz
parcel,my parcel is late
' >"$D/blank.csv"
run "$VECSIFT" predict "$D/m.json" "$D/blank.csv" --review-below 0 -o "$D/b.csv"
expect_status 0; expect_err "3 rows: 1 routed automatically, 2 to review"
run grep -c ',review' "$D/b.csv"; expect_out '^2$'

finish
