# 20_simulate.sh - 'frostfit simulate': help, CSV and summary streams, JSON,
# bad options. USP <785>: Kf(water) 1.860, so 0.15 mol/kg at i = 2 -> -0.558 C.
CASE="simulate --help"; run "$FF" simulate --help
expect_rc 0; expect_out '^usage: frostfit simulate'; expect_out 'exit codes'
CASE="simulate to stdout"; run "$FF" simulate --molality 0.15 --i 2
expect_rc 0; expect_out '^time_s,T \(C\)$'; expect_out '^300,-0\.[5-7][0-9]*$'
expect_err 'true freezing point: +-0\.558000 C'
CASE="simulate --out --json"; run "$FF" simulate --molality 0.15 --i 2 --offset 0.012 --cycles 2 --out "$TMP/sim.csv" --json
expect_rc 0; expect_json; expect_out '"true_freezing_point_c": -0\.558,'
expect_out '"true_reading_c": -0\.546'; expect_out '"nucleation_time_s"'
if [ "$(head -1 "$TMP/sim.csv")" = "time_s,T (C)" ]; then ok; else bad "csv header"; fi
CASE="simulate same seed same file"; run "$FF" simulate --seed 5 --supercool -1 --noise 0.01 --out "$TMP/s1.csv"
run "$FF" simulate --seed 5 --supercool -1 --noise 0.01 --out "$TMP/s2.csv"
if cmp -s "$TMP/s1.csv" "$TMP/s2.csv"; then ok; else bad "same seed gave different files"; fi
CASE="simulate cyclohexane"; run "$FF" simulate --solvent cyclohexane --molality 0.05 --json --out "$TMP/c.csv"
expect_rc 0; expect_out '"true_freezing_point_c": 5\.5[0-9]*,'; expect_out '"name": "cyclohexane"'
CASE="simulate dropout cells empty"; run "$FF" simulate --dropout 0.3 --out "$TMP/d.csv"
if grep -Eq '^[0-9.]+,$' "$TMP/d.csv"; then ok; else bad "no empty cell for a dropout"; fi
CASE="simulate bad number"; run "$FF" simulate --noise 2mK
expect_rc 1; expect_err "noise expects a number, found '2mK'"; expect_no_out
CASE="simulate dropout out of range"; run "$FF" simulate --dropout 1.5
expect_rc 1; expect_err 'dropout'; expect_no_out
CASE="simulate bad cycles"; run "$FF" simulate --cycles 2.5
expect_rc 1; expect_err 'cycles'
CASE="simulate unknown option"; run "$FF" simulate --colour blue
expect_rc 1; expect_err "unknown option '--colour'"
CASE="simulate unknown solvent"; run "$FF" simulate --solvent unobtainium
expect_rc 2; expect_err "unknown solvent 'unobtainium'"; expect_err 'cyclohexane'; expect_no_out
CASE="simulate start below freezing point"; run "$FF" simulate --molality 3 --start -10
expect_rc 1; expect_err 'start temperature'
CASE="simulate bath channel"; run "$FF" simulate --bath-channel --bath-drift 0.0004 --out "$TMP/bath.csv" --json
expect_rc 0; expect_out '"bath_drift_k_s": 0\.0004'
if [ "$(head -1 "$TMP/bath.csv")" = "time_s,T (C),bath (C)" ]; then ok; else bad "bath column header"; fi
CASE="simulate --out -"; run "$FF" simulate --out - --json
expect_rc 0; expect_out '^time_s,T \(C\)$'; expect_err '"true_freezing_point_c": 0'
# End to end: the importer reads what the simulator writes (time in s, both
# channels in C, a dropout is a missing value, not a zero).
"$FF" simulate --bath-channel --dropout 0.1 --seed 11 --out "$TMP/imp.csv" >/dev/null 2>&1
CASE="simulate output imports"; run "$FF" inspect --json "$TMP/imp.csv"
expect_rc 0
if python3 -c "
import json,sys
j=json.load(open('$OUT'))
c=j['columns']
assert c[0]['role']=='time' and c[0]['time_format']=='seconds'
assert c[1]['unit']=='C' and c[2]['unit']=='C' and c[2]['name']=='bath (C)'
n=sum(1 for l in open('$TMP/imp.csv').read().splitlines()[1:] if l.split(',')[1]=='')
assert n > 50, n
" 2>/dev/null; then ok; else bad "importer does not read the simulated file as written"; fi
