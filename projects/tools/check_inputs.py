#!/usr/bin/python3
"""check_inputs: a rough, stand-alone check of cairn input files.

For the people who write demo data and examples, not a part of cairn and not
the reference solver (tests/reference/ is).  It

  1. parses a project (.xml) or field book (.cfb) strictly by FORMAT.md,
     reporting FILE:LINE: problems (unknown keywords, values without units,
     bad mark ids, minutes or seconds >= 60, ...);
  2. adjusts it by a small dense Gauss-Newton with numerical derivatives,
     using the FORMAT.md models and a priori standard deviations;
  3. prints the global test, the largest w-tests and (with --snoop) the
     observations an iterative snooping would reject; with --truth CSV, the
     differences of the adjusted coordinates from the truth, and it takes
     starting coordinates of marks that have none from the truth (+0.5 m).

    /usr/bin/python3 projects/tools/check_inputs.py FILE [--truth CSV] [--snoop]

Exit status 0 when the file parsed, the adjustment converged, the global
test passed and nothing was flagged; 1 otherwise.
"""

import math
import os
import re
import shlex
import statistics
import sys
import xml.etree.ElementTree as ET

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import netsim as ns  # noqa: E402

ID_RE = re.compile(r"^[A-Za-z0-9_.\-/]{1,40}$")
NUM_RE = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


class Bad(Exception):
    pass


def num(text, where):
    if not NUM_RE.match(text):
        raise Bad("%s: not a number: %r" % (where, text))
    return float(text)


def unit_sum(text, where, kind):
    """Parse '1 mm + 1.5 ppm' or '1mm+1.5ppm'.  kind: 'len', 'ang', 'dist'.
    Returns (value SI, ppm) ."""
    s = text.replace(" ", "")
    terms = s.split("+")
    val, ppm = 0.0, 0.0
    for t in terms:
        m = re.match(r'^(\d+\.?\d*|\.\d+)(mm|cm|m|ft|usft|sec|"|mgon|cc|ppm)$', t)
        if not m:
            raise Bad("%s: value needs a unit: %r" % (where, text))
        x, u = float(m.group(1)), m.group(2)
        if u == "ppm":
            if kind != "dist":
                raise Bad("%s: ppm not allowed here: %r" % (where, text))
            ppm += x
        elif u in ns.SD_LENGTH:
            if kind == "ang":
                raise Bad("%s: length unit for an angle: %r" % (where, text))
            val += x * ns.SD_LENGTH[u]
        else:
            if kind != "ang":
                raise Bad("%s: angle unit for a length: %r" % (where, text))
            val += x * ns.SD_ANGLE[u]
    if kind != "dist" and len(terms) != 1:
        raise Bad("%s: a sum is not allowed here: %r" % (where, text))
    return val, ppm


