#!/bin/sh
# bench-speed.sh - speed and memory of frostfit on a large logger export and a
# large batch; prints figures, asserts nothing about time (docs/performance.md).
#
#   scripts/bench-speed.sh [BIN]          everything (BIN: build/frostfit)
#   scripts/bench-speed.sh --data-only    only generate bench-data/
#
# Environment: BENCH_DATA (bench-data), BENCH_ROWS (5000000), BENCH_RUNS
# (1000), BENCH_SAMPLES (2000), BENCH_REPEAT (3, best time kept), BUILD
# (where the generator is compiled; default: BIN's folder), CC.
set -u

data_only=0
if [ "${1:-}" = "--data-only" ]; then
  data_only=1
  shift
fi
bin=${1:-build/frostfit}
data=${BENCH_DATA:-bench-data}
rows=${BENCH_ROWS:-5000000}
runs=${BENCH_RUNS:-1000}
samples=${BENCH_SAMPLES:-2000}
repeat=${BENCH_REPEAT:-3}
build=${BUILD:-$(dirname "$bin")}
cc=${CC:-cc}
large=$data/large-$rows.csv
batch=$data/batch-$runs-$samples
figruns=${BENCH_FIGURE_RUNS:-100}
figbatch=$data/batch-$figruns-$samples
gen=$build/bench/gencsv

say() { printf '%s\n' "$*"; }
die() { printf 'bench-speed: %s\n' "$*" >&2; exit 4; }

# --- data ------------------------------------------------------------------
mkdir -p "$data" "$build/bench" || die "cannot create $data or $build/bench"
if [ ! -x "$gen" ] || [ bench/gencsv.c -nt "$gen" ]; then
  $cc -O2 -std=c11 -D_POSIX_C_SOURCE=200809L -o "$gen" bench/gencsv.c -lm ||
    die "cannot compile bench/gencsv.c"
fi
if [ ! -s "$large" ]; then
  say "generating $large ($rows rows, synthetic) ..."
  "$gen" large "$large.tmp" "$rows" && mv "$large.tmp" "$large" ||
    die "generator failed"
fi
if [ ! -s "$batch/sheet.csv" ]; then
  say "generating $batch ($runs runs of $samples samples, synthetic) ..."
  rm -rf "$batch.tmp"
  "$gen" batch "$batch.tmp" "$runs" "$samples" && mv "$batch.tmp" "$batch" ||
    die "generator failed"
fi
if [ ! -s "$figbatch/sheet.csv" ]; then
  say "generating $figbatch ($figruns runs of $samples samples, synthetic) ..."
  rm -rf "$figbatch.tmp"
  "$gen" batch "$figbatch.tmp" "$figruns" "$samples" && mv "$figbatch.tmp" "$figbatch" ||
    die "generator failed"
fi
[ "$data_only" = 1 ] && exit 0

[ -x "$bin" ] || die "no program at $bin (make first)"

# --- helpers ---------------------------------------------------------------
have_time=0
if [ -x /usr/bin/time ]; then
  have_time=1
else
  say "note: /usr/bin/time is missing (Debian package 'time'): no peak memory"
fi

# run_timed OUTFILE CMD...: best wall time of $repeat runs and the peak RSS of
# that run into "$secs" and "$rss_kb"; the command's exit status in "$rc".
run_timed() {
  out=$1
  shift
  secs=""
  rss_kb=""
  cpu=""
  i=0
  while [ "$i" -lt "$repeat" ]; do
    i=$((i + 1))
    if [ "$have_time" = 1 ]; then
      /usr/bin/time -f '%e %M %U %S' -o "$data/.time" "$@" > "$out" 2> "$data/.stderr"
      rc=$?
      # last line: on failure /usr/bin/time writes "Command exited ..." first
      s=$(tail -n 1 "$data/.time" | cut -d' ' -f1)
      m=$(tail -n 1 "$data/.time" | cut -d' ' -f2)
      c=$(tail -n 1 "$data/.time" | awk '{ printf "%.2f", $3 + $4 }')
    else
      t0=$(date +%s.%N)
      "$@" > "$out" 2> "$data/.stderr"
      rc=$?
      t1=$(date +%s.%N)
      s=$(echo "$t1 $t0" | awk '{ printf "%.3f", $1 - $2 }')
      m=""
      c=""
    fi
    [ "$rc" = 0 ] || return 0
    if [ -z "$secs" ] || awk -v a="$s" -v b="$secs" 'BEGIN { exit !(a < b) }'; then
      secs=$s
      rss_kb=$m
      cpu=$c
    fi
  done
}

