/* Starting plane positions (issue #4), grown outward from the marks with
 * coordinates in waves: each wave evaluates the marks next to what the
 * last wave fixed, against the knowledge at the start of the wave (so the
 * result does not depend on the order inside a wave and every way that
 * reaches a mark in the same wave counts), then fixes them all at once
 * and orients the setups that now can be. A mark is evaluated only when
 * something next to it changed, so the work is linear in the
 * observations (bounded per mark by START_MAX_GATHER).
 *
 * The ways to a mark P (Ghilani & Wolf, "Elementary Surveying", 13th ed.,
 * coordinate geometry chapters; from memory):
 *   - a ray: an azimuth from a known mark to P — a direction from an
 *     oriented setup, an azimuth observation (reversed by π when booked
 *     from P), or an angle at a known mark from (to) another known mark;
 *   - a distance from a known mark (horizontal, or reduced from a slope);
 *   - polar point (radiation): a ray and a distance from the same mark;
 *   - intersection: rays from two different marks;
 *   - trilateration: distances from two different marks (two circle
 *     points, chosen by the other observations);
 *   - resection: directions from P's own setup to three or more marks.
 * All candidates go into one median (start.c, cairn_start_choose).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "start_int.h"

#define EN (CAIRN_E | CAIRN_N)
#define MAX_RES_SETUPS 4
/* Cut angles below about 6° (sin 0.1) give no useful intersection (common
 * practice, no source). */
#define MIN_CUT 0.1

typedef struct {
    int org, obs, sight;
    double t;
} ray_t;

typedef struct {
    int org, obs, sight;
    double d;
} dist_t;

/* What the known marks say about P at this moment. */
typedef struct {
    ray_t ray[START_MAX_GATHER];
    dist_t dist[START_MAX_GATHER];
    int setups[MAX_RES_SETUPS]; /* setups at P with directions */
    int nray, ndist, nsetup;
    int nunoriented;            /* directions from known, unoriented setups */
} gather_t;

typedef struct {
    int mark;
    double e, n;
    int obs1, obs2, ncand, kind, ref1, ref2;
} result_t;

static int valid(const start_ctx *c, int m)
{
    return m >= 0 && (size_t)m < c->nm;
}

/* A booked direction turned face one: face two reads hz + π
 * (DEVELOPERS.md "Face two"), so the azimuth is hz' + ω. */
static double hz1(const start_ctx *c, int i)
{
    double hz = c->net->obs[i].value;
    return cairn_start_face2(c, i) ? cairn_wrap_2pi(hz - CAIRN_PI) : hz;
}

static void gather(const start_ctx *c, int P, gather_t *g)
{
    const cairn_net *net = c->net;
    g->nray = g->ndist = g->nsetup = g->nunoriented = 0;
    for (size_t k = c->adj_off[P]; k < c->adj_off[P + 1]; k++) {
        int i = c->adj[k];
        const cairn_obs *o = &net->obs[i];
        int org = -1;
        double t = 0.0;
        switch (o->kind) {
        case CAIRN_OBS_DIRECTION:
            if (o->to == P && o->at != P && cairn_start_known_en(c, o->at) && o->setup >= 0 &&
                (size_t)o->setup < c->ns) {
                if (c->oriented[o->setup]) {
                    org = o->at;
                    t = hz1(c, i) + c->omega[o->setup];
                } else {
                    g->nunoriented++;
                }
            } else if (o->at == P && o->setup >= 0 && (size_t)o->setup < c->ns) {
                int j = 0;
                while (j < g->nsetup && g->setups[j] != o->setup)
                    j++;
                if (j == g->nsetup && g->nsetup < MAX_RES_SETUPS)
                    g->setups[g->nsetup++] = o->setup;
            }
            break;
        case CAIRN_OBS_AZIMUTH:
            if (o->to == P && o->from != P && cairn_start_known_en(c, o->from)) {
                org = o->from;
                t = o->value;
            } else if (o->from == P && o->to != P && cairn_start_known_en(c, o->to)) {
                org = o->to; /* booked from P: the ray back is t + π */
                t = o->value + CAIRN_PI;
            }
            break;
        case CAIRN_OBS_ANGLE:
            /* FORMAT.md: angle = t(A→T) − t(A→F). */
            if (o->to == P && o->at != P && o->from != P && cairn_start_known_en(c, o->at) &&
                cairn_start_known_en(c, o->from)) {
                org = o->at;
                t = cairn_start_azimuth(c->e[o->at], c->n[o->at], c->e[o->from],
                                        c->n[o->from]) + o->value;
            } else if (o->from == P && o->at != P && o->to != P && cairn_start_known_en(c, o->at) &&
                       cairn_start_known_en(c, o->to)) {
                org = o->at;
                t = cairn_start_azimuth(c->e[o->at], c->n[o->at], c->e[o->to],
                                        c->n[o->to]) - o->value;
            }
            break;
        case CAIRN_OBS_HORIZ:
        case CAIRN_OBS_SLOPE: {
            int other = o->at == P ? o->to : o->at;
            double d;
            int approx;
            if (other != P && cairn_start_known_en(c, other) && g->ndist < START_MAX_GATHER &&
                !cairn_start_plane_length(c, i, &d, &approx)) {
                dist_t *dd = &g->dist[g->ndist++];
                dd->org = other;
                dd->obs = i;
                dd->sight = o->sight;
                dd->d = d;
            }
            break;
        }
        default:
            break;
        }
        if (org >= 0 && g->nray < START_MAX_GATHER) {
            ray_t *r = &g->ray[g->nray++];
            r->org = org;
            r->obs = i;
            r->sight = o->sight;
            r->t = cairn_wrap_2pi(t);
        }
    }
}

