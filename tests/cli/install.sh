#!/usr/bin/env bash
# cli/install.sh -- `meson install` into a staging directory gives a working
# tool: the binary, its manual page and the invented demo inbox (the files
# meson.build installs), and the installed binary runs the whole demo from
# the installed data, outside the source tree.  It also gives a working
# library: the public header, the shared and static libraries and a
# pkg-config file, with which examples/route_text.c builds (both ways) and
# routes the demo's incoming tickets exactly as the installed `vecsift
# predict` did.  Expectations are the project's own (common practice: an
# installed program must not need its source tree; pkg-config's
# PKG_CONFIG_SYSROOT_DIR for a staged install, pkg-config(1)).
set -u
. "$(dirname "$0")/lib.sh"
: "${BUILDDIR:?set BUILDDIR to the meson build directory}"
STAGE="$T_DIR/stage"

run meson install -C "$BUILDDIR" --destdir "$STAGE" --no-rebuild
expect_status 0
bin=$(find "$STAGE" -path '*/bin/vecsift' -type f | head -1)
man=$(find "$STAGE" -path '*/man1/vecsift.1' -type f | head -1)
inbox=$(find "$STAGE" -path '*/vecsift/inbox' -type d | head -1)
if [ -n "$bin" ] && [ -x "$bin" ]; then ok; else bad "no executable bin/vecsift under $STAGE"; fi
if [ -n "$man" ] && head -c 2000 "$man" | grep -q '^\.TH VECSIFT 1'; then ok; else bad "no manual page man1/vecsift.1 with a .TH line"; fi
if [ -n "$inbox" ]; then ok; else bad "no share/vecsift/inbox under $STAGE"; fi
# every demo file installed, byte for byte
for f in "$SRCDIR"/datasets/inbox/*; do
  if cmp -s "$f" "$inbox/$(basename "$f")"; then ok; else bad "installed $(basename "$f") differs from datasets/inbox"; fi
done

# The installed binary, run from an empty directory away from the sources,
# with the installed data.
mkdir -p "$T_DIR/elsewhere"
cd "$T_DIR/elsewhere" || exit 1
run "$bin" help
expect_status 0
expect_out 'evaluate'
run "$bin" demo --data "$inbox" --threads 1
expect_status 0
n=$(find "$T_DIR/elsewhere" -type f -name '*.csv' | wc -l)
if [ "$n" -ge 1 ]; then ok; else bad "the installed demo wrote no CSV file"; fi
n=$(find "$T_DIR/elsewhere" -type f -name '*.json' | wc -l)
if [ "$n" -ge 1 ]; then ok; else bad "the installed demo wrote no model file"; fi

# ---- the library ----
pc=$(find "$STAGE" -name vecsift.pc -type f | head -1)
hdr=$(find "$STAGE" -path '*/include/vecsift/vecsift.h' -type f | head -1)
so=$(find "$STAGE" -name 'libvecsift.so.0' | head -1)
ar=$(find "$STAGE" -name 'libvecsift.a' -type f | head -1)
if [ -n "$pc" ]; then ok; else bad "no vecsift.pc under $STAGE"; fi
if [ -n "$hdr" ]; then ok; else bad "no include/vecsift/vecsift.h under $STAGE"; fi
if [ -n "$so" ] && [ -n "$ar" ]; then ok; else bad "no libvecsift.so.0 and libvecsift.a under $STAGE"; fi
# only the public header; the internal modules' headers stay in the source tree
n=$(find "$(dirname "$hdr")" -name '*.h' | wc -l)
if [ "$n" -eq 1 ]; then ok; else bad "$n headers installed under include/vecsift, expected only vecsift.h"; fi
# The shared library exports the public names and nothing else: not
# svmfit.c's rand() (DEVELOPERS.md), nor any internal module.
other=$(nm -D --defined-only "$so" | awk '$2 ~ /^[TDBRW]$/ { print $3 }' | grep -v '^vecsift_' | head -5)
if [ -z "$other" ]; then ok; else bad "libvecsift.so exports more than vecsift_*: $other"; fi
if nm -D --defined-only "$so" | grep -q ' T vecsift_route'; then ok; else bad "libvecsift.so does not export vecsift_route"; fi

