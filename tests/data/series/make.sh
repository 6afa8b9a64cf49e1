#!/bin/sh
# make.sh - regenerates the synthetic curves of the series fixtures with
# `frostfit simulate` (data are synthetic, labelled so in each header).
# Usage: tests/data/series/make.sh PATH/TO/frostfit
#
# water.csv: T1 pure water (blank), T2..T5 NaCl at 0.005, 0.01, 0.05,
#   0.1 mol/kg in 50.00 g water; i from the Pitzer-model values of
#   shared/REFERENCES.md section 3.1 (computed [C]: 1.954, 1.938, 1.889,
#   1.866). The molality simulated is the one the sheet's masses give
#   (solute_g / 58.44 g/mol / 0.050 kg; 58.44 = IUPAC 2021 abridged Na + Cl).
# cyclohexane.csv: T1 pure cyclohexane (blank), T2, T3 an "unknown"
#   (naphthalene, 128.17 g/mol from the same atomic weights, i = 1) at
#   0.0513 g and 0.1025 g in 20.00 g.
# The probe is the simulator's default digital thermometer (2 mK noise,
# 1 mK steps), sampled every 1 s: each curve has about 1000 samples.
# (With a thermistor-grade probe, 0.5 mK noise, the Debye-Huckel interval
# of nu becomes narrower than the model-form bias of fitting B m + C m^2 to
# Pitzer-model data, about +0.005, and misses 2: the intervals are
# statistical only.)
set -eu
FF=${1:?usage: make.sh PATH/TO/frostfit}
HERE=$(cd "$(dirname "$0")" && pwd)
TMP=$(mktemp -d)
trap 'rm -rf "$TMP"' EXIT
probe="--noise 0.002 --resolution 0.001 --dt 1"

sim() { # name solvent solvent_g molality i seed
  "$FF" simulate --solvent "$2" --solvent-g "$3" --molality "$4" --i "$5" \
    --seed "$6" $probe --out "$TMP/$1.csv" >/dev/null 2>&1
}
m() { python3 -c "print($1 / $2 / ($3 / 1000.0))"; }

sim w1 water 50 0 1 11
sim w2 water 50 "$(m 0.0146 58.44 50)" 1.954 12
sim w3 water 50 "$(m 0.0292 58.44 50)" 1.938 13
sim w4 water 50 "$(m 0.1461 58.44 50)" 1.889 14
sim w5 water 50 "$(m 0.2922 58.44 50)" 1.866 15
sim c1 cyclohexane 20 0 1 21
sim c2 cyclohexane 20 "$(m 0.0513 128.17 20)" 1 22
sim c3 cyclohexane 20 "$(m 0.1025 128.17 20)" 1 23

# Joins single-channel curves on their common time grid (shortest wins).
python3 - "$TMP" "$HERE" <<'PY'
import sys, csv
tmp, here = sys.argv[1], sys.argv[2]
def load(n):
    with open(f"{tmp}/{n}.csv") as f:
        rows = [r for r in csv.reader(f) if r and not r[0].startswith('#')]
    return rows[1:]
def join(out, names, note):
    cols = [load(n) for n in names]
    n = min(len(c) for c in cols)
    with open(f"{here}/{out}", "w") as f:
        f.write(f"# synthetic data from frostfit simulate: {note}\n")
        f.write("time_s," + ",".join(f"T{k+1} (C)" for k in range(len(names))) + "\n")
        for i in range(n):
            f.write(cols[0][i][0] + "," + ",".join(c[i][1] for c in cols) + "\n")
join("water.csv", ["w1", "w2", "w3", "w4", "w5"], "blank and NaCl in water")
join("cyclohexane.csv", ["c1", "c2", "c3"], "blank and an unknown in cyclohexane")
PY
