/*
 * test_stats.c — Check suite for the statistical building blocks
 * (src/quality/stats.c, ellipse.c, reliability.c; include/cairn/quality.h).
 *
 * Every numeric check names its source beside it, with the tag of
 * ../shared/REFERENCES.md: [V] seen in a published source, [C] computed
 * with a general-purpose library, [M] from memory. "Identity" marks a
 * mathematical identity (a closed form of the same quantity), which needs
 * no outside source. Tolerances follow the digits a table gives: half a
 * unit in its last digit.
 *
 * The only mutable static here is the GSL error-handler counter: the
 * library must never reach gsl_error() (whose default handler aborts), and
 * the tests count the calls to prove it.
 */
#include "cairn/quality.h"

#include <check.h>
#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdlib.h>

#define PI 3.14159265358979323846

/* Half a unit in the last of `dec` decimals, plus rounding slack. */
static double half_ulp_dec(int dec)
{
    return 0.5 * pow(10.0, -dec) * (1.0 + 1e-9);
}

/* --------------------------------------------------- GSL error counter */

static int gsl_error_calls;

static void count_gsl_error(const char *reason, const char *file, int line,
                            int gsl_errno)
{
    (void)reason;
    (void)file;
    (void)line;
    (void)gsl_errno;
    gsl_error_calls++;
}

static void setup_gsl_handler(void)
{
    gsl_error_calls = 0;
    gsl_set_error_handler(count_gsl_error);
}

static void teardown_gsl_handler(void)
{
    ck_assert_int_eq(gsl_error_calls, 0);
}

/* ======================================================== 1. quantiles */

/* REFERENCES.md §1.1: every cell [C] scipy.stats.chi2.ppf; lower tail
 * confirmed by [V] NIST/SEMATECH e-Handbook §1.3.6.7.4 (Table 7b), upper
 * tail for df ≤ 10 by [V] the exam-paper appendix table; df 20/50/100 upper
 * [M] NIST. Tolerance: half a unit in the last printed decimal. */
static const struct {
    double df, p, x;
    int dec;
} chi2_tab[] = {
    {1, 0.025, 0.000982, 6},  {1, 0.05, 0.003932, 6},
    {1, 0.95, 3.84146, 5},    {1, 0.975, 5.02389, 5},
    {2, 0.025, 0.05064, 5},   {2, 0.05, 0.10259, 5},
    {2, 0.95, 5.99146, 5},    {2, 0.975, 7.37776, 5},
    {3, 0.025, 0.21580, 5},   {3, 0.05, 0.35185, 5},
    {3, 0.95, 7.81473, 5},    {3, 0.975, 9.34840, 5},
    {5, 0.025, 0.83121, 5},   {5, 0.05, 1.14548, 5},
    {5, 0.95, 11.07050, 5},   {5, 0.975, 12.83250, 5},
    {10, 0.025, 3.24697, 5},  {10, 0.05, 3.94030, 5},
    {10, 0.95, 18.30704, 5},  {10, 0.975, 20.48318, 5},
    {20, 0.025, 9.59078, 5},  {20, 0.05, 10.85081, 5},
    {20, 0.95, 31.41043, 5},  {20, 0.975, 34.16961, 5},
    {50, 0.025, 32.35736, 5}, {50, 0.05, 34.76425, 5},
    {50, 0.95, 67.50481, 5},  {50, 0.975, 71.42020, 5},
    {100, 0.025, 74.22193, 5}, {100, 0.05, 77.92947, 5},
    {100, 0.95, 124.34211, 5}, {100, 0.975, 129.56120, 5},
};
#define N_CHI2 (int)(sizeof chi2_tab / sizeof chi2_tab[0])

START_TEST(test_chi2_table)
{
    double x = cairn_chi2_quantile(chi2_tab[_i].p, chi2_tab[_i].df);
    /* REFERENCES.md §1.1 [C] scipy / [V] NIST e-Handbook §1.3.6.7.4 */
    ck_assert_double_eq_tol(x, chi2_tab[_i].x, half_ulp_dec(chi2_tab[_i].dec));
}
END_TEST

/* REFERENCES.md §1.2: [C] scipy.stats.norm.ppf; [M] NIST/SEMATECH
 * e-Handbook §1.3.6.7.1 to 3-4 decimals; [V] 1.96 in the 1library z-table. */
static const struct {
    double p, z;
} norm_tab[] = {
    {0.80, 0.841621}, {0.90, 1.281552},  {0.95, 1.644854},
    {0.975, 1.959964}, {0.995, 2.575829}, {0.9995, 3.290527},
};
#define N_NORM (int)(sizeof norm_tab / sizeof norm_tab[0])

START_TEST(test_normal_table)
{
    /* REFERENCES.md §1.2 [C] scipy.stats.norm.ppf, 6 decimals */
    ck_assert_double_eq_tol(cairn_normal_quantile(norm_tab[_i].p),
                            norm_tab[_i].z, half_ulp_dec(6));
    /* symmetry z_{1−p} = −z_p (identity) */
    ck_assert_double_eq_tol(cairn_normal_quantile(1.0 - norm_tab[_i].p),
                            -norm_tab[_i].z, half_ulp_dec(6));
}
END_TEST

/* REFERENCES.md §1.3: [C] t(0.975; r), 3 decimals. */
static const struct {
    int r;
    double t;
} t_tab[] = {
    {1, 12.706}, {2, 4.303},  {3, 3.182},  {4, 2.776},  {5, 2.571},
    {10, 2.228}, {20, 2.086}, {30, 2.042}, {100, 1.984},
};
#define N_T (int)(sizeof t_tab / sizeof t_tab[0])

START_TEST(test_t_table)
{
    /* REFERENCES.md §1.3 [C] scipy t(0.975; r) */
    ck_assert_double_eq_tol(cairn_t_quantile(0.975, t_tab[_i].r), t_tab[_i].t,
                            half_ulp_dec(3));
    /* the 95 % two-sided 1-D factor is the same number */
    ck_assert_double_eq_tol(cairn_interval_scale_t(0.95, t_tab[_i].r),
                            t_tab[_i].t, half_ulp_dec(3));
}
END_TEST

