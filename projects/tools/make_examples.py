#!/usr/bin/python3
"""Generate cairn's examples/: one small, complete input per feature.

Each example is a tiny fictional network: invented true coordinates ->
observations by the FORMAT.md "Models" formulas -> normal noise at each
observation's a priori standard deviation (fixed seed per file) -> booked
to 0.1" (or the equivalent in deg / gon), 0.0001 of the length unit for
distances and 0.00001 for rises.  Every non-held mark gets starting
coordinates (0.05-0.5 off the truth), because the engine's first version
needs them.

    /usr/bin/python3 projects/tools/make_examples.py

overwrites the example files in examples/ (README.md there is written by
hand).  Check them with

    for f in examples/*.cfb examples/*.xml; do
        /usr/bin/python3 projects/tools/check_inputs.py $f; done
"""

import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import netsim as ns  # noqa: E402

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "examples")

# ---------------------------------------------------------------------------
# values with units, rendered the field-book way or the XML way
# ---------------------------------------------------------------------------


class U:
    """A standard deviation or tolerance: U("1", "mm", "1.5", "ppm")."""

    def __init__(self, *terms, quoted=False):
        self.terms = list(zip(terms[0::2], terms[1::2]))
        self.quoted = quoted

    def cfb(self):
        if self.quoted:
            return '"' + self.xml() + '"'
        return "+".join(n + u for n, u in self.terms)

    def xml(self):
        return " + ".join(n + " " + u for n, u in self.terms)

    def si(self):
        """(length or angle in SI, ppm)."""
        v, p = 0.0, 0.0
        for n, u in self.terms:
            x = float(n)
            if u == "ppm":
                p += x
            elif u in ns.SD_LENGTH:
                v += x * ns.SD_LENGTH[u]
            else:
                v += x * ns.SD_ANGLE[u]
        return v, p


def ts_params(direction, zenith, distance, centring, height):
    return {"direction": direction.si()[0], "zenith": zenith.si()[0],
            "dist_a": distance.si()[0], "dist_b": distance.si()[1],
            "centring": centring.si()[0], "height": height.si()[0]}


