/* Relative precision of the pairs of marks joined by an observation and
 * the tolerance check (DESIGN.md "Precision"; FORMAT.md `tolerance`).
 *
 * The covariance of the coordinate differences of marks i and j is
 * Qii + Qjj − Qij − Qji. Every Qij needed lies in the pattern of the
 * factor, because the observation joining i and j puts N(i, j) ≠ 0 and the
 * factor's pattern contains N's; should an entry be missing all the same,
 * the pair is reported unavailable rather than computed from a dense
 * column (DESIGN.md "Performance"). */
#include <math.h>
#include <stdlib.h>

#include "analysis_int.h"

typedef struct {
    int a, b;
    size_t obs;
} link;

static int cmp_link(const void *x, const void *y)
{
    const link *p = x, *q = y;
    if (p->a != q->a)
        return p->a < q->a ? -1 : 1;
    if (p->b != q->b)
        return p->b < q->b ? -1 : 1;
    return p->obs < q->obs ? -1 : p->obs > q->obs;
}

static void add_link(link *l, size_t *n, int i, int j, size_t obs)
{
    if (i < 0 || j < 0 || i == j)
        return;
    l[*n].a = i < j ? i : j;
    l[*n].b = i < j ? j : i;
    l[*n].obs = obs;
    (*n)++;
}

/* Variance of x_j − x_i for unknowns ui, uj (-1: not an unknown, no
 * variance); NAN when an entry is outside the selected inverse. */
static double dvar(const cairn_selinv *Z, int ui, int uj, int vi, int vj)
{
    double s = 0, x;
    if (ui >= 0 && vi >= 0) {
        if (cairn_selinv_get(Z, ui, vi, &x))
            return NAN;
        s += x;
    }
    if (uj >= 0 && vj >= 0) {
        if (cairn_selinv_get(Z, uj, vj, &x))
            return NAN;
        s += x;
    }
    if (ui >= 0 && vj >= 0) {
        if (cairn_selinv_get(Z, ui, vj, &x))
            return NAN;
        s -= x;
    }
    if (uj >= 0 && vi >= 0) {
        if (cairn_selinv_get(Z, uj, vi, &x))
            return NAN;
        s -= x;
    }
    return s;
}

static void pair_precision(cairn_analysis *an, const cairn_selinv *Z, cairn_pair *pr)
{
    const cairn_adjustment *adj = an->adj;
    const int *ui = &adj->unk_mark[3 * (size_t)pr->from];
    const int *uj = &adj->unk_mark[3 * (size_t)pr->to];
    double vf = an->variance_factor;
    unsigned ti = adj->in_adj[pr->from], tj = adj->in_adj[pr->to];
    pr->plane = (ti & CAIRN_E) && (tj & CAIRN_E);
    pr->height = (ti & CAIRN_H) && (tj & CAIRN_H);
    pr->available = 1;
    pr->distance = pr->sd_dh = pr->dh_interval = pr->allowed = NAN;
    pr->ellipse.a = pr->ellipse.b = pr->ellipse.azimuth = NAN;
    pr->pass = -1;
    if (pr->plane) {
        pr->distance = hypot(adj->e[pr->to] - adj->e[pr->from],
                             adj->n[pr->to] - adj->n[pr->from]);
        double qee = Z ? dvar(Z, ui[0], uj[0], ui[0], uj[0]) : 0;
        double qen = Z ? dvar(Z, ui[0], uj[0], ui[1], uj[1]) : 0;
        double qnn = Z ? dvar(Z, ui[1], uj[1], ui[1], uj[1]) : 0;
        if (!isfinite(qee) || !isfinite(qen) || !isfinite(qnn)) {
            pr->available = 0;
            return;
        }
        if (cairn_ellipse2(vf * qee, vf * qen, vf * qnn, an->k2, &pr->ellipse) == 0 &&
            an->has_tolerance)
            pr->pass = cairn_tolerance_check(pr->ellipse.a, pr->distance, an->tol_a,
                                             an->tol_ppm, &pr->allowed);
    }
    if (pr->height) {
        double qhh = Z ? dvar(Z, ui[2], uj[2], ui[2], uj[2]) : 0;
        if (!isfinite(qhh)) {
            pr->available = 0;
            return;
        }
        pr->sd_dh = sqrt(fmax(0.0, vf * qhh));
        pr->dh_interval = an->k1 * pr->sd_dh;
    }
}

int cairn_qa_pairs(cairn_analysis *an, const cairn_selinv *Z)
{
    const cairn_problem *p = an->adj->prob;
    link *l = malloc((2 * p->nobs + 1) * sizeof *l);
    if (!l)
        return -1;
    size_t nl = 0;
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        /* the marks an observation joins: the station with each target
         * (sights, angles), or from with to (azimuths, rises) */
        if (o->at >= 0) {
            add_link(l, &nl, o->at, o->from, i);
            add_link(l, &nl, o->at, o->to, i);
        } else {
            add_link(l, &nl, o->from, o->to, i);
        }
    }
    qsort(l, nl, sizeof *l, cmp_link);
    size_t np = 0;
    for (size_t k = 0; k < nl; k++)
        np += k == 0 || l[k].a != l[k - 1].a || l[k].b != l[k - 1].b;
    an->pairs = calloc(np ? np : 1, sizeof *an->pairs);
    if (!an->pairs) {
        free(l);
        return -1;
    }
    an->npairs = 0;
    an->tolerance_pass = -1;
    an->tolerance_failed = 0;
    an->npairs_unavailable = 0;
    for (size_t k = 0; k < nl; k++) {
        if (k > 0 && l[k].a == l[k - 1].a && l[k].b == l[k - 1].b)
            continue;
        cairn_pair *pr = &an->pairs[an->npairs++];
        pr->from = l[k].a;
        pr->to = l[k].b;
        pr->obs = (int)l[k].obs;
        pair_precision(an, Z, pr);
        if (!pr->available)
            an->npairs_unavailable++;
        if (pr->pass == 0)
            an->tolerance_failed++;
        if (pr->pass >= 0)
            an->tolerance_pass = an->tolerance_pass == 0 ? 0 : pr->pass;
    }
    free(l);
    return 0;
}
