/* Field-book misclosures (include/cairn/misclosure.h): the shared booked
 * readings, the result list, and the checks made within setups and
 * between repeated measurements (face pairs, set agreement, repeated
 * distances). Levelling and traverses are in misclosure_level.c and
 * misclosure_traverse.c.
 *
 * Expected standard deviations come from FORMAT.md "Models" (a priori σ),
 * propagated by the usual sum of variances of independent readings.
 * Terms that two compared readings share cancel and are left out: the
 * centring and the measured heights of one setup are common to its face
 * one and face two sights. The flag rule, three expected standard
 * deviations (CAIRN_MISC_SIGMAS), is common practice, no source.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/model.h"
#include "misclosure_int.h"

#define TWO_PI (2.0 * CAIRN_PI)

/* ------------------------------------------------------------------ */
/* Result list                                                         */
/* ------------------------------------------------------------------ */

const char *cairn_misc_kind_name(cairn_misc_kind k)
{
    static const char *const names[CAIRN_MISC_NKINDS] = {
        "level-loop", "level-line", "traverse-angular", "traverse-linear",
        "face-pair", "repeat-distance", "set-agreement"};
    return (unsigned)k < CAIRN_MISC_NKINDS ? names[k] : "?";
}

int cairn_misc_kind_angular(cairn_misc_kind k)
{
    return k == CAIRN_MISC_TRAVERSE_ANGULAR || k == CAIRN_MISC_FACE_PAIR ||
           k == CAIRN_MISC_SET_AGREEMENT;
}

void cairn_misc_init(cairn_misclosure *item, cairn_misc_kind kind)
{
    memset(item, 0, sizeof *item);
    item->kind = kind;
    item->misclosure = item->length = item->expected_sd = item->ratio = NAN;
    item->allowance = item->de = item->dn = item->precision = NAN;
}

int cairn_misc_add(cairn_misclosures *r, cairn_misclosure *item,
                   const int *route, size_t nroute)
{
    if (cairn_grow((void **)&r->item, &r->cap, r->n + 1, sizeof *r->item) ||
        cairn_grow((void **)&r->route, &r->cap_route, r->nroute_used + nroute + 1,
                   sizeof *r->route))
        return -1;
    item->route = r->nroute_used;
    item->nroute = nroute;
    memcpy(r->route + r->nroute_used, route, nroute * sizeof *route);
    r->nroute_used += nroute;
    double a = fabs(item->misclosure);
    item->ratio = (item->expected_sd > 0.0) ? a / item->expected_sd : NAN;
    /* Flag rule: above three expected SD (common practice, no source), or
     * above the levelling allowance m·√km when the project sets one. */
    item->fail = (isfinite(item->ratio) && item->ratio > CAIRN_MISC_SIGMAS) ||
                 (isfinite(item->allowance) && a > item->allowance);
    if (item->fail)
        r->nfail++;
    r->item[r->n++] = *item;
    return 0;
}

void cairn_misclosures_free(cairn_misclosures **pres)
{
    if (!pres || !*pres)
        return;
    free((*pres)->item);
    free((*pres)->route);
    free((*pres)->face);
    free(*pres);
    *pres = NULL;
}

/* ------------------------------------------------------------------ */
/* Instruments and a priori σ                                          */
/* ------------------------------------------------------------------ */

const cairn_instrument *cairn_misc_inst(const cairn_net *net, const cairn_obs *o,
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
            return NULL;
        only = &net->insts[j];
    }
    return only;
}

double cairn_misc_sigma(const cairn_net *net, const cairn_obs *o, double len)
{
    /* Rise and distance σ do not depend on coordinates, so a problem that
     * holds only the net and an empty state reach the model's own formulas
     * (src/model/sigma.c); aux_s carries the booked length after ppm. */
    cairn_problem p;
    memset(&p, 0, sizeof p);
    p.net = net;
    cairn_state x;
    memset(&x, 0, sizeof x);
    cairn_obs c = *o;
    c.aux_s = (o->kind == CAIRN_OBS_RISE) ? 0.0 : len;
    return cairn_obs_sigma(&p, &c, &x);
}

