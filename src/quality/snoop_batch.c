/* Which flagged observations one round of iterative snooping rejects.
 *
 * Baarda's data snooping rejects the observation with the largest |w| and
 * re-adjusts, because one blunder spreads into the residuals of its
 * neighbours. Strictly one per round is hopeless on a national network:
 * with 10^6 observations and alpha = 0.001 about a thousand good
 * observations exceed the critical value by chance, and each round costs a
 * factorisation and a selected inverse. Residual correlation is local
 * (observations interact through the marks they share), so one round here
 * goes through the flagged observations in decreasing |w| and decides each
 * the way one-at-a-time rounds would, as far as this round's Qvv tells:
 *
 * - A candidate within two observed lines of a flagged observation that
 *   was passed over (one not explained, below) waits: that one may be the
 *   blunder that makes this one fail. It is passed over in its turn.
 * - Otherwise its w is conditioned on the observations already taken
 *   within three lines, by the exact effect of removing them (conditioned()
 *   below), with the residual correlations that the selected inverse holds.
 *   Conditioned |w| above the critical value: taken. At or below: explained
 *   by what was taken, and left in. A correlation within two lines that
 *   the selected inverse does not hold: passed over (it waits a round).
 *   One at three lines that it does not hold is neglected.
 *
 * The first candidate is always taken. In a small or compact network
 * every pair is within two lines and the rule is one-at-a-time.
 * The radii are common practice for separating outliers, no source.
 *
 * Measured against strict one-at-a-time (one rejection per round, the
 * numpy reference solver's rule, tests/reference/cairn_ref.py):
 * - 24 generated 200-mark plane networks with 8 planted blunders each (gen
 *   --marks 200 --blunders 8 --seed 1..24, 2026-12-02): the rule rejects
 *   exactly what strict rejects in 23; in the other one observation more
 *   (w -3.314, which ends at -3.247 after strict's later rounds). The rule
 *   it replaced (take whatever is two lines clear of what was taken,
 *   nothing conditioned) differed in 10 of the 24: each time it rejected
 *   1 to 3 observations that strict keeps, and once it also kept one
 *   that strict rejects.
 * - The 10^4-mark bench network (gen --seed 7, 140 086 observations):
 *   strict rejects 148 in 148 rounds; the rule those 148 and 2 more at the
 *   threshold (w 3.297 and 3.294; 3.290 and 3.284 after strict's rounds)
 *   in 3 rounds. At 10^5 marks: 1 393 rejections in 4 rounds. */
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

