#!/usr/bin/python3
"""make_networks.py -- regenerate the integration field books deterministically.

    /usr/bin/python3 tests/reference/make_networks.py [OUTDIR]

OUTDIR defaults to tests/integration/networks/ beside this script's parent.
Every network belongs to one invented scenario: the control survey for the
(fictional) Corriebrack reservoir scheme in the (fictional) Ashlune valley.
True coordinates are fixed below; exact observations are computed with the
formulas of FORMAT.md "Models"; normal noise is added with the a priori
standard deviation of FORMAT.md (evaluated at the true coordinates); values
are rounded to booking precision (0.1" or 1e-5 gon / 1e-6 deg, 0.1 mm or
0.0001 ft, levelling 0.01 mm).  Starting coordinates of non-held marks are
the truth plus normal offsets of sd 6 cm (a few cm to about a dm).  Each
network has its own fixed seed, so the files are reproduced byte for byte.

The forward formulas here are written out again on purpose (not imported
from cairn_ref.py), so a slip in one is not silently shared by the other.
"""

import math
import os
import sys

import numpy as np

PI = math.pi
R = 6371000.0
SEC = PI / 648000.0
LEN = {"m": 1.0, "ft": 0.3048, "usft": 1200.0 / 3937.0}


def az(a, b):
    return math.atan2(b[0] - a[0], b[1] - a[1]) % (2 * PI)


def pdist(a, b):
    return math.hypot(b[0] - a[0], b[1] - a[1])