class Ex:
    def __init__(self, name, seed, lunit="m", aunit="dms", k=0.13, scale=1.0,
                 hyphen=False):
        self.name, self.lunit, self.aunit = name, lunit, aunit
        self.rng = random.Random(seed)
        self.k, self.scale, self.hyphen = k, scale, hyphen
        self.items = []
        self.T = {}
        self.inst = {}
        self.L = ns.LENGTH_UNITS[lunit]

    # -- records ----------------------------------------------------------
    def comment(self, *lines):
        for t in lines:
            self.items.append(("comment", t))

    def blank(self):
        self.items.append(("blank",))

    def units(self):
        self.items.append(("units", self.lunit, self.aunit))

    def option(self, k, v):
        self.items.append(("option", k, v))
        if k == "refraction":
            self.k = float(v)
        if k == "scale":
            self.scale = float(v)

    def instrument(self, iid, **kw):
        kv = [(k.replace("_", "-"), v) for k, v in kw.items()]
        self.items.append(("instrument", iid, kv))
        if "per_km" in kw or "per_setup" in kw:
            self.inst[iid] = {"per_km": kw["per_km"].si()[0] if "per_km" in kw else None,
                              "per_setup": kw["per_setup"].si()[0] if "per_setup" in kw else None,
                              "kind": "level"}
        else:
            p = ts_params(kw["direction"], kw["zenith"], kw["distance"],
                          kw["centring"], kw["height"])
            p["kind"] = "ts"
            self.inst[iid] = p

    def mark(self, mid, e=None, n=None, h=None, hold=None, start=True, show=("e", "n", "h"),
             sd_en=None, sd_h=None, desc=None):
        """Truth e, n, h in project length units.  hold: written as given
        (exact).  start: not held -> write offset starting values."""
        self.T[mid] = tuple(None if v is None else v * self.L for v in (e, n, h))
        kv = []
        vals = {"e": e, "n": n, "h": h}
        held = hold or ""
        for c in ("e", "n", "h"):
            v = vals[c]
            if v is None or c not in show:
                continue
            exact = (c in "en" and "en" in held) or (c == "h" and "h" in held)
            if exact:
                kv.append((c, "%.3f" % v))
            elif sd_en is not None and c in "en":
                kv.append((c, "%.3f" % (v + self.rng.gauss(0, sd_en.si()[0] / self.L))))
            elif sd_h is not None and c == "h":
                kv.append((c, "%.3f" % (v + self.rng.gauss(0, sd_h.si()[0] / self.L))))
            elif start:
                off = self.rng.uniform(0.05, 0.5) * self.rng.choice((-1, 1))
                kv.append((c, "%.2f" % (v + off)))
        if hold:
            kv.append(("hold", hold))
        if sd_en is not None:
            kv.append(("sd-en", sd_en))
        if sd_h is not None:
            kv.append(("sd-h", sd_h))
        if desc:
            kv.append(("desc", desc))
        self.items.append(("mark", mid, kv))

    def ang(self, rad):
        return ns.fmt_angle(rad, self.aunit, self.hyphen)

    def ln(self, x_m, dec=4):
        return ns.fmt_len(x_m, self.lunit, dec)

    def setup(self, at, ih, targets, inst="TS1", faces=(1,), ppm=0.0, show_inst=True,
              sight_opts=None, face2_no_zen=()):
        """targets: [(to, th, want)], want a string of letters:
        d direction, z zenith, s slope, h horiz.  sight_opts: {to: {key: U
        or text}} extra sight keywords (hz-sd, zen-sd, dist-sd, ppm)."""
        I = self.inst[inst]
        sight_opts = sight_opts or {}
        rng = self.rng
        A = self.T[at]
        ih_m = ih * self.L
        kv = []
        if show_inst:
            kv.append(("inst", inst))
        if ih:
            kv.append(("ih", "%.3f" % ih))
        if ppm:
            kv.append(("ppm", "%.1f" % ppm))
        omega = None
        if any("d" in t[2] for t in targets):
            t0 = ns.azimuth(A, self.T[targets[0][0]])
            omega = t0 - math.radians(rng.uniform(0.0, 0.01))
        sights = []
        for face in faces:
            order = targets if face == 1 else list(reversed(targets))
            for to, th, want in order:
                B = self.T[to]
                th_m = (th or 0.0) * self.L
                opts = sight_opts.get(to, {})
                sppm = float(opts["ppm"]) if "ppm" in opts else 0.0
                fac = 1.0 + (ppm + sppm) * 1e-6
                d = ns.plane_dist(A, B)
                s = []
                if "d" in want:
                    sd = opts["hz-sd"].si()[0] if "hz-sd" in opts else ns.sd_direction(I, d)
                    hz = ns.azimuth(A, B) - omega + (math.pi if face == 2 else 0)
                    s.append(("hz", self.ang(hz + rng.gauss(0, sd))))
                if "z" in want:
                    sd = opts["zen-sd"].si()[0] if "zen-sd" in opts else ns.sd_zenith(I, d)
                    z = ns.zenith_model(A, B, ih_m, th_m, self.k)
                    if face == 2:
                        z = 2 * math.pi - z
                    s.append(("zen", self.ang(z + rng.gauss(0, sd))))
                for key in ("s", "h"):
                    if key not in want:
                        continue
                    model = (ns.slope_model(A, B, ih_m, th_m, self.scale) if key == "s"
                             else ns.horiz_model(A, B, self.scale))
                    booked = model / fac
                    if "dist-sd" in opts:
                        a, b = opts["dist-sd"].si()
                        sd = math.sqrt(a * a + (b * 1e-6 * booked) ** 2)
                    else:
                        sd = ns.sd_distance(I, booked)
                    s.append(("slope" if key == "s" else "horiz",
                              self.ln(booked + rng.gauss(0, sd))))
                if th:
                    s.append(("th", "%.3f" % th))
                if face == 2 and ("z" not in want or to in face2_no_zen):
                    s.append(("face", "2"))
                for k2 in ("ppm", "hz-sd", "zen-sd", "dist-sd"):
                    if k2 in opts:
                        s.append((k2, opts[k2]))
                sights.append((to, s))
        self.items.append(("setup", at, kv, sights))

    def angle(self, at, fr, to, inst="TS1", sd=None):
        A, F, B = self.T[at], self.T[fr], self.T[to]
        if sd is not None:
            sig = sd.si()[0]
        else:
            sig = ns.sd_angle(self.inst[inst], ns.plane_dist(A, F), ns.plane_dist(A, B),
                              ns.plane_dist(F, B))
        val = ns.azimuth(A, B) - ns.azimuth(A, F) + self.rng.gauss(0, sig)
        kv = [("sd", sd)] if sd is not None else [("inst", inst)]
        self.items.append(("angle", (at, fr, to, self.ang(val)), kv))

    def azimuth(self, fr, to, sd):
        val = ns.azimuth(self.T[fr], self.T[to]) + self.rng.gauss(0, sd.si()[0])
        self.items.append(("azimuth", (fr, to, self.ang(val)), [("sd", sd)]))

    def rise(self, fr, to, km=None, setups=None, inst=None, sd=None):
        lv = self.inst[inst] if inst else [i for i in self.inst.values() if i["kind"] == "level"][0]
        if sd is not None:
            sig = sd.si()[0]
        elif km is not None:
            sig = ns.sd_rise(lv, km=km)
        else:
            sig = ns.sd_rise(lv, setups=setups)
        dh = self.T[to][2] - self.T[fr][2] + self.rng.gauss(0, sig)
        kv = []
        if km is not None:
            kv.append(("km", "%.3f" % km))
        if setups is not None:
            kv.append(("setups", "%d" % setups))
        if sd is not None:
            kv.append(("sd", sd))
        if inst:
            kv.append(("inst", inst))
        self.items.append(("rise", (fr, to, ns.fmt_len(dh, self.lunit, 5)), kv))

    def raw(self, text):
        self.items.append(("raw", text))

    # -- rendering ---------------------------------------------------------
    @staticmethod
    def cv(v):
        if isinstance(v, U):
            return v.cfb()
        if " " in v or v == "":
            return '"%s"' % v
        return v

    def kvs(self, kv):
        return "".join(" %s %s" % (k, self.cv(v)) for k, v in kv)

    def cfb(self):
        out = []
        for it in self.items:
            t = it[0]
            if t == "comment":
                out.append("# " + it[1] if it[1] else "#")
            elif t == "blank":
                out.append("")
            elif t == "raw":
                out.append(it[1])
            elif t == "units":
                out.append("units %s %s" % (it[1], it[2]))
            elif t == "option":
                out.append("option %s %s" % (it[1], self.cv(it[2])))
            elif t in ("instrument", "mark"):
                out.append("%s %s%s" % (t, it[1], self.kvs(it[2])))
            elif t == "setup":
                if out and out[-1] != "":
                    out.append("")
                out.append("at %s%s" % (it[1], self.kvs(it[2])))
                for to, s in it[3]:
                    out.append("to %s%s" % (to, self.kvs(s)))
            else:
                out.append("%s %s%s" % (t, " ".join(it[1]), self.kvs(it[2])))
        return "\n".join(out) + "\n"

    @staticmethod
    def xv(v):
        return v.xml() if isinstance(v, U) else v

    def xattrs(self, kv):
        return "".join(' %s="%s"' % (k, self.xv(v)) for k, v in kv)

    def xml(self, title, description, fieldbooks=()):
        out = ['<?xml version="1.0" encoding="UTF-8"?>']
        head = []
        body = []
        opts = []
        for it in self.items:
            t = it[0]
            if t == "comment":
                head.append(it[1])
            elif t == "blank":
                body.append("")
            elif t == "units":
                body.append('  <units length="%s" angle="%s"/>' % (it[1], it[2]))
            elif t == "option":
                opts.append((it[1], it[2]))
            elif t in ("instrument", "mark"):
                body.append("  <%s id=\"%s\"%s/>" % (t, it[1], self.xattrs(it[2])))
            elif t == "setup":
                body.append('  <setup at="%s"%s>' % (it[1], self.xattrs(it[2])))
                for to, s in it[3]:
                    body.append('    <sight to="%s"%s/>' % (to, self.xattrs(s)))
                body.append("  </setup>")
            elif t == "angle":
                at, fr, to, val = it[1]
                body.append('  <angle at="%s" from="%s" to="%s" value="%s"%s/>' % (
                    at, fr, to, val, self.xattrs(it[2])))
            elif t == "azimuth":
                fr, to, val = it[1]
                body.append('  <azimuth from="%s" to="%s" value="%s"%s/>' % (
                    fr, to, val, self.xattrs(it[2])))
            elif t == "rise":
                fr, to, val = it[1]
                body.append('  <rise from="%s" to="%s" value="%s"%s/>' % (
                    fr, to, val, self.xattrs(it[2])))
        out.append("<!--")
        out += ["  " + h for h in head]
        out.append("-->")
        out.append('<cairn-project format="1">')
        out.append("  <title>%s</title>" % title)
        out.append("  <description>%s</description>" % description)
        if opts:
            line = "  <options"
            for k, v in opts:
                piece = ' %s="%s"' % (k, self.xv(v))
                if len(line) + len(piece) > 78:
                    out.append(line)
                    line = "          " + piece
                else:
                    line += piece
            out.append(line + "/>")
        out += body
        for fb in fieldbooks:
            out.append('  <fieldbook file="%s"/>' % fb)
        out.append("</cairn-project>")
        return "\n".join(out) + "\n"

    def write(self, text, name=None):
        with open(os.path.join(OUT, name or self.name), "w") as f:
            f.write(text)


