#!/usr/bin/python3
"""make_blunders.py -- regenerate the planted-blunder field books.

    /usr/bin/python3 tests/integration/blunders/make_blunders.py [OUTDIR]

Each network is simulated like the integration networks (truth + normal
noise with the a priori sd of FORMAT.md, fixed seeds; the Book class of
tests/reference/make_networks.py), then exactly the readings named below
are spoilt by a known amount. The line before each spoilt reading is the
comment "# planted: ...", so that test-quality.sh knows which observation
snooping must reject (its source is the next line). Scenario: the
(fictional) Corriebrack reservoir scheme, as the other networks.

  blunder_distance.cfb   one horizontal distance 5 cm long
  blunder_direction.cfb  one direction 20" off
  blunder_th.cfb         one 3-D sight booked with th 1.560 instead of 1.650
                         (its zenith angle is the reading that shows it)
  blunder_rise.cfb       one levelled rise 10 mm too high
  blunder_two.cfb        two well-separated blunders in one network: a
                         distance 6 cm long at one end, a direction 25" off
                         at the other
  (blunder_distance and blunder_two also set a tolerance, which the first
  meets and the second does not, for the relative-precision check)
"""
import math
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "reference"))
import make_networks as mn  # noqa: E402  (the simulator, not the oracle)

SEC = mn.SEC


def spoil(b, what, dlen=0.0, dang=0.0, th=None):
    """Spoil the last booked line: add dlen (m) to its distance or rise,
    dang (rad) to its hz, or replace its th; mark it with a comment."""
    words = b.lines[-1].split()
    if dlen:
        for key in ("horiz", "slope"):
            if key in words:
                i = words.index(key) + 1
                words[i] = b.L(float(words[i]) * mn.LEN[b.lunit] + dlen)
                break
        else:   # a rise: value by position
            words[3] = b.L(float(words[3]) * mn.LEN[b.lunit] + dlen, 5)
    if dang:
        i = words.index("hz") + 1
        words[i] = b.ang(mn_parse_dms(words[i]) + dang)
    if th is not None:
        i = words.index("th") + 1
        words[i] = b.L(th, 3)
    b.lines[-1] = " ".join(words)
    b.lines.insert(len(b.lines) - 1, "# planted: " + what)


def mn_parse_dms(text):
    d, rest = text.split(".")
    m, s = int(rest[:2]), int(rest[2:4]) + int(rest[4:] or 0) / 10 ** len(rest[4:])
    return math.radians(int(d) + m / 60 + s / 3600)


def plane_net(fname, seed, header, options=None):
    b = mn.Book(fname, header, seed=seed, options=options)
    b.instrument("TS2", "direction 2sec distance 2mm+2ppm centring 1mm",
                 direction=2 * SEC, dist_a=0.002, dist_b=2.0, centring=0.001)
    b.mark("WB1", 3502.331, 6240.906, hold="en", desc="pillar, west bank")
    b.mark("WB2", 3978.660, 6011.215, hold="en", desc="pillar, east bank")
    pts = (("W10", 3688.412, 6420.551), ("W11", 3905.870, 6390.027),
           ("W12", 4110.334, 6255.713), ("W13", 3640.027, 5955.481),
           ("W14", 3860.118, 5860.402))
    for mid, e, n in pts:
        b.mark(mid, e, n)
    return b


def plane_plan(b, hook):
    plan = (("WB1", ("WB2", "W10", "W11", "W13", "W14")),
            ("WB2", ("WB1", "W11", "W12", "W13", "W14")),
            ("W11", ("W10", "WB1", "WB2", "W12")),
            ("W13", ("WB1", "W10", "WB2", "W14")),
            ("W12", ("WB2", "W11", "W14")))
    for at, tos in plan:
        b.setup(at)
        for to in tos:
            b.sight(to, horiz=True)
            hook(b, at, to)


def net_distance():
    b = plane_net("blunder_distance.cfb", 5101,
                  ["tests: planted blunder, one horizontal distance 5 cm long; tolerance",
                   "20mm+50ppm (all pairs pass); Corriebrack west bank"],
                  options={"tolerance": "20mm+50ppm"})

    def hook(bk, at, to):
        if (at, to) == ("WB2", "W12"):
            spoil(bk, "horiz WB2-W12 booked 5 cm long", dlen=0.05)
    plane_plan(b, hook)
    return b


