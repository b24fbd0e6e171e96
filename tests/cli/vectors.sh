#!/usr/bin/env bash
# cli/vectors.sh -- 'vecsift vectors': pack, info, near, analogy, export, and
# every bad input the import and the packed-store reader must refuse.
# Conventions checked (DESIGN.md): bad input exits 2 with one line
# "vecsift: FILE:LINE: ..." and leaves no output file.  The vectors are
# invented (a fictional support inbox's words).
set -u
. "$(dirname "$0")/lib.sh"
V=$VECSIFT
D=$T_DIR

# An invented set: header line, CRLF on one line, tabs, a duplicate after
# normalisation ("Printer" -> "printer") and numbers in shortest form.
printf '6 3\nprinter 0.5 0.25 -1\nPrinter\t9 9 9\r\ntoner 0.4 0.3 -0.9\nrefund -1 0.5 0.125\ninvoice -0.75 0.5 0.25\nwifi 1e-05 -2 3.5\n' >"$D/in.txt"

run "$V" vectors pack "$D/in.txt" -o "$D/a.vecs"
expect_status 0; expect_file "$D/a.vecs"
expect_err 'packed 5 vectors of dimension 3'; expect_err '1 entries merged'

run "$V" vectors info "$D/a.vecs"
expect_status 0; expect_out '^vectors +5$'; expect_out '^dimensions +3$'
expect_out '^fingerprint +[0-9a-f]{16}$'
fp=$(sed -n 's/^fingerprint *//p' "$D/out")

run "$V" vectors info --verify "$D/a.vecs"
expect_status 0; expect_out "^fingerprint +$fp \\(verified\\)$"

# pack -> export gives the normalised input: header with the new count,
# tokens normalised, the later duplicate gone, numbers as written.
printf '5 3\nprinter 0.5 0.25 -1\ntoner 0.4 0.3 -0.9\nrefund -1 0.5 0.125\ninvoice -0.75 0.5 0.25\nwifi 1e-05 -2 3.5\n' >"$D/want.txt"
run "$V" vectors export "$D/a.vecs" -o "$D/back.txt"
expect_status 0
if cmp -s "$D/back.txt" "$D/want.txt"; then ok; else bad "export differs from the normalised input: $(diff "$D/want.txt" "$D/back.txt" | head -5)"; fi

# export -> pack gives the same fingerprint
run "$V" vectors pack "$D/back.txt" -o "$D/b.vecs" --quiet
expect_status 0; expect_err_lines 0
run "$V" vectors info "$D/b.vecs"
expect_out "^fingerprint +$fp$"

# a UTF-8 byte-order mark before the header line is skipped
printf '\xef\xbb\xbf' | cat - "$D/in.txt" >"$D/bom.txt"
run "$V" vectors pack "$D/bom.txt" -o "$D/bom.vecs" --quiet
expect_status 0
run "$V" vectors info "$D/bom.vecs"
expect_out "^fingerprint +$fp$"

# standard input and standard output
run_in "$D/in.txt" "$V" vectors pack - -o "$D/c.vecs" --threads 1
expect_status 0
run "$V" vectors info "$D/c.vecs"
expect_out "^fingerprint +$fp$"
run "$V" vectors export "$D/a.vecs" -o -
expect_status 0; expect_out '^toner 0.4 0.3 -0.9$'

# neighbours: toner is nearest to printer (cosine checked against numpy in
# tests/ext/vecset_vs_numpy.py; here the table's shape)
run "$V" vectors near "$D/a.vecs" Printer -k 2
expect_status 0; expect_out '^rank +word +cosine$'; expect_out '^ +1 +toner +0\.[0-9]{6}$'
run "$V" vectors near "$D/a.vecs" printer refund -k 10
expect_status 0
n=$(grep -c '^ *[0-9]' "$D/out"); if [ "$n" -eq 3 ]; then ok; else bad "near with 2 words listed $n rows, expected 3"; fi
run "$V" vectors analogy "$D/a.vecs" printer toner refund -k 1
expect_status 0; expect_out '^ +1 +(invoice|wifi) '
run "$V" vectors near "$D/a.vecs" printer stapler modem
expect_status 2; expect_err_lines 1; expect_err "a.vecs: words have no vector: 'stapler', 'modem'"
run "$V" vectors analogy "$D/a.vecs" printer toner
expect_status 2; expect_err_lines 1