START_TEST(test_t_closed_forms)
{
    static const double ps[] = {0.6, 0.9, 0.975, 0.995, 0.9995, 0.3, 0.01};
    size_t k;
    for (k = 0; k < sizeof ps / sizeof ps[0]; k++) {
        double p = ps[k];
        /* Identity: t(1) is the Cauchy law, quantile tan(π(p − 1/2)). */
        double t1 = tan(PI * (p - 0.5));
        /* Identity: t(2) has quantile (2p − 1)/√(2p(1 − p)). */
        double t2 = (2.0 * p - 1.0) / sqrt(2.0 * p * (1.0 - p));
        ck_assert_double_eq_tol(cairn_t_quantile(p, 1), t1, 1e-10 * fabs(t1));
        ck_assert_double_eq_tol(cairn_t_quantile(p, 2), t2, 1e-10 * fabs(t2));
    }
}
END_TEST

START_TEST(test_f_closed_form)
{
    static const double ps[] = {0.05, 0.5, 0.9, 0.95, 0.99, 0.999};
    static const double nus[] = {1, 2, 3, 10, 100, 1000, 1e5};
    size_t k, j;
    for (k = 0; k < sizeof ps / sizeof ps[0]; k++)
        for (j = 0; j < sizeof nus / sizeof nus[0]; j++) {
            double p = ps[k], nu = nus[j];
            /* Identity (from memory): F(2, ν) has P(X ≤ x) =
             * 1 − (1 + 2x/ν)^(−ν/2), so x_p = (ν/2)((1 − p)^(−2/ν) − 1). */
            double x = 0.5 * nu * expm1(-2.0 / nu * log1p(-p));
            ck_assert_double_eq_tol(cairn_f_quantile(p, 2, nu), x, 1e-9 * x);
        }
    /* F(0.95; 2, 10) = 4.10282, the header's example, same identity */
    ck_assert_double_eq_tol(cairn_f_quantile(0.95, 2, 10), 4.10282, 5e-6);
}
END_TEST

START_TEST(test_quantile_domain)
{
    ck_assert_double_nan(cairn_chi2_quantile(1.0, 3));
    ck_assert_double_nan(cairn_chi2_quantile(-0.1, 3));
    ck_assert_double_nan(cairn_chi2_quantile(0.5, 0));
    ck_assert_double_nan(cairn_chi2_quantile(NAN, 3));
    ck_assert_double_eq(cairn_chi2_quantile(0.0, 3), 0.0);
    ck_assert_double_nan(cairn_normal_quantile(0.0));
    ck_assert_double_nan(cairn_normal_quantile(1.0));
    ck_assert_double_nan(cairn_t_quantile(0.5, -1));
    ck_assert_double_eq(cairn_t_quantile(0.5, 7), 0.0);
    ck_assert_double_nan(cairn_f_quantile(0.5, 2, 0));
    ck_assert_double_nan(cairn_f_quantile(1.0, 2, 3));
    ck_assert_double_nan(cairn_w_critical(0.0));
    ck_assert_double_nan(cairn_lambda0(0.001, 1.0));
    ck_assert_double_nan(cairn_lambda0(0.1, 0.05));  /* power below alpha */
    ck_assert_double_nan(cairn_tau_critical(0.05, 1));
    ck_assert_double_nan(cairn_ellipse_scale(1.0));
    ck_assert_double_nan(cairn_ellipse_scale_f(0.95, 0));
    ck_assert_double_nan(cairn_interval_scale(0.0));
}
END_TEST

/* Regression, issue #5 (2026-12-01): GSL 2.7.1's gsl_cdf_chisq_Pinv(0.975,
 * 5391) and gsl_cdf_fdist_Pinv(0.7, 2, 471) "fail to converge" and call
 * gsl_error(), whose default handler aborts the process; GSL's incomplete
 * gamma function does the same beyond ~2e6 dof. The quantiles must stay
 * finite, monotone and free of gsl_error() calls over every dof a network
 * can have (the fixture counts the calls). */
START_TEST(test_regression_no_gsl_error)
{
    static const double ps[] = {1e-12, 1e-6, 5e-4, 0.025, 0.05, 0.3, 0.5,
                                0.7, 0.95, 0.975, 0.9995, 1.0 - 1e-6};
    double d;
    size_t k;
    for (d = 1.0; d < 3e7; d *= 1.37) {
        double nu = floor(d), prev_c = 0.0, prev_t = -INFINITY, prev_f = 0.0;
        for (k = 0; k < sizeof ps / sizeof ps[0]; k++) {
            double c = cairn_chi2_quantile(ps[k], nu);
            double t = cairn_t_quantile(ps[k], nu);
            double f = cairn_f_quantile(ps[k], 2.0, nu);
            ck_assert_msg(isfinite(c) && isfinite(t) && isfinite(f),
                          "nu %g p %g: %g %g %g", nu, ps[k], c, t, f);
            ck_assert(c > prev_c && t > prev_t && f > prev_f);
            prev_c = c;
            prev_t = t;
            prev_f = f;
        }
    }
    /* [C] mpmath 1.3.0 (40 digits), computed for this test:
     * χ²(0.975; 5391) = 5596.40325499056, the call GSL's Pinv fails on */
    ck_assert_double_eq_tol(cairn_chi2_quantile(0.975, 5391), 5596.40325499056, 1e-8);
    /* the F call GSL's Pinv fails on, against the F(2, ν) closed form
     * (identity, see test_f_closed_form) */
    ck_assert_double_eq_tol(cairn_f_quantile(0.7, 2, 471),
                            235.5 * expm1(-2.0 / 471.0 * log1p(-0.7)), 1e-12);
}
END_TEST