class Book:
    def __init__(self, fname, header, seed, lunit="m", aunit="dms", options=None,
                 start_sd=0.06):
        self.fname, self.lunit, self.aunit = fname, lunit, aunit
        self.rng = np.random.default_rng(seed)
        self.lines = ["# " + h for h in header]
        self.lines.append("units %s %s" % (lunit, aunit))
        self.opts = {"refraction": 0.13, "scale": 1.0, "dimension": "auto"}
        for k, v in (options or {}).items():
            self.lines.append("option %s %s" % (k, v))
            if k in ("refraction", "scale"):
                self.opts[k] = float(v)
            else:
                self.opts[k] = v
        self.truth = {}
        self.inst = {}
        self.start_sd = start_sd
        self.cur = None

    # ---- formatting ---------------------------------------------------------
    def L(self, x_m, nd=4):
        return "%.*f" % (nd, x_m / LEN[self.lunit])

    def ang(self, rad):
        rad %= 2 * PI
        if self.aunit == "deg":
            return "%.6f" % math.degrees(rad)
        if self.aunit == "gon":
            return "%.5f" % (rad * 200.0 / PI)
        tenths = int(round(rad / SEC * 10.0))
        if tenths >= 360 * 36000:
            tenths -= 360 * 36000
        d, rem = divmod(tenths, 36000)
        m, rem = divmod(rem, 600)
        s, t = divmod(rem, 10)
        return "%d.%02d%02d%d" % (d, m, s, t)

    def comment(self, text):
        self.lines.append("# " + text)

    def raw(self, text):
        self.lines.append(text)

    # ---- definitions --------------------------------------------------------
    def instrument(self, iid, text, **sd):
        """sd: direction, zenith (rad), dist_a (m), dist_b (ppm), centring,
        height (m), per_km, per_setup (m) -- the values 'text' states."""
        self.inst[iid] = sd
        self.lines.append("instrument %s %s" % (iid, text))

    def mark(self, mid, e, n, h=None, hold="", sd_en=None, sd_h=None, desc=None,
             give_h=True, give_en=True, sd_text=None):
        """True coordinates in metres.  hold: held components exact; sd_en /
        sd_h (m): weighted, given = truth + N(0, sd); otherwise a start."""
        self.truth[mid] = (e, n, h if h is not None else 0.0)
        words = ["mark", mid]
        ge, gn, gh = e, n, h
        if "en" not in hold:
            s = sd_en if sd_en is not None else self.start_sd
            ge = e + self.rng.normal(0, s)
            gn = n + self.rng.normal(0, s)
        if h is not None and "h" not in hold:
            s = sd_h if sd_h is not None else self.start_sd
            gh = h + self.rng.normal(0, s)
        te, tn, th_ = e, n, (h if h is not None else 0.0)
        if give_en:
            words += ["e", self.L(ge, 3), "n", self.L(gn, 3)]
            if "en" in hold:      # a held value is exactly what is booked
                te = float(self.L(ge, 3)) * LEN[self.lunit]
                tn = float(self.L(gn, 3)) * LEN[self.lunit]
        if h is not None and give_h:
            words += ["h", self.L(gh, 3)]
            if "h" in hold:
                th_ = float(self.L(gh, 3)) * LEN[self.lunit]
        self.truth[mid] = (te, tn, th_)
        if hold:
            words += ["hold", hold]
        if sd_text:
            words += sd_text.split()
        if desc:
            words += ["desc", '"%s"' % desc]
        self.lines.append(" ".join(words))

    def translate(self, de, dn):
        self.truth = {k: (v[0] + de, v[1] + dn, v[2]) for k, v in self.truth.items()}

    # ---- a priori sd (FORMAT.md "Models") at the truth ------------------------
    def sd_dist(self, inst, s):
        i = self.inst[inst]
        return math.sqrt(i.get("dist_a", 0) ** 2 + (i.get("dist_b", 0) * 1e-6 * s) ** 2
                         + 2 * i.get("centring", 0) ** 2)

    def sd_dir(self, inst, d):
        i = self.inst[inst]
        return math.sqrt(i["direction"] ** 2 + 2 * i.get("centring", 0) ** 2 / d ** 2)

    def sd_zen(self, inst, d):
        i = self.inst[inst]
        return math.sqrt(i["zenith"] ** 2 + 2 * i.get("height", 0) ** 2 / d ** 2)

    # ---- observations -------------------------------------------------------
    def setup(self, at, inst=None, ih=0.0, ppm=0.0, name_inst=True):
        eff = inst or [k for k, v in self.inst.items() if "per_km" not in v and "per_setup" not in v][0]
        self.cur = {"at": at, "inst": eff, "ih": ih, "ppm": ppm,
                    "omega": self.rng.uniform(0, 2 * PI)}
        words = ["at", at]
        if inst and name_inst:
            words += ["inst", inst]
        if ih:
            words += ["ih", self.L(ih, 3)]
        if ppm:
            words += ["ppm", "%g" % ppm]
        self.lines.append(" ".join(words))

    def sight(self, to, hz=True, zen=False, slope=False, horiz=False, th=0.0, face=1,
              ppm=0.0, hz_sd=None, zen_sd=None, dist_sd=None, say_face=False,
              mode="3d"):
        """mode '3d': exact 3-D model; 'dim1': zenith chosen so that the
        dimension-1 reduction is exact; 'dim2': zenith chosen so that
        s sin z = d / scale exactly (near-horizontal sights only)."""
        st, rng = self.cur, self.rng
        A, B = self.truth[st["at"]], self.truth[to]
        inst, k, sc = st["inst"], self.opts["refraction"], self.opts["scale"]
        d = pdist(A, B)
        dz = (B[2] + th) - (A[2] + st["ih"])
        ppmf = 1.0 + (st["ppm"] + ppm) * 1e-6
        words = ["to", to]
        if hz:
            v = az(A, B) - st["omega"] + (PI if face == 2 else 0.0)
            s_ = hz_sd[0] if hz_sd else self.sd_dir(inst, d)
            words += ["hz", self.ang(v + rng.normal(0, s_))]
        s_true = math.sqrt((d / sc) ** 2 + (dz - d * d / (2 * R)) ** 2)
        if mode == "3d":
            z_true = math.atan2(d, dz - (1 - k) * d * d / (2 * R))
            zsd = zen_sd[0] if zen_sd else (self.sd_zen(inst, d) if zen else 0.0)
        elif mode == "dim2":
            z_true = math.asin((d / sc) / s_true)
            if dz < 0:
                z_true = PI - z_true
            zsd = zen_sd[0] if zen_sd else self.inst[inst]["zenith"]
        else:  # dim1: solve s cos z + (1-k)(s sin z)^2/2R = dz
            z_true = math.atan2(d, dz)
            for _ in range(50):
                f = s_true * math.cos(z_true) + (1 - k) * (s_true * math.sin(z_true)) ** 2 / (2 * R) - dz
                fp = -s_true * math.sin(z_true) + (1 - k) * s_true ** 2 * math.sin(2 * z_true) / (2 * R)
                z_true -= f / fp
            zsd = zen_sd[0] if zen_sd else self.inst[inst]["zenith"]
            # the 2 sigma_height^2 term of the dimension-1 formula: a target-height slip
            hgt = self.inst[inst].get("height", 0.0)
            dzn = rng.normal(0, math.sqrt(2) * hgt)
            th_booked = th + dzn            # booked th carries the height error
        if zen:
            zb = z_true + rng.normal(0, zsd)
            if face == 2:
                zb = 2 * PI - zb
            words += ["zen", self.ang(zb)]
        if slope:
            s_sd = dist_sd[0] if dist_sd else self.sd_dist(inst, s_true)
            words += ["slope", self.L((s_true + rng.normal(0, s_sd)) / ppmf)]
        if horiz:
            h_true = d / sc
            s_sd = dist_sd[0] if dist_sd else self.sd_dist(inst, h_true)
            words += ["horiz", self.L((h_true + rng.normal(0, s_sd)) / ppmf)]
        if mode == "dim1" and (zen and slope):
            th = th_booked
        if th:
            words += ["th", self.L(th, 3)]
        if say_face:
            words += ["face", str(face)]
        if ppm:
            words += ["ppm", "%g" % ppm]
        for key, val in (("hz-sd", hz_sd), ("zen-sd", zen_sd), ("dist-sd", dist_sd)):
            if val:
                words += [key, val[1]]
        self.lines.append(" ".join(words))

    def angle(self, at, fr, to, inst, sd=None, sd_text=None):
        A, F, T = self.truth[at], self.truth[fr], self.truth[to]
        v = az(A, T) - az(A, F)
        if sd is None:
            i = self.inst[inst]
            d1, d2, d3 = pdist(A, F), pdist(A, T), pdist(F, T)
            c = i.get("centring", 0.0)
            sd = math.sqrt(2 * i["direction"] ** 2 + c * c * (1 / d1 ** 2 + 1 / d2 ** 2)
                           + c * c * d3 ** 2 / (d1 ** 2 * d2 ** 2))
        words = ["angle", at, fr, to, self.ang(v + self.rng.normal(0, sd))]
        if sd_text:
            words += ["sd", sd_text]
        self.lines.append(" ".join(words))

    def azimuth(self, fr, to, sd, sd_text):
        v = az(self.truth[fr], self.truth[to])
        self.lines.append("azimuth %s %s %s sd %s" % (fr, to, self.ang(v + self.rng.normal(0, sd)), sd_text))

    def rise(self, fr, to, inst, km=None, setups=None, name_inst=True, sd=None, sd_text=None):
        dh = self.truth[to][2] - self.truth[fr][2]
        if sd is None:
            i = self.inst[inst]
            sd = i["per_km"] * math.sqrt(km) if km is not None else i["per_setup"] * math.sqrt(setups)
        words = ["rise", fr, to, self.L(dh + self.rng.normal(0, sd), 5)]
        if km is not None:
            words += ["km", "%.3f" % km]
        if setups is not None:
            words += ["setups", "%d" % setups]
        if sd_text:
            words += ["sd", sd_text]
        if name_inst:
            words += ["inst", inst]
        self.lines.append(" ".join(words))

    def write(self, outdir):
        with open(os.path.join(outdir, self.fname), "w", encoding="utf-8") as fh:
            fh.write("\n".join(self.lines) + "\n")


