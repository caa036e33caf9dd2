/* Starting coordinates from the observations (issue #4): the driver.
 *
 * It builds, once, the per-mark lists of observations that name a mark and
 * the per-sight index of zenith and distance readings, decides which
 * components each mark needs (FORMAT.md "Models", "Unknowns"), runs the
 * plane part (start_plane.c) and then the height part (start_height.c),
 * and names every mark that neither could reach in one error. Everything
 * is linear in marks + observations: adjacency by counting sort, the
 * propagation by work lists, connectivity by union-find.
 */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "start_int.h"

#define EN (CAIRN_E | CAIRN_N)

/* ------------------------------------------------------------ helpers */

int cairn_start_face2(const start_ctx *c, int i)
{
    const cairn_obs *o = &c->net->obs[i];
    if (o->face == 2)
        return 1;
    return o->sight >= 0 && (size_t)o->sight < c->nsight && c->face2[o->sight];
}

double cairn_start_zenith1(const start_ctx *c, int sight)
{
    if (sight < 0 || (size_t)sight >= c->nsight || c->zen_of[sight] < 0)
        return -1.0;
    double z = c->net->obs[c->zen_of[sight]].value;
    /* DEVELOPERS.md "Face two": reductions use the face-one value 2π − z. */
    return c->face2[sight] ? 2.0 * CAIRN_PI - z : z;
}

static int net_given_h(const start_ctx *c, int m)
{
    return (c->net->marks[m].given & CAIRN_H) != 0;
}

int cairn_start_plane_length(const start_ctx *c, int i, double *pd, int *papprox)
{
    const cairn_obs *o = &c->net->obs[i];
    const cairn_options *opt = &c->net->opt;
    /* DEVELOPERS.md "ppm": booked distance times (1 + ppm·1e-6). */
    double s = o->value * (1.0 + o->ppm * 1e-6);
    *papprox = 0;
    if (o->kind == CAIRN_OBS_HORIZ) {
        *pd = s * opt->scale; /* FORMAT.md: horizontal distance = d / scale */
        return *pd > 0.0 ? 0 : -1;
    }
    if (o->kind != CAIRN_OBS_SLOPE)
        return -1;
    double z1 = cairn_start_zenith1(c, o->sight);
    if (z1 < 0.0) {
        if (c->dim != 3)
            return -1;
        /* Dimension 3, no zenith in the sight: with both heights given,
         * Pythagoras on Δz (curvature neglected); else the slope length
         * itself, only an approximation of the plane length. */
        double v = 0.0;
        if (o->at >= 0 && o->to >= 0 && (size_t)o->at < c->nm && (size_t)o->to < c->nm &&
            (net_given_h(c, o->at) && net_given_h(c, o->to))) {
            v = (c->net->marks[o->to].h + o->th) - (c->net->marks[o->at].h + o->ih);
            if (fabs(v) >= s)
                v = 0.0;
        }
        *pd = sqrt(s * s - v * v) * opt->scale;
        *papprox = 1;
        return *pd > 0.0 ? 0 : -1;
    }
    /* A plumb sight (zenith 0 or 180°, problem.c) carries no plane
     * length: rounding would otherwise put its target 1e-15 m from the
     * station and call that a start. */
    if (!(fabs(sin(z1)) >= 1e-10))
        return -1;
    if (c->dim == 3) {
        double dz;
        cairn_start_invert3(s, z1, opt->refraction, opt->scale, pd, &dz);
    } else {
        /* FORMAT.md dimension 2: the horizontal distance is s·sin z. */
        *pd = s * sin(z1) * opt->scale;
    }
    return *pd > 0.0 ? 0 : -1;
}