def net_direction():
    b = plane_net("blunder_direction.cfb", 5102,
                  ["tests: planted blunder, one direction 20 sec off; Corriebrack west bank"])

    def hook(bk, at, to):
        if (at, to) == ("W11", "W10"):
            spoil(bk, "direction W11-W10 booked 20 sec off", dang=20 * SEC)
    plane_plan(b, hook)
    return b


def net_two():
    b = plane_net("blunder_two.cfb", 5105,
                  ["tests: two planted blunders far apart: a distance 6 cm long (WB1-W10),",
                   "a direction 25 sec off (W12-W14); tolerance 2mm+10ppm (some pairs fail);",
                   "Corriebrack west bank"], options={"tolerance": "2mm+10ppm"})

    def hook(bk, at, to):
        if (at, to) == ("WB1", "W10"):
            spoil(bk, "horiz WB1-W10 booked 6 cm long", dlen=0.06)
        if (at, to) == ("W12", "W14"):
            spoil(bk, "direction W12-W14 booked 25 sec off", dang=25 * SEC)
    plane_plan(b, hook)
    return b


def net_th():
    b = mn.Book("blunder_th.cfb", ["tests: planted blunder, a 3-D sight booked with th 1.560 for 1.650;",
                                   "Corriebrack dam face"], seed=5103)
    b.instrument("TS1", mn.TS_1S_TEXT, **mn.TS_1S)
    b.mark("DF1", 2210.118, 5495.602, 131.284, hold="enh", desc="pillar, left bank")
    b.mark("DF2", 3105.774, 5620.930, 128.511, hold="enh", desc="pillar, right bank")
    for mid, e, n, h in (("DF10", 2480.305, 5702.114, 171.602), ("DF11", 2790.882, 5745.019, 172.118),
                         ("DF12", 2650.447, 5380.265, 98.731), ("DF13", 2940.561, 5411.808, 102.994)):
        b.mark(mid, e, n, h)
    plan = {"DF1": (1.561, ("DF2", "DF10", "DF11", "DF12", "DF13")),
            "DF2": (1.602, ("DF1", "DF11", "DF10", "DF13", "DF12")),
            "DF10": (1.498, ("DF11", "DF1", "DF12")),
            "DF13": (1.537, ("DF2", "DF12", "DF11"))}
    for at, (ih, tos) in plan.items():
        b.setup(at, ih=ih)
        for to in tos:
            b.sight(to, zen=True, slope=True, th=1.650)
            if (at, to) == ("DF2", "DF10"):
                spoil(b, "sight DF2-DF10 booked th 1.560, the target stood at 1.650", th=1.560)
    return b


def net_rise():
    b = mn.Book("blunder_rise.cfb", ["tests: planted blunder, one rise 10 mm too high; levelling of the",
                                     "Corriebrack crest bench marks"], seed=5104)
    b.instrument("LV1", "per-km 0.7mm", per_km=0.0007)
    b.mark("BM-A", 0, 0, 141.2675, hold="h", give_en=False, desc="bolt in spillway wall")
    b.mark("BM-B", 0, 0, 152.0418, hold="h", give_en=False, desc="bolt on valve tower")
    for mid, h in (("CR1", 147.8812), ("CR2", 148.0237), ("CR3", 147.9551), ("CR4", 148.1104),
                   ("GW1", 139.4471), ("GW2", 140.0212)):
        b.mark(mid, 0, 0, h, give_en=False)
    runs = (("BM-A", "CR1", 0.42), ("CR1", "CR2", 0.18), ("CR2", "CR3", 0.25), ("CR3", "CR4", 0.21),
            ("CR4", "BM-B", 0.61), ("BM-B", "CR2", 0.55), ("CR3", "GW1", 0.47), ("GW1", "BM-A", 0.37),
            ("CR1", "CR3", 0.36), ("CR4", "CR2", 0.30), ("GW1", "CR1", 0.49), ("GW1", "GW2", 0.22),
            ("GW2", "BM-A", 0.31), ("GW2", "CR4", 0.58))
    for fr, to, km in runs:
        b.rise(fr, to, "LV1", km=km)
        if (fr, to) == ("CR2", "CR3"):
            spoil(b, "rise CR2-CR3 booked 10 mm too high", dlen=0.010)
    return b


def main(argv):
    outdir = argv[1] if len(argv) > 1 else HERE
    for fn in (net_distance, net_direction, net_th, net_rise, net_two):
        b = fn()
        b.write(outdir)
        print("wrote", os.path.join(outdir, b.fname))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
