/* Starting heights (issue #4): breadth-first propagation from the marks
 * with a height along every observation that carries a height difference,
 * in waves (as the plane part, start_plane.c), taking the median where
 * several paths meet in the same wave.
 *
 * Height differences h(to) − h(at) (FORMAT.md "Models"):
 *   - rise: its value;
 *   - dimension 1, a sight with zenith z (face one) and slope s:
 *     s·cos z + (1 − k)(s·sin z)²/2R + ih − th, exactly the dimension-1
 *     model (Ghilani & Wolf, "Elementary Surveying", 13th ed., the
 *     chapters on trigonometric levelling and on curvature and refraction;
 *     from memory);
 *   - dimension 3, zenith and slope: the exact inverse of the dimension-3
 *     slope and zenith model (cairn_start_invert3), Δz + ih − th; the
 *     dimension-1 formula would be off by about k·d²/2R·(Δz/s)², tens of
 *     micrometres, and the inverse costs three Newton steps;
 *   - dimension 3, zenith and horizontal distance d (= horiz·scale):
 *     Δz = d·cot z + (1 − k)d²/2R, from the zenith model solved for Δz;
 *   - dimension 3, a zenith alone: the same with d from the plane
 *     positions (computed first).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "start_int.h"

static int valid(const start_ctx *c, int m)
{
    return m >= 0 && (size_t)m < c->nm;
}

static int known_h(const start_ctx *c, int m)
{
    return valid(c, m) && (c->known[m] & CAIRN_H);
}

int cairn_start_height_edge(const start_ctx *c, int i, int m, int *pother,
                            double *pdh, double *psd, int *pobs2)
{
    const cairn_obs *o = &c->net->obs[i];
    const cairn_options *opt = &c->net->opt;
    const double R = CAIRN_EARTH_RADIUS, k = opt->refraction;
    int first, second, is = -1, ih = -1;
    /* Which marks it joins, and whether it carries a difference at all. */
    if (o->kind == CAIRN_OBS_RISE) {
        if (!c->use_rises)
            return -1;
        first = o->from;
        second = o->to;
    } else if (o->kind == CAIRN_OBS_ZENITH && c->dim != 2 && o->sight >= 0 &&
               (size_t)o->sight < c->nsight) {
        first = o->at;
        second = o->to;
        is = c->slope_of[o->sight];
        ih = c->horiz_of[o->sight];
        if (is < 0 && c->dim == 1)
            return -1; /* DEVELOPERS.md: dimension 1 needs zen and slope */
        if (is < 0 && ih < 0 &&
            !(cairn_start_known_en(c, first) && cairn_start_known_en(c, second)))
            return -1; /* a zenith alone needs both plane positions */
    } else {
        return -1;
    }
    if (!valid(c, first) || !valid(c, second) || first == second ||
        (m != first && m != second))
        return -1;
    *pother = m == first ? second : first;
    if (!pdh)
        return 0; /* only the topology was asked for */

    double dh; /* h(second) − h(first) */
    *pobs2 = -1;
    if (o->kind == CAIRN_OBS_RISE) {
        dh = o->value;
        *psd = cairn_start_obs_sd(c, i, 0.0);
    } else {
        double z1 = cairn_start_face2(c, i) ? 2.0 * CAIRN_PI - o->value : o->value;
        double sz = cairn_start_obs_sd(c, i, 100.0), dz;
        if (is >= 0) {
            const cairn_obs *so = &c->net->obs[is];
            double s = so->value * (1.0 + so->ppm * 1e-6);
            if (c->dim == 1) {
                double D = s * sin(z1);
                dz = s * cos(z1) + (1.0 - k) * D * D / (2.0 * R);
            } else {
                double d;
                cairn_start_invert3(s, z1, k, opt->scale, &d, &dz);
            }
            double ss = cairn_start_obs_sd(c, is, s);
            *psd = hypot(cos(z1) * ss, s * sin(z1) * sz);
            *pobs2 = is;
        } else {
            double d;
            if (ih >= 0) {
                const cairn_obs *ho = &c->net->obs[ih];
                d = ho->value * (1.0 + ho->ppm * 1e-6) * opt->scale;
                *pobs2 = ih;
            } else {
                d = hypot(c->e[second] - c->e[first], c->n[second] - c->n[first]);
            }
            if (!(fabs(sin(z1)) > 1e-9))
                return -1;
            dz = d * cos(z1) / sin(z1) + (1.0 - k) * d * d / (2.0 * R);
            *psd = d * sz / (sin(z1) * sin(z1));
        }
        dh = dz + o->ih - o->th; /* Δz = (h_B + th) − (h_A + ih) */
    }
    *pdh = m == first ? dh : -dh;
    return isfinite(*pdh) ? 0 : -1;
}

typedef struct {
    int mark;
    double h;
    int obs1, obs2, ncand, kind, ref;
} hres_t;