export PKG_CONFIG_PATH
export PKG_CONFIG_SYSROOT_DIR=$STAGE
PKG_CONFIG_PATH=$(dirname "$pc")
CC=${CC:-cc}
# A sanitizer build (tools/run-hardening) installs an instrumented library:
# the example is built with the same sanitizers.
san=$(meson introspect --buildoptions "$BUILDDIR" | /usr/bin/python3 -c '
import json, sys
v = [o["value"] for o in json.load(sys.stdin) if o["name"] == "b_sanitize"]
print("" if not v or v[0] == "none" else "-fsanitize=" + v[0])')
libdir=$(dirname "$so")
run pkg-config --modversion vecsift
expect_status 0
want=$("$bin" --version 2>&1 | grep -Eo '[0-9]+\.[0-9]+\.[0-9]+' | head -1)
if [ "$(cat "$T_DIR/out")" = "$want" ]; then ok; else bad "pkg-config says $(cat "$T_DIR/out"), vecsift --version says $want"; fi
# shared: exactly the command a user would type
# shellcheck disable=SC2046
run "$CC" $san -Wall -Wextra -Werror -o "$T_DIR/route_shared" "$SRCDIR/examples/route_text.c" \
  $(pkg-config --cflags --libs vecsift)
expect_status 0
# static: the archive, with the libraries it needs (pkg-config --static)
# shellcheck disable=SC2046
run "$CC" $san -Wall -Wextra -Werror -o "$T_DIR/route_static" "$SRCDIR/examples/route_text.c" \
  $(pkg-config --cflags vecsift) "$ar" $(pkg-config --static --libs vecsift | sed 's/-lvecsift//')
expect_status 0
if ldd "$T_DIR/route_static" | grep -q libvecsift; then bad "the static build loads libvecsift.so"; else ok; fi

# The demo's model and its routed tickets: the example must route every
# ticket as predict did (route, label, confidence, top words).
model=$(find "$T_DIR/elsewhere" -name inbox.json -type f | head -1)
routed=$(find "$T_DIR/elsewhere" -name incoming-routed.csv -type f | head -1)
/usr/bin/python3 - "$routed" "$T_DIR/texts.txt" "$T_DIR/want.tsv" <<'PYEOF'
import csv, sys
# The model joins subject and body with one space; a line break is a
# separator to the tokeniser like a space, so one text a line is the same text.
with open(sys.argv[1], newline="", encoding="utf-8") as f, \
     open(sys.argv[2], "w", encoding="utf-8", newline="") as t, \
     open(sys.argv[3], "w", encoding="utf-8", newline="") as w:
    for row in csv.DictReader(f):
        text = row["subject"] + " " + row["body"]
        t.write(text.replace("\r", " ").replace("\n", " ") + "\n")
        w.write("\t".join([row["route"], row["predicted"], row["confidence"], row["evidence"]]) + "\n")
PYEOF
for how in shared static; do
  LD_LIBRARY_PATH=$libdir run_in "$T_DIR/texts.txt" "$T_DIR/route_$how" "$model" "" 3
  expect_status 0
  expect_err "library $want \(header $want\)"
  if cmp -s "$T_DIR/out" "$T_DIR/want.tsv"; then ok; else
    bad "$how: the example routes differently from predict: $(diff "$T_DIR/out" "$T_DIR/want.tsv" | head -5)"; fi
done
# a damaged model is an error with the file's name, not a crash
printf '{"format": "vecsift-model"' >"$T_DIR/broken.json"
LD_LIBRARY_PATH=$libdir run_in "$T_DIR/texts.txt" "$T_DIR/route_shared" "$T_DIR/broken.json"
expect_status 2
expect_err "broken.json"
# text that is not UTF-8 is named, not routed
printf 'my parcel\ncaf\xe9 order\n' >"$T_DIR/latin1.txt"
LD_LIBRARY_PATH=$libdir run_in "$T_DIR/latin1.txt" "$T_DIR/route_shared" "$model"
expect_status 2
expect_err "stdin:2: invalid UTF-8 at byte 3"
finish
