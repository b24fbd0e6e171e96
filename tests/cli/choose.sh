#!/usr/bin/env bash
# cli/choose.sh -- `train --choose` and the combined route (--pool bow+...)
# through the command line.  Checked: the whole table is recorded in the
# model and agrees with `compare` run on the same grid and folds; the choice
# follows the rule (the best, or a simpler set-up not significantly worse;
# src/cli/compare_grid.h); the model is the chosen set-up, predicts, and is
# byte-identical on 1 and 2 threads; misuse exits 2.
# Data: the invented demo inbox (datasets/inbox), vectors learned from its
# unlabelled part.
set -u
. "$(dirname "$0")/lib.sh"
PY=/usr/bin/python3
IN=datasets/inbox/labelled.csv
NEW=datasets/inbox/incoming.csv
D=$T_DIR
TXT=(--text-col subject --text-col body --label-col queue)
CV=(--folds 3 --repeats 2)
# a Python check read from the here-document that follows (lib.sh's run
# reads stdin from /dev/null)
py() {
  LAST_CMD="python3 check at line ${BASH_LINENO[0]}"
  "$PY" - "$@" >"$T_DIR/out" 2>"$T_DIR/err"
  LAST_STATUS=$?
}

run "$VECSIFT" vectors learn datasets/inbox/unlabelled.csv --text-col subject --text-col body \
  --dimensions 32 --epochs 3 --threads 1 -o "$D/v.vecs" -q
expect_status 0

# ---- the combined route ----
run "$VECSIFT" train "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --pool bow+tfidf -o "$D/comb.json" -q
expect_status 0
run "$VECSIFT" predict "$D/comb.json" "$NEW" -o "$D/comb.csv" --explain 2 -q
expect_status 0
py "$D/comb.json" "$D/comb.csv" "$NEW" <<'PYEOF'
import csv, json, sys
m = json.load(open(sys.argv[1]))
f = m["pipeline"]["features"]
assert f["pool"] == "bow+tfidf", f["pool"]
assert f["bag_of_words"]["pool"] == "bow" and f["pooled"]["pool"] == "tfidf"
assert f["dimensions"] == f["bag_of_words"]["dimensions"] + 32, f["dimensions"]
assert abs(f["bow_weight"] - 32 ** 0.5) < 1e-12, f["bow_weight"]  # sqrt(E), features.h
assert 0.5 < f["pooled_weight"] < 2, f["pooled_weight"]  # 1 when every standardised column varies
rows = list(csv.DictReader(open(sys.argv[2], newline="", encoding="utf-8")))
n = sum(1 for _ in csv.DictReader(open(sys.argv[3], newline="", encoding="utf-8")))
assert len(rows) == n, (len(rows), n)
assert all(r["predicted"] in m["labels"] for r in rows)
assert sum(1 for r in rows if r["evidence"]) > n // 2, "few rows have evidence"
print("ok")
PYEOF
expect_status 0
run "$VECSIFT" evaluate "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --pool bow+sif "${CV[@]}" -q
expect_status 0
expect_out "bag of words beside sif-pooled vectors"
run "$VECSIFT" evaluate "$IN" "${TXT[@]}" --pool bow+mean -q
expect_status 2
expect_err "pooling 'bow\+mean' needs word vectors"
run "$VECSIFT" train "$IN" "${TXT[@]}" --pool bow+max -o "$D/x.json"
expect_status 2
expect_err "option '--pool' takes one of mean, tfidf, sif, bow, bow\+mean, bow\+tfidf, bow\+sif, not 'bow\+max'"
expect_no_file "$D/x.json"

# ---- train --choose ----
run "$VECSIFT" train "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --choose "${CV[@]}" --threads 2 -o "$D/m.json"
expect_status 0
expect_out "^choosing a set-up: 14 set-ups x 6 folds"
expect_out "^chose "
expect_err "^trained "
run "$VECSIFT" train "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --choose "${CV[@]}" --threads 1 -o "$D/m1.json" -q
expect_status 0
if cmp -s "$D/m.json" "$D/m1.json"; then ok; else bad "--choose models differ between 1 and 2 threads"; fi
run "$VECSIFT" compare "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --pool mean,tfidf,sif,bow+mean,bow+tfidf,bow+sif \
  --classifier logreg,svm-rbf "${CV[@]}" --json "$D/cmp.json" -q
expect_status 0
py "$D/m.json" "$D/cmp.json" <<'PYEOF'
import json, sys
m = json.load(open(sys.argv[1]))
cmp = json.load(open(sys.argv[2]))
ch = m["choice"]
res = ch["results"]
# the whole table: every set-up compare ran, the same scores on the same folds
key = lambda r: (r["pool"], r["classifier"])
assert len(res) == 14 and sorted(map(key, res)) == sorted(map(key, cmp["results"])), [key(r) for r in res]
theirs = {key(r): r for r in cmp["results"]}
for r in res:
    t = theirs[key(r)]
    assert r["macro_f1"] == t["macro_f1"] and r["p_vs_best"] == t["p_vs_best"], (key(r), r["macro_f1"], t["macro_f1"])
    assert "seconds" not in r
