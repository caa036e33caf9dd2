/* Distributions and test statistics: quantiles, the global test, Baarda's
 * w-test critical value and non-centrality λ0, Pope's τ.
 *
 * Why the quantiles do not simply return gsl_cdf_*_Pinv():
 * GSL's inverse CDFs polish their answer with a few Newton steps and, when
 * the polished value misses sqrt(DBL_EPSILON) relative accuracy in P, call
 * gsl_error("inverse failed to converge"). GSL's default error handler then
 * prints to stderr and calls abort(). With GSL 2.7.1 this happens for
 * ordinary arguments: gsl_cdf_chisq_Pinv(0.975, 5391) and
 * gsl_cdf_fdist_Pinv(0.7, 2, 471) both fail (found by sweeping dof from
 * 1 to 2e7; the χ² failures become the rule above a few thousand dof,
 * which is a mid-sized network). A library must never abort, and the error
 * handler is process-global state that only the application may set.
 *
 * So each quantile is found here by a safeguarded Newton iteration on
 * GSL's own distribution functions (gsl_cdf_*_P / _Q, densities from
 * gsl_ran_*_pdf): the special functions stay GSL's, only the root search
 * is ours. The bracket guarantees termination; working on the upper tail Q
 * when p > 1/2 keeps full relative accuracy in the tail the tests use.
 * The one closed-form start value needs only gsl_cdf_ugaussian_Pinv, which
 * is a rational approximation that cannot fail.
 */
#include <float.h>
#include <math.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>

#include "cairn/quality.h"

/* ------------------------------------------------------------------ */
/* Safeguarded Newton on a continuous distribution                     */
/* ------------------------------------------------------------------ */

typedef struct {
    double (*P)(double x, const double *par);  /* lower tail */
    double (*Q)(double x, const double *par);  /* upper tail */
    double (*pdf)(double x, const double *par);
    double par[2];
} dist;

/* Solve F(x) = p for x in (lo, +inf) with F increasing; `seed` is a start
 * value inside (lo, +inf). For p ≤ 1/2 the residual is P(x) − p; for
 * p > 1/2 it is (1 − p) − Q(x), with 1 − p exact (Sterbenz), so that upper
 * quantiles carry the relative accuracy of Q. */
static double dist_quantile(const dist *d, double p, double lo, double seed)
{
    const int upper = p > 0.5;
    const double target = upper ? 1.0 - p : p;
    double a = lo, b, x, g;
    int it;

#define RESID(xx) (upper ? target - d->Q((xx), d->par) : d->P((xx), d->par) - target)

    /* Upper end of the bracket: grow from the seed until F(b) ≥ p. */
    b = seed > lo ? seed : lo + 1.0;
    for (it = 0; it < 2100 && RESID(b) < 0.0; it++) {
        a = b;
        b = b > 0.0 ? 2.0 * b : b + 1.0;
    }
    if (!(RESID(b) >= 0.0))
        return NAN;

    x = (seed > a && seed < b) ? seed : 0.5 * (a + b);
    for (it = 0; it < 400; it++) {
        double f, step, xn;
        g = RESID(x);
        if (g == 0.0)
            return x;
        if (g < 0.0)
            a = x;
        else
            b = x;
        /* d/dx of either residual form is the density. */
        f = d->pdf(x, d->par);
        xn = (f > 0.0 && isfinite(f)) ? x - g / f : NAN;
        if (!(xn > a && xn < b)) {
            /* Newton left the bracket: bisect, geometrically when the
             * bracket spans orders of magnitude (tiny χ² quantiles, e.g.
             * 1e-24 for p = 1e-12 at 1 dof); while the lower end is still
             * 0 a geometric mean is 0, so shrink b by 16 instead. */
            xn = (a > 0.0 && b > 4.0 * a) ? sqrt(a * b) : 0.5 * (a + b);
            if (a == lo && lo == 0.0 && b > 1e-300)
                xn = b / 16.0;
        }
        step = fabs(xn - x);
        x = xn;
        if (step <= 4.0 * DBL_EPSILON * fabs(x) || b - a <= 4.0 * DBL_EPSILON * fabs(x))
            return x;
    }
#undef RESID
    return x;
}

