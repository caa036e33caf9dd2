#!/usr/bin/python3
"""check_reference.py -- checks that the reference solver deserves trust.

    /usr/bin/python3 tests/reference/check_reference.py [NETWORKDIR]

Exits non-zero on any failure and prints every comparison.  The checks:

1. cairn_ref.py --selftest: quantiles against REFERENCES.md 1.1 / 2 / 3.1,
   unit and angle parsing against FORMAT.md, partial derivatives against
   central differences.
2. Every network in tests/integration/networks/ adjusts, converges, the sum
   of redundancy numbers equals the degrees of freedom (Baarda 1968, as in
   REFERENCES.md 2: sum r_i = n - u), the global test passes and nothing is
   flagged (the generator adds noise matching the a priori model, so that is
   expected: a 5 % global-test failure rate per network, seeds fixed).
3. Invariances that any correct least-squares solution has (mathematical
   facts, no outside values needed):
   - translation: grid_large.cfb and grid_near0.cfb hold the same
     observations 500000 / 5000000 m apart, so coordinates differ by exactly
     that and residuals agree;
   - starting values: moving every start by decimetres changes nothing
     (DEVELOPERS.md: the converged result does not depend on the starts);
   - free datum: residuals, redundancy numbers and w-tests do not depend on
     which components the minimal constraints fix (DEVELOPERS.md "Datum
     free"); checked by reordering the marks of free_network.cfb.
4. Closed form: a single levelling line between two held bench marks has
   one redundancy, r_i = sigma_i^2 / sum sigma^2 and all |w_i| equal
   (derivation in README.md; common practice, no source).
"""

import csv
import os
import re
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
REF = os.path.join(HERE, "cairn_ref.py")
PY = os.environ.get("PYTHON", "/usr/bin/python3")
fails = 0


def report(ok, text):
    global fails
    print("%s %s" % ("ok  " if ok else "FAIL", text))
    if not ok:
        fails += 1


def run(fb, out, *extra):
    r = subprocess.run([PY, REF, fb, out] + list(extra), capture_output=True, text=True)
    return r.returncode, r.stderr


def read(out):
    with open(os.path.join(out, "marks.csv")) as fh:
        marks = list(csv.DictReader(fh))
    with open(os.path.join(out, "observations.csv")) as fh:
        obs = list(csv.DictReader(fh))
    summ = {}
    with open(os.path.join(out, "summary.txt")) as fh:
        for line in fh:
            k, _, v = line.rstrip("\n").partition("=")
            summ[k] = v
    return marks, obs, summ


def f(x):
    return float(x) if x != "" else 0.0


def compare_obs(a, b, cols, tol, what):
    worst = 0.0
    for ra, rb in zip(a, b):
        for c in cols:
            worst = max(worst, abs(f(ra[c]) - f(rb[c])))
    report(len(a) == len(b) and worst <= tol, "%s: max |diff| in %s = %.3g (tol %g)" % (what, ",".join(cols), worst, tol))


