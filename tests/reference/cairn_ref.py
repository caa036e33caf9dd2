#!/usr/bin/python3
"""cairn_ref.py -- independent dense least-squares reference solver for cairn.

Written from ../../../shared/FORMAT.md ("The field book", "Models", "Result
files") and ../../DEVELOPERS.md ("Modelling decisions fixed here").  It
shares no code with the C library and is deliberately simple: dense numpy
matrices, plain Gauss-Newton, Qxx = N^-1.  It is the oracle the integration
tests compare the C program with.

Usage:
    cairn_ref.py FIELDBOOK OUTDIR [--datum held|free] [--snoop iterate|flag|off]
    cairn_ref.py --selftest

Writes OUTDIR/marks.csv, OUTDIR/observations.csv, OUTDIR/summary.txt,
OUTDIR/pairs.csv (relative ellipses of observed pairs, tolerance).
Snooping (default iterate) removes the worst failing observation and
re-adjusts from the starting values, as many times as needed.
Exit status: 0 adjusted and global test passed and nothing flagged or
rejected, 1 adjusted but global test failed or something flagged or
rejected, 2 input error,
3 adjustment impossible (singular normal matrix, no convergence).
See README.md beside this file for the formulas and conventions.
"""

import math
import os
import re
import statistics
import sys

import numpy as np

PI = math.pi
TWO_PI = 2.0 * math.pi
R_EARTH = 6371000.0                      # FORMAT.md "Models": R = 6 371 000 m
ARCSEC = PI / 648000.0                   # one arc-second in radians
LENGTH_UNITS = {"m": 1.0, "ft": 0.3048, "usft": 1200.0 / 3937.0}   # FORMAT.md Conventions
ANGLE_UNITS = ("dms", "deg", "gon")
SD_LENGTH = {"mm": 1e-3, "cm": 1e-2, "m": 1.0, "ft": 0.3048, "usft": 1200.0 / 3937.0}
SD_ANGLE = {"sec": ARCSEC, '"': ARCSEC, "mgon": PI / 200000.0, "cc": PI / 2000000.0}
MAX_ITER_CAP = 50
CONVERGED = 1e-12                        # metres / radians (task brief, DEVELOPERS.md)


class InputError(Exception):
    pass


class AdjustError(Exception):
    pass


# ----------------------------------------------------------------------------
# Statistics (own implementations; no scipy)
# ----------------------------------------------------------------------------

def _reg_lower_gamma(a, x):
    """Regularised lower incomplete gamma P(a, x): power series for
    x < a + 1, else a modified-Lentz continued fraction for Q = 1 - P
    (the classical pair of expansions, e.g. Abramowitz & Stegun 6.5.29 and
    6.5.31)."""
    if x <= 0.0:
        return 0.0
    lg = -x + a * math.log(x) - math.lgamma(a)
    if x < a + 1.0:
        term = 1.0 / a
        total = term
        ap = a
        for _ in range(100000):
            ap += 1.0
            term *= x / ap
            total += term
            if abs(term) < abs(total) * 1e-17:
                break
        return total * math.exp(lg)
    tiny = 1e-300
    b = x + 1.0 - a
    c = 1.0 / tiny
    d = 1.0 / b
    h = d
    for i in range(1, 100000):
        an = -i * (i - a)
        b += 2.0
        d = an * d + b
        if abs(d) < tiny:
            d = tiny
        c = b + an / c
        if abs(c) < tiny:
            c = tiny
        d = 1.0 / d
        delta = d * c
        h *= delta
        if abs(delta - 1.0) < 1e-17:
            break
    return 1.0 - math.exp(lg) * h


def chi2_cdf(x, dof):
    return _reg_lower_gamma(0.5 * dof, 0.5 * x)


def chi2_ppf(p, dof):
    """Lower-tail quantile of chi-square(dof) by bisection on chi2_cdf."""
    lo, hi = 0.0, max(1.0, float(dof))
    while chi2_cdf(hi, dof) < p:
        hi *= 2.0
    for _ in range(300):
        mid = 0.5 * (lo + hi)
        if chi2_cdf(mid, dof) < p:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-15 * hi:
            break
    return 0.5 * (lo + hi)


def lambda0(alpha, power):
    """Non-centrality of the 1-D test (Baarda): power =
    Phi(sqrt(l) - z) + Phi(-sqrt(l) - z), z = z_{1-alpha/2}."""
    nd = statistics.NormalDist()
    z = nd.inv_cdf(1.0 - alpha / 2.0)

    def pw(lam):
        s = math.sqrt(lam)
        return nd.cdf(s - z) + nd.cdf(-s - z)

    lo, hi = 0.0, 1.0
    while pw(hi) < power:
        hi *= 2.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if pw(mid) < power:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


# ----------------------------------------------------------------------------
# Field-book reading (FORMAT.md "The field book")
# ----------------------------------------------------------------------------

def split_words(line, where):
    """Words separated by blanks; '#' outside quotes starts a comment; a '"'
    that begins a word opens a quoted word that runs to the next '"'.  A '"'
    inside a word (as in 2") is an ordinary character, so arc-second units
    can be written with it."""
    words = []
    i, n = 0, len(line)
    while i < n:
        ch = line[i]
        if ch in " \t\r\n":
            i += 1
            continue
        if ch == "#":
            break
        if ch == '"':
            j = line.find('"', i + 1)
            if j < 0:
                raise InputError("%s: unterminated quoted word" % where)
            words.append(line[i + 1:j])
            i = j + 1
            continue
        j = i
        while j < n and line[j] not in " \t\r\n#":
            j += 1
        words.append(line[i:j])
        i = j
    return words


_NUM = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_UNIT_TERM = re.compile(r"(%s)(usft|mgon|mm|cm|ft|sec|ppm|cc|m|\")" % _NUM)


def parse_sum(text, where):
    """A value with units, possibly a sum ('1mm+1.5ppm', '1 mm + 1.5 ppm').
    Returns dict with keys 'len' (metres), 'ang' (radians), 'ppm' (1e-6),
    each present only when that kind of term occurs."""
    s = text.replace(" ", "").replace("\t", "")
    if not s:
        raise InputError("%s: empty value" % where)
    out = {}
    pos = 0
    first = True
    while pos < len(s):
        if not first:
            if s[pos] != "+":
                raise InputError("%s: bad unit sum '%s'" % (where, text))
            pos += 1
        m = _UNIT_TERM.match(s, pos)
        if not m or (m.end() < len(s) and s[m.end()] not in "+"):
            raise InputError("%s: value '%s' needs a unit" % (where, text))
        val = float(m.group(1))
        unit = m.group(2)
        if unit in SD_LENGTH:
            out["len"] = out.get("len", 0.0) + val * SD_LENGTH[unit]
        elif unit in SD_ANGLE:
            out["ang"] = out.get("ang", 0.0) + val * SD_ANGLE[unit]
        else:
            out["ppm"] = out.get("ppm", 0.0) + val
        pos = m.end()
        first = False
    return out


def parse_len_sd(text, where):
    d = parse_sum(text, where)
    if set(d) != {"len"}:
        raise InputError("%s: '%s' must be a length with unit" % (where, text))
    return d["len"]


def parse_ang_sd(text, where):
    d = parse_sum(text, where)
    if set(d) != {"ang"}:
        raise InputError("%s: '%s' must be an angle with unit" % (where, text))
    return d["ang"]


