#!/usr/bin/python3
"""Generate cairn's demo project, projects/ollen-crossing/.

A fictional control survey for a new footbridge over the (fictional) River
Ollen at Tarrant Reach.  Invented true coordinates -> observations by the
FORMAT.md "Models" formulas (R = 6371000 m, refraction k, curvature,
ih/th, ppm) -> normal noise at each observation's a priori standard
deviation -> booked at 0.1" / 0.0001 m / 0.00001 m.  Two field-book
mistakes are then planted on purpose (see README.md written beside the
project).

Deterministic: fixed seed.  Run from anywhere:

    /usr/bin/python3 projects/tools/make_demo.py

Writes project.xml, day1.cfb, day2.cfb, truth.csv and README.md into
projects/ollen-crossing/ (overwriting them).
"""

import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import netsim as ns  # noqa: E402

SEED = 20240917
OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "ollen-crossing")
K = 0.13

# True coordinates (metres).  The river runs roughly west-east near n = 5150.
TRUTH = [
    # id        e          n          h
    ("PIL-N1", 2104.512, 5298.734, 41.206),
    ("PIL-N2", 2391.087, 5262.415, 39.874),
    ("PIL-S1", 2142.660, 5020.118, 35.947),
    ("BM-44",  2250.318, 5231.902, 38.552),
    ("GNSS-S2", 2378.905, 5041.276, 36.330),
    ("ABT-N",  2236.840, 5184.112, 36.985),
    ("ABT-S",  2247.015, 5112.604, 35.203),
    ("TR10",   2160.227, 5215.390, 37.412),
    ("TR11",   2310.442, 5089.730, 34.876),
    ("TR12",   2188.950, 5078.345, 35.512),
]
T = {m[0]: (m[1], m[2], m[3]) for m in TRUTH}

TS = {"direction": 1.0 / ns.RHO, "zenith": 1.5 / ns.RHO, "dist_a": 0.001,
      "dist_b": 1.5, "centring": 0.0006, "height": 0.001}
LV = {"per_km": 0.0007}

rng = random.Random(SEED)


class Book:
    """Lines of one field book, with 1-based line numbers."""

    def __init__(self, name):
        self.name = name
        self.lines = []

    def add(self, text=""):
        self.lines.append(text)
        return len(self.lines)

    def write(self):
        with open(os.path.join(OUT, self.name), "w") as f:
            f.write("\n".join(self.lines) + "\n")


planted = []   # descriptions of the planted mistakes


def transpose_adjacent(text):
    """Swap two adjacent digits of a booked distance so that the change is
    clearly detectable (at least 20 mm) but still plausible: prefer the
    centimetre/millimetre pair, then decimetre/centimetre."""
    ip, fp = text.split(".")
    for i in (1, 0):                      # fp[1]fp[2] = cm,mm ; fp[0]fp[1] = dm,cm
        a, b = fp[i], fp[i + 1]
        scale = 10 ** -(i + 2)            # value of the lower digit position
        if abs(int(a) - int(b)) * 9 * scale >= 0.020:
            fp2 = fp[:i] + b + a + fp[i + 2:]
            return ip + "." + fp2
    raise RuntimeError("no suitable digit pair in %s" % text)