double cairn_start_obs_sd(const start_ctx *c, int i, double d)
{
    /* FORMAT.md "Models", a priori standard deviations; used only for the
     * gross-disagreement threshold, so an approximation is enough (the
     * angle formula is taken without its d3 term). */
    if (i < 0 || (size_t)i >= c->no)
        return 0.0;
    const cairn_obs *o = &c->net->obs[i];
    const cairn_instrument *in =
        o->inst >= 0 && (size_t)o->inst < c->net->ninsts ? &c->net->insts[o->inst] : NULL;
    double cen = in && (in->set & CAIRN_INST_CENTRING) ? in->centring : 0.0;
    double dd = d > 1e-3 ? d : 1e-3;
    switch (o->kind) {
    case CAIRN_OBS_HORIZ:
    case CAIRN_OBS_SLOPE:
        if (o->sd.has & CAIRN_SD_LENGTH)
            return o->sd.length;
        if (in)
            return sqrt(in->dist_a * in->dist_a +
                        pow(in->dist_b * 1e-6 * o->value, 2) + 2.0 * cen * cen);
        return 0.0;
    case CAIRN_OBS_DIRECTION:
    case CAIRN_OBS_AZIMUTH:
    case CAIRN_OBS_ZENITH:
    case CAIRN_OBS_ANGLE: {
        if (o->sd.has & CAIRN_SD_ANGLE)
            return o->sd.angle;
        if (!in)
            return 0.0;
        double a = o->kind == CAIRN_OBS_ZENITH ? in->zenith : in->direction;
        double f = o->kind == CAIRN_OBS_ANGLE ? 2.0 : 1.0;
        return sqrt(f * a * a + 2.0 * cen * cen / (dd * dd));
    }
    case CAIRN_OBS_RISE:
        if (o->sd.has & CAIRN_SD_LENGTH)
            return o->sd.length;
        if (in && o->km > 0.0)
            return in->per_km * sqrt(o->km);
        if (in && o->setups > 0)
            return in->per_setup * sqrt((double)o->setups);
        return 0.0;
    default:
        return 0.0;
    }
}

void cairn_start_where(const start_ctx *c, int i, char *buf, size_t n)
{
    if (i < 0 || (size_t)i >= c->no) {
        snprintf(buf, n, "?");
        return;
    }
    const cairn_src *s = &c->net->obs[i].src;
    snprintf(buf, n, "%s:%d", s->file ? s->file : "?", s->line);
}

void cairn_start_warn(start_ctx *c, int i, const char *fmt, ...)
{
    const cairn_src *s = i >= 0 && (size_t)i < c->no ? &c->net->obs[i].src : NULL;
    char msg[CAIRN_MSG_MAX];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    c->rep->nwarnings++;
    cairn_error_add(c->err, CAIRN_SEV_WARNING, s ? s->file : NULL, s ? s->line : 0,
                    s ? s->col : 0, "%s", msg);
}

int cairn_start_add_step(start_ctx *c, int mark, unsigned comp, int obs1,
                         int obs2, int ncand, const char *fmt, ...)
{
    cairn_start_report *r = c->rep;
    char buf[2 * CAIRN_ID_MAX + 64];
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    if (len < 0)
        len = 0;
    size_t need = strlen(buf) + 1;
    if (cairn_grow((void **)&r->steps, &r->cap_steps, r->nsteps + 1, sizeof *r->steps) ||
        cairn_grow((void **)&r->method_off, &r->cap_off, r->nsteps + 1,
                   sizeof *r->method_off) ||
        cairn_grow((void **)&r->pool, &r->cap_pool, r->npool + need, 1)) {
        c->oom = 1;
        return -1;
    }
    memcpy(r->pool + r->npool, buf, need);
    r->method_off[r->nsteps] = r->npool;
    r->npool += need;
    cairn_start_step *st = &r->steps[r->nsteps++];
    st->mark = mark;
    st->comp = comp;
    st->method = NULL; /* resolved into the pool when the computation ends */
    st->obs1 = obs1;
    st->obs2 = obs2;
    st->ncand = ncand;
    return 0;
}

/* The observation of candidate a that candidate b does not share, so a
 * warning names two different lines where it can. */
static int distinct_obs(const start_cand *a, const start_cand *b)
{
    if (a->obs2 >= 0 && (a->obs1 == b->obs1 || a->obs1 == b->obs2))
        return a->obs2;
    return a->obs1;
}

