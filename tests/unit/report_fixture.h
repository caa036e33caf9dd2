/* A small hand-made report for tests/unit/test_report.c and
 * tests/tools/report_demo.c: five marks (held, weighted, new, and one with
 * a 40-character id), a sight set, an angle, a rise, a control
 * pseudo-observation; one flagged observation with a diagnosis, one
 * rejected, one unchecked; a failed tolerance pair; an input path with
 * `..`; markup characters in the title and description. The numbers are
 * plausible, not the output of an adjustment (invented for the test). */
#ifndef CAIRN_REPORT_FIXTURE_H
#define CAIRN_REPORT_FIXTURE_H

#include <math.h>
#include <string.h>

#include "cairn/report.h"

#define FX_SEC (CAIRN_PI / 648000.0)
#define FX_DEG (CAIRN_PI / 180.0)
#define FX_NOBS 12

typedef struct {
    cairn_report r;
    cairn_report_file files[2];
    cairn_report_iter iters[4];
    cairn_report_mark marks[5];
    cairn_report_obs obs[FX_NOBS];
    cairn_report_pair pairs[4];
    const char *notes[1];
} report_fixture;

static void fx_obs(cairn_report_obs *o, size_t seq, const char *kind, int angular, int at,
                   int from, int to, double observed, double residual, double sd, double r,
                   cairn_report_status st, const char *file, int line)
{
    memset(o, 0, sizeof *o);
    o->seq = seq;
    o->kind = kind;
    o->angular = angular;
    o->at = at;
    o->from = from;
    o->to = to;
    o->observed = observed;
    o->residual = residual;
    o->adjusted = observed + residual;
    o->sd = sd;
    o->r = r;
    o->status = st;
    o->file = file;
    o->line = line;
    if (r >= 0.01) {
        o->w = residual / (sd * sqrt(r));
        o->mdb = sd * sqrt(17.075 / r);
        o->nabla = -residual / r;
        o->sd_nabla = sd / sqrt(r);
    } else {
        o->w = o->mdb = o->nabla = o->sd_nabla = NAN;
    }
}

static void fx_mark(cairn_report_mark *m, const char *id, cairn_report_role role, double e,
                    double n, double h, double sd, double a, double b, double az)
{
    memset(m, 0, sizeof *m);
    m->id = id;
    m->role = role;
    m->has = CAIRN_REPORT_E | CAIRN_REPORT_N | CAIRN_REPORT_H;
    m->e = e;
    m->n = n;
    m->h = h;
    if (role == CAIRN_REPORT_HELD) {
        m->held = m->has;
        m->sd_e = m->sd_n = m->sd_h = m->major = m->minor = m->azimuth = NAN;
    } else {
        m->sd_e = sd;
        m->sd_n = sd * 0.8;
        m->sd_h = sd * 1.5;
        m->major = a;
        m->minor = b;
        m->azimuth = az;
    }
}