START_TEST(test_chi2_large_dof)
{
    /* [C] mpmath 1.3.0, 40-digit root of the regularised incomplete gamma
     * function, computed for this test: χ²(0.025; 1e6) = 997230.08714329,
     * χ²(0.975; 1e6) = 1002773.70146793, χ²(0.975; 1e5) = 100878.415305666,
     * χ²(0.0005; 1e4) = 9541.19085749595. Relative tolerance 1e-9. The
     * 1e6 + 1 values check the switch to Wilson–Hilferty (continuity). */
    ck_assert_double_eq_tol(cairn_chi2_quantile(0.025, 1e6), 997230.08714329, 1e-3);
    ck_assert_double_eq_tol(cairn_chi2_quantile(0.975, 1e6), 1002773.70146793, 1e-3);
    ck_assert_double_eq_tol(cairn_chi2_quantile(0.975, 1e6 + 1.0),
                            1002773.70146793 + 1.0, 2e-3);
    ck_assert_double_eq_tol(cairn_chi2_quantile(0.975, 1e5), 100878.415305666, 1e-4);
    ck_assert_double_eq_tol(cairn_chi2_quantile(0.0005, 1e4), 9541.19085749595, 1e-5);
}
END_TEST

/* ================================================= 2. test statistics */

/* REFERENCES.md §2: λ0 [C] solved from the non-central χ²(1, λ), with the
 * table's critical w (Baarda 1968 [V] for β0 = 0.70/0.80/0.90 as the
 * standard powers; the values themselves [M] and [C]). */
static const struct {
    double alpha, power, lambda0, delta0, wcrit;
} lam_tab[] = {
    {0.001, 0.80, 17.075, 4.132, 3.2905},
    {0.01, 0.80, 11.679, 3.417, 2.5758},
    {0.05, 0.80, 7.849, 2.802, 1.9600},
    {0.001, 0.70, 14.554, NAN, 3.2905},
    {0.001, 0.90, 20.904, NAN, 3.2905},
};
#define N_LAM (int)(sizeof lam_tab / sizeof lam_tab[0])

START_TEST(test_lambda0_table)
{
    double l = cairn_lambda0(lam_tab[_i].alpha, lam_tab[_i].power);
    double z = cairn_w_critical(lam_tab[_i].alpha);
    double pw;
    /* REFERENCES.md §2 [C], 3 decimals */
    ck_assert_double_eq_tol(l, lam_tab[_i].lambda0, half_ulp_dec(3));
    if (!isnan(lam_tab[_i].delta0))   /* REFERENCES.md §2 √λ0 [C] */
        ck_assert_double_eq_tol(sqrt(l), lam_tab[_i].delta0, half_ulp_dec(3));
    /* REFERENCES.md §2 critical w = z(1 − α0/2) [C], 4 decimals */
    ck_assert_double_eq_tol(z, lam_tab[_i].wcrit, half_ulp_dec(4));
    /* Identity: the defining equation holds to rounding. */
    pw = 0.5 * erfc((z - sqrt(l)) / sqrt(2.0)) + 0.5 * erfc((sqrt(l) + z) / sqrt(2.0));
    ck_assert_double_eq_tol(pw, lam_tab[_i].power, 1e-12);
    /* REFERENCES.md §2 [C]: (z(1−α/2) + z(β))² agrees to better than 1e-4
     * relative */
    {
        double zb = cairn_normal_quantile(lam_tab[_i].power);
        ck_assert_double_eq_tol((z + zb) * (z + zb), l, 1e-4 * l);
    }
}
END_TEST

START_TEST(test_tau_critical)
{
    static const double alphas[] = {0.05, 0.01, 0.001};
    size_t k;
    int r;
    for (k = 0; k < sizeof alphas / sizeof alphas[0]; k++) {
        double a = alphas[k];
        /* Identity: for r = 2, t(1) = tan(π(1 − α)/2), so
         * τ = √2 sin(π(1 − α)/2) = √2 cos(πα/2). */
        ck_assert_double_eq_tol(cairn_tau_critical(a, 2),
                                sqrt(2.0) * cos(PI * a / 2.0), 1e-12);
        for (r = 2; r < 200; r += 7) {
            double tau = cairn_tau_critical(a, r);
            /* Pope (1976), NOAA TR NOS 65 NGS 1 [M]: |τ| ≤ √r always. */
            ck_assert(tau > 0.0 && tau < sqrt((double)r));
            /* the τ critical value lies below the t one it came from */
            ck_assert(tau <= cairn_t_quantile(1.0 - a / 2.0, r - 1) + 1e-12);
        }
        /* Pope (1976) [M]: τ tends to the normal as r grows;
         * REFERENCES.md §1.2 [C] z values */
        ck_assert_double_eq_tol(cairn_tau_critical(a, 10000000),
                                cairn_w_critical(a), 1e-5);
    }
    /* REFERENCES.md §1.3 [C] t(0.975; 10) = 2.228 fed through Pope's formula
     * by hand: √11 · 2.228 / √(10 + 2.228²) = 1.9102 (r = 11, α = 0.05);
     * 5e-4 covers the 3 decimals of t. */
    ck_assert_double_eq_tol(cairn_tau_critical(0.05, 11), 1.9102, 5e-4);
}
END_TEST

