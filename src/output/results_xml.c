/* results.xml (FORMAT.md "Result files"; schema share/cairn-results.xsd).
 * Written with stdio and explicit escaping: every attribute value passes
 * through esc(), numbers are printed with the C locale's '.', and a value
 * that does not exist (NAN) is left out rather than written empty, so that
 * the schema can type every attribute as a number. Units as the CSV files:
 * lengths in the project unit, angles in decimal degrees, angular
 * residuals, σ, MDB and ∇ in arc-seconds. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cairn/output.h"
#include "fmt.h"

#define LEN_DEC 7    /* as csv.c */
#define DEG_DEC 10
#define SEC_DEC 7

/* XML attribute text (XML 1.0 §2.2, §3.3.3): & < > " escaped; tab,
 * newline and carriage return as character references, so that they read
 * back as themselves and not as spaces; other control characters and bytes
 * that are not UTF-8 (a file name in a legacy encoding) become '?', because
 * XML 1.0 cannot hold them at all and one of them would make the whole file
 * unreadable. Most text (ids, file names) needs nothing: then it goes out
 * in one piece. */
static void esc(FILE *f, const char *s)
{
    if (!s)
        return;
    const unsigned char *p = (const unsigned char *)s;
    while (*p && *p != '&' && *p != '<' && *p != '>' && *p != '"' && *p >= 0x20 &&
           *p < 0x80)
        p++;
    fwrite(s, 1, (size_t)(p - (const unsigned char *)s), f);
    while (*p) {
        unsigned c = *p;
        int len = cairn_fmt_utf8_len(p);
        switch (c) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        case '\t': case '\n': case '\r': fprintf(f, "&#%u;", c); break;
        default:
            if (c < 0x20 || len == 0) {
                putc('?', f);
                len = 1;
            } else {
                fwrite(p, 1, (size_t)len, f);
            }
        }
        p += len;
    }
}

static void attr_s(FILE *f, const char *name, const char *v)
{
    char b[64];
    size_t n = strlen(name);
    if (n + 3 <= sizeof b) {
        b[0] = ' ';
        memcpy(b + 1, name, n);
        memcpy(b + 1 + n, "=\"", 2);
        fwrite(b, 1, n + 3, f);
    } else {
        fprintf(f, " %s=\"", name);
    }
    esc(f, v);
    putc('"', f);
}

/* name="text", the text needing no escape (a number): one write. */
static void attr_raw(FILE *f, const char *name, const char *text)
{
    char b[160];
    size_t n = strlen(name), t = strlen(text);
    if (n + t + 4 > sizeof b) {
        fprintf(f, " %s=\"%s\"", name, text);
        return;
    }
    b[0] = ' ';
    memcpy(b + 1, name, n);
    memcpy(b + 1 + n, "=\"", 2);
    memcpy(b + 3 + n, text, t);
    b[3 + n + t] = '"';
    fwrite(b, 1, n + t + 4, f);
}

/* Fixed decimals, never "-0.000"; omitted when not finite. */
static void attr_f(FILE *f, const char *name, double x, int dec)
{
    char b[64];
    if (!isfinite(x))
        return;
    cairn_fmt_fixed(b, sizeof b, x, dec);   /* = snprintf "%.*f", faster */
    if (b[0] == '-' && strspn(b + 1, "0.") == strlen(b + 1))
        memmove(b, b + 1, strlen(b));
    attr_raw(f, name, b);
}

/* Significant digits (statistics); omitted when not finite. */
static void attr_g(FILE *f, const char *name, double x)
{
    char b[64];
    if (isfinite(x)) {
        cairn_fmt_general(b, sizeof b, x, 12);   /* = snprintf "%.12g" */
        attr_raw(f, name, b);
    }
}

/* Azimuth of an axis in [0, 180) degrees, also after rounding to DEG_DEC
 * decimals (179.99999999999 would print as 180). */
