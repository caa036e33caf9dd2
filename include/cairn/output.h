/* cairn — output: result files (FORMAT.md "Result files") and atomic
 * writing.
 *
 * Machine-readable files use fixed units: lengths in the project length
 * unit (net->length_unit), angles in decimal degrees, angular residuals,
 * standard deviations and minimal detectable biases in arc-seconds.
 *
 * Ownership: cairn_outset_new / cairn_outset_free. Writers never print;
 * failures come back as -1 with a message in the error list.
 */
#ifndef CAIRN_OUTPUT_H
#define CAIRN_OUTPUT_H

#include <stdio.h>

#include "cairn/core.h"
#include "cairn/solve.h"
#include "cairn/quality.h"   /* cairn_obs_status, cairn_analysis, cairn_diagnoses */
#include "cairn/report.h"

/* ------------------------------------------------------------------ */
/* Atomic writing of a set of files into one directory                 */
/* ------------------------------------------------------------------ */

/** A set of result files written together: each goes to a temporary
 *  `DIR/.NAME.tmpXXXXXX` and is renamed into place only by
 *  cairn_outset_commit, so every result file is complete or absent. */
typedef struct cairn_outset cairn_outset;

/** Start a set in dir, creating dir (one level) when missing.
 *  Returns NULL with a message when dir cannot be used. */
cairn_outset *cairn_outset_new(const char *dir, cairn_error *err);
/** Open the temporary file for result file `name` (a plain file name).
 *  The stream belongs to the set: do not fclose it. NULL on failure. */
FILE *cairn_outset_open(cairn_outset *set, const char *name, cairn_error *err);
/** Flush, close and rename every file of the set. Returns 0, or -1 (then
 *  files not yet renamed are removed). */
int cairn_outset_commit(cairn_outset *set, cairn_error *err);
/** Remove any temporary file not committed and free the set. */
void cairn_outset_free(cairn_outset **pset);

/* ------------------------------------------------------------------ */
/* CSV result files                                                    */
/* ------------------------------------------------------------------ */

/** Quality columns, filled by the quality stage. Any pointer may be NULL
 *  and any value NAN: the cell is then left empty. Per mark (net->nmarks). */
typedef struct {
    const double *sd_e, *sd_n, *sd_h;  /**< m */
    const double *major, *minor;       /**< m, semi-axes at the confidence level */
    const double *major_azimuth;       /**< rad */
} cairn_mark_quality;

/** Per observation (prob->nobs). */
typedef struct {
    const double *redundancy;          /**< 0..1 */
    const double *w;                   /**< standardised residual */
    const double *mdb;                 /**< m or rad, like the observation */
    const cairn_obs_status *status;    /**< NULL: all ok */
} cairn_obs_quality;

/** Write marks.csv (header and one row per mark in the adjustment, in
 *  mark order) to f. q may be NULL. Returns 0, or -1 on a write error. */
int cairn_write_marks_csv(FILE *f, const cairn_adjustment *adj,
                          const cairn_mark_quality *q);

/** Write observations.csv (one row per problem observation, in problem
 *  order, seq from 1) to f. q may be NULL. Returns 0 or -1. */
int cairn_write_observations_csv(FILE *f, const cairn_adjustment *adj,
                                 const cairn_obs_quality *q);

/** Write marks.csv and observations.csv into dir atomically (both written
 *  to temporaries, then renamed). Returns 0, or -1 with a message. */
int cairn_write_csv_results(const char *dir, const cairn_adjustment *adj,
                            const cairn_mark_quality *mq,
                            const cairn_obs_quality *oq, cairn_error *err);

/** The quality columns of both CSV files from an analysis (pointers into
 *  an; valid while it lives). */
void cairn_analysis_quality(const cairn_analysis *an, cairn_mark_quality *pmq,
                            cairn_obs_quality *poq);

/* ------------------------------------------------------------------ */
/* results.xml                                                         */
/* ------------------------------------------------------------------ */

/** Write results.xml (FORMAT.md "Result files"; the schema is
 *  share/cairn-results.xsd): the summary with the global test, the
 *  rejections of data snooping, every mark with its covariance block,
 *  every observation with its reliability, every observed pair with its
 *  relative ellipse and tolerance. Returns 0, or -1 on a write error. */
