#!/usr/bin/python3
"""compare.py -- compare a cairn result directory with a textbook NAME.expected.

Usage:  compare.py NAME.expected RESULTDIR

RESULTDIR holds cairn's marks.csv and observations.csv (and, if present,
results.xml).  NAME.expected holds key=value lines (see README.md):

    sd_basis=posterior|prior   how the book's sd and ellipse axes are scaled
    h.M e.M n.M                adjusted coordinate of mark M (marks.csv)
    sd.h.M sd.e.M sd.n.M       standard deviation of that coordinate
    major.M minor.M            error-ellipse semi-axes (marks.csv major/minor)
    azimuth.M                  azimuth of the major axis, degrees (mod 180)
    v.SEQ adj.SEQ r.SEQ        residual, adjusted value, redundancy number of
                               observations.csv row SEQ
    w.SEQ absw.SEQ             w-test statistic of row SEQ (observations.csv
                               w, a priori variance factor 1); absw compares
                               |w|, for books that print the statistic unsigned
    dof s0 s0sq                degrees of freedom, a posteriori S0, S0 squared
    tolerance.KEY              allowed |difference|; looked up as
                               tolerance.<whole key>, then with the last
                               dot-component dropped, and so on
                               (tolerance.sd.h covers sd.h.B, sd.h.C, ...)

Text after '#' is a comment; a trailing "[V]" in it marks a published value,
"[D]" one derived by whoever wrote the file.  Both are compared; the tag is
printed.

A posteriori scaling.  cairn writes standard deviations and ellipse axes
with a priori sigma0 = 1.  Textbooks usually print them scaled by the a
posteriori S0.  With sd_basis=posterior (the default) the cairn values are
multiplied by S0 before the comparison, where

    S0^2 = sum over observations (not rejected) of (residual / sd)^2 / dof

from observations.csv (residual and sd are in the same unit in each row:
length unit, or arc-seconds for angles).  dof is taken from results.xml
(<summary dof=...>) when it exists, else as the sum of the redundancy
column, else as observations minus unknowns (non-empty sd cells).

A quantity whose cairn cell is empty is reported "not yet computed" and
does not fail.  A mark or observation row that is missing fails.

Exit status: 0 all compared quantities agree, 1 a mismatch or a missing
row, 2 usage or file error.
"""

import csv
import math
import os
import re
import sys


def read_expected(path):
    values = []          # (key, value, tag, line number), in file order
    settings = {}
    tolerances = {}
    with open(path, encoding="utf-8") as f:
        for lineno, raw in enumerate(f, 1):
            text, _, comment = raw.partition("#")
            text = text.strip()
            if not text:
                continue
            if "=" not in text:
                raise ValueError("%s:%d: expected key=value" % (path, lineno))
            key, value = (s.strip() for s in text.split("=", 1))
            tag = ""
            m = re.search(r"\[(V|D)\]", comment)
            if m:
                tag = "[%s]" % m.group(1)
            if key == "sd_basis":
                if value not in ("posterior", "prior"):
                    raise ValueError("%s:%d: sd_basis must be posterior or prior" % (path, lineno))
                settings[key] = value
            elif key.startswith("tolerance."):
                tolerances[key[len("tolerance."):]] = float(value)
            else:
                values.append((key, float(value), tag, lineno))
    return values, settings, tolerances


def tolerance_for(key, tolerances, path, lineno):
    parts = key.split(".")
    while parts:
        k = ".".join(parts)
        if k in tolerances:
            return tolerances[k]
        parts.pop()
    raise ValueError("%s:%d: no tolerance for %s (add tolerance.%s=...)"
                     % (path, lineno, key, key.split(".")[0]))


