# 50_series.sh - 'frostfit series': table, --json keys, --csv, figures, and
# runs or sheets that fail (exit 2 with sheet:line and column name, exit 3).
S="$ROOT/tests/data/series"

CASE="series --help"; run "$FF" series --help
expect_rc 0; expect_out '^usage: frostfit series SHEET'; expect_out 'exit codes'

CASE="series without a sheet"; run "$FF" series
expect_rc 1; expect_no_out; expect_err "^frostfit: series: give a run sheet"

CASE="series unknown option"; run "$FF" series --frobnicate "$S/sheet.csv"
expect_rc 1; expect_no_out; expect_err "unknown option '--frobnicate'"

CASE="series table"; run "$FF" series "$S/sheet.csv"
expect_rc 0
expect_out '^runs$'
expect_out '^N4 +sample +water +-0\.34[0-9]+ +0\.34[0-9]+ \+/- 0\.000[0-9]+ +0\.100000 +1\.86[0-9]+ \+/- '
expect_out '^NaCl in water: 4 runs; particles 2'
expect_out '^  debye_huckel +2\.0[0-9]+ \+/- '
expect_out 'inside its interval -> inferred'
expect_out '^white solid A in cyclohexane: M = 12[78]\.[0-9]+ \+/- '
expect_out 'not a validated clinical or pharmaceutical measurement'
expect_out '^caution \(cyclohexane\): '
if grep -qi 'nan' "$OUT"; then bad "NaN in the table"; else ok; fi
if [ -s "$ERR" ]; then bad "stderr not empty"; else ok; fi

CASE="series --json"; run "$FF" series --json "$S/sheet.csv"
expect_rc 0; expect_json
if python3 -c 'import json,sys; d=json.load(open(sys.argv[1]))
r=d["runs"][4]
for k in ("run","role","freezing_point_c","depression_k","u_depression_k",
          "molality_mol_kg","vant_hoff_i","u_vant_hoff_i",
          "osmotic_coefficient","osmolality_osmol_kg"): assert k in r, k
s=d["solutes"][0]
assert s["solute"]=="NaCl" and s["particles_inferred"]==2, s
assert isinstance(s["preferred"], str)
for m in s["models"]:
    for k in ("model","i_limit","u_i_limit","ci95"): assert k in m, k
u=d["unknowns"][0]
assert abs(u["molar_mass_g_mol"]-128.17) < 4*u["u_molar_mass_g_mol"], u
' "$OUT" 2>"$TMP/py"; then ok; else bad "json keys: $(cat "$TMP/py")"; fi

CASE="series --csv"; rm -f "$TMP/res.csv"
run "$FF" series --quiet --csv "$TMP/res.csv" "$S/sheet.csv"
expect_rc 0
if [ -s "$TMP/res.csv" ] && grep -q '^"run","N4","sample"' "$TMP/res.csv" \
   && grep -q '^"unknown","white solid A","cyclohexane","ok"' "$TMP/res.csv"
then ok; else bad "csv file missing or incomplete"; fi
if ls "$TMP"/.frostfit-csv-* >/dev/null 2>&1; then bad "temp file left"; else ok; fi

CASE="series --csv refuses to overwrite an input"
cp "$S"/sheet.csv "$S"/water.csv "$S"/cyclohexane.csv "$TMP"/
run "$FF" series --csv "$TMP/water.csv" "$TMP/sheet.csv"
expect_rc 1; expect_no_out; expect_err "refusing to overwrite"
if cmp -s "$TMP/water.csv" "$S/water.csv"; then ok; else bad "input changed"; fi

CASE="series --figures (scripts, rendered when gnuplot exists)"
run "$FF" series --figures "$TMP/fig" "$S/sheet.csv"
expect_rc 0
if [ -f "$TMP/fig/overview.gp" ] && [ -f "$TMP/fig/run_N4.gp" ] \
   && ls "$TMP"/fig/solute_NaCl*.gp >/dev/null 2>&1 \
   && ls "$TMP"/fig/unknown_*.gp >/dev/null 2>&1
then ok; else bad "figure scripts missing: $(ls "$TMP/fig" 2>&1 | head -5)"; fi

CASE="series broken sheet: exit 2, sheet:line and column"
printf 'run,file,role,solvent,solvent_g,solute,solute_g,molar_mass,blank\nB1,water.csv,blank,water,,,,,\nS1,water.csv,smaple,water,25,NaCl,0.2,58.44,B1\n' > "$TMP/bad.csv"
run "$FF" series "$TMP/bad.csv"
expect_rc 2
expect_err "bad\.csv:3:3: column 'role': unknown role 'smaple'"

CASE="series bad header: exit 2, nothing on stdout"
printf 'name,path\nx,y\n' > "$TMP/hdr.csv"
run "$FF" series "$TMP/hdr.csv"
expect_rc 2; expect_no_out; expect_err "hdr\.csv:1: the header needs"