void cairn_start_choose(start_ctx *c, int mark, int plane, const start_cand *cand,
                        size_t k, start_cand *pc, size_t *pbest)
{
    double ve[START_MAX_CAND], vn[START_MAX_CAND];
    if (k > START_MAX_CAND)
        k = START_MAX_CAND;
    for (size_t i = 0; i < k; i++) {
        ve[i] = plane ? cand[i].e : cand[i].h;
        vn[i] = cand[i].n;
    }
    /* The median of all candidates (component-wise), not the first one
     * found: a single blundered path cannot move it (issue #4). */
    double me = cairn_start_median(ve, k);
    double mn = plane ? cairn_start_median(vn, k) : 0.0;
    size_t best = 0, far = 0;
    double dbest = HUGE_VAL, dfar = -1.0;
    for (size_t i = 0; i < k; i++) {
        double d = plane ? hypot(cand[i].e - me, cand[i].n - mn) : fabs(cand[i].h - me);
        if (d < dbest) {
            dbest = d;
            best = i;
        }
        if (d > dfar) {
            dfar = d;
            far = i;
        }
    }
    *pc = cand[best];
    if (plane) {
        pc->e = me;
        pc->n = mn;
    } else {
        pc->h = me;
    }
    *pbest = best;
    if (k < 2 || far == best)
        return;
    const start_cand *a = &cand[far], *b = &cand[best];
    double sep = plane ? hypot(a->e - b->e, a->n - b->n) : fabs(a->h - b->h);
    /* Gross disagreement: more than max(0.05 m, 10 × the expected sd of
     * the difference). Common practice, no source: starting values need
     * not be good, but a difference this large is a blunder to report
     * before the adjustment smears it. */
    double lim = 10.0 * sqrt(a->sd * a->sd + b->sd * b->sd);
    if (lim < 0.05)
        lim = 0.05;
    if (!(sep > lim))
        return;
    int oa = distinct_obs(a, b), ob = distinct_obs(b, a);
    char wa[CAIRN_PATH_MAX + 16], wb[CAIRN_PATH_MAX + 16];
    cairn_start_where(c, oa, wa, sizeof wa);
    cairn_start_where(c, ob, wb, sizeof wb);
    cairn_start_warn(c, oa,
                     "starting %s for %s from %s and %s disagree by %.2f m; keeping "
                     "the median of %zu",
                     plane ? "positions" : "heights", c->net->marks[mark].id, wa, wb,
                     sep, k);
}

/* --------------------------------------------------------- union-find */

static int uf_find(int *p, int x)
{
    while (p[x] != x) {
        p[x] = p[p[x]]; /* path halving */
        x = p[x];
    }
    return x;
}

static void uf_join(int *p, int a, int b)
{
    if (a < 0 || b < 0)
        return;
    a = uf_find(p, a);
    b = uf_find(p, b);
    if (a != b)
        p[a < b ? b : a] = a < b ? a : b;
}

int cairn_start_parts(const start_ctx *c, int plane, int **proot, unsigned char **phas)
{
    int *p = malloc((c->nm ? c->nm : 1) * sizeof *p);
    unsigned char *has = calloc(c->nm ? c->nm : 1, 1);
    if (!p || !has) {
        free(p);
        free(has);
        return -1;
    }
    for (size_t i = 0; i < c->nm; i++)
        p[i] = (int)i;
    for (size_t i = 0; i < c->no; i++) {
        const cairn_obs *o = &c->net->obs[i];
        if (plane) {
            if (!cairn_start_is_plane_obs(c, (int)i))
                continue;
            uf_join(p, o->at, o->from);
            uf_join(p, o->at, o->to);
            uf_join(p, o->from, o->to);
        } else {
            int m = o->at >= 0 ? o->at : o->from, other;
            if (m >= 0 && !cairn_start_height_edge(c, (int)i, m, &other, NULL, NULL, NULL))
                uf_join(p, m, other);
        }
    }
    unsigned bits = plane ? EN : CAIRN_H;
    for (size_t i = 0; i < c->nm; i++) {
        int r = uf_find(p, (int)i);
        p[i] = r;
        if ((c->known[i] & bits) == bits && (c->need[i] & bits))
            has[r] = 1;
    }
    *proot = p;
    *phas = has;
    return 0;
}

/* ------------------------------------------------------------- setup */

/* FORMAT.md `dimension="auto"`: 3 when any sight has a zenith angle. */
static int resolve_dimension(const cairn_net *net, int dimension)
{
    if (dimension >= 1 && dimension <= 3)
        return dimension;
    if (net->opt.dimension >= 1 && net->opt.dimension <= 3)
        return net->opt.dimension;
    for (size_t i = 0; i < net->nobs; i++)
        if (net->obs[i].kind == CAIRN_OBS_ZENITH)
            return 3;
    return 2;
}

