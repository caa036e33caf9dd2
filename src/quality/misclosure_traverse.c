/* Traverse misclosures, found automatically in the booked setups.
 *
 * A leg joins marks P and Q when a setup at P has a direction to Q, a
 * setup at Q one to P, and some sight between them has a horizontal
 * distance (horiz, or slope·sin z). A traverse starts at a mark with a
 * held position whose setup also sights another held mark (the starting
 * orientation), follows legs through unheld marks that have exactly two
 * legs (a junction ends the search: that needs an adjustment), and ends at
 * a held mark whose setup sights a held mark other than the last station
 * (the closing orientation), or back at its start, closing on the first
 * backsight. Each station uses its first setup that has both directions.
 *
 * Computation (the usual traverse computation; Ghilani & Wolf, "Elementary
 * Surveying", 13th ed., Pearson, the traverse chapters, from memory):
 * azimuths are carried with the measured angles from the held starting
 * azimuth, coordinates with the mean leg distances (times `scale`, grid =
 * booked × scale as in FORMAT.md "Models"), with no balancing of angles:
 *   angular misclosure = carried − known closing azimuth, wrapped;
 *   linear misclosure  = |carried − held end position|,
 *   precision          = 1 : (Σ legs / linear misclosure).
 *
 * Expected SD, treating the angles and distances as independent:
 *   σ_angle²  = the angle formula of FORMAT.md "Models" with the reading
 *               variances of the two direction means: σ_b² + σ_f² +
 *               c²(1/d₁² + 1/d₂²) + c²·d₃²/(d₁²d₂²), d₃ by the law of
 *               cosines; when a direction has its own hz-sd, the two
 *               directions' variances (own sd, or σ_dir² + 2c²/d²) added;
 *   σ_ang²    = Σ σ_angle² over all stations, start and end included;
 *   σ_lin²    ≈ Σ σ_Dᵢ² + Σ (σ_angle,ᵢ · Rᵢ)², Rᵢ the distance from
 *               station i to the end: each angle turns the rest of the
 *               traverse about its station. This is a common
 *               approximation (Ghilani & Wolf, "Elementary Surveying",
 *               traverse chapter, from memory): it ignores the
 *               correlation of centring between neighbouring angles and
 *               treats the 2-D closure vector's length like one normal
 *               variable.
 * In a closed traverse the first and last angles share the backsight
 * reading, which then cancels; counting it in both overstates σ_ang² by
 * twice that reading's variance (the check errs slightly towards passing).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "misclosure_int.h"

typedef struct {
    int lo, hi;
    unsigned dirs;          /* 1: lo sights hi, 2: hi sights lo */
    double sum, var;        /* Σ horizontal lengths and Σσ² */
    int k;                  /* distances averaged */
    int first;              /* first distance reading */
} pair_rec;

typedef struct {
    cairn_misc_ctx *c;
    pair_rec *leg;  size_t nleg;
    size_t *adj0;   int *adj;     /* legs at each mark */
    unsigned char *used;
    size_t *ms0;    int *ms;      /* setups at each mark, in setup order */
    int *st;        /* stations of the chain being walked */
    int *route;
} trav_ctx;

static int cmp_pair(const void *a, const void *b)
{
    const pair_rec *x = a, *y = b;
    if (x->lo != y->lo) return x->lo < y->lo ? -1 : 1;
    if (x->hi != y->hi) return x->hi < y->hi ? -1 : 1;
    return x->first < y->first ? -1 : x->first > y->first;
}

static int held_en(const cairn_net *net, int m)
{
    const unsigned EN = CAIRN_E | CAIRN_N;
    return m >= 0 && (net->marks[m].hold & EN) == EN && (net->marks[m].given & EN) == EN;
}

static pair_rec pair_of(int a, int b)
{
    pair_rec p;
    memset(&p, 0, sizeof p);
    p.lo = a < b ? a : b;
    p.hi = a < b ? b : a;
    p.first = -1;
    return p;
}

