# 30_point.sh - 'frostfit point': events, methods, JSON, channels that never
# freeze, and the exit codes (3 when nothing can be trusted). Curves come from
# 'frostfit simulate' (synthetic); its true freezing point is Tf0 - i Kf m.

# jnum EXPR: evaluates a Python expression on the JSON in $OUT as j.
jnum() { python3 -c "import json,sys; j=json.load(open('$OUT')); print($1)" 2>/dev/null; }

"$FF" simulate --molality 0.15 --i 2 --supercool 2 --seed 7 \
  --out "$TMP/salt.csv" >/dev/null 2>&1
"$FF" simulate --molality 0.15 --i 2 --supercool 1.5 --freeze-s 25 --seed 7 \
  --out "$TMP/short.csv" >/dev/null 2>&1
"$FF" simulate --cycles 3 --freeze-s 400 --supercool 1 --seed 3 \
  --out "$TMP/cycles.csv" >/dev/null 2>&1

# Cyclohexane: the model needs its heat capacity and latent heat; with
# water's it would read far off, and says so instead.
"$FF" simulate --solvent cyclohexane --molality 0.05 --supercool 1 --seed 5 \
  --out "$TMP/cy.csv" >/dev/null 2>&1
CASE="point --solvent cyclohexane"
run "$FF" point "$TMP/cy.csv" --solvent cyclohexane --json
expect_rc 0
if [ "$(jnum "abs(j['events'][0]['freezing_point_c'] - (6.54 - 20.8 * 0.05)) < 0.003 and j['solvent'] == 'cyclohexane'")" = True ]
then ok; else bad "cyclohexane freezing point not within 3 mK of 5.50 C"; fi
CASE="point: cyclohexane curve read as water: exit 3"
run "$FF" point "$TMP/cy.csv"
expect_rc 3; expect_err 'wrong --solvent'; expect_no_out
CASE="point: unknown solvent"; run "$FF" point "$TMP/cy.csv" --solvent unobtainium
expect_rc 1; expect_err "unknown solvent 'unobtainium'"
CASE="point: standard input"
run sh -c "cat '$TMP/cy.csv' | '$FF' point - --solvent cyclohexane"
expect_rc 0; expect_out 'model'

CASE="point: salt solution, auto"; run "$FF" point "$TMP/salt.csv"
expect_rc 0; expect_out 'model'; expect_out '^ +1 +-0\.55[5-9]'
CASE="point: --all-methods shows every method"
run "$FF" point "$TMP/salt.csv" --all-methods
expect_rc 0; expect_out 'intersect +-0\.5'; expect_out 'peak +-0\.5'
expect_out 'plateau .*no flat part'
CASE="point --json: contract keys and the true value within 3 mK"
run "$FF" point "$TMP/salt.csv" --json
expect_rc 0; expect_json
if [ "$(jnum "abs(j['events'][0]['freezing_point_c'] + 0.558) < 0.003")" = True ]
then ok; else bad "freezing_point_c not within 3 mK of -0.558"; fi
if [ "$(jnum "all(k in j['events'][0] for k in ('channel','cycle','freezing_point_c','u_freezing_point_k','method','supercooling_k','nucleation_time_s','flags'))")" = True ]
then ok; else bad "contract keys missing"; fi
if [ "$(jnum "j['events'][0]['estimates']['peak']['freezing_point_c'] < -0.565")" = True ]
then ok; else bad "peak estimate should read low"; fi
CASE="point --method peak"; run "$FF" point "$TMP/salt.csv" --method peak
expect_rc 0; expect_out ' peak '
CASE="point --method plateau on a solution: untrusted, exit 3"
run "$FF" point "$TMP/salt.csv" --method plateau
expect_rc 3; expect_err 'no trustworthy freezing point'; expect_err 'no flat part'
expect_no_out

# A bath probe beside the sample: it never freezes.
awk -F, 'NR == 1 { print $0 ",bath (C)"; next }
         { printf "%s,%.3f\n", $0, -6.0 + 0.001 * ((NR * 7919) % 5) }' \
  "$TMP/salt.csv" > "$TMP/two.csv"
CASE="point: bath channel gives no event"; run "$FF" point "$TMP/two.csv"
expect_rc 0; expect_out "channel 2 'bath \(C\)': no freeze event"
run "$FF" point "$TMP/two.csv" --json
expect_json
if [ "$(jnum "[c['events'] for c in j['channels']] == [1, 0] and len(j['events']) == 1")" = True ]
then ok; else bad "channels array should read 1 and 0 events"; fi
CASE="point --channel bath only: exit 3"
run "$FF" point "$TMP/two.csv" --channel 2
expect_rc 3; expect_err 'no freeze found'; expect_no_out