def parse_angle(text, unit, where):
    """A booked angle in the project unit, to radians."""
    try:
        if unit == "deg":
            return math.radians(float(text))
        if unit == "gon":
            return float(text) * PI / 200.0
        m = re.fullmatch(r"([+-]?)(\d+)-(\d+)-(\d+(?:\.\d*)?)", text)
        if m:
            deg, mi, se = int(m.group(2)), int(m.group(3)), float(m.group(4))
        else:
            m = re.fullmatch(r"([+-]?)(\d+)(?:\.(\d*))?", text)
            if not m:
                raise ValueError
            frac = m.group(3) or ""
            deg = int(m.group(2))
            mi = int(frac[0:2].ljust(2, "0"))
            sec_txt = frac[2:4].ljust(2, "0")
            if len(frac) > 4:
                sec_txt += "." + frac[4:]
            se = float(sec_txt)
        if mi >= 60 or se >= 60.0:
            raise ValueError
        val = math.radians(deg + mi / 60.0 + se / 3600.0)
        return -val if m.group(1) == "-" else val
    except ValueError:
        raise InputError("%s: bad angle '%s' for unit %s" % (where, text, unit))


def parse_float(text, where):
    try:
        return float(text)
    except ValueError:
        raise InputError("%s: bad number '%s'" % (where, text))


class Net:
    def __init__(self):
        self.length_unit = "m"
        self.angle_unit = "dms"
        self.opts = {"dimension": "auto", "refraction": 0.13, "scale": 1.0,
                     "confidence": 0.95, "alpha": 0.001, "power": 0.80,
                     "global-alpha": 0.05, "max-iterations": 25}
        self.instruments = {}       # id -> dict
        self.marks = {}             # id -> dict
        self.mark_order = []        # first appearance
        self.def_order = []         # definition order
        self.setups = []            # list of dicts
        self.booked = []            # items in load order
        self.fname = ""

    def touch(self, mid, where):
        if not re.fullmatch(r"[A-Za-z0-9_./-]{1,40}", mid):
            raise InputError("%s: bad mark id '%s'" % (where, mid))
        if mid not in self.marks:
            self.marks[mid] = {"id": mid, "e": None, "n": None, "h": None,
                               "hold": "", "sd_en": None, "sd_h": None,
                               "line": None}
            self.mark_order.append(mid)
        return mid


def keyvals(words, start, where, allowed):
    out = {}
    i = start
    while i < len(words):
        k = words[i]
        if k not in allowed:
            raise InputError("%s: unknown keyword '%s'" % (where, k))
        if i + 1 >= len(words):
            raise InputError("%s: keyword '%s' needs a value" % (where, k))
        out[k] = words[i + 1]
        i += 2
    return out


def read_fieldbook(path):
    net = Net()
    net.fname = path
    with open(path, encoding="utf-8") as fh:
        lines = fh.read().split("\n")
    cur_setup = None
    for lineno, raw in enumerate(lines, 1):
        where = "%s:%d" % (path, lineno)
        w = split_words(raw, where)
        if not w:
            continue
        rec = w[0]
        L = lambda t: parse_float(t, where) * LENGTH_UNITS[net.length_unit]
        A = lambda t: parse_angle(t, net.angle_unit, where)
        if rec == "units":
            for u in w[1:]:
                if u in LENGTH_UNITS:
                    net.length_unit = u
                elif u in ANGLE_UNITS:
                    net.angle_unit = u
                elif u not in ("length", "angle"):
                    raise InputError("%s: unknown unit '%s'" % (where, u))
        elif rec == "option":
            kv = keyvals(w, 1, where, _OPTION_NAMES)
            for k, v in kv.items():
                if k == "dimension":
                    if v not in ("auto", "1", "2", "3"):
                        raise InputError("%s: bad dimension '%s'" % (where, v))
                    net.opts[k] = v
                elif k == "max-iterations":
                    net.opts[k] = int(v)
                elif k in ("refraction", "scale", "confidence", "alpha",
                           "power", "global-alpha"):
                    net.opts[k] = parse_float(v, where)
                elif k == "tolerance":
                    net.opts[k] = parse_sum(v, where)
                # loop-allowance: not used by the reference
        elif rec == "instrument":
            if len(w) < 2:
                raise InputError("%s: instrument needs an id" % where)
            kv = keyvals(w, 2, where, ("direction", "zenith", "distance",
                                       "centring", "height", "per-km",
                                       "per-setup"))
            inst = {"id": w[1]}
            for k, v in kv.items():
                if k == "distance":
                    d = parse_sum(v, where)
                    if "ang" in d:
                        raise InputError("%s: distance sd is a length" % where)
                    inst["dist_a"] = d.get("len", 0.0)
                    inst["dist_b"] = d.get("ppm", 0.0)
                elif k in ("direction", "zenith"):
                    inst[k] = parse_ang_sd(v, where)
                else:
                    inst[k] = parse_len_sd(v, where)
            is_level = "per-km" in inst or "per-setup" in inst
            is_ts = any(k in inst for k in ("direction", "zenith", "dist_a",
                                            "centring", "height"))
            if is_level and is_ts:
                raise InputError("%s: instrument is both a level and a total station" % where)
            inst["kind"] = "level" if is_level else "ts"
            net.instruments[w[1]] = inst
        elif rec == "mark":
            if len(w) < 2:
                raise InputError("%s: mark needs an id" % where)
            mid = net.touch(w[1], where)
            kv = keyvals(w, 2, where, ("e", "n", "h", "hold", "sd-en", "sd-h", "desc"))
            mk = net.marks[mid]
            if mk["line"] is not None:
                raise InputError("%s: mark %s defined twice" % (where, mid))
            mk["line"] = lineno
            for k in ("e", "n", "h"):
                if k in kv:
                    mk[k] = L(kv[k])
            if "hold" in kv:
                if kv["hold"] not in ("en", "h", "enh"):
                    raise InputError("%s: bad hold '%s'" % (where, kv["hold"]))
                mk["hold"] = kv["hold"]
            if "sd-en" in kv:
                mk["sd_en"] = parse_len_sd(kv["sd-en"], where)
            if "sd-h" in kv:
                mk["sd_h"] = parse_len_sd(kv["sd-h"], where)
            net.def_order.append(mid)
        elif rec == "at":
            if len(w) < 2:
                raise InputError("%s: at needs a mark" % where)
            mid = net.touch(w[1], where)
            kv = keyvals(w, 2, where, ("inst", "ih", "ppm"))
            cur_setup = {"index": len(net.setups), "at": mid,
                         "inst": kv.get("inst"),
                         "ih": L(kv["ih"]) if "ih" in kv else 0.0,
                         "ppm": parse_float(kv["ppm"], where) if "ppm" in kv else 0.0,
                         "line": lineno}
            net.setups.append(cur_setup)
        elif rec == "to":
            if cur_setup is None:
                raise InputError("%s: 'to' before any 'at'" % where)
            if len(w) < 2:
                raise InputError("%s: to needs a mark" % where)
            mid = net.touch(w[1], where)
            kv = keyvals(w, 2, where, ("hz", "zen", "slope", "horiz", "th",
                                       "face", "ppm", "hz-sd", "zen-sd", "dist-sd"))
            s = {"type": "sight", "setup": cur_setup["index"], "to": mid,
                 "line": lineno,
                 "hz": A(kv["hz"]) if "hz" in kv else None,
                 "zen": A(kv["zen"]) if "zen" in kv else None,
                 "slope": L(kv["slope"]) if "slope" in kv else None,
                 "horiz": L(kv["horiz"]) if "horiz" in kv else None,
                 "th": L(kv["th"]) if "th" in kv else 0.0,
                 "face": kv.get("face"),
                 "ppm": parse_float(kv["ppm"], where) if "ppm" in kv else 0.0,
                 "hz_sd": parse_ang_sd(kv["hz-sd"], where) if "hz-sd" in kv else None,
                 "zen_sd": parse_ang_sd(kv["zen-sd"], where) if "zen-sd" in kv else None,
                 "dist_sd": parse_len_sd(kv["dist-sd"], where) if "dist-sd" in kv else None}
            if s["face"] not in (None, "1", "2"):
                raise InputError("%s: face is 1 or 2" % where)
            if all(s[k] is None for k in ("hz", "zen", "slope", "horiz")):
                raise InputError("%s: sight has no reading" % where)
            net.booked.append(s)
        elif rec == "angle":
            if len(w) < 5:
                raise InputError("%s: angle AT FROM TO VALUE" % where)
            at, fr, to = (net.touch(x, where) for x in w[1:4])
            kv = keyvals(w, 5, where, ("sd", "inst"))
            net.booked.append({"type": "angle", "at": at, "from": fr, "to": to,
                               "value": A(w[4]), "line": lineno,
                               "sd": parse_ang_sd(kv["sd"], where) if "sd" in kv else None,
                               "inst": kv.get("inst")})
        elif rec == "azimuth":
            if len(w) < 4:
                raise InputError("%s: azimuth FROM TO VALUE" % where)
            fr, to = (net.touch(x, where) for x in w[1:3])
            kv = keyvals(w, 4, where, ("sd",))
            if "sd" not in kv:
                raise InputError("%s: azimuth needs its own sd" % where)
            net.booked.append({"type": "azimuth", "from": fr, "to": to,
                               "value": A(w[3]), "line": lineno,
                               "sd": parse_ang_sd(kv["sd"], where)})
        elif rec == "rise":
            if len(w) < 4:
                raise InputError("%s: rise FROM TO VALUE" % where)
            fr, to = (net.touch(x, where) for x in w[1:3])
            kv = keyvals(w, 4, where, ("km", "setups", "sd", "inst"))
            net.booked.append({"type": "rise", "from": fr, "to": to,
                               "value": L(w[3]), "line": lineno,
                               "km": parse_float(kv["km"], where) if "km" in kv else None,
                               "setups": parse_float(kv["setups"], where) if "setups" in kv else None,
                               "sd": parse_len_sd(kv["sd"], where) if "sd" in kv else None,
                               "inst": kv.get("inst")})
        else:
            raise InputError("%s: unknown record '%s'" % (where, rec))
    return net