/* Legs from the direction means and the horizontal distances. */
static int build_legs(trav_ctx *T)
{
    cairn_misc_ctx *c = T->c;
    const cairn_net *net = c->net;
    size_t n = c->ndir + c->ndist;
    pair_rec *p = malloc((n ? n : 1) * sizeof *p);
    if (!p)
        return -1;
    size_t k = 0;
    for (size_t i = 0; i < c->ndir; i++) {
        int at = net->setups[c->dir[i].setup].at, to = c->dir[i].to;
        if (at == to)
            continue;
        p[k] = pair_of(at, to);
        p[k].dirs = at < to ? 1u : 2u;
        p[k].first = c->dir[i].first;
        k++;
    }
    for (size_t i = 0; i < c->ndist; i++) {
        const cairn_misc_dist *d = &c->dist[i];
        if (!d->reduced || d->at == d->to)
            continue;
        p[k] = pair_of(d->at, d->to);
        p[k].sum = d->len * net->opt.scale;
        p[k].var = d->sigma > 0.0 ? d->sigma * d->sigma : NAN;
        p[k].k = 1;
        p[k].first = d->obs;
        k++;
    }
    qsort(p, k, sizeof *p, cmp_pair);
    T->nleg = 0;
    for (size_t i = 0, j; i < k; i = j) {
        pair_rec m = p[i];
        int fd = m.k ? m.first : -1;
        for (j = i + 1; j < k && p[j].lo == m.lo && p[j].hi == m.hi; j++) {
            m.dirs |= p[j].dirs;
            if (p[j].k && fd < 0)
                fd = p[j].first;
            m.sum += p[j].sum;
            m.var += p[j].var;
            m.k += p[j].k;
        }
        if (m.dirs == 3u && m.k > 0) {
            m.first = fd;
            p[T->nleg++] = m;
        }
    }
    T->leg = p;
    size_t nm = net->nmarks;
    T->adj0 = calloc(nm + 2, sizeof *T->adj0);
    T->adj = malloc((2 * T->nleg + 1) * sizeof *T->adj);
    T->used = calloc(T->nleg + 1, 1);
    T->st = malloc((nm + 2) * sizeof *T->st);
    T->route = malloc((nm + 4) * sizeof *T->route);
    size_t *fill = calloc(nm + 1, sizeof *fill);
    if (!T->adj0 || !T->adj || !T->used || !T->st || !T->route || !fill) {
        free(fill);
        return -1;
    }
    for (size_t i = 0; i < T->nleg; i++) {
        T->adj0[T->leg[i].lo + 1]++;
        T->adj0[T->leg[i].hi + 1]++;
    }
    for (size_t m = 0; m < nm; m++)
        T->adj0[m + 1] += T->adj0[m];
    for (size_t i = 0; i < T->nleg; i++) {
        T->adj[T->adj0[T->leg[i].lo] + fill[T->leg[i].lo]++] = (int)i;
        T->adj[T->adj0[T->leg[i].hi] + fill[T->leg[i].hi]++] = (int)i;
    }
    free(fill);
    /* setups by mark */
    T->ms0 = calloc(nm + 2, sizeof *T->ms0);
    T->ms = malloc((net->nsetups + 1) * sizeof *T->ms);
    fill = calloc(nm + 1, sizeof *fill);
    if (!T->ms0 || !T->ms || !fill) {
        free(fill);
        return -1;
    }
    for (size_t s = 0; s < net->nsetups; s++)
        T->ms0[net->setups[s].at + 1]++;
    for (size_t m = 0; m < nm; m++)
        T->ms0[m + 1] += T->ms0[m];
    for (size_t s = 0; s < net->nsetups; s++) {
        int at = net->setups[s].at;
        T->ms[T->ms0[at] + fill[at]++] = (int)s;
    }
    free(fill);
    return 0;
}

static int leg_other(const pair_rec *l, int m)
{
    return l->lo == m ? l->hi : l->lo;
}

static int leg_between(const trav_ctx *T, int a, int b)
{
    for (size_t i = T->adj0[a]; i < T->adj0[a + 1]; i++)
        if (leg_other(&T->leg[T->adj[i]], a) == b)
            return T->adj[i];
    return -1;
}

/* The first setup at mark m with directions to both b and f; when f < 0,
 * to b and to the first held mark (reading order) other than b and avoid,
 * returned in *pf. -1 when none. */