def setup(book, at, targets, ih, faces=(1,), ppm=0.0, blunder=None):
    """Book one setup.  targets: list of (to, th, want) where want is a set
    of 'hz', 'zen', 'slope'.  faces=(1, 2) books a face-two round after the
    face-one round, in reverse order, as a crew would.  blunder: dict
    {'to': id, 'face': 1, 'kind': 'slope-transpose'|'th', 'true_th': x}."""
    A = T[at]
    # orientation: circle set near zero on the first target
    t0 = ns.azimuth(A, T[targets[0][0]])
    omega = t0 - math.radians(rng.uniform(0.0, 0.02))
    line = "at %s inst TS1 ih %.3f" % (at, ih)
    if ppm:
        line += " ppm %.1f" % ppm
    book.add(line)
    for face in faces:
        order = targets if face == 1 else list(reversed(targets))
        for to, th_booked, want in order:
            B = T[to]
            th_true = th_booked
            bl = blunder if (blunder and blunder["to"] == to
                             and blunder["face"] == face) else None
            if bl and bl["kind"] == "th":
                th_true = bl["true_th"]
            d = ns.plane_dist(A, B)
            parts = ["to", to]
            if "hz" in want:
                hz = ns.azimuth(A, B) - omega + (math.pi if face == 2 else 0.0)
                hz += rng.gauss(0.0, ns.sd_direction(TS, d))
                parts += ["hz", ns.fmt_dms(hz)]
            if "zen" in want:
                z = ns.zenith_model(A, B, ih, th_true, K)
                if face == 2:
                    z = 2 * math.pi - z
                z += rng.gauss(0.0, ns.sd_zenith(TS, d))
                parts += ["zen", ns.fmt_dms(z)]
            slope_true = None
            if "slope" in want:
                s = ns.slope_model(A, B, ih, th_true) / (1.0 + ppm * 1e-6)
                s += rng.gauss(0.0, ns.sd_distance(TS, s))
                txt = ns.fmt_len(s, "m", 4)
                slope_true = txt
                if bl and bl["kind"] == "slope-transpose":
                    txt = transpose_adjacent(txt)
                parts += ["slope", txt]
            parts += ["th", "%.3f" % th_booked]
            if face == 2 and "zen" not in want:
                parts += ["face", "2"]
            ln = book.add(" ".join(parts))
            if bl:
                if bl["kind"] == "slope-transpose":
                    planted.append({
                        "kind": "transposed digits in a slope distance",
                        "where": "%s:%d" % (book.name, ln),
                        "sight": "%s -> %s, face %d" % (at, to, face),
                        "booked": txt, "true": slope_true,
                        "effect": "booked %.4f m %s" % (abs(float(txt) - float(slope_true)),
                                                        "short" if float(txt) < float(slope_true) else "long"),
                    })
                else:
                    planted.append({
                        "kind": "wrong target height",
                        "where": "%s:%d" % (book.name, ln),
                        "sight": "%s -> %s, face %d" % (at, to, face),
                        "booked": "th %.3f" % th_booked,
                        "true": "th %.3f" % th_true,
                        "effect": "the zenith angle is off by about %.0f\", "
                                  "the slope distance by %.1f mm" % (
                                      (ns.zenith_model(A, B, ih, th_booked, K)
                                       - ns.zenith_model(A, B, ih, th_true, K)) * ns.RHO,
                                      abs(ns.slope_model(A, B, ih, th_true)
                                          - ns.slope_model(A, B, ih, th_booked)) * 1000),
                    })


def level_run(book, route, kms):
    for (a, b), km in zip(zip(route[:-1], route[1:]), kms):
        dh = T[b][2] - T[a][2] + rng.gauss(0.0, ns.sd_rise(LV, km=km))
        book.add("rise %s %s %.5f km %.3f" % (a, b, dh, km))


HVS = {"hz", "zen", "slope"}
HZ_ZEN = {"hz", "zen"}


def ih():
    return round(rng.uniform(1.45, 1.65), 3)


def day1():
    b = Book("day1.cfb")
    b.add("# Tarrant Reach footbridge control, River Ollen -- day 1 (north bank)")
    b.add("# Crew: 2 persons.  Overcast, 11 C, light wind; prisms on poles over marks.")
    b.add("# Instruments and units come from project.xml; this book holds readings only.")
    b.add()
    b.add("# Pillar N1: backsight N2, round of face one then face two")
    setup(b, "PIL-N1", [("PIL-N2", 1.600, HVS), ("TR10", 1.600, HVS),
                        ("BM-44", 1.300, HVS), ("ABT-N", 1.600, HVS),
                        ("PIL-S1", 1.800, HVS)], ih(), faces=(1, 2))
    b.add()
    b.add("# TR10, new nail in path edge.  Pole raised for the sight across the river.")
    setup(b, "TR10", [("PIL-N1", 1.600, HVS), ("BM-44", 1.300, HVS),
                      ("ABT-N", 1.600, HVS), ("TR12", 1.600, HVS),
                      ("PIL-S1", 1.800, HVS)], ih(),
          blunder={"to": "TR12", "face": 1, "kind": "th", "true_th": 1.700})
    b.add()
    b.add("# North abutment, face one and face two")
    setup(b, "ABT-N", [("TR10", 1.600, HVS), ("BM-44", 1.300, HVS),
                       ("PIL-N2", 1.600, HVS), ("TR11", 1.600, HVS),
                       ("ABT-S", 1.600, HVS), ("TR12", 1.600, HVS)],
          ih(), faces=(1, 2))
    b.add()
    b.add("# Pillar N2")
    setup(b, "PIL-N2", [("PIL-N1", 1.600, HVS), ("BM-44", 1.300, HVS),
                        ("ABT-N", 1.600, HVS), ("TR11", 1.600, HVS),
                        ("GNSS-S2", 1.600, HVS)], ih())
    b.add()
    b.add("# Level run, pillar N1 to pillar N2 via the benchmark (LV1, one-way)")
    level_run(b, ["PIL-N1", "TR10", "BM-44", "ABT-N", "PIL-N2"],
              [0.115, 0.100, 0.060, 0.175])
    b.write()


