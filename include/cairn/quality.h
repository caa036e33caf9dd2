/* cairn/quality.h — quality of an adjustment: distributions, the global
 * test, Baarda's w-test and reliability, error ellipses, tolerances.
 *
 * Sections:
 *   1. Distributions (quantiles)                  src/quality/stats.c
 *   2. Test statistics (global test, w, λ0, τ)    src/quality/stats.c
 *   3. Precision (ellipses, scale factors, r95)   src/quality/ellipse.c
 *   4. Reliability (redundancy, w, MDB)           src/quality/reliability.c
 *   5. Tolerances and allowances                  src/quality/reliability.c
 *   6. Selected inverse                           (to be folded in from selinv.h)
 *   7. Data snooping                              (to come)
 *
 * Everything in sections 1–5 is a pure function: no allocation, no global
 * state, thread-safe. These are numerical kernels, so a value outside the
 * documented domain gives NaN (functions returning double) or a negative
 * status (functions returning int), never a message: callers that face user
 * data check the inputs first and report through cairn_error.
 *
 * Probabilities p are lower-tail probabilities in (0, 1) unless stated.
 * Lengths are in metres, angles in radians (core.h), but every function
 * here is homogeneous in its length unit: pass feet and you get feet.
 *
 * Sign convention (DEVELOPERS.md): residual v = adjusted − observed.
 */
#ifndef CAIRN_QUALITY_H
#define CAIRN_QUALITY_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* ------------------------------------------------------------------ */
/* 1. Distributions                                                    */
/* ------------------------------------------------------------------ */

/** χ² quantile: x with P(X ≤ x) = p for X ~ χ²(dof).
 *  p in [0, 1) (p = 0 gives 0), dof > 0 (need not be an integer).
 *  Example: cairn_chi2_quantile(0.95, 2) = 5.99146. NaN outside the domain. */
double cairn_chi2_quantile(double p, double dof);

/** Standard normal quantile z_p, p in (0, 1).
 *  Example: cairn_normal_quantile(0.975) = 1.959964. NaN outside (0, 1). */
double cairn_normal_quantile(double p);

/** F quantile: x with P(X ≤ x) = p for X ~ F(d1, d2); p in [0, 1),
 *  d1 > 0, d2 > 0. Example: cairn_f_quantile(0.95, 2, 10) = 4.10282. */
double cairn_f_quantile(double p, double d1, double d2);

/** Student t quantile: x with P(T ≤ x) = p for T ~ t(dof); p in (0, 1),
 *  dof > 0. Example: cairn_t_quantile(0.975, 10) = 2.228139. */
double cairn_t_quantile(double p, double dof);

/* ------------------------------------------------------------------ */
/* 2. Test statistics                                                  */
/* ------------------------------------------------------------------ */

/** Critical value of Baarda's two-sided w-test, z_{1−α/2}; alpha in (0, 1).
 *  Example: cairn_w_critical(0.001) = 3.2905. */
double cairn_w_critical(double alpha);

/** Non-centrality λ0 of Baarda's one-dimensional test: the λ for which the
 *  two-sided test at level alpha has power `power` against a shift √λ,
 *      power = Φ(√λ − z) + Φ(−√λ − z),   z = z_{1−α/2}.
 *  alpha in (0, 1), power in (alpha, 1) (power = alpha gives 0).
 *  Example: cairn_lambda0(0.001, 0.80) = 17.075. NaN outside the domain. */
double cairn_lambda0(double alpha, double power);

/** Critical value of Pope's τ test for `dof` degrees of freedom at
 *  significance alpha (two-sided), alpha in (0, 1), dof ≥ 2:
 *      τ = √dof · t / √(dof − 1 + t²),   t = t_{1−α/2}(dof − 1).
 *  Always below √dof; tends to z_{1−α/2} as dof grows. NaN outside the
 *  domain. (Pope 1976, NOAA Technical Report NOS 65 NGS 1.) */
double cairn_tau_critical(double alpha, int dof);

/** Outcome of the two-sided global (variance-factor) test. */
typedef struct {
    double statistic;  /**< vᵀPv / σ0² a priori; ~ χ²(dof) under H0 */
    double lower;      /**< χ²(α/2; dof); NaN when not tested */
    double upper;      /**< χ²(1 − α/2; dof); NaN when not tested */
    double sigma0_sq;  /**< σ0² a posteriori = vᵀPv / dof; NaN when dof = 0 */
    int dof;           /**< degrees of freedom (redundancy) */
    int tested;        /**< 1 when the test was made; 0 when dof = 0 */
    int pass;          /**< 1: lower ≤ statistic ≤ upper; 0: fail, or
                            (tested = 0) undefined: check `tested` first */
} cairn_global_result;