double cairn_misc_centring(const cairn_net *net, int s)
{
    cairn_obs probe;
    memset(&probe, 0, sizeof probe);
    probe.inst = -1;
    probe.setup = s;
    const cairn_instrument *in = cairn_misc_inst(net, &probe, CAIRN_INST_TOTAL_STATION);
    return (in && (in->set & CAIRN_INST_CENTRING)) ? in->centring : 0.0;
}

/* Reading σ of one hz or zen reading: its own sd, else the instrument's
 * direction or zenith σ (no centring or height terms: see the top). */
static double reading_sigma(const cairn_net *net, const cairn_obs *o, int *pown)
{
    *pown = 0;
    if (o->sd.has & CAIRN_SD_ANGLE) {
        *pown = 1;
        return o->sd.angle;
    }
    const cairn_instrument *in = cairn_misc_inst(net, o, CAIRN_INST_TOTAL_STATION);
    unsigned bit = o->kind == CAIRN_OBS_ZENITH ? CAIRN_INST_ZENITH : CAIRN_INST_DIRECTION;
    if (!in || !(in->set & bit))
        return NAN;
    return o->kind == CAIRN_OBS_ZENITH ? in->zenith : in->direction;
}

/* ------------------------------------------------------------------ */
/* Shared readings: direction means and distances                      */
/* ------------------------------------------------------------------ */

static int cmp_obs_setup_to(const void *a, const void *b, const cairn_net *net)
{
    const cairn_obs *x = &net->obs[*(const int *)a], *y = &net->obs[*(const int *)b];
    if (x->setup != y->setup)
        return x->setup < y->setup ? -1 : 1;
    if (x->to != y->to)
        return x->to < y->to ? -1 : 1;
    return *(const int *)a < *(const int *)b ? -1 : *(const int *)a > *(const int *)b;
}

static int cmp_dir(const void *a, const void *b)
{
    const cairn_misc_dir *x = a, *y = b;
    if (x->setup != y->setup)
        return x->setup < y->setup ? -1 : 1;
    return x->first < y->first ? -1 : x->first > y->first;
}

/* Sort indices of net->obs by (setup, to, index): a small merge sort, as
 * qsort offers no context pointer in C11 and the library keeps no global
 * state. */
static void sort_obs_idx(int *v, int *tmp, size_t n, const cairn_net *net)
{
    if (n < 2)
        return;
    size_t h = n / 2;
    sort_obs_idx(v, tmp, h, net);
    sort_obs_idx(v + h, tmp, n - h, net);
    size_t i = 0, j = h, k = 0;
    while (i < h && j < n)
        tmp[k++] = cmp_obs_setup_to(&v[j], &v[i], net) < 0 ? v[j++] : v[i++];
    while (i < h)
        tmp[k++] = v[i++];
    while (j < n)
        tmp[k++] = v[j++];
    memcpy(v, tmp, n * sizeof *v);
}

