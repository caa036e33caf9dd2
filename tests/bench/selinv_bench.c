/*
 * selinv_bench.c — times the selected inverse against one CHOLMOD
 * factorisation of the same normal matrix (the yardstick of DESIGN.md
 * "Performance").  Not a test: it prints timings and never fails on them.
 *
 * Usage: selinv_bench N [repeats]
 *   N        about N marks (a side x side grid, side = round(sqrt N))
 *   repeats  timed repetitions of factorize and selinv (default 3; the
 *            minimum is reported)
 *
 * The matrix is a synthetic 2-D plane network of our own: marks on a
 * jittered square grid, unknowns e, n per mark (adjacent) and then one
 * orientation unknown per mark (every mark is a setup), each mark joined to
 * about 7 neighbours (grid offsets (1,0), (0,1), (1,1) for every mark and
 * (2,1) for every other mark, both directions of each line observed and its
 * distance once), two marks weakly held as control.  N = A'PA is assembled
 * from the linearised direction and distance equations.  The simplicial
 * oracle is timed for N <= 20000 only (it is 10-20x slower by design).
 */
#ifndef _POSIX_C_SOURCE
#define _POSIX_C_SOURCE 199309L   /* clock_gettime */
#endif
#include "cairn/selinv.h"

#include <cblas.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static double rnd(unsigned long long *state)
{
    *state = *state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*state >> 11) / 9007199254740992.0;
}

typedef struct {
    cholmod_triplet *T;
    size_t nz;
} asm_t;

static void put_obs(asm_t *a, const int *idx, const double *coef, int k,
                    double w)
{
    int p, q;
    int *Ti = a->T->i, *Tj = a->T->j;
    double *Tx = a->T->x;
    for (p = 0; p < k; p++)
        for (q = 0; q <= p; q++) {
            int r = idx[p], c = idx[q];
            Ti[a->nz] = r > c ? r : c;    /* lower triangle (stype -1) */
            Tj[a->nz] = r > c ? c : r;
            Tx[a->nz] = w * coef[p] * coef[q];
            a->nz++;
        }
}

static cholmod_sparse *make_network(int side, cholmod_common *cc, int *pnun)
{
    static const int off[4][2] = {{1, 0}, {0, 1}, {1, 1}, {2, 1}};
    int nm = side * side, nun = 3 * nm, x, y, o;
    double *E = malloc((size_t)nm * sizeof *E), *Nn = malloc((size_t)nm * sizeof *Nn);
    unsigned long long st = 2024u;
    const double sd_dir = 0.3e-3 * 3.141592653589793 / 200.0; /* 0.3 mgon */
    const double sd_dist = 0.002;                             /* 2 mm */
    size_t maxnz = (size_t)nm * 4 * (2 * 15 + 10) + 64;
    asm_t a;
    cholmod_sparse *A;
    int i;
    if (!E || !Nn) return NULL;
    for (y = 0; y < side; y++)
        for (x = 0; x < side; x++) {
            E[y * side + x] = 100.0 * x + 20.0 * (rnd(&st) - 0.5);
            Nn[y * side + x] = 100.0 * y + 20.0 * (rnd(&st) - 0.5);
        }
    a.T = cholmod_allocate_triplet((size_t)nun, (size_t)nun, maxnz, -1,
                                   CHOLMOD_REAL, cc);
    a.nz = 0;
    if (!a.T) return NULL;
    for (y = 0; y < side; y++)
        for (x = 0; x < side; x++)
            for (o = 0; o < 4; o++) {
                int x2 = x + off[o][0], y2 = y + off[o][1];
                int mi = y * side + x, mj, idx[5];
                double de, dn, d2, d, dist[4], dir[5];
                if (o == 3 && (x + y) % 2) continue;
                if (x2 >= side || y2 >= side) continue;
                mj = y2 * side + x2;
                de = E[mj] - E[mi];
                dn = Nn[mj] - Nn[mi];
                d2 = de * de + dn * dn;
                d = sqrt(d2);
                idx[0] = 2 * mi; idx[1] = 2 * mi + 1;
                idx[2] = 2 * mj; idx[3] = 2 * mj + 1;
                /* distance: d(s)/d(e_i, n_i, e_j, n_j) */
                dist[0] = -de / d; dist[1] = -dn / d;
                dist[2] = de / d;  dist[3] = dn / d;
                put_obs(&a, idx, dist, 4, 1.0 / (sd_dist * sd_dist));
                /* direction i -> j: atan2(de, dn) - o_i */
                dir[0] = -dn / d2; dir[1] = de / d2;
                dir[2] = dn / d2;  dir[3] = -de / d2;
                dir[4] = -1.0;
                idx[4] = 2 * nm + mi;
                put_obs(&a, idx, dir, 5, 1.0 / (sd_dir * sd_dir));
                /* direction j -> i: same line seen from j */
                dir[0] = -dir[0]; dir[1] = -dir[1];
                dir[2] = -dir[2]; dir[3] = -dir[3];
                idx[4] = 2 * nm + mj;
                put_obs(&a, idx, dir, 5, 1.0 / (sd_dir * sd_dir));
            }
    /* weak control (1 mm) on the first and last mark: datum */
    for (i = 0; i < 2; i++) {
        int m = i ? nm - 1 : 0, idx[1];
        double one[1] = {1.0};
        idx[0] = 2 * m;
        put_obs(&a, idx, one, 1, 1e6);
        idx[0] = 2 * m + 1;
        put_obs(&a, idx, one, 1, 1e6);
    }
    /* orientation unknowns of a mark with no direction would be singular;
     * every mark has one here (side >= 2) */
    a.T->nnz = a.nz;
    A = cholmod_triplet_to_sparse(a.T, 0, cc);
    cholmod_free_triplet(&a.T, cc);
    free(E);
    free(Nn);
    *pnun = nun;
    return A;
}