static double chi2_P(double x, const double *par) { return gsl_cdf_chisq_P(x, par[0]); }
static double chi2_Q(double x, const double *par) { return gsl_cdf_chisq_Q(x, par[0]); }
static double chi2_pdf(double x, const double *par) { return gsl_ran_chisq_pdf(x, par[0]); }
static double t_P(double x, const double *par) { return gsl_cdf_tdist_P(x, par[0]); }
static double t_Q(double x, const double *par) { return gsl_cdf_tdist_Q(x, par[0]); }
static double t_pdf(double x, const double *par) { return gsl_ran_tdist_pdf(x, par[0]); }
static double f_P(double x, const double *par) { return gsl_cdf_fdist_P(x, par[0], par[1]); }
static double f_Q(double x, const double *par) { return gsl_cdf_fdist_Q(x, par[0], par[1]); }
static double f_pdf(double x, const double *par) { return gsl_ran_fdist_pdf(x, par[0], par[1]); }

/* Above this many degrees of freedom χ² quantiles come from the
 * Wilson–Hilferty approximation alone (see cairn_chi2_quantile). */
#define CHI2_WH_DOF 1e6

static int prob_ok(double p)
{
    return p > 0.0 && p < 1.0;
}

static int dof_ok(double dof)
{
    return isfinite(dof) && dof > 0.0;
}

/* ------------------------------------------------------------------ */
/* 1. Distributions                                                    */
/* ------------------------------------------------------------------ */

double cairn_normal_quantile(double p)
{
    if (!prob_ok(p))
        return NAN;
    return gsl_cdf_ugaussian_Pinv(p);
}

double cairn_chi2_quantile(double p, double dof)
{
    dist d = {chi2_P, chi2_Q, chi2_pdf, {0.0, 0.0}};
    double z, c, seed;

    if (p == 0.0 && dof_ok(dof))
        return 0.0;
    if (!prob_ok(p) || !dof_ok(dof))
        return NAN;
    d.par[0] = dof;
    /* Start from the Wilson–Hilferty cube-root approximation (Wilson &
     * Hilferty 1931, from memory), accurate to a few parts in 1e4 beyond
     * a few dof; Newton then needs two or three steps. */
    z = gsl_cdf_ugaussian_Pinv(p);
    c = 2.0 / (9.0 * dof);
    seed = 1.0 - c + z * sqrt(c);
    seed = seed > 0.0 ? dof * seed * seed * seed : 0.0;
    /* GSL 2.7.1's incomplete gamma function gives up (gsl_error from
     * gamma_inc.c) beyond about 2e6 dof outside one standard deviation of
     * the mean, which a 10^6-mark network reaches. There the
     * Wilson–Hilferty value itself is the answer: checked against a
     * 40-digit root of the regularised incomplete gamma function (mpmath),
     * its relative error at 1e6 dof is 4e-11 at p = 0.025 and 0.975 and
     * 7e-10 at p = 0.0005 and 0.9995, and it falls as dof^(-3/2). */
    if (dof > CHI2_WH_DOF && seed > 0.0)
        return seed;
    if (!(seed > 0.0))
        seed = 1e-3 * dof;
    return dist_quantile(&d, p, 0.0, seed);
}

double cairn_t_quantile(double p, double dof)
{
    dist d = {t_P, t_Q, t_pdf, {0.0, 0.0}};
    double z, seed;

    if (!prob_ok(p) || !dof_ok(dof))
        return NAN;
    if (p == 0.5)
        return 0.0;
    if (p < 0.5)
        return -cairn_t_quantile(1.0 - p, dof);
    d.par[0] = dof;
    /* First Cornish–Fisher term of t about the normal (from memory). */
    z = gsl_cdf_ugaussian_Pinv(p);
    seed = z + (z * z * z + z) / (4.0 * dof);
    return dist_quantile(&d, p, 0.0, seed);
}

double cairn_f_quantile(double p, double d1, double d2)
{
    dist d = {f_P, f_Q, f_pdf, {0.0, 0.0}};
    double seed;

    if (p == 0.0 && dof_ok(d1) && dof_ok(d2))
        return 0.0;
    if (!prob_ok(p) || !dof_ok(d1) || !dof_ok(d2))
        return NAN;
    d.par[0] = d1;
    d.par[1] = d2;
    /* Start from the large-d2 limit χ²(p; d1)/d1. */
    seed = cairn_chi2_quantile(p, d1) / d1;
    if (!(seed > 0.0) || !isfinite(seed))
        seed = 1.0;
    return dist_quantile(&d, p, 0.0, seed);
}

