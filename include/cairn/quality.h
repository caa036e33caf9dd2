/* cairn/quality.h — quality of an adjustment: distributions, the global
 * test, Baarda's w-test and reliability, error ellipses, tolerances.
 *
 * Sections:
 *   1. Distributions (quantiles)                  src/quality/stats.c
 *   2. Test statistics (global test, w, λ0, τ)    src/quality/stats.c
 *   3. Precision (ellipses, scale factors, r95)   src/quality/ellipse.c
 *   4. Reliability (redundancy, w, MDB)           src/quality/reliability.c
 *   5. Tolerances and allowances                  src/quality/reliability.c
 *   6. Analysis of an adjustment: precision,      src/quality/analysis.c,
 *      reliability, relative precision           analysis_mark.c, pairs.c
 *   7. Data snooping                              src/quality/snoop.c
 *   (the selected inverse itself: cairn/selinv.h)
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

#include "cairn/solve.h"
#include "cairn/diagnose.h"

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

/* ------------------------------------------------------------------ */
/* 6. Analysis of an adjustment                                        */
/* ------------------------------------------------------------------ */

/* Sections 6 and 7 are not pure: cairn_analyse allocates, computes the
 * selected inverse of the adjustment's factor (cairn/selinv.h) and, when
 * snooping iterates, re-adjusts. Ownership: cairn_analyse creates the
 * analysis, cairn_analysis_free releases it. The analysis points at, but
 * does not own, the adjustment (which must outlive it).
 *
 * All quantities are in metres and radians, like the adjustment; the
 * writers convert to project units. A value that does not exist (a
 * component not in the adjustment, the w of an unchecked observation) is
 * NAN. */

/** Data snooping mode (`--snoop`). */
typedef enum {
    CAIRN_SNOOP_ITERATE = 0, /**< reject the largest failing test, re-adjust, repeat */
    CAIRN_SNOOP_FLAG = 1,    /**< flag every failing test, reject nothing */
    CAIRN_SNOOP_OFF = 2      /**< report w and mdb; flag and reject nothing */
} cairn_snoop_mode;

/** Options of cairn_analyse; cairn_analysis_options_default sets the
 *  defaults given with each field. The levels (confidence, alpha, power,
 *  global-alpha, tolerance) come from the net's options. */
typedef struct {
    cairn_snoop_mode snoop;     /**< default CAIRN_SNOOP_ITERATE */
    int scale_aposteriori;      /**< 1: scale precision by σ0² a posteriori with F
                                     and t factors, and test with Pope's τ instead of
                                     w (`--scale-by-aposteriori`); default 0 */
    double max_reject_fraction; /**< iterate rejects at most floor(fraction · nobs)
                                     observations; default 0.10 (DESIGN.md) */
    int time_phases;            /**< 1: measure the selected inverse and one
                                     factorisation for the bench; default 0 */
} cairn_analysis_options;

void cairn_analysis_options_default(cairn_analysis_options *opt);

/** Relative precision of two marks joined by an observation, from
 *  Qii + Qjj − 2Qij (plane block) and the same for h. */
typedef struct {
    int from, to;          /**< mark indices, from < to in mark order */
    int obs;               /**< first observation joining them (problem index) */
    int plane;             /**< 1 when both have e, n in the adjustment */
    int height;            /**< 1 when both have h in the adjustment */
    int available;         /**< 0 when a Qij entry lies outside the factor
                                pattern (then nothing below is computed) */
    double distance;       /**< m, plane distance of the adjusted marks (NAN if !plane) */
    cairn_ellipse ellipse; /**< relative ellipse at the confidence level (plane) */
    double sd_dh;          /**< m, sd of h_to − h_from (height), else NAN */
    double dh_interval;    /**< m, half-width of its interval at the confidence level */
    double allowed;        /**< m, a + b ppm · distance; NAN without a tolerance */
    int pass;              /**< 1 ellipse.a ≤ allowed, 0 above, -1 not tested */
} cairn_pair;

