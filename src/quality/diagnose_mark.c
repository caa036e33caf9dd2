/* Hypotheses that change the geometry rather than a booked number: a wrong
 * target height, and a sight taken to another mark than the one booked.
 *
 * Both compare changes of computed values at the adjusted state. For a
 * wrong mark m the blunder implied in reading j is c_j(m) − c_j(booked):
 * the difference of the two computed values, not obs − c_j(m), because
 * the state itself was pulled by the blunder (orientation, station) much
 * as both computed values are, and ∇̂ = obs − (clean prediction for the
 * booked mark) already undoes that pull (the same first-order argument
 * as in diagnose.c). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "diagnose_int.h"

/* The problem observations of o's sight: one sight's readings are
 * consecutive in the problem (problem.c keeps the booked order). */
void cairn_dg_sight_range(const cairn_diag_ctx *c, size_t *plo, size_t *phi)
{
    const cairn_problem *p = c->p;
    size_t lo = c->iobs, hi = c->iobs;
    int s = c->o->sight;
    if (s >= 0) {
        while (lo > 0 && p->obs[lo - 1].sight == s)
            lo--;
        while (hi + 1 < p->nobs && p->obs[hi + 1].sight == s)
            hi++;
    }
    *plo = lo;
    *phi = hi;
}

/* ---- target height -------------------------------------------------------- */

/* Dimension 3: th enters a sight only through Δz = h_to + th − h_at − ih,
 * so ∂/∂th = ∂/∂h_to, and a booked th that is Δ short of the real one
 * gives blunders ∇_i = ∂_i·Δ in the zenith angle and in the slope
 * distance together. Δ is their weighted least-squares estimate. A single
 * reading always fits some Δ exactly, so the hypothesis is formed only
 * when each of the two readings would show this Δ by itself at the 3 sd
 * level (common practice, no source); otherwise a zenith blunder on a
 * flat sight would pass for a height. */