TS = dict(direction=U("1", "sec"), zenith=U("1.5", "sec"), distance=U("1", "mm", "1.5", "ppm"),
          centring=U("0.6", "mm"), height=U("1", "mm"))
SEC = lambda x: U(x, "sec")  # noqa: E731
MM = lambda x: U(x, "mm")    # noqa: E731


def head(e, *lines):
    e.comment(*lines)
    e.comment("Fictional marks and numbers, generated by projects/tools/make_examples.py.")
    e.blank()


# ---------------------------------------------------------------------------
# the examples
# ---------------------------------------------------------------------------

def level_run():
    e = Ex("level-run.cfb", 101)
    head(e, "level-run.cfb: a small levelling network of rises with km.",
         "Two benchmarks held in height (hold h); three new marks with start heights.",
         "No total station, no zenith angles: heights only.")
    e.units()
    e.instrument("LV1", per_km=MM("0.8"))
    e.mark("BM-A", h=20.150, hold="h", desc="bolt in church plinth")
    e.mark("BM-B", h=23.412, hold="h", desc="bolt in bridge parapet")
    e.mark("LP1", h=21.874)
    e.mark("LP2", h=24.031)
    e.mark("LP3", h=22.507)
    e.blank()
    e.comment("rise FROM TO VALUE (metres, h(TO) - h(FROM)) km LENGTH-OF-RUN")
    e.rise("BM-A", "LP1", km=0.420)
    e.rise("LP1", "LP2", km=0.385)
    e.rise("LP2", "BM-B", km=0.290)
    e.rise("BM-B", "LP3", km=0.510, inst="LV1")
    e.rise("LP3", "BM-A", km=0.365)
    e.rise("LP1", "LP3", km=0.250)
    e.write(e.cfb())