int main(int argc, char **argv)
{
    cholmod_common c, *cc = &c;
    cholmod_sparse *A;
    cholmod_factor *L;
    cairn_selinv *Z = NULL, *Zs = NULL;
    int N, side, nun, reps, r, j, st;
    double t0, t_an, t_fac = 1e300, t_sel = 1e300, t_simp = -1.0;
    size_t maxcol = 0;

    if (argc < 2 || (N = atoi(argv[1])) < 4) {
        fprintf(stderr, "usage: %s N [repeats]   (N >= 4 marks)\n", argv[0]);
        return 2;
    }
    reps = argc > 2 ? atoi(argv[2]) : 3;
    if (reps < 1) reps = 1;
    side = (int)floor(sqrt((double)N) + 0.5);

    cholmod_start(cc);
    cc->print = 0;
    cc->supernodal = CHOLMOD_SUPERNODAL;
    cc->final_ll = 1;
    cc->nmethods = 1;
    cc->method[0].ordering = CHOLMOD_METIS;

    A = make_network(side, cc, &nun);
    if (!A) { fprintf(stderr, "out of memory\n"); return 1; }
    t0 = now();
    L = cholmod_analyze(A, cc);
    t_an = now() - t0;
    if (!L) { fprintf(stderr, "analyze failed\n"); return 1; }
    for (r = 0; r < reps; r++) {
        t0 = now();
        if (!cholmod_factorize(A, L, cc) || cc->status != CHOLMOD_OK) {
            fprintf(stderr, "factorize failed: status %d\n", cc->status);
            return 1;
        }
        t0 = now() - t0;
        if (t0 < t_fac) t_fac = t0;
    }
    for (r = 0; r < reps; r++) {
        cairn_selinv_free(&Z);
        t0 = now();
        st = cairn_selinv_compute(L, cc, &Z);
        t0 = now() - t0;
        if (st != 0) { fprintf(stderr, "selinv failed: %d\n", st); return 1; }
        if (t0 < t_sel) t_sel = t0;
    }
    for (j = 0; j < (int)L->nsuper; j++) {
        size_t w = (size_t)(((int *)L->super)[j + 1] - ((int *)L->super)[j]);
        if (w > maxcol) maxcol = w;
    }
    printf("marks %d  unknowns %d  nnz(A lower) %ld  nnz(L) %.0f  "
           "flops(fact) %.3g  supernodes %zu (widest %zu)  BLAS threads %d\n",
           side * side, nun, (long)cholmod_nnz(A, cc), cc->lnz, cc->fl,
           L->nsuper, maxcol, openblas_get_num_threads());
    printf("analyze (METIS)  %8.3f s\n", t_an);
    printf("factorize        %8.3f s\n", t_fac);
    printf("selinv           %8.3f s   selinv/factorize %.2f\n", t_sel,
           t_sel / t_fac);

    if (side * side <= 20000) {
        double maxrel = 0.0;
        t0 = now();
        st = cairn_selinv_simplicial(L, cc, &Zs);
        t_simp = now() - t0;
        if (st != 0) { fprintf(stderr, "simplicial failed: %d\n", st); return 1; }
        /* agreement of the two routes on the diagonal (variances) */
        for (j = 0; j < nun; j++) {
            double a = 0.0, b = 0.0, d;
            cairn_selinv_get(Z, j, j, &a);
            cairn_selinv_get(Zs, j, j, &b);
            d = fabs(a - b) / fabs(b);
            if (d > maxrel) maxrel = d;
        }
        printf("simplicial       %8.3f s   simplicial/factorize %.2f   "
               "simplicial/selinv %.1f\n", t_simp, t_simp / t_fac,
               t_simp / t_sel);
        printf("max rel. diff of diagonal, supernodal vs simplicial: %.2e\n",
               maxrel);
    }
    cairn_selinv_free(&Z);
    cairn_selinv_free(&Zs);
    cholmod_free_factor(&L, cc);
    cholmod_free_sparse(&A, cc);
    cholmod_finish(cc);
    return cc->malloc_count == 0 ? 0 : 1;
}
