#!/usr/bin/env bash
# run.sh -- the catalogue of bad input: every tests/bad-input/*.case file is
# one case, run against $VECSIFT in a scratch directory of its own.
# What is expected comes from the project's conventions (DESIGN.md,
# "Conventions"; RULES): exit 2 for bad input or usage, 1 for an
# input/output failure, a one-line "vecsift: FILE[:LINE]: ..." message, no
# half-written output, no input overwritten.  Where a message names a line,
# the line number was counted by hand from the case's input.
#
# Case file format, one directive a line ('#' lines are comments):
#   setup  SHELL...   run in the scratch directory before the command
#                     ($SRCDIR is the source tree); may repeat
#   cmd    ARGS...    vecsift's arguments (shell words, evaluated in the
#                     scratch directory)
#   limit  KB         run the command under 'ulimit -f KB' (a full disk)
#   stdin  FILE       feed FILE to the command (default /dev/null)
#   stdout WHERE      'full': standard output is /dev/full (every write
#                     fails with ENOSPC); 'closed-pipe': a pipe whose reading
#                     end was closed before the command started (EPIPE);
#                     default: a file the runner keeps
#   lines  N          stderr must have exactly N lines (one message, no echo
#                     of it from a second place)
#   exit   N          the expected exit status
#   message REGEX     an extended regex the stderr must match
#   absent FILE       a file that must not exist afterwards (an output)
#   created FILE      an output the command must write (the few cases where
#                     a bad entry is skipped and counted, not an error)
#
# Every case also checks: no crash (status below 128 and no sanitizer
# report), every file present after setup is unchanged afterwards (sha256),
# and no other file (but a "created" one) appeared in the scratch directory (no output, no
# temporary left behind).  Prints a line per failed check and ends with
# "N passed, N failed" (one count per case).
set -uo pipefail
: "${VECSIFT:?set VECSIFT to the binary}"
SRCDIR=${SRCDIR:-$(cd "$(dirname "$0")/../.." && pwd)}
export SRCDIR
HERE="$SRCDIR/tests/bad-input"
pass=0 fail=0
top=$(mktemp -d)
trap 'chmod -R u+w "$top" 2>/dev/null; rm -rf "$top"' EXIT

# Runs argv with its stdout on a pipe whose reading end is already closed,
# and exits with the child's status.
CLOSED_PIPE='import os, subprocess, sys
r, w = os.pipe()
os.close(r)
rc = subprocess.call(sys.argv[1:], stdout=w)
sys.exit(rc if rc >= 0 else 128 - rc)'
export CLOSED_PIPE

inventory() { # inventory DIR: "sha256  path" of every file, sorted
  (cd "$1" && find . -type f -print0 | sort -z | xargs -0 -r sha256sum)
}

cases=("$HERE"/*.case)
[ $# -gt 0 ] && cases=("$@")
for c in "${cases[@]}"; do
  name=$(basename "$c" .case)
  w="$top/$name"
  mkdir -p "$w"
  cmd="" want="" re="" limit="" stdin=/dev/null stdout="" lines="" absent=() created=() setup_ok=1
  while IFS= read -r line || [ -n "$line" ]; do
    case "$line" in
      ''|'#'*) continue ;;
    esac
    key=${line%% *}
    val=${line#* }
    case "$key" in
      setup) (cd "$w" && eval "$val") || { echo "FAIL $name: setup failed: $val"; setup_ok=0; } ;;
      cmd) cmd=$val ;;
      limit) limit=$val ;;
      stdin) stdin=$val ;;
      stdout) stdout=$val ;;
      lines) lines=$val ;;
      exit) want=$val ;;
      message) re=$val ;;
      absent) absent+=("$val") ;;
      created) created+=("$val") ;;
      *) echo "FAIL $name: unknown directive '$key'"; setup_ok=0 ;;
    esac
  done <"$c"
  if [ "$setup_ok" -ne 1 ] || [ -z "$cmd" ] || [ -z "$want" ] || [ -z "$re" ]; then
    echo "FAIL $name: incomplete case (needs cmd, exit, message)"
    fail=$((fail + 1)); continue
  fi
  before=$(inventory "$w")
  (
    cd "$w" || exit 99
    [ -n "$limit" ] && ulimit -f "$limit"
    case "$stdout" in
      '') eval "exec \"\$VECSIFT\" $cmd" <"$stdin" >"$top/$name.out" 2>"$top/$name.err" ;;
      full) eval "exec \"\$VECSIFT\" $cmd" <"$stdin" >/dev/full 2>"$top/$name.err" ;;
      closed-pipe) # the reader is gone before the first write: no race
        eval "exec /usr/bin/python3 -c \"\$CLOSED_PIPE\" \"\$VECSIFT\" $cmd" <"$stdin" 2>"$top/$name.err" ;;
      *) echo "unknown stdout '$stdout'" >"$top/$name.err"; exit 99 ;;
    esac
  )
  got=$?
  for a in "${created[@]}"; do
    if [ -s "$w/$a" ]; then rm -f "$w/$a"; else problems_pre="output '$a' was not written"; fi
  done
  after=$(inventory "$w")
  problems=()
  [ -n "${problems_pre:-}" ] && problems+=("$problems_pre")
  problems_pre=""
  [ "$got" -eq "$want" ] || problems+=("exit status $got, expected $want")
  grep -Eq -- "$re" "$top/$name.err" || problems+=("stderr does not match /$re/")
  if [ -n "$lines" ] && [ "$(wc -l <"$top/$name.err")" -ne "$lines" ]; then
    problems+=("stderr has $(wc -l <"$top/$name.err") lines, expected $lines")
  fi
  if grep -Eq 'AddressSanitizer|LeakSanitizer|runtime error:|Segmentation|Aborted' "$top/$name.err"; then
    problems+=("sanitizer or crash report on stderr")
  fi
  for a in "${absent[@]}"; do
    [ -e "$w/$a" ] && problems+=("output '$a' left behind")
  done
  if [ "$before" != "$after" ]; then
    problems+=("files changed or appeared: $(diff <(echo "$before") <(echo "$after") | grep '^[<>]' | head -3 | tr '\n' ' ')")
  fi
  if [ ${#problems[@]} -eq 0 ]; then
    pass=$((pass + 1))
  else
    fail=$((fail + 1))
    echo "FAIL $name: vecsift $cmd"
    for p in "${problems[@]}"; do echo "  $p"; done
    echo "  stderr: $(head -c 300 "$top/$name.err")"
  fi
done
echo "$pass passed, $fail failed"
[ "$fail" -eq 0 ]