int cairn_write_results_xml(FILE *f, const cairn_adjustment *adj,
                            const cairn_analysis *an);

/** The same, with the diagnosis of each flagged or rejected observation
 *  (`<diagnosis kind corrected mark note reading fit/>` inside its
 *  `<observation>`). dg may be NULL: no diagnoses. */
int cairn_write_results_xml_diag(FILE *f, const cairn_adjustment *adj,
                                 const cairn_analysis *an, const cairn_diagnoses *dg);

/** Result formats (`--format`). */
enum {
    CAIRN_FORMAT_TXT = 1, CAIRN_FORMAT_HTML = 2, CAIRN_FORMAT_CSV = 4,
    CAIRN_FORMAT_XML = 8
};

/** Write the machine-readable result files asked for in `formats`
 *  (CAIRN_FORMAT_CSV: marks.csv and observations.csv; CAIRN_FORMAT_XML:
 *  results.xml, without diagnoses) into dir as one atomic set; the TXT and
 *  HTML bits are ignored here (cairn_write_result_set writes every format).
 *  Returns 0, or -1 with a message. */
int cairn_write_results(const char *dir, const cairn_adjustment *adj,
                        const cairn_analysis *an, unsigned formats,
                        cairn_error *err);

/* ------------------------------------------------------------------ */
/* The report (cairn/report.h) from an adjustment: src/output/report_fill.c */
/* ------------------------------------------------------------------ */

/** What the report says about the run beyond the adjustment itself. */
typedef struct {
    int argc;                 /**< the command line after the program name */
    char *const *argv;        /**< (e.g. "adjust" "p.xml" "-o" "r"); NULL: none */
    const char *utc;          /**< date and time; NULL: now (cairn_report_utc_now) */
    const cairn_error *notes; /**< warnings to repeat with the caution; NULL: none */
} cairn_report_run;

/** A report filled from an adjustment; `report` is what the writers read,
 *  `store` owns everything it points at. Ownership: cairn_report_build
 *  fills it, cairn_report_clear releases it. */
typedef struct {
    cairn_report report;
    struct cairn_report_store *store;   /**< private */
} cairn_report_built;

/** Fill a report from the adjustment (final state), its analysis and the
 *  diagnoses (dg may be NULL: no "likely cause"): the marks in the
 *  adjustment in mark order, every observation in problem order, the
 *  relative precision of the observed pairs, the iteration log, the
 *  options, the datum and the input files with their sizes and SHA-256
 *  (read again from disk; a `..` path is marked). run may be NULL.
 *  The adjustment, analysis, diagnoses and net must outlive the report.
 *  Returns 0, or -1 when out of memory (out is then empty). */
int cairn_report_build(const cairn_adjustment *adj, const cairn_analysis *an,
                       const cairn_diagnoses *dg, const cairn_report_run *run,
                       cairn_report_built *out, cairn_error *err);

/** Release a built report; it is left empty. NULL is accepted. */
void cairn_report_clear(cairn_report_built *b);

/** Flags of cairn_write_result_set. */
enum {
    CAIRN_WRITE_FORCE = 1   /**< write even when DIR is a symbolic link */
};

/** Write the result files asked for in `formats` (CAIRN_FORMAT_* bits)
 *  into dir as one atomic set: report.txt, report.html (from rep, which
 *  may be NULL only when neither is asked for), marks.csv and
 *  observations.csv, results.xml (with the diagnoses dg, may be NULL).
 *  Every file goes to a temporary in dir first; only when all of them
 *  were written completely are they renamed into place, so the previous
 *  results are replaced only by a complete new set, and on any failure
 *  the temporaries are removed and the old files are left as they were.
 *  dir is created (one level) when missing. A dir that is a symbolic link
 *  is refused unless flags has CAIRN_WRITE_FORCE (results written through
 *  a link land somewhere the command line does not show). Returns 0, or
 *  -1 with a message. */
int cairn_write_result_set(const char *dir, const cairn_adjustment *adj,
                           const cairn_analysis *an, const cairn_diagnoses *dg,
                           const cairn_report *rep, unsigned formats, unsigned flags,
                           cairn_error *err);

#endif