class Project:
    def __init__(self):
        self.lunit, self.aunit = "m", "dms"
        self.units_set = False
        self.opts = {"dimension": "auto", "refraction": 0.13, "scale": 1.0,
                     "alpha": 0.001, "power": 0.80, "global-alpha": 0.05,
                     "confidence": 0.95, "max-iterations": 25}
        self.inst = {}
        self.marks = {}
        self.order = []
        self.setups = []
        self.angles = []
        self.azimuths = []
        self.rises = []
        self.errors = []
        self.title = None

    def touch(self, mid, where):
        if not ID_RE.match(mid):
            raise Bad("%s: bad mark id %r" % (where, mid))
        if mid not in self.marks:
            self.marks[mid] = {}
            self.order.append(mid)

    L = property(lambda self: ns.LENGTH_UNITS[self.lunit])

    def length(self, text, where):
        return num(text, where) * self.L

    def angle(self, text, where):
        try:
            return ns.parse_angle(text, self.aunit)
        except ValueError as e:
            raise Bad("%s: %s" % (where, e))

    # ---------------------------------------------------------------- common
    def add_instrument(self, iid, kv, where):
        if not ID_RE.match(iid):
            raise Bad("%s: bad instrument id %r" % (where, iid))
        ins = {"direction": 0.0, "zenith": 0.0, "dist_a": 0.0, "dist_b": 0.0,
               "centring": 0.0, "height": 0.0, "per_km": None, "per_setup": None}
        kind = None
        for k, v in kv.items():
            if k in ("direction", "zenith"):
                ins[k] = unit_sum(v, where, "ang")[0]; kind = kind or "ts"
            elif k == "distance":
                ins["dist_a"], ins["dist_b"] = unit_sum(v, where, "dist"); kind = kind or "ts"
            elif k in ("centring", "height"):
                ins[k] = unit_sum(v, where, "len")[0]; kind = kind or "ts"
            elif k in ("per-km", "per-setup"):
                ins[k.replace("-", "_")] = unit_sum(v, where, "len")[0]
                if kind == "ts":
                    raise Bad("%s: instrument is both level and total station" % where)
                kind = "level"
            else:
                raise Bad("%s: unknown instrument attribute %r" % (where, k))
        if kind is None:
            raise Bad("%s: instrument %s has no precision" % (where, iid))
        ins["kind"] = kind
        if iid in self.inst:
            raise Bad("%s: instrument %s defined twice" % (where, iid))
        self.inst[iid] = ins

    def add_mark(self, mid, kv, where):
        self.touch(mid, where)
        m = {}
        for k, v in kv.items():
            if k in ("e", "n", "h"):
                m[k] = self.length(v, where)
            elif k == "hold":
                if v not in ("en", "h", "enh"):
                    raise Bad("%s: bad hold %r" % (where, v))
                m[k] = v
            elif k in ("sd-en", "sd-h"):
                m[k] = unit_sum(v, where, "len")[0]
            elif k == "desc":
                m[k] = v
            else:
                raise Bad("%s: unknown mark attribute %r" % (where, k))
        old = self.marks[mid]
        for k in ("e", "n", "h"):
            if k in old and k in m and abs(old[k] - m[k]) > 1e-9:
                raise Bad("%s: mark %s defined twice with different coordinates" % (where, mid))
        old.update(m)

    def option(self, k, v, where):
        if k == "dimension":
            if v not in ("auto", "1", "2", "3"):
                raise Bad("%s: bad dimension %r" % (where, v))
            self.opts[k] = v
        elif k in ("refraction", "scale", "confidence", "alpha", "power", "global-alpha"):
            self.opts[k] = num(v, where)
        elif k == "max-iterations":
            self.opts[k] = int(num(v, where))
        elif k == "tolerance":
            self.opts[k] = unit_sum(v, where, "dist")
        elif k == "loop-allowance":
            self.opts[k] = unit_sum(v, where, "len")
        else:
            raise Bad("%s: unknown option %r" % (where, k))

    def units(self, length, angle, where):
        if length not in ns.LENGTH_UNITS or angle not in ("dms", "deg", "gon"):
            raise Bad("%s: bad units %r %r" % (where, length, angle))
        self.lunit, self.aunit = length, angle
        self.units_set = True

    SIGHT_KEYS = {"hz", "zen", "slope", "horiz", "th", "face", "ppm",
                  "hz-sd", "zen-sd", "dist-sd"}

    def sight(self, to, kv, where):
        if not self.setups:
            raise Bad("%s: sight before any setup" % where)
        self.touch(to, where)
        s = {"to": to, "src": where, "th": 0.0, "ppm": 0.0, "face": None}
        for k, v in kv.items():
            if k not in self.SIGHT_KEYS:
                raise Bad("%s: unknown sight attribute %r" % (where, k))
            if k in ("hz", "zen"):
                s[k] = self.angle(v, where)
            elif k in ("slope", "horiz", "th"):
                s[k] = self.length(v, where)
            elif k == "ppm":
                s[k] = num(v, where)
            elif k == "face":
                if v not in ("1", "2"):
                    raise Bad("%s: bad face %r" % (where, v))
                s[k] = int(v)
            elif k in ("hz-sd", "zen-sd"):
                s[k] = unit_sum(v, where, "ang")[0]
            elif k == "dist-sd":
                a, b = unit_sum(v, where, "dist")
                s[k] = (a, b)
        if not any(k in s for k in ("hz", "zen", "slope", "horiz")):
            raise Bad("%s: sight without a reading" % where)
        self.setups[-1]["sights"].append(s)

    def setup(self, at, kv, where):
        self.touch(at, where)
        st = {"at": at, "inst": None, "ih": 0.0, "ppm": 0.0, "sights": [], "src": where}
        for k, v in kv.items():
            if k == "inst":
                st[k] = v
            elif k == "ih":
                st[k] = self.length(v, where)
            elif k == "ppm":
                st[k] = num(v, where)
            else:
                raise Bad("%s: unknown setup attribute %r" % (where, k))
        self.setups.append(st)

    def add_angle(self, at, fr, to, val, kv, where):
        for m in (at, fr, to):
            self.touch(m, where)
        a = {"at": at, "from": fr, "to": to, "value": self.angle(val, where),
             "sd": None, "inst": None, "src": where}
        for k, v in kv.items():
            if k == "sd":
                a[k] = unit_sum(v, where, "ang")[0]
            elif k == "inst":
                a[k] = v
            else:
                raise Bad("%s: unknown angle attribute %r" % (where, k))
        self.angles.append(a)

    def add_azimuth(self, fr, to, val, kv, where):
        for m in (fr, to):
            self.touch(m, where)
        a = {"from": fr, "to": to, "value": self.angle(val, where), "sd": None, "src": where}
        for k, v in kv.items():
            if k == "sd":
                a[k] = unit_sum(v, where, "ang")[0]
            else:
                raise Bad("%s: unknown azimuth attribute %r" % (where, k))
        if a["sd"] is None:
            raise Bad("%s: azimuth needs its own sd" % where)
        self.azimuths.append(a)

    def add_rise(self, fr, to, val, kv, where):
        for m in (fr, to):
            self.touch(m, where)
        r = {"from": fr, "to": to, "value": self.length(val, where), "km": None,
             "setups": None, "sd": None, "inst": None, "src": where}
        for k, v in kv.items():
            if k == "km":
                r[k] = num(v, where)
            elif k == "setups":
                r[k] = int(num(v, where))
            elif k == "sd":
                r[k] = unit_sum(v, where, "len")[0]
            elif k == "inst":
                r[k] = v
            else:
                raise Bad("%s: unknown rise attribute %r" % (where, k))
        if r["km"] is not None and r["setups"] is not None:
            raise Bad("%s: rise has both km and setups" % where)
        self.rises.append(r)

    # ---------------------------------------------------------------- readers
    def read_cfb(self, path, name):
        with open(path) as f:
            lines = f.read().split("\n")
        for i, line in enumerate(lines, 1):
            where = "%s:%d" % (name, i)
            if len(line.encode()) > 65536:
                self.errors.append("%s: line too long" % where)
                continue
            try:
                lex = shlex.shlex(line, posix=True)
                lex.whitespace_split = True
                lex.commenters = "#"
                w = list(lex)
            except ValueError as e:
                self.errors.append("%s: %s" % (where, e))
                continue
            if not w:
                continue
            try:
                self.cfb_record(w, where, path)
            except Bad as e:
                self.errors.append(str(e))

    @staticmethod
    def kv(words, where):
        if len(words) % 2:
            raise Bad("%s: keyword %r has no value" % (where, words[-1]))
        d = {}
        for k, v in zip(words[0::2], words[1::2]):
            if k in d:
                raise Bad("%s: %s given twice" % (where, k))
            d[k] = v
        return d

    def cfb_record(self, w, where, path):
        r = w[0]
        if r == "units":
            if len(w) != 3:
                raise Bad("%s: units LENGTH ANGLE" % where)
            self.units(w[1], w[2], where)
        elif r == "option":
            if len(w) != 3:
                raise Bad("%s: option NAME VALUE" % where)
            self.option(w[1], w[2], where)
        elif r == "instrument":
            self.add_instrument(w[1], self.kv(w[2:], where), where)
        elif r == "mark":
            self.add_mark(w[1], self.kv(w[2:], where), where)
        elif r == "at":
            self.setup(w[1], self.kv(w[2:], where), where)
        elif r == "to":
            self.sight(w[1], self.kv(w[2:], where), where)
        elif r == "angle":
            self.add_angle(w[1], w[2], w[3], w[4], self.kv(w[5:], where), where)
        elif r == "azimuth":
            self.add_azimuth(w[1], w[2], w[3], self.kv(w[4:], where), where)
        elif r == "rise":
            self.add_rise(w[1], w[2], w[3], self.kv(w[4:], where), where)
        elif r in ("title", "description"):
            if len(w) != 2:
                raise Bad('%s: %s "TEXT"' % (where, r))
            self.title = self.title or (w[1] if r == "title" else None)
        elif r == "fieldbook":
            if len(w) != 2:
                raise Bad("%s: fieldbook FILE" % where)
            sub = os.path.join(os.path.dirname(path), w[1])
            self.read_cfb(sub, os.path.join(os.path.dirname(where.split(":")[0]), w[1]))
        else:
            raise Bad("%s: unknown record %r" % (where, r))

    XML_ATTRS = {
        "title": set(), "description": set(), "units": {"length", "angle"},
        "options": {"dimension", "refraction", "scale", "confidence", "alpha", "power",
                    "global-alpha", "tolerance", "max-iterations", "loop-allowance"},
        "instrument": {"id", "direction", "zenith", "distance", "centring", "height",
                       "per-km", "per-setup"},
        "mark": {"id", "e", "n", "h", "hold", "sd-en", "sd-h", "desc"},
        "setup": {"at", "inst", "ih", "ppm"},
        "angle": {"at", "from", "to", "value", "sd", "inst"},
        "azimuth": {"from", "to", "value", "sd"},
        "rise": {"from", "to", "value", "km", "setups", "sd", "inst"},
        "fieldbook": {"file"},
    }

    def read_xml(self, path, name):
        tree = ET.parse(path)
        root = tree.getroot()
        if root.tag != "cairn-project" or root.get("format") != "1":
            raise Bad("%s: root must be <cairn-project format=\"1\">" % name)
        seen = set()
        # units first: values elsewhere depend on them
        for el in root:
            if el.tag == "units":
                self.units(el.get("length", "m"), el.get("angle", "dms"), name)
        for el in root:
            where = "%s:<%s>" % (name, el.tag)
            try:
                if el.tag not in self.XML_ATTRS:
                    raise Bad("%s: unknown element" % where)
                extra = set(el.attrib) - self.XML_ATTRS[el.tag]
                if extra:
                    raise Bad("%s: unknown attributes %s" % (where, sorted(extra)))
                if el.tag in ("title", "description", "units", "options"):
                    if el.tag in seen:
                        raise Bad("%s: repeated" % where)
                    seen.add(el.tag)
                a = dict(el.attrib)
                if el.tag == "options":
                    for k, v in a.items():
                        self.option(k, v, where)
                elif el.tag == "instrument":
                    self.add_instrument(a.pop("id"), a, where)
                elif el.tag == "mark":
                    self.add_mark(a.pop("id"), a, where)
                elif el.tag == "setup":
                    self.setup(a.pop("at"), a, where)
                    for s in el:
                        if s.tag != "sight":
                            raise Bad("%s: unknown element <%s> in setup" % (where, s.tag))
                        b = dict(s.attrib)
                        self.sight(b.pop("to"), b, where + "<sight>")
                elif el.tag == "angle":
                    self.add_angle(a.pop("at"), a.pop("from"), a.pop("to"), a.pop("value"), a, where)
                elif el.tag == "azimuth":
                    self.add_azimuth(a.pop("from"), a.pop("to"), a.pop("value"), a, where)
                elif el.tag == "rise":
                    self.add_rise(a.pop("from"), a.pop("to"), a.pop("value"), a, where)
                elif el.tag == "fieldbook":
                    sub = os.path.join(os.path.dirname(path), a["file"])
                    self.read_cfb(sub, os.path.join(os.path.dirname(name), a["file"]))
                elif el.tag == "title":
                    self.title = el.text
            except Bad as e:
                self.errors.append(str(e))
            except KeyError as e:
                self.errors.append("%s: missing attribute %s" % (where, e))


