/* report.html: the same report as report.txt in one self-contained file:
 * inline CSS (with a print stylesheet), inline SVG (plan, residual
 * histogram, convergence; svg_plan.c, svg_charts.c) and a small inline
 * script that sorts tables when a header is clicked. No external fonts,
 * scripts, images or links. The markup is well-formed XML (XHTML
 * namespace, every element closed, only the five XML entities, the script
 * in a CDATA section hidden from JavaScript by line comments), so it can
 * be checked with an XML parser as well as read by a browser. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "fmt.h"
#include "report_int.h"

#define WORST_MAX 10

/* Our palette: moss, amber, plum and slate on warm paper, distinct in
 * lightness as well as hue; every status also differs in weight or
 * pattern, so nothing depends on colour alone. */
static const char css[] =
    ":root{--paper:#fbfaf6;--ink:#1f2a30;--muted:#5d6b73;--rule:#d9d4c7;"
    "--moss:#2f5d50;--amber:#b86200;--plum:#8e2457;--slate:#3b3b58;"
    "--warnbg:#fff1d2;--badbg:#f8e1ea;--okbg:#e4efe8;--unchbg:#ecebf3}\n"
    "body{background:var(--paper);color:var(--ink);margin:0 auto;max-width:75rem;"
    "padding:1rem 1.5rem 3rem;font:15px/1.45 system-ui,-apple-system,'Segoe UI',"
    "Roboto,'DejaVu Sans',sans-serif}\n"
    "h1{font-size:1.6rem;margin:1.2rem 0 .2rem;color:var(--moss)}\n"
    "h2{font-size:1.15rem;margin:2rem 0 .6rem;padding-bottom:.2rem;"
    "border-bottom:2px solid var(--moss);color:var(--moss)}\n"
    "h2 .n{display:inline-block;min-width:1.6rem;color:var(--amber)}\n"
    ".cn-caution{border:2px solid var(--amber);background:var(--warnbg);"
    "padding:.6rem 1rem;border-radius:4px}\n"
    ".cn-caution p{margin:.2rem 0}.cn-caution ul{margin:.4rem 0 .2rem 1.2rem;padding:0}\n"
    ".cn-caution li{font-weight:600;color:var(--plum)}\n"
    ".cn-verdict{font-size:1.05rem;padding:.5rem .8rem;border-left:6px solid var(--moss);"
    "background:var(--okbg)}\n"
    ".cn-verdict.review{border-left-color:var(--plum);background:var(--badbg)}\n"
    ".cn-verdict b{letter-spacing:.05em}\n"
    ".cn-nav{font-size:.9rem;color:var(--muted);margin:.8rem 0}\n"
    ".cn-nav a{color:var(--moss);margin-right:.8rem}\n"
    "table{border-collapse:collapse;margin:.4rem 0 1rem;font-size:.86rem}\n"
    "th,td{padding:.15rem .5rem;border-bottom:1px solid var(--rule);text-align:left;"
    "vertical-align:top}\n"
    "th{background:#efece3;font-weight:600;white-space:nowrap}\n"
    "td.r{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
    ".cn-sort th{cursor:pointer}.cn-sort th::after{content:' \\2195';color:var(--muted)}\n"
    ".cn-sort th[aria-sort=ascending]::after{content:' \\2191'}\n"
    ".cn-sort th[aria-sort=descending]::after{content:' \\2193'}\n"
    ".cn-kv th{background:none;text-align:left;color:var(--muted);font-weight:500}\n"
    ".mono{font-family:'DejaVu Sans Mono',Menlo,Consolas,monospace;font-size:.8rem;"
    "word-break:break-all}\n"
    "tr.st-flagged td{background:var(--badbg)}tr.st-rejected td{background:#e6e3ee}\n"
    "tr.st-unchecked td{background:var(--unchbg)}\n"
    "td.s-flagged{color:var(--plum);font-weight:700}"
    "td.s-rejected{color:var(--slate);font-weight:700;text-decoration:line-through}\n"
    "td.s-unchecked{color:var(--slate);font-style:italic}\n"
    ".fail{color:var(--plum);font-weight:700}.pass{color:var(--moss);font-weight:600}\n"
    ".cn-card{border:1px solid var(--rule);border-left:5px solid var(--plum);"
    "padding:.4rem .8rem;margin:.5rem 0;background:#fff}\n"
    ".cn-card.rej{border-left-color:var(--slate)}.cn-card p{margin:.15rem 0}\n"
    ".cn-fig{margin:1rem 0;background:#fff;border:1px solid var(--rule);padding:.5rem}\n"
    ".cn-fig svg{width:100%;height:auto;display:block}\n"
    ".cn-fig p{margin:.3rem 0 0;font-size:.85rem;color:var(--muted)}\n"
    ".note{color:var(--muted);font-size:.88rem}.cn-desc{white-space:pre-line}\n"
    ".cn-wide{overflow-x:auto}.cn-wide td{white-space:nowrap}\n"
    "@media print{body{background:#fff;max-width:none;padding:0;font-size:9.5pt}"
    ".cn-wide{overflow:visible}.cn-wide td{white-space:normal}"
    ".cn-nav{display:none}.cn-sort th::after{content:''}"
    "h2{break-after:avoid;page-break-after:avoid}"
    ".cn-fig,.cn-card,tr{break-inside:avoid;page-break-inside:avoid}"
    "table{font-size:8pt}th{background:#eee}"
    ".cn-caution{border:2px solid #000;background:#fff}"
    "thead{display:table-header-group}}\n";

