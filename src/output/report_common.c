/* Formatting shared by report.txt and report.html: project units, the
 * caution and verdict, the "look here first" selection and the lines of
 * the plan. Both reports say the same things in the same words because
 * the words come from here. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fmt.h"
#include "report_int.h"

const char *const cairn_rpt_caution_text =
    "These results support, and do not replace, the judgement and sign-off of a "
    "licensed surveyor. Local regulations and standards govern. An adjustment "
    "that fails its tests is not fit for use without review.";

double cairn_rpt_lf(const cairn_report *r)
{
    return r->length_factor > 0 && isfinite(r->length_factor) ? r->length_factor : 1.0;
}

const char *cairn_rpt_lu(const cairn_report *r)
{
    return r->length_unit && r->length_unit[0] ? r->length_unit : "m";
}

const char *cairn_rpt_small_unit(const cairn_report *r)
{
    return r->angle_unit == CAIRN_ANGLE_GON ? "mgon" : "\"";
}

double cairn_rpt_small(const cairn_report *r, double rad)
{
    if (r->angle_unit == CAIRN_ANGLE_GON)
        return rad * (200000.0 / CAIRN_PI);
    return rad * CAIRN_RHO_SEC;
}

const char *cairn_rpt_num(double x, int dec, int sign, char *buf, size_t n)
{
    if (!isfinite(x)) {
        if (n)
            buf[0] = 0;
        return buf;
    }
    /* = snprintf(buf, n, sign ? "%+.*f" : "%.*f", dec, x), faster */
    if (sign && !signbit(x) && n > 1) {
        buf[0] = '+';
        cairn_fmt_fixed(buf + 1, n - 1, x, dec);
    } else {
        cairn_fmt_fixed(buf, n, x, dec);
    }
    /* "-0.000" and "+0.000" read as a sign that is not there */
    if (buf[0] == '-' || buf[0] == '+') {
        const char *p = buf + 1;
        while (*p == '0' || *p == '.')
            p++;
        if (!*p) {
            if (sign)
                buf[0] = ' ';
            else
                memmove(buf, buf + 1, strlen(buf));
        }
    }
    return buf;
}

const char *cairn_rpt_len(const cairn_report *r, double m, int dec, char *buf, size_t n)
{
    return cairn_rpt_num(m / cairn_rpt_lf(r), dec, 0, buf, n);
}

const char *cairn_rpt_angle(const cairn_report *r, double rad, int fine, char *buf, size_t n)
{
    if (!isfinite(rad)) {
        if (n)
            buf[0] = 0;
        return buf;
    }
    int dec;
    switch (r->angle_unit) {
    case CAIRN_ANGLE_GON: dec = fine ? 5 : 2; break;
    case CAIRN_ANGLE_DEG: dec = fine ? 6 : 2; break;
    default: dec = fine ? 1 : 0; break;
    }
    cairn_format_angle(rad, r->angle_unit, dec, buf, n);
    return buf;
}

const char *cairn_rpt_obs_value(const cairn_report *r, const cairn_report_obs *o,
                                double v, char *buf, size_t n)
{
    if (o->angular)
        return cairn_rpt_angle(r, v, 1, buf, n);
    return cairn_rpt_len(r, v, 4, buf, n);
}

const char *cairn_rpt_obs_small(const cairn_report *r, const cairn_report_obs *o,
                                double v, int sign, char *buf, size_t n)
{
    char t[48];
    if (!isfinite(v)) {
        if (n)
            buf[0] = 0;
        return buf;
    }
    if (o->angular) {
        cairn_rpt_num(cairn_rpt_small(r, v), 2, sign, t, sizeof t);
        if (r->angle_unit == CAIRN_ANGLE_GON)
            snprintf(buf, n, "%s mgon", t);
        else
            snprintf(buf, n, "%s\"", t);
    } else {
        cairn_rpt_num(v / cairn_rpt_lf(r), 4, sign, t, sizeof t);
        snprintf(buf, n, "%s %s", t, cairn_rpt_lu(r));
    }
    return buf;
}

const char *cairn_rpt_id(const cairn_report *r, int i)
{
    if (i < 0 || (size_t)i >= r->nmarks || !r->marks[i].id)
        return "";
    return r->marks[i].id;
}