# --------------------------------------------------------------------------
# the adjustment
# --------------------------------------------------------------------------

def pick_inst(P, iid, kind, where):
    if iid:
        if iid not in P.inst or P.inst[iid]["kind"] != kind:
            raise Bad("%s: no %s instrument %r" % (where, kind, iid))
        return P.inst[iid]
    cands = [i for i in P.inst.values() if i["kind"] == kind]
    if len(cands) != 1:
        raise Bad("%s: name the instrument (%d of kind %s)" % (where, len(cands), kind))
    return cands[0]


def build(P, datum):
    k = P.opts["refraction"]
    scale = P.opts["scale"]
    dim = P.opts["dimension"]
    if dim == "auto":
        dim = "3" if any("zen" in s for st in P.setups for s in st["sights"]) else "2"
    dim = int(dim)
    obs = []   # each: dict(kind, src, value, f(C,W)->val, sd(C)->, ang, plane, height marks)

    def O(kind, src, value, f, sd, ang, plane=(), height=()):
        obs.append({"kind": kind, "src": src, "value": value, "f": f, "sd": sd,
                    "ang": ang, "plane": set(plane), "height": set(height)})

    orient = []  # setup indices with directions
    for si, st in enumerate(P.setups):
        if not st["sights"]:
            continue
        inst = pick_inst(P, st["inst"], "ts", st["src"])
        A = st["at"]
        ih = st["ih"]
        has_dir = any("hz" in s for s in st["sights"]) and dim >= 2
        if has_dir:
            orient.append(si)
        for s in st["sights"]:
            B, th, src = s["to"], s["th"], s["src"]
            face2 = s["face"] == 2 or ("zen" in s and s["zen"] > math.pi)
            fac = 1.0 + (st["ppm"] + s["ppm"]) * 1e-6
            dsd = s.get("dist-sd")

            def distsd(sb, dsd=dsd, inst=inst):
                if dsd is not None:
                    return math.sqrt(dsd[0] ** 2 + (dsd[1] * 1e-6 * sb) ** 2)
                return ns.sd_distance(inst, sb)
            z1 = None
            if "zen" in s:
                z1 = 2 * math.pi - s["zen"] if face2 else s["zen"]
            if "hz" in s and dim >= 2:
                hsd = s.get("hz-sd")
                O("direction", src, s["hz"],
                  lambda C, W, A=A, B=B, si=si, f2=face2:
                      ns.azimuth(C[A], C[B]) - W[si] + (math.pi if f2 else 0.0),
                  lambda C, A=A, B=B, hsd=hsd, inst=inst:
                      hsd if hsd is not None else ns.sd_direction(inst, ns.plane_dist(C[A], C[B])),
                  True, plane=(A, B))
            if dim == 3:
                if "zen" in s:
                    zsd = s.get("zen-sd")
                    O("zenith", src, s["zen"],
                      lambda C, W, A=A, B=B, ih=ih, th=th, f2=face2:
                          (2 * math.pi - ns.zenith_model(C[A], C[B], ih, th, k)) if f2
                          else ns.zenith_model(C[A], C[B], ih, th, k),
                      lambda C, A=A, B=B, zsd=zsd, inst=inst:
                          zsd if zsd is not None else ns.sd_zenith(inst, ns.plane_dist(C[A], C[B])),
                      True, plane=(A, B), height=(A, B))
                if "slope" in s:
                    sb = s["slope"] * fac
                    O("slope", src, sb,
                      lambda C, W, A=A, B=B, ih=ih, th=th: ns.slope_model(C[A], C[B], ih, th, scale),
                      lambda C, sb=sb, f=distsd: f(sb), False, plane=(A, B), height=(A, B))
                if "horiz" in s:
                    hb = s["horiz"] * fac
                    O("horiz", src, hb, lambda C, W, A=A, B=B: ns.horiz_model(C[A], C[B], scale),
                      lambda C, hb=hb, f=distsd: f(hb), False, plane=(A, B))
            elif dim == 2:
                if "slope" in s:
                    if z1 is None:
                        raise Bad("%s: slope distance without zenith in dimension 2" % src)
                    sb = s["slope"] * fac
                    O("horiz", src, sb * math.sin(z1),
                      lambda C, W, A=A, B=B: ns.horiz_model(C[A], C[B], scale),
                      lambda C, sb=sb, f=distsd: f(sb), False, plane=(A, B))
                if "horiz" in s:
                    hb = s["horiz"] * fac
                    O("horiz", src, hb, lambda C, W, A=A, B=B: ns.horiz_model(C[A], C[B], scale),
                      lambda C, hb=hb, f=distsd: f(hb), False, plane=(A, B))
            else:  # dim 1
                if "slope" in s and z1 is not None:
                    sb = s["slope"] * fac
                    val = (sb * math.cos(z1) + (1 - k) * (sb * math.sin(z1)) ** 2 / (2 * ns.R_EARTH)
                           + ih - th)
                    zsd = s.get("zen-sd")
                    ssd = distsd(sb)
                    O("trig-rise", src, val, lambda C, W, A=A, B=B: C[B][2] - C[A][2],
                      lambda C, sb=sb, z1=z1, ssd=ssd, zsd=zsd, inst=inst:
                          ns.sd_trig_rise(inst, sb, z1, ssd, zsd),
                      False, height=(A, B))
    if dim >= 2:
        for a in P.angles:
            inst = pick_inst(P, a["inst"], "ts", a["src"]) if a["sd"] is None else None
            O("angle", a["src"], a["value"],
              lambda C, W, a=a: ns.azimuth(C[a["at"]], C[a["to"]]) - ns.azimuth(C[a["at"]], C[a["from"]]),
              lambda C, a=a, inst=inst: a["sd"] if a["sd"] is not None else ns.sd_angle(
                  inst, ns.plane_dist(C[a["at"]], C[a["from"]]), ns.plane_dist(C[a["at"]], C[a["to"]]),
                  ns.plane_dist(C[a["from"]], C[a["to"]])),
              True, plane=(a["at"], a["from"], a["to"]))
        for a in P.azimuths:
            O("azimuth", a["src"], a["value"], lambda C, W, a=a: ns.azimuth(C[a["from"]], C[a["to"]]),
              lambda C, a=a: a["sd"], True, plane=(a["from"], a["to"]))
    if dim != 2 or P.opts["dimension"] == "auto":
        for r in P.rises:
            if r["sd"] is not None:
                sd = r["sd"]
            else:
                inst = pick_inst(P, r["inst"], "level", r["src"])
                sd = ns.sd_rise(inst, km=r["km"]) if r["km"] is not None else ns.sd_rise(inst, setups=r["setups"])
            O("rise", r["src"], r["value"], lambda C, W, r=r: C[r["to"]][2] - C[r["from"]][2],
              lambda C, sd=sd: sd, False, height=(r["from"], r["to"]))
    # unknowns
    plane = set().union(*[o["plane"] for o in obs]) if obs else set()
    height = set().union(*[o["height"] for o in obs]) if obs else set()
    anyctl = any(m.get("hold") or "sd-en" in m or "sd-h" in m for m in P.marks.values())
    free = datum == "free" or not anyctl
    unk = []
    for mid in P.order:
        m = P.marks[mid]
        hold = "" if free else (m.get("hold") or "")
        if mid in plane and "en" not in hold:
            unk += [(mid, 0), (mid, 1)]
        if mid in height and "h" not in hold:
            unk.append((mid, 2))
    if not free:
        for mid in P.order:
            m = P.marks[mid]
            if "sd-en" in m and (mid, 0) in unk:
                for c, kind in ((0, "control-e"), (1, "control-n")):
                    O(kind, mid, m["en"[c]], lambda C, W, mid=mid, c=c: C[mid][c],
                      lambda C, sd=m["sd-en"]: sd, False)
            if "sd-h" in m and (mid, 2) in unk:
                O("control-h", mid, m["h"], lambda C, W, mid=mid: C[mid][2],
                  lambda C, sd=m["sd-h"]: sd, False)
    return dim, obs, unk, orient, free


