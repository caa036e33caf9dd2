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

#define LEN_DEC 7
#define SEC_DEC 7
#define RATIO_DEC 4

/* Fixed decimals, empty for NAN or infinity, never "-0.0000000". */
static const char *num(char *buf, size_t n, double x, int dec)
{
    if (!isfinite(x)) {
        buf[0] = 0;
        return buf;
    }
    snprintf(buf, n, "%.*f", dec, x);
    if (buf[0] == '-') {
        const char *p = buf + 1;
        while (*p == '0' || *p == '.')
            p++;
        if (!*p)
            memmove(buf, buf + 1, strlen(buf));
    }
    return buf;
}

/* A CSV field (RFC 4180): quoted when it holds a comma, quote or newline.
 * Mark ids cannot, file names can. */
static void field(FILE *f, const char *s)
{
    if (!strpbrk(s, ",\"\r\n")) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', f);
        fputc(*s, f);
    }
    fputc('"', f);
}

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
        fprintf(f, ",%s,%s,%s,%s,%s,", num(b[0], sizeof b[0], it->misclosure * k, dec),
                num(b[1], sizeof b[1], it->length / lf, LEN_DEC),
                num(b[2], sizeof b[2], it->expected_sd * k, dec),
                num(b[3], sizeof b[3], it->ratio, RATIO_DEC), it->fail ? "fail" : "ok");
        char src[CAIRN_PATH_MAX + 32];
        if (it->src.file && it->src.line > 0)
            snprintf(src, sizeof src, "%s:%d", it->src.file, it->src.line);
        else
            src[0] = 0;
        field(f, src);
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
