# 70_hostile.sh - hostile input and faults: what instruments, spreadsheets
# and people feed frostfit must end in a clear message and the right exit
# code, never a crash, a hang, a NaN in a table, a damaged file or a command
# run. Every input is made here in $TMP. (Exit codes and the
# "frostfit: path:line:column: ..." form: common practice, no source.)
H=$TMP/hostile
rm -rf "$H" && mkdir -p "$H"

# h_err_only: an error ends with empty stdout and a 'frostfit: ' stderr.
h_err_only() { expect_no_out; expect_err '^frostfit: '; }
# h_no_nan FILE: no NaN or infinity as a word anywhere in FILE.
h_no_nan() {
  if grep -Eiwq 'nan|-?inf(inity)?' "$1"; then bad "NaN/Inf in $(basename "$1")"
  else ok; fi
}
# h_ms: wall clock in milliseconds.
h_ms() { echo $(( $(date +%s%N) / 1000000 )); }
# h_fast START MAX_MS: the step since START took at most MAX_MS.
h_fast() {
  h_el=$(( $(h_ms) - $1 ))
  if [ "$h_el" -le "$2" ]; then ok; else bad "took $h_el ms (limit $2)"; fi
}

# A clean curve to spoil: water, one freeze (the simulator, synthetic).
"$FF" simulate --out "$H/good.csv" --seed 11 >/dev/null 2>&1
"$FF" simulate --bath-channel --out "$H/two.csv" --seed 12 >/dev/null 2>&1

# ---- logger files that are not logger files ----
: > "$H/empty.csv"
for c in inspect point; do
  CASE="$c: empty file"; run "$FF" $c "$H/empty.csv"
  expect_rc 2; h_err_only
  expect_err "empty.csv:1:1: expected a logger CSV .*found an empty file"
done

printf 'time_s,T (C)\n' > "$H/header.csv"
for c in inspect point; do
  CASE="$c: header only"; run "$FF" $c "$H/header.csv"
  expect_rc 2; h_err_only
  expect_err "header.csv:2:1: expected data rows below the header"
done

# Binary junk: an image header with NUL bytes, and high bytes without NUL.
printf '\211PNG\r\n\032\n\000\000\000\rIHDR\000\001\377\376junk,\n' \
  > "$H/junk.csv"
printf '\211PNG\r\n\032\n\377\376\375\200\201garbage\303(,,\n\233\234\n' \
  > "$H/junk2.csv"
CASE="inspect: binary junk with NUL bytes"; run "$FF" inspect "$H/junk.csv"
expect_rc 2; h_err_only; expect_err "junk.csv:[0-9]+:[0-9]+: .*NUL byte"
CASE="point: binary junk, no NUL"; run "$FF" point "$H/junk2.csv"
expect_rc 2; h_err_only
expect_err "junk2.csv:[0-9]+:1: expected rows of numbers"

# UTF-16, as some spreadsheet exports write it: LE with and without a
# byte-order mark, and BE with one.
python3 - "$H" <<'EOF'
import sys
d = sys.argv[1]
s = open(d + "/good.csv").read()
open(d + "/u16le.csv", "wb").write(b"\xff\xfe" + s.encode("utf-16-le"))
open(d + "/u16le_nobom.csv", "wb").write(s.encode("utf-16-le"))
open(d + "/u16be.csv", "wb").write(b"\xfe\xff" + s.encode("utf-16-be"))
EOF
for f in u16le u16le_nobom u16be; do
  CASE="point: UTF-16 ($f)"; run "$FF" point "$H/$f.csv"
  expect_rc 2; h_err_only
  expect_err "$f.csv:1:1: expected UTF-8 or Latin-1 text, found UTF-16"
done

# A 10 MB line with no line end, and a header of a million columns: both
# refused at once (line length limit), not read into memory field by field.
head -c 10000000 /dev/zero | tr '\0' '7' > "$H/long.csv"
awk 'BEGIN { printf "time_s"; for (i = 0; i < 1000000; i++) printf ",T%d (C)", i
             printf "\n0"; for (i = 0; i < 1000000; i++) printf ",1"
             printf "\n" }' > "$H/wide.csv"
for f in long wide; do
  CASE="inspect: $f"; t0=$(h_ms); run "$FF" inspect "$H/$f.csv"
  h_fast "$t0" 3000
  expect_rc 2; h_err_only
  expect_err "$f.csv:1:1: expected lines shorter than [0-9]+ bytes"
