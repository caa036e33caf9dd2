/* report.txt: the adjustment report as plain text for paper.
 *
 * Every line goes through emit(), which wraps at CAIRN_REPORT_TXT_WIDTH
 * columns (UTF-8 characters) at a blank, or hard when a single word is too
 * long (a path, an id), so that no input can make a line too wide. Tables
 * put their fixed-width numeric columns first and variable-width text
 * (mark ids, sources) last, so a long id wraps instead of shifting the
 * columns. Every table is one pass over its rows: the size is linear. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "report_int.h"

#define W CAIRN_REPORT_TXT_WIDTH
#define WORST_MAX 10
#define ID_COL 12

typedef struct {
    FILE *f;
    const cairn_report *r;
    int section;
} txt;

static size_t cols(const char *s, size_t n)
{
    size_t c = 0;
    for (size_t i = 0; i < n && s[i]; i++)
        c += ((unsigned char)s[i] & 0xC0) != 0x80;
    return c;
}

/* Byte offset of the first `c` columns of s. */
static size_t bytes_for(const char *s, size_t c)
{
    size_t i = 0, k = 0;
    while (s[i]) {
        if (((unsigned char)s[i] & 0xC0) != 0x80) {
            if (k == c)
                break;
            k++;
        }
        i++;
    }
    return i;
}

/* One logical line, wrapped; continuation lines start with `hang` blanks. */
static void emit_hang(txt *t, int hang, const char *s)
{
    int first = 1;
    if (hang > W / 2)
        hang = W / 2;
    /* a newline inside the text (a description) starts a new line */
    const char *nl = strchr(s, '\n');
    if (nl) {
        char *head = malloc((size_t)(nl - s) + 1);
        if (head) {
            memcpy(head, s, (size_t)(nl - s));
            head[nl - s] = 0;
            emit_hang(t, hang, head);
            free(head);
        }
        emit_hang(t, hang, nl + 1);
        return;
    }
    for (;;) {
        size_t room = (size_t)W - (first ? 0 : (size_t)hang);
        size_t len = strlen(s);
        if (!first)
            fprintf(t->f, "%*s", hang, "");
        if (cols(s, len) <= room) {
            /* trailing blanks are noise on paper */
            while (len > 0 && s[len - 1] == ' ')
                len--;
            fwrite(s, 1, len, t->f);
            fputc('\n', t->f);
            return;
        }
        size_t cut = bytes_for(s, room), brk = cut;
        while (brk > 0 && s[brk] != ' ')
            brk--;
        /* break at a blank, but not inside the leading indent */
        size_t lead = strspn(s, " ");
        if (brk <= lead)
            brk = cut;
        size_t end = brk;
        while (end > 0 && s[end - 1] == ' ')
            end--;
        fwrite(s, 1, end, t->f);
        fputc('\n', t->f);
        s += brk;
        while (*s == ' ')
            s++;
        first = 0;
        if (!*s)
            return;
    }
}