/** Test of one held mark's given coordinates against the observations
 *  that touch it: the alternative hypothesis that the held components are
 *  off by an unknown shift ∇ (q = 1 to 3 parameters), tested by the
 *  generalised likelihood ratio statistic
 *      T = ∇̂ᵀ (Cᵀ P Q_v P C) ∇̂,   ∇̂ = (Cᵀ P Q_v P C)⁻¹ Cᵀ P ê,
 *  C = ∂(observations)/∂(held components), Q_v = P⁻¹ − A Qxx Aᵀ
 *  (Teunissen, Testing Theory, Delft University Press 2000, ch. 3 and 4,
 *  the q-dimensional test; from memory). T ~ χ²(q) under H0 with the a
 *  priori variance factor; critical value χ²(1 − alpha; q), which for
 *  q = 1 is the w-test's wcrit². Directions of ∇ the observations see with
 *  a redundancy below CAIRN_R_MIN (for instance across the line of a single
 *  distance) are left out of T and of ∇̂, and counted out of q. */
typedef struct {
    int mark;              /**< mark index */
    unsigned held;         /**< components tested: CAIRN_E|N|H held and observed */
    int q;                 /**< testable dimensions (0: untestable, dof too small) */
    int nobs;              /**< observations used that touch the held components */
    double statistic;      /**< T; NAN when q = 0 */
    double critical;       /**< χ²(1 − alpha; q); NAN when q = 0 */
    double shift[3];       /**< ∇̂ e, n, h (m): where the observations put the mark
                                relative to its given coordinates; NAN where not held */
    int pass;              /**< 1 T ≤ critical, 0 fails, -1 untestable */
    double wmax;           /**< largest |w| of those observations in the same
                                round (NAN when none was tested): T / critical
                                above (wmax / wcrit)² says the shift explains
                                them better than the worst single blunder */
    int nrejected;         /**< of its observations, rejected by snooping (set in
                                `control` at the end of the analysis) */
    int suspect;           /**< 1 in `control`: see cairn_control_suspect */
    double wnet;           /**< largest |w| of the whole network in that round */
    size_t wnet_obs;       /**< the observation with it (problem index) */
    int single;            /**< 1: failing, but (wnet / wcrit)² ≥ T / critical:
                                one blunder somewhere explains the data at least
                                as well, and is what one-at-a-time
                                identification takes first */
    int alike;             /**< a failing test of another held mark with the same
                                statistic and dimension (to 1e-9): the
                                observations cannot tell the two apart, as
                                with only two held marks; its mark index, or
                                -1 */
} cairn_control_test;

/** 1 when held mark test t (final) passes or cannot be made, its test t0
 *  before snooping failed, snooping rejected some of its observations
 *  (t->nrejected > 0), and t0's statistic exceeds its critical value by
 *  more than the worst of its observations' w-tests did,
 *  T0 / critical0 > (wmax0 / wcrit)²: the wrong held coordinate is then
 *  the likelier explanation of those rejections (the identification step
 *  compares each alternative's statistic with its own critical value;
 *  common practice, no source). */
int cairn_control_suspect(const cairn_control_test *t, const cairn_control_test *t0,
                          double wcrit);

/** One observation rejected by iterative snooping, in rejection order. */
typedef struct {
    size_t obs;            /**< problem index (seq − 1) */
    int round;             /**< 1-based snooping round */
    double w;              /**< its w when rejected */
    double tau;            /**< its τ = w / σ0 a posteriori when rejected (NAN unless
                                scale_aposteriori) */
    double r;              /**< its redundancy number when rejected */
    double nabla;          /**< estimated blunder ∇ = −v / r when rejected (m or rad):
                                booked minus fitted, over r */
} cairn_rejection;

/** Result of cairn_analyse. Per-mark arrays have net->nmarks entries,
 *  per-observation arrays prob->nobs, in problem order. */