# -----------------------------------------------------------------------------
# The networks
# -----------------------------------------------------------------------------

TS_1S = dict(direction=1 * SEC, zenith=1.5 * SEC, dist_a=0.001, dist_b=1.5, centring=0.0006, height=0.001)
TS_1S_TEXT = "direction 1sec zenith 1.5sec distance 1mm+1.5ppm centring 0.6mm height 1mm"


def net_levelling():
    b = Book("level_km.cfb", ["tests: levelling only; rises with km (per-km level) and setups (per-setup level);",
                              "two held bench marks, loops; Corriebrack dam crest bench marks"], seed=1101)
    b.instrument("LV1", "per-km 0.7mm", per_km=0.0007)
    b.instrument("LV2", 'per-setup "0.25 mm"', per_setup=0.00025)
    b.mark("BM-A", 0, 0, 141.2675, hold="h", give_en=False, desc="bolt in spillway wall")
    b.mark("BM-B", 0, 0, 152.0418, hold="h", give_en=False, desc="bolt on valve tower")
    for mid, h in (("CR1", 147.8812), ("CR2", 148.0237), ("CR3", 147.9551), ("CR4", 148.1104),
                   ("GW1", 139.4471)):
        b.mark(mid, 0, 0, h, give_en=False)
    b.rise("BM-A", "CR1", "LV1", km=0.42)
    b.rise("CR1", "CR2", "LV1", km=0.18)
    b.rise("CR2", "CR3", "LV2", setups=4)
    b.rise("CR3", "CR4", "LV2", setups=3)
    b.rise("CR4", "BM-B", "LV1", km=0.61)
    b.rise("BM-B", "CR2", "LV1", km=0.55)
    b.rise("CR3", "GW1", "LV2", setups=7)
    b.rise("GW1", "BM-A", "LV1", km=0.37)
    b.rise("CR1", "CR3", "LV2", setups=6)
    b.rise("CR4", "CR2", "LV2", setups=5)
    b.rise("GW1", "CR1", "LV1", km=0.49)
    return [b]


def net_trilateration():
    b = Book("trilat_weighted.cfb", ["tests: plane trilateration (horiz distances only), weighted control sd-en;",
                                     "Corriebrack outfall works"], seed=1202)
    b.instrument("EDM1", "distance 2mm+2ppm centring 1mm", dist_a=0.002, dist_b=2.0, centring=0.001)
    ctl = (("OF1", 3120.412, 6210.877), ("OF2", 3985.090, 6455.310), ("OF3", 3870.225, 5602.648),
           ("OF4", 3055.731, 5530.104))
    for mid, e, n in ctl:
        b.mark(mid, e, n, sd_en=0.005, sd_text="sd-en 5mm")
    new = (("T1", 3402.118, 6012.775), ("T2", 3690.430, 6105.062), ("T3", 3585.991, 5760.309))
    for mid, e, n in new:
        b.mark(mid, e, n)
    sights = {"OF1": ("T1", "T2", "OF2", "OF4"), "OF2": ("T2", "T3", "OF3"),
              "OF3": ("T3", "T1", "T2", "OF4"), "OF4": ("T1", "T3"), "T1": ("T2", "T3")}
    for at, tos in sights.items():
        b.setup(at)
        for to in tos:
            b.sight(to, hz=False, horiz=True)
    return [b]


def net_dirs_dists():
    b = Book("dirs_dists.cfb", ["tests: plane directions + horiz distances, several setups, two setups at KN2,",
                                "face-two readings ('face 2'); held en control; Knockrae intake"], seed=1303)
    b.instrument("TS2", "direction 2sec distance 2mm+2ppm centring 1mm",
                 direction=2 * SEC, dist_a=0.002, dist_b=2.0, centring=0.001)
    b.mark("KN1", 1502.331, 8240.906, hold="en", desc="pillar on north abutment")
    b.mark("KN2", 1978.660, 8011.215, hold="en", desc="pillar on south abutment")
    for mid, e, n in (("K10", 1688.412, 8420.551), ("K11", 1905.870, 8390.027),
                      ("K12", 2110.334, 8255.713), ("K13", 1640.027, 7955.481)):
        b.mark(mid, e, n)
    b.setup("KN1")
    for to in ("KN2", "K10", "K11", "K13"):
        b.sight(to, horiz=True)
    for to in ("KN2", "K10", "K11", "K13"):
        b.sight(to, face=2, say_face=True)
    b.setup("KN2")
    for to in ("KN1", "K11", "K12", "K13"):
        b.sight(to, horiz=True)
    b.setup("K11")
    for to in ("K10", "KN1", "KN2", "K12"):
        b.sight(to, horiz=True)
    b.setup("K13")
    for to in ("KN1", "K10", "KN2"):
        b.sight(to, horiz=True)
    b.comment("afternoon: instrument set up again over KN2 (a new direction set)")
    b.setup("KN2")
    for to in ("K10", "K12", "KN1"):
        b.sight(to, horiz=to == "K10")
        b.sight(to, face=2, say_face=True)
    return [b]