CASE="series bad runs fail alone"; run "$FF" series "$S/broken.csv"
expect_rc 2
expect_err "broken\.csv:5:2: column 'file': cannot open data file '.*no-such-file\.csv'"
expect_err "broken\.csv:6:3: run 'NOCH': channel 'T9'"
expect_err "broken\.csv:7:4: run 'CYC': cycle 2 asked for"
expect_out '^N3 +sample +water +-0\.17'
expect_out '^GONE +sample +water +no result'

CASE="series untrusted run: exit 3, still prints the rest"
run "$FF" series --json "$S/untrusted.csv"
expect_rc 3; expect_json
expect_err "untrusted\.csv:5: run 'W1': froze at or above its blank"
if python3 -c 'import json,sys; d=json.load(open(sys.argv[1]))
r=[x for x in d["runs"] if x["run"]=="W1"][0]
assert r["status"]=="untrusted" and r["vant_hoff_i"] is None
assert d["runs"][0]["freezing_point_c"] is not None' "$OUT" 2>/dev/null
then ok; else bad "untrusted run json"; fi

CASE="series Kf from a standard"; run "$FF" series "$S/standard.csv"
expect_rc 0
expect_out 'calibration: cyclohexane Kf = 20\.[0-9]+ \+/- 0\.[0-9]+ K kg/mol from 1 standard \(S1\)'
expect_out '^  20\.[0-9]+ \+/- 0\.[0-9]+ K kg/mol from standard \(S1\): U2$'
expect_out '^  20\.8 K kg/mol from table \(cyclohexane\): S1$'

# Replicates: the demo's NACL-0.050 and NACL-0.050r are one solution
# measured twice (synthetic data); a run with no result (NACL-0.100r) joins
# no group; blanks never group.
D="$ROOT/datasets/demo/sheet.csv"
CASE="series replicates section (demo sheet)"; run "$FF" series --quiet "$D"
expect_rc 3
expect_out '^replicates \(same solution measured again\)$'
expect_out '^sodium chloride +0\.050000 mol/kg +2 +0\.1755[0-9]+ \+/- 0\.0000[0-9]+ +0\.175[0-9]+ \+/- 0\.000[0-9]+ +[0-9.]+ +[0-9.e-]+ +-$'
expect_out '^  runs: NACL-0\.050 NACL-0\.050r; i 1\.88[0-9]+ \+/- '
awk '/^replicates/{on=1} on&&/^$/{exit} on' "$OUT" > "$TMP/repl"
if grep -Eq '^(sodium chloride +0\.100|urea|water)|W-B|NACL-0\.100r' "$TMP/repl"
then bad "a lone run, a failed run or a blank grouped"; else ok; fi
if [ "$(grep -c 'mol/kg  ' "$TMP/repl")" = 1 ]; then ok; else bad "one group wanted"; fi
if grep -qi 'nan' "$OUT"; then bad "NaN in the table"; else ok; fi

CASE="series --json replicates (demo sheet)"; run "$FF" series --quiet --json "$D"
expect_rc 3; expect_json
if python3 -c 'import json,sys,math; d=json.load(open(sys.argv[1]))
g=d["replicates"]
assert len(g)==1, g
g=g[0]
for k in ("role","solute","solvent","molality_mol_kg","n","runs",
          "depression_mean_k","depression_sd_k","depression_se_k",
          "depression_weighted_k","u_depression_weighted_k","chi2","dof",
          "p_value","birge_ratio","vant_hoff_i_mean","vant_hoff_i_sd",
          "flags","note"): assert k in g, k
assert g["runs"]==["NACL-0.050","NACL-0.050r"] and g["n"]==2 and g["dof"]==1
r={x["run"]:x for x in d["runs"]}
a,b=r["NACL-0.050"]["depression_k"],r["NACL-0.050r"]["depression_k"]
assert abs(g["depression_mean_k"]-(a+b)/2) < 1e-9
assert abs(g["depression_sd_k"]-abs(a-b)/math.sqrt(2)) < 1e-9
assert 0 < g["p_value"] <= 1 and g["birge_ratio"] >= 0
assert (g["p_value"] < 0.01) == ("replicate_scatter" in g["flags"])
' "$OUT" 2>"$TMP/py"; then ok; else bad "replicates json: $(cat "$TMP/py")"; fi
if python3 -c 'import json,sys
def no(c): raise ValueError(c)
json.load(open(sys.argv[1]), parse_constant=no)' "$OUT" 2>/dev/null
then ok; else bad "NaN or Infinity in JSON"; fi

CASE="series: one freeze read two ways is not a replicate"
run "$FF" series --quiet "$S/peak.csv"
expect_rc 0
if grep -q '^replicates' "$OUT"; then bad "peak and auto reading grouped"; else ok; fi
run "$FF" series --quiet --json "$S/peak.csv"
if python3 -c 'import json,sys; d=json.load(open(sys.argv[1]))
assert d["replicates"]==[]' "$OUT" 2>/dev/null; then ok; else bad "json replicates not empty"; fi