typedef struct cairn_analysis {
    const cairn_adjustment *adj;
    cairn_snoop_mode snoop;
    int scale_aposteriori;

    /* levels and factors */
    double confidence;      /**< net option */
    double alpha, power, global_alpha;
    double lambda0;         /**< cairn_lambda0(alpha, power) */
    double wcrit;           /**< cairn_w_critical(alpha) */
    double taucrit;         /**< cairn_tau_critical(alpha, dof) (scale_aposteriori), else NAN */
    double variance_factor; /**< 1, or σ0² a posteriori when scale_aposteriori */
    double k2;              /**< 2-D factor: cairn_ellipse_scale(_f) */
    double k1;              /**< 1-D factor: cairn_interval_scale(_t) */
    double k3;              /**< 3-D factor: √χ²(confidence; 3) or √(3 F(confidence; 3, dof)) */

    /* summary of the final adjustment (after any rejections) */
    size_t nobs;            /**< all observations, rejected ones included */
    size_t nused;           /**< nobs − rejected */
    int dof;                /**< nused − unknowns */
    double vtpv;
    cairn_global_result global;
    double sum_r;           /**< Σ r over the observations used (== dof) */
    int nflagged, nunchecked;

    /* per mark (variance factor applied) */
    double *sd_e, *sd_n, *sd_h;           /**< m */
    double *major, *minor, *azimuth;      /**< absolute ellipse at k2; rad for azimuth */
    double *h_interval;                   /**< m, k1 · sd_h */
    double *cov;           /**< 6 per mark: ee en eh nn nh hh (m²), NAN where absent */
    double *axes3;         /**< 3 per mark: k3 · √λ, descending (e, n, h all unknowns);
                                NULL when the problem has no plane or no height part */
    double *dirs3;         /**< 9 per mark: unit vectors of those axes (NULL as axes3) */

    /* per observation */
    double *r, *w, *mdb, *nabla;
    double *tau;           /**< w / σ0 a posteriori (scale_aposteriori); NULL
                                without scale_aposteriori */
    double *external;      /**< m: largest coordinate shift of the unknowns it touches
                                caused by a blunder of size mdb (see analysis.c) */
    cairn_obs_status *status;

    /* relative precision and tolerance */
    cairn_pair *pairs;
    size_t npairs;
    size_t npairs_unavailable; /**< pairs whose Qij lies outside the pattern */
    int has_tolerance;
    double tol_a, tol_ppm;  /**< m, ppm */
    int tolerance_pass;     /**< 1 every tested pair passes, 0 some fails, -1 none tested */
    size_t tolerance_failed;

    /* snooping */
    cairn_rejection *rejections;
    size_t nrejections;
    size_t max_rejections;  /**< floor(max_reject_fraction · nobs) */
    int reject_limit_hit;   /**< 1 when tests still failed at the limit */
    int snoop_rounds;       /**< re-adjustments made */
    int snoop_restored;     /**< observations rejected together with a larger
                                 one and put back once no longer failing */
    int snoop_iterations;   /**< Gauss–Newton iterations of those re-adjustments */
    int snoop_factorisations;

    /* timings (time_phases), seconds; NAN when not measured */
    double selinv_seconds, factor_seconds;
    /* where the analysis spent its wall time, seconds, always measured
     * (make bench): every selected inverse, every numeric factorisation
     * of the re-adjustments (assembly included), the per-observation
     * tests of every round, the rest of the re-adjustments (linearising,
     * solves, refinement), and precision (marks, pairs, external
     * reliability) */
    double t_selinv, t_factorise, t_tests, t_readjust, t_precision;
    double t_control;       /**< the held-mark tests of every round */

    /* held marks: the test of their given coordinates (cairn_control_test),
     * one entry per held mark that observations touch, in mark order.
     * control_first is made before any rejection (all observations in),
     * control at the final adjustment (rejected observations out); with
     * no snooping round the two hold the same values. NULL when none. */
    cairn_control_test *control_first, *control;
    size_t ncontrol;
    size_t ncontrol_failed;      /**< entries of control that fail */
    size_t ncontrol_first_failed;/**< entries of control_first that fail */
} cairn_analysis;

/** Status of cairn_analyse, beyond 0 and the solve statuses. */
enum {
    CAIRN_ANALYSIS_EINTERNAL = -20  /**< Σr ≠ dof, a selected-inverse failure (a bug) */
};