/* Directions of setup s (at P) to distinct known marks, face one. */
static size_t setup_targets(const start_ctx *c, int P, int s, double *E, double *N,
                            double *hz, int *tgt)
{
    size_t k = 0;
    for (size_t a = c->set_off[s]; a < c->set_off[s + 1] && k < START_MAX_GATHER; a++) {
        int i = c->set_obs[a];
        const cairn_obs *o = &c->net->obs[i];
        if (o->kind != CAIRN_OBS_DIRECTION || o->setup != s || o->at != P ||
            o->to == P || !cairn_start_known_en(c, o->to))
            continue;
        size_t j = 0;
        while (j < k && tgt[j] != o->to)
            j++;
        if (j < k)
            continue; /* a repeated target: its first reading is enough */
        tgt[k] = o->to;
        E[k] = c->e[o->to];
        N[k] = c->n[o->to];
        hz[k] = hz1(c, i);
        k++;
    }
    return k;
}

/* Orient setup s from its directions to known marks: the circular median
 * of t − hz' (robust against one wrong target). Returns 1 when done. */
static int orient(start_ctx *c, int s)
{
    int A = c->net->setups[s].at;
    if (c->oriented[s] || !cairn_start_known_en(c, A))
        return 0;
    double w[START_MAX_GATHER];
    size_t k = 0;
    for (size_t a = c->set_off[s]; a < c->set_off[s + 1] && k < START_MAX_GATHER; a++) {
        int i = c->set_obs[a];
        const cairn_obs *o = &c->net->obs[i];
        if (o->kind != CAIRN_OBS_DIRECTION || o->setup != s || o->at != A ||
            o->to == A || !cairn_start_known_en(c, o->to))
            continue;
        double t = cairn_start_azimuth(c->e[A], c->n[A], c->e[o->to], c->n[o->to]);
        w[k++] = cairn_wrap_2pi(t - hz1(c, i));
    }
    if (!k)
        return 0;
    c->omega[s] = cairn_start_circ_median(w, k);
    c->oriented[s] = 1;
    return 1;
}

/* Scores of the two circle points of a trilateration against other
 * evidence; returns 0 or 1 for a clear choice, -1 when none. A score is a
 * sum of misfits; a choice is clear when one point fits at least three
 * times better and the other misfits noticeably (1e-3 rad, 0.01 m;
 * common practice, no source). */
static int decide(const double sc[2], double floor)
{
    double lo = sc[0] < sc[1] ? sc[0] : sc[1], hi = sc[0] < sc[1] ? sc[1] : sc[0];
    if (hi > floor && lo * 3.0 < hi)
        return sc[0] < sc[1] ? 0 : 1;
    return -1;
}

