#!/usr/bin/python3
"""ref-formula.py - regenerates the reference numbers that tests/test_formula.c
checks frostfit's atomic weights and formula weights against.

Reference: the Python library `periodictable` (Debian 12 package
python3-periodictable, version 1.6.0). It is a general-purpose reference
library, NOT part of frostfit, and only a development tool: `make check` and
the unit tests never run it (the C tests carry its numbers as literals).

Its element masses are the NIST compilation of the IUPAC "Atomic Weights of
the Elements 1999" with the 2001 changes (see periodictable/mass.py), not the
IUPAC CIAAW 2021 abridged table that frostfit's datasets/atomic_weights.csv
(loaded by src/formula.c) carries. So:
  * elements CIAAW revised after 2001 (e.g. Zn, Ge, Se, Mo, Cd) differ by
    more than the rounding of the abridged table: this script REPORTS those
    differences, it does not hide them;
  * interval elements (H, Li, B, C, N, O, Mg, Si, S, Cl, Ar, Br, Tl, Pb)
    carry a 2021 conventional value where periodictable has a 1999 best
    value with an uncertainty; differences of order 1e-3 g/mol are expected.

Per element it prints our weight, periodictable's weight and the
uncertainty its data file states, the difference (ours - periodictable),
half a unit in the last digit our table prints (abridged-table rounding),
and the tolerance = rounding + periodictable's uncertainty (+ the size of a
CIAAW revision after 2001 where one is listed in REVISIONS), flagging
differences beyond rounding + uncertainty. Then periodictable's molar mass of every formula
used in tests/test_formula.c, tests/test_sheet.c, tests/test_series.c and
the demo lab sheet (datasets/demo/sheet.csv, column 'formula'), beside the
mass our table gives for the same atoms.

Usage (from the repository root):  scripts/ref-formula.py [--c]
  --c  print the rows as C initializers for tests/test_formula.c instead:
       elements {symbol, periodictable weight, tolerance} and formulas
       {frostfit text, periodictable molar mass, tolerance}, where a
       formula's tolerance is the sum over its atoms of count * element
       tolerance (worst case: every atom off in the same direction).
Output: plain text on stdout; exit 1 when the table or the sheet cannot be
read.
"""
import csv
import math
import os
import re
import sys

import periodictable as pt
import periodictable.mass as ptmass

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), os.pardir)
TABLE = os.path.join(ROOT, "datasets", "atomic_weights.csv")
DEMO_SHEET = os.path.join(ROOT, "datasets", "demo", "sheet.csv")

# Elements whose standard atomic weight CIAAW revised after the 2001 data
# periodictable carries by more than rounding + periodictable's uncertainty:
# the size of the revision is added to that element's tolerance. The
# revised values are from memory (CIAAW revision, year); they are the only
# numbers here that periodictable does not supply.
REVISIONS = {
    "Zn": (0.029, "CIAAW 2007 revision 65.409(4) -> 65.38(2), from memory"),
}

# Formulas the C tests use, in frostfit's notation, with the same formula in
# periodictable's notation ('+' joins a hydrate or adduct part, only round
# brackets, no charge suffix: a charge does not change the mass here).
TEST_FORMULAS = [
    # (frostfit text, periodictable text, where it is used)
    ("NaCl", "NaCl", "test_formula, test_sheet, demo"),
    ("C12H22O11", "C12H22O11", "test_formula (sucrose)"),
    ("CuSO4*5H2O", "CuSO4+5H2O", "test_formula, test_sheet"),
    ("CuSO4", "CuSO4", "test_formula, test_sheet (anhydrous part)"),
    ("CO(NH2)2", "CO(NH2)2", "test_formula, demo (urea)"),
    ("CH4N2O", "CH4N2O", "test_formula (urea)"),
    ("C6H5COOH", "C6H5COOH", "test_formula (benzoic acid)"),
    ("C6H12O6", "C6H12O6", "test_formula (glucose)"),
    ("MgSO4.7H2O", "MgSO4+7H2O", "test_formula"),
    ("MgSO4", "MgSO4", "demo"),
    ("K4[Fe(CN)6]", "K4Fe(CN)6", "test_formula (potassium ferrocyanide)"),
    ("CaCl2*2H2O", "CaCl2+2H2O", "demo"),
    ("CaCl2", "CaCl2", "demo (anhydrous part)"),
    ("C10H8", "C10H8", "test_series, tests/data/series (naphthalene)"),
    ("CaSO4*0.5H2O", "CaSO4+0.5H2O", "test_formula (hemihydrate)"),
    ("Na2CO3*H2O2", "Na2CO3+H2O2", "test_formula (adduct)"),
    ("H2O", "H2O", "test_formula, hydrate water"),
    ("SO4^2-", "SO4", "test_formula (charge suffix)"),
    ("NH4^+", "NH4", "test_formula (charge suffix)"),
    ("[Fe(CN)6]^4-", "Fe(CN)6", "test_formula (charge suffix)"),
]


def read_table(path):
    """Rows of the atomic-weight CSV: (symbol, z, weight text)."""
    rows = []
    with open(path, newline="", encoding="utf-8") as f:
        lines = [ln for ln in f if ln.strip() and not ln.startswith("#")]
    for r in csv.DictReader(lines):
        rows.append((r["symbol"], int(r["z"]), r["weight_g_mol"]))
    return rows


