/* `cairn adjust PROJECT [-o DIR] [--datum held|free] [--snoop MODE]
 *  [--format LIST] [--quiet]`: load, build the problem, adjust, write the
 * CSV results atomically, print a short summary. Exit codes: enum
 * cairn_exit (core.h). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cairn/cairn.h"
#include "cairn/solve.h"
#include "cairn/output.h"
#include "cairn/start.h"
#include "cli.h"

void cairn_cli_adjust_help(FILE *out)
{
    fprintf(out,
            "usage: cairn adjust PROJECT [-o DIR] [--datum held|free]\n"
            "                    [--snoop flag|iterate|off] [--format LIST] [--quiet]\n\n"
            "Adjust the network of PROJECT (an XML project or a field book) by\n"
            "least squares and write the results into DIR.\n\n"
            "  -o DIR          results directory (default: results/ beside PROJECT)\n"
            "  --datum held    use the held and weighted control as given (default)\n"
            "  --datum free    ignore holds and weights; the program fixes a minimal\n"
            "                  set of components and names them\n"
            "  --snoop MODE    data snooping: flag, iterate or off (accepted; the\n"
            "                  tests come with the quality stage)\n"
            "  --format LIST   comma-separated from txt,html,csv,xml (accepted; only\n"
            "                  csv is written so far: marks.csv, observations.csv)\n"
            "  --quiet         print nothing but errors\n\n"
            "exit status: 0 adjusted; 2 usage or input error; 3 the adjustment\n"
            "could not be made (datum defect, undetermined marks, divergence).\n");
}

static int usage_error(const char *msg, const char *arg)
{
    fprintf(stderr, "cairn adjust: %s%s%s (try cairn help adjust)\n", msg,
            arg ? " " : "", arg ? arg : "");
    return CAIRN_EXIT_INPUT;
}

static int valid_formats(const char *list)
{
    char buf[256];
    snprintf(buf, sizeof buf, "%s", list);
    for (char *save = NULL, *t = strtok_r(buf, ",", &save); t;
         t = strtok_r(NULL, ",", &save))
        if (strcmp(t, "txt") && strcmp(t, "html") && strcmp(t, "csv") && strcmp(t, "xml"))
            return 0;
    return list[0] != 0;
}

/* results/ beside the project file */
static char *default_dir(const char *project)
{
    const char *slash = strrchr(project, '/');
    size_t dirlen = slash ? (size_t)(slash - project) + 1 : 0;
    char *d = malloc(dirlen + sizeof "results");
    if (d) {
        memcpy(d, project, dirlen);
        memcpy(d + dirlen, "results", sizeof "results");
    }
    return d;
}

static void progress(const cairn_iter_log *it, void *ctx)
{
    const cairn_net *net = ctx;
    fprintf(stderr, "\rcairn: iteration %d  vTPv %.6g  largest correction %.3g m%s%s",
            it->iteration, it->vtpv, it->max_length,
            it->max_length_mark >= 0 ? " at " : "",
            it->max_length_mark >= 0 ? net->marks[it->max_length_mark].id : "");
    if (it->step < 1.0)
        fprintf(stderr, "  step %.3g", it->step);
    if (it->mu > 0.0)
        fprintf(stderr, "  damping %.3g", it->mu);
    fputs("   ", stderr);
    fflush(stderr);
}

static const char *comp_name(unsigned c)
{
    return c == CAIRN_E ? "e" : c == CAIRN_N ? "n" : "h";
}

static void summary(const cairn_adjustment *adj, const char *dir)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    int norient = 0;
    for (size_t s = 0; s < net->nsetups; s++)
        norient += adj->unk_setup[s] >= 0;
    printf("%s\n", net->title && net->title[0] ? net->title : "(untitled project)");
    printf("  dimension            %d%s\n", p->dimension,
           p->dimension == 1 ? " (heights)" :
           p->dimension == 3 ? " (positions and heights together)" :
           p->heights ? " (plane, with a separate height part)" : " (plane)");
    printf("  observations         %zu\n", adj->nobs);
    printf("  unknowns             %d (%d coordinates, %d orientations)\n",
           adj->nunknowns, adj->nunknowns - norient, norient);
    printf("  degrees of freedom   %d\n", adj->dof);
    printf("  iterations           %d\n", adj->iterations);
    printf("  vTPv                 %.6g\n", adj->vtpv);
    if (adj->dof > 0)
        printf("  variance factor      %.6g (a posteriori, vTPv / dof)\n", adj->sigma0_sq);
    else
        printf("  variance factor      none (no redundancy)\n");
    if (!adj->datum_free) {
        printf("  datum                held and weighted control as given\n");
    } else {
        printf("  datum                free: fixed at their starting values");
        for (size_t m = 0; m < net->nmarks; m++)
            for (unsigned c = CAIRN_E; c <= CAIRN_H; c <<= 1)
                if (adj->fixed[m] & c)
                    printf(" %s.%s", net->marks[m].id, comp_name(c));
        printf("\n");
    }
    printf("  results              %s/marks.csv, %s/observations.csv\n", dir, dir);
}