# "   CPU x s (user + sys) = y cores busy" for the best run, when known.
cpu_line() {
  [ -n "$cpu" ] && awk -v c="$cpu" -v s="$secs" 'BEGIN {
    printf "   CPU %.2f s (user + sys) = %.2f cores busy on average\n", c, c / s }'
}

# A command that is still a placeholder says "not built yet".
placeholder() { grep -q "not built yet" "$data/.stderr" 2>/dev/null; }

bytes=$(wc -c < "$large")
cols=$(head -n 1 "$large" | awk -F, '{ print NF }')
nrows=$(( $(wc -l < "$large") - 1 ))
mb=$(awk -v b="$bytes" 'BEGIN { printf "%.1f", b / 1e6 }')
numeric_mb=$(awk -v r="$nrows" -v c="$cols" 'BEGIN { printf "%.1f", r * c * 8 / 1048576 }')
cat "$large" > /dev/null   # warm the page cache: we time parsing, not the disk

say ""
say "machine: $(nproc) cores, load average $(cut -d' ' -f1-3 /proc/loadavg 2>/dev/null) (other work skews wall times)"
say "== large file: $large"
say "   $mb MB, $nrows rows x $cols columns; numeric data $numeric_mb MiB"

# --- frostfit on the large file -------------------------------------------
what="point"
run_timed "$data/.point.json" "$bin" point "$large" --json
if [ "$rc" != 0 ]; then
  if placeholder; then
    say "   'frostfit point' is not built yet: measuring 'frostfit inspect' (import only) instead"
  else
    say "   'frostfit point' failed (exit $rc): $(head -n 3 "$data/.stderr")"
    say "   measuring 'frostfit inspect' (import only) instead"
  fi
  what="inspect"
  run_timed /dev/null "$bin" inspect "$large" --json
fi
ff_secs=""
if [ "$rc" != 0 ]; then
  say "   'frostfit $what' failed too (exit $rc): $(head -n 3 "$data/.stderr")"
else
  ff_secs=$secs
  awk -v s="$secs" -v b="$bytes" -v r="$nrows" -v what="$what" 'BEGIN {
    printf "   frostfit %-8s %7.3f s  %7.1f MB/s  %6.2f M rows/s  (target >= 400 MB/s)\n", what, s, b / 1e6 / s, r / 1e6 / s }'
  cpu_line
  if [ "$what" = point ] && command -v python3 > /dev/null; then
    say "   frostfit found: $(python3 -c 'import json, sys
d = json.load(open(sys.argv[1])); e = d.get("events", [])
print(len(e), "freeze events,", sum(1 for x in e if x.get("trusted")), "trusted")' "$data/.point.json" 2>&1)"
  fi
  if [ -n "$rss_kb" ]; then
    awk -v k="$rss_kb" -v r="$nrows" -v c="$cols" 'BEGIN {
      num = r * c * 8 / 1048576; rss = k / 1024
      printf "   peak RSS %.1f MiB = %.2f x numeric data (budget 1.2 x + 32 MiB = %.1f MiB)\n",
        rss, rss / num, 1.2 * num + 32 }'
  fi
fi

# The import alone, to tell reading from analysis.
if [ "$what" = point ]; then
  run_timed /dev/null "$bin" inspect "$large" --json
  if [ "$rc" = 0 ]; then
    awk -v s="$secs" -v b="$bytes" -v r="$nrows" -v k="${rss_kb:-0}" -v c="$cols" 'BEGIN {
      printf "   frostfit inspect %7.3f s  %7.1f MB/s  %6.2f M rows/s  (import only", s, b / 1e6 / s, r / 1e6 / s
      if (k > 0) printf ", peak RSS %.1f MiB = %.2f x numeric", k / 1024, k / 1024 / (r * c * 8 / 1048576)
      printf ")\n" }'
  fi
  # The general libcsv reader on the same file, for comparison.
  run_timed /dev/null env FF_IMPORT_NO_FAST=1 "$bin" inspect "$large" --json
  if [ "$rc" = 0 ]; then
    awk -v s="$secs" -v b="$bytes" 'BEGIN {
      printf "   same, libcsv path (FF_IMPORT_NO_FAST=1) %7.3f s  %7.1f MB/s\n", s, b / 1e6 / s }'
  fi