done
# 16 000 columns still fit the line limit: read and judged quickly.
awk 'BEGIN { printf "t"; for (i = 0; i < 16000; i++) printf ",T%d", i
             printf "\n"
             for (r = 0; r < 3; r++) { printf "%d", r
               for (i = 0; i < 16000; i++) printf ",1"; printf "\n" } }' \
  > "$H/wide16k.csv"
CASE="point: 16000 channels of 3 rows"; t0=$(h_ms)
run "$FF" point "$H/wide16k.csv"
h_fast "$t0" 5000
expect_rc 3; expect_no_out
expect_err "only 3 readings: at least 20 are needed"

# NaN and infinity cells (a logger's sensor-fault mark) count as missing
# readings; they never reach a result.
python3 - "$H" <<'EOF'
import sys
d = sys.argv[1]
s = open(d + "/good.csv").read().splitlines()
for k, v in ((50, "NaN"), (60, "-Infinity"), (70, "inf")):
    s[k] = s[k].split(",")[0] + "," + v
open(d + "/cells.csv", "w").write("\n".join(s) + "\n")
EOF
CASE="inspect: NaN and Inf cells"; run "$FF" inspect "$H/cells.csv"
expect_rc 0; expect_out 'rows: 1008 read, 1005 kept, 3 with no temperature'
h_no_nan "$OUT"
CASE="point: NaN and Inf cells"; run "$FF" point "$H/cells.csv"
expect_rc 0; expect_out 'freeze event'; h_no_nan "$OUT"
CASE="point --json: NaN and Inf cells"; run "$FF" point "$H/cells.csv" --json
expect_rc 0; expect_json; h_no_nan "$OUT"

# All-constant temperature: no freeze, no number.
awk 'BEGIN { print "time_s,T (C)"; for (i = 0; i < 500; i++) print i ",2.5" }' \
  > "$H/const.csv"
CASE="point: constant temperature"; run "$FF" point "$H/const.csv"
expect_rc 3; h_err_only
expect_err "no trustworthy freezing point"; expect_err "no freeze found"

# Time going backwards, and a repeated time stamp: inspect counts them.
python3 - "$H" <<'EOF'
import sys
d = sys.argv[1]
s = open(d + "/good.csv").read().splitlines()
back = s[:100] + [s[101], s[100]] + s[102:]
dup = s[:100] + [s[100], s[100].split(",")[0] + ",1.0"] + s[101:]
open(d + "/back.csv", "w").write("\n".join(back) + "\n")
open(d + "/dup.csv", "w").write("\n".join(dup) + "\n")
EOF
CASE="inspect: time going backwards"; run "$FF" inspect "$H/back.csv"
expect_rc 0
expect_out '1 with a time going backwards \(first on line 102\)'
CASE="inspect: duplicate time stamp"; run "$FF" inspect "$H/dup.csv"
expect_rc 0; expect_out '1 with a repeated time \(first on line 102\)'
CASE="point: duplicate time stamp"; run "$FF" point "$H/dup.csv"
expect_rc 0; h_no_nan "$OUT"

# A curve that never freezes (bath warmer than nucleation needs).
CASE="simulate: bath too warm to nucleate"
run "$FF" simulate --bath 1 --out "$H/nofreeze.csv"
expect_rc 0; expect_err 'never nucleates'
CASE="point: no freeze"; run "$FF" point "$H/nofreeze.csv"
expect_rc 3; h_err_only; expect_err "no freeze found"

# A freeze at the very end of the file: nucleation, then a few seconds.
"$FF" simulate --molality 0.1 --seed 7 --out "$H/sol.csv" >/dev/null 2>&1
nucl=$(awk -F, 'NR > 2 && $2 - prev > 0.2 { print NR; exit } { prev = $2 }' \
       "$H/sol.csv")
head -n $((nucl + 5)) "$H/sol.csv" > "$H/end.csv"
CASE="point: freeze at the end of the file (line $nucl)"
run "$FF" point "$H/end.csv"
expect_rc 3; h_err_only
expect_err "the file ends before the freezing branch can be fitted"