/* Sort a table's body rows by the clicked column: data-v when present
 * (numbers), else the text; empty cells last in either direction. Written without '<' or '&' so that it is also
 * valid XML text inside the CDATA section. */
static const char script[] =
    "//<![CDATA[\n"
    "(function(){\n"
    "function key(td){var v=td.getAttribute('data-v');"
    "if(v!==null){var x=parseFloat(v);if(!isNaN(x))return x;}"
    "return td.textContent.trim().toLowerCase();}\n"
    "function cmp(a,b,d){if(a===b)return 0;if(a==='')return 1;if(b==='')return -1;"
    "if(typeof a!==typeof b){a=String(a);b=String(b);}return a>b?d:-d;}\n"
    "var ts=document.querySelectorAll('table.cn-sort');\n"
    "Array.prototype.forEach.call(ts,function(t){\n"
    " var hs=t.tHead.rows[0].cells;\n"
    " Array.prototype.forEach.call(hs,function(h,c){\n"
    "  h.setAttribute('title','click to sort');\n"
    "  h.addEventListener('click',function(){\n"
    "   var d=h.getAttribute('aria-sort')==='ascending'?-1:1;\n"
    "   Array.prototype.forEach.call(hs,function(x){x.removeAttribute('aria-sort');});\n"
    "   h.setAttribute('aria-sort',d===1?'ascending':'descending');\n"
    "   var b=t.tBodies[0],rs=Array.prototype.slice.call(b.rows);\n"
    "   rs.sort(function(x,y){return cmp(key(x.cells[c]),key(y.cells[c]),d);});\n"
    "   rs.forEach(function(r){b.appendChild(r);});\n"
    "  });\n"
    " });\n"
    "});\n"
    "})();\n"
    "//]]>\n";

typedef struct {
    FILE *f;
    const cairn_report *r;
    int section;
    int bad;        /* an SVG writer failed (out of memory) */
} html;

static void esc(html *h, const char *s)
{
    cairn_rpt_esc(h->f, s);
}

static void open_section(html *h, const char *id, const char *name)
{
    fprintf(h->f, "<div class=\"cn-sec\" id=\"%s\">\n<h2><span class=\"n\">%d</span> ", id,
            ++h->section);
    esc(h, name);
    fputs("</h2>\n", h->f);
}

static void td(html *h, const char *text)
{
    fputs("<td>", h->f);
    esc(h, text);
    fputs("</td>", h->f);
}

/* A numeric cell: shown text, and its value for sorting. */
static void tdn(html *h, const char *text, double v)
{
    if (!isfinite(v) || !text[0]) {
        fputs("<td class=\"r\"></td>", h->f);
        return;
    }
    char b[48];
    cairn_fmt_general(b, sizeof b, v, 10);   /* = "%.10g", faster */
    fputs("<td class=\"r\" data-v=\"", h->f);
    fputs(b, h->f);
    fputs("\">", h->f);
    esc(h, text);
    fputs("</td>", h->f);
}

static void thead(html *h, const char *cls, const char *const *names, size_t n)
{
    fprintf(h->f, "<table class=\"%s\"><thead><tr>", cls);
    for (size_t i = 0; i < n; i++) {
        fputs("<th>", h->f);
        esc(h, names[i]);
        fputs("</th>", h->f);
    }
    fputs("</tr></thead>\n<tbody>\n", h->f);
}

static void kv(html *h, const char *k, const char *v)
{
    fputs("<tr><th>", h->f);
    esc(h, k);
    fputs("</th><td>", h->f);
    esc(h, v && v[0] ? v : "\u2014");
    fputs("</td></tr>\n", h->f);
}

/* ---- caution, title, run, verdict -------------------------------- */

static void warn_item(void *ctx, const char *text)
{
    html *h = ctx;
    fputs("<li>", h->f);
    esc(h, text);
    fputs("</li>\n", h->f);
}