START_TEST(test_global_test)
{
    cairn_global_result g;
    /* Bounds: REFERENCES.md §1.1, df 10, α = 0.05 two-sided:
     * χ²(0.025) = 3.24697, χ²(0.975) = 20.48318 [C] / [V] NIST §1.3.6.7.4 */
    ck_assert_int_eq(cairn_global_test(15.0, 10, 1.0, 0.05, &g), 0);
    ck_assert_int_eq(g.tested, 1);
    ck_assert_int_eq(g.pass, 1);
    ck_assert_double_eq_tol(g.lower, 3.24697, half_ulp_dec(5));
    ck_assert_double_eq_tol(g.upper, 20.48318, half_ulp_dec(5));
    ck_assert_double_eq_tol(g.statistic, 15.0, 1e-15);
    ck_assert_double_eq_tol(g.sigma0_sq, 1.5, 1e-15);
    ck_assert_int_eq(g.dof, 10);

    ck_assert_int_eq(cairn_global_test(25.0, 10, 1.0, 0.05, &g), 0);
    ck_assert_int_eq(g.pass, 0);                    /* above 20.48318 */
    ck_assert_int_eq(cairn_global_test(2.0, 10, 1.0, 0.05, &g), 0);
    ck_assert_int_eq(g.pass, 0);                    /* below 3.24697 */
    /* a priori σ0² = 2 halves the statistic: 30/2 = 15 passes */
    ck_assert_int_eq(cairn_global_test(30.0, 10, 2.0, 0.05, &g), 0);
    ck_assert_int_eq(g.pass, 1);
    ck_assert_double_eq_tol(g.statistic, 15.0, 1e-15);
    /* REFERENCES.md §1.1 df 100: 74.22193 / 129.56120 [C] */
    ck_assert_int_eq(cairn_global_test(100.0, 100, 1.0, 0.05, &g), 0);
    ck_assert_double_eq_tol(g.lower, 74.22193, half_ulp_dec(5));
    ck_assert_double_eq_tol(g.upper, 129.56120, half_ulp_dec(5));

    /* dof = 0: no test possible, flagged by the return value and `tested` */
    ck_assert_int_eq(cairn_global_test(0.0, 0, 1.0, 0.05, &g), 1);
    ck_assert_int_eq(g.tested, 0);
    ck_assert_int_eq(g.pass, 0);
    ck_assert_double_nan(g.lower);
    ck_assert_double_nan(g.upper);
    ck_assert_double_nan(g.sigma0_sq);

    ck_assert_int_eq(cairn_global_test(-1.0, 5, 1.0, 0.05, &g), -1);
    ck_assert_int_eq(cairn_global_test(1.0, -1, 1.0, 0.05, &g), -1);
    ck_assert_int_eq(cairn_global_test(1.0, 5, 0.0, 0.05, &g), -1);
    ck_assert_int_eq(cairn_global_test(1.0, 5, 1.0, 1.0, &g), -1);
    ck_assert_int_eq(cairn_global_test(NAN, 5, 1.0, 0.05, &g), -1);

    /* Regression, issue #5 (2026-12-01): a 3e6-dof network (GSL's own
     * quantile aborts beyond a few thousand dof). [C] mpmath scale check:
     * the bounds straddle dof by about 1.96 √(2 dof). */
    ck_assert_int_eq(cairn_global_test(3e6, 3000000, 1.0, 0.05, &g), 0);
    ck_assert_int_eq(g.pass, 1);
    ck_assert_double_eq_tol(g.upper - 3e6, 1.959964 * sqrt(6e6), 5.0);
    ck_assert_double_eq_tol(3e6 - g.lower, 1.959964 * sqrt(6e6), 5.0);
}
END_TEST

/* ====================================================== 3. precision */

/* REFERENCES.md §3.1 [C]: k = √χ²(p; 2). The 0.3935 row is the standard
 * ellipse, p = 1 − e^(−1/2) exactly (0.3935 is that number rounded). */
static const struct {
    double p, k;
} escale_tab[] = {
    {0.39346934028736658, 1.0000}, {0.50, 1.1774}, {0.90, 2.1460},
    {0.95, 2.4477}, {0.99, 3.0349},
};
#define N_ESCALE (int)(sizeof escale_tab / sizeof escale_tab[0])

START_TEST(test_ellipse_scale_table)
{
    double p = escale_tab[_i].p;
    double k = cairn_ellipse_scale(p);
    /* REFERENCES.md §3.1 [C], 4 decimals */
    ck_assert_double_eq_tol(k, escale_tab[_i].k, half_ulp_dec(4));
    /* Identity: χ²(2) is exponential, k = √(−2 ln(1 − p)). */
    ck_assert_double_eq_tol(k, sqrt(-2.0 * log1p(-p)), 1e-12);
}
END_TEST

START_TEST(test_scale_published)
{
    /* [V] USACE manual (REFERENCES.md §3.1): "a 2.45 sigma (or 95 percent)
     * probability ellipse" */
    ck_assert_double_eq_tol(cairn_ellipse_scale(0.95), 2.45, 0.005);
    /* REFERENCES.md §3.1 [C]: 1-D factor at 95 % is 1.9600 */
    ck_assert_double_eq_tol(cairn_interval_scale(0.95), 1.9600, half_ulp_dec(4));
    /* [V] REFERENCES.md §3.2: published 95 % axes of a 3-dof traverse are
     * 4.37 × the standard axes */
    ck_assert_double_eq_tol(cairn_ellipse_scale_f(0.95, 3), 4.37, 0.005);
}
END_TEST

/* REFERENCES.md §3.2 [C] k95 = √(2 F(0.95; 2, r)); [M] tabulated in
 * Ghilani & Wolf, Adjustment Computations, error-ellipse chapter. r = ∞ is
 * checked at r = 10^6. */
static const struct {
    int r;
    double k;
} k95_tab[] = {
    {1, 19.975}, {2, 6.164}, {3, 4.371},  {4, 3.727},  {5, 3.402},
    {6, 3.207},  {8, 2.986}, {10, 2.865}, {15, 2.714}, {20, 2.643},
    {30, 2.575}, {50, 2.523}, {100, 2.485}, {1000000, 2.448},
};
#define N_K95 (int)(sizeof k95_tab / sizeof k95_tab[0])

START_TEST(test_k95_table)
{
    /* REFERENCES.md §3.2 [C], 3 decimals */
    ck_assert_double_eq_tol(cairn_ellipse_scale_f(0.95, k95_tab[_i].r),
                            k95_tab[_i].k, half_ulp_dec(3));
}
END_TEST

/* Ellipse by the textbook route, independent of the library's: Ghilani &
 * Wolf, Adjustment Computations, error-ellipse chapter (standard formula):
 * tan 2t = 2 q_xy / (q_yy − q_xx), t the azimuth from north (y), then
 *   S_u² = q_xx sin²t + 2 q_xy sin t cos t + q_yy cos²t,
 *   S_v² = q_xx cos²t − 2 q_xy sin t cos t + q_yy sin²t,
 * and the larger of the two is the semi-major axis (t turned by 90° when
 * S_v is the larger). Returns a, b, azimuth in [0, π). */
