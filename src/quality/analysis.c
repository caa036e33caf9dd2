/* cairn_analyse: the quality of an adjustment — selected inverse, global
 * test, redundancy numbers, w-test (or Pope's τ), MDB, external
 * reliability, iterative data snooping — then precision per mark
 * (analysis_mark.c) and per observed pair (pairs.c).
 *
 * Sources: Baarda (1968), "A Testing Procedure for Use in Geodetic
 * Networks" (redundancy numbers, w-test, λ0, MDB; REFERENCES.md §2); Pope
 * (1976), NOAA Technical Report NOS 65 NGS 1 (τ test); REFERENCES.md §1.1
 * for the two-sided global test. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis_int.h"

void cairn_analysis_options_default(cairn_analysis_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->snoop = CAIRN_SNOOP_ITERATE;
    opt->scale_aposteriori = 0;
    opt->max_reject_fraction = 0.10;
    opt->time_phases = 0;
}

void cairn_analysis_free(cairn_analysis **pan)
{
    if (!pan || !*pan)
        return;
    cairn_analysis *an = *pan;
    free(an->sd_e); free(an->sd_n); free(an->sd_h);
    free(an->major); free(an->minor); free(an->azimuth);
    free(an->h_interval); free(an->cov); free(an->axes3); free(an->dirs3);
    free(an->r); free(an->w); free(an->mdb); free(an->nabla); free(an->tau);
    free(an->external); free(an->status);
    free(an->pairs); free(an->rejections);
    free(an->control_first); free(an->control);
    free(an);
    *pan = NULL;
}

static double *nans(size_t n)
{
    double *a = malloc((n ? n : 1) * sizeof *a);
    if (a)
        for (size_t i = 0; i < n; i++)
            a[i] = NAN;
    return a;
}

/* The per-observation arrays the tests of every round fill. */
static int alloc_tests(cairn_analysis *an, size_t no)
{
    an->r = nans(no); an->w = nans(no); an->mdb = nans(no); an->nabla = nans(no);
    /* τ only with the variance factor estimated: 8 bytes per observation */
    an->tau = an->scale_aposteriori ? nans(no) : NULL;
    an->status = calloc(no ? no : 1, sizeof *an->status);
    an->rejections = NULL;   /* grown as snooping rejects (cairn_analyse) */
    return an->r && an->w && an->mdb && an->nabla &&
                   (an->tau || !an->scale_aposteriori) && an->status
               ? 0 : -1;
}

/* The arrays only the final precision fills (per mark, and external
 * reliability): allocated after snooping, so that they do not add to the
 * memory held through its factorisations. */
static int alloc_precision(cairn_analysis *an, size_t nm, size_t no)
{
    an->sd_e = nans(nm); an->sd_n = nans(nm); an->sd_h = nans(nm);
    an->major = nans(nm); an->minor = nans(nm); an->azimuth = nans(nm);
    an->h_interval = nans(nm); an->cov = nans(6 * nm);
    /* principal axes only where a mark can have e, n and h */
    int three = an->adj->prob->plane && an->adj->prob->heights;
    an->axes3 = three ? nans(3 * nm) : NULL;
    an->dirs3 = three ? nans(9 * nm) : NULL;
    an->external = nans(no);
    return an->sd_e && an->sd_n && an->sd_h && an->major && an->minor && an->azimuth &&
                   an->h_interval && an->cov && (!three || (an->axes3 && an->dirs3)) &&
                   an->external
               ? 0 : -1;
}

/* Levels and confidence factors for the current dof. With the variance
 * factor estimated (scale_aposteriori) the 2-D, 1-D and 3-D factors come
 * from F(2, dof), t(dof) and F(3, dof) (REFERENCES.md §3.2); otherwise
 * from χ²(2), the normal and χ²(3) (§3.1). */
static void factors(cairn_analysis *an)
{
    double c = an->confidence;
    int dof = an->dof;
    if (an->scale_aposteriori && dof >= 1) {
        an->variance_factor = an->vtpv / dof;
        an->k2 = cairn_ellipse_scale_f(c, dof);
        an->k1 = cairn_interval_scale_t(c, dof);
        an->k3 = sqrt(3.0 * cairn_f_quantile(c, 3.0, (double)dof));
        an->taucrit = dof >= 2 ? cairn_tau_critical(an->alpha, dof) : NAN;
    } else {
        an->variance_factor = 1.0;
        an->k2 = cairn_ellipse_scale(c);
        an->k1 = cairn_interval_scale(c);
        an->k3 = sqrt(cairn_chi2_quantile(c, 3.0));
        an->taucrit = NAN;
    }
}

