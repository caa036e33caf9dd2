/* cairn — report: the adjustment report for the project record
 * (report.txt, report.html with inline SVG) and the SHA-256 of input files.
 *
 * The report writers read one plain struct, cairn_report, that holds
 * everything a report shows. It is deliberately independent of the solve
 * and quality structs: the caller (cairn adjust) fills it from the
 * adjustment and its analysis, and the writers only format. Nothing here
 * prints to stdout/stderr; the writers write to the FILE* they are given.
 *
 * Units: as everywhere in the library, every length is in metres and every
 * angle in radians; the writers convert to the project units given in the
 * report (length_unit / length_factor, angle_unit). Small angles
 * (residuals, standard deviations, MDB, estimated blunders) are shown in
 * arc-seconds for the dms and deg units and in mgon for gon.
 *
 * Missing values: NAN for a number that does not exist (a component not in
 * the adjustment, the w of an unchecked observation); NULL for a string
 * that is absent. A zero-initialised cairn_report is a valid, empty report.
 *
 * Ownership: the report points at, but never owns, the caller's arrays and
 * strings; they must outlive the call to a writer.
 */
#ifndef CAIRN_REPORT_INCLUDED
#define CAIRN_REPORT_INCLUDED  /* not CAIRN_REPORT_H: that is the height bit */

#include <stddef.h>
#include <stdio.h>

#include "cairn/core.h"

/** Above this many marks the plan is thinned: marks only, no lines and no
 *  ellipses (the report says so). */
#define CAIRN_REPORT_PLAN_MAX_MARKS 20000

/** Longest text line of report.txt, in columns (UTF-8 characters). */
#define CAIRN_REPORT_TXT_WIDTH 100

/** Role of a mark in the report. */
typedef enum {
    CAIRN_REPORT_ADJUSTED = 0,   /**< new mark, coordinates estimated */
    CAIRN_REPORT_HELD,           /**< every component held fixed */
    CAIRN_REPORT_WEIGHTED,       /**< weighted control (sd-en / sd-h) */
    CAIRN_REPORT_UNDETERMINED    /**< left undetermined: no usable estimate */
} cairn_report_role;

/** Status of an observation (mirrors the status column of observations.csv). */
typedef enum {
    CAIRN_REPORT_OK = 0,
    CAIRN_REPORT_FLAGGED,        /**< fails the w-test */
    CAIRN_REPORT_REJECTED,       /**< removed by iterative snooping */
    CAIRN_REPORT_UNCHECKED       /**< redundancy below 0.01 */
} cairn_report_status;

/** Coordinate component bits (the same values as CAIRN_E/N/H in model.h). */
enum { CAIRN_REPORT_E = 1, CAIRN_REPORT_N = 2, CAIRN_REPORT_H = 4 };

/** One input file of the run. cairn_report_file_fill fills it from disk. */
typedef struct {
    const char *path;   /**< as given (command line, or relative to the project) */
    long long size;     /**< bytes; -1 when unknown */
    char sha256[65];    /**< lower-case hex digest; "" when unknown */
    int dotdot;         /**< 1 when the path has a `..` component */
} cairn_report_file;

/** Adjustment options as the report shows them. */
typedef struct {
    int dimension;            /**< resolved: 1, 2 or 3 (0: not stated) */
    int heights;              /**< dimension 2 with a separate height part */
    double refraction;        /**< k */
    double scale;             /**< combined scale factor */
    double confidence;        /**< of the ellipses, e.g. 0.95 */
    double alpha, power;      /**< of the w-test / MDB */
    double global_alpha;      /**< of the global test */
    int max_iterations;       /**< 0: not stated */
    const char *tolerance;    /**< e.g. "20 mm + 50 ppm"; NULL: none */
    const char *datum;        /**< e.g. "held and weighted control as given" */
    const char *fixed;        /**< free datum: fixed components, e.g. "Q1.e Q1.n Q2.e" */
    const char *snoop;        /**< "iterate", "flag" or "off" */
} cairn_report_options;

