/* Result files are independent and a national network writes hundreds of
 * megabytes of them (results.xml about 500 MB at 10^5 marks): formatting
 * them is CPU work, syncing them I/O, and both overlap on two cores.
 * Measured at 10^5 marks (make bench): CSV 0.9 s, results.xml 2.0 s and
 * the fsync of the set 0.5 s one after another. A single extra thread for
 * the largest file, joined before anything else happens, is all it takes
 * (no pool). Every writer reads the adjustment and analysis only. */
#include "jobs.h"

#include <pthread.h>
#include <unistd.h>

static void run_one(cairn_write_job *j)
{
    int bad = j->write(j->f, j->ctx) != 0;
    bad |= fflush(j->f) != 0 || ferror(j->f) || fsync(fileno(j->f)) != 0;
    j->status = bad ? -1 : 0;
}

static void *thread_main(void *arg)
{
    run_one(arg);
    return NULL;
}

int cairn_output_run(cairn_write_job *jobs, int n)
{
    pthread_t th;
    int threaded = n > 1 && pthread_create(&th, NULL, thread_main, &jobs[0]) == 0;
    for (int k = threaded ? 1 : 0; k < n; k++)
        run_one(&jobs[k]);
    if (threaded)
        pthread_join(th, NULL);
    int rc = 0;
    for (int k = 0; k < n; k++)
        rc |= jobs[k].status;
    return rc ? -1 : 0;
}

int cairn_output_write_files(cairn_outset *set, const cairn_write_spec *spec, size_t n,
                             unsigned formats, void *ctx, const char *dir,
                             cairn_error *err)
{
    cairn_write_job jobs[CAIRN_OUTPUT_MAX_FILES];
    const char *names[CAIRN_OUTPUT_MAX_FILES];
    int nj = 0;
    for (size_t k = 0; k < n && nj < CAIRN_OUTPUT_MAX_FILES; k++) {
        if (!(formats & spec[k].fmt))
            continue;
        FILE *f = cairn_outset_open(set, spec[k].name, err);
        if (!f)
            return -1;
        names[nj] = spec[k].name;
        jobs[nj++] = (cairn_write_job){spec[k].write, ctx, f, 0};
    }
    if (cairn_output_run(jobs, nj) == 0)
        return 0;
    for (int k = 0; k < nj; k++)
        if (jobs[k].status)
            cairn_error_add(err, CAIRN_SEV_ERROR, dir, 0, 0, "cannot write %s", names[k]);
    return -1;
}
