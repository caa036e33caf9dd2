/* The stochastic model: a priori standard deviation of each adjustment
 * observation (FORMAT.md "Models", DEVELOPERS.md "Distances inside the
 * stochastic model" and "Sight standard deviations").
 *
 * Sources:
 *   [GW-EP] Ghilani & Wolf, "Adjustment Computations", 4th ed., Wiley 2006,
 *           the chapter on error propagation in angle and distance
 *           observations (from memory, ch. 6): the EDM constant + ppm
 *           error, centring of instrument and target over the sight length,
 *           the angle from two pointings with the three-distance centring
 *           term, and the propagation of σ_s, σ_z into a height difference;
 *   [GW-LV] the same book's treatment of levelling weights (from memory,
 *           ch. 8 and 12): variance proportional to the length of run or
 *           to the number of setups. FORMAT.md fixes the exact forms used
 * here; where the book's variant differs (e.g. separate instrument and
 * target centring) FORMAT.md wins.
 *
 * All distances d inside the direction, angle and zenith formulas are plane
 * distances at the CURRENT state, so that σ follows the network as it is
 * adjusted; the distance formulas use the booked length s (after ppm),
 * which the state does not change.
 */
#include <math.h>

#include "cairn/model.h"
#include "geom.h"

/* The instrument of observation o: its own (angle, rise, or the setup's as
 * copied by the input stage), else the setup's, else the only instrument of
 * the needed kind (FORMAT.md "Instrument defaults"). NULL when none fits;
 * the input stage reports that case with a location. */
static const cairn_instrument *instrument_of(const cairn_net *net,
                                             const cairn_obs *o,
                                             cairn_inst_kind kind)
{
    int i = o->inst;
    if (i < 0 && o->setup >= 0 && (size_t)o->setup < net->nsetups)
        i = net->setups[o->setup].inst;
    if (i >= 0 && (size_t)i < net->ninsts)
        return &net->insts[i];
    const cairn_instrument *only = NULL;
    for (size_t j = 0; j < net->ninsts; j++) {
        if (net->insts[j].kind != kind)
            continue;
        if (only)
            return NULL; /* more than one: ambiguous */
        only = &net->insts[j];
    }
    return only;
}

static double inst_centring(const cairn_instrument *in)
{
    return (in && (in->set & CAIRN_INST_CENTRING)) ? in->centring : 0.0;
}

static double inst_height(const cairn_instrument *in)
{
    return (in && (in->set & CAIRN_INST_HEIGHT)) ? in->height : 0.0;
}

/* Distance σ for booked length s (metres, after ppm):
 *   σ² = a² + (b·1e-6·s)² + 2c²
 * the EDM's constant and proportional parts plus centring of instrument
 * and reflector, both with the instrument's `centring` c. [GW-EP] An explicit
 * dist-sd replaces all of it; when it carries a ppm term, that term is
 * proportional to s just as the instrument's is. Returns -1 when neither
 * applies. */
static double distance_sigma(const cairn_net *net, const cairn_obs *o, double s)
{
    if (o->sd.has & (CAIRN_SD_LENGTH | CAIRN_SD_PPM)) {
        double a = (o->sd.has & CAIRN_SD_LENGTH) ? o->sd.length : 0.0;
        double b = (o->sd.has & CAIRN_SD_PPM) ? o->sd.ppm * 1e-6 * s : 0.0;
        return sqrt(a * a + b * b);
    }
    const cairn_instrument *in = instrument_of(net, o, CAIRN_INST_TOTAL_STATION);
    if (!in || !(in->set & CAIRN_INST_DISTANCE))
        return -1.0;
    double c = inst_centring(in);
    double b = in->dist_b * 1e-6 * s;
    return sqrt(in->dist_a * in->dist_a + b * b + 2.0 * c * c);
}

/* One pointing or reading σ_r plus a pair of equal error sources e (the
 * centring, or the measured heights, of instrument and target), each
 * displacing the line by e over the plane length d: σ² = σ_r² + 2e²/d². */
static double reading_sigma(const cairn_problem *p, const cairn_obs *o, const cairn_state *x,
                            unsigned need, int zenith)
{
    if (o->sd.has & CAIRN_SD_ANGLE)
        return o->sd.angle;
    const cairn_instrument *in = instrument_of(p->net, o, CAIRN_INST_TOTAL_STATION);
    if (!in || !(in->set & need))
        return -1.0;
    double r = zenith ? in->zenith : in->direction;
    double e = zenith ? inst_height(in) : inst_centring(in);
    double v = r * r;
    if (e > 0.0) {
        cairn_plane_geom g;
        cairn_geom_plane(x, o->at, o->to, &g);
        if (g.d2 == 0.0)
            return -1.0;
        v += 2.0 * e * e / g.d2;
    }
    return sqrt(v);
}

/* Direction σ² = σ_dir² + 2c²/d²: one pointing plus centring of instrument
 * and target, each displacing the line sideways by c over the length d.
 * [GW-EP] */
static double direction_sigma(const cairn_problem *p, const cairn_obs *o,
                              const cairn_state *x)
{
    return reading_sigma(p, o, x, CAIRN_INST_DIRECTION, 0);
}

/* Angle σ² = 2σ_dir² + c²(1/d₁² + 1/d₂²) + c²·d₃²/(d₁²d₂²): two pointings,
 * the two target centrings over their legs d₁ = |AF|, d₂ = |AT|, and the
 * instrument centring, whose effect grows with the distance d₃ = |FT|
 * between the targets. [GW-EP] */