const char *cairn_rpt_obs_marks(const cairn_report *r, const cairn_report_obs *o,
                                char *buf, size_t n)
{
    const char *at = cairn_rpt_id(r, o->at), *fr = cairn_rpt_id(r, o->from),
               *to = cairn_rpt_id(r, o->to);
    if (*at && *fr && *to)
        snprintf(buf, n, "at %s: %s \u2192 %s", at, fr, to);
    else if (*at && *to)
        snprintf(buf, n, "%s \u2192 %s", at, to);
    else if (*fr && *to)
        snprintf(buf, n, "%s \u2192 %s", fr, to);
    else
        snprintf(buf, n, "%s%s%s", at, fr, to);
    return buf;
}

const char *cairn_rpt_source(const cairn_report_obs *o, char *buf, size_t n)
{
    if (o->file && o->line > 0)
        snprintf(buf, n, "%s:%d", o->file, o->line);
    else
        snprintf(buf, n, "%s", o->file ? o->file : "");
    return buf;
}

const char *cairn_rpt_status_name(cairn_report_status s)
{
    switch (s) {
    case CAIRN_REPORT_OK: return "ok";
    case CAIRN_REPORT_FLAGGED: return "flagged";
    case CAIRN_REPORT_REJECTED: return "rejected";
    case CAIRN_REPORT_UNCHECKED: return "unchecked";
    }
    return "?";
}

const char *cairn_rpt_role_name(cairn_report_role s)
{
    switch (s) {
    case CAIRN_REPORT_ADJUSTED: return "adjusted";
    case CAIRN_REPORT_HELD: return "held";
    case CAIRN_REPORT_WEIGHTED: return "weighted";
    case CAIRN_REPORT_UNDETERMINED: return "UNDETERMINED";
    }
    return "?";
}

static size_t maxz(size_t a, size_t b)
{
    return a > b ? a : b;
}

void cairn_rpt_count(const cairn_report *r, cairn_rpt_counts *c)
{
    memset(c, 0, sizeof *c);
    for (size_t i = 0; i < r->nobs; i++) {
        switch (r->obs[i].status) {
        case CAIRN_REPORT_FLAGGED: c->flagged++; break;
        case CAIRN_REPORT_REJECTED: c->rejected++; break;
        case CAIRN_REPORT_UNCHECKED: c->unchecked++; break;
        default: break;
        }
    }
    c->flagged = maxz(c->flagged, r->verdict.nflagged);
    c->rejected = maxz(c->rejected, r->verdict.nrejected);
    c->unchecked = maxz(c->unchecked, r->verdict.nunchecked);
    for (size_t m = 0; m < r->nmarks; m++)
        c->undetermined += r->marks[m].role == CAIRN_REPORT_UNDETERMINED;
    for (size_t i = 0; i < r->nfiles; i++)
        c->dotdot += r->files[i].dotdot || cairn_path_has_dotdot(r->files[i].path);
    for (size_t i = 0; i < r->npairs; i++) {
        c->tol_tested += r->pairs[i].pass >= 0;
        c->tol_failed += r->pairs[i].pass == 0;
    }
}

static const char *plural(size_t n, const char *one, const char *many)
{
    return n == 1 ? one : many;
}

/* Each of n independent tests at significance alpha fails with
 * probability alpha when its observation is sound, so n·alpha of them
 * are expected to fail by chance (the definition of the significance
 * level; Baarda 1968, "A Testing Procedure for Use in Geodetic Networks",
 * ch. 2). The w-tests of one network are correlated, which leaves the
 * expectation as it is. */
double cairn_rpt_chance_failures(const cairn_report *r, const cairn_rpt_counts *c,
                                 size_t *ntested)
{
    const cairn_report_verdict *v = &r->verdict;
    size_t nobs = v->nobs ? v->nobs : r->nobs;
    size_t n = nobs > c->unchecked ? nobs - c->unchecked : 0;
    if (ntested)
        *ntested = n;
    if (!isfinite(v->wcrit) || !(r->opt.alpha > 0 && r->opt.alpha < 1) || n == 0)
        return NAN;
    return r->opt.alpha * (double)n;
}