def read_csv(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def num(cell):
    """A cell as float, or None when empty."""
    if cell is None:
        return None
    cell = cell.strip()
    if cell == "":
        return None
    return float(cell)


def summary_dof(resultdir):
    path = os.path.join(resultdir, "results.xml")
    if not os.path.exists(path):
        return None
    with open(path, encoding="utf-8") as f:
        text = f.read()
    m = re.search(r"<summary\b[^>]*\bdof=\"([0-9]+)\"", text)
    return int(m.group(1)) if m else None


def posterior_s0(marks, obs, resultdir):
    """(S0, dof, how dof was found) or (None, dof, reason)."""
    used = [o for o in obs if o.get("status", "") != "rejected"]
    dof = summary_dof(resultdir)
    how = "results.xml"
    if dof is None:
        rs = [num(o.get("redundancy")) for o in used]
        if rs and all(r is not None for r in rs):
            dof = int(round(sum(rs)))
            how = "sum of redundancy numbers"
    if dof is None:
        unknowns = sum(1 for m in marks for c in ("sd_e", "sd_n", "sd_h") if num(m.get(c)) is not None)
        # orientation unknowns are not in marks.csv; count directions' setups
        setups = {(o.get("at"), o.get("source", "").split(":")[0]) for o in used if o.get("kind") == "direction"}
        if unknowns:
            dof = len(used) - unknowns - len(setups)
            how = "observations - unknowns"
    if dof is None or dof <= 0:
        return None, dof, "no degrees of freedom"
    total = 0.0
    for o in used:
        v, s = num(o.get("residual")), num(o.get("sd"))
        if v is None or s is None or s <= 0.0:
            return None, dof, "residual or sd not yet computed"
        total += (v / s) ** 2
    return math.sqrt(total / dof), dof, how


MARK_COLUMNS = {"h": "h", "e": "e", "n": "n",
                "sd.h": "sd_h", "sd.e": "sd_e", "sd.n": "sd_n",
                "major": "major", "minor": "minor", "azimuth": "major_azimuth"}
OBS_COLUMNS = {"v": "residual", "adj": "adjusted", "r": "redundancy",
               "w": "w", "absw": "w"}
SCALED = ("sd.h", "sd.e", "sd.n", "major", "minor")


def main(argv):
    if len(argv) != 3:
        print(__doc__.split("\n\n")[1], file=sys.stderr)
        return 2
    expected_path, resultdir = argv[1], argv[2]
    try:
        values, settings, tolerances = read_expected(expected_path)
        marks = read_csv(os.path.join(resultdir, "marks.csv"))
        obs = read_csv(os.path.join(resultdir, "observations.csv"))
    except (OSError, ValueError) as e:
        print("error: %s" % e)
        return 2
    basis = settings.get("sd_basis", "posterior")
    by_id = {m["id"]: m for m in marks}
    by_seq = {o["seq"]: o for o in obs}
    s0, dof, how = posterior_s0(marks, obs, resultdir)
    if s0 is None:
        print("note S0: not yet computed (%s)" % how)
    else:
        print("note S0 = %.6f from observations.csv, dof = %d (%s)" % (s0, dof, how))
    print("note sd_basis = %s%s" % (basis, " (cairn sd and ellipse axes multiplied by S0)" if basis == "posterior" else ""))

    failed = 0
    pending = 0
    for key, want, tag, lineno in values:
        try:
            tol = tolerance_for(key, tolerances, expected_path, lineno)
        except ValueError as e:
            print("error: %s" % e)
            return 2
        got = None
        missing = None
        if key in ("s0", "s0sq", "dof"):
            if key == "dof":
                got = dof
            elif s0 is not None:
                got = s0 if key == "s0" else s0 * s0
        else:
            head, _, name = key.rpartition(".")
            if head in MARK_COLUMNS:
                row = by_id.get(name)
                if row is None:
                    missing = "mark %s not in marks.csv" % name
                else:
                    got = num(row.get(MARK_COLUMNS[head]))
                    if got is not None and head in SCALED and basis == "posterior":
                        got = None if s0 is None else got * s0
            elif head in OBS_COLUMNS:
                row = by_seq.get(name)
                if row is None:
                    missing = "observation seq %s not in observations.csv" % name
                else:
                    got = num(row.get(OBS_COLUMNS[head]))
                    if got is not None and head == "absw":
                        got = abs(got)
            else:
                print("error: %s:%d: unknown key %s" % (expected_path, lineno, key))
                return 2
        if missing:
            print("FAIL %-12s expected %-14.10g %s  MISSING: %s" % (key, want, tag, missing))
            failed += 1
            continue
        if got is None:
            print("---- %-12s expected %-14.10g %s  not yet computed" % (key, want, tag))
            pending += 1
            continue
        diff = got - want
        if key.startswith("azimuth."):
            diff = (diff + 90.0) % 180.0 - 90.0
        ok = abs(diff) <= tol * (1 + 1e-9)
        print("%s %-12s expected %-14.10g got %-16.10g diff %+.2e tol %.1e %s"
              % ("ok  " if ok else "FAIL", key, want, got, diff, tol, tag))
        if not ok:
            failed += 1
    print("note %d compared, %d failed, %d not yet computed" % (len(values) - pending, failed, pending))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
