#!/bin/sh
# cli.sh - end-to-end checks of the frostfit command line.
# Usage: tests/cli.sh PATH/TO/frostfit. Sources every tests/cli/*.sh; each
# check compares exit code, stdout and stderr separately.
FF=${1:?usage: tests/cli.sh PATH/TO/frostfit}
case $FF in /*) ;; *) FF=$(pwd)/$FF ;; esac
export FF
ROOT=$(cd "$(dirname "$0")/.." && pwd)
TMP=$(mktemp -d) || exit 4
trap 'rm -rf "$TMP"' EXIT
pass=0; fail=0

# run CMD...: runs it, keeps $OUT, $ERR (files) and $RC.
run() { "$@" >"$TMP/out" 2>"$TMP/err"; RC=$?; OUT=$TMP/out; ERR=$TMP/err; }
ok()   { pass=$((pass + 1)); }
bad()  { fail=$((fail + 1)); echo "FAIL: $CASE: $*"; echo "  stderr: $(head -c 400 "$ERR")"; }
# expect_rc N: exit code must be N
expect_rc() { if [ "$RC" = "$1" ]; then ok; else bad "exit $RC, want $1"; fi; }
# expect_out REGEX / expect_err REGEX: grep -E on stdout / stderr
expect_out() { if grep -Eq -- "$1" "$OUT"; then ok; else bad "stdout lacks /$1/"; fi; }
expect_err() { if grep -Eq -- "$1" "$ERR"; then ok; else bad "stderr lacks /$1/"; fi; }
expect_no_out() { if [ ! -s "$OUT" ]; then ok; else bad "stdout not empty"; fi; }
expect_json() { if python3 -m json.tool "$OUT" >/dev/null 2>&1; then ok; else bad "stdout is not JSON"; fi; }

for f in "$ROOT"/tests/cli/*.sh; do
  [ -f "$f" ] || continue
  . "$f"
done
echo "cli: $pass passed, $fail failed"
[ "$fail" = 0 ]