def net_angles_azimuths():
    b = Book("angles_azimuths.cfb", ["tests: measured angles (formula sd and own sd), azimuths, horiz distances,",
                                     "and rises (dimension auto = 2 with a height part); Corriebrack spillway"],
             seed=1404)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.instrument("LV1", "per-km 1mm", per_km=0.001)
    b.mark("SP1", 2410.552, 5102.338, 118.402, hold="enh", desc="pillar at spillway gate")
    for mid, e, n, h in (("SP2", 2688.140, 5031.774, 116.911), ("SP3", 2801.412, 5290.063, 121.337),
                         ("SP4", 2553.920, 5380.415, 124.085), ("SP5", 2630.227, 5203.996, 119.760)):
        b.mark(mid, e, n, h)
    b.angle("SP1", "SP2", "SP5", "TS1")
    b.angle("SP1", "SP5", "SP4", "TS1")
    b.angle("SP2", "SP3", "SP1", "TS1")
    b.angle("SP2", "SP5", "SP3", "TS1", sd=2.5 * SEC, sd_text="2.5sec")
    b.angle("SP3", "SP4", "SP2", "TS1")
    b.angle("SP4", "SP1", "SP3", "TS1", sd=3 * SEC, sd_text='"3 sec"')
    b.angle("SP5", "SP1", "SP3", "TS1")
    b.angle("SP5", "SP3", "SP4", "TS1")
    b.azimuth("SP1", "SP2", 3 * SEC, "3sec")
    b.azimuth("SP3", "SP4", 4 * SEC, "4sec")
    b.setup("SP1")
    b.sight("SP2", hz=False, horiz=True)
    b.sight("SP5", hz=False, horiz=True)
    b.setup("SP3")
    b.sight("SP2", hz=False, horiz=True)
    b.sight("SP4", hz=False, horiz=True)
    b.sight("SP5", hz=False, horiz=True)
    b.rise("SP1", "SP2", "LV1", km=0.30, name_inst=False)
    b.rise("SP2", "SP3", "LV1", km=0.29, name_inst=False)
    b.rise("SP3", "SP4", "LV1", km=0.27, name_inst=False)
    b.rise("SP4", "SP1", "LV1", km=0.33, name_inst=False)
    b.rise("SP1", "SP5", "LV1", km=0.24, name_inst=False)
    b.rise("SP5", "SP3", "LV1", km=0.21, name_inst=False)
    return [b]


def net_threed():
    b = Book("threed_zen.cfb", ["tests: 3-D network, zenith angles and slope distances, ih/th, refraction",
                                "option 0.14, face-two zeniths > 180, sight ppm; Corriebrack dam face"],
             seed=1505, options={"refraction": "0.14"})
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
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
        for j, to in enumerate(tos):
            b.sight(to, zen=True, slope=True, th=1.650, ppm=3.0 if j == 0 else 0.0)
        for to in tos[:3]:
            b.sight(to, zen=True, slope=True, th=1.650, face=2)
    return [b]


def net_usft_gon():
    b = Book("units_usft_gon.cfb", ["tests: project units usft and gon; sd in cc, mgon, usft; 3-D sights;",
                                    "Corriebrack access road (grid in US survey feet)"],
             seed=3606, lunit="usft", aunit="gon")
    us = LEN["usft"]
    b.instrument("TS3", "direction 3cc zenith 1mgon distance 0.005usft+2ppm centring 0.002usft height 0.003usft",
                 direction=PI / 2e6 * 3, zenith=PI / 2e5, dist_a=0.005 * us, dist_b=2.0,
                 centring=0.002 * us, height=0.003 * us)
    base_e, base_n = 2150000.0 * us, 410000.0 * us
    pts = (("AR1", 0.0, 0.0, 402.15, "enh"), ("AR2", 1650.2, 420.8, 415.77, "enh"),
           ("AR3", 820.4, 960.1, 447.02, ""), ("AR4", 2210.9, 1390.5, 463.88, ""),
           ("AR5", 1320.6, -610.3, 388.41, ""))
    for mid, e, n, h, hold in pts:
        b.mark(mid, base_e + e * us, base_n + n * us, h * us, hold=hold)
    plan = {"AR1": ("AR2", "AR3", "AR5"), "AR2": ("AR1", "AR4", "AR3", "AR5"),
            "AR3": ("AR4", "AR1", "AR2"), "AR4": ("AR2", "AR3")}
    for at, tos in plan.items():
        b.setup(at, ih=5.1 * us)
        for to in tos:
            b.sight(to, zen=True, slope=True, th=5.4 * us)
        b.sight(tos[0], zen=True, slope=True, th=5.4 * us, face=2)
    return [b]


