/* The adjustment problem: the booked observations of a net turned into the
 * observations of one adjustment for the resolved dimension (FORMAT.md
 * "Models", DEVELOPERS.md "Modelling decisions"), then the control
 * pseudo-observations of weighted marks.
 *
 * Reductions (sources):
 *   - a slope distance s with face-one zenith z becomes the horizontal
 *     distance s·sin z (Ghilani & Wolf, "Adjustment Computations", 4th ed.,
 *     Wiley 2006, the chapter on distance measurement reductions; from
 *     memory);
 *   - in dimension 1 a sight becomes the trigonometric height difference
 *     s·cos z + (1 − k)(s·sin z)²/2R + ih − th (Ghilani & Wolf, "Elementary
 *     Surveying", 13th ed., the chapters on trigonometric levelling and on
 *     curvature and refraction; from memory, ch. 4 and 5).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/model.h"

#define TWO_PI (2.0 * CAIRN_PI)

/* Output arrays under construction. */
typedef struct {
    cairn_problem *p;
    size_t cap_obs, cap_booked;
} builder;

static int push(builder *b, const cairn_obs *o, int booked, cairn_error *err)
{
    cairn_problem *p = b->p;
    if (cairn_grow((void **)&p->obs, &b->cap_obs, p->nobs + 1, sizeof *p->obs) ||
        cairn_grow((void **)&p->booked, &b->cap_booked, p->nobs + 1,
                   sizeof *p->booked))
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    p->obs[p->nobs] = *o;
    p->booked[p->nobs] = booked;
    p->nobs++;
    return 0;
}

static void touch(cairn_problem *p, int m, unsigned bits)
{
    if (m >= 0 && (size_t)m < p->net->nmarks)
        p->touch[m] |= bits;
}

/* FORMAT.md `dimension="auto"`: 3 when any sight has a zenith angle. */
static int resolve_dimension(const cairn_net *net)
{
    if (net->opt.dimension >= 1 && net->opt.dimension <= 3)
        return net->opt.dimension;
    for (size_t i = 0; i < net->nobs; i++)
        if (net->obs[i].kind == CAIRN_OBS_ZENITH)
            return 3;
    return 2;
}

/* Index (into net->obs) of the zenith reading of each sight number, or -1.
 * The readings of a sight share `sight`; a slope needs its sight's zenith
 * for the reductions and every reading needs the sight's face. */
static int *zenith_by_sight(const cairn_net *net, size_t *pn)
{
    size_t n = 0;
    for (size_t i = 0; i < net->nobs; i++)
        if (net->obs[i].sight >= 0 && (size_t)net->obs[i].sight + 1 > n)
            n = (size_t)net->obs[i].sight + 1;
    int *z = malloc((n ? n : 1) * sizeof *z);
    if (!z)
        return NULL;
    for (size_t i = 0; i < n; i++)
        z[i] = -1;
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *o = &net->obs[i];
        if (o->kind == CAIRN_OBS_ZENITH && o->sight >= 0 && z[o->sight] < 0)
            z[o->sight] = (int)i;
    }
    *pn = n;
    return z;
}

/* Position of a mark's definition in reading order: the file's place in
 * net->files, then line and column. Used to emit control observations "in
 * the order the marks were defined" (FORMAT.md observations.csv), which
 * differs from mark order when a mark is named before it is defined. */
typedef struct {
    size_t file;
    int line, col;
    size_t mark;
} def_key;

static int def_key_cmp(const void *a, const void *b)
{
    const def_key *x = a, *y = b;
    if (x->file != y->file)
        return x->file < y->file ? -1 : 1;
    if (x->line != y->line)
        return x->line < y->line ? -1 : 1;
    if (x->col != y->col)
        return x->col < y->col ? -1 : 1;
    return x->mark < y->mark ? -1 : x->mark > y->mark;
}

static size_t file_rank(const cairn_net *net, const char *f)
{
    for (size_t i = 0; f && i < net->nfiles; i++)
        if (net->files[i] == f || !strcmp(net->files[i], f))
            return i;
    return net->nfiles;
}

