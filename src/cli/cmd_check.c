/* `cairn check PROJECT [-o DIR]`: load and validate a project, print the
 * diagnostics and a short summary of what was read. No adjustment. */
#include <stdio.h>
#include <string.h>

#include "cairn/cairn.h"
#include "cli.h"

void cairn_cli_check_help(FILE *out)
{
    fprintf(out,
            "usage: cairn check PROJECT [-o DIR]\n\n"
            "Load a project file (.xml) or a single field book (.cfb), check every\n"
            "record and print a summary of the network. Nothing is adjusted.\n\n"
            "  -o DIR   directory for field-book misclosures (misclosures.csv)\n\n"
            "exit status: 0 the input is valid (warnings allowed); 2 usage or input error.\n");
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
    }
    cairn_net_free(&net);
    cairn_error_clear(&err);
    return status;
}