_OPTION_NAMES = ("dimension", "refraction", "scale", "confidence", "alpha",
                 "power", "global-alpha", "tolerance", "max-iterations",
                 "loop-allowance")


def pick_instrument(net, name, kind, where):
    if name is not None:
        if name not in net.instruments:
            raise InputError("%s: unknown instrument '%s'" % (where, name))
        inst = net.instruments[name]
        if inst["kind"] != kind:
            raise InputError("%s: instrument '%s' is not a %s" % (where, name, kind))
        return inst
    cands = [i for i in net.instruments.values() if i["kind"] == kind]
    if len(cands) != 1:
        raise InputError("%s: name the instrument (%d of kind %s)" % (where, len(cands), kind))
    return cands[0]


# ----------------------------------------------------------------------------
# Observation model (FORMAT.md "Models")
# ----------------------------------------------------------------------------

def wrap(x):
    """Into (-pi, pi]."""
    return x - TWO_PI * math.ceil((x - PI) / TWO_PI)


class Obs:
    """One observation of the adjustment.  value(p) returns (computed value,
    {parameter index: partial derivative}); sigma(p) the a priori sd."""

    def __init__(self, kind, at, frm, to, observed, angular, line):
        self.kind, self.at, self.frm, self.to = kind, at, frm, to
        self.observed = observed      # SI (m or rad), as used in the adjustment
        self.angular = angular
        self.line = line
        self.value = None
        self.sigma = None