/* What the loops over observations of the analysis read and fill. */
typedef struct {
    cairn_analysis *an;
    const cairn_qa_engine *eg;
    const cairn_selinv *Z;
} obs_ctx;

/* body over every observation, on several cores for a large network. */
static void for_obs(cairn_analysis *an, const cairn_qa_engine *eg, const cairn_selinv *Z,
                    void (*body)(void *, int, size_t, size_t))
{
    obs_ctx c = {an, eg, Z};
    cairn_parallel_for(an->nobs, cairn_parallel_parts(an->nobs, CAIRN_PARALLEL_MIN_OBS),
                       body, &c);
}

/* rᵢ into an->r for the observations used (NAN for rejected ones, and
 * where a Qxx entry is missing: the caller reports that). */
static void redundancy_part(void *vc, int part, size_t lo, size_t hi)
{
    (void)part;
    obs_ctx *c = vc;
    const cairn_qa_engine *eg = c->eg;
    for (size_t i = lo; i < hi; i++) {
        if (eg->out[i]) {
            c->an->r[i] = NAN;
            continue;
        }
        double sig = c->an->adj->sigma[i], p = 1.0 / (sig * sig);
        size_t k0 = eg->rp[i];
        int cnt = (int)(eg->rp[i + 1] - k0);
        c->an->r[i] = cnt == 0 ? 1.0
                    : cairn_redundancy(p, eg->rc + k0, eg->ri + k0, cnt, cairn_qa_qxx_get,
                                       (void *)c->Z);
    }
}

/* Which statistic the w-tests use: τ = w / s0 against taucrit with the
 * a-posteriori variance factor (returns 1), else w against wcrit (returns
 * 0, s0 = 1). */
static int test_scale(const cairn_analysis *an, double *ps0, double *pcrit)
{
    int tau = an->scale_aposteriori && isfinite(an->taucrit);
    *ps0 = tau ? sqrt(an->variance_factor) : 1.0;
    *pcrit = tau ? an->taucrit : an->wcrit;
    return tau;
}

/* Redundancy numbers, w (τ), MDB and statuses of the observations used,
 * the global test, and the Σr = dof check. Z is NULL when there are no
 * unknowns (then every r is 1). */
static int test_observations(cairn_analysis *an, const cairn_qa_engine *eg,
                             const cairn_selinv *Z, cairn_error *err)
{
    /* Z of a factor made before the last round's steps (snoop.c) pairs
     * with design rows at the new solution: then Σr is dof only to the
     * relative change of N over those steps, and the exact check waits
     * for the refactorised tests that follow. */
    int exact = eg->factor_at_solution;
    const cairn_adjustment *adj = an->adj;
    size_t used = 0;
    double sum_r = 0;
    an->vtpv = adj->vtpv;
    for (size_t i = 0; i < an->nobs; i++)
        used += !eg->out[i];
    an->nused = used;
    an->dof = (int)used - adj->nunknowns;
    factors(an);
    double s0, crit;
    int tau = test_scale(an, &s0, &crit);
    an->nflagged = an->nunchecked = 0;
    /* the redundancy numbers, the costly part, on several cores */
    for_obs(an, eg, Z, redundancy_part);
    for (size_t i = 0; i < an->nobs; i++) {
        double r = an->r[i];
        an->w[i] = an->mdb[i] = an->nabla[i] = an->r[i] = NAN;
        if (an->tau)
            an->tau[i] = NAN;
        if (eg->out[i]) {
            an->status[i] = CAIRN_OBS_REJECTED;
            continue;
        }
        double sig = adj->sigma[i];
        if (!isfinite(r)) {
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "internal error: a Qxx entry of observation %zu is outside "
                            "the selected inverse", i + 1);
            return CAIRN_ANALYSIS_EINTERNAL;
        }
        sum_r += r;
        cairn_obs_rel rel;
        if (cairn_reliability_obs(adj->residual[i], sig, r, an->lambda0, an->wcrit, &rel)) {
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "internal error: reliability of observation %zu", i + 1);
            return CAIRN_ANALYSIS_EINTERNAL;
        }
        an->r[i] = r;
        an->w[i] = rel.w;
        an->mdb[i] = rel.mdb;
        an->nabla[i] = rel.nabla;
        if (tau)
            an->tau[i] = rel.w / s0;
        double stat = tau ? an->tau[i] : rel.w;
        if (rel.status == CAIRN_OBS_UNCHECKED) {
            an->status[i] = CAIRN_OBS_UNCHECKED;
            an->nunchecked++;
        } else if (an->snoop != CAIRN_SNOOP_OFF && fabs(stat) > crit) {
            an->status[i] = CAIRN_OBS_FLAGGED;
            an->nflagged++;
        } else {
            an->status[i] = CAIRN_OBS_OK;
        }
    }
    an->sum_r = sum_r;
    /* Σ rᵢ = n − u (REFERENCES.md §2): a failure means the selected
     * inverse or the design rows are wrong, never the data. */
    if (exact && fabs(sum_r - an->dof) > 1e-6 * fmax(1.0, (double)an->dof)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: the redundancy numbers sum to %.9g, not to the "
                        "%d degrees of freedom", sum_r, an->dof);
        return CAIRN_ANALYSIS_EINTERNAL;
    }
    if (cairn_global_test(an->vtpv, an->dof, 1.0, an->global_alpha, &an->global) < 0) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: the global test could not be made");
        return CAIRN_ANALYSIS_EINTERNAL;
    }
    return 0;
}