static void line(txt *t, int hang, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
static void line(txt *t, int hang, const char *fmt, ...)
{
    char buf[4096];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    if (n < 0)
        return;
    if ((size_t)n < sizeof buf) {
        emit_hang(t, hang, buf);
        return;
    }
    char *big = malloc((size_t)n + 1);
    if (!big)
        return;
    va_start(ap, fmt);
    vsnprintf(big, (size_t)n + 1, fmt, ap);
    va_end(ap);
    emit_hang(t, hang, big);
    free(big);
}

static void rule(txt *t, char c)
{
    char buf[W + 1];
    memset(buf, c, W);
    buf[W] = 0;
    fprintf(t->f, "%s\n", buf);
}

static void heading(txt *t, const char *name)
{
    fputc('\n', t->f);
    line(t, 4, "%d  %s", ++t->section, name);
    rule(t, '-');
}

static const char *or_dash(const char *s)
{
    return s && s[0] ? s : "\u2014";
}

/* ---- caution, title, run ------------------------------------------ */

static void warn_line(void *ctx, const char *text)
{
    line(ctx, 6, "  !! %s", text);
}

static void caution(txt *t)
{
    line(t, 2, "CAUTION  %s", cairn_rpt_caution_text);
    if (cairn_rpt_warnings(t->r, warn_line, t) == 0)
        line(t, 2, "  No test of this adjustment failed; the checks above still apply.");
}

static void title(txt *t)
{
    const cairn_report *r = t->r;
    fputc('\n', t->f);
    rule(t, '=');
    line(t, 2, "cairn adjustment report: %s", r->title && r->title[0] ? r->title
                                                                    : "(untitled project)");
    if (r->description && r->description[0])
        line(t, 2, "%s", r->description);
    rule(t, '=');
}

static void run(txt *t)
{
    const cairn_report *r = t->r;
    const cairn_report_options *o = &r->opt;
    char b[128];
    heading(t, "The run");
    line(t, 18, "  program         cairn %s", or_dash(r->program_version));
    line(t, 18, "  run at          %s", or_dash(r->utc));
    line(t, 18, "  command line    %s", or_dash(r->command_line));
    if (r->nfiles == 0)
        line(t, 18, "  input files     (none recorded)");
    else
        line(t, 18, "  input files     %zu, in reading order:", r->nfiles);
    for (size_t i = 0; i < r->nfiles; i++) {
        const cairn_report_file *f = &r->files[i];
        line(t, 8, "    %s%s", or_dash(f->path), f->dotdot || cairn_path_has_dotdot(f->path)
             ? "  [path contains '..']" : "");
        if (f->size >= 0)
            line(t, 8, "        %lld bytes  SHA-256 %s", f->size,
                 f->sha256[0] ? f->sha256 : "(none)");
        else
            line(t, 8, "        unreadable: no size or SHA-256");
    }
    line(t, 18, "  units           lengths in %s (1 %s = %.10g m); angles in %s; small "
         "angles in %s", cairn_rpt_lu(r), cairn_rpt_lu(r), cairn_rpt_lf(r),
         cairn_angle_unit_name(r->angle_unit),
         r->angle_unit == CAIRN_ANGLE_GON ? "mgon" : "arc-seconds (\")");
    line(t, 18, "  dimension       %s", cairn_rpt_dimension(r, b, sizeof b));
    line(t, 18, "  options         refraction k %.4g, scale %.10g", o->refraction, o->scale);
    line(t, 18, "  levels          confidence %.4g, alpha %.4g, power %.4g, global-alpha %.4g",
         o->confidence, o->alpha, o->power, o->global_alpha);
    if (o->max_iterations > 0)
        line(t, 18, "  iteration limit %d", o->max_iterations);
    line(t, 18, "  tolerance       %s", o->tolerance ? o->tolerance : "none set");
    line(t, 18, "  datum           %s", or_dash(o->datum));
    if (o->fixed && o->fixed[0])
        line(t, 18, "  fixed by datum  %s", o->fixed);
    line(t, 18, "  data snooping   %s", or_dash(o->snoop));
}

static void verdict(txt *t)
{
    char b[256];
    heading(t, "Verdict");
    line(t, 11, "  %s  %s", cairn_rpt_clean(t->r) ? "PASSED" : "REVIEW", cairn_rpt_verdict(t->r,
         b, sizeof b));
}

/* ---- iterations and statistics ----------------------------------- */

static void iterations(txt *t)
{
    const cairn_report *r = t->r;
    char b[3][48];
    heading(t, "Iterations");
    if (r->niters == 0) {
        line(t, 4, "  (no iteration log)");
        return;
    }
    line(t, 4, "  iter                 vTPv   largest correction (%s)      step   damping  "
         "where", cairn_rpt_lu(r));
    /* the correction in %.3g: the last ones are tiny, and 0.000000 would hide them */
    for (size_t i = 0; i < r->niters; i++) {
        const cairn_report_iter *it = &r->iters[i];
        line(t, 70, "  %4d  %19.10g  %23s  %8s  %8s  %s", it->iteration, it->vtpv,
             isfinite(it->max_correction) ? (snprintf(b[0], sizeof b[0], "%.3g",
             it->max_correction / cairn_rpt_lf(r)), b[0]) : "",
             cairn_rpt_num(it->step, 3, 0, b[1], sizeof b[1]),
             it->mu > 0 ? (snprintf(b[2], sizeof b[2], "%.3g", it->mu), b[2]) : "0",
             it->max_where ? it->max_where : "");
    }
    if (!r->verdict.converged)
        line(t, 4, "  The iteration did not converge.");
}

static void statistics(txt *t)
{
    const cairn_report *r = t->r;
    const cairn_report_verdict *v = &r->verdict;
    cairn_rpt_counts c;
    cairn_rpt_count(r, &c);
    heading(t, "Statistics");
    line(t, 32, "  observations                %zu%s", v->nobs ? v->nobs : r->nobs,
         c.rejected ? " (rejected ones included)" : "");
    if (c.rejected)
        line(t, 32, "  used in the final solution  %zu", (v->nobs ? v->nobs : r->nobs) -
             c.rejected);
    if (v->norientations)
        line(t, 32, "  unknowns                    %zu (%zu coordinates, %zu orientations)",
             v->nunknowns, v->nunknowns - v->norientations, v->norientations);
    else
        line(t, 32, "  unknowns                    %zu", v->nunknowns);
    line(t, 32, "  datum                       %s", or_dash(r->opt.datum));
    line(t, 32, "  degrees of freedom          %d", v->dof);
    line(t, 32, "  vTPv                        %.10g", v->vtpv);
    if (isfinite(v->sigma0_sq))
        line(t, 32, "  variance factor (a post.)   %.6g  (sigma0 %.6g; a priori 1)",
             v->sigma0_sq, sqrt(v->sigma0_sq));
    else
        line(t, 32, "  variance factor (a post.)   none (no redundancy)");
    if (v->tested)
        line(t, 32, "  global test                 %s: %.6g %s [%.6g, %.6g] (chi-square, "
             "%d dof, alpha %.4g)", v->pass ? "pass" : "FAIL", v->statistic,
             v->pass ? "within" : "OUTSIDE", v->lower, v->upper, v->dof, r->opt.global_alpha);
    else
        line(t, 32, "  global test                 not made (no redundancy)");
    if (isfinite(v->wcrit))
        line(t, 32, "  w-test critical value       |w| > %.4g (alpha %.4g; MDB at power %.4g)",
             v->wcrit, r->opt.alpha, r->opt.power);
    line(t, 32, "  flagged / rejected          %zu / %zu", c.flagged, c.rejected);
    if (v->snoop_rounds > 0 && v->nrestored > 0)
        line(t, 32, "  snooping rounds             %d (%d rejection%s undone: "
             "no longer failing)", v->snoop_rounds, v->nrestored,
             v->nrestored == 1 ? "" : "s");
    else if (v->snoop_rounds > 0)
        line(t, 32, "  snooping rounds             %d", v->snoop_rounds);
    size_t ntested = 0;
    double chance = cairn_rpt_chance_failures(r, &c, &ntested);
    if (isfinite(chance))
        line(t, 32, "  failures expected by chance %.3g (alpha %.4g x %zu w-tests)", chance,
             r->opt.alpha, ntested);
    line(t, 32, "  unchecked (r < 0.01)        %zu", c.unchecked);
}

/* ---- held marks ---------------------------------------------------- */

static const char *control_result(int pass)
{
    return pass < 0 ? "untestable" : pass ? "pass" : "FAIL";
}

static void control_row(txt *t, int nobs, int q, double st, double crit, int pass,
                        const double sh[3], const char *id, const char *when)
{
    const cairn_report *r = t->r;
    char b[5][64];
    line(t, 80, "  %10s %9s %3d %4d %-10s %9s %9s %9s  %s%s",
         cairn_rpt_num(st, 2, 0, b[0], 64), cairn_rpt_num(crit, 2, 0, b[1], 64), q, nobs,
         control_result(pass), cairn_rpt_len(r, sh[0], 4, b[2], 64),
         cairn_rpt_len(r, sh[1], 4, b[3], 64), cairn_rpt_len(r, sh[2], 4, b[4], 64), id, when);
}

static void held_marks(txt *t)
{
    const cairn_report *r = t->r;
    if (r->ncontrols == 0)
        return;
    heading(t, "Held marks: given coordinates tested against the observations");
    line(t, 4, "  For each held mark, the chi-square test (alpha %.4g) of the hypothesis "
         "that its held components are off by a shift, from the observations that touch "
         "it; shift: where they put the mark, in %s. dim: the directions they can test.",
         r->opt.alpha, cairn_rpt_lu(r));
    line(t, 4, "  %10s %9s %3s %4s %-10s %9s %9s %9s  %s", "statistic", "critical", "dim",
         "obs", "result", "shift e", "shift n", "shift h", "mark");
    int rounds = r->verdict.snoop_rounds > 0;
    for (size_t i = 0; i < r->ncontrols; i++) {
        const cairn_report_control *c = &r->controls[i];
        const char *id = cairn_rpt_id(r, c->mark);
        control_row(t, c->nobs, c->q, c->statistic, c->critical, c->pass, c->shift, id, "");
        if (rounds)
            control_row(t, c->nobs_first, c->q_first, c->statistic_first, c->critical_first,
                        c->pass_first, c->shift_first, "", "  (before snooping)");
    }
}

/* ---- marks --------------------------------------------------------- */

/* The id column: a long id gets a line of its own above the numbers. */
static const char *id_cell(txt *t, const char *id)
{
    if (!id)
        return "";
    if (cols(id, strlen(id)) <= ID_COL)
        return id;
    line(t, 4, "  %s", id);
    return "";
}

static const char *sd_cell(const cairn_report *r, const cairn_report_mark *m, unsigned c,
                           double sd, char *buf, size_t n)
{
    if (!(m->has & c))
        return "";
    if (m->held & c)
        return "held";
    if (m->fixed & c)
        return "fixed";
    return cairn_rpt_len(r, sd, 4, buf, n);
}

static void marks(txt *t)
{
    const cairn_report *r = t->r;
    char b[8][64];
    double conf = r->opt.confidence;
    heading(t, "Adjusted marks");
    if (r->nmarks == 0) {
        line(t, 4, "  (no marks)");
        return;
    }
    line(t, 4, "  Coordinates and standard deviations in %s. \"held\": held fixed; \"fixed\": "
         "fixed by the free datum.", cairn_rpt_lu(r));
    line(t, 4, "  %-12s %-12s %14s %14s %11s %8s %8s %8s", "mark", "role", "e", "n", "h",
         "sd e", "sd n", "sd h");
    for (size_t i = 0; i < r->nmarks; i++) {
        const cairn_report_mark *m = &r->marks[i];
        const char *id = id_cell(t, m->id);
        line(t, 4, "  %-*s %-12s %14s %14s %11s %8s %8s %8s", ID_COL +
             (int)(strlen(id) - cols(id, strlen(id))), id, cairn_rpt_role_name(m->role),
             m->has & CAIRN_REPORT_E ? cairn_rpt_len(r, m->e, 4, b[0], 64) : "",
             m->has & CAIRN_REPORT_N ? cairn_rpt_len(r, m->n, 4, b[1], 64) : "",
             m->has & CAIRN_REPORT_H ? cairn_rpt_len(r, m->h, 4, b[2], 64) : "",
             sd_cell(r, m, CAIRN_REPORT_E, m->sd_e, b[3], 64),
             sd_cell(r, m, CAIRN_REPORT_N, m->sd_n, b[4], 64),
             sd_cell(r, m, CAIRN_REPORT_H, m->sd_h, b[5], 64));
    }
    fputc('\n', t->f);
    line(t, 4, "  Absolute error ellipses at %.4g %% confidence, semi-axes in %s, azimuth of "
         "the major axis:", conf * 100, cairn_rpt_lu(r));
    line(t, 4, "  %-12s %-12s %12s %12s %14s", "mark", "role", "major", "minor", "azimuth");
    size_t shown = 0;
    for (size_t i = 0; i < r->nmarks; i++) {
        const cairn_report_mark *m = &r->marks[i];
        if (!isfinite(m->major) || !isfinite(m->minor))
            continue;
        const char *id = id_cell(t, m->id);
        line(t, 4, "  %-*s %-12s %12s %12s %14s", ID_COL +
             (int)(strlen(id) - cols(id, strlen(id))), id, cairn_rpt_role_name(m->role),
             cairn_rpt_len(r, m->major, 4, b[0], 64), cairn_rpt_len(r, m->minor, 4, b[1], 64),
             cairn_rpt_angle(r, m->azimuth, 0, b[2], 64));
        shown++;
    }
    if (!shown)
        line(t, 4, "  (no mark has a plane error ellipse)");
}

/* ---- observations ------------------------------------------------- */

static void worst(txt *t)
{
    const cairn_report *r = t->r;
    size_t idx[WORST_MAX];
    size_t k = cairn_rpt_worst(r, idx, WORST_MAX);
    char b[4][64], mk[3 * CAIRN_PATH_MAX], src[CAIRN_PATH_MAX + 32];
    heading(t, "Observations: look here first");
    if (k == 0) {
        line(t, 4, "  (no observation has a standardised residual)");
        return;
    }
    line(t, 4, "  The %zu largest standardised residuals |w|, largest first:", k);
    line(t, 4, "  %6s  %-10s %8s %-10s %13s  %s", "seq", "kind", "w", "status", "residual",
         "marks and source");
    for (size_t j = 0; j < k; j++) {
        const cairn_report_obs *o = &r->obs[idx[j]];
        line(t, 56, "  %6zu  %-10s %8s %-10s %13s  %s  %s", o->seq, or_dash(o->kind),
             cairn_rpt_num(o->w, 2, 1, b[0], 64), cairn_rpt_status_name(o->status),
             cairn_rpt_obs_small(r, o, o->residual, 1, b[1], 64),
             cairn_rpt_obs_marks(r, o, mk, sizeof mk), cairn_rpt_source(o, src, sizeof src));
    }
}

static int same_group(const cairn_report_obs *a, const cairn_report_obs *b)
{
    if (a->line != b->line || a->at != b->at || a->from != b->from || a->to != b->to)
        return 0;
    if (!a->file || !b->file)
        return a->file == b->file;
    return a->file == b->file || strcmp(a->file, b->file) == 0;
}

static void all_obs(txt *t)
{
    const cairn_report *r = t->r;
    char b[8][64], mk[3 * CAIRN_PATH_MAX], src[CAIRN_PATH_MAX + 32];
    heading(t, "Observations in load order");
    if (r->nobs == 0) {
        line(t, 4, "  (no observations)");
        return;
    }
    line(t, 4, "  Grouped by the record they were read from (source, then marks). Values in "
         "%s and %s; r redundancy number, w standardised residual, MDB minimal detectable "
         "bias.", cairn_rpt_lu(r), cairn_angle_unit_name(r->angle_unit));
    line(t, 4, "  %6s %-10s %16s %13s %11s %5s %7s %11s  %s", "seq", "kind", "observed",
         "residual", "sd", "r", "w", "MDB", "status");
    for (size_t i = 0; i < r->nobs; i++) {
        const cairn_report_obs *o = &r->obs[i];
        if (i == 0 || !same_group(o, &r->obs[i - 1]))
            line(t, 8, "    %s  %s", or_dash(cairn_rpt_source(o, src, sizeof src)),
                 cairn_rpt_obs_marks(r, o, mk, sizeof mk));
        line(t, 8, "  %6zu %-10s %16s %13s %11s %6s %7s %11s  %s", o->seq, or_dash(o->kind),
             cairn_rpt_obs_value(r, o, o->observed, b[0], 64),
             cairn_rpt_obs_small(r, o, o->residual, 1, b[1], 64),
             cairn_rpt_obs_small(r, o, o->sd, 0, b[2], 64),
             cairn_rpt_num(o->r, 3, 0, b[3], 64), cairn_rpt_num(o->w, 2, 1, b[4], 64),
             cairn_rpt_obs_small(r, o, o->mdb, 0, b[5], 64),
             o->status == CAIRN_REPORT_OK ? "ok" : o->status == CAIRN_REPORT_FLAGGED
             ? "FLAGGED" : o->status == CAIRN_REPORT_REJECTED ? "REJECTED" : "unchecked");
    }
}

static void suspects(txt *t)
{
    const cairn_report *r = t->r;
    char b[4][64], mk[3 * CAIRN_PATH_MAX], src[CAIRN_PATH_MAX + 32];
    size_t n = 0;
    heading(t, "Rejected and flagged observations");
    for (size_t pass = 0; pass < 2; pass++) {
        cairn_report_status want = pass == 0 ? CAIRN_REPORT_REJECTED : CAIRN_REPORT_FLAGGED;
        for (size_t i = 0; i < r->nobs; i++) {
            const cairn_report_obs *o = &r->obs[i];
            if (o->status != want)
                continue;
            if (n++)
                fputc('\n', t->f);
            line(t, 8, "  %s  seq %zu %s  %s  (%s)", want == CAIRN_REPORT_REJECTED ?
                 "REJECTED" : "FLAGGED ", o->seq, or_dash(o->kind),
                 cairn_rpt_obs_marks(r, o, mk, sizeof mk),
                 or_dash(cairn_rpt_source(o, src, sizeof src)));
            line(t, 8, "      observed %s   residual %s   w %s   r %s",
                 or_dash(cairn_rpt_obs_value(r, o, o->observed, b[0], 64)),
                 or_dash(cairn_rpt_obs_small(r, o, o->residual, 1, b[1], 64)),
                 or_dash(cairn_rpt_num(o->w, 2, 1, b[2], 64)),
                 or_dash(cairn_rpt_num(o->r, 3, 0, b[3], 64)));
            line(t, 8, "      estimated blunder %s, its sd %s",
                 or_dash(cairn_rpt_obs_small(r, o, o->nabla, 1, b[0], 64)),
                 or_dash(cairn_rpt_obs_small(r, o, o->sd_nabla, 0, b[1], 64)));
            if (o->diagnosis && o->diagnosis[0])
                line(t, 18, "      likely cause: %s", o->diagnosis);
        }
    }
    if (n == 0)
        line(t, 4, "  None.");
    else {
        fputc('\n', t->f);
        line(t, 4, "  A likely cause is a hypothesis to check against the field records, "
             "not a correction.");
    }
}

static void pairs(txt *t)
{
    const cairn_report *r = t->r;
    char b[6][64];
    heading(t, "Relative precision of connected marks");
    if (r->npairs == 0) {
        line(t, 4, "  (no connected pairs)");
        return;
    }
    line(t, 4, "  Relative error ellipses at %.4g %% confidence, in %s; required: %s.",
         r->opt.confidence * 100, cairn_rpt_lu(r), r->opt.tolerance ? r->opt.tolerance
                                                                     : "no tolerance set");
    line(t, 4, "  %13s %10s %10s %14s %10s %-6s  %s", "distance", "major", "minor",
         "azimuth", "allowed", "result", "marks");
    for (size_t i = 0; i < r->npairs; i++) {
        const cairn_report_pair *p = &r->pairs[i];
        line(t, 76, "  %13s %10s %10s %14s %10s %-6s  %s \u2014 %s",
             cairn_rpt_len(r, p->distance, 3, b[0], 64), cairn_rpt_len(r, p->major, 4, b[1], 64),
             cairn_rpt_len(r, p->minor, 4, b[2], 64), cairn_rpt_angle(r, p->azimuth, 0, b[3], 64),
             cairn_rpt_len(r, p->allowed, 4, b[4], 64),
             p->pass == 1 ? "pass" : p->pass == 0 ? "FAIL" : "n/a",
             cairn_rpt_id(r, p->from), cairn_rpt_id(r, p->to));
    }
}

int cairn_report_write_txt(const cairn_report *r, FILE *out)
{
    txt t = {out, r, 0};
    caution(&t);
    title(&t);
    run(&t);
    verdict(&t);
    iterations(&t);
    statistics(&t);
    held_marks(&t);
    marks(&t);
    worst(&t);
    all_obs(&t);
    suspects(&t);
    pairs(&t);
    fputc('\n', out);
    rule(&t, '=');
    line(&t, 2, "End of report. %s", cairn_rpt_caution_text);
    return ferror(out) ? -1 : 0;
}