static void caution(html *h)
{
    fputs("<div class=\"cn-caution\" id=\"caution\" role=\"note\">\n<p><strong>Caution."
          "</strong> ", h->f);
    esc(h, cairn_rpt_caution_text);
    fputs("</p>\n<ul>\n", h->f);
    if (cairn_rpt_warnings(h->r, warn_item, h) == 0)
        fputs("<li class=\"pass\">No test of this adjustment failed; the caution above "
              "still applies.</li>\n", h->f);
    fputs("</ul>\n</div>\n", h->f);
}

static void title(html *h)
{
    const cairn_report *r = h->r;
    fputs("<h1>", h->f);
    esc(h, r->title && r->title[0] ? r->title : "(untitled project)");
    fputs("</h1>\n<p class=\"note\">cairn adjustment report</p>\n", h->f);
    if (r->description && r->description[0]) {
        fputs("<p class=\"cn-desc\">", h->f);
        esc(h, r->description);
        fputs("</p>\n", h->f);
    }
    fputs("<p class=\"cn-nav\">Contents: <a href=\"#run\">run</a><a href=\"#verdict\">"
          "verdict</a><a href=\"#iterations\">iterations</a><a href=\"#statistics\">"
          "statistics</a><a href=\"#marks\">marks and plan</a><a href=\"#look\">look here "
          "first</a><a href=\"#observations\">observations</a><a href=\"#suspects\">"
          "rejected and flagged</a><a href=\"#pairs\">relative precision</a></p>\n", h->f);
}

static void run(html *h)
{
    const cairn_report *r = h->r;
    const cairn_report_options *o = &r->opt;
    char b[512];
    open_section(h, "run", "The run");
    fputs("<table class=\"cn-kv\"><tbody>\n", h->f);
    snprintf(b, sizeof b, "cairn %s", r->program_version ? r->program_version : "");
    kv(h, "program", b);
    kv(h, "run at", r->utc);
    fputs("<tr><th>command line</th><td class=\"mono\">", h->f);
    esc(h, r->command_line && r->command_line[0] ? r->command_line : "\u2014");
    fputs("</td></tr>\n", h->f);
    snprintf(b, sizeof b, "lengths in %s (1 %s = %.10g m); angles in %s; small angles in %s",
             cairn_rpt_lu(r), cairn_rpt_lu(r), cairn_rpt_lf(r),
             cairn_angle_unit_name(r->angle_unit),
             r->angle_unit == CAIRN_ANGLE_GON ? "mgon" : "arc-seconds (\")");
    kv(h, "units", b);
    kv(h, "dimension", cairn_rpt_dimension(r, b, sizeof b));
    snprintf(b, sizeof b, "refraction k %.4g, scale %.10g, confidence %.4g, alpha %.4g, "
             "power %.4g, global-alpha %.4g", o->refraction, o->scale, o->confidence,
             o->alpha, o->power, o->global_alpha);
    kv(h, "options", b);
    if (o->max_iterations > 0) {
        snprintf(b, sizeof b, "%d", o->max_iterations);
        kv(h, "iteration limit", b);
    }
    kv(h, "tolerance", o->tolerance ? o->tolerance : "none set");
    kv(h, "datum", o->datum);
    if (o->fixed && o->fixed[0])
        kv(h, "fixed by the datum", o->fixed);
    kv(h, "data snooping", o->snoop);
    fputs("</tbody></table>\n", h->f);
    if (r->nfiles) {
        static const char *const cols[] = {"#", "path", "bytes", "SHA-256", "note"};
        fputs("<p>Input files, in reading order:</p>\n", h->f);
        thead(h, "cn-files", cols, 5);
        for (size_t i = 0; i < r->nfiles; i++) {
            const cairn_report_file *fl = &r->files[i];
            int dd = fl->dotdot || cairn_path_has_dotdot(fl->path);
            fprintf(h->f, "<tr><td class=\"r\">%zu</td><td class=\"mono\">", i + 1);
            esc(h, fl->path);
            if (fl->size >= 0)
                fprintf(h->f, "</td><td class=\"r\">%lld</td>", fl->size);
            else
                fputs("</td><td class=\"r fail\">unreadable</td>", h->f);
            fputs("<td class=\"mono\">", h->f);
            esc(h, fl->sha256[0] ? fl->sha256 : "\u2014");
            fprintf(h->f, "</td><td%s>%s</td></tr>\n", dd ? " class=\"fail\"" : "",
                    dd ? "path contains '..'" : "");
        }
        fputs("</tbody></table>\n", h->f);
    } else {
        fputs("<p class=\"note\">No input files recorded.</p>\n", h->f);
    }
    fputs("</div>\n", h->f);
}