const char *cairn_rpt_shift_text(const cairn_report *r, const double shift[3], char *buf,
                                 size_t n)
{
    static const char *const pos[3] = {"east", "north", "up"};
    static const char *const neg[3] = {"west", "south", "down"};
    size_t k = 0;
    if (n)
        buf[0] = 0;
    for (int c = 0; c < 3; c++) {
        if (!isfinite(shift[c]))
            continue;
        char v[48];
        int w = snprintf(buf + k, n > k ? n - k : 0, "%s%s %s %s", k ? ", " : "",
                         cairn_rpt_len(r, fabs(shift[c]), 3, v, sizeof v), cairn_rpt_lu(r),
                         shift[c] < 0 ? neg[c] : pos[c]);
        if (w < 0 || (size_t)w >= (n > k ? n - k : 0))
            break;
        k += (size_t)w;
    }
    return buf;
}

/* Most held marks the caution names one by one; the rest are counted. */
#define CONTROL_NAMED 5

/* The held marks whose given coordinates the observations contradict:
 * those failing at the final adjustment, and those that failed before
 * snooping and whose observations snooping then rejected (iterative
 * snooping cannot tell a wrong held coordinate from blunders around it:
 * it removes the observations that disagree with the mark). Largest
 * statistic first, as the identification step of the DIA procedure picks
 * the likeliest alternative (Teunissen, Testing Theory, 2000, ch. 6; from
 * memory). */
/* Whether the caution names held mark c by itself: kind 0, failing at the
 * end (unless one blunder explains it as well); kind 1, failing before
 * snooping as the likelier cause of its rejections. */
static int control_named(const cairn_report_control *c, int kind)
{
    return kind == 0 ? c->pass == 0 && !c->single : c->suspect;
}

static int control_warnings(const cairn_report *r, void (*emit)(void *ctx, const char *text),
                            void *ctx)
{
    char t[CAIRN_PATH_MAX + 1024], sh[160];
    int k = 0;
    for (int kind = 0; kind < 2; kind++) {
        size_t nsel = 0, named = 0;
        int named_marks[CONTROL_NAMED];
        for (size_t i = 0; i < r->ncontrols; i++)
            nsel += (size_t)control_named(&r->controls[i], kind);
        double last = INFINITY;
        size_t last_i = (size_t)-1;
        while (named < nsel && named < CONTROL_NAMED) {
            /* the next largest statistic (selection: at most 5 passes) */
            size_t best = (size_t)-1;
            double bs = -1;
            for (size_t i = 0; i < r->ncontrols; i++) {
                const cairn_report_control *c = &r->controls[i];
                double st = kind == 0 ? c->statistic : c->statistic_first;
                if (!control_named(c, kind) || st > last || (st == last && i <= last_i))
                    continue;
                if (st > bs) {
                    bs = st;
                    best = i;
                }
            }
            if (best == (size_t)-1)
                break;
            last = bs;
            last_i = best;
            const cairn_report_control *c = &r->controls[best];
            const char *id = cairn_rpt_id(r, c->mark);
            int other = kind == 0 ? c->alike : c->alike_first, seen = 0;
            for (size_t j = 0; j < named; j++)
                seen |= other >= 0 && named_marks[j] == other;
            named_marks[named++] = c->mark;
            if (seen)
                continue;   /* its twin's warning names it */
            if (kind == 0)
                snprintf(t, sizeof t, "Held mark %s FAILS the test of its given coordinates "
                         "(statistic %.4g > %.4g): its observations put it %s from them. Check "
                         "its given coordinates against their source: a wrong held mark "
                         "distorts every mark around it.", id, c->statistic, c->critical,
                         cairn_rpt_shift_text(r, c->shift, sh, sizeof sh));
            else
                snprintf(t, sizeof t, "Before snooping, held mark %s FAILED the test of its "
                         "given coordinates (statistic %.4g > %.4g; its observations put it "
                         "%s from them), and snooping then rejected %d of its %d observations. "
                         "A wrong given coordinate explains such rejections as well as "
                         "blunders do: check %s's given coordinates against their source "
                         "before accepting the rejections.", id, c->statistic_first,
                         c->critical_first, cairn_rpt_shift_text(r, c->shift_first, sh,
                                                                 sizeof sh),
                         c->nrejected, c->nobs_first, id);
            if (other >= 0) {
                size_t len = strlen(t);
                snprintf(t + len, sizeof t - len, " Held marks %s and %s %s alike: the "
                         "observations cannot tell which of the two is wrong, or whether both "
                         "are.", id,
                         cairn_rpt_id(r, other), kind == 0 ? "fail" : "failed");
            }
            emit(ctx, t);
            k++;
        }
        if (kind == 0) {
            /* failures one blunder explains as well: one line for them all */
            size_t nsingle = 0;
            const cairn_report_control *first = NULL;
            for (size_t i = 0; i < r->ncontrols; i++)
                if (r->controls[i].pass == 0 && r->controls[i].single) {
                    nsingle++;
                    first = first ? first : &r->controls[i];
                }
            if (nsingle) {
                char src[CAIRN_PATH_MAX + 32] = "";
                if (first->wnet_seq >= 1 && first->wnet_seq <= r->nobs)
                    cairn_rpt_source(&r->obs[first->wnet_seq - 1], src, sizeof src);
                snprintf(t, sizeof t, "%zu held %s the test of %s given coordinates (%s%s), "
                         "but a single blunder explains the data as well: observation #%zu"
                         "%s%s%s has |w| %.3g. Find that first: %s may pass without it.",
                         nsingle, nsingle == 1 ? "mark fails" : "marks fail",
                         nsingle == 1 ? "its" : "their", cairn_rpt_id(r, first->mark),
                         nsingle > 1 ? " among them" : "", first->wnet_seq, src[0] ? " (" : "",
                         src, src[0] ? ")" : "", first->wnet, nsingle == 1 ? "it" : "they");
                emit(ctx, t);
                k++;
            }
        }
        if (nsel > named) {
            snprintf(t, sizeof t, "%zu more held %s %s (see Held marks).", nsel - named,
                     nsel - named == 1 ? "mark" : "marks",
                     kind == 0 ? "fail the test of their given coordinates"
                               : "failed that test before snooping, explaining the "
                                 "observations snooping removed better than one blunder");
            emit(ctx, t);
            k++;
        }
    }
    return k;
}

