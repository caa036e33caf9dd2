/* Which flagged observations one round of iterative snooping rejects.
 *
 * Baarda's data snooping rejects the observation with the largest |w| and
 * re-adjusts, because one blunder spreads into the residuals of its
 * neighbours. Strictly one per round is hopeless on a national network:
 * with 10^6 observations and alpha = 0.001 about a thousand good
 * observations exceed the critical value by chance, and each round costs a
 * factorisation and a selected inverse. Residual correlation is local
 * (observations interact through the marks they share), so one round here
 * rejects the largest |w| and, greedily in decreasing |w|, every further
 * flagged observation none of whose marks lies within two observed lines
 * of a mark of an observation already taken this round. In a small or
 * compact network that neighbourhood covers everything and the rule is
 * exactly Baarda's one-at-a-time; well-separated blunders go in the same
 * round, with the result one-at-a-time rounds would give them. The
 * two-line radius is common practice for separating outliers, no source.
 * Measured on the 10^4-mark bench network (gen --kind plane --seed 7,
 * 140 086 observations, 2026-12-02): strict one-at-a-time rejects 148
 * observations in 148 rounds; this rule rejects those 148 and 2 more in 3
 * rounds; a one-line radius would take 2 rounds but keep one of the 148
 * and reject 2 others. At 10^5 marks the one-line radius saves one of 4
 * rounds (10 % of the time) and changes 4 of 1 395 rejections. */
#include <math.h>
#include <stdlib.h>

#include "analysis_int.h"

typedef struct {
    size_t obs;
    double score;
} cand;

static int by_score_desc(const void *a, const void *b)
{
    double x = ((const cand *)a)->score, y = ((const cand *)b)->score;
    if (x != y)
        return x < y ? 1 : -1;
    size_t i = ((const cand *)a)->obs, j = ((const cand *)b)->obs;
    return (i > j) - (i < j);
}

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* The marks of observation o (at most 3). */
static int obs_marks(const cairn_obs *o, int m[3])
{
    int k = 0;
    if (o->at >= 0) m[k++] = o->at;
    if (o->from >= 0) m[k++] = o->from;
    if (o->to >= 0) m[k++] = o->to;
    return k;
}

/* Mark adjacency (marks joined by an observation) in CSR form. */
static int build_adjacency(const cairn_problem *p, size_t nmarks, size_t **pptr,
                           int **padj)
{
    size_t *ptr = calloc(nmarks + 1, sizeof *ptr);
    if (!ptr)
        return -1;
    for (size_t i = 0; i < p->nobs; i++) {
        int m[3], k = obs_marks(&p->obs[i], m);
        for (int a = 0; a < k; a++)
            ptr[m[a] + 1] += (size_t)(k - 1);
    }
    for (size_t i = 0; i < nmarks; i++)
        ptr[i + 1] += ptr[i];
    int *adj = malloc((ptr[nmarks] ? ptr[nmarks] : 1) * sizeof *adj);
    size_t *fill = malloc((nmarks ? nmarks : 1) * sizeof *fill);
    if (!adj || !fill) {
        free(ptr);
        free(adj);
        free(fill);
        return -1;
    }
    for (size_t i = 0; i < nmarks; i++)
        fill[i] = ptr[i];
    for (size_t i = 0; i < p->nobs; i++) {
        int m[3], k = obs_marks(&p->obs[i], m);
        for (int a = 0; a < k; a++)
            for (int b = 0; b < k; b++)
                if (a != b)
                    adj[fill[m[a]]++] = m[b];
    }
    free(fill);
    /* one entry per neighbour: a mark with 10 000 setups has 40 000
     * observations but only a few neighbours */
    size_t w = 0;
    for (size_t i = 0; i < nmarks; i++) {
        size_t a = ptr[i], b = ptr[i + 1];
        qsort(adj + a, b - a, sizeof *adj, cmp_int);
        ptr[i] = w;
        for (size_t q = a; q < b; q++)
            if (q == a || adj[q] != adj[q - 1])
                adj[w++] = adj[q];
    }
    ptr[nmarks] = w;
    *pptr = ptr;
    *padj = adj;
    return 0;
}

size_t cairn_qa_next_rejections(const cairn_analysis *an, const cairn_problem *p,
                                size_t nmarks, size_t limit, size_t *pick)
{
    size_t nc = 0;
    for (size_t i = 0; i < an->nobs; i++)
        nc += an->status[i] == CAIRN_OBS_FLAGGED;
    if (!nc || !limit)
        return 0;
    cand *c = malloc(nc * sizeof *c);
    size_t *ptr = NULL;
    int *adj = NULL;
    unsigned char *blocked = calloc(nmarks ? nmarks : 1, 1);
    /* a mark whose neighbours are all blocked already: each neighbour list
     * is scanned at most once per round, so a round is O(marks + lines) */
    unsigned char *expanded = calloc(nmarks ? nmarks : 1, 1);
    if (!c || !blocked || !expanded || build_adjacency(p, nmarks, &ptr, &adj)) {
        /* out of memory: fall back to the single largest |w| */
        free(blocked);
        free(expanded);
        size_t best = 0;
        double bs = -1;
        for (size_t i = 0; i < an->nobs; i++) {
            if (an->status[i] != CAIRN_OBS_FLAGGED)
                continue;
            double s = fabs(an->tau && isfinite(an->tau[i]) ? an->tau[i] : an->w[i]);
            if (s > bs) {
                bs = s;
                best = i;
            }
        }
        free(c);
        pick[0] = best;
        return 1;
    }
    nc = 0;
    for (size_t i = 0; i < an->nobs; i++)
        if (an->status[i] == CAIRN_OBS_FLAGGED) {
            c[nc].obs = i;
            c[nc].score = fabs(an->tau && isfinite(an->tau[i]) ? an->tau[i] : an->w[i]);
            nc++;
        }
    qsort(c, nc, sizeof *c, by_score_desc);
    size_t k = 0;
    for (size_t j = 0; j < nc && k < limit; j++) {
        int m[3], nm = obs_marks(&p->obs[c[j].obs], m);
        int free_here = 1;
        for (int a = 0; a < nm; a++)
            free_here &= !blocked[m[a]];
        if (!free_here)
            continue;
        pick[k++] = c[j].obs;
        /* block every mark within two lines of this observation's marks */
        for (int a = 0; a < nm; a++) {
            blocked[m[a]] = 1;
            if (expanded[m[a]] == 2)
                continue;
            for (size_t q = ptr[m[a]]; q < ptr[m[a] + 1]; q++) {
                int b = adj[q];
                blocked[b] = 1;
                if (expanded[b])
                    continue;
                expanded[b] = 1;
                for (size_t r = ptr[b]; r < ptr[b + 1]; r++)
                    blocked[adj[r]] = 1;
            }
            expanded[m[a]] = 2;
        }
    }
    free(c);
    free(ptr);
    free(adj);
    free(blocked);
    free(expanded);
    return k;
}