static void fixture_init(report_fixture *fx)
{
    memset(fx, 0, sizeof *fx);
    cairn_report *r = &fx->r;
    static const char *const day1 = "day1.cfb", *const proj = "fenwick/project.xml";
    fx->files[0] = (cairn_report_file){proj, 2211, "", 0};
    fx->files[1] = (cairn_report_file){"fenwick/../shared/day1.cfb", 4803, "", 1};
    cairn_sha256_hex("project", 7, fx->files[0].sha256);
    cairn_sha256_hex("day1", 4, fx->files[1].sha256);

    r->program_version = CAIRN_VERSION_STRING;
    r->utc = "2024-05-01 12:00:00 UTC";
    r->command_line = "cairn adjust fenwick/project.xml -o fenwick/results --snoop iterate "
                      "--format txt,html,csv,xml --datum held   # a deliberately long line";
    r->files = fx->files;
    r->nfiles = 2;
    r->title = "Fenwick Quay footbridge <control> & stage 2";
    r->description = "Free text \"quoted\" for the report header.\nSecond line: \u00e9t\u00e9.";
    r->length_unit = "m";
    r->length_factor = 1.0;
    r->angle_unit = CAIRN_ANGLE_DMS;
    r->opt = (cairn_report_options){3, 0, 0.13, 1.0, 0.95, 0.001, 0.80, 0.05, 25,
                                    "20 mm + 50 ppm", "held and weighted control as given",
                                    NULL, "iterate"};
    /* χ²(5) two-sided 5 % bounds 0.8312, 12.8325 (any χ² table) */
    r->verdict = (cairn_report_verdict){1, 4.1, 0.8312, 12.8325, 1, 5, 4.1, 4.1 / 5,
                                        FX_NOBS, 6, 2, 1, 1, 1, 0, 3.2905, 1, 1, 0};

    fx->iters[0] = (cairn_report_iter){1, 5123.4, 0.412, "N7.e", 1.0, 0};
    fx->iters[1] = (cairn_report_iter){2, 31.7, 0.0061, "N8.n", 1.0, 0};
    fx->iters[2] = (cairn_report_iter){3, 14.21, 2.1e-5, "N7.h", 0.5, 1e-3};
    fx->iters[3] = (cairn_report_iter){4, 14.2, 3e-8, NULL, 1.0, 0};
    r->iters = fx->iters;
    r->niters = 4;

    fx_mark(&fx->marks[0], "Q1", CAIRN_REPORT_HELD, 5000.0, 10000.0, 12.345, 0, 0, 0, 0);
    fx_mark(&fx->marks[1], "Q2", CAIRN_REPORT_WEIGHTED, 5200.0103, 10150.0021, 13.1102, 0.0031,
            0.0072, 0.0051, 32 * FX_DEG);
    fx_mark(&fx->marks[2], "N7", CAIRN_REPORT_ADJUSTED, 5085.4321, 10091.8765, 12.8774, 0.0024,
            0.0064, 0.0040, 118.5 * FX_DEG);
    fx_mark(&fx->marks[3], "A-very-long-mark-identifier-of-40-chars.", CAIRN_REPORT_ADJUSTED,
            5140.25, 9930.5, 11.2, 0.0029, 0.0081, 0.0047, 170.25 * FX_DEG);
    fx_mark(&fx->marks[4], "N8", CAIRN_REPORT_ADJUSTED, 5260.7, 10020.1, 12.0, 0.0035, 0.0090,
            0.0062, 75 * FX_DEG);
    r->marks = fx->marks;
    r->nmarks = 5;

    cairn_report_obs *o = fx->obs;
    fx_obs(&o[0], 1, "direction", 1, 0, -1, 1, 0.0, 0.8 * FX_SEC, 1.2 * FX_SEC, 0.55,
           CAIRN_REPORT_OK, day1, 8);
    fx_obs(&o[1], 2, "zenith", 1, 0, -1, 1, (90 + 1.0 / 60 + 12.0 / 3600) * FX_DEG,
           -1.1 * FX_SEC, 1.6 * FX_SEC, 0.48, CAIRN_REPORT_OK, day1, 8);
    fx_obs(&o[2], 3, "slope", 0, 0, -1, 1, 250.0014, -0.0008, 0.0013, 0.62, CAIRN_REPORT_OK,
           day1, 8);
    fx_obs(&o[3], 4, "direction", 1, 0, -1, 2, 45.5028 * FX_DEG, 6.9 * FX_SEC, 1.3 * FX_SEC,
           0.41, CAIRN_REPORT_FLAGGED, day1, 9);
    o[3].diagnosis = "transposed digits: 45-30-10 booked, 45-30-01 fits (corrected value "
                     "45.3001)";
    fx_obs(&o[4], 5, "horiz", 0, 0, -1, 2, 120.334, 0.0011, 0.0012, 0.37, CAIRN_REPORT_OK,
           day1, 9);
    fx_obs(&o[5], 6, "direction", 1, 2, -1, 3, 212.25 * FX_DEG, -0.4 * FX_SEC, 1.3 * FX_SEC,
           0.33, CAIRN_REPORT_OK, day1, 12);
    fx_obs(&o[6], 7, "slope", 0, 2, -1, 3, 168.2101, 0.0712, 0.0013, 0.52,
           CAIRN_REPORT_REJECTED, day1, 12);
    o[6].diagnosis = "wrong mark: fits a sight to N8";
    fx_obs(&o[7], 8, "angle", 1, 4, 2, 1, 98.1234 * FX_DEG, 1.9 * FX_SEC, 2.0 * FX_SEC,
           0.44, CAIRN_REPORT_OK, proj, 21);
    fx_obs(&o[8], 9, "azimuth", 1, -1, 0, 1, 53.1300 * FX_DEG, -0.2 * FX_SEC, 3.0 * FX_SEC,
           0.005, CAIRN_REPORT_UNCHECKED, proj, 22);
    fx_obs(&o[9], 10, "rise", 0, -1, 0, 2, 0.5321, 0.0004, 0.0005, 0.71, CAIRN_REPORT_OK,
           proj, 23);
    fx_obs(&o[10], 11, "rise", 0, -1, 2, 4, -0.8774, -0.0009, 0.0006, 0.69, CAIRN_REPORT_OK,
           proj, 24);
    fx_obs(&o[11], 12, "control-e", 0, 1, -1, -1, 5200.010, 0.0003, 0.005, 0.12,
           CAIRN_REPORT_OK, proj, 11);
    r->obs = fx->obs;
    r->nobs = FX_NOBS;

    fx->pairs[0] = (cairn_report_pair){0, 1, 250.0, 0.0072, 0.0051, 32 * FX_DEG, 0.0325, 1};
    fx->pairs[1] = (cairn_report_pair){0, 2, 120.3, 0.0064, 0.0040, 118 * FX_DEG, 0.0260, 1};
    fx->pairs[2] = (cairn_report_pair){2, 3, 168.2, 0.0301, 0.0102, 171 * FX_DEG, 0.0284, 0};
    fx->pairs[3] = (cairn_report_pair){2, 4, 190.4, 0.0090, 0.0062, 75 * FX_DEG, 0.0295, 1};
    r->pairs = fx->pairs;
    r->npairs = 4;
    r->verdict.tolerance = 0;

    fx->notes[0] = "day1.cfb:3: warning: instrument TS1 defined twice with the same values";
    r->notes = fx->notes;
    r->nnotes = 1;
}

#endif