static int build_dirs(cairn_misc_ctx *c)
{
    const cairn_net *net = c->net;
    size_t n = 0;
    for (size_t i = 0; i < net->nobs; i++)
        if (net->obs[i].kind == CAIRN_OBS_DIRECTION && net->obs[i].setup >= 0)
            n++;
    int *idx = malloc((n ? n : 1) * sizeof *idx);
    int *tmp = malloc((n ? n : 1) * sizeof *tmp);
    c->dir = malloc((n ? n : 1) * sizeof *c->dir);
    c->setup_dir = calloc(net->nsetups + 1, sizeof *c->setup_dir);
    if (!idx || !tmp || !c->dir || !c->setup_dir) {
        free(idx);
        free(tmp);
        return -1;
    }
    n = 0;
    for (size_t i = 0; i < net->nobs; i++)
        if (net->obs[i].kind == CAIRN_OBS_DIRECTION && net->obs[i].setup >= 0)
            idx[n++] = (int)i;
    sort_obs_idx(idx, tmp, n, net);
    c->ndir = 0;
    for (size_t i = 0; i < n;) {
        const cairn_obs *o0 = &net->obs[idx[i]];
        cairn_misc_dir *d = &c->dir[c->ndir++];
        d->setup = o0->setup;
        d->to = o0->to;
        d->first = idx[i];
        d->own = 0;
        /* Mean relative to the first reading, so that readings either side
         * of 0/2π average correctly. */
        double r0 = o0->value - (o0->face == 2 ? CAIRN_PI : 0.0), sum = 0.0, var = 0.0;
        int k = 0;
        for (; i < n && net->obs[idx[i]].setup == d->setup && net->obs[idx[i]].to == d->to;
             i++, k++) {
            const cairn_obs *o = &net->obs[idx[i]];
            double r = o->value - (o->face == 2 ? CAIRN_PI : 0.0);
            sum += cairn_wrap_pi(r - r0);
            int own;
            double s = reading_sigma(net, o, &own);
            var += s * s;
            d->own |= own;
        }
        d->n = k;
        d->dir = cairn_wrap_2pi(r0 + sum / k);
        d->var = var / ((double)k * k);
    }
    free(idx);
    free(tmp);
    qsort(c->dir, c->ndir, sizeof *c->dir, cmp_dir);
    for (size_t i = 0; i < c->ndir; i++)
        c->setup_dir[c->dir[i].setup + 1]++;
    for (size_t s = 0; s < net->nsetups; s++)
        c->setup_dir[s + 1] += c->setup_dir[s];
    return 0;
}

const cairn_misc_dir *cairn_misc_find_dir(const cairn_misc_ctx *c, int s, int to)
{
    for (size_t i = c->setup_dir[s]; i < c->setup_dir[s + 1]; i++)
        if (c->dir[i].to == to)
            return &c->dir[i];
    return NULL;
}

/* Distances: a slope with its sight's zenith becomes s·sin z (face-one z),
 * the horizontal distance the dimension-2 model uses (FORMAT.md "Models");
 * σ is the distance formula with the booked s. */
static int build_dists(cairn_misc_ctx *c)
{
    const cairn_net *net = c->net;
    size_t ns = (size_t)(net->nsights > 0 ? net->nsights : 0);
    int *zen = malloc((ns ? ns : 1) * sizeof *zen);
    c->dist = malloc((net->nobs ? net->nobs : 1) * sizeof *c->dist);
    if (!zen || !c->dist) {
        free(zen);
        return -1;
    }
    for (size_t i = 0; i < ns; i++)
        zen[i] = -1;
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *o = &net->obs[i];
        if (o->kind == CAIRN_OBS_ZENITH && o->sight >= 0 && (size_t)o->sight < ns &&
            zen[o->sight] < 0)
            zen[o->sight] = (int)i;
    }
    c->ndist = 0;
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *o = &net->obs[i];
        if ((o->kind != CAIRN_OBS_HORIZ && o->kind != CAIRN_OBS_SLOPE) || o->at < 0)
            continue;
        cairn_misc_dist *d = &c->dist[c->ndist++];
        d->obs = (int)i;
        d->at = o->at;
        d->to = o->to;
        double s = o->value * (1.0 + o->ppm * 1e-6); /* DEVELOPERS.md "ppm" */
        d->sigma = cairn_misc_sigma(net, o, s);
        d->len = s;
        d->reduced = o->kind == CAIRN_OBS_HORIZ;
        int zi = (o->kind == CAIRN_OBS_SLOPE && o->sight >= 0 && (size_t)o->sight < ns)
                     ? zen[o->sight] : -1;
        if (zi >= 0) {
            const cairn_obs *z = &net->obs[zi];
            double z1 = z->face == 2 ? TWO_PI - z->value : z->value;
            d->len = s * sin(z1);
            d->reduced = 1;
        }
    }
    free(zen);
    return 0;
}

/* ------------------------------------------------------------------ */
/* Face one against face two                                           */
/* ------------------------------------------------------------------ */

/* One sight: its hz and zen readings (net->obs indices or -1). */
typedef struct {
    int setup, to, face, first, hz, zen;
} sight_rec;