int cairn_rpt_warnings(const cairn_report *r, void (*emit)(void *ctx, const char *text),
                       void *ctx)
{
    const cairn_report_verdict *v = &r->verdict;
    cairn_rpt_counts c;
    char t[512];
    int k = 0;
    cairn_rpt_count(r, &c);
    if (!v->tested) {
        emit(ctx, "NO GLOBAL TEST: the network has no redundancy (0 degrees of freedom), "
                  "so nothing in it was checked. Blunders cannot be detected.");
        k++;
    } else if (!v->pass) {
        snprintf(t, sizeof t, "The GLOBAL TEST FAILED: the statistic %.4g lies outside "
                 "[%.4g, %.4g]. The observations do not agree with their stated "
                 "precisions; these results are not fit for use without review.",
                 v->statistic, v->lower, v->upper);
        emit(ctx, t);
        k++;
    }
    if (!v->converged) {
        emit(ctx, "The iteration did NOT CONVERGE: the coordinates are not a least-squares "
                  "solution.");
        k++;
    }
    if (c.rejected) {
        snprintf(t, sizeof t, "%zu %s REJECTED by data snooping and %s not used in the "
                 "final solution. Find the cause in the field records before accepting "
                 "the result.", c.rejected, plural(c.rejected, "observation was",
                 "observations were"), plural(c.rejected, "is", "are"));
        emit(ctx, t);
        k++;
    }
    if (c.flagged) {
        snprintf(t, sizeof t, "%zu %s the w-test (FLAGGED) and %s still in the solution: "
                 "each may hold a blunder that distorts the coordinates.", c.flagged,
                 plural(c.flagged, "observation fails", "observations fail"),
                 plural(c.flagged, "is", "are"));
        emit(ctx, t);
        k++;
    }
    /* As many failures as chance alone would give (at most 3 standard
     * deviations of a Poisson count above the expectation: common
     * practice, no source) says nothing about blunders: on a large
     * network sound observations are being discarded. */
    size_t ntested = 0;
    double chance = cairn_rpt_chance_failures(r, &c, &ntested);
    size_t failed = c.flagged + c.rejected;
    if (failed > 0 && chance >= 1.0 && (double)failed <= chance + 3.0 * sqrt(chance)) {
        snprintf(t, sizeof t, "About %.0f of the %zu w-tests fail BY CHANCE alone at alpha "
                 "%.4g, and %zu failed here: many of them may be sound observations. Check "
                 "each in the field records before discarding it. An alpha set for the "
                 "network as a whole, such as 0.05 / %zu, keeps the chance of any false "
                 "alarm near 5 %%.", chance, ntested, r->opt.alpha, failed, ntested);
        emit(ctx, t);
        k++;
    }
    k += control_warnings(r, emit, ctx);
    if (c.unchecked) {
        snprintf(t, sizeof t, "%zu %s UNCHECKED (redundancy number below 0.01): a blunder "
                 "in %s would not show in the residuals.", c.unchecked,
                 plural(c.unchecked, "observation is", "observations are"),
                 plural(c.unchecked, "it", "them"));
        emit(ctx, t);
        k++;
    }
    if (c.undetermined) {
        snprintf(t, sizeof t, "%zu %s left UNDETERMINED: %s coordinates below are not "
                 "estimates and must not be used.", c.undetermined,
                 plural(c.undetermined, "mark was", "marks were"),
                 plural(c.undetermined, "its", "their"));
        emit(ctx, t);
        k++;
    }
    if (c.tol_failed) {
        snprintf(t, sizeof t, "%zu of %zu connected %s the required relative precision "
                 "(%s).", c.tol_failed, c.tol_tested,
                 plural(c.tol_tested, "pair fails", "pairs fail"),
                 r->opt.tolerance ? r->opt.tolerance : "tolerance");
        emit(ctx, t);
        k++;
    }
    if (c.dotdot) {
        snprintf(t, sizeof t, "%zu input %s a '..' component: check that the intended "
                 "files were read (see the run).", c.dotdot,
                 plural(c.dotdot, "path has", "paths have"));
        emit(ctx, t);
        k++;
    }
    for (size_t i = 0; i < r->nnotes; i++)
        if (r->notes[i]) {
            emit(ctx, r->notes[i]);
            k++;
        }
    return k;
}