int cairn_cli_adjust(int argc, char **argv)
{
    const char *project = NULL, *outdir = NULL;
    int datum_free = 0, quiet = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            cairn_cli_adjust_help(stdout);
            return CAIRN_EXIT_OK;
        } else if (!strcmp(a, "-o") || !strcmp(a, "--datum") || !strcmp(a, "--snoop") ||
                   !strcmp(a, "--format")) {
            if (i + 1 >= argc)
                return usage_error("missing value after", a);
            const char *v = argv[++i];
            if (!strcmp(a, "-o"))
                outdir = v;
            else if (!strcmp(a, "--datum")) {
                if (!strcmp(v, "free")) datum_free = 1;
                else if (!strcmp(v, "held")) datum_free = 0;
                else return usage_error("--datum is held or free, not", v);
            } else if (!strcmp(a, "--snoop")) {
                if (strcmp(v, "flag") && strcmp(v, "iterate") && strcmp(v, "off"))
                    return usage_error("--snoop is flag, iterate or off, not", v);
            } else if (!valid_formats(v)) {
                return usage_error("--format takes txt,html,csv,xml, not", v);
            }
        } else if (!strcmp(a, "--quiet") || !strcmp(a, "-q")) {
            quiet = 1;
        } else if (a[0] == '-' && a[1]) {
            return usage_error("unknown option", a);
        } else if (project) {
            return usage_error("more than one project:", a);
        } else {
            project = a;
        }
    }
    if (!project)
        return usage_error("no project file given", NULL);

    cairn_error err;
    if (cairn_error_init(&err)) {
        fprintf(stderr, "cairn: out of memory\n");
        return CAIRN_EXIT_ADJUST;
    }
    cairn_net *net = NULL;
    cairn_problem *prob = NULL;
    cairn_adjustment *adj = NULL;
    char *dir = NULL;
    int status = CAIRN_EXIT_OK;
    if (cairn_load_project(project, &net, &err) || !net) {
        cairn_cli_print_diags(&err);
        status = CAIRN_EXIT_INPUT;
        goto out;
    }
    if (cairn_problem_build(net, datum_free, &prob, &err)) {
        cairn_cli_print_diags(&err);
        status = CAIRN_EXIT_INPUT;
        goto out;
    }
    /* Starting values for every component the input leaves open; marks
     * that no observation reaches make the adjustment impossible. */
    if (cairn_start_compute(net, prob->dimension, NULL, &err)) {
        cairn_cli_print_diags(&err);
        status = CAIRN_EXIT_ADJUST;
        goto out;
    }
    if (err.ndiag && !quiet)
        cairn_cli_print_diags(&err);   /* warnings from loading */
    cairn_error_reset(&err);

    cairn_adjust_options opt;
    cairn_adjust_options_default(&opt);
    int tty = !quiet && isatty(fileno(stderr));
    if (tty) {
        opt.progress = progress;
        opt.progress_ctx = net;
    }
    int rc = cairn_adjust(net, prob, &opt, &adj, &err);
    if (tty)
        fprintf(stderr, "\r%60s\r", "");
    if (rc) {
        cairn_cli_print_diags(&err);
        status = CAIRN_EXIT_ADJUST;
        goto out;
    }
    dir = outdir ? cairn_strdup(outdir) : default_dir(project);
    if (!dir) {
        fprintf(stderr, "cairn: out of memory\n");
        status = CAIRN_EXIT_ADJUST;
        goto out;
    }
    if (cairn_write_csv_results(dir, adj, NULL, NULL, &err)) {
        cairn_cli_print_diags(&err);
        status = CAIRN_EXIT_INPUT;
        goto out;
    }
    if (!quiet)
        summary(adj, dir);
out:
    free(dir);
    cairn_adjustment_free(&adj);
    cairn_problem_free(&prob);
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return status;
}