# A last row cut short (logger unplugged mid-write): two channels, the
# file ends inside the second field with no line end.
python3 - "$H" <<'EOF'
import sys
d = sys.argv[1]
s = open(d + "/two.csv").read().rstrip("\n").split("\n")
t, v = s[-1].split(",")[:2]
open(d + "/trunc.csv", "w").write("\n".join(s[:-1]) + "\n" + t + "," + v[:3])
n = len(s)
open(d + "/trunc.line", "w").write(str(n))
EOF
CASE="point: truncated last row"; run "$FF" point "$H/trunc.csv"
expect_rc 2; h_err_only
expect_err "trunc.csv:$(cat "$H/trunc.line"):3: expected 3 fields, found 2: the last row is cut short"

# ---- run sheets ----
"$FF" simulate --out "$H/b1.csv" --seed 2 >/dev/null 2>&1
for k in 1 2 3; do
  "$FF" simulate --out "$H/s$k.csv" --molality 0.1 --seed $((k + 2)) \
    >/dev/null 2>&1
done
"$FF" simulate --out "$H/s4.csv" --molality 0.2 --seed 8 >/dev/null 2>&1
HDR="run,file,role,solvent,solvent_g,solute,molality,particles,blank"

printf '%s\nA,b1.csv,blank,water,25,,,,B\nB,b1.csv,blank,water,25,,,,A\nC,s1.csv,sample,water,25,urea,0.1,1,A\n' \
  "$HDR" > "$H/loop.csv"
CASE="series: blanks in a loop"; run "$FF" series "$H/loop.csv" --mc 0
expect_rc 2
expect_err "loop.csv:2:9: column 'blank': blank 'B' leads back to run 'A': the blanks form a loop"
expect_err "loop.csv:4:9: column 'blank': blank 'A' \(line 2\) has a problem of its own"
expect_out 'no result'; h_no_nan "$OUT"
printf '%s\nA,s1.csv,sample,water,25,urea,0.1,1,B\nB,s2.csv,sample,water,25,urea,0.1,1,A\n' \
  "$HDR" > "$H/loop2.csv"
CASE="series: samples naming each other as blank"
run "$FF" series "$H/loop2.csv" --mc 0
expect_rc 2
expect_err "loop2.csv:2:9: column 'blank': run 'B' \(line 3\) has role 'sample', not blank"

for g in 0 -1 1e300; do
  printf 'run,file,role,solvent,solvent_g,solute,solute_g,formula,particles,blank\nB,b1.csv,blank,water,25,,,,,\nS,s1.csv,sample,water,%s,urea,1,CO(NH2)2,1,B\n' \
    "$g" > "$H/mass.csv"
  CASE="series: solvent_g $g"; run "$FF" series "$H/mass.csv" --mc 0
  expect_rc 2
  expect_err "mass.csv:3:5: column 'solvent_g': mass out of range: .* found '$g'"
  h_no_nan "$OUT"
done
printf 'run,file,role,solvent,solvent_g,solute,solute_g,formula,particles,blank\nB,b1.csv,blank,unobtainium,25,,,,,\nS,s1.csv,sample,water,25,urea,1,Xq(NH2)2,1,B\n' \
  > "$H/unk.csv"
CASE="series: unknown solvent, unknown element"
run "$FF" series "$H/unk.csv" --mc 0
expect_rc 2
expect_err "unk.csv:2:4: column 'solvent': unknown solvent 'unobtainium'"
expect_err "unk.csv:3:8: column 'formula': formula 'Xq\(NH2\)2': unknown element 'Xq'"

# The same hostile files given as a run sheet.
for f in empty junk u16le u16le_nobom wide; do
  CASE="series: $f as the run sheet"; run "$FF" series "$H/$f.csv" --mc 0
  expect_rc 2; h_err_only; expect_err "^frostfit: .*$f.csv"
done
printf '%s\n' "$HDR" > "$H/sheet_hdr.csv"
CASE="series: run sheet with a header only"
run "$FF" series "$H/sheet_hdr.csv" --mc 0
expect_rc 2; h_err_only; expect_err "has a header but no runs"

# ---- absurd numbers on the command line ----
for g in 0 -1; do
  CASE="mass: --solvent-g $g"
  run "$FF" mass --solvent water --solvent-g "$g" --solute-g 1 --dt 0.5 --mc 0
  expect_rc 2; h_err_only; expect_err "solvent-g must be positive"
done
for v in nan inf 1e400; do
  CASE="mass: --solute-g $v"
  run "$FF" mass --solvent water --solvent-g 25 --solute-g "$v" --dt 0.5
  expect_rc 1; h_err_only; expect_err "expects a number, found '$v'"