class Model:
    def __init__(self, net, datum):
        self.net = net
        self.k = net.opts["refraction"]
        self.scale = net.opts["scale"]
        self.mindex = {m: i for i, m in enumerate(net.mark_order)}
        self.nm = len(net.mark_order)
        self.obs = []
        self.plane = set()
        self.height = set()
        self.dir_setups = []     # setup indices with directions (orientation unknowns)
        # Internally e and n are relative to a round offset near the first
        # given mark, for numerical headroom at large grid coordinates.
        es = [net.marks[m]["e"] for m in net.mark_order if net.marks[m]["e"] is not None]
        ns = [net.marks[m]["n"] for m in net.mark_order if net.marks[m]["n"] is not None]
        self.off_e = round(es[0], -3) if es else 0.0
        self.off_n = round(ns[0], -3) if ns else 0.0
        self.build(datum)

    # parameter indices in the full vector: mark i -> 3i, 3i+1, 3i+2; setup j -> 3nm + j
    def pe(self, m):
        return 3 * self.mindex[m]

    def pn(self, m):
        return 3 * self.mindex[m] + 1

    def ph(self, m):
        return 3 * self.mindex[m] + 2

    def po(self, s):
        return 3 * self.nm + s

    # --- geometry helpers on the full parameter vector p -----------------
    def plane_geom(self, p, a, b):
        de = p[self.pe(b)] - p[self.pe(a)]
        dn = p[self.pn(b)] - p[self.pn(a)]
        d2 = de * de + dn * dn
        return de, dn, math.sqrt(d2), d2

    def az_and_grad(self, p, a, b):
        de, dn, d, d2 = self.plane_geom(p, a, b)
        t = math.atan2(de, dn) % TWO_PI
        g = {self.pe(b): dn / d2, self.pn(b): -de / d2,
             self.pe(a): -dn / d2, self.pn(a): de / d2}
        return t, g

    def dist_and_grad(self, p, a, b):
        de, dn, d, d2 = self.plane_geom(p, a, b)
        g = {self.pe(b): de / d, self.pn(b): dn / d,
             self.pe(a): -de / d, self.pn(a): -dn / d}
        return d, g

    def pdist(self, p, a, b):
        return self.plane_geom(p, a, b)[2]

    def build(self, datum):
        net = self.net
        dim = net.opts["dimension"]
        if dim == "auto":
            any_zen = any(b["type"] == "sight" and b["zen"] is not None for b in net.booked)
            dim = "3" if any_zen else "2"
            use_rises = True
        else:
            use_rises = dim in ("1", "3")
        self.dim = dim
        k, sc, R = self.k, self.scale, R_EARTH
        obs = self.obs
        has_dir = set()

        def add_grad(g, idx, val):
            g[idx] = g.get(idx, 0.0) + val

        for b in net.booked:
            where = "%s:%d" % (net.fname, b["line"])
            if b["type"] == "sight":
                st = net.setups[b["setup"]]
                A, B = st["at"], b["to"]
                if A == B:
                    raise InputError("%s: sight to its own station" % where)
                zen = b["zen"]
                face2 = b["face"] == "2" or (zen is not None and zen > PI)
                ppmf = 1.0 + (st["ppm"] + b["ppm"]) * 1e-6   # DEVELOPERS.md ppm
                ih, th = st["ih"], b["th"]
                inst = None
                needs_inst = ((b["hz"] is not None and b["hz_sd"] is None and dim != "1") or
                              (zen is not None and b["zen_sd"] is None) or
                              ((b["slope"] is not None or b["horiz"] is not None) and b["dist_sd"] is None) or
                              (zen is not None) or dim == "1")
                if needs_inst:
                    inst = pick_instrument(net, st["inst"], "ts", "%s:%d" % (net.fname, st["line"]))
                cen = inst.get("centring", 0.0) if inst else 0.0
                hgt = inst.get("height", 0.0) if inst else 0.0

                def dist_sigma(s, dsd=b["dist_sd"], inst=inst, cen=cen, where=where):
                    if dsd is not None:
                        return dsd
                    if inst is None or "dist_a" not in inst:
                        raise InputError("%s: no distance sd for this sight" % where)
                    return math.sqrt(inst["dist_a"] ** 2 + (inst["dist_b"] * 1e-6 * s) ** 2 + 2 * cen ** 2)

                z1 = None
                if zen is not None:
                    z1 = TWO_PI - zen if face2 else zen      # face-one value
                if dim in ("2", "3"):
                    if b["hz"] is not None:
                        o = Obs("direction", A, "", B, b["hz"], True, b["line"])
                        sidx = b["setup"]
                        has_dir.add(sidx)

                        def val(p, A=A, B=B, sidx=sidx, face2=face2):
                            t, g = self.az_and_grad(p, A, B)
                            g[self.po(sidx)] = -1.0
                            v = t - p[self.po(sidx)] + (PI if face2 else 0.0)
                            return v % TWO_PI, g
                        hsd = b["hz_sd"]

                        def sig(p, A=A, B=B, hsd=hsd, inst=inst, cen=cen, where=where):
                            if hsd is not None:
                                return hsd
                            if "direction" not in inst:
                                raise InputError("%s: instrument has no direction sd" % where)
                            d = self.pdist(p, A, B)
                            return math.sqrt(inst["direction"] ** 2 + 2 * cen ** 2 / d ** 2)
                        o.value, o.sigma, o.setup = val, sig, sidx
                        self.plane.update((A, B))
                        obs.append(o)
                if dim == "3" and zen is not None:
                    o = Obs("zenith", A, "", B, zen, True, b["line"])

                    def val(p, A=A, B=B, ih=ih, th=th, face2=face2):
                        de, dn, d, d2 = self.plane_geom(p, A, B)
                        dz = (p[self.ph(B)] + th) - (p[self.ph(A)] + ih)
                        wv = dz - (1.0 - k) * d2 / (2 * R)
                        z = math.atan2(d, wv)
                        den = d2 + wv * wv
                        # dz = (w dd - d dw)/(d^2+w^2), dw = dDz - (1-k) d/R dd
                        dzd = (wv + d * (1.0 - k) * d / R) / den
                        dzdz = -d / den
                        g = {}
                        add_grad(g, self.pe(B), dzd * de / d)
                        add_grad(g, self.pn(B), dzd * dn / d)
                        add_grad(g, self.pe(A), -dzd * de / d)
                        add_grad(g, self.pn(A), -dzd * dn / d)
                        add_grad(g, self.ph(B), dzdz)
                        add_grad(g, self.ph(A), -dzdz)
                        if face2:
                            z = TWO_PI - z
                            g = {i: -x for i, x in g.items()}
                        return z, g
                    zsd = b["zen_sd"]

                    def sig(p, A=A, B=B, zsd=zsd, inst=inst, hgt=hgt, where=where):
                        if zsd is not None:
                            return zsd
                        if "zenith" not in inst:
                            raise InputError("%s: instrument has no zenith sd" % where)
                        d = self.pdist(p, A, B)
                        return math.sqrt(inst["zenith"] ** 2 + 2 * hgt ** 2 / d ** 2)
                    o.value, o.sigma = val, sig
                    self.plane.update((A, B))
                    self.height.update((A, B))
                    obs.append(o)
                if b["slope"] is not None and dim in ("2", "3"):
                    s = b["slope"] * ppmf
                    if dim == "3":
                        o = Obs("slope", A, "", B, s, False, b["line"])

                        def val(p, A=A, B=B, ih=ih, th=th):
                            de, dn, d, d2 = self.plane_geom(p, A, B)
                            dz = (p[self.ph(B)] + th) - (p[self.ph(A)] + ih)
                            u = dz - d2 / (2 * R)
                            S = math.sqrt((d / sc) ** 2 + u * u)
                            dSd = (d / (sc * sc) - u * d / R) / S
                            dSz = u / S
                            g = {}
                            add_grad(g, self.pe(B), dSd * de / d)
                            add_grad(g, self.pn(B), dSd * dn / d)
                            add_grad(g, self.pe(A), -dSd * de / d)
                            add_grad(g, self.pn(A), -dSd * dn / d)
                            add_grad(g, self.ph(B), dSz)
                            add_grad(g, self.ph(A), -dSz)
                            return S, g
                        self.height.update((A, B))
                    else:
                        if zen is None:
                            raise InputError("%s: slope distance without zenith angle in dimension 2" % where)
                        o = Obs("horiz", A, "", B, s * math.sin(z1), False, b["line"])

                        def val(p, A=A, B=B):
                            d, g = self.dist_and_grad(p, A, B)
                            return d / sc, {i: x / sc for i, x in g.items()}
                    sd_s = dist_sigma(s)
                    o.value, o.sigma = val, (lambda p, v=sd_s: v)
                    self.plane.update((A, B))
                    obs.append(o)
                if b["horiz"] is not None and dim in ("2", "3"):
                    s = b["horiz"] * ppmf
                    o = Obs("horiz", A, "", B, s, False, b["line"])

                    def val(p, A=A, B=B):
                        d, g = self.dist_and_grad(p, A, B)
                        return d / sc, {i: x / sc for i, x in g.items()}
                    sd_s = dist_sigma(s)
                    o.value, o.sigma = val, (lambda p, v=sd_s: v)
                    self.plane.update((A, B))
                    obs.append(o)
                if dim == "1" and zen is not None and b["slope"] is not None:
                    s = b["slope"] * ppmf
                    dh = s * math.cos(z1) + (1.0 - k) * (s * math.sin(z1)) ** 2 / (2 * R) + ih - th
                    o = Obs("trig-rise", A, "", B, dh, False, b["line"])

                    def val(p, A=A, B=B):
                        return p[self.ph(B)] - p[self.ph(A)], {self.ph(B): 1.0, self.ph(A): -1.0}
                    ssd = dist_sigma(s)
                    if b["zen_sd"] is not None:
                        zsd = b["zen_sd"]
                    else:
                        if "zenith" not in inst:
                            raise InputError("%s: instrument has no zenith sd" % where)
                        zsd = inst["zenith"]
                    sd_t = math.sqrt((math.cos(z1) * ssd) ** 2 + (s * math.sin(z1) * zsd) ** 2 + 2 * hgt ** 2)
                    o.value, o.sigma = val, (lambda p, v=sd_t: v)
                    self.height.update((A, B))
                    obs.append(o)
            elif b["type"] in ("angle", "azimuth"):
                if dim not in ("2", "3"):
                    continue
                if b["type"] == "azimuth":
                    F, T = b["from"], b["to"]
                    o = Obs("azimuth", "", F, T, b["value"], True, b["line"])

                    def val(p, F=F, T=T):
                        return self.az_and_grad(p, F, T)
                    o.value, o.sigma = val, (lambda p, v=b["sd"]: v)
                    self.plane.update((F, T))
                else:
                    Aa, F, T = b["at"], b["from"], b["to"]
                    o = Obs("angle", Aa, F, T, b["value"], True, b["line"])

                    def val(p, Aa=Aa, F=F, T=T):
                        t2, g2 = self.az_and_grad(p, Aa, T)
                        t1, g1 = self.az_and_grad(p, Aa, F)
                        g = dict(g2)
                        for i, x in g1.items():
                            add_grad(g, i, -x)
                        return (t2 - t1) % TWO_PI, g
                    if b["sd"] is not None:
                        o.sigma = (lambda p, v=b["sd"]: v)
                    else:
                        inst = pick_instrument(net, b["inst"], "ts", where)
                        if "direction" not in inst:
                            raise InputError("%s: instrument has no direction sd" % where)
                        cen = inst.get("centring", 0.0)

                        def sig(p, Aa=Aa, F=F, T=T, inst=inst, cen=cen):
                            d1 = self.pdist(p, Aa, F)
                            d2 = self.pdist(p, Aa, T)
                            d3 = self.pdist(p, F, T)
                            return math.sqrt(2 * inst["direction"] ** 2 +
                                             cen ** 2 * (1 / d1 ** 2 + 1 / d2 ** 2) +
                                             cen ** 2 * d3 ** 2 / (d1 ** 2 * d2 ** 2))
                        o.sigma = sig
                    o.value = val
                    self.plane.update((Aa, F, T))
                obs.append(o)
            elif b["type"] == "rise":
                if not use_rises:
                    continue
                F, T = b["from"], b["to"]
                o = Obs("rise", "", F, T, b["value"], False, b["line"])
                if b["sd"] is not None:
                    sd_r = b["sd"]
                else:
                    inst = pick_instrument(net, b["inst"], "level", where)
                    if b["km"] is not None and "per-km" in inst:
                        sd_r = inst["per-km"] * math.sqrt(b["km"])
                    elif b["setups"] is not None and "per-setup" in inst:
                        sd_r = inst["per-setup"] * math.sqrt(b["setups"])
                    else:
                        raise InputError("%s: rise needs km (per-km) or setups (per-setup)" % where)

                def val(p, F=F, T=T):
                    return p[self.ph(T)] - p[self.ph(F)], {self.ph(T): 1.0, self.ph(F): -1.0}
                o.value, o.sigma = val, (lambda p, v=sd_r: v)
                self.height.update((F, T))
                obs.append(o)

        self.dir_setups = [s for s in range(len(net.setups)) if s in has_dir]

        # --- datum, unknowns ------------------------------------------------
        marks = net.marks
        has_control = any(
            (m in self.plane and ("en" in marks[m]["hold"] or marks[m]["sd_en"] is not None)) or
            (m in self.height and ("h" in marks[m]["hold"] or marks[m]["sd_h"] is not None))
            for m in net.mark_order)
        self.datum = "free" if (datum == "free" or not has_control) else "held"
        self.held = set()     # full-vector indices not estimated
        self.fixed_names = []
        for m in net.mark_order:
            mk = marks[m]
            if m in self.plane:
                for c in "en":
                    if mk[c] is None:
                        raise InputError("%s: mark %s needs a starting %s (the reference solver computes no starts)" % (net.fname, m, c))
                if self.datum == "held" and "en" in mk["hold"]:
                    self.held.update((self.pe(m), self.pn(m)))
            if m in self.height:
                if mk["h"] is None:
                    raise InputError("%s: mark %s needs a starting h" % (net.fname, m))
                if self.datum == "held" and "h" in mk["hold"]:
                    self.held.add(self.ph(m))
        if self.datum == "free":
            # DEVELOPERS.md "Datum free": minimal constraints
            pm = [m for m in net.mark_order if m in self.plane]
            if pm:
                a = pm[0]
                self.held.update((self.pe(a), self.pn(a)))
                self.fixed_names += [a + ".e", a + ".n"]
                if len(pm) > 1:
                    # DEVELOPERS.md: rotation is fixed by azimuth
                    # observations, scale by distances; fix on B only
                    # what the observations leave free.
                    b2 = pm[1]
                    any_dist = any(o.kind in ("horiz", "slope") for o in obs)
                    any_azi = any(o.kind == "azimuth" for o in obs)
                    dE = marks[b2]["e"] - marks[a]["e"]
                    dN = marks[b2]["n"] - marks[a]["n"]
                    across = "e" if abs(dN) >= abs(dE) else "n"  # moves B by rotation
                    along = "n" if across == "e" else "e"        # moves B by scale
                    fix = []
                    if not any_azi:
                        fix.append(across)
                    if not any_dist:
                        fix.append(along)
                    for c in sorted(fix):
                        self.held.add(self.pe(b2) if c == "e" else self.pn(b2))
                        self.fixed_names.append(b2 + "." + c)
            hm = [m for m in net.mark_order if m in self.height]
            if hm:
                self.held.add(self.ph(hm[0]))
                self.fixed_names.append(hm[0] + ".h")
        # control pseudo-observations, in definition order (FORMAT.md observations.csv)
        if self.datum == "held":
            for m in net.def_order:
                mk = marks[m]
                comps = []
                if mk["sd_en"] is not None and m in self.plane and "en" not in mk["hold"]:
                    comps += [("e", self.pe(m), mk["sd_en"]), ("n", self.pn(m), mk["sd_en"])]
                if mk["sd_h"] is not None and m in self.height and "h" not in mk["hold"]:
                    comps.append(("h", self.ph(m), mk["sd_h"]))
                for c, idx, sd in comps:
                    o = Obs("control-" + c, m, "", "", mk[c], False, mk["line"])
                    off = self.off_e if c == "e" else self.off_n if c == "n" else 0.0
                    o.value = (lambda p, idx=idx, off=off: (p[idx] + off, {idx: 1.0}))
                    o.sigma = (lambda p, v=sd: v)
                    obs.append(o)
        # unknown list: mark by mark (e, n, h), then orientations
        self.unk = []
        for m in net.mark_order:
            if m in self.plane:
                for idx in (self.pe(m), self.pn(m)):
                    if idx not in self.held:
                        self.unk.append(idx)
            if m in self.height and self.ph(m) not in self.held:
                self.unk.append(self.ph(m))
        for s in self.dir_setups:
            self.unk.append(self.po(s))

    def start_vector(self):
        net = self.net
        p = np.zeros(3 * self.nm + len(net.setups))
        for m in net.mark_order:
            mk = net.marks[m]
            i = self.mindex[m]
            p[3 * i] = (mk["e"] - self.off_e) if mk["e"] is not None else 0.0
            p[3 * i + 1] = (mk["n"] - self.off_n) if mk["n"] is not None else 0.0
            p[3 * i + 2] = mk["h"] if mk["h"] is not None else 0.0
        # DEVELOPERS.md: starting orientation = circular mean of (t - hz, face corrected)
        for s in self.dir_setups:
            sx = sy = 0.0
            for o in self.obs:
                if o.kind == "direction" and o.setup == s:
                    p[self.po(s)] = 0.0
                    v, _ = o.value(p)          # t + (pi if face two), omega = 0
                    ang = v - o.observed
                    sx += math.cos(ang)
                    sy += math.sin(ang)
            p[self.po(s)] = math.atan2(sy, sx)
        return p


