/* Plane geometry for starting coordinates: the classical coordinate-
 * geometry computations (radiation / polar point, intersection of two
 * rays, intersection of two circles, resection), robust medians, and the
 * inversion of the dimension-3 distance and zenith model.
 *
 * Sources: Ghilani & Wolf, "Elementary Surveying", 13th ed., the chapters
 * on coordinate geometry (direction-direction and distance-distance
 * intersection, resection) — from memory. The resection below is not the
 * textbook's Tienstra or Collins construction but a homogeneous linear
 * form derived here (see cairn_start_resect), which takes any number of
 * directions at once and then refines by least squares.
 */
#include <math.h>
#include <stdlib.h>

#include "start_int.h"

#define TWO_PI (2.0 * CAIRN_PI)

double cairn_start_azimuth(double e1, double n1, double e2, double n2)
{
    /* FORMAT.md "Models": t = atan2(Δe, Δn), clockwise from grid north. */
    return cairn_wrap_2pi(atan2(e2 - e1, n2 - n1));
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

double cairn_start_median(double *a, size_t k)
{
    qsort(a, k, sizeof *a, cmp_double);
    return k % 2 ? a[k / 2] : 0.5 * (a[k / 2 - 1] + a[k / 2]);
}

double cairn_start_circ_median(double *a, size_t k)
{
    /* Unwrap around the circular mean, then take the ordinary median of
     * the offsets: robust against a gross outlier (which moves the mean a
     * little but not the median) and correct across 0/2π. When the
     * resultant vanishes (angles spread evenly) the first angle serves as
     * the reference. */
    double s = 0.0, c = 0.0;
    for (size_t i = 0; i < k; i++) {
        s += sin(a[i]);
        c += cos(a[i]);
    }
    double ref = hypot(s, c) > 1e-9 * (double)k ? atan2(s, c) : a[0];
    for (size_t i = 0; i < k; i++)
        a[i] = cairn_wrap_pi(a[i] - ref);
    return cairn_wrap_2pi(ref + cairn_start_median(a, k));
}

int cairn_start_intersect(double e1, double n1, double t1, double e2, double n2,
                          double t2, double *pe, double *pn, double *psin,
                          double *pu1, double *pu2)
{
    /* O1 + u1·v1 = O2 + u2·v2 with v = (sin t, cos t); crossing with v2
     * and v1 gives u1 and u2 (Cramer's rule on the 2 × 2 system). */
    double v1e = sin(t1), v1n = cos(t1), v2e = sin(t2), v2n = cos(t2);
    double den = v1e * v2n - v1n * v2e;
    double we = e2 - e1, wn = n2 - n1;
    if (fabs(den) < 1e-6)
        return -1;
    double u1 = (we * v2n - wn * v2e) / den;
    double u2 = (we * v1n - wn * v1e) / den;
    if (!(u1 > 0.0) || !(u2 > 0.0))
        return -1;
    *pe = e1 + u1 * v1e;
    *pn = n1 + u1 * v1n;
    *psin = fabs(den);
    *pu1 = u1;
    *pu2 = u2;
    return 0;
}

int cairn_start_trilat(double ea, double na, double r1, double eb, double nb,
                       double r2, double slack, double x[2][2], double *psin)
{
    /* Along the base A→B the point lies at x = (r1² − r2² + a²)/2a from A,
     * and y = √(r1² − x²) to either side. */
    double de = eb - ea, dn = nb - na;
    double a = hypot(de, dn);
    if (!(a > 0.0) || !(r1 > 0.0) || !(r2 > 0.0))
        return -1;
    if (r1 + r2 < a - slack || fabs(r1 - r2) > a + slack)
        return -1;
    double xa = (r1 * r1 - r2 * r2 + a * a) / (2.0 * a);
    double y2 = r1 * r1 - xa * xa;
    double y = y2 > 0.0 ? sqrt(y2) : 0.0;
    double ue = de / a, un = dn / a;
    /* Right of A→B: (ue, un) turned clockwise, (un, −ue). */
    double pe = un, pn = -ue;
    x[0][0] = ea + xa * ue + y * pe;
    x[0][1] = na + xa * un + y * pn;
    x[1][0] = ea + xa * ue - y * pe;
    x[1][1] = na + xa * un - y * pn;
    /* Cut angle at the point: sin of the angle between the two radii. */
    *psin = r1 > 0.0 && r2 > 0.0 ? fabs(a * y) / (r1 * r2) : 0.0;
    return 0;
}

/* Eigen-decomposition of a symmetric 4 × 4 matrix by cyclic Jacobi
 * rotations (Golub & Van Loan, "Matrix Computations", the symmetric
 * Jacobi method; from memory). a is destroyed; w gets the eigenvalues,
 * the columns of v the eigenvectors. */
static void jacobi4(double a[4][4], double v[4][4], double w[4])
{
    for (int i = 0; i < 4; i++)
        for (int j = 0; j < 4; j++)
            v[i][j] = i == j;
    for (int sweep = 0; sweep < 60; sweep++) {
        double off = 0.0, diag = 0.0;
        for (int p = 0; p < 4; p++) {
            diag += fabs(a[p][p]);
            for (int q = p + 1; q < 4; q++)
                off += fabs(a[p][q]);
        }
        if (off <= 1e-300 || off < 1e-18 * diag)
            break;
        for (int p = 0; p < 4; p++)
            for (int q = p + 1; q < 4; q++) {
                if (a[p][q] == 0.0)
                    continue;
                double theta = (a[q][q] - a[p][p]) / (2.0 * a[p][q]);
                double t = (theta >= 0 ? 1.0 : -1.0) /
                           (fabs(theta) + sqrt(theta * theta + 1.0));
                double cs = 1.0 / sqrt(t * t + 1.0), sn = t * cs;
                for (int r = 0; r < 4; r++) { /* columns p, q */
                    double arp = a[r][p], arq = a[r][q];
                    a[r][p] = cs * arp - sn * arq;
                    a[r][q] = sn * arp + cs * arq;
                }
                for (int r = 0; r < 4; r++) { /* rows p, q */
                    double apr = a[p][r], aqr = a[q][r];
                    a[p][r] = cs * apr - sn * aqr;
                    a[q][r] = sn * apr + cs * aqr;
                }
                for (int r = 0; r < 4; r++) {
                    double vrp = v[r][p], vrq = v[r][q];
                    v[r][p] = cs * vrp - sn * vrq;
                    v[r][q] = sn * vrp + cs * vrq;
                }
            }
    }
    for (int i = 0; i < 4; i++)
        w[i] = a[i][i];
}

/* Sum of squared direction misfits (rad²) of station (e, n), orientation
 * om, in the scaled frame. */
static double resect_cost(const double *x, const double *y, const double *hz,
                          size_t k, double e, double n, double om)
{
    double f = 0.0;
    for (size_t i = 0; i < k; i++) {
        double r = cairn_wrap_pi(atan2(x[i] - e, y[i] - n) - om - hz[i]);
        f += r * r;
    }
    return f;
}

int cairn_start_resect(const double *E, const double *N, const double *hz,
                       size_t k, double *pe, double *pn, double *pomega)
{
    /* For each known mark i, the direction from the station (e, n) has the
     * azimuth ω + hz_i, so Δe_i cos(ω + hz_i) − Δn_i sin(ω + hz_i) = 0.
     * With c = cos ω, s = sin ω, X = −e·c + n·s, Y = e·s + n·c this is
     * linear and homogeneous in (c, s, X, Y):
     *     c·(E cos h − N sin h) + s·(−E sin h − N cos h) + X cos h + Y sin h = 0,
     * so the solution is the null vector of the k × 4 matrix (for k > 3
     * the least-squares one: the eigenvector of AᵀA of least eigenvalue),
     * normalised to c² + s² = 1; then e = −cX + sY, n = sX + cY (the sign
     * of the vector changes ω by π and not the point). A second vanishing
     * eigenvalue means the station lies on the circle through the marks
     * (the danger circle) or the marks are collinear with it: no unique
     * point. Derived here; it agrees with the classical resection
     * (Tienstra; Collins) on exact data. Coordinates are centred and
     * scaled first so the matrix is well conditioned. */
    if (k < 3)
        return -1;
    double e0 = 0.0, n0 = 0.0;
    for (size_t i = 0; i < k; i++) {
        e0 += E[i];
        n0 += N[i];
    }
    e0 /= (double)k;
    n0 /= (double)k;
    double L = 0.0;
    for (size_t i = 0; i < k; i++)
        L += (E[i] - e0) * (E[i] - e0) + (N[i] - n0) * (N[i] - n0);
    L = sqrt(L / (double)k);
    if (!(L > 0.0))
        return -1;
    double *x = malloc(2 * k * sizeof *x);
    if (!x)
        return -1;
    double *y = x + k;
    double m[4][4] = {{0}};
    for (size_t i = 0; i < k; i++) {
        x[i] = (E[i] - e0) / L;
        y[i] = (N[i] - n0) / L;
        double ch = cos(hz[i]), sh = sin(hz[i]);
        double row[4] = {x[i] * ch - y[i] * sh, -x[i] * sh - y[i] * ch, ch, sh};
        for (int p = 0; p < 4; p++)
            for (int q = 0; q < 4; q++)
                m[p][q] += row[p] * row[q];
    }
    double v[4][4], w[4];
    jacobi4(m, v, w);
    int order[4] = {0, 1, 2, 3};
    for (int i = 1; i < 4; i++) /* ascending eigenvalues */
        for (int j = i; j > 0 && w[order[j]] < w[order[j - 1]]; j--) {
            int t = order[j];
            order[j] = order[j - 1];
            order[j - 1] = t;
        }
    int rc = -1;
    double wmax = w[order[3]];
    /* 1e-8 of the largest: a second null direction within rounding of
     * the scaled problem (common practice, no source). */
    if (wmax > 0.0 && w[order[1]] > 1e-8 * wmax) {
        int j = order[0];
        double c = v[0][j], s = v[1][j], X = v[2][j], Y = v[3][j];
        double r = hypot(c, s);
        if (r > 1e-12) {
            c /= r;
            s /= r;
            X /= r;
            Y /= r;
            double e = -c * X + s * Y, n = s * X + c * Y;
            double om = atan2(s, c);
            if (fabs(cairn_wrap_pi(atan2(x[0] - e, y[0] - n) - om - hz[0])) >
                0.5 * CAIRN_PI)
                om += CAIRN_PI;
            /* Gauss–Newton on the directions themselves (unknowns e, n,
             * ω): exact data stay put, redundant data get the
             * least-squares station. A step that does not lower the sum
             * of squares ends the refinement. */
            double f = resect_cost(x, y, hz, k, e, n, om);
            for (int it = 0; it < 10 && k > 3; it++) {
                double nm[3][3] = {{0}}, g[3] = {0};
                for (size_t i = 0; i < k; i++) {
                    double de = x[i] - e, dn = y[i] - n, d2 = de * de + dn * dn;
                    if (d2 <= 0.0)
                        continue;
                    double res = cairn_wrap_pi(atan2(de, dn) - om - hz[i]);
                    double a[3] = {-dn / d2, de / d2, -1.0};
                    for (int p = 0; p < 3; p++) {
                        g[p] -= a[p] * res;
                        for (int q = 0; q < 3; q++)
                            nm[p][q] += a[p] * a[q];
                    }
                }
                /* 3 × 3 solve by Cramer's rule. */
                double det = nm[0][0] * (nm[1][1] * nm[2][2] - nm[1][2] * nm[2][1]) -
                             nm[0][1] * (nm[1][0] * nm[2][2] - nm[1][2] * nm[2][0]) +
                             nm[0][2] * (nm[1][0] * nm[2][1] - nm[1][1] * nm[2][0]);
                if (!(fabs(det) > 0.0))
                    break;
                double dx[3];
                for (int col = 0; col < 3; col++) {
                    double t[3][3];
                    for (int p = 0; p < 3; p++)
                        for (int q = 0; q < 3; q++)
                            t[p][q] = q == col ? g[p] : nm[p][q];
                    dx[col] = (t[0][0] * (t[1][1] * t[2][2] - t[1][2] * t[2][1]) -
                               t[0][1] * (t[1][0] * t[2][2] - t[1][2] * t[2][0]) +
                               t[0][2] * (t[1][0] * t[2][1] - t[1][1] * t[2][0])) /
                              det;
                }
                double f2 = resect_cost(x, y, hz, k, e + dx[0], n + dx[1], om + dx[2]);
                if (!(f2 < f))
                    break;
                e += dx[0];
                n += dx[1];
                om += dx[2];
                f = f2;
                if (fabs(dx[0]) + fabs(dx[1]) < 1e-14)
                    break;
            }
            int ok = isfinite(e) && isfinite(n);
            for (size_t i = 0; ok && i < k; i++)
                if (hypot(x[i] - e, y[i] - n) < 1e-9)
                    ok = 0;
            if (ok) {
                *pe = e0 + L * e;
                *pn = n0 + L * n;
                *pomega = cairn_wrap_2pi(om);
                rc = 0;
            }
        }
    }
    free(x);
    return rc;
}

void cairn_start_invert3(double s, double z1, double k, double scale, double *pd,
                         double *pdz)
{
    /* FORMAT.md "Models", dimension 3:
     *     s = √((d/scale)² + (Δz − d²/2R)²),  z = atan2(d, Δz − (1−k)d²/2R).
     * Write d = ρ sin z, Δz − (1−k)d²/2R = ρ cos z (ρ > 0), so that the
     * zenith holds exactly, and solve the slope equation for ρ by Newton's
     * method from ρ = s (the two vertical terms differ by k·d²/2R, a few
     * mm over a kilometre, so two or three steps reach rounding). The
     * dimension-1 reduction s·sin z, s·cos z + (1−k)(s sin z)²/2R is this
     * with that difference neglected. */
    const double R = CAIRN_EARTH_RADIUS;
    double sz = sin(z1), cz = cos(z1), rho = s;
    for (int it = 0; it < 20; it++) {
        double dd = rho * sz;
        double w = rho * cz - k * dd * dd / (2.0 * R);
        double f = (dd / scale) * (dd / scale) + w * w - s * s;
        double fp = 2.0 * rho * sz * sz / (scale * scale) +
                    2.0 * w * (cz - k * rho * sz * sz / R);
        if (!(fabs(fp) > 0.0))
            break;
        double step = f / fp;
        rho -= step;
        if (fabs(step) <= 1e-15 * s)
            break;
    }
    double d = rho * sz;
    *pd = d;
    *pdz = rho * cz + (1.0 - k) * d * d / (2.0 * R);
}