static void verdict(html *h)
{
    char b[256];
    int clean = cairn_rpt_clean(h->r);
    open_section(h, "verdict", "Verdict");
    fprintf(h->f, "<p class=\"cn-verdict%s\"><b>%s</b> \u2003", clean ? "" : " review",
            clean ? "PASSED" : "REVIEW");
    esc(h, cairn_rpt_verdict(h->r, b, sizeof b));
    fputs("</p>\n</div>\n", h->f);
}

/* ---- iterations and statistics ----------------------------------- */

static void iterations(html *h)
{
    const cairn_report *r = h->r;
    char b[3][64];
    open_section(h, "iterations", "Iterations");
    if (r->niters) {
        char c3[64];
        snprintf(c3, sizeof c3, "largest correction (%s)", cairn_rpt_lu(r));
        const char *const cols[] = {"iteration", "vTPv", c3, "where", "step", "damping"};
        thead(h, "cn-iter", cols, 6);
        for (size_t i = 0; i < r->niters; i++) {
            const cairn_report_iter *it = &r->iters[i];
            snprintf(b[0], 64, "%.10g", it->vtpv);
            snprintf(b[2], 64, "%.3g", it->mu);
            fprintf(h->f, "<tr><td class=\"r\">%d</td>", it->iteration);
            tdn(h, b[0], it->vtpv);
            /* %.3g: the last corrections are tiny and 0.000000 would hide them */
            if (isfinite(it->max_correction))
                snprintf(b[1], 64, "%.3g", it->max_correction / cairn_rpt_lf(r));
            else
                b[1][0] = 0;
            tdn(h, b[1], it->max_correction);
            td(h, it->max_where ? it->max_where : "");
            tdn(h, cairn_rpt_num(it->step, 3, 0, b[0], 64), it->step);
            tdn(h, it->mu > 0 ? b[2] : "0", it->mu);
            fputs("</tr>\n", h->f);
        }
        fputs("</tbody></table>\n", h->f);
    }
    h->bad |= cairn_rpt_svg_convergence(r, h->f) != 0;
    if (!r->verdict.converged)
        fputs("<p class=\"fail\">The iteration did not converge.</p>\n", h->f);
    fputs("</div>\n", h->f);
}

static void statistics(html *h)
{
    const cairn_report *r = h->r;
    const cairn_report_verdict *v = &r->verdict;
    cairn_rpt_counts c;
    char b[512];
    size_t nobs = v->nobs ? v->nobs : r->nobs;
    cairn_rpt_count(r, &c);
    open_section(h, "statistics", "Statistics");
    fputs("<table class=\"cn-kv\"><tbody>\n", h->f);
    snprintf(b, sizeof b, "%zu%s", nobs, c.rejected ? " (rejected ones included)" : "");
    kv(h, "observations", b);
    if (c.rejected) {
        snprintf(b, sizeof b, "%zu", nobs - c.rejected);
        kv(h, "used in the final solution", b);
    }
    if (v->norientations)
        snprintf(b, sizeof b, "%zu (%zu coordinates, %zu orientations)", v->nunknowns,
                 v->nunknowns - v->norientations, v->norientations);
    else
        snprintf(b, sizeof b, "%zu", v->nunknowns);
    kv(h, "unknowns", b);
    kv(h, "datum", r->opt.datum);
    snprintf(b, sizeof b, "%d", v->dof);
    kv(h, "degrees of freedom", b);
    snprintf(b, sizeof b, "%.10g", v->vtpv);
    kv(h, "vTPv", b);
    if (isfinite(v->sigma0_sq))
        snprintf(b, sizeof b, "%.6g (\u03c3\u2080 %.6g; a priori 1)", v->sigma0_sq,
                 sqrt(v->sigma0_sq));
    else
        snprintf(b, sizeof b, "none (no redundancy)");
    kv(h, "variance factor a posteriori", b);
    fputs("<tr><th>global test</th><td>", h->f);
    if (v->tested) {
        fprintf(h->f, "<span class=\"%s\">%s</span>: ", v->pass ? "pass" : "fail",
                v->pass ? "pass" : "FAIL");
        snprintf(b, sizeof b, "statistic %.6g, accepted in [%.6g, %.6g] (\u03c7\u00b2, %d "
                 "dof, two-sided \u03b1 %.4g)", v->statistic, v->lower, v->upper, v->dof,
                 r->opt.global_alpha);
        esc(h, b);
    } else {
        fputs("<span class=\"fail\">not made</span> (no redundancy)", h->f);
    }
    fputs("</td></tr>\n", h->f);
    if (isfinite(v->wcrit)) {
        snprintf(b, sizeof b, "|w| > %.4g (\u03b1 %.4g; MDB at power %.4g)", v->wcrit,
                 r->opt.alpha, r->opt.power);
        kv(h, "w-test critical value", b);
    }
    snprintf(b, sizeof b, "%zu / %zu", c.flagged, c.rejected);
    kv(h, "flagged / rejected", b);
    if (v->snoop_rounds > 0) {
        if (v->nrestored > 0)
            snprintf(b, sizeof b, "%d (%d rejection%s undone: no longer failing once "
                     "a larger |w| was removed)", v->snoop_rounds, v->nrestored,
                     v->nrestored == 1 ? "" : "s");
        else
            snprintf(b, sizeof b, "%d", v->snoop_rounds);
        kv(h, "snooping rounds", b);
    }
    size_t ntested = 0;
    double chance = cairn_rpt_chance_failures(r, &c, &ntested);
    if (isfinite(chance)) {
        snprintf(b, sizeof b, "%.3g (\u03b1 %.4g \u00d7 %zu w-tests)", chance, r->opt.alpha,
                 ntested);
        kv(h, "failures expected by chance", b);
    }
    snprintf(b, sizeof b, "%zu", c.unchecked);
    kv(h, "unchecked (r < 0.01)", b);
    fputs("</tbody></table>\n", h->f);
    h->bad |= cairn_rpt_svg_histogram(r, h->f) != 0;
    fputs("</div>\n", h->f);
}

