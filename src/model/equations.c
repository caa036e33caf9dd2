/* Observation equations: the computed value of each adjustment observation
 * at the current parameters and its partial derivatives (one row of the
 * design matrix), exactly as FORMAT.md "Models" fixes them.
 *
 * Sources for the linearised forms (the derivatives of atan2 and of a
 * Euclidean length are elementary; the books give the same rows):
 *   [GW-AC] Ghilani & Wolf, "Adjustment Computations", 4th ed., Wiley 2006:
 *           the chapters on adjusting horizontal surveys (trilateration:
 *           distance observation equation; triangulation: angle and azimuth
 *           observation equations; the direction equation with an
 *           orientation unknown per set) and the chapter on
 *           three-dimensional networks (slope distance and zenith angle).
 *           Chapter numbers from memory: 14, 15, 16 and 23.
 *   [GW-ES] Ghilani & Wolf, "Elementary Surveying", 13th ed., Pearson: the
 *           levelling chapter, curvature and refraction h = (1 - k) D^2 / 2R
 *           (from memory, ch. 4), with R and k as in FORMAT.md.
 */
#include <math.h>
#include <string.h>

#include "cairn/model.h"
#include "geom.h"

#define TWO_PI (2.0 * CAIRN_PI)

int cairn_obs_kind_angular(cairn_obs_kind k)
{
    return k == CAIRN_OBS_DIRECTION || k == CAIRN_OBS_ANGLE ||
           k == CAIRN_OBS_AZIMUTH || k == CAIRN_OBS_ZENITH;
}

double cairn_obs_residual(const cairn_obs *o, double computed)
{
    double v = computed - o->value;
    /* Both values lie in [0, 2π): a reading of 359°59'59" against a computed
     * 0°00'01" must give +2", not −360° + 2" (DEVELOPERS.md "Residual"). */
    return cairn_obs_kind_angular(o->kind) ? cairn_wrap_pi(v) : v;
}

/* Grid azimuth t = atan2(Δe, Δn) from a to b and its partials, written into
 * the slots of a (ea, na) and b (eb, nb) scaled by `sign` (−1 for the
 * backsight leg of an angle). [GW-AC] azimuth observation equation:
 *   ∂t/∂e_b =  Δn/d²   ∂t/∂n_b = −Δe/d²   and the negatives for a. */
static double azimuth_row(const cairn_plane_geom *g, double sign, int ea,
                          int na, int eb, int nb, cairn_lin *l)
{
    l->d[eb] += sign * g->dn / g->d2;
    l->d[nb] += sign * -g->de / g->d2;
    l->d[ea] += sign * -g->dn / g->d2;
    l->d[na] += sign * g->de / g->d2;
    return atan2(g->de, g->dn);
}

/* ∂(plane distance)/∂coordinates scaled by f: [GW-AC] distance observation
 * equation, ∂d/∂e_b = Δe/d, ∂d/∂n_b = Δn/d, negatives for a. A vertical
 * sight (d = 0) has no horizontal gradient direction; callers that can
 * still compute a value (the slope distance) pass through here with the
 * plane partials left at 0. */
static void distance_row(const cairn_plane_geom *g, double f, int ea, int na,
                         int eb, int nb, cairn_lin *l)
{
    if (g->d == 0.0)
        return;
    l->d[eb] += f * g->de / g->d;
    l->d[nb] += f * g->dn / g->d;
    l->d[ea] -= f * g->de / g->d;
    l->d[na] -= f * g->dn / g->d;
}

static int valid_mark(const cairn_problem *p, int m)
{
    return m >= 0 && (size_t)m < p->net->nmarks;
}

/* Slope distance (FORMAT.md, dimension 3):
 *   S = sqrt((d/scale)² + u²),  u = Δz − d²/2R,
 *   Δz = (h_to + th) − (h_at + ih).
 * The d²/2R term brings the chord onto the plane of the grid (Earth
 * curvature only: refraction bends the line of sight, not the measured
 * distance). Partials: ∂S/∂d = (d/scale² − u·d/R)/S, ∂S/∂Δz = u/S.
 * [GW-AC] three-dimensional networks; [GW-ES] curvature. */