static int station_setup(const trav_ctx *T, int m, int b, int f, int avoid, int *pf)
{
    const cairn_misc_ctx *c = T->c;
    const cairn_net *net = c->net;
    for (size_t q = T->ms0[m]; q < T->ms0[m + 1]; q++) {
        size_t s = (size_t)T->ms[q];
        if (!cairn_misc_find_dir(c, (int)s, b))
            continue;
        if (f >= 0) {
            if (cairn_misc_find_dir(c, (int)s, f))
                return (int)s;
            continue;
        }
        for (size_t i = c->setup_dir[s]; i < c->setup_dir[s + 1]; i++) {
            int t = c->dir[i].to;
            if (t != b && t != avoid && t != m && held_en(net, t)) {
                *pf = t;
                return (int)s;
            }
        }
    }
    return -1;
}

static double azimuth(const cairn_net *net, int a, int b)
{
    return cairn_wrap_2pi(atan2(net->marks[b].e - net->marks[a].e,
                                net->marks[b].n - net->marks[a].n));
}

static double mark_dist(const cairn_net *net, int a, int b)
{
    return hypot(net->marks[b].e - net->marks[a].e, net->marks[b].n - net->marks[a].n);
}

/* Variance of the angle at setup s from backsight db (length d1) to
 * foresight df (length d2); see the top of the file. */
static double angle_var(const cairn_misc_ctx *c, int s, const cairn_misc_dir *db,
                        const cairn_misc_dir *df, double d1, double d2)
{
    double cc = cairn_misc_centring(c->net, s), c2 = cc * cc;
    double v = db->var + df->var;
    if (c2 == 0.0 || !(d1 > 0.0) || !(d2 > 0.0))
        return v;
    if (!db->own && !df->own) {
        double ang = df->dir - db->dir;
        double d3sq = d1 * d1 + d2 * d2 - 2.0 * d1 * d2 * cos(ang);
        return v + c2 * (1.0 / (d1 * d1) + 1.0 / (d2 * d2)) + c2 * d3sq / (d1 * d1 * d2 * d2);
    }
    if (!db->own)
        v += 2.0 * c2 / (d1 * d1);
    if (!df->own)
        v += 2.0 * c2 / (d2 * d2);
    return v;
}

static void first_of(int *first, int idx)
{
    if (idx >= 0 && (*first < 0 || idx < *first))
        *first = idx;
}

/* Compute and emit traverse st[0..n] (n legs). Returns 0 also when it is
 * not a traverse after all (a station lacks a suitable setup). */