static int add_control(builder *b, const cairn_mark *m, int mi,
                       cairn_obs_kind kind, double value, double sd,
                       cairn_error *err)
{
    cairn_obs o;
    memset(&o, 0, sizeof o);
    o.kind = kind;
    o.at = mi;
    o.from = o.to = o.setup = o.sight = o.inst = -1;
    o.value = value;
    o.face = 1;
    o.sd.length = sd;
    o.sd.has = CAIRN_SD_LENGTH;
    o.src = m->def.line ? m->def : m->ref;
    return push(b, &o, -1, err);
}

/* Control pseudo-observations (FORMAT.md observations.csv: last, in the
 * order the marks were defined, e, n, h): a weighted component that is an
 * unknown of this adjustment is observed at its given value with the
 * mark's sd. A held component is not an unknown and gets none. */
static int add_controls(builder *b, cairn_error *err)
{
    cairn_problem *p = b->p;
    const cairn_net *net = p->net;
    def_key *keys = malloc((net->nmarks ? net->nmarks : 1) * sizeof *keys);
    if (!keys)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    for (size_t i = 0; i < net->nmarks; i++) {
        const cairn_mark *m = &net->marks[i];
        keys[i].file = m->def.line ? file_rank(net, m->def.file) : net->nfiles + 1;
        keys[i].line = m->def.line;
        keys[i].col = m->def.col;
        keys[i].mark = i;
    }
    qsort(keys, net->nmarks, sizeof *keys, def_key_cmp);
    int rc = 0;
    for (size_t k = 0; k < net->nmarks && rc == 0; k++) {
        int mi = (int)keys[k].mark;
        const cairn_mark *m = &net->marks[mi];
        unsigned t = p->touch[mi];
        const cairn_src *s = m->def.line ? &m->def : &m->ref;
        if (m->sd_en > 0.0 && (t & (CAIRN_E | CAIRN_N))) {
            if ((m->given & (CAIRN_E | CAIRN_N)) != (CAIRN_E | CAIRN_N)) {
                rc = cairn_error_add(err, CAIRN_SEV_ERROR, s->file, s->line, s->col,
                                     "mark %s has sd-en but no e and n", m->id);
                break;
            }
            if (!(m->hold & CAIRN_E))
                rc = add_control(b, m, mi, CAIRN_OBS_CONTROL_E, m->e, m->sd_en, err);
            if (!rc && !(m->hold & CAIRN_N))
                rc = add_control(b, m, mi, CAIRN_OBS_CONTROL_N, m->n, m->sd_en, err);
        }
        if (!rc && m->sd_h > 0.0 && (t & CAIRN_H) && !(m->hold & CAIRN_H)) {
            if (!(m->given & CAIRN_H)) {
                rc = cairn_error_add(err, CAIRN_SEV_ERROR, s->file, s->line, s->col,
                                     "mark %s has sd-h but no h", m->id);
                break;
            }
            rc = add_control(b, m, mi, CAIRN_OBS_CONTROL_H, m->h, m->sd_h, err);
        }
    }
    free(keys);
    return rc;
}

/* A zenith angle of exactly 0 or 180° (face-one value; 2π from a face-two
 * 0) is a plumb sight: the target is straight above or below, so its
 * horizontal direction is undefined, the zenith-angle equation has no
 * gradient in e and n (atan2(d, Δz) at d = 0), and the reduction
 * s·sin z gives a horizontal distance of 0, which the input stage rejects
 * when it is booked directly. The adjustment cannot use it in dimension 2
 * or 3, so it is reported here as an input error (exit 2), located at the
 * zenith reading, instead of surfacing later as an obscure "coincident
 * marks" or "cannot compute starting coordinates" (issue #9). Dimension 1
 * uses it well: the height difference is then ±s. The tolerance, 1e-10
 * rad (2e-5 arc-seconds), only absorbs the rounding of a booked 180°
 * through the unit conversion; a real reading that close to plumb does not
 * exist. */