static void textbook_ellipse(double qxx, double qxy, double qyy, double *a,
                             double *b, double *az)
{
    double t = 0.5 * atan2(2.0 * qxy, qyy - qxx);
    double s = sin(t), c = cos(t);
    double su2 = qxx * s * s + 2.0 * qxy * s * c + qyy * c * c;
    double sv2 = qxx * c * c - 2.0 * qxy * s * c + qyy * s * s;
    if (sv2 > su2) {
        double tmp = su2;
        su2 = sv2;
        sv2 = tmp;
        t += 0.5 * PI;
    }
    while (t < 0.0)
        t += PI;
    while (t >= PI)
        t -= PI;
    *a = sqrt(su2);
    *b = sqrt(sv2 > 0.0 ? sv2 : 0.0);
    *az = t;
}

static const struct {
    double qee, qen, qnn;
    double a, b, az_deg; /* hand values; NAN = use the textbook route only */
} ell_tab[] = {
    /* elongated NE–SW: eigenvalues 3, 1 (hand), major axis at 45° */
    {2.0, 1.0, 2.0, 1.7320508075688772, 1.0, 45.0},
    /* NW–SE */
    {2.0, -1.0, 2.0, 1.7320508075688772, 1.0, 135.0},
    /* east–west major axis */
    {4.0, 0.0, 1.0, 2.0, 1.0, 90.0},
    /* north–south major axis */
    {1.0, 0.0, 4.0, 2.0, 1.0, 0.0},
    /* four quadrants of 2θ, and a realistic mark (1.5 cm × 2 cm, m²) */
    {1.0, 0.3, 3.0, NAN, NAN, NAN},
    {3.0, 0.3, 1.0, NAN, NAN, NAN},
    {3.0, -0.3, 1.0, NAN, NAN, NAN},
    {1.0, -0.3, 3.0, NAN, NAN, NAN},
    {0.000225, -0.00012, 0.0004, NAN, NAN, NAN},
    {1e-8, 4e-9, 2.5e-9, NAN, NAN, NAN},
};
#define N_ELL (int)(sizeof ell_tab / sizeof ell_tab[0])

START_TEST(test_ellipse_axes)
{
    cairn_ellipse e, e95;
    double a, b, az, tol;
    ck_assert_int_eq(cairn_ellipse2(ell_tab[_i].qee, ell_tab[_i].qen,
                                    ell_tab[_i].qnn, 1.0, &e), 0);
    textbook_ellipse(ell_tab[_i].qee, ell_tab[_i].qen, ell_tab[_i].qnn, &a, &b, &az);
    tol = 1e-12 * a;
    /* Ghilani & Wolf error-ellipse formula (textbook route above) */
    ck_assert_double_eq_tol(e.a, a, tol);
    ck_assert_double_eq_tol(e.b, b, tol);
    ck_assert_double_eq_tol(e.azimuth, az, 1e-12);
    ck_assert(e.azimuth >= 0.0 && e.azimuth < PI);
    if (!isnan(ell_tab[_i].a)) {   /* hand computation */
        ck_assert_double_eq_tol(e.a, ell_tab[_i].a, 1e-14);
        ck_assert_double_eq_tol(e.b, ell_tab[_i].b, 1e-14);
        ck_assert_double_eq_tol(e.azimuth * 180.0 / PI, ell_tab[_i].az_deg, 1e-12);
    }
    /* the scale multiplies both axes and leaves the azimuth */
    ck_assert_int_eq(cairn_ellipse2(ell_tab[_i].qee, ell_tab[_i].qen,
                                    ell_tab[_i].qnn, 2.4477, &e95), 0);
    ck_assert_double_eq_tol(e95.a, 2.4477 * e.a, 1e-14 * e95.a);
    ck_assert_double_eq_tol(e95.b, 2.4477 * e.b, 1e-14 * e95.a);
    ck_assert_double_eq(e95.azimuth, e.azimuth);
    /* Identity: a² + b² = trace, a² b² = det */
    ck_assert_double_eq_tol(e.a * e.a + e.b * e.b, ell_tab[_i].qee + ell_tab[_i].qnn,
                            1e-12 * (ell_tab[_i].qee + ell_tab[_i].qnn));
}
END_TEST

START_TEST(test_ellipse_degenerate)
{
    cairn_ellipse e;
    /* circle: no major axis, azimuth 0 (identity) */
    ck_assert_int_eq(cairn_ellipse2(0.0004, 0.0, 0.0004, 1.0, &e), 0);
    ck_assert_double_eq_tol(e.a, 0.02, 1e-15);
    ck_assert_double_eq_tol(e.b, 0.02, 1e-15);
    ck_assert_double_eq(e.azimuth, 0.0);
    /* circle with rounding noise in the covariance */
    ck_assert_int_eq(cairn_ellipse2(1.0, 1e-17, 1.0 + 2e-16, 1.0, &e), 0);
    ck_assert_double_eq(e.azimuth, 0.0);
    /* zero matrix (a held mark) */
    ck_assert_int_eq(cairn_ellipse2(0.0, 0.0, 0.0, 2.4477, &e), 0);
    ck_assert_double_eq(e.a, 0.0);
    ck_assert_double_eq(e.b, 0.0);
    ck_assert_double_eq(e.azimuth, 0.0);
    /* rank one: eigenvalues 2 and 0, major axis NE (identity) */
    ck_assert_int_eq(cairn_ellipse2(1.0, 1.0, 1.0, 1.0, &e), 0);
    ck_assert_double_eq_tol(e.a, sqrt(2.0), 1e-15);
    ck_assert_double_eq(e.b, 0.0);
    ck_assert_double_eq_tol(e.azimuth, PI / 4.0, 1e-15);
    /* slightly negative eigenvalue from rounding: clamped to 0 */
    ck_assert_int_eq(cairn_ellipse2(1.0, 1.0 + 1e-15, 1.0, 1.0, &e), 0);
    ck_assert_double_eq(e.b, 0.0);
    ck_assert(!isnan(e.a));
    /* not a covariance matrix, or bad arguments */
    ck_assert_int_eq(cairn_ellipse2(1.0, 2.0, 1.0, 1.0, &e), -1);
    ck_assert_double_nan(e.a);
    ck_assert_int_eq(cairn_ellipse2(-1.0, 0.0, -1.0, 1.0, &e), -1);
    ck_assert_int_eq(cairn_ellipse2(1.0, 0.0, 1.0, -1.0, &e), -1);
    ck_assert_int_eq(cairn_ellipse2(NAN, 0.0, 1.0, 1.0, &e), -1);
}
END_TEST