static int eval(start_ctx *c, int P, hres_t *res)
{
    start_cand cand[START_MAX_CAND];
    size_t k = 0;
    for (size_t a = c->adj_off[P]; a < c->adj_off[P + 1] && k < START_MAX_CAND; a++) {
        int i = c->adj[a], other, o2;
        double dh, sd;
        if (cairn_start_height_edge(c, i, P, &other, &dh, &sd, &o2) || !known_h(c, other))
            continue;
        start_cand *x = &cand[k++];
        x->e = x->n = 0.0;
        x->h = c->h[other] - dh; /* dh = h(other) − h(P) */
        x->sd = sd;
        x->obs1 = i;
        x->obs2 = o2;
        x->kind = c->net->obs[i].kind == CAIRN_OBS_RISE ? START_LEVELLED : START_TRIG;
        x->ref1 = other;
        x->ref2 = -1;
    }
    if (!k)
        return 0;
    start_cand pick;
    size_t best;
    cairn_start_choose(c, P, 0, cand, k, &pick, &best);
    res->mark = P;
    res->h = pick.h;
    res->obs1 = pick.obs1;
    res->obs2 = pick.obs2;
    res->ncand = (int)k;
    res->kind = pick.kind;
    res->ref = pick.ref1;
    return 1;
}

static void push(int *list, size_t *pn, unsigned char *flag, int m)
{
    if (!flag[m]) {
        flag[m] = 1;
        list[(*pn)++] = m;
    }
}

/* Queue the unknown marks one height difference away from P. */
static void spread(start_ctx *c, int P, int *dirty, size_t *pndirty, unsigned char *inq)
{
    for (size_t a = c->adj_off[P]; a < c->adj_off[P + 1]; a++) {
        int other;
        if (!cairn_start_height_edge(c, c->adj[a], P, &other, NULL, NULL, NULL) &&
            (c->need[other] & CAIRN_H) && !known_h(c, other))
            push(dirty, pndirty, inq, other);
    }
}

/* No known height among the marks that need one: the plane origin when it
 * needs a height, else the first such mark in mark order, gets h = 0. */
static void seed_height(start_ctx *c)
{
    int any = 0;
    for (size_t m = 0; m < c->nm; m++)
        if (c->need[m] & CAIRN_H) {
            if (c->known[m] & CAIRN_H)
                return;
            any = 1;
        }
    if (!any)
        return;
    int s = -1;
    if (valid(c, c->plane_seed) && (c->need[c->plane_seed] & CAIRN_H))
        s = c->plane_seed;
    for (size_t m = 0; m < c->nm && s < 0; m++)
        if (c->need[m] & CAIRN_H)
            s = (int)m;
    c->h[s] = 0.0;
    c->known[s] |= CAIRN_H;
    cairn_start_add_step(c, s, CAIRN_H, -1, -1, 1, "free-network origin");
}

int cairn_start_height_int(start_ctx *c)
{
    if (!c->nm)
        return 0;
    seed_height(c);
    size_t nm = c->nm;
    int *dirty = malloc(nm * sizeof *dirty);
    unsigned char *inq = calloc(nm, 1);
    hres_t *pend = malloc(nm * sizeof *pend);
    if (!dirty || !inq || !pend) {
        free(dirty);
        free(inq);
        free(pend);
        c->oom = 1;
        return -1;
    }
    size_t ndirty = 0;
    for (size_t m = 0; m < nm; m++) /* the first wave: next to known heights */
        if ((c->need[m] & CAIRN_H) && known_h(c, (int)m))
            spread(c, (int)m, dirty, &ndirty, inq);
    while (!c->oom) {
        size_t npend = 0;
        for (size_t i = 0; i < ndirty; i++) {
            int P = dirty[i];
            inq[P] = 0;
            if (!known_h(c, P) && eval(c, P, &pend[npend]))
                npend++;
        }
        ndirty = 0;
        if (!npend)
            break;
        for (size_t i = 0; i < npend; i++) {
            const hres_t *r = &pend[i];
            c->h[r->mark] = r->h;
            c->known[r->mark] |= CAIRN_H;
            if (cairn_start_add_step(c, r->mark, CAIRN_H, r->obs1, r->obs2, r->ncand,
                                     r->kind == START_LEVELLED ? "levelled from %s"
                                                               : "trig height from %s",
                                     c->net->marks[r->ref].id))
                break;
        }
        for (size_t i = 0; i < npend; i++)
            spread(c, pend[i].mark, dirty, &ndirty, inq);
    }
    free(dirty);
    free(inq);
    free(pend);
    return c->oom ? -1 : 0;
}

void cairn_start_height_reason(const start_ctx *c, int m, int connected, char *buf,
                               size_t n)
{
    int nedge = 0;
    for (size_t a = c->adj_off[m]; a < c->adj_off[m + 1]; a++) {
        int other;
        if (!cairn_start_height_edge(c, c->adj[a], m, &other, NULL, NULL, NULL))
            nedge++;
    }
    if (!nedge)
        snprintf(buf, n, "no observation gives its height difference");
    else if (!connected)
        snprintf(buf, n, "not connected to any mark with a height");
    else
        snprintf(buf, n, "only connected through marks whose height cannot be computed");
}
