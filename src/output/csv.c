/* marks.csv and observations.csv exactly as FORMAT.md "Result files":
 * fixed columns, fixed units, fixed decimals. FORMAT.md asks for at least
 * 0.00001 of the length unit and 1e-7 degree; the integration tests compare
 * with the reference solver at 1e-6 of each unit, so we write seven
 * decimals of the length unit and of an arc-second and ten of a degree
 * (1e-10° = 0.00000036"), leaving the rounding well below that. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cairn/output.h"
#include "fmt.h"
#include "jobs.h"

#define LEN_DEC 7
#define DEG_DEC 10
#define SEC_DEC 7
#define RATIO_DEC 8
#define W_DEC 7


/* k cells, each after a comma (fputs: no format to parse per number). */
static void cells(FILE *f, int k, const char *c0, const char *c1, const char *c2,
                  const char *c3, const char *c4, const char *c5, const char *c6,
                  const char *c7, const char *c8, const char *c9)
{
    const char *c[10] = {c0, c1, c2, c3, c4, c5, c6, c7, c8, c9};
    for (int j = 0; j < k; j++) {
        fputc(',', f);
        fputs(c[j], f);
    }
}

static double at(const double *a, size_t i)
{
    return a ? a[i] : NAN;
}


static const char *role_name(cairn_role r)
{
    switch (r) {
    case CAIRN_ROLE_HELD: return "held";
    case CAIRN_ROLE_WEIGHTED: return "weighted";
    default: return "adjusted";
    }
}

int cairn_write_marks_csv(FILE *f, const cairn_adjustment *adj,
                          const cairn_mark_quality *q)
{
    const cairn_net *net = adj->net;
    double lf = cairn_length_factor(net->length_unit);
    const double deg = 180.0 / CAIRN_PI;
    cairn_mark_quality none = {0};
    if (!q)
        q = &none;
    char b[11][64];
    fputs("id,role,e,n,h,sd_e,sd_n,sd_h,major,minor,major_azimuth\n", f);
    for (size_t m = 0; m < net->nmarks; m++) {
        unsigned t = adj->in_adj[m];
        if (!t)
            continue;
        cairn_fmt_csv_field(f, net->marks[m].id);
        double az = at(q->major_azimuth, m) * deg;
        if (isfinite(az)) {
            az = fmod(az, 180.0);
            if (az < 0)
                az += 180.0;
        }
        fputc(',', f);
        fputs(role_name(adj->role[m]), f);
        cells(f, 9,
              cairn_fmt_csv_num(b[0], 64, (t & CAIRN_E) ? adj->e[m] / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[1], 64, (t & CAIRN_N) ? adj->n[m] / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[2], 64, (t & CAIRN_H) ? adj->h[m] / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[3], 64, (t & CAIRN_E) ? at(q->sd_e, m) / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[4], 64, (t & CAIRN_N) ? at(q->sd_n, m) / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[5], 64, (t & CAIRN_H) ? at(q->sd_h, m) / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[6], 64, (t & CAIRN_E) ? at(q->major, m) / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[7], 64, (t & CAIRN_E) ? at(q->minor, m) / lf : NAN, LEN_DEC),
              cairn_fmt_csv_num(b[8], 64, (t & CAIRN_E) ? az : NAN, DEG_DEC), "");
        fputc('\n', f);
    }
    return ferror(f) ? -1 : 0;
}

/* "seq,kind" at the start of an observation row. */
static void seq(FILE *f, size_t i, const char *kind)
{
    char b[32];
    cairn_fmt_fixed(b, sizeof b, (double)i, 0);   /* i < 2^53: exact, = "%zu" */
    fputs(b, f);
    fputc(',', f);
    fputs(kind, f);
}

static void mark_field(FILE *f, const cairn_net *net, int m)
{
    fputc(',', f);
    if (m >= 0 && (size_t)m < net->nmarks)
        cairn_fmt_csv_field(f, net->marks[m].id);
}

