#!/usr/bin/env bash
# cli/readme_commands.sh -- every command of README.md's walkthrough runs as
# shown.  tools/readme-samples --check extracts each '<!-- run: NAME -->'
# block from README.md, runs them in order in a fresh temporary directory
# (demo data linked in as datasets/, this build's vecsift first on PATH),
# stops at the first command whose exit status is not 0 and names it, and
# checks that the command reference equals 'vecsift help' output.  A README
# with a failing command and one with a stale reference must be refused (so
# the check can fail).  Expectations are the task's (common practice: a
# README's examples should run).
set -u
. "$(dirname "$0")/lib.sh"
SAMPLES="$SRCDIR/tools/readme-samples"

run python3 "$SAMPLES" --vecsift "$VECSIFT" --readme "$SRCDIR/README.md" --check
expect_status 0
expect_out 'run blocks passed; reference matches vecsift help'
# the walkthrough has its steps: set-up, learn, evaluate, train, predict, split...
n=$(grep -c '^<!-- run: ' "$SRCDIR/README.md")
if [ "$n" -ge 10 ]; then ok; else bad "README.md has only $n run blocks"; fi
for step in learn evaluate train predict split parallel join; do
  if grep -q "^<!-- run: $step -->" "$SRCDIR/README.md"; then ok; else bad "no run block '$step'"; fi
done

# A README whose command fails is refused, and the command is named.
sed 's/^vecsift train labelled.csv /vecsift train labelled.csv --no-such-option /' \
  "$SRCDIR/README.md" >"$T_DIR/failing.md"
run python3 "$SAMPLES" --vecsift "$VECSIFT" --readme "$T_DIR/failing.md" --check
expect_status 1
expect_err 'command failed \(exit status 2\): vecsift train labelled.csv --no-such-option'
expect_err "unknown option '--no-such-option'"

# A README whose reference lacks a line of the help is refused.
grep -v -- '--target-precision <p>' "$SRCDIR/README.md" >"$T_DIR/stale.md"
run python3 "$SAMPLES" --vecsift "$VECSIFT" --readme "$T_DIR/stale.md" --check
expect_status 1
expect_err 'reference .* differs from'

finish
