/* misclosures.csv exactly as FORMAT.md "Result files": the fixed header
 * kind,route,misclosure,length,expected_sd,ratio,status,source; lengths in
 * the project length unit, angular misclosures and their expected SD in
 * arc-seconds. Seven decimals of the length unit and of an arc-second, as
 * marks.csv and observations.csv (src/output/csv.c), more than FORMAT.md's
 * 0.00001 of the unit. Written atomically through cairn_outset
 * (src/output/atomic.c): temporary file in DIR, then rename. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cairn/misclosure.h"
#include "cairn/output.h"
#include "fmt.h"

#define LEN_DEC 7
#define SEC_DEC 7
#define RATIO_DEC 4



int cairn_write_misclosures_csv(FILE *f, const cairn_net *net,
                                const cairn_misclosures *m)
{
    const double lf = cairn_length_factor(net->length_unit);
    char b[4][64];
    fputs("kind,route,misclosure,length,expected_sd,ratio,status,source\n", f);
    for (size_t i = 0; m && i < m->n; i++) {
        const cairn_misclosure *it = &m->item[i];
        int ang = cairn_misc_kind_angular(it->kind);
        double k = ang ? CAIRN_RHO_SEC : 1.0 / lf;
        int dec = ang ? SEC_DEC : LEN_DEC;
        fputs(cairn_misc_kind_name(it->kind), f);
        fputc(',', f);
        for (size_t r = 0; r < it->nroute; r++) {
            int mk = m->route[it->route + r];
            if (r)
                fputc(' ', f);
            fputs(mk >= 0 && (size_t)mk < net->nmarks ? net->marks[mk].id : "?", f);
        }
        fprintf(f, ",%s,%s,%s,%s,%s,", cairn_fmt_csv_num(b[0], sizeof b[0], it->misclosure * k, dec),
                cairn_fmt_csv_num(b[1], sizeof b[1], it->length / lf, LEN_DEC),
                cairn_fmt_csv_num(b[2], sizeof b[2], it->expected_sd * k, dec),
                cairn_fmt_csv_num(b[3], sizeof b[3], it->ratio, RATIO_DEC), it->fail ? "fail" : "ok");
        char src[CAIRN_PATH_MAX + 32];
        if (it->src.file && it->src.line > 0)
            snprintf(src, sizeof src, "%s:%d", it->src.file, it->src.line);
        else
            src[0] = 0;
        cairn_fmt_csv_field(f, src);
        fputc('\n', f);
    }
    return ferror(f) ? -1 : 0;
}

int cairn_write_misclosures(const char *dir, const cairn_net *net,
                            const cairn_misclosures *m, cairn_error *err)
{
    cairn_outset *set = cairn_outset_new(dir, err);
    if (!set)
        return -1;
    FILE *f = cairn_outset_open(set, "misclosures.csv", err);
    int rc = f ? 0 : -1;
    if (rc == 0 && cairn_write_misclosures_csv(f, net, m)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, dir, 0, 0, "misclosures.csv: write failed");
        rc = -1;
    }
    if (rc == 0)
        rc = cairn_outset_commit(set, err);
    cairn_outset_free(&set);
    return rc;
}