def day2():
    b = Book("day2.cfb")
    b.add("# Tarrant Reach footbridge control, River Ollen -- day 2 (south bank)")
    b.add("# Sunny, 24 C, 1008 hPa: the instrument's atmospheric correction was left")
    b.add("# at zero, so the computed ppm is booked on each setup.")
    b.add()
    b.add("# Pillar S1, face one and face two")
    setup(b, "PIL-S1", [("PIL-N1", 1.800, HVS), ("TR10", 1.800, HVS),
                        ("TR12", 1.600, HVS), ("ABT-S", 1.600, HVS)],
          ih(), faces=(1, 2), ppm=9.8)
    b.add()
    b.add("# South abutment")
    setup(b, "ABT-S", [("ABT-N", 1.600, HVS), ("TR12", 1.600, HVS),
                       ("TR11", 1.600, HVS), ("GNSS-S2", 1.600, HVS),
                       ("BM-44", 1.300, HZ_ZEN)], ih(), ppm=10.1)
    b.add()
    b.add("# TR11, face one and face two")
    setup(b, "TR11", [("ABT-S", 1.600, HVS), ("GNSS-S2", 1.600, HVS),
                      ("PIL-N2", 1.800, HVS), ("ABT-N", 1.600, HVS)],
          ih(), faces=(1, 2), ppm=10.4,
          blunder={"to": "PIL-N2", "face": 1, "kind": "slope-transpose"})
    b.add()
    b.add("# TR12")
    setup(b, "TR12", [("PIL-S1", 1.600, HVS), ("ABT-S", 1.600, HVS),
                      ("TR10", 1.800, HVS), ("ABT-N", 1.600, HVS)],
          ih(), ppm=10.6)
    b.add()
    b.add("# GNSS-S2 (weighted control from the site GNSS survey)")
    setup(b, "GNSS-S2", [("TR11", 1.600, HVS), ("ABT-S", 1.600, HVS),
                         ("PIL-N2", 1.800, HVS)], ih(), ppm=10.8)
    b.add()
    b.add("# Level loop on the south bank from pillar S1 (LV1)")
    level_run(b, ["PIL-S1", "TR12", "ABT-S", "TR11", "GNSS-S2", "PIL-S1"],
              [0.150, 0.080, 0.070, 0.085, 0.245])
    b.write()


def offset(p, lo, hi, hlo, hhi):
    ang = rng.uniform(0, 2 * math.pi)
    r = rng.uniform(lo, hi)
    dh = rng.choice((-1, 1)) * rng.uniform(hlo, hhi)
    return (p[0] + r * math.sin(ang), p[1] + r * math.cos(ang), p[2] + dh)