/** Global test of vᵀPv against χ²(dof) at two-sided level global_alpha.
 *  vtpv ≥ 0 (dimensionless, weights P = σ⁻² of the a priori σ),
 *  dof ≥ 0, sigma0_sq_apriori > 0 (normally 1), global_alpha in (0, 1).
 *  Returns 0 when tested; 1 (a warning) when dof = 0: no test is possible,
 *  out->tested = 0, out->pass = 0 and the bounds and σ0² are NaN;
 *  -1 for arguments outside their domain (out is then all NaN/0). */
int cairn_global_test(double vtpv, int dof, double sigma0_sq_apriori,
                      double global_alpha, cairn_global_result *out);

/* ------------------------------------------------------------------ */
/* 3. Precision: error ellipses and scale factors                      */
/* ------------------------------------------------------------------ */

/** A 2-D error ellipse. */
typedef struct {
    double a;        /**< semi-major axis, √λmax · scale (length unit) */
    double b;        /**< semi-minor axis, √λmin · scale (length unit) */
    double azimuth;  /**< azimuth of the major axis, radians clockwise from
                          north (+n), in [0, π); 0 for a circle */
} cairn_ellipse;

/** Ellipse of the 2×2 covariance [[qee, qen], [qen, qnn]] (e = east = x,
 *  n = north = y; variances in length unit², times any variance factor the
 *  caller wants applied), with its axes multiplied by `scale` (1: the
 *  standard ellipse; cairn_ellipse_scale(0.95): the 95 % ellipse).
 *  A slightly negative eigenvalue from rounding is taken as 0.
 *  Example: qee = qnn = 2, qen = 1 (elongated NE–SW): a = √3, b = 1,
 *  azimuth = π/4. Returns 0, or -1 for non-finite input, scale < 0, or a
 *  matrix that is not positive semi-definite beyond rounding (out is then
 *  NaN). */
int cairn_ellipse2(double qee, double qen, double qnn, double scale,
                   cairn_ellipse *out);

/** Principal axes of a 3×3 covariance q (row-major, symmetric; only the
 *  lower triangle is read), by LAPACK dsyev. axes[k] = scale · √λk, sorted
 *  descending (negative eigenvalues from rounding taken as 0);
 *  dirs[3k .. 3k+2] is the unit vector of axis k (e, n, h components),
 *  signed so that its largest component is positive. dirs may be NULL.
 *  Returns 0, or -1 for non-finite input, scale < 0, a matrix not positive
 *  semi-definite beyond rounding, or a LAPACK failure. */
int cairn_ellipsoid3(const double q[9], double scale, double axes[3],
                     double dirs[9]);

/** Factor turning the standard ellipse into the ellipse at `confidence`
 *  with a known variance factor: √χ²(confidence; 2) = √(−2 ln(1 − p)).
 *  confidence in (0, 1). Example: 0.95 → 2.4477. */
double cairn_ellipse_scale(double confidence);

/** The same factor when the variance factor is estimated from dof
 *  degrees of freedom (--scale-by-aposteriori): √(2 F(confidence; 2, dof)).
 *  dof ≥ 1. Example: (0.95, 3) → 4.371. */
double cairn_ellipse_scale_f(double confidence, int dof);

/** 1-D confidence factor with a known variance factor: z_{(1+p)/2}.
 *  Example: 0.95 → 1.960. */
double cairn_interval_scale(double confidence);

/** 1-D confidence factor with an estimated variance factor:
 *  t_{(1+p)/2}(dof), dof ≥ 1. Example: (0.95, 10) → 2.228. */
double cairn_interval_scale_t(double confidence, int dof);

/** FGDC circular 95 % radius r95 = K · σmax with C = σmin/σmax,
 *  K = 1.960790 + 0.004071 C + 0.114276 C² + 0.371625 C³
 *  (FGDC-STD-007.2-1998). sig_max, sig_min ≥ 0 are the standard
 *  (1-sigma) semi-axes, in either order. Within about 0.003 σmax of the
 *  exact 95 % circle. Example: (1, 1) → 2.45076. NaN for negative or
 *  non-finite input. */
double cairn_r95(double sig_max, double sig_min);

/* ------------------------------------------------------------------ */
/* 4. Reliability                                                      */
/* ------------------------------------------------------------------ */

/** Below this redundancy number an observation is `unchecked`: a blunder
 *  in it can hardly be seen in the residuals (FORMAT.md observations.csv). */
#define CAIRN_R_MIN 0.01