static int lin_slope(const cairn_obs *o, const cairn_state *x, double sc,
                     cairn_lin *l)
{
    const double R = CAIRN_EARTH_RADIUS;
    cairn_plane_geom g;
    cairn_geom_plane(x, o->at, o->to, &g);
    double dz = (cairn_geom_h(x, o->to) + o->th) - (cairn_geom_h(x, o->at) + o->ih);
    double u = dz - g.d2 / (2.0 * R);
    double hd = g.d / sc;
    double s = sqrt(hd * hd + u * u);
    if (s == 0.0)
        return -1;
    double dsdd = (g.d / (sc * sc) - u * g.d / R) / s;
    double dsdz = u / s;
    distance_row(&g, dsdd, CAIRN_PAR_E_AT, CAIRN_PAR_N_AT, CAIRN_PAR_E_TO,
                 CAIRN_PAR_N_TO, l);
    l->d[CAIRN_PAR_H_TO] = dsdz;
    l->d[CAIRN_PAR_H_AT] = -dsdz;
    l->value = s;
    return 0;
}

/* Zenith angle (FORMAT.md, dimension 3):
 *   z = atan2(d, w),  w = Δz − (1 − k)·d²/2R,
 * the curvature-and-refraction term of [GW-ES] lowering the far end.
 * With dz = (w·dd − d·dw)/(d² + w²) and dw = dΔz − (1 − k)(d/R)·dd:
 *   ∂z/∂d = (w + (1 − k)d²/R)/(d² + w²),  ∂z/∂Δz = −d/(d² + w²).
 * Face two reads 2π − z, so every partial changes sign. */
static int lin_zenith(const cairn_obs *o, const cairn_state *x, double k,
                      cairn_lin *l)
{
    const double R = CAIRN_EARTH_RADIUS;
    cairn_plane_geom g;
    cairn_geom_plane(x, o->at, o->to, &g);
    if (g.d == 0.0)
        return -1; /* plumb sight: the zenith angle's gradient is undefined */
    double dz = (cairn_geom_h(x, o->to) + o->th) - (cairn_geom_h(x, o->at) + o->ih);
    double w = dz - (1.0 - k) * g.d2 / (2.0 * R);
    double den = g.d2 + w * w;
    double dzdd = (w + (1.0 - k) * g.d2 / R) / den;
    double dzdh = -g.d / den;
    double z = atan2(g.d, w);
    double f = 1.0;
    if (o->face == 2) {
        z = TWO_PI - z;
        f = -1.0;
    }
    distance_row(&g, f * dzdd, CAIRN_PAR_E_AT, CAIRN_PAR_N_AT, CAIRN_PAR_E_TO,
                 CAIRN_PAR_N_TO, l);
    l->d[CAIRN_PAR_H_TO] = f * dzdh;
    l->d[CAIRN_PAR_H_AT] = -f * dzdh;
    l->value = cairn_wrap_2pi(z);
    return 0;
}

