/* make bench: one adjustment of a field book, timed phase by phase, and
 * the yardstick: a bare CHOLMOD analyse + factorise of the same normal
 * matrix with a fresh cholmod_common, timed in the same run.
 *
 * usage: phases FIELDBOOK [OUTDIR [iterate|flag [LABEL [ALPHA]]]]
 * The third argument is the snooping mode (default iterate, the program's
 * default; flag tests every observation once and rejects nothing); LABEL
 * names the kind of network in the first column (default "-"); ALPHA
 * replaces the w-test's significance level (the project option alpha,
 * default 0.001), to measure what a smaller one saves.
 * Prints one Markdown table row:
 * | network | marks | snoop | unknowns | observations | nnz(L) | load | start | build | pattern |
 *   analyse | assemble | factorise (n) | solve | quality+snooping | selinv |
 *   write | total | bare | total/bare | peak RSS MB | bare MB |
 * Not a test: timings live here only. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

#include "cairn/cairn.h"
#include "cairn/output.h"
#include "cairn/quality.h"
#include "cairn/solve.h"
#include "cairn/start.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* A memory line of /proc/self/status ("VmHWM:" peak, "VmRSS:" now), MB;
 * NAN if unknown. */
static double status_mb(const char *key)
{
    FILE *f = fopen("/proc/self/status", "r");
    char line[256];
    double mb = NAN;
    size_t n = strlen(key);
    while (f && fgets(line, sizeof line, f))
        if (!strncmp(line, key, n))
            mb = atof(line + n) / 1024.0;
    if (f)
        fclose(f);
    return mb;
}

static double peak_mb(void)
{
    return status_mb("VmHWM:");
}

/* Resident and peak memory now, MB, for the stderr memory profile. */
static void mem_note(const char *where)
{
    fprintf(stderr, "phases: memory after %-9s rss %6.0f MB, peak %6.0f MB\n", where,
            status_mb("VmRSS:"), peak_mb());
}

/* Reset the peak to the current resident size (Linux: "5" to
 * /proc/self/clear_refs). Returns 0, or -1 when this kernel cannot. */
static int reset_peak(void)
{
    FILE *f = fopen("/proc/self/clear_refs", "w");
    if (!f)
        return -1;
    int ok = fputs("5", f) >= 0;
    return fclose(f) == 0 && ok ? 0 : -1;
}

