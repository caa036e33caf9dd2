/* Checks made before anything is factorised, by counting and connectivity
 * (DESIGN.md "Datum"): starting coordinates present, every connected part
 * of the plane and height networks has its own datum, and every mark has
 * at least as many observations as unknown coordinates. These are
 * necessary conditions only; a geometric singularity they cannot see is
 * caught as a zero pivot of the factorisation (normal.c). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "solve_int.h"

#define LIST_SHOWN 8

/* Append "A, B, C and 4 more" (the marks m with sel(m) true) to buf. */
typedef int (*mark_pred)(const void *ctx, size_t m);

static size_t list_marks(const cairn_net *net, mark_pred sel, const void *ctx,
                         char *buf, size_t n)
{
    size_t count = 0, len = 0;
    buf[0] = 0;
    for (size_t m = 0; m < net->nmarks; m++) {
        if (!sel(ctx, m))
            continue;
        if (count < LIST_SHOWN && len < n) {
            int w = snprintf(buf + len, n - len, "%s%s", count ? ", " : "",
                             net->marks[m].id);
            if (w > 0)
                len += (size_t)w;
        }
        count++;
    }
    if (count > LIST_SHOWN && len < n)
        snprintf(buf + len, n - len, " and %zu more", count - LIST_SHOWN);
    return count;
}

typedef struct {
    const cairn_adjustment *adj;
} starts_ctx;

static int lacks_start(const void *ctx, size_t m)
{
    const cairn_adjustment *adj = ((const starts_ctx *)ctx)->adj;
    return (adj->in_adj[m] & ~(adj->net->marks[m].given | adj->net->marks[m].computed)) != 0;
}

int cairn_solve_check_starts(const cairn_adjustment *adj, cairn_error *err)
{
    char list[400];
    starts_ctx c = {adj};
    size_t k = list_marks(adj->net, lacks_start, &c, list, sizeof list);
    if (!k)
        return 0;
    cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "no starting coordinates for %s (give e, n and h, or "
                    "observations that reach them)", list);
    return CAIRN_SOLVE_ESTART;
}

/* ---- connectivity ------------------------------------------------------ */

static int uf_find(int *parent, int i)
{
    while (parent[i] != i) {
        parent[i] = parent[parent[i]];
        i = parent[i];
    }
    return i;
}

static void uf_union(int *parent, int a, int b)
{
    a = uf_find(parent, a);
    b = uf_find(parent, b);
    if (a != b)
        parent[a > b ? a : b] = a < b ? a : b;
}

/* The marks of an observation taking part in the plane (want = CAIRN_E) or
 * height (CAIRN_H) part, by its parameter mask. Returns how many (≤ 3). */
static int obs_marks(const cairn_obs *o, int dimension, unsigned want, int *ms)
{
    unsigned mask = cairn_solve_kind_pars(o->kind, dimension);
    int k = 0;
    for (int role = 0; role < 3; role++) {
        int par = 3 * role + (want == CAIRN_E ? 0 : 2);
        if (!(mask & (1u << par)))
            continue;
        unsigned comp;
        int m = cairn_solve_par_mark(o, par, &comp);
        if (m >= 0)
            ms[k++] = m;
    }
    return k;
}

typedef struct {
    const int *parent_root;  /* root per mark */
    const unsigned *in_adj;
    unsigned part;
    int root;
} comp_ctx;

static int in_component(const void *ctx, size_t m)
{
    const comp_ctx *c = ctx;
    return (c->in_adj[m] & c->part) && c->parent_root[m] == c->root;
}