/** Quality of the adjustment: selected inverse of its factor (a priori
 *  σ0 = 1), standard deviations, absolute and relative ellipses,
 *  tolerance, global test, redundancy numbers, w (or τ), MDB, external
 *  reliability, and data snooping as opt->snoop asks.
 *
 *  With CAIRN_SNOOP_ITERATE the adjustment is changed in place: after
 *  each rejection adj's coordinates, orientations, computed values,
 *  residuals, σ, vtpv, dof and sigma0_sq describe the adjustment without
 *  the rejected observations (the residual of a rejected observation is
 *  its misfit to that solution). adj must still hold its CHOLMOD factor
 *  (cairn_adjustment_factor): the analysis refactorises into it, computes
 *  the selected inverse in place over it, and releases it and N at the
 *  end, success or not (cairn_adjustment_release_cholmod); so an
 *  adjustment is analysed once.
 *
 *  opt may be NULL for the defaults. Returns 0 and *pan; or a negative
 *  status (CAIRN_SOLVE_* for a failed re-adjustment, CAIRN_ANALYSIS_EINTERNAL)
 *  with *pan NULL and a message in err. */
int cairn_analyse(cairn_adjustment *adj, const cairn_analysis_options *opt,
                  cairn_analysis **pan, cairn_error *err);

void cairn_analysis_free(cairn_analysis **pan);

/** True when the analysis calls for exit status 1 (FORMAT.md): the global
 *  test failed, or an observation was flagged or rejected. A failed
 *  tolerance is reported but does not change the exit status. */
int cairn_analysis_alarm(const cairn_analysis *an);

/* ------------------------------------------------------------------ */
/* 7. Data snooping                                                    */
/* ------------------------------------------------------------------ */

/* Iterative data snooping (Baarda 1968) is run by cairn_analyse with
 * CAIRN_SNOOP_ITERATE: test, reject the observation with the largest
 * |w| (|τ| with scale_aposteriori) above the critical value, re-adjust,
 * repeat until none is left or max_rejections are gone. A round also
 * rejects further failing observations far from the ones already chosen
 * (snoop_batch.c). Each rejection is listed in cairn_analysis.rejections.
 * The re-adjustment starts from the previous solution: one fresh
 * factorisation of the network without the round's rejections (on the
 * adjustment's symbolic analysis), then chord steps refined to the
 * Gauss–Newton step. The next round's tests use that factor (made at the
 * round's start), which is good for choosing rejections; before the
 * tests that are reported, the factor is remade at the final solution.
 * The selected inverse is computed in place over the factor, and
 * cairn_analyse releases the adjustment's CHOLMOD objects when it has
 * finished: an adjustment is analysed once (snoop.c explains the
 * choices). */

/* ------------------------------------------------------------------ */
/* 8. Diagnoses of an analysis (src/quality/diagnose_all.c)            */
/* ------------------------------------------------------------------ */

/** The diagnosis (cairn/diagnose.h) of every flagged or rejected
 *  observation of an analysis. Ownership: cairn_diagnoses_make fills it,
 *  cairn_diagnoses_clear releases it; a zeroed struct is empty and may be
 *  cleared. */
typedef struct {
    size_t n;                /**< entries: the problem's observations */
    cairn_diagnosis *d;      /**< n entries, problem order; where no diagnosis was
                                  made (made[i] == 0) the entry is all zero (kind
                                  NONE, empty note; mark and numbers 0, not -1 and
                                  NAN): read d[i] only where made[i] */
    unsigned char *made;     /**< n entries: 1 where the observation was diagnosed
                                  (status flagged or rejected) */
    size_t nmade;            /**< how many were diagnosed */
} cairn_diagnoses;

/** Diagnose every flagged or rejected observation of an (the adjustment it
 *  analysed, in its final state) with cairn_diagnose. The estimated
 *  blunders passed for every observation (other readings of a sight are
 *  evidence): ∇̂ = an->nabla and sd σ/√r for observations in the solution
 *  (NAN when unchecked); for a rejected one its misfit to the final
 *  solution, −residual, with sd σ/√r from its rejection record (the sd of
 *  the predicted residual of an observation left out). The booked text is
 *  re-read from the input files, which must still be readable at the
 *  paths they were loaded from. Returns 0, or -1 when out of memory (pdg
 *  is then empty). */
int cairn_diagnoses_make(const cairn_adjustment *adj, const cairn_analysis *an,
                         cairn_diagnoses *pdg, cairn_error *err);

/** Release the storage of a set of diagnoses; it is left empty. */
void cairn_diagnoses_clear(cairn_diagnoses *dg);

#ifdef __cplusplus
}
#endif

#endif /* CAIRN_QUALITY_H */