# ----------------------------------------------------------------------------
# Adjustment
# ----------------------------------------------------------------------------

def linearise(model, p):
    nobs, nunk = len(model.obs), len(model.unk)
    col = {idx: j for j, idx in enumerate(model.unk)}
    A = np.zeros((nobs, nunk))
    f = np.zeros(nobs)
    sig = np.zeros(nobs)
    for i, o in enumerate(model.obs):
        v, g = o.value(p)
        f[i] = v
        for idx, x in g.items():
            if idx in col:
                A[i, col[idx]] += x
        sig[i] = o.sigma(p)
        if not (sig[i] > 0.0):
            raise InputError("%s:%d: a priori sd is zero" % (model.net.fname, o.line))
    l = np.array([o.observed for o in model.obs])
    mis = f - l
    for i, o in enumerate(model.obs):
        if o.angular:
            mis[i] = wrap(mis[i])
    return A, mis, sig


def adjust(model, out=frozenset()):
    """Gauss-Newton from the starting values; observations in `out`
    (indices) are left out (weight 0): snooping re-adjusts from scratch."""
    mask = np.array([0.0 if i in out else 1.0 for i in range(len(model.obs))])
    p = model.start_vector()
    if not model.unk:
        raise AdjustError("nothing to adjust")
    cap = max(MAX_ITER_CAP, model.net.opts["max-iterations"])
    it = 0
    prev = math.inf
    converged = False
    while it < cap:
        it += 1
        A, mis, sig = linearise(model, p)
        P = mask / sig ** 2
        N = A.T @ (A * P[:, None])
        b = -A.T @ (P * mis)
        if np.linalg.cond(N) > 1e14:
            raise AdjustError("normal matrix singular: datum defect or undetermined mark")
        dx = np.linalg.solve(N, b)
        for j, idx in enumerate(model.unk):
            p[idx] += dx[j]
        mx = float(np.max(np.abs(dx)))
        if mx < CONVERGED:
            converged = True
            break
        # floating-point floor: corrections below 1e-10 that stop shrinking
        if mx < 1e-10 and mx >= prev:
            converged = True
            break
        prev = mx
    if not converged:
        raise AdjustError("no convergence after %d iterations" % it)
    A, v, sig = linearise(model, p)      # final point: residual v = computed - observed
    P = mask / sig ** 2
    N = A.T @ (A * P[:, None])
    Q = np.linalg.inv(N)
    return p, A, v, sig, Q, it