START_TEST(test_ellipsoid3)
{
    /* Constructed: Q = R diag(9, 4, 1) Rᵀ with R a rotation, so the axes
     * are 3, 2, 1 along R's columns (identity; no outside source). */
    const double c1 = cos(0.3), s1 = sin(0.3), c2 = cos(-0.7), s2 = sin(-0.7);
    double rz[9] = {c1, -s1, 0, s1, c1, 0, 0, 0, 1};
    double rx[9] = {1, 0, 0, 0, c2, -s2, 0, s2, c2};
    double R[9], q[9], axes[3], dirs[9];
    const double lam[3] = {9.0, 4.0, 1.0};
    int i, j, k;
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++) {
            R[3 * i + j] = 0.0;
            for (k = 0; k < 3; k++)
                R[3 * i + j] += rz[3 * i + k] * rx[3 * k + j];
        }
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++) {
            q[3 * i + j] = 0.0;
            for (k = 0; k < 3; k++)
                q[3 * i + j] += R[3 * i + k] * lam[k] * R[3 * j + k];
        }
    ck_assert_int_eq(cairn_ellipsoid3(q, 1.0, axes, dirs), 0);
    for (k = 0; k < 3; k++) {
        double dot = 0.0, n2 = 0.0;
        ck_assert_double_eq_tol(axes[k], sqrt(lam[k]), 1e-12);
        for (i = 0; i < 3; i++) {
            dot += dirs[3 * k + i] * R[3 * i + k];
            n2 += dirs[3 * k + i] * dirs[3 * k + i];
        }
        ck_assert_double_eq_tol(n2, 1.0, 1e-12);
        ck_assert_double_eq_tol(fabs(dot), 1.0, 1e-12);   /* same axis */
    }
    /* scale, NULL dirs */
    ck_assert_int_eq(cairn_ellipsoid3(q, 2.4477, axes, NULL), 0);
    ck_assert_double_eq_tol(axes[0], 3.0 * 2.4477, 1e-11);

    /* Block diagonal: the horizontal part equals cairn_ellipse2 and the
     * height axis is vertical; largest component positive. */
    {
        double qb[9] = {2.0, 1.0, 0.0, 1.0, 2.0, 0.0, 0.0, 0.0, 0.25};
        cairn_ellipse e;
        ck_assert_int_eq(cairn_ellipsoid3(qb, 1.0, axes, dirs), 0);
        ck_assert_int_eq(cairn_ellipse2(2.0, 1.0, 2.0, 1.0, &e), 0);
        ck_assert_double_eq_tol(axes[0], e.a, 1e-12);
        ck_assert_double_eq_tol(axes[1], e.b, 1e-12);
        ck_assert_double_eq_tol(axes[2], 0.5, 1e-12);
        ck_assert_double_eq_tol(dirs[6 + 2], 1.0, 1e-12);
        /* major axis points NE: azimuth atan2(e, n) = 45° */
        ck_assert_double_eq_tol(atan2(dirs[0], dirs[1]), PI / 4.0, 1e-12);
    }
    /* rank deficient with rounding: clamped to 0, not NaN */
    {
        double qr[9] = {1, 1, 1, 1, 1, 1, 1, 1, 1};
        ck_assert_int_eq(cairn_ellipsoid3(qr, 1.0, axes, dirs), 0);
        ck_assert_double_eq_tol(axes[0], sqrt(3.0), 1e-12);
        ck_assert_double_eq_tol(axes[1], 0.0, 1e-7);
        ck_assert_double_eq_tol(axes[2], 0.0, 1e-7);
    }
    {
        double qn[9] = {1, 0, 0, 0, -1, 0, 0, 0, 1};
        double qnan[9] = {1, 0, 0, 0, NAN, 0, 0, 0, 1};
        ck_assert_int_eq(cairn_ellipsoid3(qn, 1.0, axes, dirs), -1);
        ck_assert_int_eq(cairn_ellipsoid3(qnan, 1.0, axes, dirs), -1);
    }
}
END_TEST

/* REFERENCES.md §3.3: K by the FGDC formula [M] FGDC-STD-007.2-1998 and
 * the exact 95 % circle [C]. */
static const struct {
    double c, k_formula, k_exact;
} r95_tab[] = {
    {0.0, 1.96079, 1.95996},  {0.25, 1.97476, 1.97651}, {0.5, 2.03785, 2.03586},
    {0.75, 2.18490, 2.18580}, {1.0, 2.45076, 2.44775},
};
#define N_R95 (int)(sizeof r95_tab / sizeof r95_tab[0])

START_TEST(test_r95_table)
{
    const double smax = 0.012;   /* metres */
    double r = cairn_r95(smax, r95_tab[_i].c * smax);
    /* REFERENCES.md §3.3 K (formula) column, 5 decimals */
    ck_assert_double_eq_tol(r / smax, r95_tab[_i].k_formula, half_ulp_dec(5));
    /* REFERENCES.md §3.3 [C] exact column, tolerance 0.004 σmax as stated */
    ck_assert_double_eq_tol(r, r95_tab[_i].k_exact * smax, 0.004 * smax);
    /* argument order does not matter */
    ck_assert_double_eq(cairn_r95(r95_tab[_i].c * smax, smax), r);
}
END_TEST

START_TEST(test_r95_domain)
{
    ck_assert_double_eq(cairn_r95(0.0, 0.0), 0.0);
    ck_assert_double_nan(cairn_r95(-1.0, 0.5));
    ck_assert_double_nan(cairn_r95(1.0, NAN));
}
END_TEST

/* ===================================================== 4. reliability */