static int choose_circle(const start_ctx *c, int P, const gather_t *g,
                         const start_cand *cand, size_t k0, int ia, int ib,
                         double x[2][2])
{
    double sc[2] = {0.0, 0.0};
    if (k0 > 0) { /* nearest to the median of the other kinds of way */
        double ve[START_MAX_CAND], vn[START_MAX_CAND];
        for (size_t i = 0; i < k0; i++) {
            ve[i] = cand[i].e;
            vn[i] = cand[i].n;
        }
        double me = cairn_start_median(ve, k0), mn = cairn_start_median(vn, k0);
        for (int j = 0; j < 2; j++)
            sc[j] = hypot(x[j][0] - me, x[j][1] - mn);
        int r = decide(sc, 0.01);
        if (r >= 0)
            return r;
    }
    sc[0] = sc[1] = 0.0; /* rays from known marks */
    for (int r = 0; r < g->nray; r++)
        for (int j = 0; j < 2; j++) {
            const ray_t *ry = &g->ray[r];
            double t = cairn_start_azimuth(c->e[ry->org], c->n[ry->org], x[j][0], x[j][1]);
            sc[j] += fabs(cairn_wrap_pi(t - ry->t));
        }
    int r = g->nray ? decide(sc, 1e-3) : -1;
    if (r >= 0)
        return r;
    sc[0] = sc[1] = 0.0; /* P's own setups: orientations must agree */
    int any = 0;
    for (int s = 0; s < g->nsetup; s++) {
        double E[START_MAX_GATHER], N[START_MAX_GATHER], hz[START_MAX_GATHER];
        int tgt[START_MAX_GATHER];
        size_t k = setup_targets(c, P, g->setups[s], E, N, hz, tgt);
        if (k < 2)
            continue;
        any = 1;
        for (int j = 0; j < 2; j++) {
            double w0 = cairn_start_azimuth(x[j][0], x[j][1], E[0], N[0]) - hz[0];
            for (size_t t = 1; t < k; t++) {
                double w = cairn_start_azimuth(x[j][0], x[j][1], E[t], N[t]) - hz[t];
                sc[j] += fabs(cairn_wrap_pi(w - w0));
            }
        }
    }
    r = any ? decide(sc, 1e-3) : -1;
    if (r >= 0)
        return r;
    sc[0] = sc[1] = 0.0; /* distances from third marks */
    any = 0;
    for (int d = 0; d < g->ndist; d++) {
        const dist_t *dd = &g->dist[d];
        if (dd->org == g->dist[ia].org || dd->org == g->dist[ib].org)
            continue;
        any = 1;
        for (int j = 0; j < 2; j++)
            sc[j] += fabs(hypot(x[j][0] - c->e[dd->org], x[j][1] - c->n[dd->org]) - dd->d);
    }
    return any ? decide(sc, 0.01) : -1;
}

static void add_cand(start_cand *cand, size_t *pk, double e, double n, double sd,
                     int obs1, int obs2, int kind, int ref1, int ref2)
{
    if (*pk >= START_MAX_CAND || !isfinite(e) || !isfinite(n))
        return;
    start_cand *x = &cand[(*pk)++];
    x->e = e;
    x->n = n;
    x->h = 0.0;
    x->sd = sd;
    x->obs1 = obs1;
    x->obs2 = obs2;
    x->kind = kind;
    x->ref1 = ref1;
    x->ref2 = ref2;
}

/* All candidate positions for P; 1 with *res when there is at least one.
 * Without allow_amb a trilateration with no way to choose its side is
 * left out and *pamb set, so that the mark waits for more evidence. */