def quality(model, p, A, v, sig, Q, out=frozenset(), snoop="iterate"):
    """Tests of the adjustment without the observations in `out`. With
    snoop 'off' nothing is flagged (FORMAT.md / DEVELOPERS.md)."""
    opts = model.net.opts
    nobs, nunk = A.shape
    used = np.array([i not in out for i in range(nobs)])
    dof = int(used.sum()) - nunk
    P = np.where(used, 1.0 / sig ** 2, 0.0)
    red = 1.0 - P * np.einsum("ij,jk,ik->i", A, Q, A)
    red[~used] = np.nan
    if abs(np.nansum(red) - dof) > 1e-6 * max(1, nobs):
        raise AdjustError("sum of redundancy numbers %.9g != dof %d" % (np.nansum(red), dof))
    vtpv = float(np.sum(P * v * v))
    nd = statistics.NormalDist()
    zcrit = nd.inv_cdf(1.0 - opts["alpha"] / 2.0)
    lam = lambda0(opts["alpha"], opts["power"])
    w = np.full(nobs, np.nan)
    mdb = np.full(nobs, np.nan)
    status = []
    for i in range(nobs):
        if i in out:
            status.append("rejected")
            continue
        if red[i] < 0.01:
            status.append("unchecked")
            continue
        w[i] = v[i] / (sig[i] * math.sqrt(red[i]))
        mdb[i] = sig[i] * math.sqrt(lam / red[i])
        status.append("flagged" if abs(w[i]) > zcrit and snoop != "off" else "ok")
    ga = opts["global-alpha"]
    if dof > 0:
        lo, hi = chi2_ppf(ga / 2.0, dof), chi2_ppf(1.0 - ga / 2.0, dof)
        gt = "pass" if lo <= vtpv <= hi else "fail"
    else:
        lo = hi = None
        gt = "none"
    return dict(dof=dof, red=red, vtpv=vtpv, w=w, mdb=mdb, status=status,
                zcrit=zcrit, lam=lam, lo=lo, hi=hi, gt=gt, rejected=[])


def snoop_iterate(model, fit, qa):
    """Baarda's iterative data snooping (DESIGN.md "Snooping"): remove the
    observation with the largest |w| above the critical value (the first
    in order on a tie), re-adjust from the starting values, repeat until
    none is left or floor(10 % of the observations) are removed."""
    out, recs = [], []
    limit = int(math.floor(0.10 * len(model.obs) + 1e-9))
    while True:
        cand = [i for i, st in enumerate(qa["status"]) if st == "flagged"]
        if not cand or len(out) >= limit:
            break
        worst = max(cand, key=lambda i: (abs(qa["w"][i]), -i))
        # (index, w, nabla = -v/r) at the time of rejection
        recs.append((worst, float(qa["w"][worst]), float(-fit[2][worst] / qa["red"][worst])))
        out.append(worst)
        fit = adjust(model, frozenset(out))
        p, A, v, sig, Q, it = fit
        qa = quality(model, p, A, v, sig, Q, frozenset(out))
    qa["rejected"] = recs
    return fit, qa


def control_tests(model, p, A, v, sig, Q, out=frozenset()):
    """The test of each held mark's given coordinates against the
    observations touching it (include/cairn/quality.h cairn_control_test):
    the model gains the columns C of the held components,
    M = C'PC - C'PA Q A'PC, u = C'Pv, and the directions g of the
    generalised eigenproblem M g = rho C'PC g with rho >= 0.01 are tested:
    T = sum (g'u)^2 / rho against chi2(1 - alpha; their number), shift
    -sum g (g'u) / rho. Dense: Q is the full inverse of N here."""
    if model.datum != "held":
        return []
    net = model.net
    alpha = net.opts["alpha"]
    col = {idx: j for j, idx in enumerate(model.unk)}
    nobs = len(model.obs)
    P = np.array([0.0 if i in out else 1.0 / sig[i] ** 2 for i in range(nobs)])
    grads = [o.value(p)[1] for o in model.obs]
    res = []
    for m in net.mark_order:
        mk = net.marks[m]
        comps = []
        if m in model.plane and "en" in mk["hold"]:
            comps += [("e", model.pe(m)), ("n", model.pn(m))]
        if m in model.height and "h" in mk["hold"]:
            comps.append(("h", model.ph(m)))
        # a component no observation touches is not tested (C: problem touch)
        comps = [(c, idx) for c, idx in comps
                 if any(g.get(idx, 0.0) != 0.0 for g in grads)]
        if not comps:
            continue
        C = np.array([[g.get(idx, 0.0) for _, idx in comps] for g in grads])
        rows = [i for i in range(nobs) if P[i] > 0 and np.any(C[i] != 0.0)]
        if not rows:
            continue
        W = C.T @ (C * P[:, None])
        b = A.T @ (C * P[:, None])
        M = W - b.T @ Q @ b
        u = C.T @ (P * v)
        lam, V = np.linalg.eigh(W)
        keep = [k for k in range(len(lam)) if lam[k] > 1e-12 * lam[-1] and lam[k] > 0]
        S = np.array([V[:, k] / math.sqrt(lam[k]) for k in keep])
        T, shift, q = 0.0, np.zeros(len(comps)), 0
        if len(keep):
            rho, Z = np.linalg.eigh(S @ M @ S.T)
            for k in range(len(rho)):
                if rho[k] >= 0.01:
                    g = S.T @ Z[:, k]
                    a = float(g @ u)
                    T += a * a / rho[k]
                    shift -= g * a / rho[k]
                    q += 1
        d = dict(mark=m, components="".join(c for c, _ in comps), observations=len(rows),
                 dimension=q)
        for c, x in zip([c for c, _ in comps], shift):
            if q:
                d["shift_" + c] = float(x)
        if q:
            d["statistic"] = T
            d["critical"] = chi2_ppf(1.0 - alpha, q)
            d["status"] = "pass" if T <= d["critical"] else "fail"
        else:
            d["status"] = "untestable"
        res.append(d)
    return res