done
CASE="mass: no depression"
run "$FF" mass --solvent water --solvent-g 25 --solute-g 1 --tf-blank 0 \
  --tf-sample 0 --mc 0
expect_rc 2; h_err_only; expect_err "must freeze below its blank"
CASE="mass: --kf 0"; run "$FF" mass --kf 0 --solvent-g 25 --solute-g 1 --dt 0.5
expect_rc 2; h_err_only; expect_err "kf must be positive"
CASE="mass: unknown solvent"
run "$FF" mass --solvent unobtainium --solvent-g 25 --solute-g 1 --dt 0.5
expect_rc 2; h_err_only; expect_err "unknown solvent 'unobtainium'"
CASE="simulate: unknown solvent"
run "$FF" simulate --solvent unobtainium --out "$H/never.csv"
expect_rc 2; h_err_only; expect_err "unknown solvent 'unobtainium'"
if [ ! -e "$H/never.csv" ]; then ok; else bad "wrote a curve anyway"; fi

# ---- hostile names with --figures run nothing ----
# Run ids and a solute name with backquotes, $(...), quotes, a pipe and a
# gnuplot system() call; one id with a line break (quoted field). None may
# create the marker file, whether or not gnuplot renders.
MARK=$H/pwned
python3 - "$H" "$MARK" <<'EOF'
import csv, sys
d, mark = sys.argv[1], sys.argv[2]
blank = "B`touch %s`" % mark
sol = "u'; system('touch %s') #`touch %s`" % (mark, mark)
rows = [["run", "file", "role", "solvent", "solvent_g", "solute", "molality",
         "particles", "blank"],
        [blank, "b1.csv", "blank", "water", "25", "", "", "", ""],
        ["S1$(touch %s)" % mark, "s1.csv", "sample", "water", "25", sol,
         "0.1", "1", blank],
        ["S2\" '|touch %s" % mark, "s2.csv", "sample", "water", "25", sol,
         "0.1", "1", blank],
        ["S4 |touch %s" % mark, "s4.csv", "sample", "water", "25", sol,
         "0.2", "1", blank],
        ["S3\n'|touch %s" % mark, "s3.csv", "sample", "water", "25", sol,
         "0.1", "1", blank]]
with open(d + "/evil.csv", "w", newline="") as f:
    csv.writer(f, lineterminator="\n").writerows(rows)
EOF
CASE="series --figures: hostile run ids and solute"
run "$FF" series "$H/evil.csv" --mc 0 --figures "$H/evilfig"
expect_rc 2
expect_err "evil.csv:6:1: column 'run': control character in 'S3"
if [ ! -e "$MARK" ]; then ok; else bad "a name ran a command"; fi
n_gp=$(ls "$H/evilfig" 2>/dev/null | grep -c '\.gp$')
if [ "$n_gp" -ge 5 ]; then ok; else bad "only $n_gp figure scripts"; fi
if command -v gnuplot >/dev/null 2>&1; then
  (cd "$H/evilfig" && gnuplot render.gp >/dev/null 2>&1)
  if [ ! -e "$MARK" ]; then ok; else bad "re-running the scripts ran a command"; fi
fi

# ---- outputs: never over an input, atomic, nothing left behind ----
cp "$H/b1.csv" "$H/keep_b1.csv"
printf '%s\nB,b1.csv,blank,water,25,,,,\nS1,s1.csv,sample,water,25,urea,0.1,1,B\nS2,s2.csv,sample,water,25,urea,0.1,1,B\nS3,s3.csv,sample,water,25,urea,0.1,1,B\n' \
  "$HDR" > "$H/one.csv"
cp "$H/one.csv" "$H/keep_one.csv"
CASE="series --csv over the sheet"
run "$FF" series "$H/one.csv" --mc 0 --csv "$H/one.csv"
expect_rc 1; h_err_only; expect_err "is one of the inputs; refusing"
if cmp -s "$H/one.csv" "$H/keep_one.csv"; then ok; else bad "sheet changed"; fi
CASE="series --csv over a data file (other spelling)"
run "$FF" series "$H/one.csv" --mc 0 --csv "$H/./b1.csv"
expect_rc 1; h_err_only; expect_err "is one of the inputs; refusing"
if cmp -s "$H/b1.csv" "$H/keep_b1.csv"; then ok; else bad "data changed"; fi