int cairn_obs_linearise(const cairn_problem *p, const cairn_obs *o,
                        const cairn_state *x, cairn_lin *plin)
{
    cairn_lin *l = plin;
    memset(l, 0, sizeof *l);
    const double k = p->net->opt.refraction;
    const double sc = p->net->opt.scale;
    if (!(sc > 0.0))
        return -1;
    cairn_plane_geom g, g2;

    switch (o->kind) {
    case CAIRN_OBS_DIRECTION: {
        /* hz = t − ω (+ π in face two): [GW-AC] direction observation with
         * one orientation unknown per set. */
        if (!valid_mark(p, o->at) || !valid_mark(p, o->to))
            return -1;
        cairn_geom_plane(x, o->at, o->to, &g);
        if (g.d2 == 0.0)
            return -1;
        double t = azimuth_row(&g, 1.0, CAIRN_PAR_E_AT, CAIRN_PAR_N_AT,
                               CAIRN_PAR_E_TO, CAIRN_PAR_N_TO, l);
        double om = (x->omega && o->setup >= 0) ? x->omega[o->setup] : 0.0;
        l->d[CAIRN_PAR_OMEGA] = -1.0;
        l->value = cairn_wrap_2pi(t - om + (o->face == 2 ? CAIRN_PI : 0.0));
        return 0;
    }
    case CAIRN_OBS_ANGLE: {
        /* Clockwise angle at A from F to T = t(A→T) − t(A→F): [GW-AC]
         * angle observation equation (the difference of two azimuth rows). */
        if (!valid_mark(p, o->at) || !valid_mark(p, o->from) || !valid_mark(p, o->to))
            return -1;
        cairn_geom_plane(x, o->at, o->to, &g);
        cairn_geom_plane(x, o->at, o->from, &g2);
        if (g.d2 == 0.0 || g2.d2 == 0.0)
            return -1;
        double tt = azimuth_row(&g, 1.0, CAIRN_PAR_E_AT, CAIRN_PAR_N_AT,
                                CAIRN_PAR_E_TO, CAIRN_PAR_N_TO, l);
        double tf = azimuth_row(&g2, -1.0, CAIRN_PAR_E_AT, CAIRN_PAR_N_AT,
                                CAIRN_PAR_E_FROM, CAIRN_PAR_N_FROM, l);
        l->value = cairn_wrap_2pi(tt - tf);
        return 0;
    }
    case CAIRN_OBS_AZIMUTH: {
        if (!valid_mark(p, o->from) || !valid_mark(p, o->to))
            return -1;
        cairn_geom_plane(x, o->from, o->to, &g);
        if (g.d2 == 0.0)
            return -1;
        double t = azimuth_row(&g, 1.0, CAIRN_PAR_E_FROM, CAIRN_PAR_N_FROM,
                               CAIRN_PAR_E_TO, CAIRN_PAR_N_TO, l);
        l->value = cairn_wrap_2pi(t);
        return 0;
    }
    case CAIRN_OBS_HORIZ:
        /* d / scale: the booked (ground) distance times the combined scale
         * factor is a grid distance, so the model divides the grid d. */
        if (!valid_mark(p, o->at) || !valid_mark(p, o->to))
            return -1;
        cairn_geom_plane(x, o->at, o->to, &g);
        if (g.d == 0.0)
            return -1;
        distance_row(&g, 1.0 / sc, CAIRN_PAR_E_AT, CAIRN_PAR_N_AT,
                     CAIRN_PAR_E_TO, CAIRN_PAR_N_TO, l);
        l->value = g.d / sc;
        return 0;
    case CAIRN_OBS_SLOPE:
        if (!valid_mark(p, o->at) || !valid_mark(p, o->to))
            return -1;
        return lin_slope(o, x, sc, l);
    case CAIRN_OBS_ZENITH:
        if (!valid_mark(p, o->at) || !valid_mark(p, o->to))
            return -1;
        return lin_zenith(o, x, k, l);
    case CAIRN_OBS_RISE:
        /* Levelled height difference h_to − h_from. */
        if (!valid_mark(p, o->from) || !valid_mark(p, o->to) || !x->h)
            return -1;
        l->value = x->h[o->to] - x->h[o->from];
        l->d[CAIRN_PAR_H_TO] = 1.0;
        l->d[CAIRN_PAR_H_FROM] = -1.0;
        return 0;
    case CAIRN_OBS_TRIG_RISE:
        /* The observed value already holds s·cos z + (1 − k)(s·sin z)²/2R
         * + ih − th (problem.c), so the model is the plain mark difference. */
        if (!valid_mark(p, o->at) || !valid_mark(p, o->to) || !x->h)
            return -1;
        l->value = x->h[o->to] - x->h[o->at];
        l->d[CAIRN_PAR_H_TO] = 1.0;
        l->d[CAIRN_PAR_H_AT] = -1.0;
        return 0;
    case CAIRN_OBS_CONTROL_E:
        if (!valid_mark(p, o->at))
            return -1;
        l->value = x->e[o->at];
        l->d[CAIRN_PAR_E_AT] = 1.0;
        return 0;
    case CAIRN_OBS_CONTROL_N:
        if (!valid_mark(p, o->at))
            return -1;
        l->value = x->n[o->at];
        l->d[CAIRN_PAR_N_AT] = 1.0;
        return 0;
    case CAIRN_OBS_CONTROL_H:
        if (!valid_mark(p, o->at) || !x->h)
            return -1;
        l->value = x->h[o->at];
        l->d[CAIRN_PAR_H_AT] = 1.0;
        return 0;
    case CAIRN_OBS_NKINDS:
        break;
    }
    return -1;
}
