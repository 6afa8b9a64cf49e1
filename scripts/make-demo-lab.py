#!/usr/bin/env python3
"""make-demo-lab.py - regenerate the synthetic demo lab in datasets/demo/.

Every curve comes from `frostfit simulate` with the parameters listed in
RUNS below (fixed seeds), then is written in the dialect of one of three
invented loggers.  The data are synthetic; see datasets/demo/README.md.

Usage: scripts/make-demo-lab.py [PATH/TO/frostfit]
"""
import csv
import datetime as dt
import json
import os
import random
import subprocess
import sys
import tempfile

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
OUT = os.path.join(ROOT, "datasets", "demo")
FF = sys.argv[1] if len(sys.argv) > 1 else os.path.join(ROOT, "build", "frostfit")

# van 't Hoff factors of the salts: the Pitzer-model values at the freezing
# point tabulated in the project's reference notes (shared REFERENCES.md
# section 3.1, computed with Harvie-Moller-Weare 1984 parameters). Urea is
# taken as ideal (i = 1) by construction.
NACL = {0.001: 1.978, 0.005: 1.954, 0.010: 1.938, 0.050: 1.889, 0.100: 1.866}
CACL2 = {0.001: 2.891, 0.005: 2.790, 0.010: 2.733, 0.050: 2.612, 0.100: 2.593}
MGSO4 = {0.001: 1.800, 0.005: 1.606, 0.010: 1.508, 0.050: 1.291, 0.100: 1.206}
M_UNKNOWN = 152.15   # g/mol of "additive X" (the answer the lab should find)

# run, logger, solvent, solvent_g, solute, formula, particles, molality or
# (solute_g), i, supercooling K, seed, extra simulate options, note
RUNS = []


def add(run, logger, solute, m, i, sc, seed, extra=(), solvent="water",
        solvent_g=25.0, solute_g=None, formula="", particles="", role="sample",
        note=""):
    RUNS.append(dict(run=run, logger=logger, solute=solute, m=m, i=i, sc=sc,
                     seed=seed, extra=list(extra), solvent=solvent,
                     solvent_g=solvent_g, solute_g=solute_g, formula=formula,
                     particles=particles, role=role, note=note))


add("W-B1", "A", "", 0.0, 1.0, 1.2, 101, role="blank", note="pure water, logger A")
add("W-B2", "B", "", 0.0, 1.0, 0.8, 102, role="blank", note="pure water, logger B")
seed = 200
for k, m in enumerate([0.10, 0.20, 0.40, 0.80]):
    add(f"UREA-{m:.2f}", "A", "urea", m, 1.0, [0.6, 1.4, 2.1, 2.5][k], seed + k,
        formula="CO(NH2)2", particles=1)
for k, (m, i) in enumerate(NACL.items()):
    add(f"NACL-{m:.3f}", "A", "sodium chloride", m, i, [1.2, 0.9, 1.6, 2.4, 1.1][k],
        seed + 10 + k, formula="NaCl", particles=2)
add("NACL-0.050r", "A", "sodium chloride", 0.050, NACL[0.050], 0.7, seed + 18,
    formula="NaCl", particles=2, note="replicate")
for k, (m, i) in enumerate(CACL2.items()):
    add(f"CACL2-{m:.3f}", "B", "calcium chloride", m, i, [0.9, 1.3, 0.5, 2.2, 1.7][k],
        seed + 20 + k, formula="CaCl2*2H2O", particles=3)
for k, (m, i) in enumerate(MGSO4.items()):
    add(f"MGSO4-{m:.3f}", "B", "magnesium sulfate", m, i, [1.4, 1.0, 2.5, 0.6, 1.5][k],
        seed + 30 + k, formula="MgSO4", particles=2)
add("NACL-0.100r", "A", "sodium chloride", 0.100, NACL[0.100], 1.8, seed + 19,
    extra=["--lag", "45", "--freeze-s", "200"], formula="NaCl", particles=2,
    note="deliberately flawed: slow probe (45 s lag) and a short record")
add("C-B1", "C", "", 0.0, 1.0, 1.0, 301, solvent="cyclohexane",
    solvent_g=20.00, role="blank", note="pure cyclohexane, logger C")
for k, g in enumerate([0.0610, 0.1220, 0.2440]):
    m = g / M_UNKNOWN / 0.020
    add(f"X-{k + 1}", "C", "additive X", m, 1.0, [0.8, 1.5, 1.2][k], 310 + k,
        solvent="cyclohexane", solvent_g=20.00, solute_g=g, role="unknown")