static int eval(start_ctx *c, int P, int allow_amb, result_t *res, int *pamb)
{
    gather_t g;
    start_cand cand[START_MAX_CAND];
    size_t k = 0;
    gather(c, P, &g);
    *pamb = 0;

    /* Polar points: each ray with the distance of its own sight, else the
     * first one from the same mark; then each distance left over with the
     * first ray from its mark. */
    unsigned char used[START_MAX_GATHER] = {0};
    for (int r = 0; r < g.nray; r++) {
        int best = -1;
        for (int d = 0; d < g.ndist; d++) {
            if (g.dist[d].org != g.ray[r].org)
                continue;
            if (g.ray[r].sight >= 0 && g.dist[d].sight == g.ray[r].sight) {
                best = d;
                break;
            }
            if (best < 0 || (used[best] && !used[d]))
                best = d;
        }
        if (best < 0)
            continue;
        used[best] = 1;
        const ray_t *ry = &g.ray[r];
        double D = g.dist[best].d;
        double sd = hypot(cairn_start_obs_sd(c, g.dist[best].obs, D),
                          D * cairn_start_obs_sd(c, ry->obs, D) * 1.4142);
        add_cand(cand, &k, c->e[ry->org] + D * sin(ry->t), c->n[ry->org] + D * cos(ry->t),
                 sd, ry->obs, g.dist[best].obs, START_POLAR, ry->org, -1);
    }
    for (int d = 0; d < g.ndist; d++) {
        if (used[d])
            continue;
        for (int r = 0; r < g.nray; r++) {
            if (g.ray[r].org != g.dist[d].org)
                continue;
            const ray_t *ry = &g.ray[r];
            double D = g.dist[d].d;
            double sd = hypot(cairn_start_obs_sd(c, g.dist[d].obs, D),
                              D * cairn_start_obs_sd(c, ry->obs, D) * 1.4142);
            add_cand(cand, &k, c->e[ry->org] + D * sin(ry->t),
                     c->n[ry->org] + D * cos(ry->t), sd, ry->obs, g.dist[d].obs,
                     START_POLAR, ry->org, -1);
            break;
        }
    }

    /* Intersections: each ray with the next one from another mark, while
     * fewer than three ways are known. Every way built from one reading
     * repeats that reading's blunder, so combining everything with
     * everything would let one bad reading outvote the good ones; three
     * independent-enough ways are what a median needs to outvote one. */
    int nint = 0;
    for (int r = 0; r < g.nray && nint < 8 && k < 3; r++)
        for (int q = r + 1; q < g.nray; q++) {
            const ray_t *a = &g.ray[r], *b = &g.ray[q];
            double e, n, sn, u1, u2;
            if (a->org == b->org ||
                cairn_start_intersect(c->e[a->org], c->n[a->org], a->t, c->e[b->org],
                                      c->n[b->org], b->t, &e, &n, &sn, &u1, &u2) ||
                sn < MIN_CUT)
                continue;
            double s1 = u1 * cairn_start_obs_sd(c, a->obs, u1);
            double s2 = u2 * cairn_start_obs_sd(c, b->obs, u2);
            add_cand(cand, &k, e, n, 1.4142 * hypot(s1, s2) / sn, a->obs, b->obs,
                     START_INTERSECT, a->org, b->org);
            nint++;
            break;
        }

    /* Resection from each of P's setups with three or more known marks
     * (also only while fewer than three ways are known). */
    for (int s = 0; s < g.nsetup && k < 3; s++) {
        double E[START_MAX_GATHER], N[START_MAX_GATHER], hz[START_MAX_GATHER];
        int tgt[START_MAX_GATHER];
        size_t nt = setup_targets(c, P, g.setups[s], E, N, hz, tgt);
        double e, n, om;
        if (nt < 3 || cairn_start_resect(E, N, hz, nt, &e, &n, &om))
            continue;
        double dm = 0.0;
        for (size_t t = 0; t < nt; t++)
            dm += hypot(E[t] - e, N[t] - n) / (double)nt;
        int o1 = -1;
        for (size_t a = c->set_off[g.setups[s]]; a < c->set_off[g.setups[s] + 1] && o1 < 0;
             a++)
            if (c->net->obs[c->set_obs[a]].kind == CAIRN_OBS_DIRECTION)
                o1 = c->set_obs[a];
        /* sd: a few direction sds over the mean sight (rough). */
        add_cand(cand, &k, e, n, 3.0 * dm * cairn_start_obs_sd(c, o1, dm), o1, -1,
                 START_RESECT, g.setups[s], -1);
    }

    /* Trilateration: each distance with the next one from another mark,
     * again only while fewer than three ways are known. */
    size_t k0 = k;
    int ntri = 0;
    for (int a = 0; a < g.ndist && ntri < 8 && k < 3; a++)
        for (int b = a + 1; b < g.ndist; b++) {
            const dist_t *da = &g.dist[a], *db = &g.dist[b];
            if (da->org == db->org)
                continue;
            double x[2][2], sn;
            double sa = cairn_start_obs_sd(c, da->obs, da->d);
            double sb = cairn_start_obs_sd(c, db->obs, db->d);
            double slack = 0.05 + 10.0 * hypot(sa, sb);
            if (cairn_start_trilat(c->e[da->org], c->n[da->org], da->d, c->e[db->org],
                                   c->n[db->org], db->d, slack, x, &sn))
                continue;
            double sd = hypot(sa, sb) / (sn > 0.05 ? sn : 0.05);
            double sep = hypot(x[0][0] - x[1][0], x[0][1] - x[1][1]);
            int j;
            if (sep < 0.05) {
                x[0][0] = 0.5 * (x[0][0] + x[1][0]);
                x[0][1] = 0.5 * (x[0][1] + x[1][1]);
                j = 0;
            } else {
                j = choose_circle(c, P, &g, cand, k0, a, b, x);
            }
            if (j < 0) {
                if (!allow_amb) {
                    *pamb = 1;
                    continue;
                }
                char wa[CAIRN_PATH_MAX + 16], wb[CAIRN_PATH_MAX + 16];
                cairn_start_where(c, da->obs, wa, sizeof wa);
                cairn_start_where(c, db->obs, wb, sizeof wb);
                cairn_start_warn(c, da->obs,
                                 "starting position for %s from the distances at %s and "
                                 "%s is ambiguous (two circle points, nothing to choose "
                                 "by); taking the one right of %s to %s",
                                 c->net->marks[P].id, wa, wb, c->net->marks[da->org].id,
                                 c->net->marks[db->org].id);
                j = 0;
            }
            add_cand(cand, &k, x[j][0], x[j][1], sd, da->obs, db->obs, START_TRILAT,
                     da->org, db->org);
            ntri++;
            break;
        }

    if (!k)
        return 0;
    start_cand pick;
    size_t best;
    cairn_start_choose(c, P, 1, cand, k, &pick, &best);
    res->mark = P;
    res->e = pick.e;
    res->n = pick.n;
    res->obs1 = pick.obs1;
    res->obs2 = pick.obs2;
    res->ncand = (int)k;
    res->kind = pick.kind;
    res->ref1 = pick.ref1;
    res->ref2 = pick.ref2;
    return 1;
}

