#!/usr/bin/env bash
# cli/split_predict.sh -- routing a large export in parts gives the same file
# as routing it whole (README.md, "Very large exports").  The demo inbox's
# incoming.csv (500 rows, some with quoted line breaks) is split at row
# boundaries with the README's awk program (header kept in every part),
# the parts are routed in parallel with xargs -P, the outputs joined
# dropping repeated headers, and the result compared byte for byte with a
# single run.  Expectation: predict's output for a row depends only on the
# row and the model (DESIGN.md); RFC 4180 section 2.6 allows line breaks in
# quoted fields, which is why the split counts quotes.
set -u
. "$(dirname "$0")/lib.sh"
INBOX="$SRCDIR/datasets/inbox"
cd "$T_DIR" || exit 1
cp "$INBOX/labelled.csv" "$INBOX/unlabelled.csv" "$INBOX/incoming.csv" .

# rows in incoming.csv (Python's csv module as the reference reader) vs lines
rows=$(python3 -c 'import csv,sys; print(sum(1 for _ in csv.reader(open(sys.argv[1], newline=""))) - 1)' incoming.csv)
lines=$(wc -l <incoming.csv)
if [ "$rows" -eq 500 ] && [ "$lines" -gt $((rows + 1)) ]; then ok; else bad "incoming.csv: $rows rows, $lines lines: expected 500 rows, some spanning lines"; fi

split_csv() { # split_csv ROWS FILE DIR: the README's awk program
  mkdir -p "$3"
  (cd "$3" && awk -v rows="$1" 'NR == 1 { header = $0; next } quotes % 2 == 0 { if (n++ % rows == 0) { close(out); out = sprintf("part-%04d.csv", ++p); print header > out } } { print > out; quotes += gsub(/"/, "\"") }' "../$2")
}
join_parts() { # join_parts DIR OUT
  { head -n 1 "$1/part-0001.csv"; for f in "$1"/part-*.csv; do tail -n +2 "$f"; done; } >"$2"
}

check_model() { # check_model MODEL EXTRA-OPTIONS...
  local model=$1; shift
  run "$VECSIFT" predict "$model" incoming.csv -o single.csv --threads 2 --quiet "$@"
  expect_status 0
  for size in 37 100 499; do
    rm -rf parts routed; mkdir routed
    split_csv "$size" incoming.csv parts
    local nparts=$(( (rows + size - 1) / size ))
    local got; got=$(ls parts | wc -l)
    if [ "$got" -eq "$nparts" ]; then ok; else bad "split by $size: $got parts, expected $nparts"; fi
    # every part parses as CSV with the header first and whole rows
    local prows; prows=$(python3 -c 'import csv,sys
h=None; n=0
for p in sys.argv[1:]:
    r=list(csv.reader(open(p, newline="")))
    assert h is None or r[0]==h, p
    h=r[0]; n+=len(r)-1
print(n)' parts/*.csv)
    if [ "$prows" -eq "$rows" ]; then ok; else bad "split by $size: parts hold $prows rows, expected $rows"; fi
    LAST_CMD="xargs -P 2 predict over $nparts parts"
    ls parts | xargs -P 2 -I {} "$VECSIFT" predict "$model" parts/{} -o routed/{} --threads 1 --quiet "$@"
    LAST_STATUS=$?
    expect_status 0
    join_parts routed joined.csv
    if cmp -s joined.csv single.csv; then ok; else bad "split by $size ($model $*): joined output differs from a single run"; fi
  done
}

# a bag-of-words model (no vectors) and a model on learned vectors
run "$VECSIFT" train labelled.csv --text-col subject --text-col body --label-col queue --pool bow -o bow.json --quiet
expect_status 0
check_model bow.json --top 2

run "$VECSIFT" vectors learn unlabelled.csv --text-col subject --text-col body -o small.vecs --dimensions 20 --epochs 1 --threads 1 --quiet
expect_status 0
run "$VECSIFT" train labelled.csv --text-col subject --text-col body --label-col queue --vectors small.vecs --review-below 0.8 -o vec.json --quiet
expect_status 0
check_model vec.json --top 3 --explain 2

# routing a part never overwrites it: an output named like the input is
# refused (exit 2, the input unchanged), as README.md's "File formats" says
cp parts/part-0001.csv keep.csv
run "$VECSIFT" predict vec.json parts/part-0001.csv -o parts/part-0001.csv
expect_status 2; expect_err 'also an input'
if cmp -s keep.csv parts/part-0001.csv; then ok; else bad "predict changed its input"; fi

# the comparison can fail: a joined output missing one part differs
rm -f routed/part-0002.csv
join_parts routed joined.csv
if cmp -s joined.csv single.csv; then bad "a join without part 2 still matched"; else ok; fi

finish