/** What the verdict and the statistics are made of. */
typedef struct {
    int tested;               /**< 1 when the global test was made (dof > 0) */
    double statistic;         /**< vᵀPv / σ0² a priori, ~ χ²(dof) */
    double lower, upper;      /**< acceptance bounds of the statistic */
    int pass;                 /**< 1 global test passed, 0 failed */
    int dof;
    double vtpv;
    double sigma0_sq;         /**< a posteriori variance factor; NAN if dof = 0 */
    size_t nobs;              /**< all observations, rejected ones included */
    size_t nunknowns;
    size_t norientations;     /**< of nunknowns; 0 when not stated */
    size_t nflagged, nrejected, nunchecked;
    int tolerance;            /**< 1 every tested pair passes, 0 some fail, -1 none */
    double wcrit;             /**< critical |w| (NAN: not stated) */
    int converged;            /**< 1 converged (0 is reported as a warning) */
    int snoop_rounds;         /**< re-adjustments by data snooping (0: none) */
    int nrestored;            /**< observations a round rejected besides its
                                   largest |w| that a later round put back
                                   (no longer failing) */
} cairn_report_verdict;

/** One row of the iteration log. */
typedef struct {
    int iteration;            /**< 1-based */
    double vtpv;              /**< vᵀPv after the step */
    double max_correction;    /**< m, largest coordinate correction */
    const char *max_where;    /**< e.g. "N7.e"; NULL when none */
    double step;              /**< step length (1 = full Gauss–Newton step) */
    double mu;                /**< Marquardt damping (0 = none) */
} cairn_report_iter;

/** One mark in the adjustment. */
typedef struct {
    const char *id;
    cairn_report_role role;
    unsigned has;             /**< CAIRN_REPORT_E|N|H: components in the adjustment */
    unsigned held;            /**< components held fixed */
    unsigned fixed;           /**< components fixed by the free datum */
    double e, n, h;           /**< m */
    double sd_e, sd_n, sd_h;  /**< m; NAN for held or fixed components */
    double major, minor;      /**< m, absolute ellipse semi-axes at the confidence level */
    double azimuth;           /**< rad, azimuth of the major axis, [0, π) */
} cairn_report_mark;

/** One observation, in load order. */
typedef struct {
    size_t seq;               /**< 1-based, as in observations.csv */
    const char *kind;         /**< "direction", "slope", "control-e" ... */
    int angular;              /**< 1: values in radians, 0: metres */
    int at, from, to;         /**< indices into cairn_report.marks, or -1 */
    double observed, adjusted, residual, sd;  /**< m or rad */
    double r, w;              /**< redundancy number, standardised residual */
    double mdb;               /**< m or rad */
    cairn_report_status status;
    const char *file;         /**< source file; NULL when none */
    int line;                 /**< source line; 0 when none */
    double nabla, sd_nabla;   /**< estimated blunder and its sd (m or rad) */
    const char *diagnosis;    /**< field-book mistake that explains it, or NULL */
} cairn_report_obs;

/** Relative precision of two connected marks. */
typedef struct {
    int from, to;             /**< indices into cairn_report.marks */
    double distance;          /**< m */
    double major, minor;      /**< m, relative ellipse at the confidence level */
    double azimuth;           /**< rad */
    double allowed;           /**< m; NAN without a tolerance */
    int pass;                 /**< 1 pass, 0 fail, -1 not tested */
} cairn_report_pair;

/** The test of a held mark's given coordinates against the observations
 *  touching it (cairn_control_test in cairn/quality.h): at the final
 *  adjustment, and before any rejection ("first"). */