static double axis_deg(double rad)
{
    double d = fmod(rad * 180.0 / CAIRN_PI, 180.0);
    if (d < 0)
        d += 180.0;
    return d >= 180.0 - 0.5e-10 ? 0.0 : d;
}

static void attr_i(FILE *f, const char *name, long v)
{
    char b[32];
    cairn_fmt_fixed(b, sizeof b, (double)v, 0);   /* = "%ld" for |v| < 2^53 */
    attr_raw(f, name, b);
}

static const char *role_name(cairn_role r)
{
    switch (r) {
    case CAIRN_ROLE_HELD: return "held";
    case CAIRN_ROLE_WEIGHTED: return "weighted";
    default: return "adjusted";
    }
}

static const char *comp_name(unsigned c)
{
    return c == CAIRN_E ? "e" : c == CAIRN_N ? "n" : "h";
}

static void source(char *buf, size_t n, const cairn_src *s)
{
    if (s->file && s->line > 0)
        cairn_fmt_file_line(buf, n, s->file, s->line);
    else
        snprintf(buf, n, "%s", s->file ? s->file : "");
}

static void summary(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an)
{
    const cairn_net *net = adj->net;
    double lf = cairn_length_factor(net->length_unit);
    fputs("  <summary", f);
    attr_i(f, "observations", (long)an->nobs);
    attr_i(f, "unknowns", adj->nunknowns);
    attr_i(f, "dof", an->dof);
    attr_i(f, "iterations", adj->iterations);
    attr_g(f, "sigma0-squared", an->global.sigma0_sq);
    attr_s(f, "global-test", !an->global.tested ? "none" : an->global.pass ? "pass" : "fail");
    attr_g(f, "statistic", an->global.statistic);
    attr_g(f, "lower", an->global.lower);
    attr_g(f, "upper", an->global.upper);
    attr_s(f, "datum", adj->datum_free ? "free" : "held");
    attr_i(f, "flagged", an->nflagged);
    attr_i(f, "rejected", (long)an->nrejections);
    attr_i(f, "unchecked", an->nunchecked);
    attr_i(f, "dimension", adj->dimension);
    attr_s(f, "length-unit", cairn_length_unit_name(net->length_unit));
    attr_g(f, "vtpv", an->vtpv);
    attr_g(f, "sum-redundancy", an->sum_r);
    attr_g(f, "global-alpha", an->global_alpha);
    attr_g(f, "alpha", an->alpha);
    attr_g(f, "power", an->power);
    attr_g(f, "confidence", an->confidence);
    attr_g(f, "critical-w", an->wcrit);
    attr_g(f, "lambda0", an->lambda0);
    attr_s(f, "test", isfinite(an->taucrit) ? "tau" : "w");
    attr_g(f, "critical-tau", an->taucrit);
    attr_s(f, "scale", an->scale_aposteriori ? "aposteriori" : "apriori");
    attr_g(f, "variance-factor", an->variance_factor);
    attr_g(f, "ellipse-scale", an->k2);
    attr_g(f, "interval-scale", an->k1);
    attr_g(f, "ellipsoid-scale", an->k3);
    attr_s(f, "snoop", an->snoop == CAIRN_SNOOP_ITERATE ? "iterate"
                       : an->snoop == CAIRN_SNOOP_FLAG ? "flag" : "off");
    attr_i(f, "max-rejections", (long)an->max_rejections);
    attr_s(f, "reject-limit", an->reject_limit_hit ? "reached" : "not-reached");
    attr_s(f, "tolerance", an->tolerance_pass < 0 ? "none" : an->tolerance_pass ? "pass" : "fail");
    if (an->has_tolerance) {
        attr_f(f, "tolerance-constant", an->tol_a / lf, LEN_DEC);
        attr_g(f, "tolerance-ppm", an->tol_ppm);
        attr_i(f, "tolerance-failed", (long)an->tolerance_failed);
    }
    attr_i(f, "pairs", (long)an->npairs);
    attr_i(f, "pairs-unavailable", (long)an->npairs_unavailable);
    /* No timings (an->selinv_seconds, factor_seconds): a result file must
     * be the same in every run of the same project (make demo-check); the
     * bench measures and prints them itself. */
    fputs("/>\n", f);
    if (adj->datum_free)
        for (size_t m = 0; m < net->nmarks; m++)
            for (unsigned c = CAIRN_E; c <= CAIRN_H; c <<= 1)
                if (adj->fixed[m] & c) {
                    fputs("  <datum-fixed", f);
                    attr_s(f, "mark", net->marks[m].id);
                    attr_s(f, "component", comp_name(c));
                    fputs("/>\n", f);
                }
}