static int cmp_sight(const void *a, const void *b)
{
    const sight_rec *x = a, *y = b;
    if (x->setup != y->setup)
        return x->setup < y->setup ? -1 : 1;
    if (x->to != y->to)
        return x->to < y->to ? -1 : 1;
    if (x->face != y->face)
        return x->face < y->face ? -1 : 1;
    return x->first < y->first ? -1 : x->first > y->first;
}

static int face_row(cairn_misc_ctx *c, const sight_rec *f1, const sight_rec *f2,
                    int reading, cairn_face_error *fe)
{
    const cairn_net *net = c->net;
    const cairn_obs *a = &net->obs[reading == CAIRN_MISC_HZ ? f1->hz : f1->zen];
    const cairn_obs *b = &net->obs[reading == CAIRN_MISC_HZ ? f2->hz : f2->zen];
    cairn_misclosure it;
    cairn_misc_init(&it, CAIRN_MISC_FACE_PAIR);
    it.reading = reading;
    int own;
    double sa = reading_sigma(net, a, &own), sb = reading_sigma(net, b, &own);
    /* Difference of two independent readings: √(σ₁² + σ₂²), √2·σ for one
     * instrument. */
    it.expected_sd = sqrt(sa * sa + sb * sb);
    if (reading == CAIRN_MISC_HZ) {
        /* Face two reads the same line plus a half circle; what is left,
         * hz1 − (hz2 − π), is twice the collimation error. */
        it.misclosure = cairn_wrap_pi(a->value - (b->value - CAIRN_PI));
        fe->collimation = (fe->npairs_hz ? fe->collimation : 0.0) + it.misclosure / 2.0;
        fe->npairs_hz++;
    } else {
        /* z1 + z2 = 2π for a perfect index; the excess is twice the index
         * error. */
        it.misclosure = cairn_wrap_pi(a->value + b->value - TWO_PI);
        fe->index_error = (fe->npairs_zen ? fe->index_error : 0.0) + it.misclosure / 2.0;
        fe->npairs_zen++;
    }
    it.src = (a < b ? a : b)->src;
    int route[2] = {f1->setup >= 0 ? net->setups[f1->setup].at : -1, f1->to};
    return cairn_misc_add(c->res, &it, route, 2);
}

static int face_pairs(cairn_misc_ctx *c)
{
    const cairn_net *net = c->net;
    size_t ns = (size_t)(net->nsights > 0 ? net->nsights : 0);
    sight_rec *sr = malloc((ns ? ns : 1) * sizeof *sr);
    if (!sr)
        return -1;
    for (size_t i = 0; i < ns; i++)
        sr[i] = (sight_rec){-1, -1, 1, -1, -1, -1};
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *o = &net->obs[i];
        if (o->sight < 0 || (size_t)o->sight >= ns || o->setup < 0)
            continue;
        sight_rec *s = &sr[o->sight];
        if (s->first < 0) {
            s->first = (int)i;
            s->setup = o->setup;
            s->to = o->to;
            s->face = o->face;
        }
        if (o->kind == CAIRN_OBS_DIRECTION && s->hz < 0)
            s->hz = (int)i;
        if (o->kind == CAIRN_OBS_ZENITH && s->zen < 0)
            s->zen = (int)i;
    }
    qsort(sr, ns, sizeof *sr, cmp_sight);
    int rc = 0;
    size_t i = 0;
    while (i < ns && sr[i].first < 0)
        i++;
    while (i < ns && rc == 0) {
        int setup = sr[i].setup;
        cairn_face_error fe = {setup, 0, NAN, 0, NAN};
        for (; i < ns && sr[i].setup == setup && rc == 0;) {
            /* one target: face-one sights [i, j), face-two sights [j, k) */
            size_t j = i, k;
            while (j < ns && sr[j].setup == setup && sr[j].to == sr[i].to && sr[j].face == 1)
                j++;
            k = j;
            while (k < ns && sr[k].setup == setup && sr[k].to == sr[i].to)
                k++;
            for (size_t p = 0; p < j - i && p < k - j && rc == 0; p++) {
                const sight_rec *f1 = &sr[i + p], *f2 = &sr[j + p];
                if (f1->hz >= 0 && f2->hz >= 0)
                    rc = face_row(c, f1, f2, CAIRN_MISC_HZ, &fe);
                if (rc == 0 && f1->zen >= 0 && f2->zen >= 0)
                    rc = face_row(c, f1, f2, CAIRN_MISC_ZEN, &fe);
            }
            i = k;
        }
        if (rc == 0 && (fe.npairs_hz || fe.npairs_zen)) {
            if (fe.npairs_hz)
                fe.collimation /= fe.npairs_hz;
            if (fe.npairs_zen)
                fe.index_error /= fe.npairs_zen;
            cairn_misclosures *r = c->res;
            if (cairn_grow((void **)&r->face, &r->cap_face, r->nface + 1, sizeof *r->face))
                rc = -1;
            else
                r->face[r->nface++] = fe;
        }
    }
    free(sr);
    return rc;
}