/* ---- marks --------------------------------------------------------- */

/* ---- held marks ---------------------------------------------------- */

static void control_tr(html *h, int nobs, int q, double st, double crit, int pass,
                       const double sh[3], const char *id, const char *when)
{
    const cairn_report *r = h->r;
    char b[64];
    fputs("<tr>", h->f);
    td(h, id);
    td(h, when);
    tdn(h, cairn_rpt_num(st, 2, 0, b, sizeof b), st);
    tdn(h, cairn_rpt_num(crit, 2, 0, b, sizeof b), crit);
    snprintf(b, sizeof b, "%d", q);
    tdn(h, b, q);
    snprintf(b, sizeof b, "%d", nobs);
    tdn(h, b, nobs);
    for (int c = 0; c < 3; c++)
        tdn(h, cairn_rpt_len(r, sh[c], 4, b, sizeof b), sh[c]);
    fprintf(h->f, "<td class=\"%s\">%s</td></tr>\n", pass == 1 ? "pass" : pass == 0 ? "fail" :
            "note", pass == 1 ? "pass" : pass == 0 ? "FAIL" : "untestable");
}

static void held_marks(html *h)
{
    const cairn_report *r = h->r;
    if (r->ncontrols == 0)
        return;
    open_section(h, "held", "Held marks: given coordinates tested against the observations");
    fprintf(h->f, "<p class=\"note\">For each held mark, the chi-square test "
            "(\u03b1 %.4g) of the hypothesis that its held components are off by a shift, "
            "from the observations that touch it; shift: where they put the mark. dim: the "
            "directions they can test.</p>\n", r->opt.alpha);
    const char *lu = cairn_rpt_lu(r);
    char c[3][48];
    snprintf(c[0], 48, "shift e (%s)", lu);
    snprintf(c[1], 48, "shift n (%s)", lu);
    snprintf(c[2], 48, "shift h (%s)", lu);
    const char *const cols[] = {"mark", "when", "statistic", "critical", "dim", "obs",
                                c[0], c[1], c[2], "result"};
    thead(h, "cn-sort cn-held", cols, 10);
    int rounds = r->verdict.snoop_rounds > 0;
    for (size_t i = 0; i < r->ncontrols; i++) {
        const cairn_report_control *k = &r->controls[i];
        const char *id = cairn_rpt_id(r, k->mark);
        control_tr(h, k->nobs, k->q, k->statistic, k->critical, k->pass, k->shift, id,
                   "final");
        if (rounds)
            control_tr(h, k->nobs_first, k->q_first, k->statistic_first, k->critical_first,
                       k->pass_first, k->shift_first, id, "before snooping");
    }
    fputs("</tbody></table>\n</div>\n", h->f);
}

static void sd_td(html *h, const cairn_report_mark *m, unsigned c, double sd)
{
    char b[64];
    if (!(m->has & c))
        td(h, "");
    else if (m->held & c)
        td(h, "held");
    else if (m->fixed & c)
        td(h, "fixed");
    else
        tdn(h, cairn_rpt_len(h->r, sd, 4, b, sizeof b), sd);
}

/* A browser opens a page of a few megabytes; a national network's tables
 * have 10^5..10^6 rows. Above this many rows a table shows its first rows
 * and says where the rest are (observations.csv, marks.csv, results.xml,
 * report.txt hold them all). */
#define HTML_TABLE_MAX 5000