def net_ft_deg():
    b = Book("units_ft_deg.cfb", ["tests: project units ft (international) and decimal degrees; sd in ft and \";",
                                  "plane directions and distances; Corriebrack pumping station"],
             seed=1707, lunit="ft", aunit="deg")
    ft = LEN["ft"]
    b.instrument("TS4", 'direction 2" distance 0.01ft+2ppm centring 0.003ft',
                 direction=2 * SEC, dist_a=0.01 * ft, dist_b=2.0, centring=0.003 * ft)
    pts = (("PS1", 10000.0, 20000.0, "en"), ("PS2", 11204.6, 20388.1, "en"),
           ("PS3", 10520.8, 20911.4, ""), ("PS4", 11470.2, 21130.7, ""), ("PS5", 10180.3, 21502.9, ""))
    for mid, e, n, hold in pts:
        b.mark(mid, e * ft, n * ft, hold=hold)
    plan = {"PS1": ("PS2", "PS3", "PS5"), "PS2": ("PS4", "PS3", "PS1"), "PS3": ("PS1", "PS2", "PS4", "PS5"),
            "PS4": ("PS5", "PS3", "PS2"), "PS5": ("PS1", "PS3", "PS4")}
    for at, tos in plan.items():
        b.setup(at)
        for to in tos:
            b.sight(to, horiz=True)
    return [b]


def net_weighted():
    b = Book("weighted_control.cfb", ["tests: weighted control only (sd-en and sd-h, no holds), 3-D sights and rises;",
                                      "Corriebrack valve house"], seed=1808)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.instrument("LV1", "per-km 0.7mm", per_km=0.0007)
    for mid, e, n, h in (("VH1", 4102.551, 7020.338, 88.415), ("VH2", 4460.209, 7188.770, 91.062),
                         ("VH3", 4255.870, 6745.118, 86.930)):
        b.mark(mid, e, n, h, sd_en=0.008, sd_h=0.010, sd_text="sd-en 8mm sd-h 1cm")
    for mid, e, n, h in (("V1", 4290.114, 6990.655, 95.208), ("V2", 4380.662, 6890.417, 93.771)):
        b.mark(mid, e, n, h)
    plan = {"VH1": ("VH2", "V1", "V2", "VH3"), "VH2": ("V2", "V1", "VH3"), "VH3": ("V1", "V2", "VH1")}
    for at, tos in plan.items():
        b.setup(at, ih=1.45)
        for to in tos:
            b.sight(to, zen=True, slope=True, th=1.70)
    b.rise("VH1", "V1", "LV1", km=0.21)
    b.rise("V1", "V2", "LV1", km=0.14)
    b.rise("V2", "VH3", "LV1", km=0.19)
    return [b]


def net_free():
    b = Book("free_network.cfb", ["tests: free network, no control at all (minimal constraints); directions,",
                                  "distances and rises; FT5 is reached by one rise only (redundancy 0, unchecked);",
                                  "Corriebrack deformation targets"], seed=1909)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.instrument("LV1", "per-km 0.5mm", per_km=0.0005)
    pts = (("FT1", 5010.224, 9120.507, 60.114), ("FT2", 5180.909, 9285.330, 61.920),
           ("FT3", 5355.472, 9150.118, 63.401), ("FT4", 5220.013, 8990.746, 59.873),
           ("FT5", 5140.660, 9140.215, 62.205))
    for mid, e, n, h in pts:
        b.mark(mid, e, n, h)
    plan = {"FT1": ("FT2", "FT5", "FT4"), "FT2": ("FT3", "FT5", "FT1"), "FT3": ("FT4", "FT5", "FT2"),
            "FT4": ("FT1", "FT5", "FT3"), "FT5": ("FT1", "FT2", "FT3", "FT4")}
    for at, tos in plan.items():
        b.setup(at)
        for to in tos:
            b.sight(to, horiz=True)
    for fr, to, km in (("FT1", "FT2", 0.24), ("FT2", "FT3", 0.23), ("FT3", "FT4", 0.21),
                       ("FT4", "FT1", 0.25), ("FT5", "FT3", 0.22)):
        b.rise(fr, to, "LV1", km=km, name_inst=False)
    return [b]


def net_dim1():
    b = Book("dim1_trigrise.cfb", ["tests: option dimension 1: trigonometric height differences from zen+slope",
                                   "(face one and two), rises; hz readings and a zen+horiz sight are not used;",
                                   "Corriebrack upper reservoir bank"], seed=2010, options={"dimension": "1"})
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.instrument("LV1", "per-km 1mm", per_km=0.001)
    b.mark("UB1", 6010.330, 3020.114, 212.447, hold="h", desc="bench mark on gauge house")
    for mid, e, n, h in (("UB2", 6240.815, 3105.772, 219.803), ("UB3", 6388.104, 2950.260, 226.415),
                         ("UB4", 6150.922, 2810.037, 208.660)):
        b.mark(mid, e, n, h)
    plan = {"UB1": (1.52, ("UB2", "UB3", "UB4")), "UB3": (1.49, ("UB2", "UB4", "UB1")),
            "UB4": (1.55, ("UB2",))}
    for at, (ih, tos) in plan.items():
        b.setup(at, ih=ih)
        for to in tos:
            b.sight(to, zen=True, slope=True, th=1.800, mode="dim1")
        b.sight(tos[0], zen=True, slope=True, th=1.800, face=2, mode="dim1")
    b.setup("UB2", ih=1.50)
    b.sight("UB4", zen=True, horiz=True, th=1.800)
    b.rise("UB1", "UB2", "LV1", km=0.26, name_inst=False)
    b.rise("UB4", "UB1", "LV1", km=0.25, name_inst=False)
    return [b]