void cairn_diag_target_height(cairn_diag_ctx *c)
{
    const cairn_problem *p = c->p;
    const cairn_obs *o = c->o;
    if (p->dimension != 3 || o->sight < 0 ||
        (o->kind != CAIRN_OBS_ZENITH && o->kind != CAIRN_OBS_SLOPE))
        return;
    cairn_obs_kind other = o->kind == CAIRN_OBS_ZENITH ? CAIRN_OBS_SLOPE : CAIRN_OBS_ZENITH;
    size_t lo, hi, j = (size_t)-1;
    cairn_dg_sight_range(c, &lo, &hi);
    for (size_t i = lo; i <= hi; i++)
        if (p->obs[i].kind == other)
            j = i;
    if (j == (size_t)-1 || !isfinite(c->nabla[j]) || !(c->sd[j] > 0))
        return;
    cairn_lin l1, l2;
    if (cairn_obs_linearise(p, o, c->x, &l1) || cairn_obs_linearise(p, &p->obs[j], c->x, &l2))
        return;
    const double a1 = l1.d[CAIRN_PAR_H_TO], a2 = l2.d[CAIRN_PAR_H_TO];
    const double w1 = 1.0 / (c->sdn * c->sdn), w2 = 1.0 / (c->sd[j] * c->sd[j]);
    const double den = a1 * a1 * w1 + a2 * a2 * w2;
    if (!(den > 0))
        return;
    const double d = (a1 * c->nab * w1 + a2 * c->nabla[j] * w2) / den;
    if (fabs(a1 * d) < CAIRN_DIAG_FIT_MAX * c->sdn && fabs(a2 * d) < CAIRN_DIAG_FIT_MAX * c->sd[j])
        return;
    const char *how = "zen and slope agree";
    double digit_corr = NAN;
    if (fabs(a1 * d) < CAIRN_DIAG_FIT_MAX * c->sdn ||
        fabs(a2 * d) < CAIRN_DIAG_FIT_MAX * c->sd[j]) {
        /* Only one of the two readings shows the height change: on a flat
         * sight a wrong th moves the zenith angle a lot and the slope
         * distance hardly at all. Then a zenith blunder of any origin
         * would fit some Δ, so ask for more: the corrected th must differ
         * from the booked one in a single digit whose place value is large
         * against the uncertainty of Δ (a pencil slip such as 1.600 for
         * 1.700), and the other reading must not contradict it (common
         * practice, no source). */
        const double sdd = 1.0 / sqrt(den);
        double place = 0;
        for (double pv = 1.0; pv >= 0.01 && place == 0.0; pv /= 10) {
            double k = round(d / pv);
            if (fabs(k) >= 1 && fabs(k) <= 9 && fabs(d - k * pv) <= CAIRN_DIAG_FIT_MAX * sdd &&
                CAIRN_DIAG_FIT_MAX * sdd < 0.5 * pv) {
                /* one digit: the booked digit at that place plus k stays 0..9 */
                double digit = fmod(floor(fabs(o->th) / pv + 1e-9), 10.0);
                if (digit + k >= 0 && digit + k <= 9)
                    place = pv;
            }
        }
        if (place == 0.0)
            return;
        how = "one digit of th; the zenith angle shows it";
        digit_corr = o->th + round(d / place) * place;
    }
    /* A target 5 m off its booked height is not a slip of the pencil
     * (common practice, no source). */
    if (fabs(d) > 5.0)
        return;
    double f1 = cairn_diag_fit(c, c->iobs, a1 * d), f2 = cairn_diag_fit(c, j, a2 * d);
    cairn_diag_cand k;
    memset(&k, 0, sizeof k);
    k.kind = CAIRN_DIAG_TARGET_HEIGHT;
    k.mark = -1;
    k.fit = sqrt(f1 * f1 + f2 * f2);
    k.corr = isfinite(digit_corr) ? digit_corr : o->th + d;
    k.key = "th";
    k.decimals = 3;
    const int bi = p->booked[c->iobs];
    if (!cairn_booked_text_cached(&p->net->obs[bi], "th", k.booked, sizeof k.booked, c->text))
        k.decimals = cairn_diag_decimals(k.booked);
    const double f = cairn_length_factor(p->net->length_unit);
    cairn_dg_printf(k.what, sizeof k.what, "target %+.3f %s, %s",
             d / f, cairn_length_unit_name(p->net->length_unit), how);
    cairn_diag_offer(c, &k);
}

/* ---- wrong mark ------------------------------------------------------------ */

enum { ROLE_TO, ROLE_FROM };

static int *role_ptr(cairn_obs *o, int role)
{
    return role == ROLE_TO ? &o->to : &o->from;
}

/* The station the sight or run starts from, for the search radius. */
static int station_of(const cairn_obs *o)
{
    return o->at >= 0 ? o->at : o->from;
}

static double plane_dist(const cairn_state *x, int a, int b)
{
    return hypot(x->e[b] - x->e[a], x->n[b] - x->n[a]);
}

static void try_mark(cairn_diag_ctx *c, size_t lo, size_t hi, int role, int m)
{
    const cairn_problem *p = c->p;
    double worst = 0.0;
    char what[64] = "";
    size_t wl = 0;
    for (size_t j = lo; j <= hi; j++) {
        if (j != c->iobs && (!isfinite(c->nabla[j]) || !(c->sd[j] > 0)))
            continue; /* an unchecked reading confirms nothing */
        cairn_obs o2 = p->obs[j];
        cairn_lin lb, lm;
        if (cairn_obs_linearise(p, &o2, c->x, &lb))
            return;
        *role_ptr(&o2, role) = m;
        if (cairn_obs_linearise(p, &o2, c->x, &lm))
            return;
        double b = lm.value - lb.value;
        if (cairn_obs_kind_angular(o2.kind))
            b = cairn_wrap_pi(b);
        double f = cairn_diag_fit(c, j, b);
        if (!(f < INFINITY))
            return;
        worst = fmax(worst, f);
        if (wl < sizeof what)
            wl += (size_t)snprintf(what + wl, sizeof what - wl, "%s%s %.1f", wl ? ", " : "",
                                   cairn_obs_kind_name(o2.kind), f);
    }
    cairn_diag_cand k;
    memset(&k, 0, sizeof k);
    k.kind = CAIRN_DIAG_WRONG_MARK;
    k.mark = m;
    k.fit = worst;
    k.corr = NAN;
    cairn_dg_printf(k.what, sizeof k.what, "%s%s sd", role == ROLE_FROM ? "as backsight: " : "", what);
    cairn_diag_offer(c, &k);
}

