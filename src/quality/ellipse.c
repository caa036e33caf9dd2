/* Error ellipses and ellipsoids, confidence scale factors, FGDC r95. */
#include <float.h>
#include <math.h>

#include <lapacke.h>

#include "cairn/core.h"
#include "cairn/quality.h"

/* An eigenvalue below −NEG_TOL × (largest |eigenvalue|) is not rounding:
 * the matrix is not a covariance matrix. Qxx from a selected inverse is
 * accurate to about cond(N) · eps relative, so 1e-9 leaves a wide margin. */
#define NEG_TOL 1e-9

int cairn_ellipse2(double qee, double qen, double qnn, double scale,
                   cairn_ellipse *out)
{
    double mean, half, rad, lmax, lmin, theta;

    out->a = NAN;
    out->b = NAN;
    out->azimuth = NAN;
    if (!isfinite(qee) || !isfinite(qen) || !isfinite(qnn) || !isfinite(scale)
        || scale < 0.0)
        return -1;

    /* Eigenvalues of [[qee, qen], [qen, qnn]] in closed form,
     * λ = (qee + qnn)/2 ± √(((qee − qnn)/2)² + qen²); hypot avoids
     * overflow and keeps rad ≥ |half|. */
    mean = 0.5 * (qee + qnn);
    half = 0.5 * (qnn - qee);
    rad = hypot(half, qen);
    lmax = mean + rad;
    lmin = mean - rad;
    if (lmax < 0.0 || lmin < -NEG_TOL * fabs(lmax) - DBL_MIN)
        return -1;
    if (lmin < 0.0)
        lmin = 0.0;

    /* The variance in the direction of azimuth θ (unit vector
     * (sin θ, cos θ) in (e, n)) is mean + half·cos 2θ + qen·sin 2θ, which
     * is largest at 2θ = atan2(2 qen, qnn − qee): atan2 picks the quadrant
     * that maximises, not the one that minimises. A circle (rad = 0, or
     * rad at rounding level against the mean) has no major axis: 0. */
    if (rad <= 8.0 * DBL_EPSILON * fabs(mean))
        theta = 0.0;
    else {
        theta = 0.5 * atan2(qen, half);   /* in (−π/2, π/2] */
        if (theta < 0.0)
            theta += CAIRN_PI;
        if (theta >= CAIRN_PI)
            theta -= CAIRN_PI;
    }
    out->a = scale * sqrt(lmax);
    out->b = scale * sqrt(lmin);
    out->azimuth = theta;
    return 0;
}

int cairn_ellipsoid3(const double q[9], double scale, double axes[3],
                     double dirs[9])
{
    double a[9], w[3], work[64];
    lapack_int info;
    int i, j, k;

    for (k = 0; k < 3; k++)
        axes[k] = NAN;
    for (i = 0; i < 9; i++)
        if (!isfinite(q[i]))
            return -1;
    if (!isfinite(scale) || scale < 0.0)
        return -1;
    /* Column-major copy from the lower triangle of the row-major input
     * (a symmetric matrix is its own transpose, so only the lower
     * triangle matters). The _work variant with our own workspace needs no
     * allocation; 3·3 − 1 = 8 doubles suffice (dsyev's minimum). */
    for (i = 0; i < 3; i++)
        for (j = 0; j <= i; j++) {
            a[i + 3 * j] = q[3 * i + j];
            a[j + 3 * i] = q[3 * i + j];
        }
    info = LAPACKE_dsyev_work(LAPACK_COL_MAJOR, 'V', 'L', 3, a, 3, w, work, 64);
    if (info != 0)
        return -1;
    /* dsyev sorts ascending; eigenvector k is column k of a. */
    if (w[0] < -NEG_TOL * fabs(w[2]) - DBL_MIN)
        return -1;
    for (k = 0; k < 3; k++) {
        int src = 2 - k;
        double lam = w[src] < 0.0 ? 0.0 : w[src];
        axes[k] = scale * sqrt(lam);
        if (dirs) {
            int big = 0;
            double sgn;
            for (i = 1; i < 3; i++)
                if (fabs(a[i + 3 * src]) > fabs(a[big + 3 * src]))
                    big = i;
            /* An eigenvector's sign is arbitrary: fix it for reproducible
             * output. */
            sgn = a[big + 3 * src] < 0.0 ? -1.0 : 1.0;
            for (i = 0; i < 3; i++)
                dirs[3 * k + i] = sgn * a[i + 3 * src];
        }
    }
    return 0;
}

double cairn_ellipse_scale(double confidence)
{
    if (!(confidence > 0.0 && confidence < 1.0))
        return NAN;
    /* The squared Mahalanobis distance of a 2-D normal is χ²(2). */
    return sqrt(cairn_chi2_quantile(confidence, 2.0));
}

double cairn_ellipse_scale_f(double confidence, int dof)
{
    if (!(confidence > 0.0 && confidence < 1.0) || dof < 1)
        return NAN;
    /* With σ0² estimated from dof degrees of freedom the squared
     * distance divided by 2 is F(2, dof) (REFERENCES.md §3.2). */
    return sqrt(2.0 * cairn_f_quantile(confidence, 2.0, (double)dof));
}

double cairn_interval_scale(double confidence)
{
    if (!(confidence > 0.0 && confidence < 1.0))
        return NAN;
    /* Two-sided: the upper quantile at (1 + p)/2 = 1 − (1 − p)/2; taken
     * from the lower tail so that p near 1 keeps its accuracy. */
    return -cairn_normal_quantile(0.5 * (1.0 - confidence));
}

double cairn_interval_scale_t(double confidence, int dof)
{
    if (!(confidence > 0.0 && confidence < 1.0) || dof < 1)
        return NAN;
    return -cairn_t_quantile(0.5 * (1.0 - confidence), (double)dof);
}

double cairn_r95(double sig_max, double sig_min)
{
    double c, k, t;

    if (!isfinite(sig_max) || !isfinite(sig_min) || sig_max < 0.0 || sig_min < 0.0)
        return NAN;
    if (sig_min > sig_max) {
        t = sig_max;
        sig_max = sig_min;
        sig_min = t;
    }
    if (sig_max == 0.0)
        return 0.0;
    /* FGDC-STD-007.2-1998 (Part 2), from memory (REFERENCES.md §3.3 [M]),
     * a cubic fit in C = σmin/σmax to the exact radius of the circle that
     * holds 95 % of the bivariate normal; within about 0.003 σmax. */
    c = sig_min / sig_max;
    k = 1.960790 + c * (0.004071 + c * (0.114276 + c * 0.371625));
    return k * sig_max;
}