static size_t table_rows(html *h, size_t n, const char *what, const char *where)
{
    if (n <= HTML_TABLE_MAX)
        return n;
    fprintf(h->f, "<p class=\"note warn\">This network has %zu %s: the table shows the "
            "first %d; all of them are in %s and report.txt.</p>\n", n, what,
            HTML_TABLE_MAX, where);
    return HTML_TABLE_MAX;
}

static void marks(html *h)
{
    const cairn_report *r = h->r;
    char b[4][64], c[6][48];
    open_section(h, "marks", "Adjusted marks and plan");
    h->bad |= cairn_rpt_svg_plan(r, h->f) != 0;
    if (r->nmarks == 0) {
        fputs("<p class=\"note\">No marks.</p>\n</div>\n", h->f);
        return;
    }
    fprintf(h->f, "<p class=\"note\">Coordinates and standard deviations in %s; error "
            "ellipses at %.4g %% confidence, azimuth of the major axis from grid north. "
            "\u201cheld\u201d: held fixed; \u201cfixed\u201d: fixed by the free datum.</p>\n",
            cairn_rpt_lu(r), r->opt.confidence * 100);
    const char *lu = cairn_rpt_lu(r);
    snprintf(c[0], 48, "e (%s)", lu);
    snprintf(c[1], 48, "n (%s)", lu);
    snprintf(c[2], 48, "h (%s)", lu);
    snprintf(c[3], 48, "major (%s)", lu);
    snprintf(c[4], 48, "minor (%s)", lu);
    const char *const cols[] = {"mark", "role", c[0], c[1], c[2], "sd e", "sd n", "sd h",
                                c[3], c[4], "azimuth"};
    fputs("<div class=\"cn-wide\">", h->f);
    size_t nshow = table_rows(h, r->nmarks, "marks", "marks.csv, results.xml");
    thead(h, "cn-sort cn-marks", cols, 11);
    for (size_t i = 0; i < nshow; i++) {
        const cairn_report_mark *m = &r->marks[i];
        fprintf(h->f, "<tr class=\"role-%s\">", m->role == CAIRN_REPORT_HELD ? "held" :
                m->role == CAIRN_REPORT_WEIGHTED ? "weighted" :
                m->role == CAIRN_REPORT_UNDETERMINED ? "undetermined" : "adjusted");
        td(h, m->id);
        fprintf(h->f, "<td%s>%s</td>", m->role == CAIRN_REPORT_UNDETERMINED ?
                " class=\"fail\"" : "", cairn_rpt_role_name(m->role));
        tdn(h, m->has & CAIRN_REPORT_E ? cairn_rpt_len(r, m->e, 4, b[0], 64) : "", m->e);
        tdn(h, m->has & CAIRN_REPORT_N ? cairn_rpt_len(r, m->n, 4, b[1], 64) : "", m->n);
        tdn(h, m->has & CAIRN_REPORT_H ? cairn_rpt_len(r, m->h, 4, b[2], 64) : "", m->h);
        sd_td(h, m, CAIRN_REPORT_E, m->sd_e);
        sd_td(h, m, CAIRN_REPORT_N, m->sd_n);
        sd_td(h, m, CAIRN_REPORT_H, m->sd_h);
        tdn(h, cairn_rpt_len(r, m->major, 4, b[0], 64), m->major);
        tdn(h, cairn_rpt_len(r, m->minor, 4, b[1], 64), m->minor);
        tdn(h, isfinite(m->major) ? cairn_rpt_angle(r, m->azimuth, 0, b[2], 64) : "",
            m->azimuth);
        fputs("</tr>\n", h->f);
    }
    fputs("</tbody></table></div>\n</div>\n", h->f);
}

/* ---- observations ------------------------------------------------- */

static const char *status_cls(cairn_report_status s)
{
    switch (s) {
    case CAIRN_REPORT_FLAGGED: return "flagged";
    case CAIRN_REPORT_REJECTED: return "rejected";
    case CAIRN_REPORT_UNCHECKED: return "unchecked";
    default: return "ok";
    }
}