static int valid_mark(const start_ctx *c, int m)
{
    return m >= 0 && (size_t)m < c->nm;
}

/* Which components each mark needs (FORMAT.md "Models", "Unknowns"; the
 * same reading as src/model/problem.c). */
static void compute_need(start_ctx *c)
{
    for (size_t i = 0; i < c->no; i++) {
        const cairn_obs *o = &c->net->obs[i];
        unsigned bits = 0;
        if (cairn_start_is_plane_obs(c, (int)i))
            bits |= EN;
        if (c->dim == 3 && (o->kind == CAIRN_OBS_ZENITH || o->kind == CAIRN_OBS_SLOPE))
            bits |= CAIRN_H;
        if (o->kind == CAIRN_OBS_RISE && c->use_rises)
            bits |= CAIRN_H;
        if (c->dim == 1 && o->kind == CAIRN_OBS_ZENITH && o->sight >= 0 &&
            c->slope_of[o->sight] >= 0)
            bits |= CAIRN_H; /* DEVELOPERS.md: zen + slope in one sight */
        int ms[3] = {o->at, o->from, o->to};
        for (int j = 0; j < 3; j++)
            if (valid_mark(c, ms[j]))
                c->need[ms[j]] |= bits;
    }
}

int cairn_start_is_plane_obs(const start_ctx *c, int i)
{
    const cairn_obs *o = &c->net->obs[i];
    if (c->dim == 1)
        return 0;
    switch (o->kind) {
    case CAIRN_OBS_DIRECTION:
    case CAIRN_OBS_ANGLE:
    case CAIRN_OBS_AZIMUTH:
    case CAIRN_OBS_HORIZ:
        return 1;
    case CAIRN_OBS_SLOPE:
        /* dimension 2 uses a slope only through its zenith (a slope alone
         * is an input error the model stage reports). */
        return c->dim == 3 || (o->sight >= 0 && (size_t)o->sight < c->nsight &&
                               c->zen_of[o->sight] >= 0);
    case CAIRN_OBS_ZENITH:
        return c->dim == 3;
    default:
        return 0;
    }
}

/* Count (fill == NULL) or list observation i under each distinct mark it
 * names. */
static void adj_one(start_ctx *c, size_t i, size_t *fill)
{
    const cairn_obs *o = &c->net->obs[i];
    int ms[3] = {o->at, o->from, o->to};
    for (int j = 0; j < 3; j++) {
        if (!valid_mark(c, ms[j]) || (j > 0 && ms[j] == ms[0]) || (j > 1 && ms[j] == ms[1]))
            continue;
        if (fill)
            c->adj[fill[ms[j]]++] = (int)i;
        else
            c->adj_off[ms[j] + 1]++;
    }
}

