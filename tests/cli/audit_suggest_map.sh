#!/usr/bin/env bash
# cli/audit_suggest_map.sh -- audit, suggest, map and vectors map from the
# command line: exit statuses and one-line errors (DESIGN.md, Conventions),
# outputs that appear whole or not at all (ofile), and CSV cells that a
# spreadsheet could run as formulas written with a leading apostrophe (OWASP,
# "CSV Injection"; csv_put with guard).
set -u
. "$(dirname "$0")/lib.sh"
D=$T_DIR
# lib.sh's bad() names the caller two frames up: call it through one more.
bad_here() { bad "$@"; }

# Fixture (invented): two labels whose names begin with + and -, so every
# label cell written out must be guarded.  Texts of '+fruit' use fruit words,
# '-tools' tool words; row 7 is a fruit text labelled '-tools' (planted).
fruit=(apple banana cherry grape lemon mango melon peach pear plum)
tools=(hammer wrench chisel pliers saw drill spanner rasp clamp vice)
{
  echo "id,text,label"
  for i in $(seq 0 39); do
    a=${fruit[$((i % 10))]} b=${fruit[$(((i * 3 + 1) % 10))]} c=${fruit[$(((i * 7 + 2) % 10))]}
    x=${tools[$((i % 10))]} y=${tools[$(((i * 3 + 1) % 10))]} z=${tools[$(((i * 7 + 2) % 10))]}
    if [ "$i" -eq 3 ]; then
      echo "f$i,=apple banana cherry fresh ripe,-tools"
    else
      echo "f$i,$a $b $c fresh ripe,+fruit"
    fi
    echo "t$i,$x $y $z steel grip,-tools"
  done
} >"$D/data.csv"

# ---- audit ----
run "$VECSIFT" audit --help
expect_status 0; expect_out 'usage: vecsift audit'

run "$VECSIFT" audit
expect_status 2; expect_err_lines 1

run "$VECSIFT" audit "$D/data.csv" --pool bow --repeats 0
expect_status 2; expect_err "repeats"

run "$VECSIFT" audit "$D/data.csv" --pool bow -o "$D/sus.csv"
expect_status 0; expect_file "$D/sus.csv"; expect_err 'have a label that looks wrong'
# the planted row (data row 7) is the first suspect; both label cells guarded
if sed -n 2p "$D/sus.csv" | grep -q "^7,'-tools,'+fruit,"; then ok; else bad_here "first suspect: $(sed -n 2p "$D/sus.csv")"; fi
# its excerpt begins with '=': guarded too
if sed -n 2p "$D/sus.csv" | grep -q ",'=apple banana cherry fresh ripe,"; then ok; else bad_here "excerpt not guarded: $(sed -n 2p "$D/sus.csv")"; fi
if head -1 "$D/sus.csv" | grep -q '^row,given,suggested,score,excerpt,p_given,p_suggested'; then ok; else bad_here "header"; fi

# failures leave no output
run "$VECSIFT" audit "$D/data.csv" --pool tfidf -o "$D/none.csv"
expect_status 2; expect_err_lines 2; expect_err 'needs word vectors'; expect_no_file "$D/none.csv"
printf 'text,label\nok,a\n"open,b\n' >"$D/bad.csv"
run "$VECSIFT" audit "$D/bad.csv" --pool bow -o "$D/none.csv"
expect_status 2; expect_err 'bad.csv:3'; expect_no_file "$D/none.csv"
run "$VECSIFT" audit "$D/data.csv" --pool bow -o "$D/no/such/dir/out.csv"
expect_status 1; expect_no_file "$D/no/such/dir/out.csv"
cp "$D/data.csv" "$D/keep.csv"
run "$VECSIFT" audit "$D/keep.csv" --pool bow -o "$D/keep.csv"
expect_status 2; if cmp -s "$D/data.csv" "$D/keep.csv"; then ok; else bad_here "input overwritten"; fi