int cairn_rpt_clean(const cairn_report *r)
{
    cairn_rpt_counts c;
    cairn_rpt_count(r, &c);
    return r->verdict.tested && r->verdict.pass && r->verdict.converged && !c.flagged &&
           !c.rejected && !c.tol_failed && !c.undetermined;
}

const char *cairn_rpt_verdict(const cairn_report *r, char *buf, size_t n)
{
    cairn_rpt_counts c;
    const char *tol;
    cairn_rpt_count(r, &c);
    /* verdict.tolerance 0 of a zeroed struct must not read as a failure
     * when no tolerance was set at all */
    if (c.tol_failed || (r->verdict.tolerance == 0 && (r->opt.tolerance || c.tol_tested)))
        tol = "FAIL";
    else if (r->verdict.tolerance == 1 || c.tol_tested)
        tol = "pass";
    else
        tol = "none set";
    snprintf(buf, n, "global test %s | %zu flagged, %zu rejected, %zu unchecked | "
             "tolerance %s", !r->verdict.tested ? "NOT MADE" :
             r->verdict.pass ? "pass" : "FAIL", c.flagged, c.rejected, c.unchecked, tol);
    return buf;
}

size_t cairn_rpt_worst(const cairn_report *r, size_t *idx, size_t max)
{
    size_t k = 0;
    for (size_t i = 0; i < r->nobs && max; i++) {
        double a = fabs(r->obs[i].w);
        if (!isfinite(a))
            continue;
        if (k == max && a <= fabs(r->obs[idx[k - 1]].w))
            continue;
        size_t j = k < max ? k++ : k - 1;   /* insertion into a sorted list */
        while (j > 0 && fabs(r->obs[idx[j - 1]].w) < a) {
            idx[j] = idx[j - 1];
            j--;
        }
        idx[j] = i;
    }
    return k;
}

static int seg_cmp(const void *pa, const void *pb)
{
    const cairn_rpt_segment *a = pa, *b = pb;
    if (a->a != b->a)
        return a->a < b->a ? -1 : 1;
    if (a->b != b->b)
        return a->b < b->b ? -1 : 1;
    return 0;
}

/* severity order for the plan: rejected > flagged > unchecked > ok */
static int severity(cairn_report_status s)
{
    switch (s) {
    case CAIRN_REPORT_REJECTED: return 3;
    case CAIRN_REPORT_FLAGGED: return 2;
    case CAIRN_REPORT_UNCHECKED: return 1;
    default: return 0;
    }
}

static void add_seg(const cairn_report *r, cairn_rpt_segment *s, size_t *pn, int a, int b,
                    cairn_report_status st)
{
    if (a < 0 || b < 0 || a == b || (size_t)a >= r->nmarks || (size_t)b >= r->nmarks)
        return;
    cairn_rpt_segment *x = &s[(*pn)++];
    x->a = a < b ? a : b;
    x->b = a < b ? b : a;
    x->count = 1;
    x->worst = st;
}

