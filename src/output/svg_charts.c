/* Charts of report.html as inline SVG: the histogram of the standardised
 * residuals w against the standard normal density (the distribution of w
 * when the model is right), and the convergence of vTPv per iteration on
 * a logarithmic axis. Both are one pass over their data. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "report_int.h"

#define CW 1000.0
#define CH 300.0
#define L 64.0     /* left margin (axis labels) */
#define R 24.0
#define T 24.0
#define B 48.0
#define BIN 0.5    /* histogram bin width in w */
#define NBIN_MAX 40

static const char style[] =
    "<style>text{font:12px system-ui,'DejaVu Sans',sans-serif;fill:#1f2a30}"
    ".cn-ax{stroke:#1f2a30;stroke-width:1}.cn-grid{stroke:#d9d4c7;stroke-width:.8}"
    ".cn-bar{fill:#2f5d50;fill-opacity:.78;stroke:#fdfcf8;stroke-width:1}"
    ".cn-bar-out{fill:#8e2457;fill-opacity:.85}"
    ".cn-curve{fill:none;stroke:#b86200;stroke-width:2.2}"
    ".cn-crit{stroke:#8e2457;stroke-width:1.4;stroke-dasharray:6 4}"
    ".cn-conv{fill:none;stroke:#2f5d50;stroke-width:2}"
    ".cn-pt{fill:#fdfcf8;stroke:#2f5d50;stroke-width:2}"
    ".cn-bg{fill:#fdfcf8}</style>\n";

static void open_svg(FILE *f, const char *id, const char *label)
{
    fprintf(f, "<div class=\"cn-fig\"><svg xmlns=\"http://www.w3.org/2000/svg\" id=\"%s\" "
            "viewBox=\"0 0 %.0f %.0f\" role=\"img\" aria-label=\"%s\">\n%s"
            "<rect class=\"cn-bg\" x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\"/>\n",
            id, CW, CH, label, style, CW, CH);
}

int cairn_rpt_svg_histogram(const cairn_report *r, FILE *f)
{
    size_t n = 0, counts[NBIN_MAX] = {0};
    double amax = 0;
    for (size_t i = 0; i < r->nobs; i++) {
        double w = r->obs[i].w;
        if (!isfinite(w) || r->obs[i].status == CAIRN_REPORT_REJECTED)
            continue;
        n++;
        amax = fmax(amax, fabs(w));
    }
    if (n == 0) {
        fputs("<p class=\"note\">No standardised residuals to show.</p>\n", f);
        return 0;
    }
    /* range ±lim, lim in [4, 10]: the outer bins also collect what lies beyond */
    double lim = fmin(10.0, fmax(4.0, ceil(amax)));
    int nbin = (int)(2 * lim / BIN);
    size_t beyond = 0;
    for (size_t i = 0; i < r->nobs; i++) {
        double w = r->obs[i].w;
        if (!isfinite(w) || r->obs[i].status == CAIRN_REPORT_REJECTED)
            continue;
        int k = (int)floor((w + lim) / BIN);
        if (k < 0 || k >= nbin) {
            beyond++;
            k = k < 0 ? 0 : nbin - 1;
        }
        counts[k]++;
    }
    size_t cmax = 0;
    for (int k = 0; k < nbin; k++)
        cmax = counts[k] > cmax ? counts[k] : cmax;
    /* the density's peak n·BIN·φ(0) must fit as well as the tallest bar */
    double peak = (double)n * BIN / sqrt(2 * CAIRN_PI);
    double ymax = fmax((double)cmax, peak) * 1.1;
    double pw = CW - L - R, ph = CH - T - B;
#define HX(w) (L + ((w) + lim) / (2 * lim) * pw)
#define HY(c) (T + ph - (c) / ymax * ph)
    open_svg(f, "cn-hist", "histogram of standardised residuals");
    /* count grid */
    double step = pow(10.0, floor(log10(ymax / 4 > 1 ? ymax / 4 : 1)));
    while (ymax / step > 8)
        step *= 2;
    for (double c = 0; c <= ymax; c += step)
        fprintf(f, "<line class=\"cn-grid\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>"
                "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%.0f</text>\n", L, HY(c),
                L + pw, HY(c), L - 6, HY(c) + 4, c);
    for (int k = 0; k < nbin; k++) {
        if (!counts[k])
            continue;
        double a = -lim + k * BIN;
        /* plum: bins beyond the critical value, or collecting what lies beyond ±lim */
        double wcr = r->verdict.wcrit;
        int out = ((k == 0 || k == nbin - 1) && beyond) ||
                  (isfinite(wcr) && (a >= wcr || a + BIN <= -wcr));
        fprintf(f, "<rect class=\"cn-bar%s\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                "height=\"%.1f\"><title>w in [%.1f, %.1f)%s: %zu observation%s</title>"
                "</rect>\n", out ? " cn-bar-out" : "", HX(a), HY((double)counts[k]),
                HX(a + BIN) - HX(a), HY(0) - HY((double)counts[k]), a, a + BIN,
                (k == 0 || k == nbin - 1) && beyond ? " and beyond" : "", counts[k],
                counts[k] == 1 ? "" : "s");
    }
    fputs("<polyline class=\"cn-curve\" points=\"", f);
    for (double w = -lim; w <= lim + 1e-9; w += 0.1)
        fprintf(f, "%.1f,%.1f ", HX(w), HY(peak * exp(-0.5 * w * w)));
    fputs("\"><title>standard normal density, scaled to the number of residuals</title>"
          "</polyline>\n", f);
    double wc = r->verdict.wcrit;
    if (isfinite(wc) && wc < lim)
        for (int sgn = -1; sgn <= 1; sgn += 2)
            fprintf(f, "<line class=\"cn-crit\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                    "y2=\"%.1f\"><title>critical value %+.3f</title></line>\n", HX(sgn * wc),
                    T, HX(sgn * wc), T + ph, sgn * wc);
    fprintf(f, "<line class=\"cn-ax\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>\n",
            L, HY(0), L + pw, HY(0));
    for (int w = (int)-lim; w <= (int)lim; w++)
        fprintf(f, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">%d</text>\n", HX(w),
                HY(0) + 16, w);
    fprintf(f, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">standardised residual "
            "w</text>\n</svg>\n", L + pw / 2, CH - 8);
#undef HX
#undef HY
    fprintf(f, "<p>Standardised residuals of %zu observations (unchecked and rejected ones "
            "left out) in bins of %.1f, against the standard normal density",
            n, BIN);
    if (isfinite(wc))
        fprintf(f, "; dashed: the critical values \u00b1%.3f, bins beyond them in plum", wc);
    if (beyond)
        fprintf(f, "; %zu beyond \u00b1%.0f are counted in the outer bins", beyond, lim);
    fputs(".</p></div>\n", f);
    return ferror(f) ? -1 : 0;
}

