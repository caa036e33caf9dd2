/* Loops over observations on several cores. Linearising, evaluating vᵀPv
 * and the per-observation tests touch every observation once per
 * iteration or round; at 10^5 marks (1.4 million observations) each pass
 * takes 0.1–0.3 s on one core, and OpenBLAS's threads sit idle meanwhile.
 * One short-lived thread per extra part (joined before returning) is all
 * it takes: there is no pool and no shared state. */
#if defined(__linux__) && !defined(_GNU_SOURCE)
#define _GNU_SOURCE 1   /* sched_getaffinity, CPU_COUNT */
#endif
#include <pthread.h>
#include <unistd.h>
#ifdef __linux__
#include <sched.h>
#endif

#include "cairn/core.h"

typedef struct {
    void (*body)(void *, int, size_t, size_t);
    void *ctx;
    int part;
    size_t lo, hi;
} part_job;

static void *run_part(void *arg)
{
    part_job *j = arg;
    j->body(j->ctx, j->part, j->lo, j->hi);
    return NULL;
}

/* Processors this process may run on: its CPU affinity mask where the
 * system has one, so that `taskset`, a cgroup cpuset or a batch system's
 * binding limits cairn's loops as it limits OpenBLAS's threads (which
 * count the same mask); else the online processors. */
static long usable_cpus(void)
{
#ifdef __linux__
    cpu_set_t set;
    CPU_ZERO(&set);
    if (sched_getaffinity(0, sizeof set, &set) == 0) {
        int k = CPU_COUNT(&set);
        if (k > 0)
            return k;
    }
#endif
    return sysconf(_SC_NPROCESSORS_ONLN);
}

int cairn_parallel_parts(size_t n, size_t min_items)
{
    long cpus = usable_cpus();
    int parts = cpus > 1 ? (int)(cpus < CAIRN_PARALLEL_MAX ? cpus : CAIRN_PARALLEL_MAX) : 1;
    if (min_items == 0)
        min_items = 1;
    while (parts > 1 && n / (size_t)parts < min_items)
        parts--;
    return parts;
}

void cairn_parallel_for(size_t n, int parts,
                        void (*body)(void *ctx, int part, size_t lo, size_t hi), void *ctx)
{
    if (parts < 1)
        parts = 1;
    if (parts > CAIRN_PARALLEL_MAX)
        parts = CAIRN_PARALLEL_MAX;
    part_job job[CAIRN_PARALLEL_MAX];
    pthread_t th[CAIRN_PARALLEL_MAX];
    int started[CAIRN_PARALLEL_MAX] = {0};
    for (int p = 0; p < parts; p++) {
        job[p] = (part_job){body, ctx, p, n * (size_t)p / (size_t)parts,
                            n * (size_t)(p + 1) / (size_t)parts};
        if (p > 0)
            started[p] = pthread_create(&th[p], NULL, run_part, &job[p]) == 0;
    }
    run_part(&job[0]);
    for (int p = 1; p < parts; p++) {
        if (started[p])
            pthread_join(th[p], NULL);
        else
            run_part(&job[p]);
    }
}