/* External reliability of observation i: the shift Δx = Q aᵢᵀ pᵢ ∇ of a
 * blunder ∇ = MDB, on the unknowns the observation touches, largest
 * coordinate component (orientations excluded: an angle is no shift).
 * The entries Q(k, l) for k, l in one row lie in the pattern of N, hence
 * of the factor, so this needs no solve. The largest shift anywhere in
 * the network would need the whole column Q aᵢᵀ, one solve per
 * observation; we do not make it (DESIGN.md "Performance"). */
static void external_part(void *vc, int part, size_t lo, size_t hi)
{
    (void)part;
    obs_ctx *c = vc;
    cairn_analysis *an = c->an;
    const cairn_qa_engine *eg = c->eg;
    const cairn_adjustment *adj = an->adj;
    for (size_t i = lo; i < hi; i++) {
        an->external[i] = NAN;
        if (!isfinite(an->mdb[i]))
            continue;
        double p = 1.0 / (adj->sigma[i] * adj->sigma[i]), m = 0;
        int ok = 1, seen = 0;
        for (size_t k = eg->rp[i]; k < eg->rp[i + 1] && ok; k++) {
            int uk = eg->ri[k];
            if (adj->unknowns[uk].mark < 0)
                continue;
            seen = 1;
            double dx = 0;
            for (size_t l = eg->rp[i]; l < eg->rp[i + 1]; l++) {
                double q;
                if (cairn_selinv_get(c->Z, uk, eg->ri[l], &q)) {
                    ok = 0;
                    break;
                }
                dx += q * eg->rc[l] * p;
            }
            double s = cairn_external_reliability(&dx, 1, an->mdb[i]);
            m = s > m ? s : m;
        }
        an->external[i] = ok && seen ? m : NAN;   /* NAN: it moves no coordinate */
    }
}

/* The observation snooping removes next: the largest |w| (|τ|) among the
 * flagged ones; the first in problem order on a tie. */
static long next_rejection(const cairn_analysis *an)
{
    long best = -1;
    double bs = 0;
    for (size_t i = 0; i < an->nobs; i++) {
        if (an->status[i] != CAIRN_OBS_FLAGGED)
            continue;
        double s = fabs(an->tau && isfinite(an->tau[i]) ? an->tau[i] : an->w[i]);
        if (s > bs) {
            bs = s;
            best = (long)i;
        }
    }
    return best;
}

/* How an observation came to be rejected (cairn_analyse's `how`): as a
 * round's largest |w|, besides it, or it was put back once already. */
enum { HOW_LEAD = 1, HOW_BATCH = 2, HOW_RESTORED = 3 };

