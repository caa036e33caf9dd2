/* `cairn adjust PROJECT [-o DIR] [--datum held|free] [--snoop MODE]
 *  [--scale-by-aposteriori] [--format LIST] [--force] [--quiet]`: load,
 * build the problem, adjust, analyse (tests, precision, snooping), diagnose
 * the flagged and rejected observations, write the results atomically as
 * one set, print a summary. Exit codes: enum cairn_exit (core.h). */
#include <math.h>
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
            "                    [--snoop flag|iterate|off] [--scale-by-aposteriori]\n"
            "                    [--format LIST] [--force] [--quiet]\n\n"
            "Adjust the network of PROJECT (an XML project or a field book) by\n"
            "least squares, test it and write the results into DIR.\n\n"
            "  -o DIR          results directory (default: results/ beside PROJECT)\n"
            "  --datum held    use the held and weighted control as given (default)\n"
            "  --datum free    ignore holds and weights; the program fixes a minimal\n"
            "                  set of components and names them\n"
            "  --snoop iterate data snooping (default): remove the observation whose\n"
            "                  w-test fails worst (and failing ones more than two\n"
            "                  observed lines from it), re-adjust, repeat until every\n"
            "                  test passes (at most 10 %% of the observations removed)\n"
            "  --snoop flag    mark every observation whose w-test fails; remove none\n"
            "  --snoop off     report w and mdb, but flag and remove nothing\n"
            "  --scale-by-aposteriori\n"
            "                  scale standard deviations and ellipses by the a\n"
            "                  posteriori variance factor (F and t factors) and test\n"
            "                  observations with Pope's tau instead of w\n"
            "  --format LIST   comma-separated from txt,html,csv,xml (default: all):\n"
            "                  txt report.txt, html report.html, csv marks.csv and\n"
            "                  observations.csv, xml results.xml; written as one set,\n"
            "                  replacing the previous results only when all succeed\n"
            "  --force         write even when DIR is a symbolic link\n"
            "  --quiet         print nothing but errors\n\n"
            "exit status: 0 adjusted, global test passed, nothing flagged or removed;\n"
            "1 adjusted, but the global test failed or observations were flagged or\n"
            "removed; 2 usage or input error; 3 the adjustment could not be made\n"
            "(datum defect, undetermined marks, divergence).\n");
}

static int usage_error(const char *msg, const char *arg)
{
    fprintf(stderr, "cairn adjust: %s%s%s (try cairn help adjust)\n", msg,
            arg ? " " : "", arg ? arg : "");
    return CAIRN_EXIT_INPUT;
}