static int plumb_sight(const cairn_net *net, const cairn_obs *zen, double z1,
                       int dim, cairn_error *err)
{
    if (!(fabs(sin(z1)) < 1e-10))
        return 0;
    const char *at = zen->at >= 0 && (size_t)zen->at < net->nmarks
                         ? net->marks[zen->at].id : "?";
    const char *to = zen->to >= 0 && (size_t)zen->to < net->nmarks
                         ? net->marks[zen->to].id : "?";
    return cairn_error_add(err, CAIRN_SEV_ERROR, zen->src.file, zen->src.line,
                           zen->src.col,
                           "zenith angle of exactly %s from %s to %s: a plumb "
                           "sight has no horizontal direction, so dimension %d "
                           "cannot use it (only dimension 1, as a height "
                           "difference, can)",
                           cos(z1) > 0 ? "0 degrees (straight up)" : "180 degrees (straight down)",
                           at, to, dim);
}

/* One booked observation into zero or one adjustment observations.
 * `zen` is its sight's zenith reading or NULL; `face2` the sight's face. */
static int reduce_one(builder *b, int dim, int use_rises, int bi,
                      const cairn_obs *zen, int face2, cairn_error *err)
{
    cairn_problem *p = b->p;
    const cairn_net *net = p->net;
    const cairn_obs *bk = &net->obs[bi];
    const unsigned EN = CAIRN_E | CAIRN_N, ENH = CAIRN_E | CAIRN_N | CAIRN_H;
    cairn_obs o = *bk;
    o.face = face2 ? 2 : 1;
    o.aux_s = o.aux_z = 0.0;
    /* DEVELOPERS.md "ppm": a sight's distance times (1 + ppm·1e-6). */
    const double ppmf = 1.0 + bk->ppm * 1e-6;
    /* DEVELOPERS.md "Face two": reductions use the face-one zenith 2π − z. */
    const double z1 = zen ? (face2 ? TWO_PI - zen->value : zen->value) : 0.0;

    switch (bk->kind) {
    case CAIRN_OBS_DIRECTION:
    case CAIRN_OBS_AZIMUTH:
    case CAIRN_OBS_ANGLE:
        if (dim == 1)
            return 0;
        touch(p, o.at, EN);
        touch(p, o.from, EN);
        touch(p, o.to, EN);
        return push(b, &o, bi, err);
    case CAIRN_OBS_HORIZ:
        if (dim == 1)
            return 0; /* DEVELOPERS.md: zen + horiz gives nothing in dim 1 */
        o.value = bk->value * ppmf;
        touch(p, o.at, EN);
        touch(p, o.to, EN);
        return push(b, &o, bi, err);
    case CAIRN_OBS_ZENITH:
        if (dim != 3)
            return 0; /* used only through a slope's reduction */
        if (plumb_sight(net, bk, face2 ? TWO_PI - bk->value : bk->value, dim, err))
            return -1;
        touch(p, o.at, ENH);
        touch(p, o.to, ENH);
        return push(b, &o, bi, err);
    case CAIRN_OBS_SLOPE: {
        double s = bk->value * ppmf;
        if (dim == 3) {
            o.value = s;
            touch(p, o.at, ENH);
            touch(p, o.to, ENH);
            return push(b, &o, bi, err);
        }
        if (dim == 2) {
            if (!zen)
                return cairn_error_add(err, CAIRN_SEV_ERROR, bk->src.file,
                                       bk->src.line, bk->src.col,
                                       "slope distance needs a zenith angle in dimension 2");
            if (plumb_sight(net, zen, z1, dim, err))
                return -1;
            o.kind = CAIRN_OBS_HORIZ;
            o.value = s * sin(z1);
            o.aux_s = s;
            o.aux_z = z1;
            touch(p, o.at, EN);
            touch(p, o.to, EN);
            return push(b, &o, bi, err);
        }
        if (!zen)
            return 0; /* dimension 1 needs zen and slope in one sight */
        /* Δh = s·cos z + (1 − k)(s·sin z)²/2R + ih − th (FORMAT.md): the
         * curvature-and-refraction term of the horizontal length D = s·sin z
         * raises the far mark, the heights take the line from instrument
         * axis to target down to the marks. */
        {
            const double k = net->opt.refraction, R = CAIRN_EARTH_RADIUS;
            double D = s * sin(z1);
            o.kind = CAIRN_OBS_TRIG_RISE;
            o.value = s * cos(z1) + (1.0 - k) * D * D / (2.0 * R) + bk->ih - bk->th;
            o.aux_s = s;
            o.aux_z = z1;
            /* Keep the slope's dist-sd and add the zenith's zen-sd: sigma.c
             * replaces each term separately (DEVELOPERS.md). */
            o.sd.has &= CAIRN_SD_LENGTH | CAIRN_SD_PPM;
            if (zen->sd.has & CAIRN_SD_ANGLE) {
                o.sd.angle = zen->sd.angle;
                o.sd.has |= CAIRN_SD_ANGLE;
            }
            touch(p, o.at, CAIRN_H);
            touch(p, o.to, CAIRN_H);
            return push(b, &o, bi, err);
        }
    }
    case CAIRN_OBS_RISE:
        if (!use_rises)
            return 0;
        touch(p, o.from, CAIRN_H);
        touch(p, o.to, CAIRN_H);
        return push(b, &o, bi, err);
    default:
        return cairn_error_add(err, CAIRN_SEV_ERROR, bk->src.file, bk->src.line,
                               bk->src.col, "observation of kind %s cannot be booked",
                               cairn_obs_kind_name(bk->kind));
    }
}