/* Observation-unit value: arc-seconds for angles, the length unit else. */
static double ounit(const cairn_obs *o, double x, double lf)
{
    return cairn_obs_kind_angular(o->kind) ? x * CAIRN_RHO_SEC : x / lf;
}

static void rejections(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an)
{
    double lf = cairn_length_factor(adj->net->length_unit);
    char src[CAIRN_PATH_MAX + 32];
    for (size_t k = 0; k < an->nrejections; k++) {
        const cairn_rejection *rj = &an->rejections[k];
        const cairn_obs *o = &adj->prob->obs[rj->obs];
        source(src, sizeof src, &o->src);
        fputs("  <rejection", f);
        attr_i(f, "round", rj->round);
        attr_i(f, "seq", (long)rj->obs + 1);
        attr_s(f, "kind", cairn_obs_kind_name(o->kind));
        attr_s(f, "source", src);
        attr_f(f, "w", rj->w, 7);
        attr_f(f, "tau", rj->tau, 7);
        attr_f(f, "redundancy", rj->r, 8);
        attr_f(f, "nabla", ounit(o, rj->nabla, lf), cairn_obs_kind_angular(o->kind) ? SEC_DEC
                                                                                    : LEN_DEC);
        fputs("/>\n", f);
    }
}

static const char *control_status(int pass)
{
    return pass < 0 ? "untestable" : pass ? "pass" : "fail";
}

/* The attributes of one held-mark test, their names ending in sfx. */
static void control_attrs(FILE *f, const cairn_net *net, const cairn_control_test *t,
                          const char *sfx, double lf)
{
    static const char *const names[] = {"observations", "dimension", "statistic", "critical",
                                        "status", "w-max", "shift-e", "shift-n", "shift-h",
                                        "alike"};
    char nm[10][32];
    for (int k = 0; k < 10; k++)
        snprintf(nm[k], sizeof nm[k], "%s%s", names[k], sfx);
    attr_i(f, nm[0], t->nobs);
    attr_i(f, nm[1], t->q);
    attr_g(f, nm[2], t->statistic);
    attr_g(f, nm[3], t->critical);
    attr_s(f, nm[4], control_status(t->pass));
    attr_f(f, nm[5], t->wmax, 7);
    for (int c = 0; c < 3; c++)
        if (isfinite(t->shift[c]))
            attr_f(f, nm[6 + c], t->shift[c] / lf, LEN_DEC);
    if (t->alike >= 0)
        attr_s(f, nm[9], net->marks[t->alike].id);
}

/* The tests of the held marks' given coordinates (cairn_control_test):
 * before snooping ("-first") and at the final adjustment. */
static void control_tests(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an)
{
    const cairn_net *net = adj->net;
    double lf = cairn_length_factor(net->length_unit);
    for (size_t k = 0; k < an->ncontrol; k++) {
        const cairn_control_test *t = &an->control[k], *t0 = &an->control_first[k];
        char comps[4];
        int nc = 0;
        if (t->held & CAIRN_E)
            comps[nc++] = 'e';
        if (t->held & CAIRN_N)
            comps[nc++] = 'n';
        if (t->held & CAIRN_H)
            comps[nc++] = 'h';
        comps[nc] = 0;
        fputs("  <held-mark-test", f);
        attr_s(f, "mark", net->marks[t->mark].id);
        attr_s(f, "components", comps);
        control_attrs(f, net, t, "", lf);
        control_attrs(f, net, t0, "-first", lf);
        fputs("/>\n", f);
    }
}