# the rule: the best, or of the not-significantly-worse rows those of the
# lowest level, and of them the highest mean macro-F1
chosen = [r for r in res if r["chosen"]]
assert len(chosen) == 1, chosen
c = chosen[0]
assert ch["chosen"] == c["rank"]
ok = [r for r in res if r["best"] or r["not_significantly_worse"]]
assert c in ok, c
low = min(r["level"] for r in ok)
assert c["level"] == low, (c["level"], low)
assert c["macro_f1"]["mean"] == max(r["macro_f1"]["mean"] for r in ok if r["level"] == low)
best = [r for r in res if r["best"]][0]
assert c is best or c["level"] < best["level"], (c, best)
assert all(r["level"] == (1 if r["classifier"] == "svm-rbf" else 0) for r in res)
# the model is the chosen set-up
p = m["pipeline"]
assert p["features"]["pool"] == c["pool"] and p["classifier"]["kind"] == c["classifier"], (p["features"]["pool"], c)
assert (m["vectors"] is None) == (c["pool"] == "bow")
print("chose", c["pool"], c["classifier"], "rank", c["rank"], "of", len(res))
# the second level, C: five values around the route's default on the same
# folds, so the default's score is the first level's to the last bit; the
# highest mean kept (a tie: the smaller C), and the model fitted with it
cr = ch["C_results"]
assert len(cr) == 5 and [r["C"] for r in cr] == sorted(r["C"] for r in cr), cr
mid = cr[2]
assert mid["macro_f1"] == c["macro_f1"]["mean"], (mid, c["macro_f1"])
top = max(r["macro_f1"] for r in cr)
want = [r for r in cr if r["macro_f1"] == top][0]
assert [r for r in cr if r["chosen"]] == [want], cr
assert ch["C"] == want["C"] == p["classifier"]["C"], (ch["C"], want, p["classifier"]["C"])
PYEOF
expect_status 0
# --group-col: rows of one customer in one fold; a missing column is bad input
run "$VECSIFT" train "$IN" "${TXT[@]}" --choose --group-col customer "${CV[@]}" --threads 1 -o "$D/g.json" -q
expect_status 0; expect_file "$D/g.json"
run "$VECSIFT" train "$IN" "${TXT[@]}" --choose --group-col nosuch "${CV[@]}" -o "$D/g2.json" -q
expect_status 2; expect_err "nosuch"; expect_no_file "$D/g2.json"
# a label all in one group cannot be left out of a fold's training rows:
# the choice warns and cross-validates rows
{
  echo "text,label,g"
  for i in 1 2 3 4 5 6; do echo "apple pear fig $i,fruit,orchard"; echo "hammer saw nail $i,tools,shed$((i % 3))"; done
} >"$D/lone.csv"
run "$VECSIFT" train "$D/lone.csv" --choose --group-col g --folds 2 --repeats 1 -o "$D/g3.json"
expect_status 0; expect_err "label 'fruit' lies in one value of 'g'"; expect_file "$D/g3.json"
run "$VECSIFT" predict "$D/m.json" "$NEW" -o "$D/p.csv" -q
expect_status 0
expect_file "$D/p.csv"
run "$VECSIFT" train "$IN" "${TXT[@]}" --choose "${CV[@]}" -o "$D/b.json" -q
expect_status 0
run "$PY" -c "
import json, sys
m = json.load(open('$D/b.json'))
res = m['choice']['results']
assert sorted((r['pool'], r['classifier']) for r in res) == [('bow', 'logreg'), ('bow', 'svm-rbf')], res
assert m['vectors'] is None
"
expect_status 0
run "$VECSIFT" predict "$D/b.json" "$NEW" -o "$D/b.csv" -q
expect_status 0

# a label with 3 rows: the choice uses 3 folds unless --folds says otherwise
py "$IN" "$D/small.csv" <<'PYEOF'
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1], newline="", encoding="utf-8")))
keep, seen = [], 0
for r in rows:
    if r["queue"] == "ideas":
        seen += 1
        if seen > 3:
            continue
    keep.append(r)
with open(sys.argv[2], "w", newline="", encoding="utf-8") as fp:
    w = csv.DictWriter(fp, fieldnames=list(rows[0].keys()))
    w.writeheader()
    w.writerows(keep)
PYEOF
expect_status 0
run "$VECSIFT" train "$D/small.csv" "${TXT[@]}" --choose --repeats 1 -o "$D/s.json"
expect_status 0
expect_err "note: label 'ideas' has 3 rows, so the choice cross-validates with 3 folds"
expect_out "3 folds x 1 repeats"
run "$VECSIFT" train "$D/small.csv" "${TXT[@]}" --choose --folds 4 --repeats 1 -o "$D/s4.json"
expect_status 2
expect_err "label 'ideas' has 3 rows, fewer than the 4 folds"
expect_no_file "$D/s4.json"

# ---- misuse ----
run "$VECSIFT" train "$IN" "${TXT[@]}" --vectors "$D/v.vecs" --choose --pool tfidf -o "$D/y.json"
expect_status 2
expect_err "--choose picks the pooling and classifier: leave out --pool"
expect_no_file "$D/y.json"
run "$VECSIFT" train "$IN" "${TXT[@]}" --choose --classifier svm-rbf -o "$D/y.json"
expect_status 2
expect_err "leave out --classifier"
run "$VECSIFT" train "$IN" "${TXT[@]}" --choose --folds 1 -o "$D/y.json"
expect_status 2
expect_no_file "$D/y.json"
finish