def net_dim2():
    b = Book("dim2_reduced.cfb", ["tests: option dimension 2: slope distances reduced with their zenith angles",
                                  "(face one and two), directions; Corriebrack tailrace"], seed=2111,
             options={"dimension": "2"})
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.mark("TR1", 7020.118, 4410.337, 55.210, hold="en", give_h=True, desc="pillar by tailrace")
    b.mark("TR2", 7440.905, 4530.618, 56.004, hold="en")
    for mid, e, n, h in (("R1", 7180.442, 4650.770, 57.305), ("R2", 7350.019, 4288.415, 54.118),
                         ("R3", 7610.733, 4705.260, 58.911)):
        b.mark(mid, e, n, h)
    plan = {"TR1": ("TR2", "R1", "R2"), "TR2": ("R3", "R1", "TR1", "R2"), "R1": ("TR1", "R3", "TR2")}
    for at, tos in plan.items():
        b.setup(at, ih=1.5)
        for to in tos:
            b.sight(to, zen=True, slope=True, th=1.5, mode="dim2")
        b.sight(tos[1], zen=True, slope=True, th=1.5, face=2, mode="dim2")
    return [b]


def net_grid():
    books = []
    for fname, de, dn, tag in (("grid_large.cfb", 500000.0, 5000000.0, "at large grid coordinates (e 500000, n 5000000)"),
                               ("grid_near0.cfb", 0.0, 0.0, "translated near the origin; same observations as grid_large.cfb")):
        b = Book(fname, ["tests: plane directions and distances %s;" % tag,
                         "scale 0.9996 and setup ppm; Corriebrack pipeline route"], seed=2212,
                 options={"scale": "0.9996"})
        b.instrument("TS2", "direction 2sec distance 2mm+2ppm centring 1mm",
                     direction=2 * SEC, dist_a=0.002, dist_b=2.0, centring=0.001)
        pts = (("PL1", 812.440, 1104.552, "en"), ("PL2", 1904.117, 1430.906, "en"),
               ("PL3", 1220.760, 1620.334, ""), ("PL4", 1650.228, 925.701, ""), ("PL5", 2405.390, 1101.874, ""))
        # identical random stream for both files: marks consume the same draws
        for mid, e, n, hold in pts:
            b.mark(mid, e + de, n + dn, hold=hold)
        plan = {"PL1": ("PL2", "PL3", "PL4"), "PL2": ("PL5", "PL4", "PL3", "PL1"),
                "PL3": ("PL1", "PL2", "PL4"), "PL4": ("PL1", "PL3", "PL2", "PL5"), "PL5": ("PL2", "PL4")}
        for at, tos in plan.items():
            b.setup(at, ppm=4.0)
            for to in tos:
                b.sight(to, horiz=True)
        books.append(b)
    return books


def net_explicit_sd():
    b = Book("explicit_sd.cfb", ["tests: explicit sd on some sights (hz-sd, zen-sd, dist-sd replace the formula);",
                                 "3-D; Corriebrack quarry haul road"], seed=2313)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.mark("QH1", 8010.552, 2105.337, 301.224, hold="enh")
    b.mark("QH2", 8470.118, 2290.605, 318.760, hold="enh")
    for mid, e, n, h in (("Q1", 8205.904, 2420.118, 326.415), ("Q2", 8390.661, 1930.447, 297.083),
                         ("Q3", 8655.223, 2510.901, 333.905)):
        b.mark(mid, e, n, h)
    b.setup("QH1", ih=1.55)
    b.sight("QH2", zen=True, slope=True, th=1.6)
    b.sight("Q1", zen=True, slope=True, th=1.6, hz_sd=(4 * SEC, "4sec"), dist_sd=(0.005, "5mm"))
    b.sight("Q2", zen=True, slope=True, th=1.6)
    b.setup("QH2", ih=1.58)
    b.sight("Q3", zen=True, slope=True, th=1.6, zen_sd=(5 * SEC, '"5 sec"'))
    b.sight("Q1", zen=True, slope=True, th=1.6)
    b.sight("Q2", zen=True, slope=True, th=1.6, dist_sd=(0.004, "4mm"))
    b.sight("QH1", zen=True, slope=True, th=1.6)
    b.setup("Q1", ih=1.50)
    b.sight("Q3", zen=True, slope=True, th=1.6, hz_sd=(3 * SEC, "3sec"), zen_sd=(3 * SEC, "3sec"),
            dist_sd=(0.003, "0.3cm"))
    b.sight("QH1", zen=True, slope=True, th=1.6)
    b.sight("Q2", zen=True, slope=True, th=1.6)
    return [b]


def net_resection():
    b = Book("resection.cfb", ["tests: plane resection (free station): one setup on a new mark whose position the",
                               "surveyor did not know, directions only to four held pillars (dof 1); the start",
                               "given for VC is only approximate; Corriebrack visitor centre roof station"],
             seed=2414)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    for mid, e, n, desc in (("AH1", 6185.412, 8410.337, "pillar on Ashlune Hill"),
                            ("AH2", 6705.108, 7925.620, "pillar at east spillway"),
                            ("AH3", 6050.774, 7290.118, "pillar by fish ladder"),
                            ("AH4", 5480.296, 7702.861, "pillar on west dyke")):
        b.mark(mid, e, n, hold="en", desc=desc)
    b.mark("VC", 6121.530, 7838.905, desc="roof bolt, visitor centre")
    b.setup("VC")
    for to in ("AH1", "AH2", "AH3", "AH4"):
        b.sight(to)
    return [b]