# ---- bad text input: exit 2, FILE:LINE named, no output file ----
bad_pack() { # bad_pack CONTENT EXPECTED-MESSAGE-RE [STDERR-LINES]
  printf "$1" >"$D/bad.txt"
  run "$V" vectors pack "$D/bad.txt" -o "$D/bad.vecs"
  expect_status 2; expect_err_lines "${3:-1}"; expect_err "$2"; expect_no_file "$D/bad.vecs"
  ls "$D" | grep -q partial && bad "a temporary file was left behind" || ok
}
bad_pack 'a 1 2\nb 1 2 3\n' '^vecsift: .*bad\.txt:2: line has 3 numbers after the token, expected 2$'
bad_pack 'a 1 2\nb 1\n' 'bad\.txt:2: line has 1 numbers after the token, expected 2'
bad_pack 'a 1 2\nb 1 x\n' 'bad\.txt:2: number 2, .x., is not a number'
bad_pack 'a 1 2\nb 1 NaN\n' 'bad\.txt:2: number 2 is .NaN.; vector values must be finite'
bad_pack 'a inf 2\n' 'bad\.txt:1: number 1 is .inf.; vector values must be finite'
bad_pack 'a 1 2\nb 1 -3.3e38\nc 1 4e38\n' 'bad\.txt:3: number 2, .4e38., is too large for a 32-bit float'
bad_pack '3 2\na 1 2\nb 1 2\n' 'bad\.txt:1: header line says 3 vectors but the file has 2'
bad_pack '2 4\na 1 2\nb 1 2\n' 'bad\.txt:2: line has 2 numbers after the token, expected 4' 2
expect_err '^hint: the header line \(line 1\) says 4 numbers per line$'
bad_pack '' 'bad\.txt: empty file'
bad_pack '2 3\n' 'bad\.txt: empty file: a header line but no vectors'

run "$V" vectors pack "$D/in.txt" -o -
expect_status 2; expect_err 'cannot be written to standard output'
run "$V" vectors pack "$D/in.txt" -o "$D/in.txt"
expect_status 2; expect_err 'refusing to overwrite'
run "$V" vectors pack "$D/missing.txt" -o "$D/m.vecs"
expect_status 1; expect_no_file "$D/m.vecs"

# ---- bad packed stores ----
head -c 100 "$D/a.vecs" >"$D/short.vecs"
run "$V" vectors info "$D/short.vecs"
expect_status 2; expect_err_lines 1; expect_err 'short\.vecs: truncated packed store'
size=$(stat -c %s "$D/a.vecs")
head -c $((size - 1)) "$D/a.vecs" >"$D/cut.vecs"
run "$V" vectors near "$D/cut.vecs" printer
expect_status 2; expect_err 'cut\.vecs: truncated or damaged packed store'
run "$V" vectors info "$D/in.txt"
expect_status 2; expect_err 'in\.txt: not a packed vector store'
run "$V" vectors export "$D/in.txt" -o "$D/x.txt"
expect_status 2; expect_no_file "$D/x.txt"

# ---- coverage: a worked example, counted by hand ----
# row 1 "Printer jam" + "the printer needs toner": printer jam the printer needs toner
# row 2 "Refund please" + "refund the invoice, printer broken":
#       refund please refund the invoice printer broken
# 13 tokens, 7 with a vector (printer x3, toner, refund x2, invoice): 53.8%
# 9 distinct, 4 with a vector: 44.4%; missing: the (2), then jam, needs,
# please, broken (1 each, in order of first appearance)
printf 'id,subject,body\r\n1,Printer jam,the printer needs toner\r\n2,Refund please,"refund the invoice, printer broken"\r\n' >"$D/inbox.csv"
run "$V" vectors coverage "$D/a.vecs" "$D/inbox.csv" --text-col subject --text-col body -k 3
expect_status 0
expect_out '^tokens +13  with a vector +7  \(53\.8%\)$'
expect_out '^distinct tokens +9  with a vector +4  \(44\.4%\)$'
if [ "$(sed -n '/^ *count  token$/,$p' "$D/out" | tail -n +2 | awk '{print $1 ":" $2}' | tr '\n' ' ')" = "2:the 1:jam 1:needs " ]; then ok; else bad "missing-token list: $(cat "$D/out")"; fi
run "$V" vectors coverage "$D/a.vecs" "$D/inbox.csv" --text-col message
expect_status 2; expect_err "inbox\.csv:1: no column 'message'"
run "$V" vectors coverage "$D/short.vecs" "$D/inbox.csv" --text-col body
expect_status 2; expect_err 'short\.vecs: truncated'

# ---- usage ----
run "$V" vectors
expect_status 2
run "$V" vectors --help
expect_status 0; expect_out 'pack'
run "$V" vectors pak
expect_status 2; expect_err "did you mean 'pack'"
run "$V" help vectors pack
expect_status 0; expect_out '^usage: vecsift vectors pack'
run "$V" vectors near "$D/a.vecs" printer -k 0
expect_status 2

finish
