# 10_inspect.sh - 'frostfit inspect': what the importer understood, exit codes.
D="$ROOT/tests/data/import"

CASE="inspect --help"; run "$FF" inspect --help
expect_rc 0; expect_out '^usage: frostfit inspect FILE'; expect_out '--time-column'

CASE="inspect without a file"; run "$FF" inspect
expect_rc 1; expect_no_out; expect_err "^frostfit: inspect: expected a FILE"

CASE="inspect bad --unit"; run "$FF" inspect --unit X "$D/comma_lf.csv"
expect_rc 1; expect_no_out; expect_err "--unit expects C, K or F, found 'X'"

CASE="inspect unknown option"; run "$FF" inspect --frobnicate "$D/comma_lf.csv"
expect_rc 1; expect_no_out; expect_err "unknown option '--frobnicate'"

CASE="inspect semicolon / decimal comma / metadata"
run "$FF" inspect "$D/logger_semicolon_comma.csv"
expect_rc 0
expect_out "^dialect: delimiter ';', decimal ',', line ends CRLF$"
expect_out '^header: line 5; 4 metadata lines before it; data from line 6$'
expect_out '1  Zeit \(s\) +time, seconds$'
expect_out '2  T1 \(°C\) +channel 1, C$'
expect_out '^rows: 121 read, 121 kept$'
expect_out '^time: 600 s span, median interval 5 s$'
expect_out '1  T1 \(°C\) +2 +C +-2\.4720 +5\.0000 +0$'
if [ -s "$ERR" ]; then bad "stderr not empty"; else ok; fi

CASE="inspect --json"; run "$FF" inspect --json "$D/missing.csv"
expect_rc 0; expect_json
expect_out '"kept": 4'
expect_out '"duplicate_time": 1'
expect_out '"first_backwards_line": 9'
expect_out '"median_interval_s": 1'
if python3 -c 'import json,sys; d=json.load(open(sys.argv[1]));
assert [c["missing"] for c in d["channels"]] == [2, 2, 1]
assert d["channels"][2]["min_c"] == -100
assert d["columns"][0]["role"] == "time"' "$OUT" 2>/dev/null; then ok; else bad "json values"; fi

CASE="inspect --unit K overrides the header"
run "$FF" inspect --json --unit K "$D/comma_lf.csv"
expect_rc 0; expect_out '"unit_in": "K"'; expect_out '"max_c": -251\.65'

CASE="inspect --time-column by number"
run "$FF" inspect --time-column 1 --delimiter ';' --decimal , "$D/logger_semicolon_comma.csv"
expect_rc 0; expect_out '^rows: 121 read, 121 kept$'

CASE="inspect standard input"; run sh -c "\"$FF\" inspect - < \"$D/comma_lf.csv\""
expect_rc 0; expect_out '^file: -$'; expect_out '^rows: 4 read, 4 kept$'

CASE="inspect ignored columns say why"; run "$FF" inspect "$D/roles.csv"
expect_rc 0
expect_out 'Pressure \(hPa\) +ignored: header suggests pressure$'
expect_out 'Probe 3 +channel 3, C \(assumed: no unit in the header\)$'

CASE="inspect broken cell"; run "$FF" inspect "$D/bad_cell.csv"
expect_rc 2; expect_no_out
expect_err "^frostfit: $D/bad_cell\.csv:4:2: expected a number in column 'T \(C\)', found '21\.\.4'$"

CASE="inspect ragged row"; run "$FF" inspect --json "$D/bad_ragged.csv"
expect_rc 2; expect_no_out
expect_err "^frostfit: $D/bad_ragged\.csv:5:3: expected 3 fields as in the rows above, found 2$"

CASE="inspect UTF-16"; run "$FF" inspect "$D/bad_utf16le.csv"
expect_rc 2; expect_no_out; expect_err "bad_utf16le\.csv:1:1: expected UTF-8 or Latin-1 text, found UTF-16"

CASE="inspect empty file"; run "$FF" inspect "$D/bad_empty.csv"
expect_rc 2; expect_no_out; expect_err "bad_empty\.csv:1:1: .*found an empty file$"

CASE="inspect missing file"; run "$FF" inspect "$D/no-such-file.csv"
expect_rc 4; expect_no_out; expect_err "no-such-file\.csv: cannot open"