static int apply(start_ctx *c, const result_t *r)
{
    const cairn_mark *mk = &c->net->marks[r->mark];
    const char *id1 = r->ref1 >= 0 && r->kind != START_RESECT ? c->net->marks[r->ref1].id : "";
    const char *id2 = r->ref2 >= 0 ? c->net->marks[r->ref2].id : "";
    /* A component that was given stays; only the missing one is new (a
     * local-frame pass, start_local.c, ignores what was given). */
    unsigned given = c->local ? 0u : mk->given;
    c->e[r->mark] = (given & CAIRN_E) ? mk->e : r->e;
    c->n[r->mark] = (given & CAIRN_N) ? mk->n : r->n;
    c->known[r->mark] |= EN;
    unsigned comp = EN & ~given;
    switch (r->kind) {
    case START_POLAR:
        return cairn_start_add_step(c, r->mark, comp, r->obs1, r->obs2, r->ncand,
                                    "polar from %s", id1);
    case START_INTERSECT:
        return cairn_start_add_step(c, r->mark, comp, r->obs1, r->obs2, r->ncand,
                                    "intersection from %s and %s", id1, id2);
    case START_TRILAT:
        return cairn_start_add_step(c, r->mark, comp, r->obs1, r->obs2, r->ncand,
                                    "trilateration from %s and %s", id1, id2);
    default:
        return cairn_start_add_step(c, r->mark, comp, r->obs1, r->obs2, r->ncand,
                                    "resection");
    }
}

static void set_seed(start_ctx *c, int m, double e, double n, int obs, const char *what)
{
    const cairn_mark *mk = &c->net->marks[m];
    unsigned given = c->local ? 0u : mk->given;
    c->e[m] = (given & CAIRN_E) ? mk->e : e;
    c->n[m] = (given & CAIRN_N) ? mk->n : n;
    c->known[m] |= EN;
    cairn_start_add_step(c, m, EN & ~given, obs, -1, 1, "%s", what);
}