def adjust(P, truth, datum="held", snoop=False):
    dim, obs, unk, orient, free = build(P, datum)
    plane = set().union(*[o["plane"] for o in obs]) if obs else set()
    height = set().union(*[o["height"] for o in obs]) if obs else set()
    C = {}
    for mid in P.order:
        m = dict(P.marks[mid])
        t = truth.get(mid) if truth else None
        need = (["e", "n"] if mid in plane else []) + (["h"] if mid in height else [])
        for c, off in zip("enh", (0.4, -0.3, 0.2)):
            if c not in m and c in need:
                if t is None:
                    raise Bad("mark %s has no starting %s" % (mid, c))
                m[c] = t["enh".index(c)] + off
        C[mid] = [m.get("e", 0.0), m.get("n", 0.0), m.get("h", 0.0)]
    W = {}
    for si in orient:
        st = P.setups[si]
        sx = sy = 0.0
        for s in st["sights"]:
            if "hz" in s:
                f2 = s["face"] == 2 or ("zen" in s and s["zen"] > math.pi)
                w = ns.azimuth(C[st["at"]], C[s["to"]]) - s["hz"] + (math.pi if f2 else 0.0)
                sx += math.cos(w); sy += math.sin(w)
        W[si] = math.atan2(sy, sx)
    params = unk + [("W", si) for si in orient]
    active = list(range(len(obs)))
    rejected = []

    def setp(x):
        for (a, b), v in zip(params, x):
            if a == "W":
                W[b] = v
            else:
                C[a][b] = v

    def getp():
        return np.array([W[b] if a == "W" else C[a][b] for a, b in params])

    def resid(idx):
        v = np.empty(len(idx))
        for j, i in enumerate(idx):
            o = obs[i]
            d = o["f"](C, W) - o["value"]
            v[j] = ns.wrap(d) if o["ang"] else d
        return v

    while True:
        for it in range(30):
            x0 = getp()
            v0 = resid(active)
            sd = np.array([obs[i]["sd"](C) for i in active])
            A = np.empty((len(active), len(params)))
            for j in range(len(params)):
                h = 1e-7 if params[j][0] == "W" else 1e-5
                x = x0.copy(); x[j] += h; setp(x); vp = resid(active)
                x[j] -= 2 * h; setp(x); vm = resid(active)
                A[:, j] = np.array([ns.wrap(a - b) for a, b in zip(vp, vm)]) / (2 * h)
            setp(x0)
            Aw = A / sd[:, None]
            dx = np.linalg.lstsq(Aw, -v0 / sd, rcond=1e-10)[0]
            setp(x0 + dx)
            if np.max(np.abs(dx)) < 1e-8:
                break
        v = resid(active)
        sd = np.array([obs[i]["sd"](C) for i in active])
        Aw = A / sd[:, None]
        N = Aw.T @ Aw
        Ninv = np.linalg.pinv(N, rcond=1e-10)
        rank = np.linalg.matrix_rank(Aw, tol=1e-8 * np.linalg.norm(Aw, 2))
        vtpv = float(np.sum((v / sd) ** 2))
        dof = len(active) - rank
        r = 1.0 - np.einsum("ij,jk,ik->i", Aw, Ninv, Aw)
        with np.errstate(divide="ignore", invalid="ignore"):
            w = np.where(r > 0.01, v / sd / np.sqrt(np.maximum(r, 1e-30)), 0.0)
        crit = statistics.NormalDist().inv_cdf(1 - P.opts["alpha"] / 2)
        j = int(np.argmax(np.abs(w)))
        if snoop and abs(w[j]) > crit and len(rejected) < 0.1 * len(obs):
            rejected.append((obs[active[j]], w[j]))
            active.pop(j)
            continue
        break
    ga = P.opts["global-alpha"]
    z = statistics.NormalDist().inv_cdf

    def chi2q(p, kdf):  # Wilson-Hilferty
        return kdf * (1 - 2 / (9 * kdf) + z(p) * math.sqrt(2 / (9 * kdf))) ** 3
    lo, hi = (chi2q(ga / 2, dof), chi2q(1 - ga / 2, dof)) if dof > 0 else (0, 0)
    ok = dof > 0 and lo <= vtpv <= hi
    print("dimension %d%s  observations %d  unknowns %d  dof %d" % (
        dim, " (free datum)" if free else "", len(active), len(params), dof))
    print("vTPv %.3f  bounds [%.2f, %.2f]  sigma0^2 %.3f  global test %s" % (
        vtpv, lo, hi, vtpv / dof if dof else float("nan"), "pass" if ok else "FAIL"))
    order = np.argsort(-np.abs(w))
    flagged = 0
    for j in order[:4]:
        o = obs[active[j]]
        fl = abs(w[j]) > crit
        flagged += fl
        print("  %s w %+7.2f r %.2f %-9s %s" % ("FLAG" if fl else "    ", w[j], r[j], o["kind"], o["src"]))
    flagged = int(np.sum(np.abs(w) > crit))
    for o, wj in rejected:
        print("  rejected: %s %s (w %+.1f)" % (o["kind"], o["src"], wj))
    if truth:
        dmax = 0.0
        for (mid, c) in unk:
            if mid in truth:
                dmax = max(dmax, abs(C[mid][c] - truth[mid][c] / P.L * P.L))
        print("  max |adjusted - truth| over unknown components: %.4f m" % dmax)
    return ok and flagged == 0


def main(argv):
    args = [a for a in argv if not a.startswith("--")]
    truth = None
    if "--truth" in argv:
        tp = argv[argv.index("--truth") + 1]
        args.remove(tp)
        truth = {}
        with open(tp) as f:
            next(f)
            for line in f:
                i, e, n, h = line.strip().split(",")
                truth[i] = (float(e), float(n), float(h))
    path = args[0]
    P = Project()
    try:
        if path.endswith(".xml"):
            P.read_xml(path, path)
        else:
            P.read_cfb(path, path)
    except (Bad, ET.ParseError, OSError) as e:
        P.errors.append(str(e))
    if P.errors:
        for e in P.errors:
            print("error:", e)
        return 1
    if truth:  # truth.csv is in metres
        pass
    try:
        ok = adjust(P, truth, "free" if "--free" in argv else "held", "--snoop" in argv)
    except Bad as e:
        print("error:", e)
        return 1
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