/** Status of an observation (the `status` column of observations.csv). */
typedef enum {
    CAIRN_OBS_OK = 0,     /**< passes the w-test */
    CAIRN_OBS_FLAGGED,    /**< |w| above the critical value */
    CAIRN_OBS_REJECTED,   /**< removed by iterative snooping (set by snooping) */
    CAIRN_OBS_UNCHECKED   /**< redundancy below CAIRN_R_MIN */
} cairn_obs_status;

/** "ok", "flagged", "rejected", "unchecked"; "?" for another value. */
const char *cairn_obs_status_name(cairn_obs_status s);

/** Reliability of one uncorrelated observation. */
typedef struct {
    double r;         /**< redundancy number as given */
    double w;         /**< standardised residual v / (σ √r); NaN if unchecked */
    double mdb;       /**< minimal detectable bias σ √(λ0 / r) (observation
                           unit); NaN if unchecked */
    double nabla;     /**< estimated blunder −v / r; NaN if unchecked */
    double sd_nabla;  /**< its standard deviation σ / √r; NaN if unchecked */
    cairn_obs_status status; /**< OK, FLAGGED or UNCHECKED */
} cairn_obs_rel;

/** w-test and internal reliability of observation i (Baarda 1968).
 *  v: residual, adjusted − observed (observation unit: m or rad);
 *  sigma > 0: its a priori standard deviation (same unit);
 *  r: redundancy number, nominally in [0, 1];
 *  lambda0 > 0: from cairn_lambda0(); wcrit > 0: from cairn_w_critical().
 *  r < CAIRN_R_MIN gives status UNCHECKED and NaN w, mdb, nabla, sd_nabla.
 *  Returns 0, or -1 for non-finite input or sigma, lambda0, wcrit ≤ 0
 *  (out is then NaN and UNCHECKED). */
int cairn_reliability_obs(double v, double sigma, double r, double lambda0,
                          double wcrit, cairn_obs_rel *out);

/** External reliability: the largest effect of an undetected blunder of
 *  size mdb on the unknowns. dx_per_unit[k] is the shift of unknown k per
 *  unit blunder in the observation, the column Qxx aᵢᵀ pᵢ
 *  (Δx = Qxx aᵢᵀ pᵢ ∇). Returns max_k |dx_per_unit[k]| · mdb (0 for n = 0;
 *  NaN if mdb or an entry is NaN). Mixing length and angle unknowns in one
 *  call mixes units: pass the components of one kind. */
double cairn_external_reliability(const double *dx_per_unit, size_t n,
                                  double mdb);

/** Source of Qxx entries: sets *pq = Qxx(i, j) (original unknown numbers)
 *  and returns 0, or returns non-zero when the entry is not available.
 *  cairn_selinv_get() fits behind a two-line wrapper. */
typedef int (*cairn_qxx_get)(void *ctx, int i, int j, double *pq);

/** Redundancy number r = 1 − p · a Qxx aᵀ of an uncorrelated observation
 *  with weight p = σ⁻² and design row a, whose non-zeros a[k] sit at
 *  unknowns idx[k], k < nidx (at most a handful). Each pair (idx[k],
 *  idx[l]) with k ≤ l is fetched once through get. Returns NaN when p < 0,
 *  nidx < 0 or a fetch fails; a value slightly outside [0, 1] from
 *  rounding is returned as computed. */
double cairn_redundancy(double p, const double *a, const int *idx, int nidx,
                        cairn_qxx_get get, void *ctx);

/* ------------------------------------------------------------------ */
/* 5. Tolerances and allowances                                        */
/* ------------------------------------------------------------------ */

/** Allowed value a + b_ppm · 1e-6 · dist (e.g. ALTA/NSPS relative
 *  positional precision 20 mm + 50 ppm). dist ≥ 0, a ≥ 0, b_ppm ≥ 0, all
 *  lengths in one unit. NaN outside the domain. */
double cairn_tolerance_allowed(double dist, double a, double b_ppm);

/** Tolerance check of a relative precision: 1 when semi_major (the
 *  semi-major axis of the relative ellipse at the confidence level) is at
 *  most the allowed value, 0 when it exceeds it, -1 for input outside the
 *  domain (negative or non-finite). *pallowed (may be NULL) receives the
 *  allowed value. Example: (0.030, 300, 0.020, 50) → 1, allowed 0.0350. */
int cairn_tolerance_check(double semi_major, double dist, double a,
                          double b_ppm, double *pallowed);

/** Levelling allowance m · √km: m_per_sqrt_km the constant (length unit
 *  per √km, e.g. 0.004 m), km ≥ 0 the length in kilometres. Example:
 *  (0.004, 9) → 0.012 (FGCC 1984 first-order class I loop). NaN for
 *  negative or non-finite input. */
double cairn_level_allowance(double m_per_sqrt_km, double km);

#ifdef __cplusplus
}
#endif

#endif /* CAIRN_QUALITY_H */