def project_xml():
    approx = {m: offset(T[m], 0.1, 1.0, 0.1, 0.5) for m in ("ABT-N", "ABT-S", "TR12")}
    bm = offset(T["BM-44"], 0.2, 0.5, 0.0, 0.0)
    g = T["GNSS-S2"]
    gnss = (g[0] + rng.gauss(0, 0.008), g[1] + rng.gauss(0, 0.008), g[2] + 0.21)
    x = []
    x.append('<?xml version="1.0" encoding="UTF-8"?>')
    x.append('<!-- cairn demo project: a fictional site.  Generated by')
    x.append('     projects/tools/make_demo.py; see README.md beside this file. -->')
    x.append('<cairn-project format="1">')
    x.append('  <title>Tarrant Reach footbridge control, River Ollen</title>')
    x.append('  <description>Control for the setting-out of a new footbridge over the'
             ' River Ollen at Tarrant Reach (a fictional site). Three pillars of the'
             ' site grid held, benchmark BM-44 held in height, GNSS-S2 weighted from'
             ' the site GNSS survey. Two days of total-station rounds and a level'
             ' run.</description>')
    x.append('  <units length="m" angle="dms"/>')
    x.append('  <options dimension="auto" refraction="0.13" scale="1"')
    x.append('           confidence="0.95" alpha="0.001" power="0.80" global-alpha="0.05"')
    x.append('           tolerance="10 mm + 20 ppm" max-iterations="25"'
             ' loop-allowance="4 mm"/>')
    x.append('  <instrument id="TS1" direction="1 sec" zenith="1.5 sec"')
    x.append('              distance="1 mm + 1.5 ppm" centring="0.6 mm" height="1 mm"/>')
    x.append('  <instrument id="LV1" per-km="0.7 mm"/>')
    x.append('')
    x.append('  <!-- held control: site grid pillars, and the benchmark in height -->')

    def held(m, desc):
        e, n, h = T[m]
        x.append('  <mark id="%s" e="%.3f" n="%.3f" h="%.3f" hold="enh"' % (m, e, n, h))
        x.append('        desc="%s"/>' % desc)
    held("PIL-N1", "concrete pillar, north bank, upstream")
    held("PIL-N2", "concrete pillar, north bank, downstream")
    held("PIL-S1", "concrete pillar, south bank, upstream")
    x.append('  <mark id="BM-44" e="%.1f" n="%.1f" h="%.3f" hold="h"' % (bm[0], bm[1], T["BM-44"][2]))
    x.append('        desc="bolt in old mill wall; plan position scaled"/>')
    x.append('  <!-- weighted control from the site GNSS survey; height is a start value -->')
    x.append('  <mark id="GNSS-S2" e="%.3f" n="%.3f" h="%.2f" sd-en="8 mm"' % gnss)
    x.append('        desc="steel pin, south bank field"/>')
    x.append('  <!-- new marks: approximate positions from the design drawing -->')
    for m, desc in (("ABT-N", "north abutment, plug in capping beam"),
                    ("ABT-S", "south abutment, plug in capping beam"),
                    ("TR12", "nail in fence post base")):
        e, n, h = approx[m]
        x.append('  <mark id="%s" e="%.1f" n="%.1f" h="%.1f" desc="%s"/>' % (m, e, n, h, desc))
    x.append('  <!-- new marks without coordinates: cairn computes starting values -->')
    x.append('  <mark id="TR10" desc="nail in path edge, north bank"/>')
    x.append('  <mark id="TR11" desc="peg, south bank field"/>')
    x.append('')
    x.append('  <fieldbook file="day1.cfb"/>')
    x.append('  <fieldbook file="day2.cfb"/>')
    x.append('</cairn-project>')
    with open(os.path.join(OUT, "project.xml"), "w") as f:
        f.write("\n".join(x) + "\n")
    return approx


def truth_csv():
    with open(os.path.join(OUT, "truth.csv"), "w") as f:
        f.write("id,e,n,h\n")
        for m, e, n, h in TRUTH:
            f.write("%s,%.4f,%.4f,%.4f\n" % (m, e, n, h))