CASE="series: three freeze cycles of one tube are one replicate group"
"$FF" simulate --seed 5 --out "$TMP/rb.csv" >/dev/null 2>&1
"$FF" simulate --molality 0.1 --i 1.9 --cycles 3 --freeze-s 400 \
  --supercool 1 --seed 3 --out "$TMP/rs.csv" >/dev/null 2>&1
printf '# synthetic\nrun,file,channel,cycle,role,solvent,solute,molality,particles,blank\nB,rb.csv,1,1,blank,water,,,,\nS1,rs.csv,1,1,sample,water,NaCl,0.1,2,B\nS2,rs.csv,1,2,sample,water,NaCl,0.1,2,B\nS3,rs.csv,1,3,sample,water,NaCl,0.1,2,B\nSL,rs.csv,1,last,sample,water,NaCl,0.1,2,B\n' > "$TMP/rsheet.csv"
run "$FF" series --quiet "$TMP/rsheet.csv"
expect_rc 3    # one molality: no fit of the solute
expect_out '^NaCl +0\.100000 mol/kg +3 +0\.35[0-9]+ \+/- 0\.000[0-9]+ '
# SL reads cycle 3 again ("last"): the same freeze, not a fourth replicate
expect_out '^  runs: S1 S2 S3; i 1\.9[0-9]* \+/- '

# Probe ids (tests/data/series/probes.csv, synthetic): Kf per probe from its
# own standard, the pool with a note for P3 (no standard), and N3's blank on
# another probe flagged; all values checked in tests/test_series_probe.c.
CASE="series: Kf per probe and a blank on another probe"
run "$FF" series "$S/probes.csv"
expect_rc 0
expect_out '^N3 +sample .* kf:standard,blank_other_probe,kf_other_probes$'
expect_out '^N1 +sample .* kf:standard$'
expect_out 'K kg/mol from standard \(S1 on probe P1\): N1 N5$'
expect_out 'K kg/mol from standard \(S2 on probe P2\): N2$'
expect_out 'from standard \(S1\+S2, pooled: no standard on probe P3\): N3$'
expect_out 'K kg/mol from standard \(S1\+S2\): N4$'
expect_out '^  calibration: water on probe P2 Kf = 1\.[0-9]+ \+/- 0\.00[0-9]+ K kg/mol from 1 standard \(S2\)$'
expect_out "^  N3: blank_other_probe: the blank 'W1' was measured on probe P1, this run on probe P3: their calibration offsets do not cancel$"
expect_err "probes\.csv:15: run 'N3': warning: the blank 'W1' was measured on probe P1"
run "$FF" series --quiet --json "$S/probes.csv"
expect_rc 0; expect_json
expect_err "run 'N3': warning: the blank 'W1'"
if python3 -c 'import json,sys; d=json.load(open(sys.argv[1]))
r={x["run"]:x for x in d["runs"]}
assert r["N1"]["probe"]=="P1" and r["N1"]["kf_probe"]=="P1", r["N1"]
assert r["W3"]["probe"] is None and r["N4"]["kf_probe"] is None
assert r["N2"]["kf_from"]=="S2 on probe P2"
assert r["N3"]["flags"]==["blank_other_probe","kf_other_probes"], r["N3"]
assert len(r["N3"]["warnings"])==2 and r["N1"]["warnings"]==[]
assert r["N2"]["flags"]==[] and r["N5"]["flags"]==[]
p={c["probe"]:c for c in d["kf_calibrations_by_probe"]}
assert abs(p["P1"]["kf_k_kg_mol"]/p["P2"]["kf_k_kg_mol"]-1.05) < 1e-9
assert r["N1"]["kf_k_kg_mol"]==p["P1"]["kf_k_kg_mol"]
assert [c["standards"] for c in d["kf_calibrations"]]==["S1+S2"]
' "$OUT" 2>"$TMP/py"; then ok; else bad "probe json: $(cat "$TMP/py")"; fi

CASE="series: a probe id longer than 63 bytes is a sheet error"
cp "$S/water.csv" "$TMP/"
printf 'run,file,channel,role,solvent,probe\nW,water.csv,1,blank,water,%s\n' \
  "$(printf 'P%063d' 1)" > "$TMP/longprobe.csv"
run "$FF" series "$TMP/longprobe.csv"
expect_rc 2
expect_err "longprobe\.csv:2:6: column 'probe': text longer than 63 characters"

CASE="series: no probe column, no probe keys"
run "$FF" series --quiet --json "$S/standard.csv"
expect_rc 0
if grep -q '"probe"\|"kf_probe"\|"warnings"\|kf_calibrations_by_probe' "$OUT"
then bad "probe keys without a probe column"; else ok; fi