/* ---- the grid of marks ----------------------------------------------------- */

void cairn_mark_grid_clear(cairn_mark_grid *g)
{
    free(g->start);
    free(g->marks);
    memset(g, 0, sizeof *g);
}

/* Cell index of coordinate v on an axis of n cells (clamped). Monotonic
 * in v, so every mark within [v − r, v + r] lies in the cells from
 * cell(v − r) to cell(v + r). */
static int cell(double v, double v0, double h, int n)
{
    double c = floor((v - v0) / h);
    return c < 0 ? 0 : c >= (double)n ? n - 1 : (int)c;
}

int cairn_mark_grid_build(const cairn_state *x, size_t nmarks, cairn_mark_grid *g)
{
    memset(g, 0, sizeof *g);
    if (!x->e || !x->n || nmarks == 0 || nmarks > (size_t)1 << 30)
        return 0;
    double emin = INFINITY, emax = -INFINITY, nmin = INFINITY, nmax = -INFINITY;
    size_t k = 0;
    for (size_t m = 0; m < nmarks; m++)
        if (isfinite(x->e[m]) && isfinite(x->n[m])) {
            emin = fmin(emin, x->e[m]);
            emax = fmax(emax, x->e[m]);
            nmin = fmin(nmin, x->n[m]);
            nmax = fmax(nmax, x->n[m]);
            k++;
        }
    if (k == 0)
        return 0;
    /* about two marks per cell over the bounding box */
    double w = fmax(emax - emin, 1.0), hgt = fmax(nmax - nmin, 1.0);
    double h = sqrt(w * hgt / (0.5 * (double)k));
    h = fmax(h, fmax(w, hgt) / 4096.0);
    int nx = (int)fmin(floor(w / h) + 1, 4096.0), ny = (int)fmin(floor(hgt / h) + 1, 4096.0);
    size_t nc = (size_t)nx * (size_t)ny;
    g->start = calloc(nc + 1, sizeof *g->start);
    g->marks = malloc(k * sizeof *g->marks);
    size_t *fill = malloc(nc * sizeof *fill);
    if (!g->start || !g->marks || !fill) {
        free(fill);
        cairn_mark_grid_clear(g);
        return -1;
    }
    g->e0 = emin;
    g->n0 = nmin;
    g->h = h;
    g->nx = nx;
    g->ny = ny;
    for (size_t m = 0; m < nmarks; m++)
        if (isfinite(x->e[m]) && isfinite(x->n[m]))
            g->start[(size_t)cell(x->n[m], nmin, h, ny) * (size_t)nx +
                     (size_t)cell(x->e[m], emin, h, nx) + 1]++;
    for (size_t c = 0; c < nc; c++)
        g->start[c + 1] += g->start[c];
    memcpy(fill, g->start, nc * sizeof *fill);
    for (size_t m = 0; m < nmarks; m++)
        if (isfinite(x->e[m]) && isfinite(x->n[m]))
            g->marks[fill[(size_t)cell(x->n[m], nmin, h, ny) * (size_t)nx +
                          (size_t)cell(x->e[m], emin, h, nx)]++] = (int)m;
    free(fill);
    return 0;
}

static int cmp_int(const void *a, const void *b)
{
    int u = *(const int *)a, v = *(const int *)b;
    return (u > v) - (u < v);
}