START_TEST(test_reliability_obs)
{
    cairn_obs_rel o;
    const double l0 = cairn_lambda0(0.001, 0.80), wc = cairn_w_critical(0.001);

    /* Hand computation from the definitions of REFERENCES.md §2 (Baarda
     * 1968): v = −10 mm, σ = 5 mm, r = 0.25: w = −0.010/(0.005·0.5) = −4,
     * MDB = 0.005 √(17.0746/0.25) = 0.041321, ∇̂ = −v/r = 0.040,
     * σ∇ = σ/√r = 0.010; |w| = 4 > 3.2905 → flagged. */
    ck_assert_int_eq(cairn_reliability_obs(-0.010, 0.005, 0.25, l0, wc, &o), 0);
    ck_assert_double_eq_tol(o.w, -4.0, 1e-12);
    ck_assert_double_eq_tol(o.mdb, 0.005 * sqrt(17.075 / 0.25), 1e-6);
    ck_assert_double_eq_tol(o.nabla, 0.040, 1e-15);
    ck_assert_double_eq_tol(o.sd_nabla, 0.010, 1e-15);
    ck_assert_double_eq(o.r, 0.25);
    ck_assert_int_eq(o.status, CAIRN_OBS_FLAGGED);
    ck_assert_str_eq(cairn_obs_status_name(o.status), "flagged");
    /* ∇̂/σ∇ = −w: the estimated blunder and w agree (identity) */
    ck_assert_double_eq_tol(o.nabla / o.sd_nabla, -o.w, 1e-12);

    /* same residual, r = 0.81: w = −0.010/(0.005·0.9) = −2.222 → ok */
    ck_assert_int_eq(cairn_reliability_obs(-0.010, 0.005, 0.81, l0, wc, &o), 0);
    ck_assert_double_eq_tol(o.w, -2.0 / 0.9, 1e-12);
    ck_assert_int_eq(o.status, CAIRN_OBS_OK);
    ck_assert_str_eq(cairn_obs_status_name(o.status), "ok");

    /* r below 0.01 (FORMAT.md observations.csv): unchecked, no w, no MDB */
    ck_assert_int_eq(cairn_reliability_obs(-0.010, 0.005, 0.005, l0, wc, &o), 0);
    ck_assert_int_eq(o.status, CAIRN_OBS_UNCHECKED);
    ck_assert_double_nan(o.w);
    ck_assert_double_nan(o.mdb);
    ck_assert_double_nan(o.nabla);
    ck_assert_double_nan(o.sd_nabla);
    ck_assert_str_eq(cairn_obs_status_name(o.status), "unchecked");
    ck_assert_int_eq(cairn_reliability_obs(0.0, 0.005, 0.0, l0, wc, &o), 0);
    ck_assert_int_eq(o.status, CAIRN_OBS_UNCHECKED);
    /* exactly at the threshold it is checked */
    ck_assert_int_eq(cairn_reliability_obs(0.0, 0.005, CAIRN_R_MIN, l0, wc, &o), 0);
    ck_assert_int_eq(o.status, CAIRN_OBS_OK);

    ck_assert_int_eq(cairn_reliability_obs(0.0, 0.0, 0.5, l0, wc, &o), -1);
    ck_assert_int_eq(cairn_reliability_obs(NAN, 0.005, 0.5, l0, wc, &o), -1);
    ck_assert_int_eq(cairn_reliability_obs(0.0, 0.005, 0.5, 0.0, wc, &o), -1);
    ck_assert_str_eq(cairn_obs_status_name(CAIRN_OBS_REJECTED), "rejected");
    ck_assert_str_eq(cairn_obs_status_name((cairn_obs_status)99), "?");
}
END_TEST

START_TEST(test_external_reliability)
{
    const double dx[4] = {0.1, -0.35, 0.2, 0.0};
    /* hand: max |dx| = 0.35, times MDB 0.04 = 0.014 */
    ck_assert_double_eq_tol(cairn_external_reliability(dx, 4, 0.04), 0.014, 1e-15);
    ck_assert_double_eq(cairn_external_reliability(dx, 0, 0.04), 0.0);
    ck_assert_double_nan(cairn_external_reliability(dx, 4, NAN));
}
END_TEST

/* A dense symmetric Qxx for the callback. */
typedef struct {
    int n;
    const double *q;   /* row-major n × n */
    int calls;
} dense_q;

static int dense_get(void *ctx, int i, int j, double *pq)
{
    dense_q *d = ctx;
    d->calls++;
    if (i < 0 || j < 0 || i >= d->n || j >= d->n)
        return -1;
    *pq = d->q[i * d->n + j];
    return 0;
}

START_TEST(test_redundancy)
{
    /* Levelling network, fixed A (h = 0), unknowns hB (0), hC (1); four
     * rises, σ = 1, 1, 1, √2 (weights 1, 1, 1, 0.5):
     *   A→B: a = (1, 0); B→C: (−1, 1); C→A: (0, −1); A→C: (0, 1).
     * N = AᵀPA = [[2, −1], [−1, 2.5]], det = 4, so by hand
     * Qxx = [[0.625, 0.25], [0.25, 0.5]]. */
    const double q[4] = {0.625, 0.25, 0.25, 0.5};
    dense_q d = {2, q, 0};
    const double rows[4][2] = {{1, 0}, {-1, 1}, {0, -1}, {0, 1}};
    const int idx[2] = {0, 1};
    const double p[4] = {1.0, 1.0, 1.0, 0.5};
    double r[4], sum = 0.0;
    int k;
    for (k = 0; k < 4; k++) {
        r[k] = cairn_redundancy(p[k], rows[k], idx, 2, dense_get, &d);
        sum += r[k];
    }
    /* hand: r = 1 − p a Q aᵀ: 1 − 0.625 = 0.375; 1 − (0.625 − 0.5 + 0.5)
     * = 0.375; 1 − 0.5 = 0.5; 1 − 0.5·0.5 = 0.75 */
    ck_assert_double_eq_tol(r[0], 0.375, 1e-15);
    ck_assert_double_eq_tol(r[1], 0.375, 1e-15);
    ck_assert_double_eq_tol(r[2], 0.5, 1e-15);
    ck_assert_double_eq_tol(r[3], 0.75, 1e-15);
    /* REFERENCES.md §2: Σ r_i = n − u = 4 − 2 */
    ck_assert_double_eq_tol(sum, 2.0, 1e-14);
    /* zero coefficients are skipped; each pair fetched at most once */
    d.calls = 0;
    (void)cairn_redundancy(1.0, rows[0], idx, 2, dense_get, &d);
    ck_assert_int_eq(d.calls, 1);
    d.calls = 0;
    (void)cairn_redundancy(1.0, rows[1], idx, 2, dense_get, &d);
    ck_assert_int_eq(d.calls, 3);
    /* failures */
    {
        const int bad[2] = {0, 7};
        ck_assert_double_nan(cairn_redundancy(1.0, rows[1], bad, 2, dense_get, &d));
        ck_assert_double_nan(cairn_redundancy(-1.0, rows[1], idx, 2, dense_get, &d));
        ck_assert_double_nan(cairn_redundancy(1.0, rows[1], idx, -1, dense_get, &d));
        ck_assert_double_eq(cairn_redundancy(1.0, NULL, NULL, 0, NULL, NULL), 1.0);
    }
}
END_TEST