/* ------------------------------------------------------------------ */
/* 2. Test statistics                                                  */
/* ------------------------------------------------------------------ */

double cairn_w_critical(double alpha)
{
    if (!prob_ok(alpha))
        return NAN;
    /* Upper tail directly: z_{1−α/2} = −z_{α/2}, exact for small α. */
    return -gsl_cdf_ugaussian_Pinv(0.5 * alpha);
}

/* Power of the two-sided test at critical value z against a shift δ:
 * P(|N(δ, 1)| > z) = Φ(δ − z) + Φ(−δ − z) (Baarda 1968). */
static double power_at(double delta, double z)
{
    return gsl_cdf_ugaussian_P(delta - z) + gsl_cdf_ugaussian_P(-delta - z);
}

double cairn_lambda0(double alpha, double power)
{
    double z, lo, hi, delta;
    int it;

    if (!prob_ok(alpha) || !prob_ok(power) || power < alpha)
        return NAN;
    if (power == alpha)
        return 0.0;
    z = cairn_w_critical(alpha);
    /* The power rises monotonically from alpha at δ = 0 (its derivative
     * φ(δ − z) − φ(δ + z) is positive for δ > 0). The usual approximation
     * δ ≈ z + z_β ignores the far tail, so it is an upper bound within
     * 1e-3 or so: bracket generously, then Newton with bisection. */
    lo = 0.0;
    hi = z + gsl_cdf_ugaussian_Pinv(power) + 1.0;
    if (hi < 1.0)
        hi = 1.0;
    while (power_at(hi, z) < power && hi < 1e3)
        hi *= 2.0;
    delta = 0.5 * (lo + hi);
    for (it = 0; it < 200; it++) {
        double g = power_at(delta, z) - power;
        double dg = gsl_ran_ugaussian_pdf(delta - z) - gsl_ran_ugaussian_pdf(delta + z);
        double dn;
        if (g == 0.0)
            break;
        if (g < 0.0)
            lo = delta;
        else
            hi = delta;
        dn = dg > 0.0 ? delta - g / dg : NAN;
        if (!(dn > lo && dn < hi))
            dn = 0.5 * (lo + hi);
        if (fabs(dn - delta) <= 4.0 * DBL_EPSILON * delta) {
            delta = dn;
            break;
        }
        delta = dn;
    }
    return delta * delta;
}

double cairn_tau_critical(double alpha, int dof)
{
    double t, r;

    if (!prob_ok(alpha) || dof < 2)
        return NAN;
    /* Pope (1976), NOAA Technical Report NOS 65 NGS 1 (from memory): the
     * studentised residual τ = v / (s √q_vv) with s from the same
     * adjustment is distributed as √r t_{r−1} / √(r − 1 + t²_{r−1}); the
     * map t ↦ τ is increasing, so the critical value follows from t's. */
    r = (double)dof;
    t = cairn_t_quantile(1.0 - 0.5 * alpha, r - 1.0);
    return sqrt(r) * t / sqrt(r - 1.0 + t * t);
}

int cairn_global_test(double vtpv, int dof, double sigma0_sq_apriori,
                      double global_alpha, cairn_global_result *out)
{
    out->statistic = NAN;
    out->lower = NAN;
    out->upper = NAN;
    out->sigma0_sq = NAN;
    out->dof = dof;
    out->tested = 0;
    out->pass = 0;
    if (!isfinite(vtpv) || vtpv < 0.0 || dof < 0 || !isfinite(sigma0_sq_apriori)
        || !(sigma0_sq_apriori > 0.0) || !prob_ok(global_alpha))
        return -1;
    out->statistic = vtpv / sigma0_sq_apriori;
    if (dof == 0)
        return 1;   /* no redundancy: nothing to test */
    out->sigma0_sq = vtpv / (double)dof;
    /* Two-sided: reject H0 when the statistic falls in either tail of
     * χ²(dof), each of probability α/2 (REFERENCES.md §1.1). */
    out->lower = cairn_chi2_quantile(0.5 * global_alpha, (double)dof);
    out->upper = cairn_chi2_quantile(1.0 - 0.5 * global_alpha, (double)dof);
    if (!isfinite(out->lower) || !isfinite(out->upper))
        return -1;
    out->tested = 1;
    out->pass = out->statistic >= out->lower && out->statistic <= out->upper;
    return 0;
}
