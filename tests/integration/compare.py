#!/usr/bin/env python3
"""Compare cairn's result files with the numpy reference solver's.

usage: compare.py CAIRN_DIR REF_DIR [--invariant-only] [--strict-quality]
                  [--rejected-as-set]

Tolerances (issue #3 / #5 acceptance): coordinates 1e-6 in the length unit;
residuals 1e-6 of their unit (length unit, or arc-seconds); standard
deviations and ellipse axes 1e-6 relative (or 1e-9 absolute); redundancy
numbers and w 1e-6. A quality cell that the reference fills and cairn
leaves empty (or the other way round) is a failure (--strict-quality is
accepted for old callers and changes nothing). --invariant-only compares
only what does not depend on the datum (residuals, sd, redundancy, w, mdb,
status, the summary), for free networks whose minimal constraints sit on
different starts: no mark rows, no pairs. --rejected-as-set compares which
observations snooping rejected but not their order (cairn takes several in
one round where the reference takes one a round).

When REF_DIR has summary.txt and CAIRN_DIR has results.xml, the summary
is compared too: dof, vTPv (the global-test statistic), sigma0 squared,
the chi-square bounds, the global-test outcome, the numbers flagged and
rejected, which observations snooping rejected (in order), and the
tolerance outcome; with pairs.csv, every observed pair's relative
ellipse axes (1e-6 relative) and tolerance verdict; and with control.csv,
every held mark's test of its given coordinates (final and before
snooping: observations, dimension, status, statistic 1e-6 relative, shift
1e-6).
"""
import csv
import os
import sys
import xml.etree.ElementTree as ET


def rows(path, key):
    with open(path, newline="") as f:
        r = list(csv.DictReader(f))
    return r, {key(x): x for x in r}


def num(s):
    return None if s is None or s == "" else float(s)