static void marks(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an)
{
    const cairn_net *net = adj->net;
    double lf = cairn_length_factor(net->length_unit), lf2 = lf * lf;
    static const char *const cname[6] = {"ee", "en", "eh", "nn", "nh", "hh"};
    for (size_t m = 0; m < net->nmarks; m++) {
        unsigned t = adj->in_adj[m];
        if (!t)
            continue;
        fputs("  <mark", f);
        attr_s(f, "id", net->marks[m].id);
        attr_s(f, "role", role_name(adj->role[m]));
        if (t & CAIRN_E) {
            attr_f(f, "e", adj->e[m] / lf, LEN_DEC);
            attr_f(f, "n", adj->n[m] / lf, LEN_DEC);
        }
        if (t & CAIRN_H)
            attr_f(f, "h", adj->h[m] / lf, LEN_DEC);
        attr_f(f, "sd-e", an->sd_e[m] / lf, LEN_DEC);
        attr_f(f, "sd-n", an->sd_n[m] / lf, LEN_DEC);
        attr_f(f, "sd-h", an->sd_h[m] / lf, LEN_DEC);
        attr_f(f, "major", an->major[m] / lf, LEN_DEC);
        attr_f(f, "minor", an->minor[m] / lf, LEN_DEC);
        attr_f(f, "major-azimuth", isfinite(an->azimuth[m]) ? axis_deg(an->azimuth[m]) : NAN,
               DEG_DEC);
        attr_f(f, "h-interval", an->h_interval[m] / lf, LEN_DEC);
        const double *c = &an->cov[6 * m];
        int any = 0;
        for (int k = 0; k < 6; k++)
            any |= isfinite(c[k]);
        const double *ax = an->axes3 ? &an->axes3[3 * m] : NULL;
        int has3 = ax && isfinite(ax[0]);
        if (!any && !has3) {
            fputs("/>\n", f);
            continue;
        }
        fputs(">\n", f);
        if (any) {
            /* length unit squared */
            fputs("    <covariance", f);
            for (int k = 0; k < 6; k++)
                attr_g(f, cname[k], c[k] / lf2);
            fputs("/>\n", f);
        }
        if (has3)
            for (int k = 0; k < 3; k++) {
                const double *d = &an->dirs3[9 * m + 3 * (size_t)k];
                fputs("    <axis", f);
                attr_i(f, "k", k + 1);
                attr_f(f, "length", ax[k] / lf, LEN_DEC);
                attr_f(f, "e", d[0], 9);
                attr_f(f, "n", d[1], 9);
                attr_f(f, "h", d[2], 9);
                fputs("/>\n", f);
            }
        fputs("  </mark>\n", f);
    }
}

/* <diagnosis kind corrected mark note reading/> (FORMAT.md results.xml):
 * all four FORMAT.md attributes are always written, empty when they do
 * not apply (corrected without a corrected value, mark unless the kind is
 * wrong-mark), so that a reader never has to guess whether one is missing. */
static void diagnosis(FILE *f, const cairn_net *net, const cairn_diagnosis *d)
{
    fputs("    <diagnosis", f);
    attr_s(f, "kind", cairn_diag_kind_name(d->kind));
    attr_s(f, "corrected", isfinite(d->corrected) ? d->corrected_text : "");
    attr_s(f, "mark", d->kind == CAIRN_DIAG_WRONG_MARK && d->mark >= 0 &&
                      (size_t)d->mark < net->nmarks ? net->marks[d->mark].id : "");
    attr_s(f, "note", d->note);
    if (d->reading[0])
        attr_s(f, "reading", d->reading);
    attr_f(f, "fit", d->fit_sigma, 2);
    fputs("/>\n", f);
}

