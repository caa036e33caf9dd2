/* Private helpers shared by the report writers (report_txt.c,
 * report_html.c, svg_plan.c, svg_charts.c). Not API: the names carry the
 * cairn_rpt_ prefix only because they cross files. */
#ifndef CAIRN_REPORT_INT_H
#define CAIRN_REPORT_INT_H

#include <stddef.h>
#include <stdio.h>

#include "cairn/report.h"

/* The fixed opening caution, in both reports (FORMAT.md report.txt). */
extern const char *const cairn_rpt_caution_text;

/* Metres per project length unit and its name. */
double cairn_rpt_lf(const cairn_report *r);
const char *cairn_rpt_lu(const cairn_report *r);
/* Unit of small angles: "\"" (arc-seconds) or "mgon". */
const char *cairn_rpt_small_unit(const cairn_report *r);
/* Small angle in that unit. */
double cairn_rpt_small(const cairn_report *r, double rad);

/* Coordinate/length x (m) in the length unit with `dec` decimals; "" for
 * NAN; never "-0.0000". */
const char *cairn_rpt_len(const cairn_report *r, double m, int dec, char *buf, size_t n);
/* Plain number, "" for NAN, no "-0". sign: 1 always writes + or -. */
const char *cairn_rpt_num(double x, int dec, int sign, char *buf, size_t n);
/* Angle in the project unit (D-MM-SS.s, decimal gon or degrees). `fine`:
 * observed values (0.1", 0.00001 gon, 0.000001°); else azimuths of
 * ellipses (1", 0.01 gon, 0.01°). "" for NAN. */
const char *cairn_rpt_angle(const cairn_report *r, double rad, int fine, char *buf, size_t n);
/* An observation's observed or adjusted value in project units. */
const char *cairn_rpt_obs_value(const cairn_report *r, const cairn_report_obs *o,
                                double v, char *buf, size_t n);
/* A residual, sd, MDB or blunder of an observation with its unit
 * ("+0.0012 m", "1.40\"", "0.42 mgon"); "" for NAN. */
const char *cairn_rpt_obs_small(const cairn_report *r, const cairn_report_obs *o,
                                double v, int sign, char *buf, size_t n);
/* Mark id of index i, "" for -1 or out of range. */
const char *cairn_rpt_id(const cairn_report *r, int i);
/* "Q1 → Q2", "at N7: Q1 → Q2", "Q3" for the marks of an observation. */
const char *cairn_rpt_obs_marks(const cairn_report *r, const cairn_report_obs *o,
                                char *buf, size_t n);
/* "FILE:LINE", "FILE" or "". */
const char *cairn_rpt_source(const cairn_report_obs *o, char *buf, size_t n);

const char *cairn_rpt_status_name(cairn_report_status s);
const char *cairn_rpt_role_name(cairn_report_role s);

/* Counts that the caution and verdict use: the larger of the verdict's
 * figure and the count over the rows, so that neither can hide a problem. */
typedef struct {
    size_t flagged, rejected, unchecked, undetermined;
    size_t dotdot;          /* input paths with a `..` component */
    size_t tol_failed;      /* pairs failing the tolerance */
    size_t tol_tested;
} cairn_rpt_counts;
void cairn_rpt_count(const cairn_report *r, cairn_rpt_counts *c);

/* How many w-tests fail by chance alone when no observation holds a
 * blunder: alpha times the number of observations tested (those not
 * unchecked by c, rejected ones included), the expected number of type I
 * errors. *ntested gets that number. NAN when no w-test was made. */
double cairn_rpt_chance_failures(const cairn_report *r, const cairn_rpt_counts *c,
                                 size_t *ntested);

/* Where a held mark's observations put it from its given coordinates,
 * in words: "0.495 m west, 0.001 m south", "0.012 m up"; "" when no
 * component is known. */
const char *cairn_rpt_shift_text(const cairn_report *r, const double shift[3], char *buf,
                                 size_t n);

/* The caution's specific warnings, one paragraph each, in a fixed order.
 * Calls emit(ctx, text) for each; returns how many. */
int cairn_rpt_warnings(const cairn_report *r, void (*emit)(void *ctx, const char *text),
                       void *ctx);

/* The one-line verdict ("global test pass ...") into buf. */
const char *cairn_rpt_verdict(const cairn_report *r, char *buf, size_t n);
/* 1 when the verdict is clean (global test passed, nothing flagged or
 * rejected, tolerance not failed, converged). */
int cairn_rpt_clean(const cairn_report *r);

/* Indices of up to max observations with the largest finite |w|, largest
 * first (O(max · nobs)). Returns how many. */
size_t cairn_rpt_worst(const cairn_report *r, size_t *idx, size_t max);

/* A line of the plan: two marks (lo < hi), how many observations join
 * them and the worst status among them. */
typedef struct {
    int a, b;
    int count;
    cairn_report_status worst;
} cairn_rpt_segment;
/* The distinct mark pairs joined by observations (angles give their two
 * legs), O(n log n). *pseg is malloc'ed (free it). Returns 0 or -1. */
int cairn_rpt_segments(const cairn_report *r, cairn_rpt_segment **pseg, size_t *pn);

/* Dimension text, e.g. "3 (positions and heights together)". */
const char *cairn_rpt_dimension(const cairn_report *r, char *buf, size_t n);

/* SVG pieces for report_html.c; each writes one <svg> element. */
int cairn_rpt_svg_plan(const cairn_report *r, FILE *f);
int cairn_rpt_svg_histogram(const cairn_report *r, FILE *f);
int cairn_rpt_svg_convergence(const cairn_report *r, FILE *f);

/* Text escaped for XML/HTML content and attributes (& < > " '), control
 * characters and invalid UTF-8 replaced by '?'. NULL writes nothing. */
void cairn_rpt_esc(FILE *f, const char *s);

#endif