/* ------------------------------------------------------------------ */
/* Agreement of direction sets at one mark                             */
/* ------------------------------------------------------------------ */

/* Every later set at a mark against the first. Each reduced direction is a
 * difference of two direction means, and the misclosure a difference of
 * two reduced directions, so its variance is the sum of the four means'
 * reading variances: 4σ²_dir, i.e. 2σ_dir, for single readings of one
 * instrument. Centring is left out: a fail may also mean the instrument
 * was centred differently between the sets. */
static int set_pair(cairn_misc_ctx *c, int s0, int s)
{
    const cairn_net *net = c->net;
    const cairn_misc_dir *r0 = NULL, *r = NULL;
    for (size_t i = c->setup_dir[s0]; i < c->setup_dir[s0 + 1] && !r; i++)
        if ((r = cairn_misc_find_dir(c, s, c->dir[i].to)))
            r0 = &c->dir[i];
    if (!r)
        return 0;
    for (size_t i = c->setup_dir[s0]; i < c->setup_dir[s0 + 1]; i++) {
        const cairn_misc_dir *t0 = &c->dir[i], *t;
        if (t0 == r0 || !(t = cairn_misc_find_dir(c, s, t0->to)))
            continue;
        cairn_misclosure it;
        cairn_misc_init(&it, CAIRN_MISC_SET_AGREEMENT);
        it.misclosure = cairn_wrap_pi((t->dir - r->dir) - (t0->dir - r0->dir));
        it.expected_sd = sqrt(r0->var + t0->var + r->var + t->var);
        int first = r0->first < t0->first ? r0->first : t0->first;
        it.src = net->obs[first].src;
        int route[3] = {net->setups[s].at, r0->to, t0->to};
        if (cairn_misc_add(c->res, &it, route, 3))
            return -1;
    }
    return 0;
}

static int set_agreement(cairn_misc_ctx *c)
{
    const cairn_net *net = c->net;
    /* first setup (with directions) at each mark */
    int *first = malloc((net->nmarks ? net->nmarks : 1) * sizeof *first);
    if (!first)
        return -1;
    for (size_t m = 0; m < net->nmarks; m++)
        first[m] = -1;
    for (size_t s = 0; s < net->nsetups; s++) {
        int at = net->setups[s].at;
        if (c->setup_dir[s] == c->setup_dir[s + 1] || at < 0)
            continue;
        if (first[at] < 0)
            first[at] = (int)s;
        else if (set_pair(c, first[at], (int)s)) {
            free(first);
            return -1;
        }
    }
    free(first);
    return 0;
}

/* ------------------------------------------------------------------ */
/* Repeated distances                                                  */
/* ------------------------------------------------------------------ */

typedef struct {
    int lo, hi, reduced;
    double hlo, hhi;   /* slope without zenith: ih/th at the lo and hi ends */
    const cairn_misc_dist *d;
} dist_key;