/* The backward step of batched snooping. A round rejects the largest |w|
 * (what one-at-a-time snooping rejects next) and further observations
 * that snoop_batch.c judges to fail on their own; it can misjudge one
 * whose correlation with a larger blunder is outside the selected
 * inverse (a levelling rise three lines from a 20σ blunder). Such an
 * observation would never have been rejected one at a time, and after
 * the round its w as if put back shows it: for an observation left out,
 * the misfit v to the solution of the others has variance σ² + aQxxaᵀ,
 * and put back it would get exactly w = v / √(σ² + aQxxaᵀ) (the
 * prediction residual of a deleted observation: Teunissen, "Adjustment
 * Theory", Delft University Press 2000, the chapter on recursive least
 * squares; from memory, chapter not checked; with rᵢ = σ²/(σ² + aQaᵀ)
 * it is the w of the full network). The entries of Qxx it needs are in
 * Z: a rejected row keeps its place in N's pattern (snoop.c). Moves the
 * batch-rejected observations that pass so from an->rejections into
 * back[] (marking them HOW_RESTORED: each goes back once at most) and
 * returns how many. */
static size_t put_back(cairn_analysis *an, const cairn_qa_engine *eg,
                       const cairn_selinv *Z, unsigned char *how, size_t *back)
{
    double s0, crit;
    test_scale(an, &s0, &crit);
    size_t m = 0, kept = 0;
    for (size_t k = 0; k < an->nrejections; k++) {
        size_t i = an->rejections[k].obs;
        int pass = 0;
        if (how[i] == HOW_BATCH) {
            double sig = an->adj->sigma[i], r1 = 1;
            size_t k0 = eg->rp[i];
            int cnt = (int)(eg->rp[i + 1] - k0);
            if (cnt > 0)
                r1 = cairn_redundancy(1.0, eg->rc + k0, eg->ri + k0, cnt,
                                      cairn_qa_qxx_get, (void *)Z);
            double q = 1.0 - r1;   /* aQxxaᵀ */
            pass = isfinite(r1) &&
                   fabs(an->adj->residual[i] / sqrt(sig * sig + q) / s0) <= crit;
        }
        if (pass) {
            back[m++] = i;
            how[i] = HOW_RESTORED;
        } else {
            an->rejections[kept++] = an->rejections[k];
        }
    }
    an->nrejections = kept;
    an->snoop_restored += (int)m;
    return m;
}

/* The held-mark tests on the factor about to be used up, into
 * an->control (the previous ones freed). */
static int control_tests(cairn_analysis *an, const cairn_qa_engine *eg, cairn_error *err)
{
    cairn_control_test *ct = NULL;
    size_t n = 0;
    double t0 = cairn_qa_now();
    if (cairn_qa_control_tests(an, eg, &ct, &n))
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory"),
               CAIRN_SOLVE_ENOMEM;
    an->t_control += cairn_qa_now() - t0;
    free(an->control);
    an->control = ct;
    an->ncontrol = n;
    an->ncontrol_failed = 0;
    for (size_t k = 0; k < n; k++)
        an->ncontrol_failed += ct[k].pass == 0;
    return 0;
}

static int selinv(cairn_analysis *an, cairn_qa_engine *eg, cairn_selinv **pZ,
                  cairn_error *err)
{
    *pZ = NULL;
    if (eg->n == 0)
        return 0;
    if (eg->factor_consumed)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                               "internal error: the factor was used up before the "
                               "selected inverse"),
               CAIRN_ANALYSIS_EINTERNAL;
    double t0 = cairn_qa_now();
    /* in place: Z takes the factor's own array (one copy of L less, 300 MB
     * at 10^5 marks); every later use of the factor refactorises first */
    int rc = cairn_selinv_compute_inplace(eg->L, eg->cc, pZ);
    eg->factor_consumed = 1;
    an->selinv_seconds = cairn_qa_now() - t0;
    an->t_selinv += an->selinv_seconds;
    if (rc == CAIRN_SELINV_ENOMEM)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                               "out of memory computing the selected inverse"),
               CAIRN_SOLVE_ENOMEM;
    if (rc)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                               "internal error: the selected inverse failed (%d)", rc),
               CAIRN_ANALYSIS_EINTERNAL;
    return 0;
}