def net_intersection():
    b = Book("intersection.cfb", ["tests: plane intersection: three setups on held pillars, each orienting on",
                                  "another held pillar, directions only (no distances) to two new marks that are",
                                  "never occupied; Corriebrack intake tower finials"], seed=2515)
    b.instrument("TS2", "direction 2sec distance 2mm+2ppm centring 1mm",
                 direction=2 * SEC, dist_a=0.002, dist_b=2.0, centring=0.001)
    for mid, e, n, desc in (("IT1", 3402.615, 9101.448, "pillar on north shore"),
                            ("IT2", 3951.207, 9183.072, "pillar at boat slip"),
                            ("IT3", 3648.930, 8702.556, "pillar on dam crest")):
        b.mark(mid, e, n, hold="en", desc=desc)
    for mid, e, n, desc in (("FIN-W", 3618.774, 9597.310, "west finial, intake tower"),
                            ("FIN-E", 3822.105, 9521.649, "east finial, intake tower")):
        b.mark(mid, e, n, desc=desc)
    b.setup("IT1")
    for to in ("IT2", "FIN-W", "FIN-E"):
        b.sight(to)
    b.setup("IT2")
    for to in ("IT3", "FIN-E", "FIN-W", "IT1"):
        b.sight(to)
    b.setup("IT3")
    for to in ("IT1", "FIN-W", "FIN-E"):
        b.sight(to)
    return [b]


def net_free_traverse():
    b = Book("free_traverse.cfb", ["tests: open traverse with no control at all (free network, minimal constraints):",
                                   "six setups in a chain, backsight and foresight directions, horiz distances",
                                   "both ways, cross sights for redundancy; Corriebrack north shore path"],
             seed=2616)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    pts = (("NS1", 7600.418, 8200.227), ("NS2", 7785.360, 8311.905), ("NS3", 7990.214, 8290.633),
           ("NS4", 8150.702, 8420.318), ("NS5", 8355.147, 8468.771), ("NS6", 8520.583, 8390.152))
    for mid, e, n in pts:
        b.mark(mid, e, n)
    plan = (("NS1", ("NS2", "NS3")), ("NS2", ("NS1", "NS3", "NS4")), ("NS3", ("NS2", "NS4", "NS5")),
            ("NS4", ("NS3", "NS5")), ("NS5", ("NS4", "NS6", "NS3")), ("NS6", ("NS5", "NS4")))
    for at, tos in plan:
        b.setup(at)
        for to in tos:
            b.sight(to, horiz=True)
    return [b]


def net_loop_traverse():
    b = Book("loop_traverse.cfb", ["tests: closed loop traverse, 3-D: starts and ends on held pillar LT1, oriented on",
                                   "held reference mark LT0; five new stations; directions, slope distances and",
                                   "zenith angles both ways with ih/th; two rises; the one direction to LT0 alone fixes",
                                   "the loop's rotation (redundancy 0, unchecked); Corriebrack east rim road"],
             seed=2717)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    b.instrument("LV1", "per-km 0.7mm", per_km=0.0007)
    b.mark("LT0", 9205.336, 3612.874, 251.482, hold="enh", desc="reference pillar on Carn Dubh")
    b.mark("LT1", 9500.118, 3300.745, 231.206, hold="enh", desc="pillar at rim road gate")
    for mid, e, n, h in (("L1", 9731.402, 3405.918, 238.447), ("L2", 9905.266, 3260.381, 252.913),
                         ("L3", 9850.790, 3010.102, 247.305), ("L4", 9620.935, 2905.664, 226.781),
                         ("L5", 9430.207, 3080.329, 222.530)):
        b.mark(mid, e, n, h)
    plan = (("LT1", 1.562, ("LT0", "L1", "L5")), ("L1", 1.498, ("LT1", "L2")), ("L2", 1.541, ("L1", "L3")),
            ("L3", 1.605, ("L2", "L4")), ("L4", 1.517, ("L3", "L5")), ("L5", 1.533, ("L4", "LT1")))
    for at, ih, tos in plan:
        b.setup(at, ih=ih)
        for to in tos:
            b.sight(to, zen=True, slope=True, th=1.600 if to != "LT0" else 0.250)
    b.rise("LT1", "L1", "LV1", km=0.26, name_inst=False)
    b.rise("L3", "L4", "LV1", km=0.27, name_inst=False)
    return [b]


def net_polar_3d():
    b = Book("polar_3d.cfb", ["tests: 3-D radiations (polar points): setup on held PR1 oriented on two held pillars,",
                              "zenith + slope to four new marks, each also observed from held PR2; face-two",
                              "readings on some; Corriebrack overflow channel monitoring studs"], seed=2818)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    for mid, e, n, h, desc in (("PR1", 4700.224, 1500.516, 180.253, "pillar above overflow channel"),
                               ("PR2", 5060.431, 1622.708, 176.902, "pillar at channel outlet"),
                               ("PR3", 4540.877, 1890.340, 190.441, "pillar on Tom Beag")):
        b.mark(mid, e, n, h, hold="enh", desc=desc)
    for mid, e, n, h in (("ST1", 4810.315, 1655.207, 184.716), ("ST2", 4905.662, 1480.334, 178.108),
                         ("ST3", 4760.918, 1320.815, 172.627), ("ST4", 4600.270, 1610.493, 186.935)):
        b.mark(mid, e, n, h)
    b.setup("PR1", ih=1.547)
    b.sight("PR2")
    b.sight("PR3")
    for to in ("ST1", "ST2", "ST3", "ST4"):
        b.sight(to, zen=True, slope=True, th=0.100)
    for to in ("ST1", "ST3"):
        b.sight(to, zen=True, slope=True, th=0.100, face=2)
    b.setup("PR2", ih=1.583)
    b.sight("PR1")
    b.sight("PR3")
    for to in ("ST2", "ST1", "ST4", "ST3"):
        b.sight(to, zen=True, slope=True, th=0.100)
    b.sight("ST2", zen=True, slope=True, th=0.100, face=2)
    return [b]