static void observations(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an,
                         const cairn_diagnoses *dg)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    double lf = cairn_length_factor(net->length_unit);
    const double deg = 180.0 / CAIRN_PI;
    char src[CAIRN_PATH_MAX + 32];
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        int ang = cairn_obs_kind_angular(o->kind);
        int dec = ang ? SEC_DEC : LEN_DEC;
        fputs("  <observation", f);
        attr_i(f, "seq", (long)i + 1);
        attr_s(f, "kind", cairn_obs_kind_name(o->kind));
        attr_s(f, "status", cairn_obs_status_name(an->status[i]));
        if (o->at >= 0)
            attr_s(f, "at", net->marks[o->at].id);
        if (o->from >= 0)
            attr_s(f, "from", net->marks[o->from].id);
        if (o->to >= 0)
            attr_s(f, "to", net->marks[o->to].id);
        if (ang) {
            attr_f(f, "observed", o->value * deg, DEG_DEC);
            attr_f(f, "adjusted", o->value * deg + adj->residual[i] * deg, DEG_DEC);
        } else {
            attr_f(f, "observed", o->value / lf, LEN_DEC);
            attr_f(f, "adjusted", (o->value + adj->residual[i]) / lf, LEN_DEC);
        }
        attr_f(f, "residual", ounit(o, adj->residual[i], lf), dec);
        attr_f(f, "sd", ounit(o, adj->sigma[i], lf), dec);
        attr_f(f, "redundancy", an->r[i], 8);
        attr_f(f, "w", an->w[i], 7);
        if (an->tau)
            attr_f(f, "tau", an->tau[i], 7);
        attr_f(f, "mdb", ounit(o, an->mdb[i], lf), dec);
        attr_f(f, "nabla", ounit(o, an->nabla[i], lf), dec);
        attr_f(f, "external", an->external[i] / lf, LEN_DEC);
        source(src, sizeof src, &o->src);
        attr_s(f, "source", src);
        if (dg && i < dg->n && dg->made[i]) {
            fputs(">\n", f);
            diagnosis(f, net, &dg->d[i]);
            fputs("  </observation>\n", f);
        } else {
            fputs("/>\n", f);
        }
    }
}

static void pairs(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an)
{
    const cairn_net *net = adj->net;
    double lf = cairn_length_factor(net->length_unit);
    for (size_t k = 0; k < an->npairs; k++) {
        const cairn_pair *pr = &an->pairs[k];
        fputs("  <pair", f);
        attr_s(f, "from", net->marks[pr->from].id);
        attr_s(f, "to", net->marks[pr->to].id);
        attr_i(f, "seq", pr->obs + 1);
        if (!pr->available)
            attr_s(f, "available", "no");
        attr_f(f, "distance", pr->distance / lf, LEN_DEC);
        attr_f(f, "major", pr->ellipse.a / lf, LEN_DEC);
        attr_f(f, "minor", pr->ellipse.b / lf, LEN_DEC);
        attr_f(f, "azimuth", isfinite(pr->ellipse.azimuth) ? axis_deg(pr->ellipse.azimuth) : NAN,
               DEG_DEC);
        attr_f(f, "sd-dh", pr->sd_dh / lf, LEN_DEC);
        attr_f(f, "dh-interval", pr->dh_interval / lf, LEN_DEC);
        attr_f(f, "allowed", pr->allowed / lf, LEN_DEC);
        if (pr->pass >= 0)
            attr_s(f, "pass", pr->pass ? "yes" : "no");
        fputs("/>\n", f);
    }
}

int cairn_write_results_xml(FILE *f, const cairn_adjustment *adj, const cairn_analysis *an)
{
    return cairn_write_results_xml_diag(f, adj, an, NULL);
}

int cairn_write_results_xml_diag(FILE *f, const cairn_adjustment *adj,
                                 const cairn_analysis *an, const cairn_diagnoses *dg)
{
    fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<cairn-results format=\"1\">\n", f);
    summary(f, adj, an);
    rejections(f, adj, an);
    control_tests(f, adj, an);
    marks(f, adj, an);
    observations(f, adj, an, dg);
    pairs(f, adj, an);
    fputs("</cairn-results>\n", f);
    return ferror(f) ? -1 : 0;
}
