/* The network plan of report.html as inline SVG: observed lines, error
 * ellipses magnified by a stated factor, mark symbols (held, weighted,
 * new, undetermined), a scale bar, a north arrow and a legend, with a
 * <title> on every element for hover read-outs.
 *
 * Screen y grows downwards, so y = top + (n_max − n)·s. An SVG ellipse
 * with rx along +x (east, azimuth 90°) turned by rotate(φ) (clockwise on
 * screen) points at azimuth 90° + φ: the major axis at azimuth θ needs
 * φ = θ − 90°. Lines are the distinct mark pairs joined by observations,
 * drawn once with the worst status among them (cairn_rpt_segments). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "report_int.h"

#define VW 1000.0    /* viewBox width */
#define PAD 40.0     /* margin around the marks */
#define LEG 96.0     /* legend band at the bottom */
#define LABEL_MAX 600

typedef struct {
    double emin, nmax, s, top, left;
} frame;

static double px(const frame *fr, double e)
{
    return fr->left + (e - fr->emin) * fr->s;
}

static double py(const frame *fr, double n)
{
    return fr->top + (fr->nmax - n) * fr->s;
}

static int placed(const cairn_report_mark *m)
{
    return isfinite(m->e) && isfinite(m->n) && (m->has & (CAIRN_REPORT_E | CAIRN_REPORT_N));
}