/* One part (plane or height): components, their control, their messages. */
static int check_part(const cairn_adjustment *adj, unsigned part, cairn_error *err)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    size_t nm = net->nmarks;
    int *parent = malloc((nm ? nm : 1) * sizeof *parent);
    /* per root: bit 1 position control, 2 azimuth, 4 distance; count of
     * controlled marks */
    unsigned *flags = calloc(nm ? nm : 1, sizeof *flags);
    int *ncontrol = calloc(nm ? nm : 1, sizeof *ncontrol);
    unsigned *ctl = calloc(nm ? nm : 1, sizeof *ctl);
    int *pivot = malloc((nm ? nm : 1) * sizeof *pivot); /* a controlled mark per root */
    if (!parent || !flags || !ncontrol || !ctl || !pivot) {
        free(parent); free(flags); free(ncontrol); free(ctl); free(pivot);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    for (size_t m = 0; m < nm; m++)
        parent[m] = (int)m;
    /* weighted control, from the control pseudo-observations */
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        if (o->at < 0)
            continue;
        if (o->kind == CAIRN_OBS_CONTROL_E) ctl[o->at] |= CAIRN_E;
        if (o->kind == CAIRN_OBS_CONTROL_N) ctl[o->at] |= CAIRN_N;
        if (o->kind == CAIRN_OBS_CONTROL_H) ctl[o->at] |= CAIRN_H;
    }
    for (size_t i = 0; i < p->nobs; i++) {
        int ms[3];
        int k = obs_marks(&p->obs[i], p->dimension, part, ms);
        for (int j = 1; j < k; j++)
            uf_union(parent, ms[0], ms[j]);
    }
    for (size_t m = 0; m < nm; m++)
        parent[m] = uf_find(parent, (int)m);
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        int ms[3];
        if (obs_marks(o, p->dimension, part, ms) < 1)
            continue;
        if (o->kind == CAIRN_OBS_AZIMUTH)
            flags[parent[ms[0]]] |= 2;
        if (o->kind == CAIRN_OBS_HORIZ || o->kind == CAIRN_OBS_SLOPE)
            flags[parent[ms[0]]] |= 4;
    }
    /* Control of each component: held or weighted components in held mode,
     * the minimal constraints in free mode. */
    int ncomp = 0, first_fixed = 0;
    for (size_t m = 0; m < nm; m++) {
        if (!(adj->in_adj[m] & part))
            continue;
        if (parent[m] == (int)m)
            ncomp++;
        unsigned c = adj->datum_free
                         ? adj->fixed[m]
                         : (net->marks[m].hold & adj->in_adj[m]) | ctl[m];
        /* free mode: only the first fixed mark (A) carries a position; a
         * second part holding B would still float in translation */
        if ((c & part) && !(adj->datum_free && first_fixed)) {
            flags[parent[m]] |= 1;
            if (!ncontrol[parent[m]])
                pivot[parent[m]] = (int)m;
            ncontrol[parent[m]]++;
            first_fixed = 1;
        }
    }
    int rc = 0;
    const char *what = part == CAIRN_E ? "plane" : "height";
    for (size_t r = 0; r < nm && !cairn_error_full(err); r++) {
        if (parent[r] != (int)r || !(adj->in_adj[r] & part))
            continue;
        int no_pos = !(flags[r] & 1);
        int one_pos = part == CAIRN_E && !adj->datum_free && ncontrol[r] == 1;
        int no_rot = one_pos && !(flags[r] & 2);
        int no_scale = one_pos && !(flags[r] & 4);
        if (!no_pos && !no_rot && !no_scale)
            continue;
        /* name the part only now: listing is linear in the marks */
        char list[400], where[480];
        comp_ctx cc = {parent, adj->in_adj, part, (int)r};
        size_t count = list_marks(net, in_component, &cc, list, sizeof list);
        if (ncomp == 1)
            snprintf(where, sizeof where, "the %s network", what);
        else
            snprintf(where, sizeof where, "the %s part of %zu mark%s (%s)", what,
                     count, count == 1 ? "" : "s", list);
        if (no_pos) {
            if (ncomp > 1 && adj->datum_free)
                rc = cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "datum defect: %s is not connected to the rest by %s "
                    "observations and floats", where, what);
            else if (ncomp > 1)
                rc = cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "datum defect: %s is not connected by %s observations to "
                    "any held or weighted mark (hold or weight one of them, or "
                    "connect it)", where, what);
            else if (part == CAIRN_E)
                rc = cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "datum defect: %s has no fixed position (hold a mark, "
                    "weight one with sd-en, or use --datum free)", where);
            else
                rc = cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "datum defect: %s has no fixed height (hold a height, "
                    "weight one with sd-h, or use --datum free)", where);
            continue;
        }
        /* one controlled position: rotation and scale must come from the
         * observations */
        /* name the one controlled mark: it is what the part turns about
         * or scales from, and what the user must look at */
        const char *pid = net->marks[pivot[r]].id;
        if (no_rot)
            rc = cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                "datum defect: %s has no fixed orientation (hold a second mark, "
                "or observe an azimuth): it can turn about %s, its only held or "
                "weighted mark", where, pid);
        if (no_scale)
            rc = cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                "datum defect: %s has no scale (observe a distance, or hold a "
                "second mark): it can shrink or grow about %s, its only held or "
                "weighted mark", where, pid);
    }
    free(parent);
    free(flags);
    free(ncontrol);
    free(ctl);
    free(pivot);
    return rc ? CAIRN_SOLVE_EDATUM : 0;
}