int cairn_analyse(cairn_adjustment *adj, const cairn_analysis_options *opt,
                  cairn_analysis **pan, cairn_error *err)
{
    cairn_analysis_options defaults;
    *pan = NULL;
    if (!opt) {
        cairn_analysis_options_default(&defaults);
        opt = &defaults;
    }
    if (!adj || (adj->nunknowns > 0 && !cairn_adjustment_factor(adj))) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: the analysis needs the adjustment's factor (an "
                        "adjustment is analysed once: its factor is used up)");
        return CAIRN_ANALYSIS_EINTERNAL;
    }
    const cairn_options *no = &adj->net->opt;
    cairn_analysis *an = calloc(1, sizeof *an);
    if (!an)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory"),
               CAIRN_SOLVE_ENOMEM;
    an->adj = adj;
    an->snoop = opt->snoop;
    an->scale_aposteriori = opt->scale_aposteriori;
    an->confidence = no->confidence;
    an->alpha = no->alpha;
    an->power = no->power;
    an->global_alpha = no->global_alpha;
    an->lambda0 = cairn_lambda0(no->alpha, no->power);
    an->wcrit = cairn_w_critical(no->alpha);
    an->nobs = adj->nobs;
    an->has_tolerance = no->has_tolerance;
    an->tol_a = no->tolerance.length;
    an->tol_ppm = no->tolerance.ppm;
    an->selinv_seconds = an->factor_seconds = NAN;
    double frac = opt->max_reject_fraction >= 0 ? opt->max_reject_fraction : 0.10;
    an->max_rejections = opt->snoop == CAIRN_SNOOP_ITERATE
                             ? (size_t)floor(frac * (double)adj->nobs + 1e-9) : 0;
    cairn_qa_engine eg;
    cairn_selinv *Z = NULL;
    size_t *pick = NULL, npick_cap = 0, nrej_cap = 0, *back = NULL, nback_cap = 0;
    unsigned char *how = NULL;   /* HOW_* of each observation (iterate) */
    int control_done = 0;        /* the first round's held-mark tests are made */
    int rc;
    memset(&eg, 0, sizeof eg);
    if (alloc_tests(an, adj->nobs)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        rc = CAIRN_SOLVE_ENOMEM;
        goto fail;
    }
    if ((rc = cairn_qa_engine_init(&eg, adj, err)))
        goto fail;
    if (opt->snoop == CAIRN_SNOOP_ITERATE && !(how = calloc(adj->nobs ? adj->nobs : 1, 1))) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        rc = CAIRN_SOLVE_ENOMEM;
        goto fail;
    }
    for (;;) {
        /* The held-mark tests only on a factor at the solution: the first
         * round's and the final one's always are, and the rounds between,
         * whose factor is that of their starting point, would pay for
         * tests the report never shows (6 s a round at 10^6 marks). */
        int fresh = !control_done || eg.factor_at_solution;
        if (fresh && (rc = control_tests(an, &eg, err)))
            goto fail;
        if ((rc = selinv(an, &eg, &Z, err)))
            goto fail;
        double tt = cairn_qa_now();
        if ((rc = test_observations(an, &eg, Z, err)))
            goto fail;
        if (fresh)
            cairn_qa_control_wmax(an, &eg, an->control, an->ncontrol);
        if (!control_done) {
            /* the first round's tests, all observations in: control_first */
            size_t bytes = an->ncontrol * sizeof *an->control;
            if (bytes && !(an->control_first = malloc(bytes))) {
                cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
                rc = CAIRN_SOLVE_ENOMEM;
                goto fail;
            }
            if (bytes)
                memcpy(an->control_first, an->control, bytes);
            an->ncontrol_first_failed = an->ncontrol_failed;
            control_done = 1;
        }
        an->t_tests += cairn_qa_now() - tt;
        if (opt->snoop != CAIRN_SNOOP_ITERATE)
            break;
        /* the backward step first (put_back): the round puts back the
         * observations it finds, and rejects none within two lines of
         * them, whose tests did not see them */
        size_t m = 0;
        if (an->nrejections > 0) {
            if (cairn_grow((void **)&back, &nback_cap, an->nrejections, sizeof *back)) {
                cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
                rc = CAIRN_SOLVE_ENOMEM;
                goto fail;
            }
            m = put_back(an, &eg, Z, how, back);
        }
        size_t k = 0;
        if (an->nrejections >= an->max_rejections) {
            an->reject_limit_hit = next_rejection(an) >= 0;
        } else if (an->nflagged > 0) {
            /* at most the flagged ones go: sized by them, not by the limit */
            size_t room = an->max_rejections - an->nrejections;
            size_t nfl = (size_t)an->nflagged;
            size_t want = nfl < room ? nfl : room;
            if (cairn_grow((void **)&pick, &npick_cap, want, sizeof *pick) ||
                cairn_grow((void **)&an->rejections, &nrej_cap, an->nrejections + want,
                           sizeof *an->rejections)) {
                cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
                rc = CAIRN_SOLVE_ENOMEM;
                goto fail;
            }
            k = cairn_qa_next_rejections(an, &eg, Z, back, m, want, pick);
        }
        if (!k && !m && !eg.factor_at_solution) {
            /* The tests just made used the factor of the last round's
             * starting point: right for choosing rejections (the solution
             * moved by a few σ at most, so Q by about 1e-5 of itself), not
             * for reporting. Factorise at the solution and test again;
             * should that flag anything new, snooping goes on. */
            cairn_selinv_free(&Z);
            an->reject_limit_hit = 0;
            if ((rc = cairn_qa_engine_refactor(&eg, err)))
                goto fail;
            continue;
        }
        if (!k && !m)
            break;
        for (size_t j = 0; j < k; j++) {
            size_t i = pick[j];
            cairn_rejection *rj = &an->rejections[an->nrejections++];
            rj->obs = i;
            /* the round's largest |w| is what one-at-a-time snooping
             * rejects next, unless the round puts observations back */
            if (how[i] != HOW_RESTORED)
                how[i] = j == 0 && m == 0 ? HOW_LEAD : HOW_BATCH;
            rj->round = an->snoop_rounds + 1;
            rj->w = an->w[i];
            rj->tau = an->tau ? an->tau[i] : NAN;
            rj->r = an->r[i];
            rj->nabla = an->nabla[i];
        }
        cairn_selinv_free(&Z);
        double tr = cairn_qa_now(), tf = eg.t_factorise;
        if ((rc = cairn_qa_engine_reject_many(&eg, pick, k, back, m, err)))
            goto fail;
        an->t_readjust += cairn_qa_now() - tr - (eg.t_factorise - tf);
        an->snoop_rounds++;
    }
    cairn_qa_control_final(an);
    an->snoop_iterations = eg.iterations;
    an->snoop_factorisations = eg.factorisations;
    an->t_factorise = eg.t_factorise;
    for (size_t k = 0; k < an->nrejections; k++)
        an->nabla[an->rejections[k].obs] = an->rejections[k].nabla;
    if (alloc_precision(an, adj->net->nmarks, adj->nobs)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        rc = CAIRN_SOLVE_ENOMEM;
        goto fail;
    }
    double tp = cairn_qa_now();
    if (Z) {
        for_obs(an, &eg, Z, external_part);   /* external reliability */
        cairn_qa_marks(an, Z);
    }
    if (cairn_qa_pairs(an, Z)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        rc = CAIRN_SOLVE_ENOMEM;
        goto fail;
    }
    an->t_precision = cairn_qa_now() - tp;
    cairn_selinv_free(&Z);   /* it holds the factor's array: free it first */
    if (opt->time_phases && eg.n > 0) {
        /* the bench's yardstick: one numeric factorisation of the same N */
        if ((rc = cairn_qa_engine_refactor(&eg, err)))
            goto fail;
        an->factor_seconds = eg.factor_seconds;
    } else if (eg.factorisations > 0) {
        an->factor_seconds = eg.factor_seconds;
    }
    cairn_selinv_free(&Z);
    cairn_qa_engine_clear(&eg);
    free(pick);
    free(back);
    free(how);
    /* The factor now holds a selected inverse (computed in place) and N
     * is of no further use: release both, so that nothing can mistake
     * them for a factor (a second cairn_analyse is refused) and their
     * memory is back before the results are written. */
    if (cairn_adjustment_release_cholmod(adj) != 0) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: CHOLMOD memory left allocated after the analysis");
        cairn_analysis_free(&an);
        return CAIRN_ANALYSIS_EINTERNAL;
    }
    *pan = an;
    return 0;
fail:
    free(pick);
    free(back);
    free(how);
    cairn_selinv_free(&Z);
    cairn_qa_engine_clear(&eg);
    cairn_analysis_free(&an);
    (void)cairn_adjustment_release_cholmod(adj);   /* possibly used up: see above */
    return rc;
}

int cairn_analysis_alarm(const cairn_analysis *an)
{
    return (an->global.tested && !an->global.pass) || an->nflagged > 0 ||
           an->nrejections > 0;
}