static int build(start_ctx *c)
{
    cairn_net *net = c->net;
    c->nm = net->nmarks;
    c->no = net->nobs;
    c->ns = net->nsetups;
    c->nsight = 0;
    c->adj_off = calloc(c->nm + 1, sizeof *c->adj_off);
    if (!c->adj_off)
        return -1;
    /* Pass 1 over the observations: sight numbers in use, and the
     * adjacency counts (counting sort, so each list is in load order). */
    for (size_t i = 0; i < c->no; i++) {
        if (net->obs[i].sight >= 0 && (size_t)net->obs[i].sight + 1 > c->nsight)
            c->nsight = (size_t)net->obs[i].sight + 1;
        adj_one(c, i, NULL);
    }
    for (size_t m = 0; m < c->nm; m++)
        c->adj_off[m + 1] += c->adj_off[m];
    size_t nm1 = c->nm ? c->nm : 1, ns1 = c->ns ? c->ns : 1;
    size_t nq1 = c->nsight ? c->nsight : 1;
    size_t *fill = malloc(nm1 * sizeof *fill);
    c->adj = malloc((c->adj_off[c->nm] ? c->adj_off[c->nm] : 1) * sizeof *c->adj);
    c->zen_of = malloc(3 * nq1 * sizeof *c->zen_of);
    c->face2 = calloc(nq1, 1);
    c->need = calloc(nm1, sizeof *c->need);
    c->known = calloc(nm1, sizeof *c->known);
    c->e = calloc(3 * nm1, sizeof *c->e);
    c->omega = calloc(ns1, sizeof *c->omega);
    c->oriented = calloc(ns1, 1);
    if (!fill || !c->adj || !c->zen_of || !c->face2 || !c->need || !c->known || !c->e ||
        !c->omega || !c->oriented) {
        free(fill);
        return -1;
    }
    c->slope_of = c->zen_of + nq1;
    c->horiz_of = c->zen_of + 2 * nq1;
    c->n = c->e + nm1;
    c->h = c->e + 2 * nm1;
    for (size_t i = 0; i < 3 * nq1; i++)
        c->zen_of[i] = -1;
    memcpy(fill, c->adj_off, c->nm * sizeof *fill);

    /* Pass 2: per sight its first zenith, slope and horiz reading and its
     * face; the adjacency lists. */
    for (size_t i = 0; i < c->no; i++) {
        const cairn_obs *o = &net->obs[i];
        adj_one(c, i, fill);
        if (o->sight < 0)
            continue;
        size_t s = (size_t)o->sight;
        if (o->kind == CAIRN_OBS_ZENITH && c->zen_of[s] < 0)
            c->zen_of[s] = (int)i;
        if (o->kind == CAIRN_OBS_SLOPE && c->slope_of[s] < 0)
            c->slope_of[s] = (int)i;
        if (o->kind == CAIRN_OBS_HORIZ && c->horiz_of[s] < 0)
            c->horiz_of[s] = (int)i;
        /* DEVELOPERS.md "Face two": says face 2, or zenith above π. */
        if (o->face == 2 || (o->kind == CAIRN_OBS_ZENITH && o->value > CAIRN_PI))
            c->face2[s] = 1;
    }
    free(fill);

    /* Pass 3: the per-setup lists, by counting sort like the marks'. */
    c->set_off = calloc(c->ns + 1, sizeof *c->set_off);
    if (!c->set_off)
        return -1;
    for (size_t i = 0; i < c->no; i++)
        if (net->obs[i].setup >= 0 && (size_t)net->obs[i].setup < c->ns)
            c->set_off[net->obs[i].setup + 1]++;
    for (size_t s = 0; s < c->ns; s++)
        c->set_off[s + 1] += c->set_off[s];
    c->set_obs = malloc((c->set_off[c->ns] ? c->set_off[c->ns] : 1) * sizeof *c->set_obs);
    size_t *sfill = malloc(ns1 * sizeof *sfill);
    if (!c->set_obs || !sfill) {
        free(sfill);
        return -1;
    }
    memcpy(sfill, c->set_off, c->ns * sizeof *sfill);
    for (size_t i = 0; i < c->no; i++)
        if (net->obs[i].setup >= 0 && (size_t)net->obs[i].setup < c->ns)
            c->set_obs[sfill[net->obs[i].setup]++] = (int)i;
    free(sfill);

    for (size_t m = 0; m < c->nm; m++) {
        const cairn_mark *mk = &net->marks[m];
        unsigned g = 0;
        if ((mk->given & EN) == EN) {
            g |= EN;
            c->e[m] = mk->e;
            c->n[m] = mk->n;
        }
        if (mk->given & CAIRN_H) {
            g |= CAIRN_H;
            c->h[m] = mk->h;
        }
        c->known[m] = g;
    }
    compute_need(c); /* pass 4 (needs the sight index) */
    return 0;
}

static void free_ctx(start_ctx *c)
{
    free(c->adj_off);
    free(c->adj);
    free(c->set_off);
    free(c->set_obs);
    free(c->zen_of);
    free(c->face2);
    free(c->need);
    free(c->known);
    free(c->e);
    free(c->omega);
    free(c->oriented);
}

/* ---------------------------------------------------------- unreached */

/* One error naming every mark that got no start, with the reason
 * (issue #4: the caller exits 3). The message is bounded
 * (CAIRN_MSG_MAX); past that it says how many more. */