mkdir -p "$H/figin"
cp "$H/s1.csv" "$H/figin/run_S1.dat"
printf '%s\nB,b1.csv,blank,water,25,,,,\nS1,figin/run_S1.dat,sample,water,25,urea,0.1,1,B\n' \
  "$HDR" > "$H/figin.csv"
CASE="series --figures: a figure would replace an input"
run "$FF" series "$H/figin.csv" --mc 0 --figures "$H/figin"
expect_rc 1; h_err_only; expect_err "holds the input .*run_S1.dat"
if cmp -s "$H/figin/run_S1.dat" "$H/s1.csv"; then ok; else bad "input replaced"; fi
if [ ! -e "$H/figin/render.gp" ]; then ok; else bad "figures written anyway"; fi
CASE="series --figures: inputs in the folder under other names are fine"
run env PATH=/nonexistent "$FF" series "$H/one.csv" --mc 0 --figures "$H"
expect_rc 3; expect_err "figure scripts in"
if cmp -s "$H/b1.csv" "$H/keep_b1.csv"; then ok; else bad "data changed"; fi

cp "$ROOT/datasets/solvents.csv" "$H/mysolv.csv"
cp "$H/mysolv.csv" "$H/keep_solv.csv"
CASE="simulate --out over its solvent table"
run "$FF" simulate --solvents-file "$H/mysolv.csv" --out "$H/mysolv.csv"
expect_rc 1; h_err_only; expect_err "refusing to overwrite"
if cmp -s "$H/mysolv.csv" "$H/keep_solv.csv"; then ok; else bad "table changed"; fi

# A write that fails at the rename (the target is a folder) leaves no
# temporary file; one that succeeds replaces an old file with a whole one.
mkdir -p "$H/isdir.csv"
CASE="simulate --out a folder"; run "$FF" simulate --out "$H/isdir.csv"
expect_rc 4; h_err_only; expect_err "cannot write .*isdir.csv"
CASE="series --csv a folder"
run "$FF" series "$H/one.csv" --mc 0 --csv "$H/isdir.csv"
expect_rc 4; expect_err "cannot write .*isdir.csv"
echo "old, half a line" > "$H/res.csv"
CASE="series --csv replaces an old file"
run "$FF" series "$H/one.csv" --mc 0 --csv "$H/res.csv"
expect_rc 3
if head -1 "$H/res.csv" | grep -q '^section,run,'; then ok
else bad "res.csv not replaced"; fi
h_no_nan "$H/res.csv"
left=$(find "$H" -name '.frostfit-*' -o -name '.ff-tmp.*' | head -3)
if [ -z "$left" ]; then ok; else bad "temporary files left: $left"; fi

# SIGINT: a series over a big sheet (the demo lab 20 times over) is
# interrupted at several moments; the CSV is then absent or exactly the
# complete one, every figure file present is complete, and no temporary
# file is left. Figures as scripts only (no gnuplot on PATH), so every
# moment falls in frostfit itself; most of its time goes into writing them.
# python restores SIGINT's default action, then becomes frostfit (same pid).
# Before termination signals were held while a temporary file exists, half
# of such interruptions left a '.ff-tmp.*' file in the figure folder (30
# tries): seven interruptions among the figures catch that nearly always.
python3 - "$ROOT/datasets/demo" "$H/big.csv" <<'EOF2'
import csv, os, sys
demo, out = sys.argv[1], sys.argv[2]
lines = [l for l in open(demo + "/sheet.csv", newline="")
         if not l.startswith("#")]
