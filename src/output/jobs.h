/* Private to src/output/: writing independent result files at the same
 * time. Not API. */
#ifndef CAIRN_OUTPUT_JOBS_H
#define CAIRN_OUTPUT_JOBS_H

#include <stdio.h>

#include "cairn/output.h"

/* One file's writer: returns 0, or -1 when writing failed. */
typedef struct {
    int (*write)(FILE *f, void *ctx);
    void *ctx;
    FILE *f;
    int status;   /* set by cairn_output_run: 0, or -1 */
} cairn_write_job;

/* Run the jobs, job 0 on a second thread while this one runs the others
 * in order, and when each job has written, flush its stream and fsync it
 * (so that the set's commit, cairn_outset_commit, finds the data on disk
 * already). The streams belong to the jobs: nothing else may use them
 * meanwhile. Falls back to running everything here when no thread can be
 * started. Returns 0 when every job succeeded, else -1 (job statuses say
 * which). */
int cairn_output_run(cairn_write_job *jobs, int n);

/* Most files one result set writes (report.txt, report.html, marks.csv,
 * observations.csv, results.xml). */
#define CAIRN_OUTPUT_MAX_FILES 5

/* One result file of a set: written when its format is asked for. */
typedef struct {
    unsigned fmt;                       /* CAIRN_FORMAT_* */
    const char *name;                   /* file name in the results directory */
    int (*write)(FILE *f, void *ctx);
} cairn_write_spec;

/* Open in set every file of spec[0..n) whose format is in formats, in that
 * order (so spec[0], the largest, gets the second thread), write them all
 * with cairn_output_run on ctx, and name each file that failed in err
 * (as "cannot write NAME" at dir). The caller commits or frees the set.
 * Returns 0, or -1 (a file could not be opened or written). */
int cairn_output_write_files(cairn_outset *set, const cairn_write_spec *spec, size_t n,
                             unsigned formats, void *ctx, const char *dir,
                             cairn_error *err);

#endif