static int compute(trav_ctx *T, size_t n)
{
    cairn_misc_ctx *c = T->c;
    const cairn_net *net = c->net;
    const int *st = T->st;
    int loop = st[n] == st[0];
    int rs = -1, re = -1;
    int s0 = station_setup(T, st[0], st[1], -1, loop ? st[n - 1] : -1, &rs);
    if (s0 < 0)
        return 0;
    int sn = loop ? station_setup(T, st[n], st[n - 1], rs, -1, &re)
                  : station_setup(T, st[n], st[n - 1], -1, -1, &re);
    if (sn < 0)
        return 0;
    if (loop)
        re = rs;
    int first = -1;
    double az = azimuth(net, st[0], rs);  /* held starting orientation */
    double e = net->marks[st[0]].e, nn = net->marks[st[0]].n;
    double len = 0.0, var_ang = 0.0, var_lin = 0.0;
    double *ce = malloc((n + 1) * 2 * sizeof *ce);
    double *avar = malloc((n + 1) * sizeof *avar);
    if (!ce || !avar) {
        free(ce);
        free(avar);
        return -1;
    }
    double dback = mark_dist(net, st[0], rs);
    int back = rs;
    for (size_t i = 0; i <= n; i++) {
        int s = i == 0 ? s0 : i == n ? sn : station_setup(T, st[i], st[i - 1], st[i + 1], -1, NULL);
        int fore = i == n ? re : st[i + 1];
        const cairn_misc_dir *db = s >= 0 ? cairn_misc_find_dir(c, s, back) : NULL;
        const cairn_misc_dir *df = s >= 0 ? cairn_misc_find_dir(c, s, fore) : NULL;
        if (!db || !df) {
            free(ce);
            free(avar);
            return 0;
        }
        first_of(&first, db->first);
        first_of(&first, df->first);
        /* forward azimuth = back azimuth + (foresight − backsight) */
        az = cairn_wrap_2pi(az + (df->dir - db->dir));
        const pair_rec *leg = i < n ? &T->leg[leg_between(T, st[i], st[i + 1])] : NULL;
        double d = leg ? leg->sum / leg->k : mark_dist(net, st[n], re);
        avar[i] = angle_var(c, s, db, df, dback, d);
        var_ang += avar[i];
        ce[2 * i] = e;
        ce[2 * i + 1] = nn;
        if (leg) {
            e += d * sin(az);
            nn += d * cos(az);
            len += d;
            var_lin += leg->var / ((double)leg->k * leg->k);
            first_of(&first, leg->first);
            az = cairn_wrap_2pi(az + CAIRN_PI); /* back azimuth at the next station */
            back = st[i];
            dback = d;
        }
    }
    const cairn_mark *end = &net->marks[st[n]];
    for (size_t i = 0; i < n; i++) {
        double r = hypot(end->e - ce[2 * i], end->n - ce[2 * i + 1]);
        var_lin += avar[i] * r * r;
    }
    free(ce);
    free(avar);

    cairn_misclosure it;
    cairn_misc_init(&it, CAIRN_MISC_TRAVERSE_ANGULAR);
    it.misclosure = cairn_wrap_pi(az - azimuth(net, st[n], re));
    it.expected_sd = var_ang > 0.0 ? sqrt(var_ang) : NAN;
    it.length = len;
    it.src = net->obs[first].src;
    T->route[0] = rs;
    memcpy(T->route + 1, st, (n + 1) * sizeof *st);
    T->route[n + 2] = re;
    if (cairn_misc_add(c->res, &it, T->route, n + 3))
        return -1;
    cairn_misc_init(&it, CAIRN_MISC_TRAVERSE_LINEAR);
    it.de = e - end->e;
    it.dn = nn - end->n;
    it.misclosure = hypot(it.de, it.dn);
    it.expected_sd = var_lin > 0.0 ? sqrt(var_lin) : NAN;
    it.length = len;
    it.precision = it.misclosure > 0.0 ? len / it.misclosure : INFINITY;
    it.src = net->obs[first].src;
    return cairn_misc_add(c->res, &it, st, n + 1);
}

/* Walk the chain that leaves held mark a along leg l; legs walked are
 * marked used, so that the same chain is not walked back from its end. */
static int walk(trav_ctx *T, int a, int l)
{
    const cairn_net *net = T->c->net;
    size_t n = 0;
    T->st[0] = a;
    int cur = a;
    for (;;) {
        T->used[l] = 1;
        cur = leg_other(&T->leg[l], cur);
        T->st[++n] = cur;
        if (held_en(net, cur))
            break;
        size_t deg = T->adj0[cur + 1] - T->adj0[cur];
        if (deg != 2 || n > net->nmarks)
            return 0; /* junction or dead end: no traverse here */
        int l0 = T->adj[T->adj0[cur]], l1 = T->adj[T->adj0[cur] + 1];
        l = l0 == l ? l1 : l0;
        if (T->used[l])
            return 0;
    }
    return compute(T, n);
}

int cairn_misc_traverses(cairn_misc_ctx *c)
{
    const cairn_net *net = c->net;
    trav_ctx T;
    memset(&T, 0, sizeof T);
    T.c = c;
    int rc = build_legs(&T);
    for (size_t m = 0; rc == 0 && m < net->nmarks; m++) {
        if (!held_en(net, (int)m))
            continue;
        for (size_t i = T.adj0[m]; rc == 0 && i < T.adj0[m + 1]; i++)
            if (!T.used[T.adj[i]])
                rc = walk(&T, (int)m, T.adj[i]);
    }
    free(T.leg);
    free(T.adj0);
    free(T.adj);
    free(T.used);
    free(T.ms0);
    free(T.ms);
    free(T.st);
    free(T.route);
    return rc;
}
