/* `cairn check PROJECT [-o DIR]`: load and validate a project, print the
 * diagnostics, a short summary of what was read and the field-book
 * misclosures (include/cairn/misclosure.h), and write them to
 * DIR/misclosures.csv when -o is given. No adjustment. A misclosure fails
 * above three expected standard deviations (common practice, no source) or
 * above the project's loop-allowance. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cairn/cairn.h"
#include "cairn/misclosure.h"
#include "cairn/start.h"
#include "cli.h"

/* The table is at most this wide: a route that does not fit goes on
 * indented continuation lines. */
#define TABLE_WIDTH 100

void cairn_cli_check_help(FILE *out)
{
    fprintf(out,
            "usage: cairn check PROJECT [-o DIR]\n\n"
            "Load a project file (.xml) or a single field book (.cfb), check every\n"
            "record and print a summary of the network. Nothing is adjusted.\n\n"
            "  -o DIR   directory for field-book misclosures (misclosures.csv)\n\n"
            "Misclosures: level loops and lines between held heights, traverses\n"
            "between held marks, face one against face two, agreement of direction\n"
            "sets and of repeated distances, each against its expected standard\n"
            "deviation from the instruments. A check fails above three expected\n"
            "standard deviations (common practice) or above the loop-allowance.\n\n"
            "Starting coordinates: the marks whose coordinates the adjustment will\n"
            "compute from the observations are listed with the way each was found.\n\n"
            "exit status: 0 the input is valid and every check passes (warnings\n"
            "allowed); 1 a misclosure check failed; 2 usage or input error.\n"
            "Marks no observation reaches are named in a warning.\n");
}

/* Whether the project file is XML, by the loader's rule (first non-blank
 * character after a byte order mark is '<'), so that the summary counts
 * only field books. */
static int is_xml(const char *path)
{
    unsigned char buf[4096];
    FILE *fp = fopen(path, "rb");
    if (!fp)
        return 0;
    size_t n = fread(buf, 1, sizeof buf, fp), i = 0;
    fclose(fp);
    if (n >= 3 && buf[0] == 0xef && buf[1] == 0xbb && buf[2] == 0xbf)
        i = 3;
    while (i < n && (buf[i] == ' ' || buf[i] == '\t' || buf[i] == '\r' || buf[i] == '\n'))
        i++;
    return i < n && buf[i] == '<';
}

static void summary(const cairn_net *net, int project_is_xml)
{
    size_t held_en = 0, held_h = 0, weighted = 0, unknown = 0, start = 0;
    for (size_t i = 0; i < net->nmarks; i++) {
        const cairn_mark *m = &net->marks[i];
        if (m->hold & CAIRN_E) held_en++;
        if (m->hold & CAIRN_H) held_h++;
        if (m->sd_en > 0 || m->sd_h > 0) weighted++;
        if (!m->given) unknown++;
        else if (!m->hold && !(m->sd_en > 0) && !(m->sd_h > 0)) start++;
    }
    size_t count[CAIRN_OBS_NKINDS] = {0};
    for (size_t i = 0; i < net->nobs; i++)
        if ((unsigned)net->obs[i].kind < CAIRN_OBS_NKINDS)
            count[net->obs[i].kind]++;
    size_t nts = 0, nlv = 0;
    for (size_t i = 0; i < net->ninsts; i++) {
        if (net->insts[i].kind == CAIRN_INST_LEVEL) nlv++;
        else nts++;
    }
    size_t books = net->nfiles - (project_is_xml ? 1 : 0);
    printf("title: %s\n", net->title ? net->title : "(none)");
    printf("units: %s %s\n", cairn_length_unit_name(net->length_unit),
           cairn_angle_unit_name(net->angle_unit));
    printf("marks: %zu (held position %zu, held height %zu, weighted %zu, "
           "to be determined %zu, start values only %zu)\n",
           net->nmarks, held_en, held_h, weighted, unknown, start);
    printf("setups: %zu\n", net->nsetups);
    printf("observations: %zu", net->nobs);
    const char *sep = " (";
    for (int k = 0; k < CAIRN_OBS_NKINDS; k++)
        if (count[k]) {
            printf("%s%s %zu", sep, cairn_obs_kind_name((cairn_obs_kind)k), count[k]);
            sep = ", ";
        }
    printf("%s\n", net->nobs ? ")" : "");
    printf("instruments: %zu (total stations %zu, levels %zu)\n", net->ninsts, nts, nlv);
    printf("field books read: %zu\n", books);
}

/* The file part of a path: the table shows short sources (the CSV keeps
 * the path as given). */
static const char *base_name(const char *path)
{
    const char *b = strrchr(path, '/');
    return b ? b + 1 : path;
}

/* A length (m) or angle (rad) in the display unit of kind k, signed. */
static void value_str(char *buf, size_t n, const cairn_net *net, cairn_misc_kind k,
                      double x, int sign)
{
    if (!isfinite(x)) {
        snprintf(buf, n, "-");
        return;
    }
    if (cairn_misc_kind_angular(k))
        snprintf(buf, n, sign ? "%+.1f\"" : "%.1f\"", x * CAIRN_RHO_SEC);
    else
        snprintf(buf, n, sign ? "%+.4f %s" : "%.4f %s",
                 x / cairn_length_factor(net->length_unit),
                 cairn_length_unit_name(net->length_unit));
}