static double round_125(double x)
{
    double p = pow(10.0, floor(log10(x)));
    double m = x / p;
    return (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
}

/* Our mark symbols, centred on (x, y). Held: a small cairn of three
 * stacked stones; weighted: an open lozenge; new: a ring with a dot;
 * undetermined: a slanted cross. */
static void symbol(FILE *f, cairn_report_role role, double x, double y, int small)
{
    if (small) {
        fprintf(f, "<circle class=\"cn-dot\" cx=\"%.1f\" cy=\"%.1f\" r=\"1.6\"/>", x, y);
        return;
    }
    switch (role) {
    case CAIRN_REPORT_HELD:
        fprintf(f, "<path class=\"cn-sym-held\" d=\"M%.1f %.1fh12l-2 -4h-8z"
                "M%.1f %.1fh8l-1.5 -3.5h-5z M%.1f %.1fh4l-2 -3.5z\"/>",
                x - 6, y + 4, x - 4, y - 0.5, x - 2, y - 4.5);
        break;
    case CAIRN_REPORT_WEIGHTED:
        fprintf(f, "<path class=\"cn-sym-wt\" d=\"M%.1f %.1fl5 6l-5 6l-5 -6z\"/>", x, y - 6);
        break;
    case CAIRN_REPORT_UNDETERMINED:
        fprintf(f, "<path class=\"cn-sym-und\" d=\"M%.1f %.1fl9 9M%.1f %.1fl-9 9\"/>",
                x - 4.5, y - 4.5, x + 4.5, y - 4.5);
        break;
    default:
        fprintf(f, "<circle class=\"cn-sym-new\" cx=\"%.1f\" cy=\"%.1f\" r=\"4.5\"/>"
                "<circle class=\"cn-sym-dot\" cx=\"%.1f\" cy=\"%.1f\" r=\"1.2\"/>",
                x, y, x, y);
    }
}

static const char *seg_class(cairn_report_status s)
{
    switch (s) {
    case CAIRN_REPORT_FLAGGED: return "cn-ln cn-ln-flag";
    case CAIRN_REPORT_REJECTED: return "cn-ln cn-ln-rej";
    case CAIRN_REPORT_UNCHECKED: return "cn-ln cn-ln-unch";
    default: return "cn-ln";
    }
}

static void lines(const cairn_report *r, const frame *fr, const cairn_rpt_segment *sg,
                  size_t nseg, FILE *f)
{
    /* ordinary lines first, so that flagged and rejected ones lie on top */
    for (int pass = 0; pass < 2; pass++)
        for (size_t i = 0; i < nseg; i++) {
            const cairn_rpt_segment *s = &sg[i];
            int bad = s->worst == CAIRN_REPORT_FLAGGED || s->worst == CAIRN_REPORT_REJECTED;
            const cairn_report_mark *a = &r->marks[s->a], *b = &r->marks[s->b];
            if (bad != pass || !placed(a) || !placed(b))
                continue;
            fprintf(f, "<line class=\"%s\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\">"
                    "<title>", seg_class(s->worst), px(fr, a->e), py(fr, a->n), px(fr, b->e),
                    py(fr, b->n));
            cairn_rpt_esc(f, a->id);
            fputs(" \u2014 ", f);
            cairn_rpt_esc(f, b->id);
            fprintf(f, ": %d observation%s, worst status %s</title></line>\n", s->count,
                    s->count == 1 ? "" : "s", cairn_rpt_status_name(s->worst));
        }
}

static void mark_title(const cairn_report *r, const cairn_report_mark *m, FILE *f)
{
    char b[6][64];
    fputs("<title>", f);
    cairn_rpt_esc(f, m->id);
    fprintf(f, " (%s): e %s, n %s", cairn_rpt_role_name(m->role),
            cairn_rpt_len(r, m->e, 4, b[0], 64), cairn_rpt_len(r, m->n, 4, b[1], 64));
    if (m->has & CAIRN_REPORT_H)
        fprintf(f, ", h %s", cairn_rpt_len(r, m->h, 4, b[2], 64));
    fprintf(f, " %s", cairn_rpt_lu(r));
    if (isfinite(m->sd_e) && isfinite(m->sd_n))
        fprintf(f, "; sd e %s, sd n %s", cairn_rpt_len(r, m->sd_e, 4, b[3], 64),
                cairn_rpt_len(r, m->sd_n, 4, b[4], 64));
    if (isfinite(m->major) && isfinite(m->minor))
        fprintf(f, "; ellipse %s \u00d7 %s, azimuth %s", cairn_rpt_len(r, m->major, 4, b[0], 64),
                cairn_rpt_len(r, m->minor, 4, b[1], 64),
                cairn_rpt_angle(r, m->azimuth, 0, b[2], 64));
    fputs("</title>", f);
}

static void scale_bar(const cairn_report *r, const frame *fr, double extent_m, double y,
                      FILE *f)
{
    double lf = cairn_rpt_lf(r);
    double len_u = round_125(0.25 * extent_m / lf);   /* in the length unit */
    double w = len_u * lf * fr->s, x = PAD;
    char b[32];
    fputs("<g class=\"cn-scale\">", f);
    for (int i = 0; i < 4; i++)
        fprintf(f, "<rect class=\"%s\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"6\"/>",
                i % 2 ? "cn-sb-light" : "cn-sb-dark", x + i * w / 4, y, w / 4);
    snprintf(b, sizeof b, "%.10g", len_u);
    fprintf(f, "<text x=\"%.1f\" y=\"%.1f\">0</text><text x=\"%.1f\" y=\"%.1f\" "
            "text-anchor=\"end\">%s %s</text></g>\n", x, y - 4, x + w, y - 4, b,
            cairn_rpt_lu(r));
}

/* Our north arrow: a slim needle, its left half filled. */
static void north(double x, double y, FILE *f)
{
    fprintf(f, "<g class=\"cn-north\"><title>grid north</title>"
            "<path class=\"cn-n-fill\" d=\"M%.1f %.1fl-7 30l7 -7z\"/>"
            "<path class=\"cn-n-open\" d=\"M%.1f %.1fl7 30l-7 -7z\"/>"
            "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">N</text></g>\n",
            x, y + 14, x, y + 14, x, y + 10);
}

static void legend(const cairn_report *r, double y, int thin, double mag, FILE *f)
{
    fprintf(f, "<g class=\"cn-legend\" transform=\"translate(%.1f %.1f)\">", PAD, y);
    fputs("<rect class=\"cn-leg-box\" x=\"-8\" y=\"-14\" width=\"936\" height=\"58\"/>", f);
    double x = 0;
    static const struct { cairn_report_role role; const char *text; } syms[] = {
        {CAIRN_REPORT_HELD, "held"}, {CAIRN_REPORT_WEIGHTED, "weighted"},
        {CAIRN_REPORT_ADJUSTED, "new (adjusted)"}, {CAIRN_REPORT_UNDETERMINED, "undetermined"}};
    for (size_t i = 0; i < sizeof syms / sizeof syms[0]; i++) {
        symbol(f, syms[i].role, x + 8, 0, 0);
        fprintf(f, "<text x=\"%.1f\" y=\"4\">%s</text>", x + 20, syms[i].text);
        x += 150;
    }
    if (!thin) {
        static const struct { const char *cls, *text; } ln[] = {
            {"cn-ln", "observed"}, {"cn-ln cn-ln-unch", "unchecked only"},
            {"cn-ln cn-ln-flag", "flagged"}, {"cn-ln cn-ln-rej", "rejected"}};
        x = 0;
        for (size_t i = 0; i < sizeof ln / sizeof ln[0]; i++) {
            fprintf(f, "<line class=\"%s\" x1=\"%.1f\" y1=\"26\" x2=\"%.1f\" y2=\"26\"/>"
                    "<text x=\"%.1f\" y=\"30\">%s</text>", ln[i].cls, x, x + 30, x + 36,
                    ln[i].text);
            x += 150;
        }
        fprintf(f, "<ellipse class=\"cn-leg-ell\" cx=\"%.1f\" cy=\"26\" rx=\"12\" ry=\"6\"/>"
                "<text x=\"%.1f\" y=\"30\">error ellipse %.4g %%, \u00d7%.6g</text>",
                x + 12, x + 30, r->opt.confidence * 100, mag);
    }
    fputs("</g>\n", f);
}

int cairn_rpt_svg_plan(const cairn_report *r, FILE *f)
{
    double emin = INFINITY, emax = -INFINITY, nmin = INFINITY, nmax = -INFINITY;
    size_t nplaced = 0;
    for (size_t i = 0; i < r->nmarks; i++) {
        const cairn_report_mark *m = &r->marks[i];
        if (!placed(m))
            continue;
        nplaced++;
        emin = fmin(emin, m->e);
        emax = fmax(emax, m->e);
        nmin = fmin(nmin, m->n);
        nmax = fmax(nmax, m->n);
    }
    if (nplaced == 0) {
        fputs("<p class=\"note\">No mark has plane coordinates: there is no plan.</p>\n", f);
        return 0;
    }
    int thin = r->nmarks > CAIRN_REPORT_PLAN_MAX_MARKS;
    double mag = cairn_report_magnification(r);
    double de = emax - emin, dn = nmax - nmin;
    double extent = fmax(de, dn);
    if (!(extent > 0))
        extent = 1.0 * cairn_rpt_lf(r);   /* one mark, or all on one spot */
    /* the plan is VW − 2·PAD wide; its height follows the marks, within limits */
    double inner = VW - 2 * PAD;
    double s = inner / (de > 0 ? de : extent);
    if (dn * s > 1.2 * inner)
        s = 1.2 * inner / dn;
    frame fr = {emin, nmax, s, PAD + 30, PAD};
    double ph = fmax(dn * s, 120.0);
    fr.left = PAD + (inner - de * s) / 2;
    double vh = fr.top + ph + PAD + LEG;

    cairn_rpt_segment *sg = NULL;
    size_t nseg = 0;
    if (!thin && cairn_rpt_segments(r, &sg, &nseg))
        return -1;

    fprintf(f, "<div class=\"cn-fig\"><svg xmlns=\"http://www.w3.org/2000/svg\" "
            "id=\"cn-plan\" viewBox=\"0 0 %.0f %.0f\" role=\"img\" "
            "aria-label=\"network plan\">\n<style>"
            "text{font:12px system-ui,'DejaVu Sans',sans-serif;fill:#1f2a30}"
            ".cn-bg{fill:#fdfcf8}"
            ".cn-ln{stroke:#7f95a3;stroke-width:1.2}"
            ".cn-ln-unch{stroke:#5d6b73;stroke-dasharray:7 2 1.5 2}"
            ".cn-ln-flag{stroke:#8e2457;stroke-width:2.6;stroke-dasharray:9 4}"
            ".cn-ln-rej{stroke:#3b3b58;stroke-width:3;stroke-dasharray:.5 5;"
            "stroke-linecap:round}"
            ".cn-ell,.cn-leg-ell{fill:#b86200;fill-opacity:.12;stroke:#b86200;stroke-width:1.4}"
            ".cn-sym-held{fill:#2f5d50;stroke:#fdfcf8;stroke-width:.6}"
            ".cn-sym-wt{fill:#fdfcf8;stroke:#2f5d50;stroke-width:2}"
            ".cn-sym-new{fill:#fdfcf8;stroke:#1f2a30;stroke-width:1.6}"
            ".cn-sym-dot,.cn-dot{fill:#1f2a30}"
            ".cn-sym-und{stroke:#8e2457;stroke-width:2.4;fill:none}"
            ".cn-lab{font-size:11px;fill:#3d4a52}"
            ".cn-sb-dark{fill:#1f2a30}.cn-sb-light{fill:#fdfcf8;stroke:#1f2a30}"
            ".cn-n-fill{fill:#1f2a30}.cn-n-open{fill:#fdfcf8;stroke:#1f2a30}"
            ".cn-north text{font-weight:700;font-size:14px}"
            ".cn-leg-box{fill:#f6f3ea;stroke:#d9d4c7}"
            "</style>\n<rect class=\"cn-bg\" x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\"/>\n",
            VW, vh, VW, vh);
    if (!thin)
        lines(r, &fr, sg, nseg, f);
    free(sg);
    if (!thin)
        for (size_t i = 0; i < r->nmarks; i++) {
            const cairn_report_mark *m = &r->marks[i];
            if (!placed(m) || m->role == CAIRN_REPORT_HELD || !isfinite(m->major) ||
                !isfinite(m->minor) || !isfinite(m->azimuth))
                continue;
            double x = px(&fr, m->e), y = py(&fr, m->n);
            fprintf(f, "<ellipse class=\"cn-ell\" cx=\"%.1f\" cy=\"%.1f\" rx=\"%.2f\" "
                    "ry=\"%.2f\" transform=\"rotate(%.2f %.1f %.1f)\">", x, y,
                    m->major * mag * s, m->minor * mag * s,
                    m->azimuth * 180.0 / CAIRN_PI - 90.0, x, y);
            mark_title(r, m, f);
            fputs("</ellipse>\n", f);
        }
    int labels = !thin && nplaced <= LABEL_MAX;
    for (size_t i = 0; i < r->nmarks; i++) {
        const cairn_report_mark *m = &r->marks[i];
        if (!placed(m))
            continue;
        double x = px(&fr, m->e), y = py(&fr, m->n);
        fprintf(f, "<g class=\"cn-mk cn-mk-%s\">", m->role == CAIRN_REPORT_HELD ? "held" :
                m->role == CAIRN_REPORT_WEIGHTED ? "weighted" :
                m->role == CAIRN_REPORT_UNDETERMINED ? "undetermined" : "new");
        mark_title(r, m, f);
        symbol(f, m->role, x, y, thin);
        if (labels) {
            fprintf(f, "<text class=\"cn-lab\" x=\"%.1f\" y=\"%.1f\">", x + 8, y - 7);
            cairn_rpt_esc(f, m->id);
            fputs("</text>", f);
        }
        fputs("</g>\n", f);
    }
    north(VW - PAD - 10, 6, f);
    scale_bar(r, &fr, de > 0 ? de : extent, fr.top + ph + 26, f);
    legend(r, fr.top + ph + PAD + 30, thin, mag, f);
    fputs("</svg>\n<p>", f);
    if (thin)
        fprintf(f, "The network has %zu marks, more than %d: the plan is thinned and shows "
                "the marks only, without observed lines, error ellipses or labels.",
                r->nmarks, CAIRN_REPORT_PLAN_MAX_MARKS);
    else
        fprintf(f, "Plan of the network in grid coordinates, north up. Error ellipses "
                "(absolute, %.4g %% confidence) are magnified \u00d7%.6g%s; lines are drawn "
                "once per pair of marks with the worst status of their observations. Hover "
                "over an element for its numbers.", r->opt.confidence * 100, mag,
                r->ellipse_magnification > 0 ? "" : ", so that the largest is about 5 % of "
                "the plan's extent");
    fputs("</p></div>\n", f);
    return ferror(f) ? -1 : 0;
}