static void obs_row(html *h, const cairn_report_obs *o, int full)
{
    const cairn_report *r = h->r;
    char b[64], src[CAIRN_PATH_MAX + 32];
    double sm = o->angular ? cairn_rpt_small(r, 1.0) : 1.0 / cairn_rpt_lf(r);
    char sq[32];
    cairn_fmt_fixed(sq, sizeof sq, (double)o->seq, 0);   /* = "%zu" */
    fputs("<tr class=\"st-", h->f);
    fputs(status_cls(o->status), h->f);
    fputs("\"><td class=\"r\" data-v=\"", h->f);
    fputs(sq, h->f);
    fputs("\">", h->f);
    fputs(sq, h->f);
    fputs("</td>", h->f);
    td(h, o->kind ? o->kind : "");
    td(h, cairn_rpt_id(r, o->at));
    td(h, cairn_rpt_id(r, o->from));
    td(h, cairn_rpt_id(r, o->to));
    if (full) {
        double vs = o->angular ? 1.0 : 1.0 / cairn_rpt_lf(r);
        tdn(h, cairn_rpt_obs_value(r, o, o->observed, b, sizeof b), o->observed * vs);
        tdn(h, cairn_rpt_obs_value(r, o, o->adjusted, b, sizeof b), o->adjusted * vs);
    }
    tdn(h, cairn_rpt_obs_small(r, o, o->residual, 1, b, sizeof b), o->residual * sm);
    if (full)
        tdn(h, cairn_rpt_obs_small(r, o, o->sd, 0, b, sizeof b), o->sd * sm);
    tdn(h, cairn_rpt_num(o->r, 3, 0, b, sizeof b), o->r);
    tdn(h, cairn_rpt_num(o->w, 2, 1, b, sizeof b), o->w);
    if (full)
        tdn(h, cairn_rpt_obs_small(r, o, o->mdb, 0, b, sizeof b), o->mdb * sm);
    fputs("<td class=\"s-", h->f);
    fputs(status_cls(o->status), h->f);
    fputs("\">", h->f);
    fputs(cairn_rpt_status_name(o->status), h->f);
    fputs("</td><td class=\"mono\">", h->f);
    esc(h, cairn_rpt_source(o, src, sizeof src));
    fputs("</td></tr>\n", h->f);
}

static void worst(html *h)
{
    const cairn_report *r = h->r;
    size_t idx[WORST_MAX];
    size_t k = cairn_rpt_worst(r, idx, WORST_MAX);
    open_section(h, "look", "Observations: look here first");
    if (k == 0) {
        fputs("<p class=\"note\">No observation has a standardised residual.</p>\n</div>\n",
              h->f);
        return;
    }
    fprintf(h->f, "<p>The %zu largest standardised residuals |w|, largest first.</p>\n", k);
    static const char *const cols[] = {"seq", "kind", "at", "from", "to", "residual", "r",
                                       "w", "status", "source"};
    fputs("<div class=\"cn-wide\">", h->f);
    thead(h, "cn-sort cn-worst", cols, 10);
    for (size_t j = 0; j < k; j++)
        obs_row(h, &r->obs[idx[j]], 0);
    fputs("</tbody></table></div>\n</div>\n", h->f);
}

static void all_obs(html *h)
{
    const cairn_report *r = h->r;
    open_section(h, "observations", "Observations in load order");
    if (r->nobs == 0) {
        fputs("<p class=\"note\">No observations.</p>\n</div>\n", h->f);
        return;
    }
    fprintf(h->f, "<p class=\"note\">Values in %s and %s; residual = adjusted \u2212 "
            "observed; r redundancy number; w standardised residual; MDB minimal detectable "
            "bias. Click a column header to sort.</p>\n", cairn_rpt_lu(r),
            cairn_angle_unit_name(r->angle_unit));
    static const char *const cols[] = {"seq", "kind", "at", "from", "to", "observed",
                                       "adjusted", "residual", "sd", "r", "w", "MDB",
                                       "status", "source"};
    fputs("<div class=\"cn-wide\">", h->f);
    size_t nshow = table_rows(h, r->nobs, "observations (every flagged or rejected one is "
                              "listed in its own section)", "observations.csv, results.xml");
    thead(h, "cn-sort cn-obs", cols, 14);
    for (size_t i = 0; i < nshow; i++)
        obs_row(h, &r->obs[i], 1);
    fputs("</tbody></table></div>\n</div>\n", h->f);
}

