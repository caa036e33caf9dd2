/* Reliability of observations (Baarda 1968, "A Testing Procedure for Use
 * in Geodetic Networks", Netherlands Geodetic Commission, Publications on
 * Geodesy, New Series 2(5)), tolerance checks and levelling allowances. */
#include <math.h>

#include "cairn/quality.h"

const char *cairn_obs_status_name(cairn_obs_status s)
{
    switch (s) {
    case CAIRN_OBS_OK: return "ok";
    case CAIRN_OBS_FLAGGED: return "flagged";
    case CAIRN_OBS_REJECTED: return "rejected";
    case CAIRN_OBS_UNCHECKED: return "unchecked";
    }
    return "?";
}

int cairn_reliability_obs(double v, double sigma, double r, double lambda0,
                          double wcrit, cairn_obs_rel *out)
{
    double sr;

    out->r = r;
    out->w = NAN;
    out->mdb = NAN;
    out->nabla = NAN;
    out->sd_nabla = NAN;
    out->status = CAIRN_OBS_UNCHECKED;
    if (!isfinite(v) || !isfinite(sigma) || !isfinite(r) || !isfinite(lambda0)
        || !isfinite(wcrit) || !(sigma > 0.0) || !(lambda0 > 0.0)
        || !(wcrit > 0.0))
        return -1;
    /* With r this small the residual hardly moves when the observation is
     * wrong: the test has no power and 1/√r would blow up (FORMAT.md). */
    if (r < CAIRN_R_MIN)
        return 0;
    sr = sqrt(r);
    /* For an uncorrelated observation σ_v = σ √r, so w = v/σ_v is N(0, 1)
     * under H0 (a priori variance factor 1). The sign follows v =
     * adjusted − observed, as in DEVELOPERS.md and the reference solver. */
    out->w = v / (sigma * sr);
    /* The blunder ∇ that the test detects with the chosen power shifts w
     * by √λ0, and w shifts by ∇ √r / σ per unit blunder. */
    out->mdb = sigma * sqrt(lambda0 / r);
    /* A blunder ∇ in observation i changes its residual by −r ∇ (v is
     * adjusted − observed), so ∇̂ = −v / r with σ(∇̂) = σ / √r. */
    out->nabla = -v / r;
    out->sd_nabla = sigma / sr;
    out->status = fabs(out->w) > wcrit ? CAIRN_OBS_FLAGGED : CAIRN_OBS_OK;
    return 0;
}

double cairn_external_reliability(const double *dx_per_unit, size_t n,
                                  double mdb)
{
    double m = 0.0;
    size_t k;

    if (isnan(mdb))
        return NAN;
    for (k = 0; k < n; k++) {
        double d = fabs(dx_per_unit[k]);
        if (isnan(d))
            return NAN;
        if (d > m)
            m = d;
    }
    return m * fabs(mdb);
}

double cairn_redundancy(double p, const double *a, const int *idx, int nidx,
                        cairn_qxx_get get, void *ctx)
{
    double s = 0.0;
    int k, l;

    if (!(p >= 0.0) || !isfinite(p) || nidx < 0 || (nidx > 0 && (!a || !idx || !get)))
        return NAN;
    /* r_i = (Qvv P)_ii = 1 − p_i a_i Qxx a_iᵀ for uncorrelated observations
     * (REFERENCES.md §2). Qxx is symmetric: each off-diagonal pair is
     * fetched once and counted twice. */
    for (k = 0; k < nidx; k++) {
        for (l = k; l < nidx; l++) {
            double q;
            if (a[k] == 0.0 || a[l] == 0.0)
                continue;
            if (get(ctx, idx[k], idx[l], &q) != 0)
                return NAN;
            s += (k == l ? 1.0 : 2.0) * a[k] * a[l] * q;
        }
    }
    return 1.0 - p * s;
}

double cairn_tolerance_allowed(double dist, double a, double b_ppm)
{
    if (!isfinite(dist) || !isfinite(a) || !isfinite(b_ppm) || dist < 0.0
        || a < 0.0 || b_ppm < 0.0)
        return NAN;
    return a + b_ppm * 1e-6 * dist;
}

int cairn_tolerance_check(double semi_major, double dist, double a,
                          double b_ppm, double *pallowed)
{
    double allowed = cairn_tolerance_allowed(dist, a, b_ppm);

    if (pallowed)
        *pallowed = allowed;
    if (isnan(allowed) || !isfinite(semi_major) || semi_major < 0.0)
        return -1;
    /* "Less than or equal to" the maximum allowable (ALTA/NSPS RPP,
     * FGDC accuracy classes). */
    return semi_major <= allowed ? 1 : 0;
}

double cairn_level_allowance(double m_per_sqrt_km, double km)
{
    if (!isfinite(m_per_sqrt_km) || !isfinite(km) || m_per_sqrt_km < 0.0 || km < 0.0)
        return NAN;
    /* Random levelling error grows with the square root of the length
     * (FGCC 1984 §3.5). */
    return m_per_sqrt_km * sqrt(km);
}