static int cmp_dist_key(const void *a, const void *b)
{
    const dist_key *x = a, *y = b;
    if (x->lo != y->lo) return x->lo < y->lo ? -1 : 1;
    if (x->hi != y->hi) return x->hi < y->hi ? -1 : 1;
    if (x->reduced != y->reduced) return x->reduced > y->reduced ? -1 : 1;
    if (x->hlo != y->hlo) return x->hlo < y->hlo ? -1 : 1;
    if (x->hhi != y->hhi) return x->hhi < y->hhi ? -1 : 1;
    return x->d->obs < y->d->obs ? -1 : x->d->obs > y->d->obs;
}

static int same_line(const dist_key *a, const dist_key *b)
{
    return a->lo == b->lo && a->hi == b->hi && a->reduced == b->reduced &&
           a->hlo == b->hlo && a->hhi == b->hhi;
}

/* The spread max − min of one line's distances, against the σ of the
 * difference of the two readings that make it, √(σ_max² + σ_min²)
 * (√2·σ_d for one instrument). With more than two readings this treats the
 * range as one difference, which is slightly strict. */
static int repeat_distances(cairn_misc_ctx *c)
{
    const cairn_net *net = c->net;
    dist_key *k = malloc((c->ndist ? c->ndist : 1) * sizeof *k);
    if (!k)
        return -1;
    for (size_t i = 0; i < c->ndist; i++) {
        const cairn_misc_dist *d = &c->dist[i];
        const cairn_obs *o = &net->obs[d->obs];
        int fwd = d->at < d->to;
        k[i].lo = fwd ? d->at : d->to;
        k[i].hi = fwd ? d->to : d->at;
        k[i].reduced = d->reduced;
        k[i].hlo = d->reduced ? 0.0 : (fwd ? o->ih : o->th);
        k[i].hhi = d->reduced ? 0.0 : (fwd ? o->th : o->ih);
        k[i].d = d;
    }
    qsort(k, c->ndist, sizeof *k, cmp_dist_key);
    int rc = 0;
    for (size_t i = 0, j; i < c->ndist && rc == 0; i = j) {
        for (j = i + 1; j < c->ndist && same_line(&k[i], &k[j]); j++)
            ;
        if (j - i < 2)
            continue;
        const cairn_misc_dist *mx = k[i].d, *mn = k[i].d;
        double sum = 0.0;
        for (size_t q = i; q < j; q++) {
            sum += k[q].d->len;
            if (k[q].d->len > mx->len) mx = k[q].d;
            if (k[q].d->len < mn->len) mn = k[q].d;
        }
        cairn_misclosure it;
        cairn_misc_init(&it, CAIRN_MISC_REPEAT_DISTANCE);
        it.misclosure = mx->len - mn->len;
        it.length = sum / (double)(j - i);
        if (mx->sigma > 0.0 && mn->sigma > 0.0)
            it.expected_sd = sqrt(mx->sigma * mx->sigma + mn->sigma * mn->sigma);
        it.src = net->obs[k[i].d->obs].src; /* lowest index: sorted last by obs */
        int route[2] = {k[i].d->at, k[i].d->to};
        rc = cairn_misc_add(c->res, &it, route, 2);
    }
    free(k);
    return rc;
}

/* ------------------------------------------------------------------ */
/* Driver                                                              */
/* ------------------------------------------------------------------ */

int cairn_misclosures_compute(const cairn_net *net, cairn_misclosures **pres,
                              cairn_error *err)
{
    *pres = NULL;
    cairn_misc_ctx c;
    memset(&c, 0, sizeof c);
    c.net = net;
    c.res = calloc(1, sizeof *c.res);
    int rc = c.res ? 0 : -1;
    if (rc == 0) rc = build_dirs(&c);
    if (rc == 0) rc = build_dists(&c);
    /* Row order: levelling, traverses, face pairs, sets, distances. */
    if (rc == 0) rc = cairn_misc_levelling(&c);
    if (rc == 0) rc = cairn_misc_traverses(&c);
    if (rc == 0) rc = face_pairs(&c);
    if (rc == 0) rc = set_agreement(&c);
    if (rc == 0) rc = repeat_distances(&c);
    free(c.dir);
    free(c.setup_dir);
    free(c.dist);
    if (rc) {
        cairn_misclosures_free(&c.res);
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    }
    *pres = c.res;
    return 0;
}