int cairn_write_observations_csv(FILE *f, const cairn_adjustment *adj,
                                 const cairn_obs_quality *q)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    double lf = cairn_length_factor(net->length_unit);
    const double deg = 180.0 / CAIRN_PI;
    cairn_obs_quality none = {0};
    if (!q)
        q = &none;
    char b[8][64];
    char src[CAIRN_PATH_MAX + 32];
    fputs("seq,kind,at,from,to,observed,adjusted,residual,sd,redundancy,w,mdb,"
          "status,source\n", f);
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        double obs, adjd, res, sd, mdb;
        int dec;
        if (cairn_obs_kind_angular(o->kind)) {
            /* the booked value in degrees; adjusted = observed + residual */
            obs = o->value * deg;
            res = adj->residual[i] * CAIRN_RHO_SEC;
            adjd = obs + res / 3600.0;
            sd = adj->sigma[i] * CAIRN_RHO_SEC;
            mdb = at(q->mdb, i) * CAIRN_RHO_SEC;
            dec = DEG_DEC;
            seq(f, i + 1, cairn_obs_kind_name(o->kind));
            mark_field(f, net, o->at);
            mark_field(f, net, o->from);
            mark_field(f, net, o->to);
            cells(f, 7, cairn_fmt_csv_num(b[0], 64, obs, dec), cairn_fmt_csv_num(b[1], 64, adjd, dec),
                  cairn_fmt_csv_num(b[2], 64, res, SEC_DEC), cairn_fmt_csv_num(b[3], 64, sd, SEC_DEC),
                  cairn_fmt_csv_num(b[4], 64, at(q->redundancy, i), RATIO_DEC),
                  cairn_fmt_csv_num(b[5], 64, at(q->w, i), W_DEC), cairn_fmt_csv_num(b[6], 64, mdb, SEC_DEC), "", "",
                  "");
        } else {
            obs = o->value / lf;
            res = adj->residual[i] / lf;
            adjd = (o->value + adj->residual[i]) / lf;
            sd = adj->sigma[i] / lf;
            mdb = at(q->mdb, i) / lf;
            seq(f, i + 1, cairn_obs_kind_name(o->kind));
            mark_field(f, net, o->at);
            mark_field(f, net, o->from);
            mark_field(f, net, o->to);
            cells(f, 7, cairn_fmt_csv_num(b[0], 64, obs, LEN_DEC), cairn_fmt_csv_num(b[1], 64, adjd, LEN_DEC),
                  cairn_fmt_csv_num(b[2], 64, res, LEN_DEC), cairn_fmt_csv_num(b[3], 64, sd, LEN_DEC),
                  cairn_fmt_csv_num(b[4], 64, at(q->redundancy, i), RATIO_DEC),
                  cairn_fmt_csv_num(b[5], 64, at(q->w, i), W_DEC), cairn_fmt_csv_num(b[6], 64, mdb, LEN_DEC), "", "",
                  "");
        }
        fputc(',', f);
        fputs(cairn_obs_status_name(q->status ? q->status[i] : CAIRN_OBS_OK), f);
        fputc(',', f);
        if (o->src.file && o->src.line > 0)
            cairn_fmt_file_line(src, sizeof src, o->src.file, o->src.line);
        else if (o->src.file)
            snprintf(src, sizeof src, "%s", o->src.file);
        else
            src[0] = 0;
        cairn_fmt_csv_field(f, src);
        fputc('\n', f);
    }
    return ferror(f) ? -1 : 0;
}

int cairn_write_csv_results(const char *dir, const cairn_adjustment *adj,
                            const cairn_mark_quality *mq,
                            const cairn_obs_quality *oq, cairn_error *err)
{
    cairn_outset *set = cairn_outset_new(dir, err);
    if (!set)
        return -1;
    FILE *fm = cairn_outset_open(set, "marks.csv", err);
    FILE *fo = fm ? cairn_outset_open(set, "observations.csv", err) : NULL;
    int rc = -1;
    if (fm && fo) {
        if (cairn_write_marks_csv(fm, adj, mq) || cairn_write_observations_csv(fo, adj, oq))
            cairn_error_add(err, CAIRN_SEV_ERROR, dir, 0, 0, "cannot write the results");
        else
            rc = cairn_outset_commit(set, err);
    }
    cairn_outset_free(&set);
    return rc;
}

void cairn_analysis_quality(const cairn_analysis *an, cairn_mark_quality *pmq,
                            cairn_obs_quality *poq)
{
    if (pmq) {
        pmq->sd_e = an->sd_e;
        pmq->sd_n = an->sd_n;
        pmq->sd_h = an->sd_h;
        pmq->major = an->major;
        pmq->minor = an->minor;
        pmq->major_azimuth = an->azimuth;
    }
    if (poq) {
        poq->redundancy = an->r;
        poq->w = an->w;
        poq->mdb = an->mdb;
        poq->status = an->status;
    }
}

typedef struct {
    const cairn_adjustment *adj;
    const cairn_analysis *an;
    cairn_mark_quality mq;
    cairn_obs_quality oq;
} results_ctx;

static int job_marks(FILE *f, void *c)
{
    return cairn_write_marks_csv(f, ((results_ctx *)c)->adj, &((results_ctx *)c)->mq);
}

static int job_obs(FILE *f, void *c)
{
    return cairn_write_observations_csv(f, ((results_ctx *)c)->adj, &((results_ctx *)c)->oq);
}

static int job_xml(FILE *f, void *c)
{
    return cairn_write_results_xml(f, ((results_ctx *)c)->adj, ((results_ctx *)c)->an);
}

int cairn_write_results(const char *dir, const cairn_adjustment *adj,
                        const cairn_analysis *an, unsigned formats,
                        cairn_error *err)
{
    results_ctx ctx = {adj, an, {0}, {0}};
    cairn_analysis_quality(an, &ctx.mq, &ctx.oq);
    cairn_outset *set = cairn_outset_new(dir, err);
    if (!set)
        return -1;
    /* results.xml first: the largest, it gets the second thread (jobs.c) */
    static const cairn_write_spec spec[] = {{CAIRN_FORMAT_XML, "results.xml", job_xml},
                                            {CAIRN_FORMAT_CSV, "marks.csv", job_marks},
                                            {CAIRN_FORMAT_CSV, "observations.csv", job_obs}};
    int rc = cairn_output_write_files(set, spec, sizeof spec / sizeof spec[0], formats, &ctx,
                                      dir, err);
    if (rc == 0)
        rc = cairn_outset_commit(set, err);
    cairn_outset_free(&set);
    return rc;
}