static void die(const char *what, cairn_error *err)
{
    fprintf(stderr, "phases: %s failed\n", what);
    char line[CAIRN_PATH_MAX + CAIRN_MSG_MAX + 64];
    for (int i = 0; i < err->ndiag && i < 5; i++) {
        cairn_diag_format(&err->diag[i], line, sizeof line);
        fprintf(stderr, "%s\n", line);
    }
    exit(1);
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: phases FIELDBOOK [OUTDIR [iterate|flag [LABEL [ALPHA]]]]\n");
        return 2;
    }
    const char *outdir = argc > 2 ? argv[2] : "/tmp/cairn-bench-out";
    int flag = argc > 3 && !strcmp(argv[3], "flag");
    const char *label = argc > 4 ? argv[4] : "-";
    if (argc > 3 && !flag && strcmp(argv[3], "iterate")) {
        fprintf(stderr, "phases: snooping mode must be iterate or flag\n");
        return 2;
    }
    cairn_error err;
    cairn_error_init(&err);
    cairn_net *net = NULL;
    cairn_problem *prob = NULL;
    cairn_adjustment *adj = NULL;
    cairn_analysis *an = NULL;

    double t0 = now();
    if (cairn_load_project(argv[1], &net, &err))
        die("load", &err);
    double t1 = now();
    mem_note("load");
    if (argc > 5) {
        char *end;
        double a = strtod(argv[5], &end);
        if (*end || !(a > 0 && a < 1)) {
            fprintf(stderr, "phases: ALPHA must be a number between 0 and 1\n");
            return 2;
        }
        net->opt.alpha = a;
    }
    if (cairn_problem_build(net, 0, &prob, &err))
        die("problem", &err);
    double t2 = now();
    mem_note("build");
    if (cairn_start_compute(net, prob->dimension, NULL, &err))
        die("starting coordinates", &err);
    double t3 = now();
    cairn_error_reset(&err);
    if (cairn_adjust(net, prob, NULL, &adj, &err))
        die("adjust", &err);
    double t4 = now();
    mem_note("adjust");
    cairn_solve_timing st;
    cairn_adjustment_timing(adj, &st);

    /* the yardstick, on the normal matrix of the first adjustment, before
     * snooping changes anything */
    /* The yardstick's memory must not count as the adjustment's: note the
     * peak before it, and reset the peak after it has freed everything. */
    double peak_adjust = peak_mb();
    cholmod_common cc;
    cholmod_start(&cc);
    cc.print = 0;
    cc.nmethods = 1;
    /* the ordering the adjustment chose (src/solve/normal.c) */
    cc.method[0].ordering = cairn_adjustment_factor(adj)->ordering;
    cc.supernodal = CHOLMOD_SUPERNODAL;
    cholmod_sparse *N = cholmod_copy_sparse((cholmod_sparse *)cairn_adjustment_normal(adj), &cc);
    double b0 = now();
    cholmod_factor *L = cholmod_analyze(N, &cc);
    double b1 = now();
    cholmod_factorize(N, L, &cc);
    double b2 = now();
    double lnz = cc.lnz, flops = cc.fl;
    double bare_mb = (double)cc.memory_usage / 1048576.0;
    cholmod_free_factor(&L, &cc);
    cholmod_free_sparse(&N, &cc);
    cholmod_finish(&cc);
    int peak_reset = reset_peak() == 0;

    cairn_analysis_options ao;
    cairn_analysis_options_default(&ao);
    ao.snoop = flag ? CAIRN_SNOOP_FLAG : CAIRN_SNOOP_ITERATE;
    double q0 = now();
    if (cairn_analyse(adj, &ao, &an, &err))
        die("analysis", &err);
    double q1 = now();
    mem_note("analysis");
    if (cairn_write_results(outdir, adj, an, CAIRN_FORMAT_CSV | CAIRN_FORMAT_XML, &err))
        die("write", &err);
    double q2 = now();
    mem_note("write");

    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    double peak = (double)ru.ru_maxrss / 1024.0;   /* yardstick included */
    if (peak_reset && isfinite(peak_adjust) && isfinite(peak_mb()))
        peak = fmax(peak_adjust, peak_mb());
    else
        fprintf(stderr, "phases: could not reset the peak memory: the peak RSS "
                "includes the yardstick's factorisation\n");
    double bare = b2 - b0;
    double total = (t4 - t0) + (q2 - q1) + (q1 - q0);
    printf("| %s | %zu | %s | %d | %zu | %.3g | %.2f | %.2f | %.2f | %.2f | %.2f | %.2f | %.2f (%d) | "
           "%.2f | %.2f | %.2f | %.2f | %.2f | %.2f (%.2f+%.2f) | %.1f | %.0f | %.0f |\n",
           label, net->nmarks, flag ? "flag" : "iterate", adj->nunknowns, adj->nobs, lnz, t1 - t0, t3 - t2, t2 - t1,
           st.pattern, st.analyse, st.assemble, st.factorise, st.nfactorise, st.solve,
           q1 - q0, an->selinv_seconds, q2 - q1, total, bare, b1 - b0, b2 - b1,
           total / bare, peak, bare_mb);
    /* snooping counters, for profiling: stderr, outside the table */
    fprintf(stderr, "phases: %zu marks: %d snooping rounds, %zu rejections (%d put back), "
            "%d re-adjustment iterations, %d factorisations in the analysis; "
            "factorisation %.3g flop\n",
            net->nmarks, an->snoop_rounds, an->nrejections, an->snoop_restored,
            an->snoop_iterations, an->snoop_factorisations, flops);
    fprintf(stderr, "phases: rejections per round:");
    for (int r = 1; r <= an->snoop_rounds; r++) {
        size_t c = 0;
        for (size_t k = 0; k < an->nrejections; k++)
            c += an->rejections[k].round == r;
        fprintf(stderr, " %zu", c);
    }
    fprintf(stderr, "\n");
    fprintf(stderr, "phases: analysis seconds: selinv %.2f, factorise %.2f, tests %.2f, "
            "re-adjust %.2f, precision %.2f, held-mark tests %.2f (%zu marks)\n", an->t_selinv,
            an->t_factorise, an->t_tests, an->t_readjust, an->t_precision, an->t_control,
            an->ncontrol);
    cairn_analysis_free(&an);
    cairn_adjustment_free(&adj);
    cairn_problem_free(&prob);
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return 0;
}
