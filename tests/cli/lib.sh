# lib.sh -- tiny helpers for command-line tests (sourced by tests/cli/*.sh).
# run CMD...        runs it, keeping status, stdout and stderr
# expect_status N   the last command's exit status
# expect_out RE / expect_err RE   an extended regex found in stdout / stderr
# expect_err_lines N  stderr has exactly N lines
# finish            prints "N passed, N failed" and sets the exit status
: "${VECSIFT:?set VECSIFT to the binary}"
T_PASS=0
T_FAIL=0
T_DIR=$(mktemp -d)
trap 'rm -rf "$T_DIR"' EXIT
ok() { T_PASS=$((T_PASS + 1)); }
bad() { T_FAIL=$((T_FAIL + 1)); echo "FAIL (${BASH_SOURCE[2]}:${BASH_LINENO[1]}): $*" >&2; echo "  command: ${LAST_CMD}" >&2; }
run() {
  LAST_CMD="$*"
  "$@" >"$T_DIR/out" 2>"$T_DIR/err" </dev/null
  LAST_STATUS=$?
}
run_in() { # run_in FILE CMD... (stdin from FILE)
  local f=$1; shift
  LAST_CMD="$* < $f"
  "$@" >"$T_DIR/out" 2>"$T_DIR/err" <"$f"
  LAST_STATUS=$?
}
expect_status() { if [ "$LAST_STATUS" -eq "$1" ]; then ok; else bad "status $LAST_STATUS, expected $1; stderr: $(head -c 400 "$T_DIR/err")"; fi; }
expect_out() { if grep -Eq -- "$1" "$T_DIR/out"; then ok; else bad "stdout lacks /$1/: $(head -c 400 "$T_DIR/out")"; fi; }
expect_err() { if grep -Eq -- "$1" "$T_DIR/err"; then ok; else bad "stderr lacks /$1/: $(head -c 400 "$T_DIR/err")"; fi; }
expect_err_lines() { local n; n=$(wc -l <"$T_DIR/err"); if [ "$n" -eq "$1" ]; then ok; else bad "stderr has $n lines, expected $1: $(head -c 400 "$T_DIR/err")"; fi; }
expect_file() { if [ -s "$1" ]; then ok; else bad "file $1 missing or empty"; fi; }
expect_no_file() { if [ ! -e "$1" ]; then ok; else bad "file $1 should not exist"; fi; }
finish() {
  echo "$T_PASS passed, $T_FAIL failed"
  [ "$T_FAIL" -eq 0 ]
}