rows = list(csv.reader(lines))
hdr = rows[0]
ci = {n: hdr.index(n) for n in ("run", "file", "blank", "solute")}
with open(out, "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(hdr)
    for k in range(20):
        for r in rows[1:]:
            r = list(r)
            r[ci["run"]] += "-%d" % k
            r[ci["file"]] = os.path.join(demo, r[ci["file"]])
            if r[ci["blank"]]:
                r[ci["blank"]] += "-%d" % k
            if r[ci["solute"]]:
                r[ci["solute"]] += " %d" % k
            w.writerow(r)
EOF2
mkdir -p "$H/sig"
env PATH=/nonexistent "$FF" series "$H/big.csv" --mc 0 --csv "$H/sig/ref.csv" \
  --figures "$H/sig/reffig" >/dev/null 2>&1
n_int=0
# "start": as soon as python has handed over (analysis still running);
# the others: that long after the figure folder appears (figures being
# written: one file after another, well over a second of work).
for delay in start 0 0.02 0.05 0.1 0.15 0.2 0.3; do
  rm -rf "$H/sig/out.csv" "$H/sig/fig" "$H/sig/go"
  python3 -c 'import os, signal, sys
signal.signal(signal.SIGINT, signal.SIG_DFL)
open(sys.argv[1], "w").close()
os.environ["PATH"] = "/nonexistent"
os.execv(sys.argv[2], sys.argv[2:])' "$H/sig/go" "$FF" series "$H/big.csv" \
    --mc 0 --csv "$H/sig/out.csv" --figures "$H/sig/fig" >/dev/null 2>&1 &
  pid=$!
  # A background job of a script starts with SIGINT ignored: wait until
  # python has restored the default (it writes 'go' just after).
  w=0
  while [ ! -e "$H/sig/go" ] && [ $w -lt 500 ]; do sleep 0.01; w=$((w + 1)); done
  if [ "$delay" != start ]; then
    while [ ! -d "$H/sig/fig" ] && [ $w -lt 1000 ] && kill -0 "$pid" 2>/dev/null
    do sleep 0.01; w=$((w + 1)); done
    sleep "$delay"
  fi
  kill -INT "$pid" 2>/dev/null
  wait "$pid"
  [ $? = 130 ] && n_int=$((n_int + 1))
  CASE="series interrupted ($delay)"
  if [ ! -e "$H/sig/out.csv" ] || cmp -s "$H/sig/out.csv" "$H/sig/ref.csv"
  then ok; else bad "half-written CSV"; fi
  part=0
  for f in "$H"/sig/fig/*; do
    [ -f "$f" ] || continue
    cmp -s "$f" "$H/sig/reffig/$(basename "$f")" || part=$((part + 1))
  done
  if [ "$part" = 0 ]; then ok; else bad "$part figure files incomplete"; fi
  left=$(find "$H/sig" -name '.frostfit-*' -o -name '.ff-tmp.*' | head -3)
  if [ -z "$left" ]; then ok; else bad "temporary files left: $left"; fi
done
CASE="series interrupted: the signal did stop it"
if [ "$n_int" -ge 5 ]; then ok; else bad "only $n_int of 8 runs interrupted"; fi

# ---- numerically degenerate series: exit 3 with a reason, no NaN ----
CASE="series: all runs at one concentration"
run "$FF" series "$H/one.csv" --mc 1000
expect_rc 3; expect_err "runs at only 1 distinct molality, need 2"
expect_out 'no fit'; h_no_nan "$OUT"
CASE="series --json: all runs at one concentration"
run "$FF" series "$H/one.csv" --mc 1000 --json
expect_rc 3; expect_json; h_no_nan "$OUT"
printf 'run,file,role,solvent,solvent_g,solute,solute_g,blank\nB,b1.csv,blank,water,25,,,\nU1,s1.csv,unknown,water,25,X,0.15,B\nU2,s2.csv,unknown,water,25,X,0.15,B\nU3,s3.csv,unknown,water,25,X,0.15,B\n' \
  > "$H/unk1.csv"
CASE="series: unknowns at one concentration"
run "$FF" series "$H/unk1.csv" --mc 0 --csv "$H/unk1_out.csv"
expect_rc 3; expect_err "all 3 runs at one concentration, cannot extrapolate"
h_no_nan "$OUT"; h_no_nan "$H/unk1_out.csv"
# Two distinct molalities over three runs: the association model (three
# parameters) cannot be fitted and says so; the others are fine.
printf '%s\nB,b1.csv,blank,water,25,,,,\nS1,s1.csv,sample,water,25,urea,0.1,1,B\nS2,s2.csv,sample,water,25,urea,0.1,1,B\nS4,s4.csv,sample,water,25,urea,0.2,1,B\n' \
  "$HDR" > "$H/sing.csv"
CASE="series: a model with too few distinct points"
run "$FF" series "$H/sing.csv" --mc 1000 --csv "$H/sing_out.csv"
expect_rc 0; expect_out 'association +not fitted: '
h_no_nan "$OUT"; h_no_nan "$H/sing_out.csv"
# Two runs of a solute: too few for any fit; said, and the runs still count
# (no fit was needed for their own results).
head -n 4 "$H/one.csv" > "$H/few.csv"
CASE="series: two runs, no fit"; run "$FF" series "$H/few.csv" --mc 0
expect_rc 0; expect_err "2 runs, too few to extrapolate \(3 needed\)"
h_no_nan "$OUT"