def pairs_and_tolerance(model, p, Q, kconf):
    """Relative ellipses of every pair of marks joined by an observation
    (station with each target; from with to), from Qii + Qjj - 2Qij, and
    the tolerance a + b ppm of the plane distance (FORMAT.md `tolerance`)."""
    col = {idx: j for j, idx in enumerate(model.unk)}
    pairs = {}
    order = {m: k for k, m in enumerate(model.net.mark_order)}
    for o in model.obs:
        ms = [(o.at, o.frm), (o.at, o.to)] if o.at else [(o.frm, o.to)]
        for a, b in ms:
            if not a or not b or a == b:
                continue
            a, b = sorted((a, b), key=lambda m: order[m])
            if a in model.plane and b in model.plane:
                pairs.setdefault((a, b), None)
    tol = model.net.opts.get("tolerance")
    rows = []
    allpass = None
    for (a, b) in sorted(pairs, key=lambda ab: (order[ab[0]], order[ab[1]])):
        g = np.zeros((2, len(model.unk)))
        for k, (fa, fb) in enumerate(((model.pe(a), model.pe(b)), (model.pn(a), model.pn(b)))):
            if fb in col:
                g[k, col[fb]] += 1.0
            if fa in col:
                g[k, col[fa]] -= 1.0
        C = g @ Q @ g.T
        qee, qen, qnn = C[0, 0], C[0, 1], C[1, 1]
        tr = 0.5 * (qee + qnn)
        rt = math.sqrt(max(0.0, 0.25 * (qee - qnn) ** 2 + qen * qen))
        major = kconf * math.sqrt(tr + rt)
        minor = kconf * math.sqrt(max(0.0, tr - rt))
        de = p[model.pe(b)] - p[model.pe(a)]
        dn = p[model.pn(b)] - p[model.pn(a)]
        dist = math.hypot(de, dn)
        allowed = ok = None
        if tol is not None:
            allowed = tol.get("len", 0.0) + tol.get("ppm", 0.0) * 1e-6 * dist
            ok = major <= allowed
            allpass = ok if allpass is None else (allpass and ok)
        rows.append((a, b, dist, major, minor, allowed, ok))
    return rows, ("none" if allpass is None else "pass" if allpass else "fail")


# ----------------------------------------------------------------------------
# Output
# ----------------------------------------------------------------------------

def num(x):
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    return repr(float(x))


def write_outputs(model, p, v, sig, Q, it, qa, outdir):
    net = model.net
    lf = LENGTH_UNITS[net.length_unit]
    col = {idx: j for j, idx in enumerate(model.unk)}
    kconf = math.sqrt(-2.0 * math.log(1.0 - net.opts["confidence"]))
    os.makedirs(outdir, exist_ok=True)
    rows = ["id,role,e,n,h,sd_e,sd_n,sd_h,major,minor,major_azimuth"]
    for m in net.mark_order:
        if m not in model.plane and m not in model.height:
            continue
        mk = net.marks[m]
        comps = []
        if m in model.plane:
            comps += [("e", model.pe(m)), ("n", model.pn(m))]
        if m in model.height:
            comps.append(("h", model.ph(m)))
        vals = {"e": "", "n": "", "h": ""}
        sds = {"e": "", "n": "", "h": ""}
        q = {}
        for c, idx in comps:
            x = p[idx] + (model.off_e if c == "e" else model.off_n if c == "n" else 0.0)
            vals[c] = num(x / lf)
            if idx in col:
                q[c] = Q[col[idx], col[idx]]
                sds[c] = num(math.sqrt(q[c]) / lf)
        major = minor = azi = ""
        if m in model.plane and ("e" in q or "n" in q):
            qee = q.get("e", 0.0)
            qnn = q.get("n", 0.0)
            qen = 0.0
            if "e" in q and "n" in q:
                qen = Q[col[model.pe(m)], col[model.pn(m)]]
            tr = 0.5 * (qee + qnn)
            rt = math.sqrt(max(0.0, 0.25 * (qee - qnn) ** 2 + qen * qen))
            l1, l2 = tr + rt, max(0.0, tr - rt)
            major = num(kconf * math.sqrt(l1) / lf)
            minor = num(kconf * math.sqrt(l2) / lf)
            azi = num(math.degrees(0.5 * math.atan2(2.0 * qen, qnn - qee)) % 180.0)
        if model.datum == "held":
            wt = ((m in model.plane and mk["sd_en"] is not None and "en" not in mk["hold"]) or
                  (m in model.height and mk["sd_h"] is not None and "h" not in mk["hold"]))
            allheld = all(idx in model.held for _, idx in comps)
            role = "weighted" if wt else ("held" if allheld else "adjusted")
        else:
            role = "adjusted"
        rows.append(",".join([m, role, vals["e"], vals["n"], vals["h"], sds["e"], sds["n"],
                              sds["h"], major, minor, azi]))
    _write(os.path.join(outdir, "marks.csv"), rows)

    rows = ["seq,kind,at,from,to,observed,adjusted,residual,sd,redundancy,w,mdb,status,source"]
    for i, o in enumerate(model.obs):
        if o.angular:
            obs_u = math.degrees(o.observed)
            res_u = v[i] / ARCSEC
            adj_u = obs_u + res_u / 3600.0
            sd_u = sig[i] / ARCSEC
            mdb_u = qa["mdb"][i] / ARCSEC
        else:
            obs_u = o.observed / lf
            res_u = v[i] / lf
            adj_u = obs_u + res_u
            sd_u = sig[i] / lf
            mdb_u = qa["mdb"][i] / lf
        rows.append(",".join([str(i + 1), o.kind, o.at, o.frm, o.to, num(obs_u), num(adj_u),
                              num(res_u), num(sd_u), num(qa["red"][i]), num(qa["w"][i]),
                              num(mdb_u), qa["status"][i], "%s:%d" % (net.fname, o.line)]))
    _write(os.path.join(outdir, "observations.csv"), rows)

    s = qa
    prs, tolres = pairs_and_tolerance(model, p, Q, kconf)
    prow = ["from,to,distance,major,minor,allowed,pass"]
    for a, b, dist, major, minor, allowed, ok in prs:
        prow.append(",".join([a, b, num(dist / lf), num(major / lf), num(minor / lf),
                              num(None if allowed is None else allowed / lf),
                              "" if ok is None else ("yes" if ok else "no")]))
    _write(os.path.join(outdir, "pairs.csv"), prow)
    lines = ["observations=%d" % len(model.obs), "unknowns=%d" % len(model.unk),
             "dof=%d" % s["dof"], "iterations=%d" % it, "vtpv=%s" % num(s["vtpv"]),
             "sigma0_squared=%s" % (num(s["vtpv"] / s["dof"]) if s["dof"] > 0 else ""),
             "chi2_lower=%s" % num(s["lo"]), "chi2_upper=%s" % num(s["hi"]),
             "global_test=%s" % s["gt"], "datum=%s" % model.datum,
             "dimension=%s" % model.dim, "fixed=%s" % " ".join(model.fixed_names),
             "flagged=%d" % s["status"].count("flagged"),
             "unchecked=%d" % s["status"].count("unchecked"),
             "critical_w=%s" % num(s["zcrit"]), "lambda0=%s" % num(s["lam"]),
             "sum_redundancy=%s" % num(float(np.nansum(s["red"]))),
             "statistic=%s" % num(s["vtpv"]),
             "rejected=%d" % len(s["rejected"]),
             "rejected_seq=%s" % " ".join(str(i + 1) for i, _, _ in s["rejected"]),
             "rejected_w=%s" % " ".join(num(w) for _, w, _ in s["rejected"]),
             "tolerance=%s" % tolres]
    _write(os.path.join(outdir, "summary.txt"), lines)


def write_control(model, ctl, ctl_first, path):
    """control.csv: the held-mark tests, final and before snooping
    (compare.py checks them against results.xml's held-mark-test)."""
    lf = LENGTH_UNITS[model.net.length_unit]
    keys = ["observations", "dimension", "statistic", "status", "shift_e", "shift_n",
            "shift_h"]
    rows = ["mark,components," + ",".join(keys) + "," + ",".join(k + "_first" for k in keys)]
    first = {d["mark"]: d for d in ctl_first}
    for d in ctl:
        cells = [d["mark"], d["components"]]
        for src in (d, first.get(d["mark"], {})):
            for k in keys:
                x = src.get(k)
                if k.startswith("shift_") and x is not None:
                    x = x / lf
                cells.append(num(x) if isinstance(x, float) else ("" if x is None else str(x)))
        rows.append(",".join(cells))
    _write(path, rows)


def _write(path, rows):
    tmp = path + ".tmp"
    with open(tmp, "w", encoding="utf-8") as fh:
        fh.write("\n".join(rows) + "\n")
    os.replace(tmp, path)