def main(argv):
    netdir = argv[1] if len(argv) > 1 else os.path.join(HERE, "..", "integration", "networks")
    r = subprocess.run([PY, REF, "--selftest"], capture_output=True, text=True)
    report(r.returncode == 0, "cairn_ref.py --selftest (%s)" % r.stdout.strip().splitlines()[-1])
    tmp = tempfile.mkdtemp(prefix="cairn_ref_check.")
    books = sorted(x for x in os.listdir(netdir) if x.endswith(".cfb"))
    report(len(books) >= 10, "%d field books in %s" % (len(books), netdir))
    res = {}
    for b in books:
        out = os.path.join(tmp, b[:-4])
        rc, err = run(os.path.join(netdir, b), out)
        if rc not in (0, 1):
            report(False, "%s: exit %d %s" % (b, rc, err.strip()))
            continue
        marks, obs, s = read(out)
        res[b] = (marks, obs, s)
        sr = sum(f(o["redundancy"]) for o in obs)
        report(abs(sr - int(s["dof"])) < 1e-6, "%s: sum r = %.9f, dof = %s" % (b, sr, s["dof"]))
        report(rc == 0 and s["global_test"] == "pass" and s["flagged"] == "0",
               "%s: sigma0^2 = %.3f in [%.3f, %.3f]/dof, global test %s, flagged %s"
               % (b, float(s["sigma0_squared"]), float(s["chi2_lower"]) / int(s["dof"]),
                  float(s["chi2_upper"]) / int(s["dof"]), s["global_test"], s["flagged"]))
        report(int(s["iterations"]) < 50, "%s: converged in %s iterations" % (b, s["iterations"]))

    # translation invariance
    if "grid_large.cfb" in res and "grid_near0.cfb" in res:
        ml, ol, _ = res["grid_large.cfb"]
        mn, on, _ = res["grid_near0.cfb"]
        worst = max(max(abs(f(a["e"]) - f(b["e"]) - 500000.0), abs(f(a["n"]) - f(b["n"]) - 5000000.0))
                    for a, b in zip(ml, mn))
        report(worst < 1e-6, "translation: coordinates differ by (500000, 5000000) to %.3g m" % worst)
        compare_obs(ol, on, ("residual", "redundancy", "w"), 1e-6, "translation")

    # start independence
    for b in books:
        text = open(os.path.join(netdir, b)).read()
        lines = []
        for line in text.split("\n"):
            if line.startswith("mark ") and " hold " not in line and "sd-" not in line:
                line = re.sub(r" e (\S+)", lambda m: " e %.4f" % (float(m.group(1)) + 0.23), line)
                line = re.sub(r" n (\S+)", lambda m: " n %.4f" % (float(m.group(1)) - 0.17), line)
                line = re.sub(r" h (\S+)", lambda m: " h %.4f" % (float(m.group(1)) + 0.11), line)
            lines.append(line)
        fb = os.path.join(tmp, "moved_" + b)
        open(fb, "w").write("\n".join(lines))
        out = os.path.join(tmp, "moved_" + b[:-4])
        rc, err = run(fb, out)
        if b not in res or rc not in (0, 1):
            report(False, "starts moved, %s: exit %d %s" % (b, rc, err.strip()))
            continue
        m2, o2, _ = read(out)
        m1, o1, s1 = res[b]
        if s1["datum"] == "free":
            continue   # the datum itself sits on the starts; checked below
        worst = max(abs(f(a[c]) - f(c2[c])) for a, c2 in zip(m1, m2) for c in ("e", "n", "h"))
        report(worst < 1e-6, "starts moved by dm, %s: coordinates agree to %.3g" % (b, worst))
        compare_obs(o1, o2, ("residual", "redundancy", "w"), 1e-6, "starts moved, " + b)

    # free datum: a different choice of fixed components
    if "free_network.cfb" in res:
        text = open(os.path.join(netdir, "free_network.cfb")).read().split("\n")
        mk = [l for l in text if l.startswith("mark ")]
        rest = [l for l in text if not l.startswith("mark ")]
        fb = os.path.join(tmp, "free_reordered.cfb")
        open(fb, "w").write("\n".join(mk[::-1] + rest))
        out = os.path.join(tmp, "free_reordered")
        rc, err = run(fb, out)
        m2, o2, s2 = read(out)
        m1, o1, s1 = res["free_network.cfb"]
        report(s1["fixed"] != s2["fixed"], "free datum: fixed '%s' vs '%s'" % (s1["fixed"], s2["fixed"]))
        # rows are in load order; the source line numbers differ, the order does not
        compare_obs(o1, o2, ("residual", "redundancy", "w"), 1e-7, "free datum reordered")

    # closed form: one levelling line between two held bench marks
    fb = os.path.join(tmp, "line.cfb")
    km = (0.35, 0.80, 0.55, 1.30)
    open(fb, "w").write("\n".join([
        "# single levelling line, closed-form check", "units m dms", "instrument L per-km 1mm",
        "mark A h 100.000 hold h", "mark B h 103.000 hold h",
        "mark P1 h 101.0", "mark P2 h 101.5", "mark P3 h 102.2",
        "rise A P1 1.0021 km %.2f" % km[0], "rise P1 P2 0.4988 km %.2f" % km[1],
        "rise P2 P3 0.7035 km %.2f" % km[2], "rise P3 B 0.8011 km %.2f" % km[3]]) + "\n")
    out = os.path.join(tmp, "line")
    rc, err = run(fb, out)
    _, obs, s = read(out)
    tot = sum(km)
    worst = max(abs(f(o["redundancy"]) - k / tot) for o, k in zip(obs, km))
    report(worst < 1e-12, "levelling line: r_i = km_i / sum km to %.3g" % worst)
    ws = [abs(f(o["w"])) for o in obs]
    mis = 1.0021 + 0.4988 + 0.7035 + 0.8011 - 3.0
    want = abs(mis) / (0.001 * tot ** 0.5)
    report(max(abs(w - want) for w in ws) < 1e-9, "levelling line: |w_i| = |misclosure|/sigma_line = %.6f" % want)

    print("check_reference: %s" % ("all ok" if not fails else "%d FAILED" % fails))
    return 1 if fails else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