# --rank and --probabilities
run "$VECSIFT" audit "$D/data.csv" --pool bow --rank loudest
expect_status 2; expect_err_lines 1; expect_err "'--rank' takes margin or confidence"
run "$VECSIFT" audit "$D/data.csv" --pool bow --probabilities -
expect_status 2; expect_err_lines 1; expect_err 'cannot both go to stdout'
run "$VECSIFT" audit "$D/data.csv" --pool bow --probabilities "$D/data.csv" -o "$D/none.csv"
expect_status 2; expect_no_file "$D/none.csv"; if cmp -s "$D/data.csv" "$D/keep.csv"; then ok; else bad_here "input overwritten"; fi
run "$VECSIFT" audit "$D/data.csv" --pool tfidf --probabilities "$D/p.csv" -o "$D/none.csv"
expect_status 2; expect_no_file "$D/p.csv"; expect_no_file "$D/none.csv"
run "$VECSIFT" audit "$D/data.csv" --pool bow --rank confidence --repeats 2 --probabilities "$D/p.csv" -o "$D/sus2.csv"
expect_status 0; expect_file "$D/sus2.csv"; expect_err '5 folds x 2 repeats'
# one line per data row plus the header; label cells guarded
if [ "$(wc -l <"$D/p.csv")" -eq 81 ] && head -1 "$D/p.csv" | grep -q '^row,label,prob:+fruit,prob:-tools' && sed -n 8p "$D/p.csv" | grep -q "^7,'-tools,"; then ok; else bad_here "probabilities: $(head -2 "$D/p.csv")"; fi
# row 7 (the planted fruit text labelled -tools): score = 1 - p(given) by confidence
if awk -F, 'NR == 8 { p = $4 } END { exit !(p < 0.5) }' "$D/p.csv" \
   && sed -n 2p "$D/sus2.csv" | grep -q "^7,'-tools,'+fruit,"; then ok; else bad_here "confidence: $(sed -n 2p "$D/sus2.csv")"; fi

# ---- suggest ----
# --C 1: the margins this pool was written for (bow defaults to a weaker penalty)
run "$VECSIFT" train "$D/data.csv" --pool bow --C 1 -o "$D/model.json"
expect_status 0
{
  echo "id,text,note"
  echo "p1,apple banana pear,=cmd|' /C calc'!A0"
  echo "p2,hammer saw drill,x"
  echo "p3,apple hammer,x"
  echo "p4,apple hammer,y"
  echo "p5,zzz qqq,x"
  echo "p6,grape wrench,x"
} >"$D/pool.csv"
run "$VECSIFT" suggest "$D/model.json" "$D/pool.csv" -n 3 -o "$D/pick.csv"
expect_status 0; expect_file "$D/pick.csv"; expect_err 'skipped 1 near-duplicates'; expect_err '1 rows with no known word'
if head -1 "$D/pick.csv" | grep -q '^id,text,note,label,why,uncertainty,best_guess'; then ok; else bad_here "header: $(head -1 "$D/pick.csv")"; fi
# p3 and p4 have the same text: one of them only; p5 has no known word: never
if [ "$(grep -c '^p[34],' "$D/pick.csv")" -eq 1 ] && ! grep -q '^p5,' "$D/pick.csv"; then ok; else bad_here "picks: $(cut -c1-40 "$D/pick.csv")"; fi
# the label cell is empty; why names the two labels; best_guess guarded
if grep -Eq "^p[34],apple hammer,[xy],,margin [0-9.]+ between [-+](fruit|tools) \(0\.[0-9]+\) and [-+](fruit|tools) \(0\.[0-9]+\),0\.[0-9]+,'[-+]" "$D/pick.csv"
then ok; else bad_here "why: $(cat "$D/pick.csv")"; fi
run "$VECSIFT" suggest "$D/model.json" "$D/pool.csv" -n 6 --by entropy -o "$D/pick2.csv"
expect_status 0; expect_err 'only 4 to offer'
if grep -q "^p1,apple banana pear,'=cmd" "$D/pick2.csv"; then ok; else bad_here "formula cell not guarded"; fi
if grep -q 'entropy [0-9.]* of 1' "$D/pick2.csv"; then ok; else bad_here "entropy why"; fi

run "$VECSIFT" suggest "$D/model.json" "$D/pool.csv" -n 0 -o "$D/none.csv"
expect_status 2; expect_err_lines 1; expect_no_file "$D/none.csv"
run "$VECSIFT" suggest "$D/model.json" "$D/pool.csv" -o "$D/none.csv"
expect_status 2; expect_err '-n N'; expect_no_file "$D/none.csv"
run "$VECSIFT" suggest "$D/model.json" "$D/pool.csv" -n 2 --by guess
expect_status 2; expect_err "margin or entropy"
head -c 300 "$D/model.json" >"$D/broken.json"
run "$VECSIFT" suggest "$D/broken.json" "$D/pool.csv" -n 2 -o "$D/none.csv"
expect_status 2; expect_err 'broken.json'; expect_no_file "$D/none.csv"
printf 'id,body\np1,apple\n' >"$D/nocol.csv"
run "$VECSIFT" suggest "$D/model.json" "$D/nocol.csv" -n 2 -o "$D/none.csv"
expect_status 2; expect_err "nocol.csv:1: no column 'text'"; expect_no_file "$D/none.csv"
run "$VECSIFT" suggest "$D/model.json" "$D/data.csv" -n 2 -o "$D/none.csv"
expect_status 2; expect_err "input already has a column 'label'"; expect_no_file "$D/none.csv"
run "$VECSIFT" suggest "$D/model.json" "$D/pool.csv" -n 2 -o "$D/pool.csv"
expect_status 2; expect_file "$D/pool.csv"