def simulate(r):
    with tempfile.NamedTemporaryFile(suffix=".csv", delete=False) as f:
        path = f.name
    sc_args = ["--supercool", str(r["sc"])]
    args = [FF, "simulate", "--solvent", r["solvent"],
            "--solvent-g", str(r["solvent_g"]), "--molality", f"{r['m']:.6f}",
            "--i", str(r["i"]), "--seed", str(r["seed"]), "--dt", "1",
            "--noise", "0.0015", "--resolution", "0.001", "--lag", "2",
            "--freeze-s", "700", "--json", "--out", path] + sc_args + r["extra"]
    info = json.loads(subprocess.run(args, check=True, capture_output=True,
                                     text=True).stdout)
    with open(path, newline="") as f:
        rows = list(csv.reader(f))[1:]
    os.unlink(path)
    t = [float(a) for a, _ in rows]
    y = [float(b) if b else None for _, b in rows]
    return t, y, info, " ".join(args[2:-3] + sc_args + r["extra"])


def bath_trace(n, bath_c, seed):
    rnd = random.Random(seed)
    return [bath_c + rnd.gauss(0.0, 0.004) for _ in range(n)]


def write_logger_a(name, t, y, bath):
    """Logger A: comma separated, seconds, degrees C, a bath probe column."""
    with open(os.path.join(OUT, name), "w", newline="") as f:
        f.write("time_s,sample (°C),bath (°C)\n")
        for a, b, c in zip(t, y, bath):
            f.write(f"{a:g},{'' if b is None else f'{b:.3f}'},{c:.3f}\n")


def write_logger_b(name, t, y, bath, start):
    """Logger B: metadata lines, semicolons, decimal comma, clock time, CRLF."""
    with open(os.path.join(OUT, name), "w", newline="") as f:
        f.write("Instrument;Logger B (synthetic)\r\n")
        f.write(f"Date;{start:%Y-%m-%d}\r\nOperator;demo\r\n\r\n")
        f.write("Time;Probe 1 [°C];Bath [°C]\r\n")
        for a, b, c in zip(t, y, bath):
            clock = (start + dt.timedelta(seconds=a)).strftime("%H:%M:%S")
            v = "" if b is None else f"{b:.3f}".replace(".", ",")
            bc = f"{c:.3f}".replace(".", ",")
            f.write(f"{clock};{v};{bc}\r\n")


def write_logger_c(name, t, y, start):
    """Logger C: tab separated, ISO 8601 time stamps with offset, kelvin."""
    with open(os.path.join(OUT, name), "w", newline="") as f:
        f.write("# Logger C (synthetic) export\n")
        f.write("timestamp\tT_sample [K]\n")
        for a, b in zip(t, y):
            stamp = (start + dt.timedelta(seconds=a)).isoformat(timespec="seconds")
            v = "" if b is None else f"{b + 273.15:.3f}"
            f.write(f"{stamp}\t{v}\n")


def main():
    os.makedirs(OUT, exist_ok=True)
    sheet = []
    params = []
    start = dt.datetime(2026, 1, 14, 9, 0, 0)
    tz = dt.timezone(dt.timedelta(hours=1))
    for k, r in enumerate(RUNS):
        t, y, info, cmd = simulate(r)
        name = f"{r['run'].lower()}.csv"
        bath = bath_trace(len(t), info["parameters"].get("bath_c", -6.0), 900 + k)
        when = start + dt.timedelta(minutes=40 * k)
        if r["logger"] == "A":
            write_logger_a(name, t, y, bath)
        elif r["logger"] == "B":
            write_logger_b(name, t, y, bath, when)
        else:
            write_logger_c(name, t, y, when.replace(tzinfo=tz))
        blank = {"A": "W-B1", "B": "W-B2", "C": "C-B1"}[r["logger"]]
        row = dict(run=r["run"], file=name, channel=1, cycle=1, role=r["role"],
                   solvent=r["solvent"], solvent_g=f"{r['solvent_g']:.2f}",
                   solute=r["solute"], solute_g="", molality="", formula=r["formula"],
                   particles=r["particles"], blank="" if r["role"] == "blank" else blank,
                   note=r["note"])
        if r["role"] == "unknown":
            row["solute_g"] = f"{r['solute_g']:.4f}"
        elif r["role"] == "sample":
            row["molality"] = f"{r['m']:.3f}"
        sheet.append(row)
        params.append(dict(run=r["run"], file=name, logger=r["logger"],
                           true_freezing_point_c=info["true_freezing_point_c"],
                           simulate=cmd))
    cols = ["run", "file", "channel", "cycle", "role", "solvent", "solvent_g",
            "solute", "solute_g", "molality", "formula", "particles", "blank", "note"]
    with open(os.path.join(OUT, "sheet.csv"), "w", newline="") as f:
        f.write("# Demo lab run sheet (synthetic data, see README.md)\n")
        w = csv.DictWriter(f, fieldnames=cols, lineterminator="\n")
        w.writeheader()
        w.writerows(sheet)
    with open(os.path.join(OUT, "truth.csv"), "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=["run", "file", "logger",
                                          "true_freezing_point_c", "simulate"],
                           lineterminator="\n")
        w.writeheader()
        w.writerows(params)


if __name__ == "__main__":
    main()