static void print_row(const cairn_net *net, const cairn_misclosures *m,
                      const cairn_misclosure *it)
{
    char kind[24], mis[32], len[32], sd[32], ratio[16], src[80], line[TABLE_WIDTH + 96];
    snprintf(kind, sizeof kind, "%s%s", cairn_misc_kind_name(it->kind),
             it->reading == CAIRN_MISC_HZ ? " hz" : it->reading == CAIRN_MISC_ZEN ? " zen" : "");
    value_str(mis, sizeof mis, net, it->kind, it->misclosure, 1);
    if (isfinite(it->length))
        snprintf(len, sizeof len, "%.1f %s", it->length / cairn_length_factor(net->length_unit),
                 cairn_length_unit_name(net->length_unit));
    else
        snprintf(len, sizeof len, "-");
    value_str(sd, sizeof sd, net, it->kind, it->expected_sd, 0);
    if (isfinite(it->ratio))
        snprintf(ratio, sizeof ratio, "%.2f", it->ratio);
    else
        snprintf(ratio, sizeof ratio, "-");
    if (it->src.file)
        snprintf(src, sizeof src, "%s:%d", base_name(it->src.file), it->src.line);
    else
        snprintf(src, sizeof src, "-");
    int w = snprintf(line, sizeof line, "%-16s %11s %10s %9s %6s %-4s  %s", kind, mis, len,
                     sd, ratio, it->fail ? "FAIL" : "ok", src);
    size_t used = w > 0 ? (size_t)w : 0;
    fputs(line, stdout);
    /* The route follows on the same line when it fits, else on indented
     * continuation lines, wrapped at TABLE_WIDTH. */
    size_t rlen = 0;
    for (size_t r = 0; r < it->nroute; r++) {
        int mk = m->route[it->route + r];
        rlen += strlen(mk >= 0 ? net->marks[mk].id : "?") + 1;
    }
    const size_t indent = 4;
    int newline = used + 1 + rlen > TABLE_WIDTH;
    if (newline) {
        printf("\n%*s", (int)indent, "");
        used = indent;
    }
    for (size_t r = 0; r < it->nroute; r++) {
        int mk = m->route[it->route + r];
        const char *id = mk >= 0 ? net->marks[mk].id : "?";
        if (used + 1 + strlen(id) > TABLE_WIDTH && used > indent) {
            printf("\n%*s", (int)indent, "");
            used = indent;
        } else if (!(newline && used == indent)) {
            putchar(' ');
            used++;
        }
        fputs(id, stdout);
        used += strlen(id);
    }
    putchar('\n');
}

/* The misclosure table, then the traverse closures and the instrument
 * errors the face pairs show. */
static void print_misclosures(const cairn_net *net, const cairn_misclosures *m)
{
    if (!m->n) {
        printf("no misclosure checks apply\n");
        return;
    }
    printf("\nmisclosures: %zu check%s, %zu failed (limit: 3 expected SD", m->n,
           m->n == 1 ? "" : "s", m->nfail);
    if (net->opt.has_loop_allowance)
        printf("; levelling allowance %.1f mm per sqrt(km)", net->opt.loop_allowance * 1000.0);
    printf(")\n");
    printf("%-16s %11s %10s %9s %6s %-4s  %s\n", "check", "misclosure", "length",
           "expected", "ratio", "", "source, route");
    for (size_t i = 0; i < m->n; i++)
        print_row(net, m, &m->item[i]);
    for (size_t i = 0; i < m->n; i++) {
        const cairn_misclosure *it = &m->item[i];
        if (it->kind != CAIRN_MISC_TRAVERSE_LINEAR || it->nroute < 2)
            continue;
        char de[32], dn[32];
        value_str(de, sizeof de, net, it->kind, it->de, 1);
        value_str(dn, sizeof dn, net, it->kind, it->dn, 1);
        printf("traverse %s to %s: de %s, dn %s, ", net->marks[m->route[it->route]].id,
               net->marks[m->route[it->route + it->nroute - 1]].id, de, dn);
        if (isfinite(it->precision))
            printf("precision 1 : %.0f\n", it->precision);
        else
            printf("closes exactly\n");
    }
    for (size_t i = 0; i < m->nface; i++) {
        const cairn_face_error *fe = &m->face[i];
        const cairn_setup *s = &net->setups[fe->setup];
        printf("setup at %s (%s:%d):", net->marks[s->at].id,
               s->src.file ? base_name(s->src.file) : "-", s->src.line);
        if (fe->npairs_hz)
            printf(" collimation %+.1f\" (%d pair%s)", fe->collimation * CAIRN_RHO_SEC,
                   fe->npairs_hz, fe->npairs_hz == 1 ? "" : "s");
        if (fe->npairs_zen)
            printf("%s vertical index %+.1f\" (%d pair%s)", fe->npairs_hz ? "," : "",
                   fe->index_error * CAIRN_RHO_SEC, fe->npairs_zen,
                   fe->npairs_zen == 1 ? "" : "s");
        putchar('\n');
    }
}