static int report_unreached(start_ctx *c)
{
    int *proot = NULL, *hroot = NULL;
    unsigned char *phas = NULL, *hhas = NULL;
    size_t nfail = 0, first = 0;
    for (size_t m = 0; m < c->nm; m++) {
        unsigned miss = c->need[m] & ~c->known[m];
        if ((miss & EN) || (miss & CAIRN_H)) {
            if (!nfail)
                first = m;
            nfail++;
        }
    }
    if (!nfail)
        return 0;
    if (cairn_start_parts(c, 1, &proot, &phas) || cairn_start_parts(c, 0, &hroot, &hhas)) {
        free(proot);
        free(phas);
        free(hroot);
        free(hhas);
        c->oom = 1;
        return -1;
    }
    char msg[CAIRN_MSG_MAX];
    const char *head = "cannot compute starting coordinates: ";
    size_t len = (size_t)snprintf(msg, sizeof msg, "%s", head), listed = 0;
    for (size_t m = 0; m < c->nm; m++) {
        unsigned miss = c->need[m] & ~c->known[m];
        if (!(miss & (EN | CAIRN_H)))
            continue;
        char why[200];
        if (miss & EN) {
            if (!phas[proot[m]])
                snprintf(why, sizeof why, "not connected to any mark with coordinates");
            else
                cairn_start_plane_reason(c, (int)m, why, sizeof why);
        } else {
            char r[160];
            cairn_start_height_reason(c, (int)m, hhas[hroot[m]], r, sizeof r);
            snprintf(why, sizeof why, "height: %s", r);
        }
        char item[CAIRN_ID_MAX + 220];
        snprintf(item, sizeof item, "%s%s (%s)", listed ? ", " : "", c->net->marks[m].id,
                 why);
        /* Keep room for " and NNNNNNNNN more". */
        if (len + strlen(item) + 24 >= sizeof msg)
            break;
        len += (size_t)snprintf(msg + len, sizeof msg - len, "%s", item);
        listed++;
    }
    if (listed < nfail)
        snprintf(msg + len, sizeof msg - len, " and %zu more", nfail - listed);
    free(proot);
    free(phas);
    free(hroot);
    free(hhas);
    const cairn_src *s = &c->net->marks[first].ref;
    return cairn_error_add(c->err, CAIRN_SEV_ERROR, s->file, s->line, s->col, "%s", msg);
}

/* --------------------------------------------------------------- API */

int cairn_start_compute(cairn_net *net, int dimension, cairn_start_report **prep,
                        cairn_error *err)
{
    if (prep)
        *prep = NULL;
    start_ctx c;
    memset(&c, 0, sizeof c);
    c.net = net;
    c.err = err;
    c.dim = resolve_dimension(net, dimension);
    /* FORMAT.md `dimension`: 1 and 3 use rises; auto resolving to 2 keeps
     * them as a separate height part; an explicit 2 is plane only. */
    c.use_rises = c.dim != 2 || net->opt.dimension == 0;
    c.plane_seed = -1;
    c.rep = calloc(1, sizeof *c.rep);
    int rc = 0;
    if (!c.rep || build(&c)) {
        rc = -1;
        c.oom = 1;
    }
    if (!rc)
        rc = cairn_start_plane_int(&c);
    if (!rc)
        rc = cairn_start_height_int(&c);
    if (!rc) {
        /* Write back only what was computed; given components stay. */
        for (size_t m = 0; m < c.nm; m++) {
            cairn_mark *mk = &net->marks[m];
            unsigned comp = c.need[m] & c.known[m] & ~mk->given;
            if (comp & CAIRN_E)
                mk->e = c.e[m];
            if (comp & CAIRN_N)
                mk->n = c.n[m];
            if (comp & CAIRN_H)
                mk->h = c.h[m];
            mk->computed |= comp;
        }
        rc = report_unreached(&c);
    }
    if (c.oom)
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    if (c.rep)
        for (size_t i = 0; i < c.rep->nsteps; i++)
            c.rep->steps[i].method = c.rep->pool + c.rep->method_off[i];
    free_ctx(&c);
    if (prep)
        *prep = c.rep;
    else
        cairn_start_report_free(&c.rep);
    return rc ? -1 : 0;
}

size_t cairn_start_report_count(const cairn_start_report *r)
{
    return r ? r->nsteps : 0;
}

const cairn_start_step *cairn_start_report_step(const cairn_start_report *r, size_t i)
{
    return r && i < r->nsteps ? &r->steps[i] : NULL;
}

size_t cairn_start_report_nwarnings(const cairn_start_report *r)
{
    return r ? r->nwarnings : 0;
}

void cairn_start_report_free(cairn_start_report **pr)
{
    if (!pr || !*pr)
        return;
    free((*pr)->steps);
    free((*pr)->method_off);
    free((*pr)->pool);
    free(*pr);
    *pr = NULL;
}
