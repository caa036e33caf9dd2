#!/usr/bin/env python3
"""Compare cairn's result files with the numpy reference solver's.

usage: compare.py CAIRN_DIR REF_DIR [--strict-quality] [--invariant-only]

Tolerances (issue #3 / #5 acceptance): coordinates 1e-6 in the length unit;
residuals 1e-6 of their unit (length unit, or arc-seconds); standard
deviations and ellipse axes 1e-6 relative (or 1e-9 absolute); redundancy
numbers and w 1e-6. A quality column that cairn leaves empty is reported
but only fails with --strict-quality. --invariant-only compares only what
does not depend on the datum (residuals, sd, redundancy, w, mdb, status),
for free networks whose minimal constraints sit on different starts.
"""
import csv
import sys


def rows(path, key):
    with open(path, newline="") as f:
        r = list(csv.DictReader(f))
    return r, {key(x): x for x in r}


def num(s):
    return None if s is None or s == "" else float(s)


def main():
    cdir, rdir = sys.argv[1], sys.argv[2]
    strict = "--strict-quality" in sys.argv
    invariant = "--invariant-only" in sys.argv
    fails = []
    missing_quality = set()

    def close(kind, name, a, b, tol, rel=False):
        if a is None and b is None:
            return
        if a is None or b is None:
            if rel or kind in ("redundancy", "w", "mdb", "sd_e", "sd_n", "sd_h",
                               "major", "minor", "major_azimuth"):
                if a is None:
                    missing_quality.add(kind)
                    if not strict:
                        return
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
        if a is not None and b is not None and num(r["major"]) and num(r["minor"]) is not None \
                and num(r["major"]) - num(r["minor"]) > 1e-6 * num(r["major"]):
            d = (a - b + 90.0) % 180.0 - 90.0
            if abs(d) > 1e-4:
                fails.append(f"{mid} major_azimuth: cairn={a} reference={b}")
        elif a is None and b is not None:
            missing_quality.add("major_azimuth")

    co, _ = rows(f"{cdir}/observations.csv", lambda x: x["seq"])
    ro, _ = rows(f"{rdir}/observations.csv", lambda x: x["seq"])
    if len(co) != len(ro):
        fails.append(f"observation count: cairn={len(co)} reference={len(ro)}")
    for c, r in zip(co, ro):
        name = f"obs {r['seq']} ({r['kind']} {r['source']})"
        for k in ("kind", "at", "from", "to", "source"):
            if c[k] != r[k]:
                fails.append(f"{name} {k}: cairn={c[k]!r} reference={r[k]!r}")
        close("observed", name, num(c["observed"]), num(r["observed"]), 1e-7)
        close("residual", name, num(c["residual"]), num(r["residual"]), 1e-6)
        close("sd", name, num(c["sd"]), num(r["sd"]), 1e-6, rel=True)
        close("redundancy", name, num(c["redundancy"]), num(r["redundancy"]), 1e-6)
        close("w", name, num(c["w"]), num(r["w"]), 1e-6)
        close("mdb", name, num(c["mdb"]), num(r["mdb"]), 1e-6, rel=True)
        if c["status"] and r["status"] and c["status"] != r["status"] and "redundancy" not in missing_quality:
            fails.append(f"{name} status: cairn={c['status']} reference={r['status']}")

    for f in fails[:30]:
        print("  MISMATCH", f)
    if len(fails) > 30:
        print(f"  ... {len(fails) - 30} more")
    if missing_quality:
        print("  note: cairn leaves empty:", ", ".join(sorted(missing_quality)))
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main())