/* Mark adjacency (marks joined by an observation) in CSR form. */
static int build_adjacency(const cairn_problem *p, size_t nmarks, size_t **pptr,
                           int **padj)
{
    size_t *ptr = calloc(nmarks + 1, sizeof *ptr);
    if (!ptr)
        return -1;
    for (size_t i = 0; i < p->nobs; i++) {
        int m[3], k = cairn_qa_obs_marks(&p->obs[i], m);
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
        int m[3], k = cairn_qa_obs_marks(&p->obs[i], m);
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

/* Everything one round's choice reads and its work arrays. */
typedef struct {
    const cairn_analysis *an;
    const cairn_qa_engine *eg;
    const cairn_selinv *Z;     /* NULL: no unknowns, nothing to condition on */
    const cairn_problem *p;
    size_t nmarks;
    size_t *ptr;               /* mark adjacency (build_adjacency) */
    int *adj;
    unsigned char *held;       /* mark within two lines of an unresolved candidate */
    unsigned char *expanded;   /* 1: neighbours held, 2: and theirs */
    int *pick_head;            /* per mark: first pick touching it, or -1 */
    int *pick_next;            /* per pick slot (3 per pick): next, or -1 */
    size_t *pick_of;           /* per pick slot: the observation */
    size_t npick_slots;
    unsigned *seen;            /* per mark: stamp of the last ball it was in */
    unsigned stamp;
    int *ball;                 /* the marks of one ball */
} batch;

/* The statistic the round tests: τ when the a-posteriori factor is used
 * (test_observations in analysis.c), else w; and its critical value. */
static double stat_of(const cairn_analysis *an, size_t i)
{
    return an->tau && isfinite(an->tau[i]) ? an->tau[i] : an->w[i];
}

static double crit_of(const cairn_analysis *an, size_t i)
{
    return an->tau && isfinite(an->tau[i]) ? an->taucrit : an->wcrit;
}

/* Correlation of the residuals of observations i ≠ j. For uncorrelated
 * observations Qvv = P⁻¹ − A Qxx Aᵀ, so Qvv(i, j) = −aᵢ Qxx aⱼᵀ and
 * Qvv(i, i) = σᵢ² rᵢ (REFERENCES.md §2). Returns -1 when a Qxx entry it
 * needs is outside the selected inverse (marks too far apart in the
 * factor's pattern). */
static int correlation(const batch *b, size_t i, size_t j, double *prho)
{
    const cairn_qa_engine *eg = b->eg;
    const cairn_adjustment *adj = b->an->adj;
    double s = 0;
    if (!b->Z)
        return -1;
    for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++) {
        if (eg->rc[k] == 0)
            continue;
        for (size_t l = eg->rp[j]; l < eg->rp[j + 1]; l++) {
            double q;
            if (eg->rc[l] == 0)
                continue;
            if (cairn_selinv_get(b->Z, eg->ri[k], eg->ri[l], &q))
                return -1;
            s += eg->rc[k] * eg->rc[l] * q;
        }
    }
    double d = adj->sigma[i] * adj->sigma[j] * sqrt(b->an->r[i] * b->an->r[j]);
    if (!(d > 0) || !isfinite(s))
        return -1;
    *prho = -s / d;
    return 0;
}

/* Most picks a candidate is conditioned on; with more it waits. */
#define COND_MAX 8
/* Most marks in a candidate's ball; a hub mark with thousands of setups
 * would make the search cost more than waiting a round. */
#define BALL_MAX 8192
/* Lines from a candidate within which a pick's effect on it is looked
 * for: within BLOCK_LINES it must be known (else the candidate waits),
 * up to COND_LINES it is used where the selected inverse has it. */
#define BLOCK_LINES 2   /* the radius hold() holds, too */
#define COND_LINES 3

/* The picks within COND_LINES of candidate j's marks: returns how many
 * (at most COND_MAX) into S, with need[a] = 1 for those within
 * BLOCK_LINES; or -1 when there are more or the ball is too large. */
static int nearby_picks(batch *b, size_t j, size_t S[COND_MAX], int need[COND_MAX])
{
    int m[3], nm = cairn_qa_obs_marks(&b->p->obs[j], m), nb = 0, ns = 0;
    int lim[COND_LINES + 2];
    if (++b->stamp == 0) {   /* wrapped: clear the stamps once */
        for (size_t q = 0; q < b->nmarks; q++)
            b->seen[q] = 0;
        b->stamp = 1;
    }
    for (int a = 0; a < nm; a++)
        if (b->seen[m[a]] != b->stamp) {
            b->seen[m[a]] = b->stamp;
            b->ball[nb++] = m[a];
        }
    lim[0] = nb;   /* ball[lim[d-1] .. lim[d]) are the marks d lines away */
    for (int depth = 1, lo = 0; depth <= COND_LINES; depth++) {
        int hi = nb;
        for (int q = lo; q < hi; q++)
            for (size_t e = b->ptr[b->ball[q]]; e < b->ptr[b->ball[q] + 1]; e++) {
                int c = b->adj[e];
                if (b->seen[c] == b->stamp)
                    continue;
                if (nb == BALL_MAX)
                    return -1;
                b->seen[c] = b->stamp;
                b->ball[nb++] = c;
            }
        lim[depth] = nb;
        lo = hi;
    }
    for (int q = 0; q < nb; q++) {
        int close = q < lim[BLOCK_LINES];
        for (int t = b->pick_head[b->ball[q]]; t >= 0; t = b->pick_next[t]) {
            size_t i = b->pick_of[t];
            int dup = -1;
            for (int u = 0; u < ns; u++)
                if (S[u] == i)
                    dup = u;
            if (dup >= 0) {
                need[dup] |= close;
                continue;
            }
            if (ns == COND_MAX)
                return -1;
            need[ns] = close;
            S[ns++] = i;
        }
    }
    return ns;
}

/* The statistic of candidate j once the picks S are removed. Removing an
 * observation is the w-test's alternative hypothesis, one outlier
 * parameter for it (Baarda 1968), and with one for each of S the least
 * squares update is exact:
 *   vⱼ' = vⱼ − Qvv(j,S) Qvv(S,S)⁻¹ v_S,
 *   Qvv'(j,j) = Qvv(j,j) − Qvv(j,S) Qvv(S,S)⁻¹ Qvv(S,j),
 * or in standardised form, with R the residual correlations among S and ρ
 * those of j with S,
 *   wⱼ' = (wⱼ − ρᵀR⁻¹w_S) / √(1 − ρᵀR⁻¹ρ),   rⱼ' = rⱼ (1 − ρᵀR⁻¹ρ)
 * (the same algebra as the conditional w-tests of multiple-outlier
 * testing, e.g. Teunissen, "Testing Theory", Delft University Press 2000;
 * from memory, section not checked). need[a] marks the picks within
 * BLOCK_LINES, whose correlations must be at hand. Returns -1 when one of
 * them is not, or rⱼ' would leave j untestable: then j waits a round. */
static int conditioned(const batch *b, size_t j, const size_t *S0, const int *need, int ns0,
                       double *pstat)
{
    double R[COND_MAX][COND_MAX], rho[COND_MAX], y[COND_MAX];
    size_t S[COND_MAX];
    int ns = 0, sneed[COND_MAX];
    /* a pick beyond BLOCK_LINES whose correlation is not at hand is
     * neglected: its effect on j is taken to be small */
    for (int a = 0; a < ns0; a++) {
        double r;
        if (correlation(b, S0[a], j, &r)) {
            if (need[a])
                return -1;
            continue;
        }
        sneed[ns] = need[a];
        rho[ns] = r;
        S[ns++] = S0[a];
    }
    for (int a = 0; a < ns; a++) {
        R[a][a] = 1;
        for (int c = 0; c < a; c++) {
            if (correlation(b, S[a], S[c], &R[a][c])) {
                if (sneed[a] && sneed[c])
                    return -1;
                R[a][c] = 0;
            }
            R[c][a] = R[a][c];
        }
    }
    if (ns == 0) {
        *pstat = stat_of(b->an, j);
        return 0;
    }
    /* Cholesky of R in place (lower), then R y = ρ */
    for (int a = 0; a < ns; a++) {
        for (int c = 0; c <= a; c++) {
            double t = R[a][c];
            for (int q = 0; q < c; q++)
                t -= R[a][q] * R[c][q];
            if (c == a) {
                if (!(t > 1e-12))
                    return -1;
                R[a][a] = sqrt(t);
            } else {
                R[a][c] = t / R[c][c];
            }
        }
    }
    for (int a = 0; a < ns; a++) {
        double t = rho[a];
        for (int q = 0; q < a; q++)
            t -= R[a][q] * y[q];
        y[a] = t / R[a][a];
    }
    /* y now holds L⁻¹ρ: ρᵀR⁻¹ρ = yᵀy, and ρᵀR⁻¹w_S = yᵀ(L⁻¹w_S) */
    double c2 = 0, proj = 0, ws[COND_MAX];
    for (int a = 0; a < ns; a++) {
        double t = stat_of(b->an, S[a]);
        for (int q = 0; q < a; q++)
            t -= R[a][q] * ws[q];
        ws[a] = t / R[a][a];
    }
    for (int a = 0; a < ns; a++) {
        c2 += y[a] * y[a];
        proj += y[a] * ws[a];
    }
    double keep = 1 - c2;
    if (!(keep > 0) || b->an->r[j] * keep < CAIRN_R_MIN)
        return -1;
    *pstat = (stat_of(b->an, j) - proj) / sqrt(keep);
    return 0;
}

/* Take observation j: note it at its marks, for nearby_picks. */
static void take(batch *b, size_t j)
{
    int m[3], nm = cairn_qa_obs_marks(&b->p->obs[j], m);
    for (int a = 0; a < nm; a++) {
        b->pick_of[b->npick_slots] = j;
        b->pick_next[b->npick_slots] = b->pick_head[m[a]];
        b->pick_head[m[a]] = (int)b->npick_slots++;
    }
}

/* Candidate j stays in but is not explained: hold every mark within two
 * lines of its marks (each neighbour list is scanned at most once per
 * round, so holding is O(marks + lines) a round). */
static void hold(batch *b, size_t j)
{
    int m[3], nm = cairn_qa_obs_marks(&b->p->obs[j], m);
    for (int a = 0; a < nm; a++) {
        b->held[m[a]] = 1;
        if (b->expanded[m[a]] == 2)
            continue;
        for (size_t q = b->ptr[m[a]]; q < b->ptr[m[a] + 1]; q++) {
            int c = b->adj[q];
            b->held[c] = 1;
            if (b->expanded[c])
                continue;
            b->expanded[c] = 1;
            for (size_t r = b->ptr[c]; r < b->ptr[c + 1]; r++)
                b->held[b->adj[r]] = 1;
        }
        b->expanded[m[a]] = 2;
    }
}

static void batch_free(batch *b)
{
    free(b->ptr);
    free(b->adj);
    free(b->held);
    free(b->expanded);
    free(b->pick_head);
    free(b->pick_next);
    free(b->pick_of);
    free(b->seen);
    free(b->ball);
}

size_t cairn_qa_next_rejections(const cairn_analysis *an, const cairn_qa_engine *eg,
                                const cairn_selinv *Z, const size_t *wait, size_t nwait,
                                size_t limit, size_t *pick)
{
    const cairn_problem *p = an->adj->prob;
    size_t nmarks = an->adj->net->nmarks, nc = 0;
    for (size_t i = 0; i < an->nobs; i++)
        nc += an->status[i] == CAIRN_OBS_FLAGGED;
    if (!nc || !limit)
        return 0;
    size_t nm1 = nmarks ? nmarks : 1, slots = 3 * (limit < nc ? limit : nc);
    batch b = {an, eg, Z, p, nmarks, NULL, NULL, NULL, NULL, NULL, NULL, NULL, 0, NULL, 0,
               NULL};
    cand *c = malloc(nc * sizeof *c);
    b.held = calloc(nm1, 1);
    b.expanded = calloc(nm1, 1);
    b.pick_head = malloc(nm1 * sizeof *b.pick_head);
    b.pick_next = malloc(slots * sizeof *b.pick_next);
    b.pick_of = malloc(slots * sizeof *b.pick_of);
    b.seen = calloc(nm1, sizeof *b.seen);
    b.ball = malloc(BALL_MAX * sizeof *b.ball);
    if (!c || !b.held || !b.expanded || !b.pick_head || !b.pick_next || !b.pick_of ||
        !b.seen || !b.ball || build_adjacency(p, nmarks, &b.ptr, &b.adj)) {
        /* out of memory: fall back to the single largest |w|, or to
         * nothing in a round that puts observations back */
        size_t best = 0;
        double bs = -1;
        for (size_t i = 0; i < an->nobs; i++) {
            if (an->status[i] != CAIRN_OBS_FLAGGED)
                continue;
            double s = fabs(stat_of(an, i));
            if (s > bs) {
                bs = s;
                best = i;
            }
        }
        free(c);
        batch_free(&b);
        if (nwait)
            return 0;
        pick[0] = best;
        return 1;
    }
    for (size_t q = 0; q < nmarks; q++)
        b.pick_head[q] = -1;
    for (size_t q = 0; q < nwait; q++)
        hold(&b, wait[q]);   /* put back this round: their neighbours wait */
    nc = 0;
    for (size_t i = 0; i < an->nobs; i++)
        if (an->status[i] == CAIRN_OBS_FLAGGED) {
            c[nc].obs = i;
            c[nc].score = fabs(stat_of(an, i));
            nc++;
        }
    qsort(c, nc, sizeof *c, by_score_desc);
    size_t k = 0;
    for (size_t j = 0; j < nc && k < limit; j++) {
        size_t o = c[j].obs;
        int m[3], nm = cairn_qa_obs_marks(&p->obs[o], m), near = 0;
        for (int a = 0; a < nm; a++)
            near |= b.held[m[a]];
        size_t S[COND_MAX];
        int need[COND_MAX];
        double st = stat_of(an, o);
        /* the first one goes whatever its ball: each round rejects one */
        int ns = near ? -1 : k == 0 ? 0 : nearby_picks(&b, o, S, need);
        int cr = ns < 0 ? -1 : ns > 0 ? conditioned(&b, o, S, need, ns, &st) : 0;
        if (cr) {
            hold(&b, o);   /* not explained by the picks: it may explain others */
            continue;
        }
        if (!(fabs(st) > crit_of(an, o)))
            continue;      /* explained by the picks near it */
        pick[k++] = o;
        take(&b, o);
    }
    free(c);
    batch_free(&b);
    return k;
}