fi

# --- pandas/numpy comparison ----------------------------------------------
py=/usr/bin/python3
if ! $py -c 'import pandas, numpy' 2>/dev/null; then
  if [ "$(id -u)" = 0 ] && command -v apt-get > /dev/null; then
    say "   installing Debian's python3-pandas for the comparison ..."
    DEBIAN_FRONTEND=noninteractive apt-get install -y -q python3-pandas > "$data/.apt.log" 2>&1 ||
      say "   apt-get install python3-pandas failed (see $data/.apt.log)"
  fi
fi
if $py -c 'import pandas, numpy' 2>/dev/null; then
  run_timed "$data/.pandas.out" $py scripts/bench_pandas.py "$large"
  if [ "$rc" = 0 ]; then
    awk -v s="$secs" -v b="$bytes" -v r="$nrows" 'BEGIN {
      printf "   pandas/numpy     %7.3f s  %7.1f MB/s  %6.2f M rows/s\n", s, b / 1e6 / s, r / 1e6 / s }'
    [ -n "$rss_kb" ] && awk -v k="$rss_kb" 'BEGIN { printf "   pandas peak RSS %.1f MiB\n", k / 1024 }'
    say "   pandas found: $(tail -n 1 "$data/.pandas.out")"
    [ -n "$ff_secs" ] && awk -v a="$secs" -v b="$ff_secs" -v what="$what" 'BEGIN {
      printf "   frostfit %s is %.2f x the speed of pandas/numpy (target >= 3 x)\n", what, a / b }'
  else
    say "   pandas script failed (exit $rc): $(tail -n 3 "$data/.stderr")"
  fi
else
  say "   pandas comparison skipped: /usr/bin/python3 has no pandas (Debian: python3-pandas)"
fi

# --- batch -----------------------------------------------------------------
say ""
say "== batch: $batch ($runs runs of $samples samples, no figures)"
run_timed "$data/.series.out" "$bin" series "$batch/sheet.csv" --json
if [ "$rc" = 0 ]; then
  awk -v s="$secs" -v n="$runs" 'BEGIN {
    printf "   frostfit series   %7.3f s  %7.1f runs/s  (target < 2 s for 1,000 runs)\n", s, n / s }'
  cpu_line
  [ -n "$rss_kb" ] && awk -v k="$rss_kb" 'BEGIN { printf "   peak RSS %.1f MiB\n", k / 1024 }'
elif placeholder; then
  say "   'frostfit series' is not built yet: batch timing skipped"
else
  say "   'frostfit series' failed (exit $rc): $(head -n 3 "$data/.stderr")"
fi

say ""
say "== figures: $figbatch ($figruns runs, one figure each plus overviews)"
figdir=$data/figures-out
rm -rf "$figdir"
run_timed "$data/.series.out" "$bin" series "$figbatch/sheet.csv" --figures "$figdir"
if [ "$rc" = 0 ]; then
  nfig=$(find "$figdir" -name '*.png' | wc -l)
  awk -v s="$secs" -v n="$nfig" 'BEGIN {
    printf "   frostfit series --figures  %7.3f s  for %d PNG figures (%.1f figures/s)\n", s, n, n / s }'
  [ "$nfig" = 0 ] && say "   no PNG made: $(tail -n 2 "$data/.stderr")"
elif placeholder; then
  say "   'frostfit series' is not built yet: figure timing skipped"
else
  say "   'frostfit series --figures' failed (exit $rc): $(head -n 3 "$data/.stderr")"
fi
say ""
say "(figures only; nothing here is a pass/fail test; machine: $(nproc) cores)"
exit 0
