/* Levelling misclosures: loops of rises and lines between held heights.
 *
 * The rises form a graph on the marks. A breadth-first spanning forest of
 * it (marks in mark order as roots, rises in load order) leaves every rise
 * outside the forest closing exactly one fundamental loop with the forest
 * path between its ends; together these loops are a cycle basis, i.e. one
 * check per independent loop (the standard construction of a fundamental
 * cycle basis; e.g. Deo, "Graph Theory with Applications to Engineering
 * and Computer Science", Prentice-Hall 1974, the chapter on fundamental
 * circuits, from memory). Within each connected part, consecutive held
 * heights (in mark order) are joined by the forest path: one line per held
 * mark after the first. Loops plus lines number exactly the redundancy of
 * the levelling.
 *
 * Expected SD √Σσᵢ² with σᵢ each rise's a priori σ (FORMAT.md "Models":
 * per-km·√km or per-setup·√setups, or its own sd); held heights add no
 * error. Allowance (option `loop-allowance`): m·√L, L the route length in
 * km (FGCC 1984 §3.5 tabulates such m·√L allowances: REFERENCES.md §4.3);
 * not applied when a rise on the route has setups only (no length).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "misclosure_int.h"

typedef struct {
    int from, to, obs;
    double value, km, var;   /* km = 0: unknown length */
} rise_edge;

typedef struct {
    int edge, sign;          /* sign +1: traversed from → to */
} step;

typedef struct {
    const cairn_net *net;
    rise_edge *e;   size_t ne;
    size_t *adj0;   int *adj;   /* CSR: edges at each mark */
    int *parent, *pedge, *depth, *comp;
    step *st;       int *route;
} level_ctx;

static int other_end(const rise_edge *e, int m)
{
    return e->from == m ? e->to : e->from;
}

/* Steps from mark a up the forest to its ancestor anc (a excluded from
 * nothing: the steps go a → parent(a) → ... → anc). */
static size_t climb(const level_ctx *L, int a, int anc, step *out)
{
    size_t n = 0;
    for (; a != anc; a = L->parent[a]) {
        const rise_edge *e = &L->e[L->pedge[a]];
        out[n].edge = L->pedge[a];
        out[n].sign = e->from == a ? 1 : -1;
        n++;
    }
    return n;
}

static int ancestor(const level_ctx *L, int a, int b)
{
    while (L->depth[a] > L->depth[b]) a = L->parent[a];
    while (L->depth[b] > L->depth[a]) b = L->parent[b];
    while (a != b) {
        a = L->parent[a];
        b = L->parent[b];
    }
    return a;
}

/* Forest path a → b as steps, appended at out; returns the count. */
static size_t path(const level_ctx *L, int a, int b, step *out)
{
    int anc = ancestor(L, a, b);
    size_t n = climb(L, a, anc, out);
    size_t m = climb(L, b, anc, out + n);
    /* b's climb reversed: anc → b, each step the other way round */
    for (size_t i = 0; i < m / 2; i++) {
        step t = out[n + i];
        out[n + i] = out[n + m - 1 - i];
        out[n + m - 1 - i] = t;
    }
    for (size_t i = 0; i < m; i++)
        out[n + i].sign = -out[n + i].sign;
    return n + m;
}

/* Emit one check for the steps st[0..n) starting at mark `start`. */
static int emit(level_ctx *L, cairn_misc_ctx *c, cairn_misc_kind kind, int start,
                const step *st, size_t n, double known)
{
    const cairn_net *net = L->net;
    cairn_misclosure it;
    cairn_misc_init(&it, kind);
    double sum = 0.0, var = 0.0, km = 0.0;
    int haskm = 1, first = -1, m = start;
    L->route[0] = start;
    for (size_t i = 0; i < n; i++) {
        const rise_edge *e = &L->e[st[i].edge];
        sum += st[i].sign * e->value;
        var += e->var;
        if (e->km > 0.0)
            km += e->km;
        else
            haskm = 0;
        if (first < 0 || e->obs < first)
            first = e->obs;
        m = other_end(e, m);
        L->route[i + 1] = m;
    }
    it.misclosure = sum - known;
    it.expected_sd = var > 0.0 ? sqrt(var) : NAN;
    if (haskm) {
        it.length = km * 1000.0;
        if (net->opt.has_loop_allowance)
            it.allowance = net->opt.loop_allowance * sqrt(km);
    }
    it.src = net->obs[first].src;
    return cairn_misc_add(c->res, &it, L->route, n + 1);
}

/* The loop closed by non-forest rise k, rotated to start with its first
 * rise in load order, in that rise's booked direction. */
static int loop(level_ctx *L, cairn_misc_ctx *c, size_t k)
{
    const rise_edge *e = &L->e[k];
    step *st = L->st;
    st[0].edge = (int)k;
    st[0].sign = 1;
    size_t n = 1 + path(L, e->to, e->from, st + 1);
    size_t best = 0;
    for (size_t i = 1; i < n; i++)
        if (L->e[st[i].edge].obs < L->e[st[best].edge].obs)
            best = i;
    /* rotate so that st[best] comes first */
    step *tmp = st + n; /* scratch after the steps: st holds 2·(nmarks + 1) */
    for (size_t i = 0; i < n; i++)
        tmp[i] = st[(best + i) % n];
    memcpy(st, tmp, n * sizeof *st);
    if (st[0].sign < 0) {
        /* walk the other way round: reverse the order, flip every sign */
        for (size_t i = 1; i < (n + 1) / 2; i++) {
            step t = st[i];
            st[i] = st[n - i];
            st[n - i] = t;
        }
        for (size_t i = 0; i < n; i++)
            st[i].sign = -st[i].sign;
    }
    const rise_edge *e0 = &L->e[st[0].edge];
    int start = st[0].sign > 0 ? e0->from : e0->to;
    return emit(L, c, CAIRN_MISC_LEVEL_LOOP, start, st, n, 0.0);
}