typedef struct {
    int mark;                 /**< index into cairn_report.marks */
    unsigned held;            /**< CAIRN_REPORT_E|N|H tested */
    int nobs, nobs_first;     /**< observations used that touch it */
    int nrejected;            /**< of its observations, rejected by snooping */
    int q, q_first;           /**< testable dimensions (0: untestable) */
    double statistic, critical, statistic_first, critical_first;
    double shift[3], shift_first[3];  /**< m, e n h: where its observations put
                                           it from its given coordinates; NAN
                                           where not held or untestable */
    int pass, pass_first;     /**< 1 pass, 0 fail, -1 untestable */
    int suspect;              /**< 1: failed before snooping and explains the
                                   rejections of its observations better than
                                   one blunder (cairn_control_suspect) */
    int single;               /**< failing, but one blunder explains the data as
                                   well (cairn_control_test) */
    double wnet;              /**< largest |w| of the network (final) */
    size_t wnet_seq;          /**< its observation's seq (1-based) */
    int alike, alike_first;   /**< index into marks of a held mark whose test
                                   fails alike (cannot be told apart), or -1 */
} cairn_report_control;

/** Everything a report shows. */
typedef struct {
    /* the run */
    const char *program_version;   /**< e.g. CAIRN_VERSION_STRING */
    const char *utc;               /**< e.g. "2024-05-01 12:00:00 UTC" */
    const char *command_line;
    const cairn_report_file *files;  size_t nfiles;

    /* the project */
    const char *title, *description;
    const char *length_unit;       /**< "m", "ft", "usft" (NULL: "m") */
    double length_factor;          /**< metres per length unit (0: 1) */
    cairn_angle_unit angle_unit;
    cairn_report_options opt;
    cairn_report_verdict verdict;

    const cairn_report_iter *iters;  size_t niters;
    const cairn_report_mark *marks;  size_t nmarks;
    const cairn_report_obs *obs;     size_t nobs;
    const cairn_report_pair *pairs;  size_t npairs;

    /** Magnification of the error ellipses in the plan; 0 (default): chosen
     *  so that the largest ellipse is about 5 % of the plan extent. */
    double ellipse_magnification;

    /** Further notes shown with the caution (e.g. warnings from loading). */
    const char *const *notes;  size_t nnotes;

    /** The held marks' tests, in mark order (none in a free datum). */
    const cairn_report_control *controls;  size_t ncontrols;
} cairn_report;

/** Write report.txt: plain text, lines of at most CAIRN_REPORT_TXT_WIDTH
 *  columns, the caution first. Returns 0, or -1 on a write error. */
int cairn_report_write_txt(const cairn_report *r, FILE *out);

/** Write report.html: one self-contained XHTML-compatible file (inline CSS,
 *  a small inline script for sortable tables, inline SVG plan and charts;
 *  no external resources). Returns 0, or -1 on a write error or when out
 *  of memory. */
int cairn_report_write_html(const cairn_report *r, FILE *out);

/** Magnification the plan uses: r->ellipse_magnification when > 0, else a
 *  round number (1, 2 or 5 × 10^k) that makes the largest ellipse about 5 %
 *  of the larger side of the marks' extent; 1 when there is no ellipse. */
double cairn_report_magnification(const cairn_report *r);

/* ------------------------------------------------------------------ */
/* Run information helpers                                             */
/* ------------------------------------------------------------------ */

/** SHA-256 (FIPS 180-4) of n bytes at data as 64 lower-case hex digits
 *  and a NUL in hex. */
void cairn_sha256_hex(const void *data, size_t n, char hex[65]);

/** SHA-256 of the file at path, read in binary. Returns 0, or -1 when the
 *  file cannot be read (hex is then ""). */
int cairn_sha256_file(const char *path, char hex[65]);

/** 1 when path has a `..` component ("../a", "a/../b", ".."), else 0. */
int cairn_path_has_dotdot(const char *path);

/** Fill f for path (not copied: it must outlive f): size, SHA-256, dotdot.
 *  Returns 0, or -1 when the file cannot be read (size -1, sha256 ""). */
int cairn_report_file_fill(cairn_report_file *f, const char *path);

/** The current date and time in UTC, "YYYY-MM-DD HH:MM:SS UTC", into buf
 *  (n ≥ 24). Returns buf. */
char *cairn_report_utc_now(char *buf, size_t n);

#endif