CASE="point: three cycles"; run "$FF" point "$TMP/cycles.csv" --json
expect_rc 0
if [ "$(jnum "[e['cycle'] for e in j['events']] == [1, 2, 3]")" = True ]
then ok; else bad "three events expected"; fi

CASE="point: freeze cut off by the end of the file"
run "$FF" point "$TMP/short.csv"
expect_rc 3; expect_err 'file ends'; expect_no_out

printf 'time_s,T (C)\n0,1.0\n1,0.9\n2,abc\n' > "$TMP/bad.csv"
CASE="point: bad cell is bad input"; run "$FF" point "$TMP/bad.csv"
expect_rc 2; expect_err 'bad.csv:4'
CASE="point: missing file"; run "$FF" point "$TMP/none.csv"
expect_rc 4
CASE="point: unknown method"; run "$FF" point "$TMP/salt.csv" --method tangent
expect_rc 1; expect_err "unknown method 'tangent'"
CASE="point: no file"; run "$FF" point
expect_rc 1
CASE="point --help"; run "$FF" point --help
expect_rc 0; expect_out '^usage: frostfit point'
CASE="point --format without --figures"
run "$FF" point "$TMP/salt.csv" --format svg
expect_rc 1; expect_err 'needs --figures'
CASE="point --figures: one figure per trusted event (scripts even without gnuplot)"
run "$FF" point "$TMP/cycles.csv" --figures "$TMP/ptfig" --format svg
expect_rc 0; expect_err 'figure'
n=$(ls "$TMP"/ptfig/*_c[0-9]*.gp 2>/dev/null | wc -l)
if [ "$n" -eq 3 ]; then ok; else bad "$n event figure scripts, want 3"; fi

# A figure must never replace the input: refused before anything is written.
CASE="point --figures over its own input"
mkdir -p "$TMP/pfig"
"$FF" simulate --molality 0.05 --i 2 --out "$TMP/pfig/render.gp" >/dev/null 2>&1
run "$FF" point "$TMP/pfig/render.gp" --figures "$TMP/pfig"
expect_rc 1; expect_no_out; expect_err "holds the input"

# Progress goes to a terminal only: nothing extra on a redirected stderr.
CASE="point: no progress text when stderr is not a terminal"
"$FF" simulate --molality 0.1 --i 2 --out "$TMP/prog.csv" >/dev/null 2>&1
run "$FF" point "$TMP/prog.csv" --json
expect_rc 0; expect_json
if [ -s "$ERR" ]; then bad "stderr not empty"; else ok; fi
CASE="point --quiet"
run "$FF" point "$TMP/prog.csv" --quiet
expect_rc 0; expect_out 'freeze event'
if command -v script >/dev/null 2>&1; then
  CASE="point: a progress bar on a terminal"
  script -qc "'$FF' point '$TMP/prog.csv' --json >/dev/null" /dev/null >"$TMP/tty" 2>&1
  if grep -q 'analysing channels' "$TMP/tty"; then ok; else bad "no progress bar on a terminal"; fi
  script -qc "'$FF' point '$TMP/prog.csv' --json --quiet >/dev/null" /dev/null >"$TMP/tty" 2>&1
  if grep -q 'analysing' "$TMP/tty"; then bad "--quiet still drew a bar"; else ok; fi
  if command -v gnuplot >/dev/null 2>&1; then
    CASE="point --figures: a rendering bar on a terminal, none with --quiet"
    script -qc "'$FF' point '$TMP/prog.csv' --figures '$TMP/pbar' >/dev/null" /dev/null >"$TMP/tty" 2>&1
    if grep -q 'rendering figures .* 1 / 1' "$TMP/tty"; then ok; else bad "no rendering bar"; fi
    script -qc "'$FF' point '$TMP/prog.csv' --figures '$TMP/pbar' --quiet >/dev/null" /dev/null >"$TMP/tty" 2>&1
    if grep -q 'rendering figures' "$TMP/tty"; then bad "--quiet still drew a bar"; else ok; fi
  fi
fi

# Images are rendered to hidden part names and renamed when complete.
if command -v gnuplot >/dev/null 2>&1; then
  CASE="point --figures leaves no part files"
  run "$FF" point "$TMP/prog.csv" --figures "$TMP/pfig2" --format png,svg
  expect_rc 0
  if ls -a "$TMP/pfig2" | grep -q 'ff-part'; then bad "part files left"; else ok; fi
  if ls "$TMP/pfig2"/*.png >/dev/null 2>&1 && ls "$TMP/pfig2"/*.svg >/dev/null 2>&1; then ok; else bad "no images"; fi
fi
