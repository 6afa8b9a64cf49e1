#!/bin/sh
# fuzz-brief.sh - every libFuzzer harness for a short, fixed time, quietly:
# one line per harness (runs, finding or not); the full log of a harness
# that found something is printed. Used by `make check`; `make fuzz` runs
# longer with the whole output. Usage: scripts/fuzz-brief.sh DIR SECONDS
DIR=${1:?usage: fuzz-brief.sh DIR SECONDS}
SECS=${2:-20}
pass=0; fail=0
for h in "$DIR"/fuzz_*; do
  [ -x "$h" ] || continue
  t=$(basename "$h")
  out=fuzz-out/$t
  mkdir -p "$out/corpus"
  if "$h" -max_total_time="$SECS" -max_len=16384 -timeout=20 \
       -rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix="$out/" \
       "$out/corpus" "fuzz/corpus/$t" >"$out/log" 2>&1; then
    runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$out/log")
    echo "fuzz: $t: ${runs:-?} runs in $SECS s, no finding"
    pass=$((pass + 1))
  else
    echo "fuzz: $t: FOUND A PROBLEM (artifact in $out/); log:"
    tail -n 60 "$out/log"
    fail=$((fail + 1))
  fi
done
echo "fuzz: $pass passed, $fail failed"
[ "$fail" = 0 ]