README_HEAD = """\
# Demo project: Tarrant Reach footbridge control (River Ollen)

A complete, invented control survey for cairn: a fictional site, fictional
marks, realistic numbers. It is generated by `../tools/make_demo.py` (fixed
seed). Do not edit the files by hand; change the script and run it again:

    /usr/bin/python3 projects/tools/make_demo.py

Run it with

    build/cairn check projects/ollen-crossing/project.xml
    build/cairn adjust projects/ollen-crossing/project.xml

Results are written to `projects/ollen-crossing/results/`. cairn's results
support the judgement of a licensed surveyor; they do not replace it, and
local regulations and standards govern.

## The site

A new footbridge crosses the River Ollen (running roughly west to east)
at Tarrant Reach. The site grid is a local plane grid in metres; the
heights are on the site datum.

| mark | role in `project.xml` | what it is |
|---|---|---|
| PIL-N1, PIL-N2, PIL-S1 | held, `hold="enh"` | concrete pillars of the site grid |
| BM-44 | height held, `hold="h"`; e, n scaled (start values) | bolt in the old mill wall |
| GNSS-S2 | weighted, `sd-en="8 mm"`; h a start value | steel pin from the site GNSS survey |
| ABT-N, ABT-S, TR12 | new; approximate e, n, h from the drawing (0.1-1 m out) | abutment plugs, fence-post nail |
| TR10, TR11 | new; no coordinates at all | nail, peg |

- `project.xml`: title, units (m, dms), options (with a tolerance of
  10 mm + 20 ppm and a loop allowance of 4 mm per root km), the total
  station TS1 (1", 1.5", 1 mm + 1.5 ppm, centring 0.6 mm, height 1 mm), the
  level LV1 (0.7 mm per root km), the marks, and the two field books.
- `day1.cfb`: north bank. Setups on PIL-N1 (faces one and two), TR10,
  ABT-N (faces one and two) and PIL-N2. Horizontal circle readings, zenith
  angles and slope distances, with instrument and target heights. The level
  run goes PIL-N1, TR10, BM-44, ABT-N, PIL-N2.
- `day2.cfb`: south bank. Setups on PIL-S1 (faces one and two), ABT-S,
  TR11 (faces one and two), TR12 and GNSS-S2. Each setup carries the
  atmospheric correction in ppm that the crew worked out. The level loop
  goes PIL-S1, TR12, ABT-S, TR11, GNSS-S2 and back to PIL-S1.
- `truth.csv`: the invented true coordinates that the observations were
  computed from (for tests only; a real survey has no such file).

Every sight has a zenith angle, so `dimension="auto"` makes this a
three-dimensional adjustment. The rises join it as height observations.

## How the numbers were made

The observations were computed from `truth.csv` with the formulas of
FORMAT.md "Models": R = 6 371 000 m, k = 0.13, curvature, ih/th, booked
distance = model / (1 + ppm 10^-6). Normal noise was then added at each
observation's a priori standard deviation (the FORMAT.md formulas,
centring included). The values are booked to 0.1" (packed DDD.MMSSs),
0.0001 m for distances and 0.00001 m for rises. BM-44's booked height and
the three pillars are exactly true. GNSS-S2's booked e and n carry noise at
their 8 mm standard deviation.

Marks TR10 and TR11 have no coordinates in the project, so the adjustment
needs computed starting coordinates for them.

## Planted mistakes

Exactly two deliberate field-book mistakes, of different kinds:

"""

README_TAIL = """
What the adjustment should find (`cairn adjust`, the default options):

1. The planted slope distance is flagged (|w| far above the 3.29 critical
   value for alpha = 0.001), with a `transposed-digits` diagnosis whose
   `corrected` value is the true booking given above. Its face-two
   partner, later in the same setup, is booked correctly: `cairn check`
   shows the pair as a failed `repeat-distance` misclosure.
2. The zenith angle of the sight with the wrong target height is flagged,
   with a `target-height` diagnosis (th corrected to 1.700). Its slope
   distance changes by about a millimetre only, so it is not expected to be
   flagged.
3. The global test fails while both are in (exit status 1;
   sigma0^2 = 46.1 with 161 degrees of freedom). The two planted
   observations have by far the largest |w| (about 64 and 56), but with
   `--snoop flag` some two dozen others also exceed the critical value,
   because the two large mistakes spread into their neighbours. With
   `--snoop iterate` the two planted ones are rejected first, and then
   the remaining observations pass the w-test and the global test.

Both `tools/check_inputs.py` (a rough stand-alone check) and the numpy
reference solver `tests/reference/cairn_ref.py` (on the project folded
into one field book) give |w| of 64.0 for the slope distance and 56.2 for
the zenith angle, and sigma0^2 = 1.026 with 159 degrees of freedom and
nothing flagged once both are removed:

    cd projects && /usr/bin/python3 tools/check_inputs.py ollen-crossing/project.xml --truth ollen-crossing/truth.csv --snoop

Tests may compare the adjusted coordinates of the unflagged solution
(after rejection) with `truth.csv`. Expect agreement within about three
times the a posteriori standard deviations.
"""


def readme():
    with open(os.path.join(OUT, "README.md"), "w") as f:
        f.write(README_HEAD)
        for i, p in enumerate(planted, 1):
            f.write("%d. **%s** at `%s`, sight %s: booked `%s`, should be "
                    "`%s` (%s).\n" % (i, p["kind"].capitalize(), p["where"],
                                      p["sight"], p["booked"], p["true"],
                                      p["effect"]))
        f.write(README_TAIL)


def main():
    os.makedirs(OUT, exist_ok=True)
    day1()
    day2()
    project_xml()
    truth_csv()
    readme()
    for p in planted:
        print("planted:", p)


if __name__ == "__main__":
    main()