static int forest(level_ctx *L)
{
    const cairn_net *net = L->net;
    size_t nm = net->nmarks;
    int *queue = malloc((nm ? nm : 1) * sizeof *queue);
    if (!queue)
        return -1;
    for (size_t m = 0; m < nm; m++) {
        L->parent[m] = L->pedge[m] = -1;
        L->comp[m] = -1;
    }
    int ncomp = 0;
    for (size_t r = 0; r < nm; r++) {
        if (L->comp[r] >= 0 || L->adj0[r] == L->adj0[r + 1])
            continue;
        size_t qh = 0, qt = 0;
        queue[qt++] = (int)r;
        L->comp[r] = ncomp;
        L->depth[r] = 0;
        while (qh < qt) {
            int m = queue[qh++];
            for (size_t i = L->adj0[m]; i < L->adj0[m + 1]; i++) {
                int ei = L->adj[i], o = other_end(&L->e[ei], m);
                if (L->comp[o] >= 0)
                    continue;
                L->comp[o] = ncomp;
                L->parent[o] = m;
                L->pedge[o] = ei;
                L->depth[o] = L->depth[m] + 1;
                queue[qt++] = o;
            }
        }
        ncomp++;
    }
    free(queue);
    return 0;
}

static int build(level_ctx *L)
{
    const cairn_net *net = L->net;
    size_t nm = net->nmarks;
    L->ne = 0;
    for (size_t i = 0; i < net->nobs; i++)
        if (net->obs[i].kind == CAIRN_OBS_RISE && net->obs[i].from >= 0 &&
            net->obs[i].to >= 0)
            L->ne++;
    size_t ne = L->ne ? L->ne : 1;
    L->e = malloc(ne * sizeof *L->e);
    L->adj0 = calloc(nm + 2, sizeof *L->adj0);
    L->adj = malloc(2 * ne * sizeof *L->adj);
    L->parent = malloc((nm + 1) * sizeof *L->parent);
    L->pedge = malloc((nm + 1) * sizeof *L->pedge);
    L->depth = malloc((nm + 1) * sizeof *L->depth);
    L->comp = malloc((nm + 1) * sizeof *L->comp);
    /* a loop has at most nmarks + 1 steps; twice that leaves rotation room */
    L->st = malloc(2 * (nm + 2) * sizeof *L->st);
    L->route = malloc((nm + 2) * sizeof *L->route);
    if (!L->e || !L->adj0 || !L->adj || !L->parent || !L->pedge || !L->depth ||
        !L->comp || !L->st || !L->route)
        return -1;
    size_t k = 0;
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *o = &net->obs[i];
        if (o->kind != CAIRN_OBS_RISE || o->from < 0 || o->to < 0)
            continue;
        rise_edge *e = &L->e[k++];
        e->from = o->from;
        e->to = o->to;
        e->obs = (int)i;
        e->value = o->value;
        e->km = o->km;
        double s = cairn_misc_sigma(net, o, 0.0);
        e->var = s > 0.0 ? s * s : NAN;
        L->adj0[o->from + 1]++;
        if (o->to != o->from)
            L->adj0[o->to + 1]++;
    }
    for (size_t m = 0; m < nm; m++)
        L->adj0[m + 1] += L->adj0[m];
    size_t *fill = calloc(nm + 1, sizeof *fill);
    if (!fill)
        return -1;
    for (size_t i = 0; i < L->ne; i++) {
        const rise_edge *e = &L->e[i];
        L->adj[L->adj0[e->from] + fill[e->from]++] = (int)i;
        if (e->to != e->from)
            L->adj[L->adj0[e->to] + fill[e->to]++] = (int)i;
    }
    free(fill);
    return forest(L);
}

int cairn_misc_levelling(cairn_misc_ctx *c)
{
    level_ctx L;
    memset(&L, 0, sizeof L);
    L.net = c->net;
    int rc = build(&L);
    /* loops: every rise outside the forest, in load order */
    for (size_t k = 0; k < L.ne && rc == 0; k++) {
        const rise_edge *e = &L.e[k];
        if (L.pedge[e->to] == (int)k || L.pedge[e->from] == (int)k)
            continue;
        rc = loop(&L, c, k);
    }
    /* lines: consecutive held heights of each connected part */
    const cairn_net *net = c->net;
    int *last = rc == 0 ? malloc((net->nmarks + 1) * sizeof *last) : NULL;
    if (rc == 0 && !last)
        rc = -1;
    for (size_t m = 0; rc == 0 && m < net->nmarks; m++)
        last[m] = -1;
    for (size_t m = 0; rc == 0 && m < net->nmarks; m++) {
        const cairn_mark *mk = &net->marks[m];
        int part = L.comp[m];
        if (part < 0 || !(mk->hold & CAIRN_H) || !(mk->given & CAIRN_H))
            continue;
        int a = last[part];
        last[part] = (int)m;
        if (a < 0)
            continue;
        size_t n = path(&L, a, (int)m, L.st);
        rc = emit(&L, c, CAIRN_MISC_LEVEL_LINE, a, L.st, n, mk->h - net->marks[a].h);
    }
    free(last);
    free(L.e);
    free(L.adj0);
    free(L.adj);
    free(L.parent);
    free(L.pedge);
    free(L.depth);
    free(L.comp);
    free(L.st);
    free(L.route);
    return rc;
}