int cairn_start_plane_seed_setup(start_ctx *c, size_t s, int with_scale)
{
    int A = c->net->setups[s].at;
    if (!valid(c, A) || !(c->need[A] & EN))
        return 0;
    int first = -1;
    for (size_t a = c->set_off[s]; a < c->set_off[s + 1] && first < 0; a++) {
        const cairn_obs *o = &c->net->obs[c->set_obs[a]];
        if (o->setup == (int)s && o->at == A && valid(c, o->to) && o->to != A &&
            cairn_start_is_plane_obs(c, c->set_obs[a]) && o->kind != CAIRN_OBS_ZENITH)
            first = c->set_obs[a];
    }
    if (first < 0)
        return 0;
    const cairn_obs *f = &c->net->obs[first];
    int T = f->to, dir = -1, dist = -1;
    for (size_t a = c->set_off[s]; a < c->set_off[s + 1]; a++) {
        int i = c->set_obs[a];
        const cairn_obs *o = &c->net->obs[i];
        if (o->setup != (int)s || o->to != T ||
            (f->sight >= 0 ? o->sight != f->sight : i != first))
            continue;
        double d;
        int approx;
        if (o->kind == CAIRN_OBS_DIRECTION && dir < 0)
            dir = i;
        else if ((o->kind == CAIRN_OBS_HORIZ || o->kind == CAIRN_OBS_SLOPE) &&
                 dist < 0 && !cairn_start_plane_length(c, i, &d, &approx))
            dist = i;
    }
    set_seed(c, A, 0.0, 0.0, first, "free-network origin");
    c->plane_seed = A;
    if (dir >= 0) {
        c->omega[s] = cairn_wrap_2pi(-hz1(c, dir));
        c->oriented[s] = 1;
        if (with_scale && !cairn_start_known_en(c, T))
            set_seed(c, T, 0.0, 100.0, dir, "free-network scale");
    } else if (dist >= 0 && !cairn_start_known_en(c, T)) {
        double d;
        int approx;
        cairn_start_plane_length(c, dist, &d, &approx);
        set_seed(c, T, 0.0, d, dist, "free-network north");
    }
    return 1;
}

/* A network with no known position among the marks that need one: the
 * station of the first setup goes to the local origin e = 0, n = 0, and
 * its first sight points north (orientation so that it reads azimuth 0).
 * With no distance anywhere, that target is put 100 m north to give the
 * network a scale (arbitrary; the free datum fixes it anyway). */
static void seed_plane(start_ctx *c)
{
    int any = 0;
    for (size_t m = 0; m < c->nm; m++)
        if (c->need[m] & EN) {
            if (cairn_start_known_en(c, (int)m))
                return;
            any = 1;
        }
    if (!any)
        return;
    int ndistances = 0;
    for (size_t i = 0; i < c->no && !ndistances; i++)
        if ((c->net->obs[i].kind == CAIRN_OBS_HORIZ ||
             c->net->obs[i].kind == CAIRN_OBS_SLOPE) &&
            cairn_start_is_plane_obs(c, (int)i))
            ndistances = 1;
    for (size_t s = 0; s < c->ns; s++)
        if (cairn_start_plane_seed_setup(c, s, !ndistances))
            return;
    for (size_t m = 0; m < c->nm; m++)
        if (c->need[m] & EN) {
            set_seed(c, (int)m, 0.0, 0.0, -1, "free-network origin");
            c->plane_seed = (int)m;
            return;
        }
}

static void push(int *list, size_t *pn, unsigned char *flag, int m)
{
    if (!flag[m]) {
        flag[m] = 1;
        list[(*pn)++] = m;
    }
}

/* Mark P has just been fixed: queue its unknown neighbours, orient the
 * setups it completes, and queue all targets of those setups. */
static void spread(start_ctx *c, int P, int *dirty, size_t *pndirty, unsigned char *inq)
{
    for (size_t a = c->adj_off[P]; a < c->adj_off[P + 1]; a++) {
        const cairn_obs *o = &c->net->obs[c->adj[a]];
        int ms[3] = {o->at, o->from, o->to};
        for (int j = 0; j < 3; j++)
            if (valid(c, ms[j]) && (c->need[ms[j]] & EN) && !cairn_start_known_en(c, ms[j]))
                push(dirty, pndirty, inq, ms[j]);
        if (o->setup < 0 || (size_t)o->setup >= c->ns || !orient(c, o->setup))
            continue;
        for (size_t b = c->set_off[o->setup]; b < c->set_off[o->setup + 1]; b++) {
            const cairn_obs *q = &c->net->obs[c->set_obs[b]];
            if (q->setup == o->setup && valid(c, q->to) && (c->need[q->to] & EN) &&
                !cairn_start_known_en(c, q->to))
                push(dirty, pndirty, inq, q->to);
        }
    }
}

