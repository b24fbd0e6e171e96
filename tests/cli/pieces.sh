#!/usr/bin/env bash
# cli/pieces.sh -- 'vecsift vectors learn --pieces' and what uses the pieces:
# the store keeps them (format 1.1), coverage counts words covered by
# pieces apart, evaluate and predict pool with composed vectors; option
# misuse exits 2.  Data: the invented demo inbox (datasets/inbox/).
set -u
. "$(dirname "$0")/lib.sh"
V=$VECSIFT
D=$T_DIR
INBOX=$SRCDIR/datasets/inbox
TEXT=(--text-col subject --text-col body)

run "$V" vectors learn "$INBOX/unlabelled.csv" "${TEXT[@]}" -o "$D/p.vecs" --pieces --dimensions 20 --epochs 2
expect_status 0; expect_file "$D/p.vecs"
expect_err 'piece rows \(3 to 6 characters, 2000000 buckets\) kept'
# format 1.1: minor version 1 at byte 12, a 192-byte header at byte 16
minor=$(od -An -tu4 -j12 -N4 "$D/p.vecs" | tr -d ' ')
hsize=$(od -An -tu4 -j16 -N4 "$D/p.vecs" | tr -d ' ')
if [ "$minor" = 1 ] && [ "$hsize" = 192 ]; then ok; else bad "version 1.$minor, header $hsize bytes"; fi

# one thread and a seed: the same file byte for byte
run "$V" vectors learn "$INBOX/unlabelled.csv" "${TEXT[@]}" -o "$D/p2.vecs" --pieces --dimensions 20 --epochs 2 -q
expect_status 0
if cmp -s "$D/p.vecs" "$D/p2.vecs"; then ok; else bad "two runs with --pieces differ"; fi

run "$V" vectors info --verify "$D/p.vecs"
expect_status 0; expect_out 'verified'

# misspelt words: covered by pieces, counted apart from whole words
printf 'subject,body,queue\n"refnud plz","my acount is lokced, the invoce is wrnog qqqqqqqq",billing\n' >"$D/typo.csv"
run "$V" vectors coverage "$D/p.vecs" "$D/typo.csv" --text-col subject --text-col body
expect_status 0
expect_out '^tokens +from pieces +[1-9][0-9]* '
expect_out 'without a vector \(whole or from pieces\)'
# a store without pieces prints no such line
run "$V" vectors learn "$INBOX/unlabelled.csv" "${TEXT[@]}" -o "$D/w.vecs" --dimensions 20 --epochs 2 -q
run "$V" vectors coverage "$D/w.vecs" "$D/typo.csv" --text-col subject --text-col body
expect_status 0
if grep -q 'from pieces' "$D/out"; then bad "coverage of a store without pieces mentions pieces"; else ok; fi

# train and predict: a misspelt row gets a confident label from its pieces
run "$V" train "$INBOX/labelled.csv" "${TEXT[@]}" --label-col queue --vectors "$D/p.vecs" --pool mean -o "$D/m.json" -q
expect_status 0
# --explain walks the pooled words, composed ones included (it once read
# a missing whole-word row)
run "$V" predict "$D/m.json" "$D/typo.csv" -o "$D/out.csv" -q --explain 3
expect_status 0; expect_file "$D/out.csv"
evidence=$(tail -1 "$D/out.csv" | sed 's/.*,//')  # the last column; it holds no comma
if echo "$evidence" | grep -Eq 'refnud|acount|lokced|invoce|wrnog'; then ok; else bad "no composed word in the evidence: $evidence"; fi

# misuse
run "$V" vectors learn "$INBOX/unlabelled.csv" "${TEXT[@]}" -o "$D/x.vecs" --piece-buckets 1000
expect_status 2; expect_err -- '--piece-buckets only applies with --pieces'; expect_no_file "$D/x.vecs"
for bad_len in 0-3 4-2 3-17 3 a-b 3-6x; do
  run "$V" vectors learn "$INBOX/unlabelled.csv" "${TEXT[@]}" -o "$D/x.vecs" --pieces --piece-lengths "$bad_len"
  expect_status 2; expect_err -- "--piece-lengths must be"; expect_no_file "$D/x.vecs"
done
run "$V" vectors learn "$INBOX/unlabelled.csv" "${TEXT[@]}" -o "$D/x.vecs" --pieces --piece-buckets 0
expect_status 2; expect_no_file "$D/x.vecs"
finish