def half_last_digit(text):
    """Half a unit in the last digit of a decimal written as text."""
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 0.5 * 10.0 ** (-decimals)


def pt_uncertainties():
    """Element -> uncertainty of periodictable's average mass, from the
    'value(uncertainty)' strings of its data table (periodictable.mass)."""
    unc = {}
    for line in ptmass.massdata.split("\n"):
        isotope, _m, _p, avg = line.split(",")
        sym = isotope.split("-")[1]
        m = re.fullmatch(r"([0-9.]+)\((\d+)\)", avg)
        if m is None:
            continue  # '[nominal]' mass: no standard atomic weight
        value, digits = m.group(1), m.group(2)
        decimals = len(value.split(".")[1]) if "." in value else 0
        unc[sym] = int(digits) * 10.0 ** (-decimals)
    return unc


def demo_formulas(path):
    with open(path, newline="", encoding="utf-8") as f:
        lines = [ln for ln in f if ln.strip() and not ln.startswith("#")]
    return sorted({r["formula"] for r in csv.DictReader(lines)
                   if r.get("formula")})


def element_rows(table, unc):
    """(sym, z, weight text, w_pt, U_pt, rounding, revision, note) rows."""
    rows = []
    for sym, z, wtext in table:
        w_pt = pt.elements.symbol(sym).mass
        u = unc.get(sym, float("nan"))
        rev, why = REVISIONS.get(sym, (0.0, ""))
        rows.append((sym, z, wtext, w_pt, u, half_last_digit(wtext), rev, why))
    return rows


def print_c(rows, ours):
    tol = {r[0]: r[5] + r[4] + r[6] for r in rows}
    print("/* scripts/ref-formula.py --c: periodictable %s (Debian 12 "
          "python3-periodictable), computed */" % pt.__version__)
    for sym, _z, _w, w_pt, u, h, rev, why in rows:
        extra = " + %.3g revision: %s" % (rev, why) if rev else ""
        print('  { "%s", %.10g, %.3g }, /* %.3g rounding + %.3g U(pt)%s */'
              % (sym, w_pt, tol[sym], h, u, extra))
    print()
    for text, pt_text, where in TEST_FORMULAS:
        f = pt.formula(pt_text)
        t = sum(n * tol[el.symbol] for el, n in f.atoms.items())
        t = math.ceil(t * 1e4 - 1e-9) / 1e4  # printed rounded up, never down
        print('  { "%s", %.5f, %.4f }, /* %s */' % (text, f.mass, t, where))
    return 0


def main():
    try:
        table = read_table(TABLE)
        demo = demo_formulas(DEMO_SHEET)
    except (OSError, KeyError, ValueError) as e:
        print("ref-formula: %s" % e, file=sys.stderr)
        return 1
    unc = pt_uncertainties()
    ours = {sym: float(w) for sym, _z, w in table}
    rows = element_rows(table, unc)
    if sys.argv[1:] == ["--c"]:
        return print_c(rows, ours)
    if sys.argv[1:]:
        print("usage: scripts/ref-formula.py [--c]", file=sys.stderr)
        return 1

    print("# periodictable %s (Debian 12 python3-periodictable), computed;"
          % pt.__version__)
    print("# its masses: IUPAC Atomic Weights 1999 + 2001 changes (NIST "
          "compilation); ours: %s" % os.path.relpath(TABLE, ROOT))
    print("# diff = ours - periodictable; round = half the last digit of "
          "ours; base = round + U(periodictable)")
    print("%-3s %3s %10s %12s %9s %10s %8s %9s  %s" % (
        "sym", "z", "ours", "periodictab", "U(pt)", "diff", "round",
        "base", "note"))
    beyond = []
    for sym, z, wtext, w_pt, u, h, rev, why in rows:
        base = h + u
        diff = ours[sym] - w_pt
        # 1e-12: the tabulated decimals are not exact in binary.
        note = "" if abs(diff) <= base + 1e-12 else "BEYOND rounding + U(pt)"
        if note:
            beyond.append(sym)
            if rev:
                note += "; %s" % why
        print("%-3s %3d %10s %12.7g %9.2g %+10.5f %8.0e %9.5f  %s" % (
            sym, z, wtext, w_pt, u, diff, h, base, note))
    print("# %d elements; beyond rounding + U(pt): %s" % (
        len(table), " ".join(beyond) if beyond else "none"))

    print()
    print("# molar masses, g/mol: periodictable.formula(...).mass, and the "
          "same atoms weighed with our table")
    print("%-14s %-14s %12s %12s %9s  %s" % (
        "frostfit", "periodictable", "M(pt)", "M(ours)", "diff", "used in"))
    known = {t for t, _p, _w in TEST_FORMULAS}
    missing = [f for f in demo if f not in known]
    for text, pt_text, where in TEST_FORMULAS:
        f = pt.formula(pt_text)
        m_ours = sum(n * ours[el.symbol] for el, n in f.atoms.items())
        print("%-14s %-14s %12.5f %12.5f %+9.5f  %s" % (
            text, pt_text, f.mass, m_ours, m_ours - f.mass, where))
    if missing:
        print("# demo sheet formulas not in the list above: %s"
              % " ".join(missing))
    return 0


if __name__ == "__main__":
    sys.exit(main())