/* Starting values the adjustment will compute, and from what (issue #4):
 * one line per computed step; marks that cannot be reached are named in a
 * warning. Returns 0. */
static int starts(cairn_net *net, cairn_error *err)
{
    cairn_start_report *rep = NULL;
    int rc = cairn_start_compute(net, 0, &rep, err);
    /* check only validates: marks that no observation reaches are a
     * warning here; `cairn adjust` stops on them with exit 3. */
    for (int i = 0; i < err->ndiag; i++)
        if (err->diag[i].severity == CAIRN_SEV_ERROR) {
            err->diag[i].severity = CAIRN_SEV_WARNING;
            err->nerrors--;
            err->nwarnings++;
            size_t len = strlen(err->diag[i].message);
            snprintf(err->diag[i].message + len, sizeof err->diag[i].message - len,
                     "; cairn adjust cannot run until they are reached");
        }
    cairn_cli_print_diags(err);
    size_t n = cairn_start_report_count(rep);
    if (n) {
        printf("\ncomputed starting values (%zu):\n", n);
        for (size_t i = 0; i < n; i++) {
            const cairn_start_step *st = cairn_start_report_step(rep, i);
            const cairn_obs *o = st->obs1 >= 0 ? &net->obs[st->obs1] : NULL;
            char ways[32] = "";
            if (st->ncand > 1)
                snprintf(ways, sizeof ways, ", median of %d ways", st->ncand);
            printf("  %-16s %-4s %s%s", net->marks[st->mark].id,
                   st->comp & CAIRN_H ? (st->comp & CAIRN_E ? "enh" : "h") : "en",
                   st->method, ways);
            if (o && o->src.file)
                printf(" (%s:%d)", base_name(o->src.file), o->src.line);
            printf("\n");
        }
    } else if (!rc) {
        printf("\ncomputed starting values: none needed\n");
    }
    cairn_start_report_free(&rep);
    return 0;
}

/* Misclosures of a valid net: print them, write DIR/misclosures.csv when
 * asked. Returns the exit status. */
static int misclosures(const cairn_net *net, const char *outdir, cairn_error *err)
{
    cairn_misclosures *m = NULL;
    if (cairn_misclosures_compute(net, &m, err)) {
        cairn_cli_print_diags(err);
        return CAIRN_EXIT_INPUT;
    }
    print_misclosures(net, m);
    int status = m->nfail ? CAIRN_EXIT_FLAGGED : CAIRN_EXIT_OK;
    if (outdir && cairn_write_misclosures(outdir, net, m, err)) {
        cairn_cli_print_diags(err);
        status = CAIRN_EXIT_INPUT;
    }
    cairn_misclosures_free(&m);
    return status;
}

int cairn_cli_check(int argc, char **argv)
{
    const char *project = NULL, *outdir = NULL;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "--help") || !strcmp(a, "-h")) {
            cairn_cli_check_help(stdout);
            return CAIRN_EXIT_OK;
        } else if (!strcmp(a, "-o")) {
            if (i + 1 >= argc || !argv[i + 1][0]) {
                fprintf(stderr, "cairn check: -o needs a directory\n");
                return CAIRN_EXIT_INPUT;
            }
            if (outdir) {
                fprintf(stderr, "cairn check: -o given twice\n");
                return CAIRN_EXIT_INPUT;
            }
            outdir = argv[++i];
        } else if (a[0] == '-' && a[1]) {
            fprintf(stderr, "cairn check: unknown option '%s' (try cairn help check)\n", a);
            return CAIRN_EXIT_INPUT;
        } else if (project) {
            fprintf(stderr, "cairn check: one project only ('%s' and '%s')\n", project, a);
            return CAIRN_EXIT_INPUT;
        } else {
            project = a;
        }
    }
    if (!project) {
        fprintf(stderr, "usage: cairn check PROJECT [-o DIR]\n");
        return CAIRN_EXIT_INPUT;
    }
    cairn_error err;
    if (cairn_error_init(&err)) {
        fprintf(stderr, "cairn: out of memory\n");
        return CAIRN_EXIT_INPUT;
    }
    cairn_net *net = NULL;
    int rc = cairn_load_project(project, &net, &err);
    cairn_cli_print_diags(&err);
    int status = CAIRN_EXIT_OK;
    if (rc || err.nerrors) {
        fprintf(stderr, "cairn: %s: %d error%s; nothing checked further\n", project,
                err.nerrors, err.nerrors == 1 ? "" : "s");
        status = CAIRN_EXIT_INPUT;
    } else {
        summary(net, is_xml(project));
        cairn_error_reset(&err);
        int st = starts(net, &err);
        cairn_error_reset(&err);
        status = misclosures(net, outdir, &err);
        if (st)
            status = st;
    }
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return status;
}