/* CAIRN_FORMAT_* bits of a list such as "csv,xml"; 0 when invalid. */
static unsigned parse_formats(const char *list)
{
    char buf[256];
    unsigned m = 0;
    if (strlen(list) >= sizeof buf)
        return 0;
    snprintf(buf, sizeof buf, "%s", list);
    for (char *save = NULL, *t = strtok_r(buf, ",", &save); t;
         t = strtok_r(NULL, ",", &save)) {
        if (!strcmp(t, "txt")) m |= CAIRN_FORMAT_TXT;
        else if (!strcmp(t, "html")) m |= CAIRN_FORMAT_HTML;
        else if (!strcmp(t, "csv")) m |= CAIRN_FORMAT_CSV;
        else if (!strcmp(t, "xml")) m |= CAIRN_FORMAT_XML;
        else return 0;
    }
    return m;
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

static void files_line(const char *dir, unsigned formats)
{
    printf("  results              %s/:", dir);
    if (formats & CAIRN_FORMAT_TXT)
        printf(" report.txt");
    if (formats & CAIRN_FORMAT_HTML)
        printf(" report.html");
    if (formats & CAIRN_FORMAT_CSV)
        printf(" marks.csv observations.csv");
    if (formats & CAIRN_FORMAT_XML)
        printf(" results.xml");
    printf("\n");
}

/* Removed and flagged observations (and failing held marks) listed on
 * screen at most. */
#define SCREEN_LIST 20

/* Where the observations put held mark t->mark, in words. */
static void print_shift(const cairn_net *net, const double sh[3])
{
    static const char *const pos[3] = {"east", "north", "up"}, *const neg[3] = {"west", "south",
                                                                               "down"};
    double lf = cairn_length_factor(net->length_unit);
    const char *sep = "";
    for (int c = 0; c < 3; c++)
        if (isfinite(sh[c])) {
            printf("%s%.3f %s %s", sep, fabs(sh[c]) / lf, cairn_length_unit_name(net->length_unit),
                   sh[c] < 0 ? neg[c] : pos[c]);
            sep = ", ";
        }
}

/* The held-mark tests: a count, and each mark that fails, or that failed
 * before snooping and lost observations to it (the first SCREEN_LIST). */
static void print_held(const cairn_net *net, const cairn_problem *p, const cairn_analysis *an)
{
    if (an->ncontrol == 0)
        return;
    printf("  held marks           %zu tested against their observations: %zu fail",
           an->ncontrol, an->ncontrol_failed);
    if (an->snoop_rounds > 0)
        printf(" (before snooping %zu failed)", an->ncontrol_first_failed);
    printf("\n");
    size_t shown = 0, more = 0;
    for (size_t k = 0; k < an->ncontrol; k++) {
        const cairn_control_test *t = &an->control[k], *t0 = &an->control_first[k];
        int before = t->suspect;
        if (t->pass != 0 && !before)
            continue;
        if (shown >= SCREEN_LIST) {
            more++;
            continue;
        }
        shown++;
        const cairn_control_test *u = before ? t0 : t;
        printf("    %s %s (statistic %.4g > %.4g):\n      its observations put it ",
               net->marks[t->mark].id, before ? "FAILED before snooping" : "FAILS", u->statistic,
               u->critical);
        print_shift(net, u->shift);
        if (before)
            printf("; %d of its %d observations\n      were then removed", t->nrejected,
                   t0->nobs);
        printf(". Check its given coordinates.\n");
        if (!before && t->single) {
            const cairn_obs *o = &p->obs[t->wnet_obs];
            printf("      But observation #%zu", t->wnet_obs + 1);
            if (o->src.file)
                printf(" (%s:%d)", o->src.file, o->src.line);
            printf(", |w| %.3g, explains the data as well: find that first.\n", t->wnet);
        }
        if (u->alike >= 0)
            printf("      %s fails alike: the observations cannot tell which of the two is "
                   "wrong.\n", net->marks[u->alike].id);
    }
    if (more)
        printf("    ... and %zu more: see report.txt or results.xml\n", more);
}

/* The diagnosis of observation i under its line in the summary. */
static void print_cause(const cairn_net *net, const cairn_diagnoses *dg, size_t i)
{
    if (!dg || i >= dg->n || !dg->made[i])
        return;
    const cairn_diagnosis *d = &dg->d[i];
    if (d->kind == CAIRN_DIAG_NONE) {
        printf("      likely cause: none found (%s)\n", d->note);
        return;
    }
    printf("      likely cause: %s", cairn_diag_kind_name(d->kind));
    if (d->kind == CAIRN_DIAG_WRONG_MARK && d->mark >= 0)
        printf(" (%s meant)", net->marks[d->mark].id);
    printf(": %s\n", d->note);
}

/* A residual-like value in its unit for the screen: arc-seconds for angles,
 * the project length unit otherwise. */
static void print_obs_value(const cairn_net *net, const cairn_obs *o, double x)
{
    if (cairn_obs_kind_angular(o->kind))
        printf("%.2f\"", x * CAIRN_RHO_SEC);
    else
        printf("%.4f %s", x / cairn_length_factor(net->length_unit),
               cairn_length_unit_name(net->length_unit));
}

static void summary(const cairn_adjustment *adj, const cairn_analysis *an,
                    const cairn_diagnoses *dg, const char *dir, unsigned formats)
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
    printf("  observations         %zu", an->nobs);
    if (an->nrejections)
        printf(" (%zu used, %zu removed by snooping)", an->nused, an->nrejections);
    printf("\n");
    printf("  unknowns             %d (%d coordinates, %d orientations)\n",
           adj->nunknowns, adj->nunknowns - norient, norient);
    printf("  degrees of freedom   %d\n", an->dof);
    printf("  iterations           %d", adj->iterations);
    if (an->snoop_rounds)
        printf(" (+ %d after removals)", an->snoop_iterations);
    printf("\n");
    printf("  vTPv                 %.6g\n", an->vtpv);
    if (an->dof > 0)
        printf("  variance factor      %.6g (a posteriori, vTPv / dof)\n",
               an->global.sigma0_sq);
    else
        printf("  variance factor      none (no redundancy)\n");
    if (an->global.tested)
        printf("  global test          %s: vTPv %.6g %s [%.6g, %.6g] (chi-square, %d dof, "
               "two-sided at %g)\n", an->global.pass ? "passed" : "FAILED",
               an->global.statistic, an->global.pass ? "within" : "outside",
               an->global.lower, an->global.upper, an->dof, an->global_alpha);
    else
        printf("  global test          not possible (no redundancy)\n");
    /* A variance factor far above 1 almost always means standard deviations
     * in the wrong unit or instruments far better than the real ones; the
     * w-tests then flag good observations (common practice, no source). */
    if (an->global.tested && !an->global.pass && an->global.sigma0_sq > 25)
        printf("  WARNING              the residuals are %.0f times larger than the a priori "
               "standard\n"
               "                       deviations allow: check the sd units and instrument "
               "precisions.\n"
               "                       Until that is fixed the flags, removals and causes "
               "below are not\n"
               "                       evidence of blunders.\n",
               sqrt(an->global.sigma0_sq));
    if (isfinite(an->taucrit))
        printf("  observation test     Pope's tau, critical value %.4f (alpha %g)\n",
               an->taucrit, an->alpha);
    else
        printf("  observation test     w, critical value %.4f (alpha %g); "
               "lambda0 %.4g (power %g)\n", an->wcrit, an->alpha, an->lambda0, an->power);
    printf("  snooping             %s: %d flagged, %zu removed", an->snoop == CAIRN_SNOOP_ITERATE
           ? "iterate" : an->snoop == CAIRN_SNOOP_FLAG ? "flag" : "off", an->nflagged,
           an->nrejections);
    if (an->snoop_rounds > 0)
        printf(" in %d round%s", an->snoop_rounds, an->snoop_rounds == 1 ? "" : "s");
    if (an->snoop_restored > 0)
        printf(" (%d earlier removal%s undone: no longer failing)", an->snoop_restored,
               an->snoop_restored == 1 ? "" : "s");
    printf(", %d unchecked (redundancy below %g)\n", an->nunchecked, CAIRN_R_MIN);
    /* one screen: the first SCREEN_LIST removals and flags; the reports
     * and results.xml list them all */
    size_t shown = 0;
    for (size_t k = 0; k < an->nrejections && shown < SCREEN_LIST; k++, shown++) {
        const cairn_rejection *rj = &an->rejections[k];
        const cairn_obs *o = &p->obs[rj->obs];
        printf("    removed #%zu %s", rj->obs + 1, cairn_obs_kind_name(o->kind));
        if (o->src.file)
            printf(" (%s:%d)", o->src.file, o->src.line);
        printf(": w %.2f", rj->w);
        if (isfinite(rj->tau))
            printf(", tau %.2f", rj->tau);
        /* ∇ = −v/r with v = fitted − booked: the booked value's error */
        printf(", estimated error of the booked value ");
        print_obs_value(net, o, rj->nabla);
        printf("\n");
        print_cause(net, dg, rj->obs);
    }
    if (an->reject_limit_hit)
        printf("    limit of %zu removals reached: the observations still failing are "
               "flagged\n", an->max_rejections);
    for (size_t i = 0; i < an->nobs && shown < SCREEN_LIST; i++)
        if (an->status[i] == CAIRN_OBS_FLAGGED) {
            shown++;
            const cairn_obs *o = &p->obs[i];
            printf("    flagged #%zu %s", i + 1, cairn_obs_kind_name(o->kind));
            if (o->src.file)
                printf(" (%s:%d)", o->src.file, o->src.line);
            printf(": w %.2f, residual ", an->w[i]);
            print_obs_value(net, o, adj->residual[i]);
            printf("\n");
            print_cause(net, dg, i);
        }
    if ((size_t)an->nflagged + an->nrejections > shown)
        printf("    ... and %zu more: see report.txt, observations.csv or results.xml\n",
               (size_t)an->nflagged + an->nrejections - shown);
    if (an->has_tolerance) {
        double lf = cairn_length_factor(net->length_unit);
        if (an->tolerance_pass < 0)
            printf("  tolerance            no connected pair to test\n");
        else
            printf("  tolerance            %s: %zu of %zu connected pairs within "
                   "%.4g %s + %g ppm at %g %%\n", an->tolerance_pass ? "passed" : "FAILED",
                   an->npairs - an->npairs_unavailable - an->tolerance_failed,
                   an->npairs - an->npairs_unavailable, an->tol_a / lf,
                   cairn_length_unit_name(net->length_unit), an->tol_ppm,
                   100 * an->confidence);
    }
    if (an->npairs_unavailable)
        printf("  relative precision   %zu pair%s outside the factor pattern, not computed\n",
               an->npairs_unavailable, an->npairs_unavailable == 1 ? "" : "s");
    print_held(net, p, an);
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
    files_line(dir, formats);
}