/* ---- per-mark counting ------------------------------------------------- */

static const cairn_src *mark_src(const cairn_mark *m)
{
    return m->def.line > 0 ? &m->def : &m->ref;
}

static int check_counts(const cairn_adjustment *adj, cairn_error *err)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    size_t nm = net->nmarks;
    int *nd = cairn_solve_directions_per_setup(adj);
    int *cplane = calloc(nm ? nm : 1, sizeof *cplane);
    int *cheight = calloc(nm ? nm : 1, sizeof *cheight);
    unsigned *kinds = calloc(nm ? nm : 1, sizeof *kinds);
    int *nsingle = calloc(nm ? nm : 1, sizeof *nsingle);
    if (!nd || !cplane || !cheight || !kinds || !nsingle) {
        free(nd); free(cplane); free(cheight); free(kinds); free(nsingle);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    /* Each observation gives one condition. A setup's orientation takes one
     * condition from its directions: a direction to a mark from a setup
     * with no other direction determines nothing, and k directions at a
     * station give it k − 1 conditions (resection). */
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        int ms[3];
        int k = obs_marks(o, p->dimension, CAIRN_E, ms);
        int single = o->kind == CAIRN_OBS_DIRECTION && o->setup >= 0 &&
                     nd[o->setup] < 2;
        for (int j = 0; j < k; j++) {
            if (single) {
                /* named in the message, so that "0 observations" does not
                 * contradict a direction the user can see in the book */
                if (ms[j] == o->to)
                    nsingle[ms[j]]++;
                continue;
            }
            cplane[ms[j]]++;
            kinds[ms[j]] |= 1u << o->kind;
        }
        k = obs_marks(o, p->dimension, CAIRN_H, ms);
        for (int j = 0; j < k; j++)
            cheight[ms[j]]++;
    }
    for (size_t s = 0; s < net->nsetups; s++)
        if (nd[s] >= 2 && net->setups[s].at >= 0)
            cplane[net->setups[s].at]--;
    int rc = 0;
    for (size_t m = 0; m < nm; m++) {
        int need_p = (adj->unk_mark[3 * m] >= 0) + (adj->unk_mark[3 * m + 1] >= 0);
        int need_h = adj->unk_mark[3 * m + 2] >= 0;
        const cairn_src *src = mark_src(&net->marks[m]);
        if (need_p && cplane[m] < need_p) {
            char kl[200] = "";
            size_t len = 0;
            for (int k = 0; k < CAIRN_OBS_NKINDS && len < sizeof kl; k++)
                if (kinds[m] & (1u << k)) {
                    int w = snprintf(kl + len, sizeof kl - len, "%s%s", len ? ", " : "",
                                     cairn_obs_kind_name((cairn_obs_kind)k));
                    if (w > 0)
                        len += (size_t)w;
                }
            char single[160] = "";
            if (nsingle[m])
                snprintf(single, sizeof single, "; %s %d direction%s from a setup "
                         "with no other direction, which only orient%s that setup",
                         cplane[m] > 0 ? "besides, it has" : "it has", nsingle[m],
                         nsingle[m] == 1 ? "" : "s", nsingle[m] == 1 ? "s" : "");
            rc = cairn_error_add(err, CAIRN_SEV_ERROR, src->file, src->line,
                src->col, "mark %s is not determined: %d independent plane "
                "observation%s%s%s%s for %d unknown coordinate%s%s", net->marks[m].id,
                cplane[m] > 0 ? cplane[m] : 0, cplane[m] == 1 ? "" : "s",
                len ? " (" : "", kl, len ? ")" : "", need_p, need_p == 1 ? "" : "s",
                single);
        }
        if (need_h && cheight[m] < 1)
            rc = cairn_error_add(err, CAIRN_SEV_ERROR, src->file, src->line,
                src->col, "mark %s is not determined: its height is in the "
                "adjustment but no height observation reaches it", net->marks[m].id);
    }
    free(nd); free(cplane); free(cheight); free(kinds); free(nsingle);
    return rc ? CAIRN_SOLVE_EDATUM : 0;
}