static void suspects(html *h)
{
    const cairn_report *r = h->r;
    char b[6][64], mk[3 * CAIRN_PATH_MAX], src[CAIRN_PATH_MAX + 32];
    size_t n = 0;
    open_section(h, "suspects", "Rejected and flagged observations");
    for (int pass = 0; pass < 2; pass++) {
        cairn_report_status want = pass == 0 ? CAIRN_REPORT_REJECTED : CAIRN_REPORT_FLAGGED;
        for (size_t i = 0; i < r->nobs; i++) {
            const cairn_report_obs *o = &r->obs[i];
            if (o->status != want)
                continue;
            n++;
            fprintf(h->f, "<div class=\"cn-card%s\"><p><b>%s</b> seq %zu ",
                    pass == 0 ? " rej" : "", pass == 0 ? "REJECTED" : "FLAGGED", o->seq);
            esc(h, o->kind);
            fputs(" \u00b7 ", h->f);
            esc(h, cairn_rpt_obs_marks(r, o, mk, sizeof mk));
            fputs(" \u00b7 <span class=\"mono\">", h->f);
            esc(h, cairn_rpt_source(o, src, sizeof src));
            fputs("</span></p>\n<p>", h->f);
            snprintf(mk, sizeof mk, "observed %s, residual %s, w %s, r %s; estimated "
                     "blunder %s (sd %s)",
                     cairn_rpt_obs_value(r, o, o->observed, b[0], 64),
                     cairn_rpt_obs_small(r, o, o->residual, 1, b[1], 64),
                     cairn_rpt_num(o->w, 2, 1, b[2], 64), cairn_rpt_num(o->r, 3, 0, b[3], 64),
                     cairn_rpt_obs_small(r, o, o->nabla, 1, b[4], 64),
                     cairn_rpt_obs_small(r, o, o->sd_nabla, 0, b[5], 64));
            esc(h, mk);
            fputs("</p>\n", h->f);
            if (o->diagnosis && o->diagnosis[0]) {
                fputs("<p>Likely cause: ", h->f);
                esc(h, o->diagnosis);
                fputs("</p>\n", h->f);
            }
            fputs("</div>\n", h->f);
        }
    }
    if (n == 0)
        fputs("<p>None.</p>\n", h->f);
    else
        fputs("<p class=\"note\">A likely cause is a hypothesis to check against the field "
              "records, not a correction.</p>\n", h->f);
    fputs("</div>\n", h->f);
}

static void pairs(html *h)
{
    const cairn_report *r = h->r;
    char b[64], c[4][48];
    open_section(h, "pairs", "Relative precision of connected marks");
    if (r->npairs == 0) {
        fputs("<p class=\"note\">No connected pairs.</p>\n</div>\n", h->f);
        return;
    }
    fprintf(h->f, "<p class=\"note\">Relative error ellipses at %.4g %% confidence; "
            "required: ", r->opt.confidence * 100);
    esc(h, r->opt.tolerance ? r->opt.tolerance : "no tolerance set");
    fputs(".</p>\n", h->f);
    const char *lu = cairn_rpt_lu(r);
    snprintf(c[0], 48, "distance (%s)", lu);
    snprintf(c[1], 48, "major (%s)", lu);
    snprintf(c[2], 48, "minor (%s)", lu);
    snprintf(c[3], 48, "allowed (%s)", lu);
    const char *const cols[] = {"from", "to", c[0], c[1], c[2], "azimuth", c[3], "result"};
    size_t nshow = table_rows(h, r->npairs, "connected pairs", "results.xml");
    thead(h, "cn-sort cn-pairs", cols, 8);
    for (size_t i = 0; i < nshow; i++) {
        const cairn_report_pair *p = &r->pairs[i];
        fputs("<tr>", h->f);
        td(h, cairn_rpt_id(r, p->from));
        td(h, cairn_rpt_id(r, p->to));
        tdn(h, cairn_rpt_len(r, p->distance, 3, b, sizeof b), p->distance);
        tdn(h, cairn_rpt_len(r, p->major, 4, b, sizeof b), p->major);
        tdn(h, cairn_rpt_len(r, p->minor, 4, b, sizeof b), p->minor);
        tdn(h, cairn_rpt_angle(r, p->azimuth, 0, b, sizeof b), p->azimuth);
        tdn(h, cairn_rpt_len(r, p->allowed, 4, b, sizeof b), p->allowed);
        fprintf(h->f, "<td class=\"%s\">%s</td></tr>\n", p->pass == 1 ? "pass" :
                p->pass == 0 ? "fail" : "note", p->pass == 1 ? "pass" : p->pass == 0 ?
                "FAIL" : "not tested");
    }
    fputs("</tbody></table>\n</div>\n", h->f);
}

int cairn_report_write_html(const cairn_report *r, FILE *out)
{
    html h = {out, r, 0, 0};
    fputs("<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\" "
          "xml:lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n<meta name=\"viewport\" "
          "content=\"width=device-width, initial-scale=1\"/>\n<title>cairn report: ", out);
    esc(&h, r->title && r->title[0] ? r->title : "(untitled project)");
    fprintf(out, "</title>\n<style>\n%s</style>\n</head>\n<body>\n", css);
    caution(&h);
    title(&h);
    run(&h);
    verdict(&h);
    iterations(&h);
    statistics(&h);
    held_marks(&h);
    marks(&h);
    worst(&h);
    all_obs(&h);
    suspects(&h);
    pairs(&h);
    fputs("<p class=\"note\">End of report. ", out);
    esc(&h, cairn_rpt_caution_text);
    fprintf(out, "</p>\n<script>\n%s</script>\n</body>\n</html>\n", script);
    return h.bad || ferror(out) ? -1 : 0;
}