def net_corner_control():
    b = Book("corner_control.cfb", ["tests: plane network between four held GNSS pillars at the corners of the site,",
                                    "none of which sees another, and no new mark sees two of them: with its starts",
                                    "removed (test-starts.sh) it is computed in a local frame and fitted to the",
                                    "pillars; directions and horiz distances; Corriebrack spillway works"],
             seed=2919)
    b.instrument("TS1", TS_1S_TEXT, **TS_1S)
    for mid, e, n, desc in (("SW-NW", 2004.318, 5012.775, "GNSS pillar, north-west corner"),
                            ("SW-NE", 2911.640, 5047.209, "GNSS pillar, north-east corner"),
                            ("SW-SE", 2948.102, 4296.531, "GNSS pillar, south-east corner"),
                            ("SW-SW", 1979.455, 4248.060, "GNSS pillar, south-west corner")):
        b.mark(mid, e, n, hold="en", desc=desc)
    for mid, e, n in (("S1", 2231.907, 4868.402), ("S2", 2702.316, 4903.655), ("S3", 2731.580, 4471.230),
                      ("S4", 2218.774, 4420.918), ("S5", 2468.235, 4655.109), ("S6", 2452.660, 4970.844),
                      ("S7", 2495.013, 4350.287)):
        b.mark(mid, e, n)
    plan = (("SW-NW", ("S1", "S6")), ("SW-NE", ("S2",)), ("SW-SE", ("S3", "S7")), ("SW-SW", ("S4",)),
            ("S1", ("SW-NW", "S6", "S5", "S4")), ("S6", ("S1", "SW-NW", "S2", "S5")),
            ("S2", ("S6", "SW-NE", "S3", "S5")), ("S3", ("S2", "SW-SE", "S7", "S5")),
            ("S7", ("S3", "SW-SE", "S4", "S5")), ("S4", ("S7", "SW-SW", "S1", "S5")),
            ("S5", ("S1", "S6", "S2", "S3", "S7", "S4")))
    for at, tos in plan:
        b.setup(at)
        for to in tos:
            b.sight(to, horiz=True)
    return [b]


def net_corner_trilat():
    """Distances only between three held pillars that see no other pillar,
    each measured to three new marks, no new mark measured to two of them,
    the new marks braced among themselves: from computed starts the local
    frame is settled by one free choice (which side of the first line), so
    it is the real frame or its mirror image as a whole; the second book is the first mirrored
    east-west, so that one of the two takes the mirror-image fit."""
    books = []
    for fname, sgn, seed in (("corner_trilat.cfb", 1.0, 3121), ("corner_trilat_mirror.cfb", -1.0, 3122)):
        b = Book(fname, ["tests: plane trilateration (horiz distances only) tied to three held pillars,",
                         "each measured to three new marks, no new mark to two pillars, the new marks braced;",
                         "from computed starts (test-starts.sh) a local frame fitted to the pillars, as",
                         "its mirror image where the first free choice fell the other way%s;" % (
                             " (this book is its twin mirrored east-west)" if sgn < 0 else ""),
                         "Corriebrack fish-pass settlement studs"], seed=seed)
        b.instrument("EDM1", "distance 2mm+2ppm centring 1mm", dist_a=0.002, dist_b=2.0, centring=0.001)
        c0 = 5400.0
        for mid, e, n, desc in (("FP-A", 5102.664, 2210.308, "pillar above the fish pass"),
                                ("FP-B", 5630.117, 2295.841, "pillar at the pass outlet"),
                                ("FP-C", 5388.902, 1802.575, "pillar on the lower weir")):
            b.mark(mid, c0 + sgn * (e - c0), n, hold="en", desc=desc)
        new = (("F1", 5251.310, 2170.442), ("F2", 5244.087, 2035.915), ("F3", 5478.551, 2219.630),
               ("F4", 5530.902, 2112.764), ("F5", 5352.208, 1950.117), ("F6", 5455.376, 1975.480),
               ("F7", 5180.514, 2120.233), ("F8", 5570.318, 2205.872), ("F9", 5410.725, 1880.406))
        for mid, e, n in new:
            b.mark(mid, c0 + sgn * (e - c0), n)
        fs = ["F%d" % i for i in range(1, 10)]
        plan = [("FP-A", ("F1", "F2", "F7")), ("FP-B", ("F3", "F4", "F8")), ("FP-C", ("F5", "F6", "F9"))]
        plan += [(fs[i], tuple(fs[i + 1:])) for i in range(len(fs) - 1)]
        for at, tos in plan:
            b.setup(at)
            for to in tos:
                b.sight(to, hz=False, horiz=True)
        books.append(b)
    return books


ALL = (net_levelling, net_trilateration, net_dirs_dists, net_angles_azimuths, net_threed,
       net_usft_gon, net_ft_deg, net_weighted, net_free, net_dim1, net_dim2, net_grid, net_explicit_sd,
       net_resection, net_intersection, net_free_traverse, net_loop_traverse, net_polar_3d,
       net_corner_control, net_corner_trilat)


def main(argv):
    here = os.path.dirname(os.path.abspath(__file__))
    outdir = argv[1] if len(argv) > 1 else os.path.join(here, "..", "integration", "networks")
    os.makedirs(outdir, exist_ok=True)
    for fn in ALL:
        for b in fn():
            b.write(outdir)
            print("wrote", os.path.join(outdir, b.fname))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