static double angle_sigma(const cairn_problem *p, const cairn_obs *o,
                          const cairn_state *x)
{
    if (o->sd.has & CAIRN_SD_ANGLE)
        return o->sd.angle;
    const cairn_instrument *in = instrument_of(p->net, o, CAIRN_INST_TOTAL_STATION);
    if (!in || !(in->set & CAIRN_INST_DIRECTION))
        return -1.0;
    double c = inst_centring(in);
    double v = 2.0 * in->direction * in->direction;
    if (c > 0.0) {
        cairn_plane_geom g1, g2, g3;
        cairn_geom_plane(x, o->at, o->from, &g1);
        cairn_geom_plane(x, o->at, o->to, &g2);
        cairn_geom_plane(x, o->from, o->to, &g3);
        if (g1.d2 == 0.0 || g2.d2 == 0.0)
            return -1.0;
        double c2 = c * c;
        v += c2 * (1.0 / g1.d2 + 1.0 / g2.d2) + c2 * g3.d2 / (g1.d2 * g2.d2);
    }
    return sqrt(v);
}

/* Zenith σ² = σ_zen² + 2σ_height²/d²: one reading plus the measured
 * instrument and target heights, each tilting the line by σ_height/d.
 * [GW-EP], by analogy with the centring term of a direction. */
static double zenith_sigma(const cairn_problem *p, const cairn_obs *o,
                           const cairn_state *x)
{
    return reading_sigma(p, o, x, CAIRN_INST_ZENITH, 1);
}

/* Dimension-1 height difference from a sight, Δh = s·cos z + ... :
 * first-order propagation of σ_s and σ_z through s·cos z (the curvature
 * term's contribution is negligible and FORMAT.md leaves it out), plus
 * the two measured heights:
 *   σ² = (cos z·σ_s)² + (s·sin z·σ_z)² + 2σ_height².   [GW-EP]
 * problem.c stores the slope's dist-sd (length/ppm bits) and the zenith's
 * zen-sd (angle bit) together in the trig-rise's sd, each replacing only
 * its own term (DEVELOPERS.md "Sight standard deviations"). */
static double trig_rise_sigma(const cairn_problem *p, const cairn_obs *o)
{
    double s = o->aux_s, z = o->aux_z;
    double ss = distance_sigma(p->net, o, s);
    if (ss < 0.0)
        return -1.0;
    const cairn_instrument *in = instrument_of(p->net, o, CAIRN_INST_TOTAL_STATION);
    double sz;
    if (o->sd.has & CAIRN_SD_ANGLE)
        sz = o->sd.angle;
    else if (in && (in->set & CAIRN_INST_ZENITH))
        sz = in->zenith;
    else
        return -1.0;
    double hs = inst_height(in);
    double a = cos(z) * ss, b = s * sin(z) * sz;
    return sqrt(a * a + b * b + 2.0 * hs * hs);
}

/* Levelling: σ = per-km·√km, or per-setup·√setups (the variance of a run
 * grows with its length or its number of setups). [GW-LV] */
static double rise_sigma(const cairn_problem *p, const cairn_obs *o)
{
    if (o->sd.has & CAIRN_SD_LENGTH)
        return o->sd.length;
    const cairn_instrument *in = instrument_of(p->net, o, CAIRN_INST_LEVEL);
    if (!in)
        return -1.0;
    if (o->km > 0.0 && (in->set & CAIRN_INST_PER_KM))
        return in->per_km * sqrt(o->km);
    if (o->setups > 0 && (in->set & CAIRN_INST_PER_SETUP))
        return in->per_setup * sqrt((double)o->setups);
    return -1.0;
}

double cairn_obs_sigma(const cairn_problem *p, const cairn_obs *o,
                       const cairn_state *x)
{
    double s = -1.0;
    switch (o->kind) {
    case CAIRN_OBS_DIRECTION:
        s = direction_sigma(p, o, x);
        break;
    case CAIRN_OBS_ANGLE:
        s = angle_sigma(p, o, x);
        break;
    case CAIRN_OBS_AZIMUTH:
        /* DEVELOPERS.md: an azimuth needs its own sd (no instrument). */
        s = (o->sd.has & CAIRN_SD_ANGLE) ? o->sd.angle : -1.0;
        break;
    case CAIRN_OBS_HORIZ:
    case CAIRN_OBS_SLOPE:
        /* A horiz reduced from a slope (dimension 2) keeps the booked slope
         * length in aux_s; a booked distance is its own value after ppm. */
        s = distance_sigma(p->net, o, o->aux_s > 0.0 ? o->aux_s : o->value);
        break;
    case CAIRN_OBS_ZENITH:
        s = zenith_sigma(p, o, x);
        break;
    case CAIRN_OBS_RISE:
        s = rise_sigma(p, o);
        break;
    case CAIRN_OBS_TRIG_RISE:
        s = trig_rise_sigma(p, o);
        break;
    case CAIRN_OBS_CONTROL_E:
    case CAIRN_OBS_CONTROL_N:
    case CAIRN_OBS_CONTROL_H:
        s = (o->sd.has & CAIRN_SD_LENGTH) ? o->sd.length : -1.0;
        break;
    case CAIRN_OBS_NKINDS:
        break;
    }
    return (s > 0.0 && isfinite(s)) ? s : -1.0;
}
