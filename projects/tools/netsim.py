"""netsim: observation models and booking helpers for cairn's demo data.

Shared by make_demo.py and make_examples.py (generators) and check_inputs.py
(a rough independent check of the files they write).  The models are those
of FORMAT.md "Models" and the modelling decisions of DEVELOPERS.md; this is
NOT the reference solver (tests/reference/ is), only a data-making aid.

All internal values are SI: metres and radians.
"""

import math

R_EARTH = 6371000.0
RHO = 180.0 / math.pi * 3600.0        # arc-seconds per radian
TWO_PI = 2.0 * math.pi

LENGTH_UNITS = {"m": 1.0, "ft": 0.3048, "usft": 1200.0 / 3937.0}
SD_LENGTH = {"mm": 0.001, "cm": 0.01, "m": 1.0, "ft": 0.3048,
             "usft": 1200.0 / 3937.0}
SD_ANGLE = {"sec": 1.0 / RHO, '"': 1.0 / RHO,
            "mgon": math.pi / 200.0 / 1000.0, "cc": math.pi / 200.0 / 1e4}


# --------------------------------------------------------------------------
# geometry
# --------------------------------------------------------------------------

def azimuth(a, b):
    """Grid azimuth a->b in [0, 2pi); a, b are (e, n, h) in metres."""
    t = math.atan2(b[0] - a[0], b[1] - a[1])
    return t % TWO_PI


def plane_dist(a, b):
    return math.hypot(b[0] - a[0], b[1] - a[1])


def wrap(x):
    """Wrap an angle into (-pi, pi]."""
    x = math.fmod(x, TWO_PI)
    if x <= -math.pi:
        x += TWO_PI
    elif x > math.pi:
        x -= TWO_PI
    return x


def slope_model(a, b, ih, th, scale=1.0):
    d = plane_dist(a, b)
    dz = (b[2] + th) - (a[2] + ih)
    return math.sqrt((d / scale) ** 2 + (dz - d * d / (2 * R_EARTH)) ** 2)


def zenith_model(a, b, ih, th, k):
    """Face-one zenith angle (radians)."""
    d = plane_dist(a, b)
    dz = (b[2] + th) - (a[2] + ih)
    return math.atan2(d, dz - (1.0 - k) * d * d / (2 * R_EARTH))


def horiz_model(a, b, scale=1.0):
    return plane_dist(a, b) / scale


# --------------------------------------------------------------------------
# a priori standard deviations (FORMAT.md)
# --------------------------------------------------------------------------

def sd_distance(inst, s):
    a, b, c = inst["dist_a"], inst["dist_b"], inst["centring"]
    return math.sqrt(a * a + (b * 1e-6 * s) ** 2 + 2 * c * c)


def sd_direction(inst, d):
    return math.sqrt(inst["direction"] ** 2 + 2 * inst["centring"] ** 2 / d ** 2)


def sd_zenith(inst, d):
    return math.sqrt(inst["zenith"] ** 2 + 2 * inst["height"] ** 2 / d ** 2)


def sd_angle(inst, d1, d2, d3):
    c = inst["centring"]
    return math.sqrt(2 * inst["direction"] ** 2 + c * c * (1 / d1 ** 2 + 1 / d2 ** 2)
                     + c * c * d3 * d3 / (d1 * d1 * d2 * d2))


def sd_rise(inst, km=None, setups=None):
    if km is not None:
        return inst["per_km"] * math.sqrt(km)
    return inst["per_setup"] * math.sqrt(setups)


def sd_trig_rise(inst, s, z, sd_s=None, sd_z=None):
    if sd_s is None:
        sd_s = sd_distance(inst, s)
    if sd_z is None:
        sd_z = inst["zenith"]
    return math.sqrt((math.cos(z) * sd_s) ** 2 + (s * math.sin(z) * sd_z) ** 2
                     + 2 * inst["height"] ** 2)


# --------------------------------------------------------------------------
# booking (formatting) helpers
# --------------------------------------------------------------------------

def fmt_dms(rad, hyphen=False):
    """Format an angle in packed DDD.MMSSs to 0.1 arc-second.

    Integer arithmetic on tenths of a second, so 60 s or 60 min never
    appear.  With hyphen=True: D-MM-SS.s."""
    tenths = int(round(math.degrees(rad % TWO_PI) * 36000.0))
    tenths %= 360 * 36000
    d, rem = divmod(tenths, 36000)
    m, s10 = divmod(rem, 600)
    if hyphen:
        return "%d-%02d-%04.1f" % (d, m, s10 / 10.0)
    return "%d.%02d%03d" % (d, m, s10)


def fmt_angle(rad, unit, hyphen=False):
    if unit == "dms":
        return fmt_dms(rad, hyphen)
    if unit == "deg":
        return "%.6f" % (math.degrees(rad % TWO_PI))
    if unit == "gon":
        return "%.5f" % ((rad % TWO_PI) * 200.0 / math.pi)
    raise ValueError(unit)


def fmt_len(x_m, unit, dec=4):
    return "%.*f" % (dec, x_m / LENGTH_UNITS[unit])


def round_angle(rad, unit):
    """The value a booking in `unit` represents (to check rounding)."""
    return parse_angle(fmt_angle(rad, unit), unit)


# --------------------------------------------------------------------------
# parsing (shared with check_inputs.py)
# --------------------------------------------------------------------------

def parse_angle(text, unit):
    """Parse a booked angle in the project unit to radians; raise ValueError."""
    if unit == "dms":
        if "-" in text[1:]:
            parts = text.split("-")
            if len(parts) != 3:
                raise ValueError("bad D-M-S angle %r" % text)
            d, m, s = int(parts[0]), int(parts[1]), float(parts[2])
        else:
            if text.startswith("-") or text.startswith("+"):
                raise ValueError("signed dms angle %r" % text)
            if "." in text:
                ip, fp = text.split(".")
            else:
                ip, fp = text, ""
            fp = fp.ljust(4, "0")
            d = int(ip)
            m = int(fp[0:2])
            s = float(fp[2:4] + "." + (fp[4:] or "0"))
        if m >= 60 or s >= 60:
            raise ValueError("minutes or seconds >= 60 in %r" % text)
        return math.radians(d + m / 60.0 + s / 3600.0)
    if unit == "deg":
        return math.radians(float(text))
    if unit == "gon":
        return float(text) * math.pi / 200.0
    raise ValueError("unknown angle unit %r" % unit)