int cairn_start_plane_waves(start_ctx *c)
{
    size_t nm = c->nm;
    int *dirty = malloc(nm * sizeof *dirty);
    int *deferred = malloc(nm * sizeof *deferred);
    unsigned char *inq = calloc(nm, 1), *indef = calloc(nm, 1);
    result_t *pend = malloc(nm * sizeof *pend);
    if (!dirty || !deferred || !inq || !indef || !pend) {
        c->oom = 1;
        free(dirty);
        free(deferred);
        free(inq);
        free(indef);
        free(pend);
        return -1;
    }
    /* deferred: a ring of at most nm marks (indef keeps each in it once) */
    size_t ndirty = 0, dhead = 0, ndef = 0;
    for (size_t s = 0; s < c->ns; s++)
        orient(c, (int)s);
    /* The first wave: every mark next to a known one (a mark with no
     * known neighbour has no way in yet). */
    for (size_t m = 0; m < nm; m++)
        if ((c->need[m] & EN) && cairn_start_known_en(c, (int)m))
            spread(c, (int)m, dirty, &ndirty, inq);

    while (!c->oom) {
        size_t npend = 0;
        int amb;
        for (size_t i = 0; i < ndirty; i++) {
            int P = dirty[i];
            inq[P] = 0;
            if (cairn_start_known_en(c, P))
                continue;
            if (eval(c, P, 0, &pend[npend], &amb))
                npend++;
            else if (amb && !indef[P]) {
                indef[P] = 1;
                deferred[(dhead + ndef++) % nm] = P;
            }
        }
        ndirty = 0;
        if (!npend) {
            /* Nothing else moves: settle one ambiguous trilateration, the
             * longest waiting, deterministically (with a warning), and go
             * on from there: the marks it fixes may decide the others'
             * circle points (settling them all at once could mirror parts
             * of the network against each other). Each mark leaves the
             * ring once per entry, so this stays linear. */
            while (ndef > 0 && !npend) {
                int P = deferred[dhead];
                dhead = (dhead + 1) % nm;
                ndef--;
                indef[P] = 0;
                if (!cairn_start_known_en(c, P) && eval(c, P, 1, &pend[npend], &amb))
                    npend++;
            }
            if (!npend)
                break;
        }
        for (size_t i = 0; i < npend; i++)
            if (apply(c, &pend[i]))
                break;
        for (size_t i = 0; i < npend; i++)
            spread(c, pend[i].mark, dirty, &ndirty, inq);
    }
    free(dirty);
    free(deferred);
    free(inq);
    free(indef);
    free(pend);
    return c->oom ? -1 : 0;
}

int cairn_start_plane_int(start_ctx *c)
{
    if (c->dim == 1 || !c->nm)
        return 0;
    seed_plane(c);
    if (cairn_start_plane_waves(c))
        return -1;
    /* Marks the waves could not reach from the marks with coordinates may
     * still be reachable in a frame of their own (start_local.c). */
    return cairn_start_plane_local(c);
}

void cairn_start_plane_reason(const start_ctx *c, int m, char *buf, size_t n)
{
    gather_t g;
    gather(c, m, &g);
    int nres = 0;
    for (int s = 0; s < g.nsetup; s++) {
        double E[START_MAX_GATHER], N[START_MAX_GATHER], hz[START_MAX_GATHER];
        int tgt[START_MAX_GATHER];
        int k = (int)setup_targets(c, m, g.setups[s], E, N, hz, tgt);
        if (k > nres)
            nres = k;
    }
    int nd = 0; /* distances from distinct known marks */
    for (int d = 0; d < g.ndist; d++) {
        int e = 0;
        while (e < d && g.dist[e].org != g.dist[d].org)
            e++;
        nd += e == d;
    }
    if (!g.nray && !nd && !nres && !g.nunoriented)
        snprintf(buf, n, "only connected through marks that cannot be computed");
    else if (nd == 1 && !g.nray && !nres && !g.nunoriented)
        snprintf(buf, n, "only one distance, no direction");
    else if (g.nray == 1 && !nd && !nres)
        snprintf(buf, n, "only one direction, no distance");
    else if (nres > 0 && !g.nray && !nd)
        snprintf(buf, n, "only %d direction%s from its setup to marks with coordinates, "
                 "a resection needs 3", nres, nres == 1 ? "" : "s");
    else if (g.nunoriented && !g.nray && !nd)
        snprintf(buf, n, "directions only from setups with no sight to a mark with "
                 "coordinates");
    else
        snprintf(buf, n, "its observations to marks with coordinates do not fix it "
                 "(%d direction%s, %d distance%s)", g.nray + nres,
                 g.nray + nres == 1 ? "" : "s", nd, nd == 1 ? "" : "s");
}
