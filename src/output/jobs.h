/* Private to src/output/: writing independent result files at the same
 * time. Not API. */
#ifndef CAIRN_OUTPUT_JOBS_H
#define CAIRN_OUTPUT_JOBS_H

#include <stdio.h>

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

#endif