/* ============================================ 5. tolerances, allowances */

START_TEST(test_tolerance)
{
    double allowed;
    /* REFERENCES.md §4.2 [C]: ALTA/NSPS 20 mm + 50 ppm allows 0.0350 m at
     * 300 m and 0.0700 m at 1000 m */
    ck_assert_double_eq_tol(cairn_tolerance_allowed(300.0, 0.020, 50.0), 0.0350, 1e-15);
    ck_assert_double_eq_tol(cairn_tolerance_allowed(1000.0, 0.020, 50.0), 0.0700, 1e-15);
    /* REFERENCES.md §4.2 [V] ACSM Bulletin #225 (Feb 2007):
     * 0.07 ft + 786.00 ft × 50/1,000,000 = 0.1093 ft */
    ck_assert_double_eq_tol(cairn_tolerance_allowed(786.0, 0.07, 50.0), 0.1093, 1e-12);

    ck_assert_int_eq(cairn_tolerance_check(0.030, 300.0, 0.020, 50.0, &allowed), 1);
    ck_assert_double_eq_tol(allowed, 0.0350, 1e-15);
    ck_assert_int_eq(cairn_tolerance_check(0.036, 300.0, 0.020, 50.0, &allowed), 0);
    ck_assert_int_eq(cairn_tolerance_check(0.1093, 786.0, 0.07, 50.0, NULL), 1);
    ck_assert_int_eq(cairn_tolerance_check(0.1094, 786.0, 0.07, 50.0, NULL), 0);
    ck_assert_int_eq(cairn_tolerance_check(0.01, -1.0, 0.02, 50.0, &allowed), -1);
    ck_assert_double_nan(allowed);
    ck_assert_int_eq(cairn_tolerance_check(NAN, 100.0, 0.02, 50.0, NULL), -1);
    ck_assert_double_nan(cairn_tolerance_allowed(100.0, -0.02, 50.0));
}
END_TEST

START_TEST(test_level_allowance)
{
    /* REFERENCES.md §4.3 [C] from the FGCC (1984) §3.5 table [M]: a 9 km
     * first-order class I loop allows 4 mm √9 = 12 mm; a 16 km third-order
     * loop allows 12 mm √16 = 48 mm */
    ck_assert_double_eq_tol(cairn_level_allowance(0.004, 9.0), 0.012, 1e-15);
    ck_assert_double_eq_tol(cairn_level_allowance(0.012, 16.0), 0.048, 1e-15);
    ck_assert_double_eq(cairn_level_allowance(0.004, 0.0), 0.0);
    ck_assert_double_nan(cairn_level_allowance(0.004, -1.0));
}
END_TEST

/* ============================================================== suite */

static Suite *stats_suite(void)
{
    Suite *s = suite_create("stats");
    TCase *tq = tcase_create("quantiles");
    TCase *tt = tcase_create("tests");
    TCase *tp = tcase_create("precision");
    TCase *tr = tcase_create("reliability");
    TCase *tl = tcase_create("tolerance");
    TCase *all[5];
    int k;

    all[0] = tq;
    all[1] = tt;
    all[2] = tp;
    all[3] = tr;
    all[4] = tl;
    for (k = 0; k < 5; k++)
        tcase_add_checked_fixture(all[k], setup_gsl_handler, teardown_gsl_handler);

    tcase_add_loop_test(tq, test_chi2_table, 0, N_CHI2);
    tcase_add_loop_test(tq, test_normal_table, 0, N_NORM);
    tcase_add_loop_test(tq, test_t_table, 0, N_T);
    tcase_add_test(tq, test_t_closed_forms);
    tcase_add_test(tq, test_f_closed_form);
    tcase_add_test(tq, test_quantile_domain);
    tcase_add_test(tq, test_regression_no_gsl_error);
    tcase_add_test(tq, test_chi2_large_dof);
    tcase_set_timeout(tq, 60);

    tcase_add_loop_test(tt, test_lambda0_table, 0, N_LAM);
    tcase_add_test(tt, test_tau_critical);
    tcase_add_test(tt, test_global_test);

    tcase_add_loop_test(tp, test_ellipse_scale_table, 0, N_ESCALE);
    tcase_add_test(tp, test_scale_published);
    tcase_add_loop_test(tp, test_k95_table, 0, N_K95);
    tcase_add_loop_test(tp, test_ellipse_axes, 0, N_ELL);
    tcase_add_test(tp, test_ellipse_degenerate);
    tcase_add_test(tp, test_ellipsoid3);
    tcase_add_loop_test(tp, test_r95_table, 0, N_R95);
    tcase_add_test(tp, test_r95_domain);

    tcase_add_test(tr, test_reliability_obs);
    tcase_add_test(tr, test_external_reliability);
    tcase_add_test(tr, test_redundancy);

    tcase_add_test(tl, test_tolerance);
    tcase_add_test(tl, test_level_allowance);

    for (k = 0; k < 5; k++)
        suite_add_tcase(s, all[k]);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(stats_suite());
    int nfail;
    srunner_run_all(sr, CK_NORMAL);
    nfail = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nfail == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