def main():
    cdir, rdir = sys.argv[1], sys.argv[2]
    invariant = "--invariant-only" in sys.argv
    as_set = "--rejected-as-set" in sys.argv
    fails = []

    def close(kind, name, a, b, tol, rel=False):
        if a is None and b is None:
            return
        if a is None or b is None:
            fails.append(f"{name} {kind}: cairn={a} reference={b}")
            return
        lim = tol * max(1.0, abs(b)) if rel else tol
        if abs(a - b) > lim:
            fails.append(f"{name} {kind}: cairn={a!r} reference={b!r} (|diff| {abs(a-b):.3g} > {lim:.3g})")

    cm, cmi = rows(f"{cdir}/marks.csv", lambda x: x["id"])
    rm, rmi = rows(f"{rdir}/marks.csv", lambda x: x["id"])
    if set(cmi) != set(rmi):
        fails.append(f"mark sets differ: only cairn {sorted(set(cmi)-set(rmi))}, only reference {sorted(set(rmi)-set(cmi))}")
    for mid, r in rmi.items():
        c = cmi.get(mid)
        if not c or invariant:
            continue
        if c["role"] != r["role"]:
            fails.append(f"{mid} role: cairn={c['role']} reference={r['role']}")
        for k in ("e", "n", "h"):
            close(k, mid, num(c[k]), num(r[k]), 1e-6)
        for k in ("sd_e", "sd_n", "sd_h", "major", "minor"):
            close(k, mid, num(c[k]), num(r[k]), 1e-6, rel=True)
        a, b = num(c["major_azimuth"]), num(r["major_azimuth"])
        if (a is None) != (b is None):
            fails.append(f"{mid} major_azimuth: cairn={a} reference={b}")
        elif a is not None and num(r["major"]) and num(r["minor"]) is not None \
                and num(r["major"]) - num(r["minor"]) > 1e-6 * num(r["major"]):
            d = (a - b + 90.0) % 180.0 - 90.0
            if abs(d) > 1e-4:
                fails.append(f"{mid} major_azimuth: cairn={a} reference={b}")

    co, _ = rows(f"{cdir}/observations.csv", lambda x: x["seq"])
    ro, _ = rows(f"{rdir}/observations.csv", lambda x: x["seq"])
    if len(co) != len(ro):
        fails.append(f"observation count: cairn={len(co)} reference={len(ro)}")
    for c, r in zip(co, ro):
        name = f"obs {r['seq']} ({r['kind']} {r['source']})"
        for k in ("kind", "at", "from", "to", "source", "status"):
            if c[k] != r[k]:
                fails.append(f"{name} {k}: cairn={c[k]!r} reference={r[k]!r}")
        close("observed", name, num(c["observed"]), num(r["observed"]), 1e-7)
        close("residual", name, num(c["residual"]), num(r["residual"]), 1e-6)
        close("sd", name, num(c["sd"]), num(r["sd"]), 1e-6, rel=True)
        close("redundancy", name, num(c["redundancy"]), num(r["redundancy"]), 1e-6)
        close("w", name, num(c["w"]), num(r["w"]), 1e-6)
        close("mdb", name, num(c["mdb"]), num(r["mdb"]), 1e-6, rel=True)

    notes = []
    if os.path.exists(f"{rdir}/summary.txt") and os.path.exists(f"{cdir}/results.xml"):
        ref = dict(l.rstrip("\n").split("=", 1) for l in open(f"{rdir}/summary.txt") if "=" in l)
        root = ET.parse(f"{cdir}/results.xml").getroot()
        s = root.find("summary").attrib
        for k, x in (("dof", "dof"), ("flagged", "flagged"), ("rejected", "rejected")):
            if s.get(x) != ref.get(k):
                fails.append(f"summary {x}: cairn={s.get(x)} reference={ref.get(k)}")
        if s.get("global-test") != ref.get("global_test"):
            fails.append(f"summary global-test: cairn={s.get('global-test')} reference={ref.get('global_test')}")
        for x, k in (("statistic", "vtpv"), ("sigma0-squared", "sigma0_squared"),
                     ("lower", "chi2_lower"), ("upper", "chi2_upper"),
                     ("critical-w", "critical_w"), ("lambda0", "lambda0"),
                     ("sum-redundancy", "sum_redundancy")):
            close(x, "summary", num(s.get(x)), num(ref.get(k)), 1e-6, rel=True)
        crej = " ".join(e.get("seq") for e in root.findall("rejection"))
        rrej = ref.get("rejected_seq", "")
        if (sorted(crej.split()) != sorted(rrej.split())) if as_set else crej != rrej:
            fails.append(f"rejected observations: cairn=[{crej}] reference=[{ref.get('rejected_seq')}]")
        if s.get("tolerance") != ref.get("tolerance") and not invariant:
            fails.append(f"summary tolerance: cairn={s.get('tolerance')} reference={ref.get('tolerance')}")
        notes.append(f"summary: dof {s.get('dof')}, global test {s.get('global-test')}, "
                     f"rejected [{crej}], tolerance {s.get('tolerance')}")
        if os.path.exists(f"{rdir}/pairs.csv") and not invariant:
            _, rp = rows(f"{rdir}/pairs.csv", lambda x: (x["from"], x["to"]))
            cp = {(e.get("from"), e.get("to")): e.attrib for e in root.findall("pair")
                  if e.get("major") is not None}
            if set(cp) != set(rp):
                fails.append(f"plane pairs differ: only cairn {sorted(set(cp)-set(rp))[:5]}, "
                             f"only reference {sorted(set(rp)-set(cp))[:5]}")
            for key, r in rp.items():
                c = cp.get(key)
                if not c:
                    continue
                name = f"pair {key[0]}-{key[1]}"
                close("distance", name, num(c.get("distance")), num(r["distance"]), 1e-6)
                close("major", name, num(c.get("major")), num(r["major"]), 1e-6, rel=True)
                close("minor", name, num(c.get("minor")), num(r["minor"]), 1e-6, rel=True)
                close("allowed", name, num(c.get("allowed")), num(r["allowed"]), 1e-6, rel=True)
                if (c.get("pass") or "") != r["pass"]:
                    fails.append(f"{name} pass: cairn={c.get('pass')} reference={r['pass']}")

    if os.path.exists(f"{rdir}/control.csv") and os.path.exists(f"{cdir}/results.xml"):
        # the held-mark tests (include/cairn/quality.h cairn_control_test):
        # final and before snooping; statistic 1e-6 relative, shift 1e-6
        _, rc = rows(f"{rdir}/control.csv", lambda x: x["mark"])
        root = ET.parse(f"{cdir}/results.xml").getroot()
        cc = {e.get("mark"): e.attrib for e in root.findall("held-mark-test")}
        if set(cc) != set(rc):
            fails.append(f"held-mark tests differ: only cairn {sorted(set(cc)-set(rc))[:5]}, "
                         f"only reference {sorted(set(rc)-set(cc))[:5]}")
        nfail = 0
        for m, r in rc.items():
            c = cc.get(m)
            if not c:
                continue
            for sfx in ("", "_first"):
                xs = sfx.replace("_", "-")
                name = f"held mark {m}{xs}"
                for k in ("observations", "dimension", "status"):
                    if c.get(k + xs) != r[k + sfx]:
                        fails.append(f"{name} {k}: cairn={c.get(k + xs)} reference={r[k + sfx]}")
                close("statistic", name, num(c.get("statistic" + xs)), num(r["statistic" + sfx]),
                      1e-6, rel=True)
                for comp in "enh":
                    close("shift-" + comp, name, num(c.get(f"shift-{comp}{xs}")),
                          num(r[f"shift_{comp}{sfx}"]), 1e-6)
            nfail += r["status"] == "fail"
        notes.append(f"held-mark tests: {len(rc)} marks, {nfail} fail")

    for f in fails[:30]:
        print("  MISMATCH", f)
    if len(fails) > 30:
        print(f"  ... {len(fails) - 30} more")
    for n in notes:
        print("  note:", n)
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
