# 15_import_fast.sh - big plain tables go through the importer's parallel
# fast path; the general reader (FF_IMPORT_NO_FAST=1) must say the same.
# Synthetic data made here: 60000 rows, ~2.4 MB (several chunks, beyond the
# 256 KiB sample), with comment lines (the one above the first data row is
# not in the table, so 6 count) and blank lines, missing cells, markers,
# a sentinel, a duplicate and a backwards time.
fastimp_make() {
  awk -v eol="$2" -v bad="$3" 'BEGIN {
    printf "time (s),T1 (C),T2 (C),T3 (K)%s", eol
    for (i = 0; i < 60000; i++) {
      t = i * 0.5
      if (i == 30000) t = 14999.5          # duplicate of row 29999
      if (i == 40000) t = 19000.0          # backwards
      if (i % 9973 == 0) printf "# note %d%s", i, eol
      if (i % 12345 == 0) printf "%s", eol
      a = sprintf("%.4f", 5 - i * 0.0002); b = sprintf("%.3f", -1 + (i % 7) * 0.01)
      c = sprintf("%.2f", 278.15 - (i % 50) * 0.01)
      if (i % 1000 == 7) a = ""
      if (i % 1500 == 3) b = "NaN"
      if (i % 2500 == 11) c = "-9999"
      if (i == bad) b = "1.2.3"
      printf "%.1f,%s,%s,%s%s", t, a, b, c, eol
    }
  }' > "$1"
}
fastimp_same() {
  run "$FF" inspect "$1" --json
  cp "$OUT" "$TMP/fast.json"; cp "$ERR" "$TMP/fast.err"; fast_rc=$RC
  FF_IMPORT_NO_FAST=1 run "$FF" inspect "$1" --json
  if [ "$RC" = "$fast_rc" ] && cmp -s "$OUT" "$TMP/fast.json" \
     && cmp -s "$ERR" "$TMP/fast.err"; then ok
  else bad "fast path and general reader differ (exit $fast_rc vs $RC)"; fi
}

fastimp_make "$TMP/fast_lf.csv" "\n" -1
CASE="import fast path: LF, several chunks"; fastimp_same "$TMP/fast_lf.csv"
run "$FF" inspect "$TMP/fast_lf.csv" --json
expect_rc 0; expect_out '"read": 60000'; expect_out '"comment_lines": 6'
expect_out '"duplicate_time": 1'; expect_out '"backwards_time": 1'

fastimp_make "$TMP/fast_crlf.csv" "\r\n" -1
CASE="import fast path: CRLF"; fastimp_same "$TMP/fast_crlf.csv"

fastimp_make "$TMP/fast_bad.csv" "\n" 50000
CASE="import fast path: bad cell deep in the file"; fastimp_same "$TMP/fast_bad.csv"
run "$FF" inspect "$TMP/fast_bad.csv" --json
expect_rc 2; expect_err "fast_bad.csv:500[0-9][0-9]:3: expected a number in column 'T2 \(C\)', found '1\.2\.3'"

fastimp_make "$TMP/fast_quote.csv" "\n" -1
printf '30000.0,"1.5",2.0,280\n' >> "$TMP/fast_quote.csv"
CASE="import fast path: a quoted cell at the end"; fastimp_same "$TMP/fast_quote.csv"
run "$FF" inspect "$TMP/fast_quote.csv" --json
expect_rc 0; expect_out '"read": 60001'