/* ---- coincident marks ---------------------------------------------- */

/* Two marks of one plane observation at the same starting position: the
 * azimuth and the plane distance between them have no derivative there
 * (equations.c), so nothing can be linearised. Found here by looking, for
 * every observation, at the legs its equation needs — before any
 * iteration, and also when every mark is held (no iteration at all) —
 * and named with the shared position (issue #9: a copied mark line, or
 * one mark booked under two names). Exact equality only: marks a
 * millimetre apart are a legitimate, if weak, geometry. */
static int check_coincident(const cairn_adjustment *adj, cairn_error *err)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    double lf = cairn_length_factor(net->length_unit);
    int rc = 0;
    for (size_t i = 0; i < p->nobs && !cairn_error_full(err); i++) {
        const cairn_obs *o = &p->obs[i];
        int legs[2][2] = {{-1, -1}, {-1, -1}};
        switch (o->kind) {
        case CAIRN_OBS_DIRECTION: case CAIRN_OBS_HORIZ: case CAIRN_OBS_ZENITH:
            legs[0][0] = o->at; legs[0][1] = o->to;
            break;
        case CAIRN_OBS_ANGLE:
            legs[0][0] = o->at; legs[0][1] = o->to;
            legs[1][0] = o->at; legs[1][1] = o->from;
            break;
        case CAIRN_OBS_AZIMUTH:
            legs[0][0] = o->from; legs[0][1] = o->to;
            break;
        default: /* slope: defined for a plumb line; heights: no plane leg */
            continue;
        }
        for (int k = 0; k < 2; k++) {
            int a = legs[k][0], b = legs[k][1];
            if (a < 0 || b < 0 || (size_t)a >= net->nmarks || (size_t)b >= net->nmarks ||
                a == b)
                continue;
            const cairn_mark *ma = &net->marks[a], *mb = &net->marks[b];
            unsigned ka = ma->given | ma->computed, kb = mb->given | mb->computed;
            if ((ka & (CAIRN_E | CAIRN_N)) != (CAIRN_E | CAIRN_N) ||
                (kb & (CAIRN_E | CAIRN_N)) != (CAIRN_E | CAIRN_N) ||
                ma->e != mb->e || ma->n != mb->n)
                continue;
            rc = cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line,
                                 o->src.col, "this %s cannot be computed: marks %s and "
                                 "%s have the same starting plane position (e %.4f, "
                                 "n %.4f %s): coincident marks, or one mark booked "
                                 "under two names?", cairn_obs_kind_name(o->kind),
                                 ma->id, mb->id, ma->e / lf, ma->n / lf,
                                 cairn_length_unit_name(net->length_unit));
            break;
        }
    }
    return rc ? CAIRN_SOLVE_EGEOM : 0;
}

int cairn_solve_check_datum(const cairn_adjustment *adj, cairn_error *err)
{
    int rc = 0, r;
    if ((r = check_coincident(adj, err)) < 0)
        return r; /* the counts below would only repeat it less clearly */
    if ((r = check_part(adj, CAIRN_E, err)) < 0) rc = r;
    if (rc == CAIRN_SOLVE_ENOMEM) return rc;
    if ((r = check_part(adj, CAIRN_H, err)) < 0) rc = r;
    if (rc == CAIRN_SOLVE_ENOMEM) return rc;
    if ((r = check_counts(adj, err)) < 0) rc = r;
    return rc;
}