# ---- map ----
run "$VECSIFT" map "$D/data.csv" --pool bow -o "$D/map.svg" --coords "$D/xy.csv" --perplexity 10
expect_status 0; expect_file "$D/map.svg"; expect_file "$D/xy.csv"
if grep -q '<title>' "$D/map.svg" && grep -q 'far apart' "$D/map.svg" && grep -q '+fruit (39)' "$D/map.svg"; then ok
else bad_here "map content"; fi
if [ "$(wc -l <"$D/xy.csv")" -eq 81 ] && grep -q "^7,'-tools," "$D/xy.csv"; then ok; else bad_here "coords: $(head -3 "$D/xy.csv")"; fi
run "$VECSIFT" map "$D/data.csv" --pool bow -o "$D/map2.svg" --perplexity 10
if cmp -s "$D/map.svg" "$D/map2.svg"; then ok; else bad_here "same seed, different map"; fi
head -4 "$D/data.csv" >"$D/tiny.csv"
run "$VECSIFT" map "$D/tiny.csv" --pool bow -o "$D/none.svg"
expect_status 2; expect_err 'at least 4 rows'; expect_no_file "$D/none.svg"
run "$VECSIFT" map "$D/data.csv" --pool bow --label-col queue -o "$D/none.svg" --coords "$D/none.csv"
expect_status 2; expect_err "no column 'queue'"; expect_no_file "$D/none.svg"; expect_no_file "$D/none.csv"
run "$VECSIFT" map "$D/data.csv" --pool bow -o "$D/none.svg" --coords "$D/no/dir/xy.csv"
expect_status 1; expect_no_file "$D/none.svg"
run "$VECSIFT" map "$D/data.csv" --pool bow -o "$D/same.svg" --coords "$D/same.svg"
expect_status 2; expect_no_file "$D/same.svg"
run "$VECSIFT" map "$D/data.csv" --pool bow --iterations 10
expect_status 2; expect_err_lines 1

# ---- vectors map ----
{
  echo "apple 1 0.1 0"; echo "pear 0.9 0.2 0"; echo "plum 1 0 0.1"; echo "hammer 0 1 0.1"
  echo "saw 0.1 0.9 0"; echo "drill 0 1 0"; echo "nothing 0 0 0"
} >"$D/v.txt"
run "$VECSIFT" vectors pack "$D/v.txt" -o "$D/v.vecs"
expect_status 0
run "$VECSIFT" vectors map "$D/v.vecs" apple pear plum hammer saw drill -o "$D/w.svg" --coords "$D/w.csv"
expect_status 0; expect_file "$D/w.svg"
if grep -q '>hammer</text>' "$D/w.svg" && [ "$(wc -l <"$D/w.csv")" -eq 7 ]; then ok; else bad_here "word map"; fi
run "$VECSIFT" vectors map "$D/v.vecs" apple pear -o "$D/none.svg"
expect_status 2; expect_err 'at least 4 distinct words'; expect_no_file "$D/none.svg"
run "$VECSIFT" vectors map "$D/v.vecs" apple pear plum banana -o "$D/none.svg"
expect_status 2; expect_err "'banana'"; expect_no_file "$D/none.svg"
run "$VECSIFT" vectors map "$D/v.vecs" apple pear plum nothing -o "$D/none.svg"
expect_status 2; expect_err "zero vector"; expect_no_file "$D/none.svg"
run "$VECSIFT" vectors map "$D/v.vecs" apple pear plum hammer saw -k 2 -o "$D/w2.svg" --coords "$D/w2.csv"
expect_status 0; if [ "$(wc -l <"$D/w2.csv")" -eq 7 ]; then ok; else bad_here "neighbours: $(cat "$D/w2.csv")"; fi

finish
