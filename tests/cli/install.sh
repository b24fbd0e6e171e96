#!/usr/bin/env bash
# cli/install.sh -- `meson install` into a staging directory gives a working
# tool: the binary, its manual page and the invented demo inbox (the files
# meson.build installs), and the installed binary runs the whole demo from
# the installed data, outside the source tree.  Expectations are the
# project's own (common practice: an installed program must not need its
# source tree).
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
finish