/* The marks within radius of station st, in increasing number, from the
 * grid; NULL (scan everything) when there is no grid or the square of the
 * radius covers more cells than there are marks. *pk: how many. */
static int *near_marks(const cairn_mark_grid *g, const cairn_state *x, int st,
                       double radius, size_t nmarks, size_t *pk)
{
    if (!g || !g->start || !(radius < INFINITY))
        return NULL;
    double e = x->e[st], n = x->n[st];
    int x0 = cell(e - radius, g->e0, g->h, g->nx), x1 = cell(e + radius, g->e0, g->h, g->nx);
    int y0 = cell(n - radius, g->n0, g->h, g->ny), y1 = cell(n + radius, g->n0, g->h, g->ny);
    size_t cells = (size_t)(x1 - x0 + 1) * (size_t)(y1 - y0 + 1);
    if (cells > nmarks)
        return NULL;
    size_t cnt = 0;
    for (int cy = y0; cy <= y1; cy++) {
        size_t c = (size_t)cy * (size_t)g->nx;
        cnt += g->start[c + (size_t)x1 + 1] - g->start[c + (size_t)x0];
    }
    int *out = malloc((cnt ? cnt : 1) * sizeof *out);
    if (!out)
        return NULL;
    size_t k = 0;
    for (int cy = y0; cy <= y1; cy++) {
        size_t c = (size_t)cy * (size_t)g->nx;
        for (size_t q = g->start[c + (size_t)x0]; q < g->start[c + (size_t)x1 + 1]; q++)
            if (plane_dist(x, st, g->marks[q]) <= radius)
                out[k++] = g->marks[q];
    }
    qsort(out, k, sizeof *out, cmp_int);
    *pk = k;
    return out;
}

/* Every other mark near the station is tried in place of the booked one
 * (O(marks)); each reading of the sight must fit it. The search radius,
 * three times the booked sight's length and at least 100 m, keeps marks
 * that nobody could have sighted by mistake out of the contest (common
 * practice, no source); a run without plane coordinates searches all.
 * cairn_diagnoses_make passes a grid of the marks, so a national network
 * visits the few cells around the station instead of every mark. */
void cairn_diag_wrong_mark(cairn_diag_ctx *c)
{
    const cairn_obs *o = c->o;
    const cairn_net *net = c->p->net;
    const cairn_state *x = c->x;
    if (o->kind == CAIRN_OBS_CONTROL_E || o->kind == CAIRN_OBS_CONTROL_N ||
        o->kind == CAIRN_OBS_CONTROL_H)
        return;
    size_t lo, hi;
    cairn_dg_sight_range(c, &lo, &hi);
    int two = o->kind == CAIRN_OBS_ANGLE || o->kind == CAIRN_OBS_RISE;
    for (int role = ROLE_TO; role <= (two ? ROLE_FROM : ROLE_TO); role++) {
        int st = role == ROLE_FROM && o->kind == CAIRN_OBS_RISE ? o->to : station_of(o);
        int booked = role == ROLE_TO ? o->to : o->from;
        double radius = INFINITY;
        if (st >= 0 && booked >= 0 && x->e && x->n) {
            double d = plane_dist(x, st, booked);
            if (isfinite(d))
                radius = fmax(3.0 * d, 100.0);
        }
        /* the same marks in the same order either way: those within the
         * radius, by increasing number */
        size_t nnear = 0;
        int *near = near_marks(c->grid, x, st, radius, net->nmarks, &nnear);
        if (near) {
            for (size_t q = 0; q < nnear; q++) {
                int mi = near[q];
                if (mi != o->at && mi != o->from && mi != o->to)
                    try_mark(c, lo, hi, role, mi);
            }
            free(near);
            continue;
        }
        for (size_t m = 0; m < net->nmarks; m++) {
            int mi = (int)m;
            if (mi == o->at || mi == o->from || mi == o->to)
                continue;
            if (radius < INFINITY && !(plane_dist(x, st, mi) <= radius))
                continue;
            try_mark(c, lo, hi, role, mi);
        }
    }
}
