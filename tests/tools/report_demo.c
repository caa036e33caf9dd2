/* report_demo: write report.txt and report.html of a sample report into
 * DIR, for looking at the reports and for tests/integration/
 * test-html-chromium.sh.
 *
 *   report_demo DIR            the small fixture of tests/unit/report_fixture.h
 *   report_demo DIR --grid N   an N×N grid network (N ≤ 400; above 141 the
 *                              plan is thinned), deterministic numbers
 */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/report.h"
#include "../unit/report_fixture.h"

static int write_one(const cairn_report *r, const char *dir, const char *name, int html)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "w");
    if (!f) {
        fprintf(stderr, "report_demo: %s: %s\n", path, strerror(errno));
        return -1;
    }
    int rc = html ? cairn_report_write_html(r, f) : cairn_report_write_txt(r, f);
    if (fclose(f) != 0)
        rc = -1;
    if (rc)
        fprintf(stderr, "report_demo: cannot write %s\n", path);
    return rc;
}

/* A grid of n×n marks 50 m apart: the corners held, every neighbour pair
 * joined by a direction and a distance; a few flagged. */
static int grid(report_fixture *fx, int n, cairn_report_mark **pm, cairn_report_obs **po,
                char **pids)
{
    size_t nm = (size_t)n * (size_t)n, no = 4 * nm;
    cairn_report_mark *m = calloc(nm, sizeof *m);
    cairn_report_obs *o = calloc(no, sizeof *o);
    char *ids = calloc(nm, 16);
    if (!m || !o || !ids)
        return -1;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++) {
            size_t k = (size_t)i * (size_t)n + (size_t)j;
            int corner = (i == 0 || i == n - 1) && (j == 0 || j == n - 1);
            double d = fmin(fmin(i, n - 1 - i), fmin(j, n - 1 - j)) + 1;
            snprintf(ids + 16 * k, 16, "G%d.%d", i % 1000, j % 1000);
            fx_mark(&m[k], ids + 16 * k, corner ? CAIRN_REPORT_HELD : CAIRN_REPORT_ADJUSTED,
                    1000 + 50.0 * j + 3 * sin(k), 2000 + 50.0 * i + 3 * cos(k), 10,
                    0.002 * sqrt(d), 0.004 * sqrt(d), 0.0025 * sqrt(d), fmod(k * 0.7, CAIRN_PI));
        }
    size_t c = 0;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++) {
            int k = i * n + j;
            int nb[2] = {j + 1 < n ? k + 1 : -1, i + 1 < n ? k + n : -1};
            for (int q = 0; q < 2; q++) {
                if (nb[q] < 0)
                    continue;
                double w = 1.4 * sin(c * 1.3) + 0.6 * cos(c * 0.37);
                cairn_report_status st = fabs(w) > 1.9 && c % 5 == 0 ? CAIRN_REPORT_FLAGGED
                                                                      : CAIRN_REPORT_OK;
                fx_obs(&o[c], c + 1, "direction", 1, k, -1, nb[q], fmod(c * 0.1, 6.28),
                       w * 1.2 * FX_SEC * 0.7, 1.2 * FX_SEC, 0.49, st, "grid.cfb",
                       (int)c + 1);
                c++;
                fx_obs(&o[c], c + 1, "horiz", 0, k, -1, nb[q], 50.0, w * 0.0008, 0.0012,
                       0.45, CAIRN_REPORT_OK, "grid.cfb", (int)c);
                c++;
            }
        }
    fx->r.marks = m;
    fx->r.nmarks = nm;
    fx->r.obs = o;
    fx->r.nobs = c;
    fx->r.npairs = 0;
    fx->r.verdict.nobs = c;
    fx->r.verdict.nrejected = 0;
    fx->r.verdict.nunchecked = 0;
    *pm = m;
    *po = o;
    *pids = ids;
    return 0;
}

int main(int argc, char **argv)
{
    if (argc != 2 && !(argc == 4 && !strcmp(argv[2], "--grid"))) {
        fprintf(stderr, "usage: report_demo DIR [--grid N]\n");
        return 2;
    }
    report_fixture fx;
    fixture_init(&fx);
    cairn_report_mark *m = NULL;
    cairn_report_obs *o = NULL;
    char *ids = NULL;
    if (argc == 4) {
        int n = atoi(argv[3]);
        if (n < 2 || n > 400 || grid(&fx, n, &m, &o, &ids)) {
            fprintf(stderr, "report_demo: bad grid size or out of memory\n");
            return 2;
        }
    }
    int rc = write_one(&fx.r, argv[1], "report.txt", 0) ||
             write_one(&fx.r, argv[1], "report.html", 1);
    free(m);
    free(o);
    free(ids);
    return rc ? 1 : 0;
}
