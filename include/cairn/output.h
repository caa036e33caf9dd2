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
#include "cairn/quality.h"   /* cairn_obs_status, cairn_analysis */

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

/** Result formats (`--format`). */
enum {
    CAIRN_FORMAT_TXT = 1, CAIRN_FORMAT_HTML = 2, CAIRN_FORMAT_CSV = 4,
    CAIRN_FORMAT_XML = 8
};

/** Write the result files asked for in `formats` (CAIRN_FORMAT_* bits)
 *  into dir as one atomic set: marks.csv and observations.csv (CSV),
 *  results.xml (XML). TXT and HTML are not written yet (a later issue).
 *  Returns 0, or -1 with a message. */
int cairn_write_results(const char *dir, const cairn_adjustment *adj,
                        const cairn_analysis *an, unsigned formats,
                        cairn_error *err);

#endif