int cairn_problem_build(const cairn_net *net, int datum_free,
                        cairn_problem **pprob, cairn_error *err)
{
    *pprob = NULL;
    cairn_problem *p = calloc(1, sizeof *p);
    if (!p)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    builder b = {p, 0, 0};
    p->net = net;
    p->datum_free = datum_free ? 1 : 0;
    p->dimension = resolve_dimension(net);
    p->touch = calloc(net->nmarks ? net->nmarks : 1, sizeof *p->touch);
    size_t nsight = 0;
    int *zs = zenith_by_sight(net, &nsight);
    if (!p->touch || !zs) {
        free(zs);
        cairn_problem_free(&p);
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    }
    /* Rises: FORMAT.md `dimension`: 1 and 3 use them; an explicit 2 is
     * "plane positions only"; auto resolving to 2 keeps them as a separate
     * height part. (Same rule as tests/reference/cairn_ref.py.) */
    int use_rises = p->dimension != 2 || net->opt.dimension == 0;

    int nerr_before = err->nerrors;
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *bk = &net->obs[i];
        const cairn_obs *zen = NULL;
        if (bk->sight >= 0 && (size_t)bk->sight < nsight && zs[bk->sight] >= 0)
            zen = &net->obs[zs[bk->sight]];
        /* DEVELOPERS.md "Face two": it says face 2, or its zenith exceeds
         * half a circle; the whole sight shares the face. */
        int face2 = bk->face == 2 || (zen && (zen->face == 2 || zen->value > CAIRN_PI));
        if (reduce_one(&b, p->dimension, use_rises, (int)i, zen, face2, err) &&
            cairn_error_full(err))
            break;
    }
    free(zs);
    if (err->nerrors == nerr_before && !datum_free)
        add_controls(&b, err);
    for (size_t i = 0; i < net->nmarks; i++) {
        if (p->touch[i] & (CAIRN_E | CAIRN_N))
            p->plane = 1;
        if (p->touch[i] & CAIRN_H)
            p->heights = 1;
    }
    if (err->nerrors != nerr_before) {
        cairn_problem_free(&p);
        return -1;
    }
    *pprob = p;
    return 0;
}

void cairn_problem_free(cairn_problem **pprob)
{
    if (!pprob || !*pprob)
        return;
    cairn_problem *p = *pprob;
    free(p->obs);
    free(p->booked);
    free(p->touch);
    free(p);
    *pprob = NULL;
}