int cairn_rpt_svg_convergence(const cairn_report *r, FILE *f)
{
    if (r->niters == 0) {
        fputs("<p class=\"note\">No iteration log to chart.</p>\n", f);
        return 0;
    }
    /* log10 axis over whole decades; vTPv of 0 sits on the floor */
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < r->niters; i++) {
        double v = r->iters[i].vtpv;
        if (isfinite(v) && v > 0) {
            lo = fmin(lo, log10(v));
            hi = fmax(hi, log10(v));
        }
    }
    if (!isfinite(lo)) {
        lo = -1;
        hi = 1;
    }
    lo = floor(lo);
    hi = ceil(hi);
    if (hi <= lo)
        hi = lo + 1;
    double pw = CW - L - R, ph = CH - T - B;
    double nx = r->niters > 1 ? (double)(r->niters - 1) : 1.0;
#define CX(i) (L + 20 + (double)(i) / nx * (pw - 40))
#define CY(lv) (T + ph - ((lv) - lo) / (hi - lo) * ph)
    open_svg(f, "cn-conv", "convergence of vTPv");
    int dstep = (int)ceil((hi - lo) / 8);
    for (double d = lo; d <= hi + 1e-9; d += dstep)
        fprintf(f, "<line class=\"cn-grid\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>"
                "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">1e%+.0f</text>\n", L, CY(d),
                L + pw, CY(d), L - 6, CY(d) + 4, d);
    fputs("<polyline class=\"cn-conv\" points=\"", f);
    for (size_t i = 0; i < r->niters; i++) {
        double v = r->iters[i].vtpv;
        double lv = isfinite(v) && v > 0 ? fmax(lo, log10(v)) : lo;
        fprintf(f, "%.1f,%.1f ", CX(i), CY(lv));
    }
    fputs("\"/>\n", f);
    size_t every = r->niters > 30 ? r->niters / 15 : 1;
    for (size_t i = 0; i < r->niters; i++) {
        double v = r->iters[i].vtpv;
        double lv = isfinite(v) && v > 0 ? fmax(lo, log10(v)) : lo;
        fprintf(f, "<circle class=\"cn-pt\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"><title>iteration "
                "%d: vTPv %.10g</title></circle>\n", CX(i), CY(lv), r->iters[i].iteration, v);
        if (i % every == 0 || i + 1 == r->niters)
            fprintf(f, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">%d</text>\n", CX(i),
                    T + ph + 16, r->iters[i].iteration);
    }
    fprintf(f, "<line class=\"cn-ax\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\"/>\n"
            "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">iteration</text>\n</svg>\n",
            L, T + ph, L + pw, T + ph, L + pw / 2, CH - 8);
#undef CX
#undef CY
    fputs("<p>vTPv after each iteration, logarithmic scale.</p></div>\n", f);
    return ferror(f) ? -1 : 0;
}