int cairn_rpt_segments(const cairn_report *r, cairn_rpt_segment **pseg, size_t *pn)
{
    *pseg = NULL;
    *pn = 0;
    if (r->nobs == 0)
        return 0;
    if (r->nobs > ((size_t)-1) / (2 * sizeof(cairn_rpt_segment)))
        return -1;
    cairn_rpt_segment *s = malloc(2 * r->nobs * sizeof *s);
    if (!s)
        return -1;
    size_t n = 0;
    for (size_t i = 0; i < r->nobs; i++) {
        const cairn_report_obs *o = &r->obs[i];
        if (o->at >= 0 && o->from >= 0 && o->to >= 0) {   /* angle: two legs */
            add_seg(r, s, &n, o->at, o->from, o->status);
            add_seg(r, s, &n, o->at, o->to, o->status);
        } else if (o->at >= 0) {
            add_seg(r, s, &n, o->at, o->to, o->status);
        } else {
            add_seg(r, s, &n, o->from, o->to, o->status);
        }
    }
    qsort(s, n, sizeof *s, seg_cmp);
    size_t m = 0;
    for (size_t i = 0; i < n; i++) {
        if (m > 0 && s[m - 1].a == s[i].a && s[m - 1].b == s[i].b) {
            s[m - 1].count++;
            if (severity(s[i].worst) > severity(s[m - 1].worst))
                s[m - 1].worst = s[i].worst;
        } else {
            s[m++] = s[i];
        }
    }
    *pseg = s;
    *pn = m;
    return 0;
}

const char *cairn_rpt_dimension(const cairn_report *r, char *buf, size_t n)
{
    switch (r->opt.dimension) {
    case 1: snprintf(buf, n, "1 (heights only)"); break;
    case 2: snprintf(buf, n, "2 (plane positions%s)",
                     r->opt.heights ? ", with a separate height part" : ""); break;
    case 3: snprintf(buf, n, "3 (positions and heights together)"); break;
    default: snprintf(buf, n, "not stated"); break;
    }
    return buf;
}

/* A round number 1, 2 or 5 × 10^k not above x (x > 0). */
static double round_down_125(double x)
{
    double p = pow(10.0, floor(log10(x)));
    double m = x / p;
    return (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
}

double cairn_report_magnification(const cairn_report *r)
{
    if (r->ellipse_magnification > 0 && isfinite(r->ellipse_magnification))
        return r->ellipse_magnification;
    double emin = INFINITY, emax = -INFINITY, nmin = INFINITY, nmax = -INFINITY, amax = 0;
    for (size_t i = 0; i < r->nmarks; i++) {
        const cairn_report_mark *m = &r->marks[i];
        if (!isfinite(m->e) || !isfinite(m->n))
            continue;
        emin = fmin(emin, m->e);
        emax = fmax(emax, m->e);
        nmin = fmin(nmin, m->n);
        nmax = fmax(nmax, m->n);
        if (isfinite(m->major) && m->major > amax)
            amax = m->major;
    }
    if (!(amax > 0) || !(emax >= emin))
        return 1.0;
    double extent = fmax(emax - emin, nmax - nmin);
    if (!(extent > 0))
        extent = 1000 * amax;   /* one mark: any factor shows it */
    double k = 0.05 * extent / amax;
    return k >= 1 ? round_down_125(k) : k > 0 ? round_down_125(k) : 1.0;
}

void cairn_rpt_esc(FILE *f, const char *s)
{
    if (!s)
        return;
    const unsigned char *p = (const unsigned char *)s;
    while (*p) {
        unsigned c = *p;
        if (c < 0x80) {
            switch (c) {
            case '&': fputs("&amp;", f); break;
            case '<': fputs("&lt;", f); break;
            case '>': fputs("&gt;", f); break;
            case '"': fputs("&quot;", f); break;
            case '\'': fputs("&#39;", f); break;
            default:
                fputc(c < 0x20 && c != '\t' && c != '\n' ? '?' : (int)c, f);
            }
            p++;
            continue;
        }
        /* a well-formed UTF-8 sequence that is an XML character passes */
        int len = cairn_fmt_utf8_len(p);
        if (len > 0) {
            fwrite(p, 1, (size_t)len, f);
            p += len;
        } else {
            fputc('?', f);
            p++;
        }
    }
}