def level_setups():
    e = Ex("level-setups.cfb", 102)
    head(e, "level-setups.cfb: rises weighted per instrument setup, not per km.",
         "The level's precision is per-setup; each rise says how many setups it took.")
    e.units()
    e.instrument("LV2", per_setup=MM("0.3"))
    e.mark("RM1", h=104.882, hold="h", desc="rivet on culvert headwall")
    e.mark("SP1", h=106.31)
    e.mark("SP2", h=109.74)
    e.mark("SP3", h=107.05)
    e.blank()
    e.rise("RM1", "SP1", setups=3)
    e.rise("SP1", "SP2", setups=4)
    e.rise("SP2", "SP3", setups=3)
    e.rise("SP3", "RM1", setups=2)
    e.rise("SP1", "SP3", setups=2)
    e.write(e.cfb())


def traverse_2d():
    e = Ex("traverse-2d.cfb", 103)
    head(e, "traverse-2d.cfb: a plane traverse of directions and horizontal distances.",
         "K1, K2, K3 held in position (hold en); T1 and T2 new with start values.",
         "No zenith angles, so dimension auto is 2.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("K1", 1000.000, 2000.000, hold="en", desc="pin in kerb")
    e.mark("K2", 1184.337, 2071.926, hold="en")
    e.mark("K3", 1402.118, 1893.540, hold="en")
    e.mark("T1", 1190.610, 1925.208)
    e.mark("T2", 1305.442, 1846.117)
    e.blank()
    e.setup("K2", 0, [("K1", 0, "d"), ("T1", 0, "dh")])
    e.setup("T1", 0, [("K2", 0, "dh"), ("T2", 0, "dh"), ("K1", 0, "dh")])
    e.setup("T2", 0, [("T1", 0, "dh"), ("K3", 0, "dh")])
    e.setup("K3", 0, [("T2", 0, "d"), ("K2", 0, "d")])
    e.write(e.cfb())


def angles_azimuth():
    e = Ex("angles-azimuth.cfb", 104)
    head(e, "angles-azimuth.cfb: separate angle and azimuth records.",
         "One mark held (A1); the azimuth A1->A2 fixes the rotation, the distances",
         "the scale.  angle AT FROM TO VALUE: clockwise at AT from FROM to TO.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("A1", 500.000, 800.000, hold="en")
    e.mark("A2", 640.215, 912.480)
    e.mark("A3", 705.990, 760.335)
    e.mark("A4", 560.128, 655.904)
    e.blank()
    e.azimuth("A1", "A2", SEC("3"))
    e.angle("A1", "A2", "A3")
    e.angle("A1", "A3", "A4")
    e.angle("A2", "A3", "A1")
    e.angle("A3", "A4", "A2")
    e.angle("A4", "A1", "A3", sd=SEC("2.5"))
    e.comment("distances: setups with horizontal distances only (no orientation unknown)")
    e.setup("A1", 0, [("A2", 0, "h"), ("A3", 0, "h"), ("A4", 0, "h")])
    e.setup("A3", 0, [("A2", 0, "h"), ("A4", 0, "h")])
    e.write(e.cfb())


def trilateration():
    e = Ex("trilateration.cfb", 105)
    head(e, "trilateration.cfb: horizontal distances only.",
         "D1 and D2 held (position); D3, D4, D5 fixed by distances alone.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("D1", 3000.000, 7000.000, hold="en")
    e.mark("D2", 3251.774, 7040.119, hold="en")
    e.mark("D3", 3190.405, 7188.630)
    e.mark("D4", 3035.862, 7203.447)
    e.mark("D5", 3120.511, 6890.274)
    e.blank()
    e.setup("D1", 0, [("D3", 0, "h"), ("D4", 0, "h"), ("D5", 0, "h")])
    e.setup("D2", 0, [("D3", 0, "h"), ("D4", 0, "h"), ("D5", 0, "h")])
    e.setup("D3", 0, [("D4", 0, "h"), ("D5", 0, "h")])
    e.setup("D4", 0, [("D5", 0, "h")])
    e.write(e.cfb())


def zenith_3d():
    e = Ex("zenith-3d.cfb", 306)
    head(e, "zenith-3d.cfb: directions, zenith angles and slope distances with",
         "instrument height (ih) and target heights (th): a 3-D adjustment.",
         "Z1, Z2, Z3 held in e, n, h; Z4 and Z5 new with start values.")
    e.units()
    e.option("refraction", "0.13")
    e.instrument("TS1", **TS)
    e.mark("Z1", 2000.000, 4000.000, 55.120, hold="enh")
    e.mark("Z2", 2210.504, 4065.317, 61.884, hold="enh")
    e.mark("Z3", 2120.770, 3822.461, 49.305, hold="enh")
    e.mark("Z4", 2105.338, 3950.092, 53.777)
    e.mark("Z5", 2230.915, 3905.660, 58.412)
    e.blank()
    e.setup("Z1", 1.562, [("Z2", 1.500, "dzs"), ("Z4", 1.800, "dzs"), ("Z3", 1.500, "dzs")])
    e.setup("Z4", 1.498, [("Z1", 1.500, "dzs"), ("Z2", 1.500, "dzs"), ("Z5", 1.650, "dzs"),
                          ("Z3", 1.500, "dzs")])
    e.setup("Z5", 1.611, [("Z2", 1.500, "dzs"), ("Z3", 1.500, "dzs"), ("Z4", 1.800, "dzs")])
    e.write(e.cfb())


def face_two():
    e = Ex("face-two.cfb", 107)
    head(e, "face-two.cfb: rounds in face one and face two.",
         "A face-two sight is known by its zenith angle above 180 degrees, or by",
         "'face 2' when it has no zenith angle (the direction to W3 below).",
         "Face two directions are modelled as t - omega + 180 degrees.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("W1", 800.000, 1500.000, 12.400, hold="enh")
    e.mark("W2", 962.118, 1577.903, 14.062, hold="enh")
    e.mark("W3", 905.330, 1391.227, 11.871, hold="enh")
    e.mark("W4", 880.645, 1480.552, 13.215)
    e.blank()
    e.setup("W4", 1.540, [("W1", 1.600, "dzs"), ("W2", 1.600, "dzs"), ("W3", 1.600, "d")],
            faces=(1, 2))
    e.setup("W1", 1.487, [("W2", 1.600, "dzs"), ("W4", 1.600, "dzs"), ("W3", 1.600, "dzs")],
            faces=(1, 2))
    e.write(e.cfb())


def weighted_control():
    e = Ex("weighted-control.cfb", 208)
    head(e, "weighted-control.cfb: control that is neither held nor free.",
         "G1, G2 weighted in position (sd-en) and height (sd-h); G3 in position",
         "only, its height a start value.  G4 new.  No held marks.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("G1", 6100.000, 3300.000, 88.410, sd_en=MM("5"), sd_h=MM("10"), desc="GNSS pin")
    e.mark("G2", 6344.172, 3412.705, 91.226, sd_en=MM("5"), sd_h=MM("10"), desc="GNSS pin")
    e.mark("G3", 6290.880, 3155.318, 86.974, sd_en=MM("5"))
    e.mark("G4", 6205.413, 3260.097, 87.930)
    e.blank()
    e.setup("G4", 1.520, [("G1", 1.600, "dzs"), ("G2", 1.600, "dzs"), ("G3", 1.600, "dzs")])
    e.setup("G1", 1.455, [("G2", 1.600, "dzs"), ("G4", 1.600, "dzs"), ("G3", 1.600, "dzs")])
    e.setup("G3", 1.602, [("G4", 1.600, "dzs"), ("G2", 1.600, "dzs")])
    e.write(e.cfb())


def units_usft_gon():
    e = Ex("units-usft-gon.cfb", 209, lunit="usft", aunit="gon")
    head(e, "units-usft-gon.cfb: US survey feet and gon.",
         "Coordinates, heights, distances and rises are in US survey feet; angles",
         "in gon (400 a circle).  Standard deviations carry their own units:",
         "mgon and cc (0.0001 gon) for angles, mm and usft for lengths.")
    e.units()
    e.instrument("TS1", direction=U("0.3", "mgon"), zenith=U("5", "cc"),
                 distance=U("2", "mm", "2", "ppm"), centring=U("0.003", "usft"),
                 height=U("0.003", "usft"))
    e.mark("U1", 10000.000, 20000.000, 350.250, hold="enh")
    e.mark("U2", 10705.882, 20211.604, 362.118, hold="enh")
    e.mark("U3", 10288.117, 19354.926, 341.907, hold="enh")
    e.mark("U4", 10402.550, 19800.311, 348.660)
    e.blank()
    e.setup("U4", 5.120, [("U1", 5.250, "dzs"), ("U2", 5.250, "dzs"), ("U3", 5.250, "dzs")])
    e.setup("U1", 4.985, [("U2", 5.250, "dzs"), ("U4", 5.250, "dzs"), ("U3", 5.250, "dzs")])
    e.write(e.cfb())


def units_ft_deg():
    e = Ex("units-ft-deg.cfb", 210, lunit="ft", aunit="deg")
    head(e, "units-ft-deg.cfb: international feet and decimal degrees.",
         "A plane traverse (no zenith angles, so dimension auto is 2) and a",
         "separate level line for the heights.  A standard deviation may be a",
         "quoted sum with blanks, or a sum written without them.")
    e.units()
    e.instrument("TS1", direction=U("1.5", "sec"), zenith=U("2", "sec"),
                 distance=U("0.005", "ft", "2", "ppm", quoted=True), centring=U("0.002", "ft"),
                 height=U("0.003", "ft"))
    e.instrument("LV1", per_km=U("1", "mm"))
    e.mark("F1", 5000.000, 5000.000, 101.250, hold="enh")
    e.mark("F2", 5612.400, 5211.780, 98.412, hold="enh")
    e.mark("F3", 5320.215, 4788.905, 99.870)
    e.mark("F4", 5851.006, 4902.337, 97.005)
    e.blank()
    e.setup("F1", 0, [("F2", 0, "d"), ("F3", 0, "dh")])
    e.setup("F3", 0, [("F1", 0, "dh"), ("F2", 0, "dh"), ("F4", 0, "dh")])
    e.setup("F4", 0, [("F3", 0, "dh"), ("F2", 0, "dh")])
    e.setup("F2", 0, [("F4", 0, "dh"), ("F3", 0, "d"), ("F1", 0, "d")])
    e.blank()
    e.comment("rises in feet; km is always kilometres")
    e.rise("F1", "F3", km=0.130)
    e.rise("F3", "F4", km=0.165)
    e.rise("F4", "F2", km=0.125)
    e.write(e.cfb())


def dms_hyphen():
    e = Ex("dms-hyphen.cfb", 111, hyphen=True)
    head(e, "dms-hyphen.cfb: angles in the D-M-S form 123-45-30.5 (degrees,",
         "minutes, seconds with hyphens) instead of packed DDD.MMSSs.  Both forms",
         "are accepted in the dms unit.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("H1", 300.000, 600.000, hold="en")
    e.mark("H2", 455.307, 689.144, hold="en")
    e.mark("H3", 410.882, 512.096)
    e.mark("H4", 520.661, 570.415)
    e.blank()
    e.setup("H1", 0, [("H2", 0, "d"), ("H3", 0, "dh")])
    e.setup("H3", 0, [("H1", 0, "dh"), ("H2", 0, "dh"), ("H4", 0, "dh")])
    e.setup("H4", 0, [("H3", 0, "dh"), ("H2", 0, "dh")])
    e.angle("H2", "H4", "H1")
    e.write(e.cfb())


def free_network():
    e = Ex("free-network.cfb", 112)
    head(e, "free-network.cfb: no held or weighted control at all.",
         "The network floats: cairn fixes the minimum itself (e and n of the first",
         "mark, one component of the second; the report names them).  Residuals",
         "and tests do not depend on that choice; coordinates do.  The same",
         "happens to any project with --datum free.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("R1", 100.000, 100.000)
    e.mark("R2", 247.310, 131.664)
    e.mark("R3", 221.905, 260.118)
    e.mark("R4", 84.412, 228.750)
    e.blank()
    e.setup("R1", 0, [("R2", 0, "dh"), ("R3", 0, "dh"), ("R4", 0, "dh")])
    e.setup("R3", 0, [("R4", 0, "dh"), ("R1", 0, "dh"), ("R2", 0, "dh")])
    e.setup("R2", 0, [("R3", 0, "dh"), ("R4", 0, "d")])
    e.write(e.cfb())


def sd_override():
    e = Ex("sd-override.cfb", 113)
    head(e, "sd-override.cfb: a sight's own standard deviations.",
         "hz-sd, zen-sd and dist-sd replace the instrument's whole formula for that",
         "reading (e.g. a sight to a poorly defined target, or a short sight",
         "to a mini prism).  Each is a value with a unit.")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("S1", 4000.000, 1000.000, 20.000, hold="enh")
    e.mark("S2", 4133.560, 1089.247, 22.515, hold="enh")
    e.mark("S3", 4081.904, 880.331, 18.760, hold="enh")
    e.mark("S4", 4060.278, 990.812, 19.402)
    e.blank()
    e.setup("S4", 1.530, [("S1", 1.600, "dzs"), ("S2", 1.600, "dzs"), ("S3", 1.600, "dzs")],
            sight_opts={"S2": {"hz-sd": SEC("3"), "zen-sd": SEC("5")},
                        "S3": {"dist-sd": MM("2.5")}})
    e.setup("S1", 1.477, [("S2", 1.600, "dzs"), ("S4", 0.150, "dzs"), ("S3", 1.600, "dzs")],
            sight_opts={"S4": {"dist-sd": MM("3"), "hz-sd": SEC("2.5")}})
    e.write(e.cfb())


def ppm():
    e = Ex("ppm.cfb", 114)
    head(e, "ppm.cfb: atmospheric corrections known in the field.",
         "A setup's ppm applies to all its distances; a sight's ppm is added to it.",
         "The booked distance is multiplied by (1 + (ppm_setup + ppm_sight) 1e-6).")
    e.units()
    e.instrument("TS1", **TS)
    e.mark("P1", 7000.000, 3000.000, 140.200, hold="enh")
    e.mark("P2", 7412.088, 3155.670, 151.874, hold="enh")
    e.mark("P3", 7288.410, 2705.118, 132.650, hold="enh")
    e.mark("P4", 7215.335, 2960.482, 138.917)
    e.blank()
    e.setup("P4", 1.505, [("P1", 1.600, "dzs"), ("P2", 1.600, "dzs"), ("P3", 1.600, "dzs")],
            ppm=12.5, sight_opts={"P2": {"ppm": "-2.0"}})
    e.setup("P1", 1.550, [("P2", 1.600, "dzs"), ("P4", 1.600, "dzs"), ("P3", 1.600, "dzs")],
            ppm=11.8)
    e.write(e.cfb())


def dimension_1():
    e = Ex("dimension-1.cfb", 115)
    head(e, "dimension-1.cfb: heights only, from rises and trigonometric heights.",
         "option dimension 1: a sight with a zenith angle and a slope distance",
         "becomes the height difference s cos z + (1 - k)(s sin z)^2 / 2R + ih - th.",
         "Directions are not used; marks need only heights.")
    e.units()
    e.option("dimension", "1")
    e.instrument("TS1", **TS)
    e.instrument("LV1", per_km=MM("0.7"))
    e.mark("V1", 1500.000, 2500.000, 62.318, hold="h", show=("h",), desc="benchmark")
    e.mark("V2", 1620.442, 2588.106, 66.905, show=("h",))
    e.mark("V3", 1710.318, 2455.780, 59.442, show=("h",))
    e.mark("V4", 1585.075, 2380.913, 61.027, show=("h",))
    e.blank()
    e.setup("V2", 1.544, [("V1", 1.600, "dzs"), ("V3", 1.600, "dzs"), ("V4", 1.600, "dzs")])
    e.setup("V4", 1.490, [("V1", 1.600, "dzs"), ("V3", 1.600, "dzs")])
    e.rise("V1", "V4", km=0.150)
    e.rise("V4", "V3", km=0.160)
    e.write(e.cfb())


def dimension_2():
    e = Ex("dimension-2.cfb", 116)
    head(e, "dimension-2.cfb: a plane adjustment of 3-D readings.",
         "option dimension 2: each slope distance becomes the horizontal distance",
         "s sin z with its zenith angle; the zenith angles are not used otherwise,",
         "and no heights are needed.")
    e.units()
    e.option("dimension", "2")
    e.instrument("TS1", **TS)
    e.mark("Q-1", 900.000, 900.000, 30.150, hold="en", show=("e", "n"))
    e.mark("Q-2", 1075.884, 962.410, 34.702, hold="en", show=("e", "n"))
    e.mark("Q-3", 1010.335, 781.902, 27.930, show=("e", "n"))
    e.mark("Q-4", 1122.006, 840.617, 31.448, show=("e", "n"))
    e.blank()
    e.setup("Q-3", 1.520, [("Q-1", 1.600, "dzs"), ("Q-2", 1.600, "dzs"), ("Q-4", 1.600, "dzs")])
    e.setup("Q-4", 1.470, [("Q-3", 1.600, "dzs"), ("Q-2", 1.600, "dzs")])
    e.setup("Q-1", 1.555, [("Q-2", 1.600, "d"), ("Q-3", 1.600, "dzs")])
    e.write(e.cfb())


def project_pair():
    # one network, split between the XML and the field book it includes
    e = Ex("project.xml", 117)
    e.comment("project.xml: a project file that holds some observations itself",
              "(a setup, an angle, an azimuth, a rise) and includes a field book,",
              "project-day.cfb, with more.  Paths are relative to this file.",
              "Fictional marks and numbers, generated by projects/tools/make_examples.py.")
    e.units()
    e.option("dimension", "auto")
    e.option("tolerance", U("10", "mm", "20", "ppm"))
    e.instrument("TS1", **TS)
    e.instrument("LV1", per_km=MM("0.7"))
    e.mark("X1", 1200.000, 3400.000, 45.210, hold="enh", desc="pillar, east gate")
    e.mark("X2", 1388.906, 3472.318, 47.805, hold="enh", desc="pillar, boathouse")
    e.mark("X3", 1310.442, 3275.560, 43.118)
    e.mark("X4", 1425.107, 3330.925, 44.906)
    e.setup("X3", 1.535, [("X1", 1.600, "dzs"), ("X2", 1.600, "dzs"), ("X4", 1.600, "dzs")])
    e.angle("X1", "X2", "X3")
    e.azimuth("X2", "X4", SEC("5"))
    e.rise("X1", "X3", km=0.180)
    # the day book: observations only
    d = Ex("project-day.cfb", 118)
    d.T, d.inst = e.T, e.inst
    d.comment("project-day.cfb: the field book included by project.xml (not a project",
              "on its own: units, instruments and marks are in project.xml).",
              "Fictional marks and numbers, generated by projects/tools/make_examples.py.")
    d.blank()
    d.setup("X4", 1.498, [("X3", 1.600, "dzs"), ("X2", 1.600, "dzs"), ("X1", 1.600, "dzs")])
    d.setup("X2", 1.612, [("X4", 1.600, "dzs"), ("X3", 1.600, "dzs")], faces=(1, 2))
    d.rise("X3", "X4", km=0.140)
    d.rise("X4", "X2", km=0.160)
    e.write(e.xml("Gatehouse Lane boundary control (example)",
                  "A small invented network split between a project file and a field book.",
                  fieldbooks=("project-day.cfb",)))
    d.write(d.cfb())


def options_xml():
    e = Ex("options.xml", 119)
    e.comment("options.xml: every adjustment option, each set away from its default:",
              "dimension 3, refraction 0.14, a combined scale factor of 0.99987 (grid",
              "distance = booked horizontal distance x scale), 99 % error ellipses,",
              "alpha 0.01 and power 0.90 for the w-test and MDB, a 10 % global test,",
              "a relative-precision tolerance, an iteration limit and a levelling",
              "allowance for cairn check.  The options with their defaults:",
              "  dimension auto, refraction 0.13, scale 1, confidence 0.95,",
              "  alpha 0.001, power 0.80, global-alpha 0.05, tolerance none,",
              "  max-iterations 25, loop-allowance none.",
              "Fictional marks and numbers, generated by projects/tools/make_examples.py.")
    e.units()
    for k, v in (("dimension", "3"), ("refraction", "0.14"), ("scale", "0.99987"),
                 ("confidence", "0.99"), ("alpha", "0.01"), ("power", "0.90"),
                 ("global-alpha", "0.10"), ("tolerance", U("5", "mm", "10", "ppm")),
                 ("max-iterations", "40"), ("loop-allowance", MM("6"))):
        e.option(k, v)
    e.instrument("TS1", **TS)
    e.instrument("LV1", per_km=MM("0.7"))
    e.mark("O1", 2500.000, 6100.000, 75.330, hold="enh")
    e.mark("O2", 2780.512, 6188.204, 80.917, hold="enh")
    e.mark("O3", 2655.830, 5905.441, 71.206)
    e.mark("O4", 2840.147, 5990.663, 73.878)
    e.setup("O3", 1.528, [("O1", 1.600, "dzs"), ("O2", 1.600, "dzs"), ("O4", 1.600, "dzs")])
    e.setup("O4", 1.560, [("O3", 1.600, "dzs"), ("O2", 1.600, "dzs"), ("O1", 1.600, "dzs")])
    e.rise("O3", "O4", km=0.210)
    e.rise("O4", "O2", km=0.230)
    e.write(e.xml("Options example", "Every option of the options element, set."))


def include_pair():
    e = Ex("include.cfb", 120)
    head(e, "include.cfb: a field book that reads another one (fieldbook FILE, a",
         "path relative to this file), with the title and description records",
         "for the report header.")
    e.raw('title "Orchard Row drainage levels (example)"')
    e.raw('description "Levels to the new outfall; the second day is in include-day.cfb."')
    e.units()
    e.instrument("LV1", per_km=MM("1"))
    e.mark("OR-BM1", h=12.604, hold="h", desc="bolt in pump-house step")
    e.mark("OR-BM2", h=15.377, hold="h")
    e.mark("OR1", h=13.92)
    e.mark("OR2", h=14.55)
    e.blank()
    e.rise("OR-BM1", "OR1", km=0.240)
    e.rise("OR1", "OR2", km=0.180)
    e.rise("OR2", "OR-BM2", km=0.210)
    e.blank()
    d = Ex("include-day.cfb", 121)
    d.T, d.inst = e.T, e.inst
    d.comment("include-day.cfb: read by include.cfb; not a project on its own.",
              "Fictional marks and numbers, generated by projects/tools/make_examples.py.")
    d.blank()
    d.rise("OR-BM2", "OR2", km=0.200)
    d.rise("OR2", "OR-BM1", km=0.395)
    e.raw("fieldbook include-day.cfb")
    e.write(e.cfb())
    d.write(d.cfb())


ALL = [level_run, level_setups, traverse_2d, angles_azimuth, trilateration, zenith_3d,
       face_two, weighted_control, units_usft_gon, units_ft_deg, dms_hyphen, free_network,
       sd_override, ppm, dimension_1, dimension_2, project_pair, options_xml, include_pair]


def main():
    os.makedirs(OUT, exist_ok=True)
    for f in ALL:
        f()


if __name__ == "__main__":
    main()