int cairn_cli_adjust(int argc, char **argv)
{
    const char *project = NULL, *outdir = NULL;
    int datum_free = 0, quiet = 0, force = 0;
    unsigned formats = CAIRN_FORMAT_TXT | CAIRN_FORMAT_HTML | CAIRN_FORMAT_CSV |
                       CAIRN_FORMAT_XML;
    cairn_analysis_options aopt;
    cairn_analysis_options_default(&aopt);
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
                if (!strcmp(v, "iterate")) aopt.snoop = CAIRN_SNOOP_ITERATE;
                else if (!strcmp(v, "flag")) aopt.snoop = CAIRN_SNOOP_FLAG;
                else if (!strcmp(v, "off")) aopt.snoop = CAIRN_SNOOP_OFF;
                else return usage_error("--snoop is flag, iterate or off, not", v);
            } else if (!(formats = parse_formats(v))) {
                return usage_error("--format takes txt,html,csv,xml, not", v);
            }
        } else if (!strcmp(a, "--scale-by-aposteriori")) {
            aopt.scale_aposteriori = 1;
        } else if (!strcmp(a, "--force")) {
            force = 1;
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

    cairn_error err, warnings;
    if (cairn_error_init(&warnings) || cairn_error_init(&err)) {
        cairn_error_clear(&warnings);
        fprintf(stderr, "cairn: out of memory\n");
        return CAIRN_EXIT_ADJUST;
    }
    cairn_diagnoses dg = {0};
    cairn_report_built rep = {0};
    cairn_net *net = NULL;
    cairn_problem *prob = NULL;
    cairn_adjustment *adj = NULL;
    cairn_analysis *an = NULL;
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
    /* keep them for the report's caution; err starts afresh */
    cairn_error_clear(&warnings);
    warnings = err;
    if (cairn_error_init(&err)) {
        err = warnings;
        cairn_error_init(&warnings);
        fprintf(stderr, "cairn: out of memory\n");
        status = CAIRN_EXIT_ADJUST;
        goto out;
    }

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
    rc = cairn_analyse(adj, &aopt, &an, &err);
    if (rc) {
        cairn_cli_print_diags(&err);
        status = CAIRN_EXIT_ADJUST;
        goto out;
    }
    cairn_adjustment_release_cholmod(adj);
    dir = outdir ? cairn_strdup(outdir) : default_dir(project);
    cairn_report_run run = {argc, argv, NULL, &warnings};
    if (!dir || cairn_diagnoses_make(adj, an, &dg, &err) ||
        ((formats & (CAIRN_FORMAT_TXT | CAIRN_FORMAT_HTML)) &&
         cairn_report_build(adj, an, &dg, &run, &rep, &err))) {
        fprintf(stderr, "cairn: out of memory\n");
        status = CAIRN_EXIT_ADJUST;
        goto out;
    }
    if (cairn_write_result_set(dir, adj, an, &dg, &rep.report, formats,
                               force ? CAIRN_WRITE_FORCE : 0, &err)) {
        cairn_cli_print_diags(&err);
        fprintf(stderr, "cairn: no results written; any previous results in %s are "
                "unchanged\n", dir);
        status = CAIRN_EXIT_INPUT;
        goto out;
    }
    if (!quiet)
        summary(adj, an, &dg, dir, formats);
    status = cairn_analysis_alarm(an) ? CAIRN_EXIT_FLAGGED : CAIRN_EXIT_OK;
out:
    free(dir);
    cairn_report_clear(&rep);
    cairn_diagnoses_clear(&dg);
    cairn_error_clear(&warnings);
    cairn_analysis_free(&an);
    cairn_adjustment_free(&adj);
    cairn_problem_free(&prob);
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return status;
}