# ----------------------------------------------------------------------------
# Self-test
# ----------------------------------------------------------------------------

def selftest():
    fails = 0

    def check(name, got, want, tol):
        nonlocal fails
        ok = abs(got - want) <= tol
        print("%-55s got %.8g want %.8g %s" % (name, got, want, "ok" if ok else "FAIL"))
        if not ok:
            fails += 1

    # REFERENCES.md 1.1 (NIST/SEMATECH e-Handbook 1.3.6.7.4 [V], scipy [C])
    table = {1: (0.000982, 0.003932, 3.84146, 5.02389),
             2: (0.05064, 0.10259, 5.99146, 7.37776),
             3: (0.21580, 0.35185, 7.81473, 9.34840),
             5: (0.83121, 1.14548, 11.07050, 12.83250),
             10: (3.24697, 3.94030, 18.30704, 20.48318),
             20: (9.59078, 10.85081, 31.41043, 34.16961),
             50: (32.35736, 34.76425, 67.50481, 71.42020),
             100: (74.22193, 77.92947, 124.34211, 129.56120)}
    for dof, vals in table.items():
        for pr, want in zip((0.025, 0.05, 0.95, 0.975), vals):
            # table is rounded to 5 decimals (6 for df 1 lower tail)
            check("chi2_ppf(%g; %d) [REFERENCES.md 1.1]" % (pr, dof), chi2_ppf(pr, dof), want,
                  6e-6 if want < 0.01 else 6e-5 * max(1.0, want / 100))
    # REFERENCES.md 2: lambda0 (Baarda 1968, [M]+[C])
    for a, pw, want in ((0.001, 0.80, 17.075), (0.01, 0.80, 11.679), (0.05, 0.80, 7.849),
                        (0.001, 0.70, 14.554), (0.001, 0.90, 20.904)):
        check("lambda0(alpha=%g, power=%g) [REFERENCES.md 2]" % (a, pw), lambda0(a, pw), want, 6e-4)
    # REFERENCES.md 3.1: ellipse factor sqrt(-2 ln(1-p))
    for pr, want in ((0.50, 1.1774), (0.90, 2.1460), (0.95, 2.4477), (0.99, 3.0349)):
        check("ellipse k(%g) [REFERENCES.md 3.1]" % pr, math.sqrt(-2 * math.log(1 - pr)), want, 6e-5)
    check("sqrt(chi2_ppf(0.95;2)) vs k95 [REFERENCES.md 3.1]", math.sqrt(chi2_ppf(0.95, 2)), 2.4477, 6e-5)
    # REFERENCES.md 5: (1-k) D^2/2R at D = 1 km, k = 0.13 -> 0.068278 m
    check("curv+refr 1 km [REFERENCES.md 5]", (1 - 0.13) * 1000.0 ** 2 / (2 * R_EARTH), 0.068278, 6e-7)
    # FORMAT.md Conventions: packed dms 123.4530 = 123 deg 45' 30"
    check("dms 123.4530 [FORMAT.md]", math.degrees(parse_angle("123.4530", "dms", "t")),
          123 + 45 / 60 + 30 / 3600, 1e-12)
    check("dms 123-45-30.5 [FORMAT.md]", math.degrees(parse_angle("123-45-30.5", "dms", "t")),
          123 + 45 / 60 + 30.5 / 3600, 1e-12)
    check("gon 100 = 90 deg [REFERENCES.md 5]", math.degrees(parse_angle("100", "gon", "t")), 90.0, 1e-12)
    check("1 cc = 0.324 sec [REFERENCES.md 5]", parse_ang_sd("1cc", "t") / ARCSEC, 0.324, 1e-12)
    d = parse_sum("1 mm + 1.5 ppm", "t")
    check("unit sum '1 mm + 1.5 ppm' length", d["len"], 0.001, 1e-15)
    check("unit sum '1 mm + 1.5 ppm' ppm", d["ppm"], 1.5, 1e-15)
    check("usft [REFERENCES.md 5]", LENGTH_UNITS["usft"], 0.3048006096012192, 1e-15)
    # partial derivatives against central differences (common practice, no source)
    fails += _derivative_check()
    print("selftest: %s" % ("FAIL (%d)" % fails if fails else "all ok"))
    return 1 if fails else 0


def _derivative_check():
    import tempfile
    text = """units m dms
option refraction 0.13 scale 0.9996
instrument T direction 1sec zenith 1sec distance 1mm+1ppm centring 1mm height 1mm
mark A e 1000 n 2000 h 50 hold enh
mark B e 1800 n 2900 h 75
mark C e 300 n 2500 h 40
at A ih 1.5
to B hz 0.0000 zen 88.0000 slope 1204.0 th 1.6
to C hz 300.0000 zen 272.0000 slope 860.0 th 1.6
angle A B C 300.0000 sd 2sec
azimuth A B 41.3000 sd 2sec
"""
    with tempfile.TemporaryDirectory() as td:
        fn = os.path.join(td, "d.cfb")
        with open(fn, "w") as fh:
            fh.write(text)
        net = read_fieldbook(fn)
    model = Model(net, "held")
    p = model.start_vector()
    bad = 0
    for o in model.obs:
        _, g = o.value(p)
        for idx, an in g.items():
            h = 1e-4
            pp, pm = p.copy(), p.copy()
            pp[idx] += h
            pm[idx] -= h
            fd = wrap(o.value(pp)[0] - o.value(pm)[0]) / (2 * h)
            if abs(fd - an) > 1e-7 * max(1.0, abs(an)):
                print("derivative %s idx %d: analytic %.12g numeric %.12g FAIL" % (o.kind, idx, an, fd))
                bad += 1
    print("partial derivatives vs central differences: %s" % ("ok" if not bad else "FAIL"))
    return bad


def main(argv):
    if len(argv) >= 2 and argv[1] == "--selftest":
        return selftest()
    args = [a for a in argv[1:]]
    datum = "held"
    snoop = "iterate"
    if "--snoop" in args:
        i = args.index("--snoop")
        if i + 1 >= len(args) or args[i + 1] not in ("iterate", "flag", "off"):
            print("usage: cairn_ref.py FIELDBOOK OUTDIR [--snoop iterate|flag|off]", file=sys.stderr)
            return 2
        snoop = args[i + 1]
        del args[i:i + 2]
    if "--datum" in args:
        i = args.index("--datum")
        if i + 1 >= len(args) or args[i + 1] not in ("held", "free"):
            print("usage: cairn_ref.py FIELDBOOK OUTDIR [--datum held|free]", file=sys.stderr)
            return 2
        datum = args[i + 1]
        del args[i:i + 2]
    if len(args) != 2:
        print("usage: cairn_ref.py FIELDBOOK OUTDIR [--datum held|free] | --selftest", file=sys.stderr)
        return 2
    try:
        net = read_fieldbook(args[0])
        model = Model(net, datum)
        fit = adjust(model)
        qa = quality(model, *fit[:5], snoop=snoop)
        ctl_first = control_tests(model, *fit[:5])
        if snoop == "iterate":
            fit, qa = snoop_iterate(model, fit, qa)
        p, A, v, sig, Q, it = fit
    except InputError as e:
        print("cairn_ref: error: %s" % e, file=sys.stderr)
        return 2
    except AdjustError as e:
        print("cairn_ref: %s: error: %s" % (args[0], e), file=sys.stderr)
        return 3
    write_outputs(model, p, v, sig, Q, it, qa, args[1])
    ctl = control_tests(model, p, A, v, sig, Q, frozenset(i for i, _, _ in qa["rejected"]))
    write_control(model, ctl, ctl_first, os.path.join(args[1], "control.csv"))
    return 0 if (qa["gt"] != "fail" and "flagged" not in qa["status"]
                 and not qa["rejected"]) else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv))
