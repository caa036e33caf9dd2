/* report.txt, report.html and the SHA-256 of input files
 * (src/output/report_*.c, svg_*.c, sha256.c).
 *
 * The report is built by hand (report_fixture.h) so that these tests do
 * not depend on the solve and quality stages. */
#include <check.h>
#include <libxml/HTMLparser.h>
#include <libxml/parser.h>
#include <libxml/xpath.h>
#include <libxml/xpathInternals.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cairn/report.h"
#include "report_fixture.h"

/* ---- helpers ------------------------------------------------------- */

typedef struct {
    char *buf;
    size_t len;
} text;

static text render(const cairn_report *r, int html)
{
    text t = {NULL, 0};
    FILE *f = open_memstream(&t.buf, &t.len);
    ck_assert_ptr_nonnull(f);
    int rc = html ? cairn_report_write_html(r, f) : cairn_report_write_txt(r, f);
    ck_assert_int_eq(rc, 0);
    ck_assert_int_eq(fclose(f), 0);
    return t;
}

/* Longest line in columns (UTF-8 characters). */
static size_t longest_line(const char *s, size_t *pline)
{
    size_t best = 0, col = 0, line = 1;
    *pline = 0;
    for (; *s; s++) {
        if (*s == '\n') {
            col = 0;
            line++;
            continue;
        }
        if (((unsigned char)*s & 0xC0) != 0x80 && ++col > best) {
            best = col;
            *pline = line;
        }
    }
    return best;
}

/* The text with every run of blanks and newlines made one blank. */
static char *squeeze(const char *s)
{
    char *out = malloc(strlen(s) + 1), *o = out;
    ck_assert_ptr_nonnull(out);
    int blank = 0;
    for (; *s; s++) {
        if (*s == ' ' || *s == '\n') {
            blank = 1;
            continue;
        }
        if (blank && o != out)
            *o++ = ' ';
        blank = 0;
        *o++ = *s;
    }
    *o = 0;
    return out;
}

static const char caution[] =
    "These results support, and do not replace, the judgement and sign-off of a licensed "
    "surveyor. Local regulations and standards govern. An adjustment that fails its tests "
    "is not fit for use without review.";

/* ---- SHA-256 ------------------------------------------------------- */

/* FIPS 180-2 (2002), Appendix B.1 "abc" and B.2 the 448-bit message;
 * the empty message: NIST "SHA-256 example" / FIPS 180-2 test suite
 * value e3b0c442... (every SHA-256 implementation agrees). */
static const struct {
    const char *msg, *hex;
} sha_vectors[] = {
    {"abc", "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"},
    {"", "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"},
    {"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq",
     "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"},
};

START_TEST(sha256_fips_vectors_memory)
{
    char hex[65];
    cairn_sha256_hex(sha_vectors[_i].msg, strlen(sha_vectors[_i].msg), hex);
    ck_assert_str_eq(hex, sha_vectors[_i].hex);
}
END_TEST

START_TEST(sha256_fips_vectors_file)
{
    char path[] = "/tmp/cairn-sha-XXXXXX", hex[65];
    int fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    size_t n = strlen(sha_vectors[_i].msg);
    ck_assert_int_eq((int)write(fd, sha_vectors[_i].msg, n), (int)n);
    close(fd);
    ck_assert_int_eq(cairn_sha256_file(path, hex), 0);
    ck_assert_str_eq(hex, sha_vectors[_i].hex);
    cairn_report_file rf;
    ck_assert_int_eq(cairn_report_file_fill(&rf, path), 0);
    ck_assert_int_eq((int)rf.size, (int)n);
    ck_assert_str_eq(rf.sha256, sha_vectors[_i].hex);
    ck_assert_int_eq(rf.dotdot, 0);
    unlink(path);
}
END_TEST

START_TEST(sha256_million_a)
{
    /* FIPS 180-2 Appendix B.3: one million 'a', read in 64 KiB blocks */
    char path[] = "/tmp/cairn-sha-XXXXXX", hex[65];
    int fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    FILE *f = fdopen(fd, "w");
    for (int i = 0; i < 1000000; i++)
        fputc('a', f);
    fclose(f);
    ck_assert_int_eq(cairn_sha256_file(path, hex), 0);
    ck_assert_str_eq(hex, "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
    unlink(path);
}
END_TEST

START_TEST(sha256_missing_file)
{
    char hex[65] = "x";
    cairn_report_file rf;
    ck_assert_int_eq(cairn_sha256_file("/nonexistent/cairn/file", hex), -1);
    ck_assert_str_eq(hex, "");
    ck_assert_int_eq(cairn_report_file_fill(&rf, "/nonexistent/../file"), -1);
    ck_assert_int_eq((int)rf.size, -1);
    ck_assert_int_eq(rf.dotdot, 1);
}
END_TEST

START_TEST(dotdot_components)
{
    ck_assert_int_eq(cairn_path_has_dotdot(".."), 1);
    ck_assert_int_eq(cairn_path_has_dotdot("../a.cfb"), 1);
    ck_assert_int_eq(cairn_path_has_dotdot("a/../b.cfb"), 1);
    ck_assert_int_eq(cairn_path_has_dotdot("a/.."), 1);
    ck_assert_int_eq(cairn_path_has_dotdot("a..b.cfb"), 0);
    ck_assert_int_eq(cairn_path_has_dotdot(".../x"), 0);
    ck_assert_int_eq(cairn_path_has_dotdot("./x"), 0);
    ck_assert_int_eq(cairn_path_has_dotdot(NULL), 0);
    char buf[32];
    ck_assert_int_eq((int)strlen(cairn_report_utc_now(buf, sizeof buf)), 23);
    ck_assert_ptr_nonnull(strstr(buf, " UTC"));
}
END_TEST

/* ---- parsing the HTML ------------------------------------------- */

typedef struct {
    int errors;          /* any error */
    int unknown_tags;    /* HTML 4 parser: SVG and HTML5 element names */
    char first[256];
} xml_errs;

static void on_error(void *ctx, xmlErrorPtr e)
{
    xml_errs *x = ctx;
    if (e->level < XML_ERR_ERROR)
        return;
    if (e->code == XML_HTML_UNKNOWN_TAG) {
        x->unknown_tags++;
        return;
    }
    if (x->errors++ == 0)
        snprintf(x->first, sizeof x->first, "line %d: %s", e->line, e->message);
}

static double xpath_count(xmlDocPtr doc, const char *expr)
{
    xmlXPathContextPtr ctx = xmlXPathNewContext(doc);
    xmlXPathRegisterNs(ctx, BAD_CAST "h", BAD_CAST "http://www.w3.org/1999/xhtml");
    xmlXPathRegisterNs(ctx, BAD_CAST "s", BAD_CAST "http://www.w3.org/2000/svg");
    xmlXPathObjectPtr o = xmlXPathEvalExpression(BAD_CAST expr, ctx);
    ck_assert_ptr_nonnull(o);
    double n = o->type == XPATH_NUMBER ? o->floatval : NAN;
    xmlXPathFreeObject(o);
    xmlXPathFreeContext(ctx);
    return n;
}

static xmlDocPtr parse_both(const text *t)
{
    /* as HTML (what a browser does), errors on */
    xml_errs he = {0, 0, ""};
    xmlSetStructuredErrorFunc(&he, on_error);
    htmlDocPtr hd = htmlReadMemory(t->buf, (int)t->len, "report.html", "UTF-8",
                                   HTML_PARSE_NONET);
    ck_assert_ptr_nonnull(hd);
    ck_assert_msg(he.errors == 0, "HTML parse error: %s", he.first);
    xmlFreeDoc(hd);
    /* as XML: well-formed, with no error of any kind */
    xml_errs xe = {0, 0, ""};
    xmlSetStructuredErrorFunc(&xe, on_error);
    xmlDocPtr doc = xmlReadMemory(t->buf, (int)t->len, "report.html", "UTF-8",
                                  XML_PARSE_NONET);
    xmlSetStructuredErrorFunc(NULL, NULL);
    ck_assert_ptr_nonnull(doc);
    ck_assert_msg(xe.errors == 0 && xe.unknown_tags == 0, "XML error: %s", xe.first);
    return doc;
}

/* Every "http://" or "https://" is one of the two namespace URIs. */
static void only_namespace_uris(const char *s)
{
    static const char *const ok[] = {"http://www.w3.org/1999/xhtml\"",
                                     "http://www.w3.org/2000/svg\""};
    ck_assert_ptr_null(strstr(s, "https://"));
    for (const char *p = strstr(s, "http://"); p; p = strstr(p + 1, "http://")) {
        int good = 0;
        for (size_t i = 0; i < 2; i++)
            good |= strncmp(p, ok[i], strlen(ok[i])) == 0;
        ck_assert_msg(good, "external reference: %.60s", p);
    }
}

/* ---- report.txt ---------------------------------------------------- */

START_TEST(txt_width_caution_sections)
{
    report_fixture fx;
    fixture_init(&fx);
    text t = render(&fx.r, 0);
    size_t at;
    size_t w = longest_line(t.buf, &at);
    ck_assert_msg(w <= CAIRN_REPORT_TXT_WIDTH, "line %zu has %zu columns", at, w);
    /* the caution is the first thing in the report */
    ck_assert(strncmp(t.buf, "CAUTION", 7) == 0);
    char *sq = squeeze(t.buf);
    char *c = strstr(sq, caution);
    ck_assert_ptr_nonnull(c);
    ck_assert(c - sq < 20);
    /* sections, in order */
    static const char *const sections[] = {
        "1 The run", "2 Verdict", "3 Iterations", "4 Statistics", "5 Adjusted marks",
        "6 Observations: look here first", "7 Observations in load order",
        "8 Rejected and flagged observations", "9 Relative precision of connected marks"};
    const char *prev = sq;
    for (size_t i = 0; i < sizeof sections / sizeof sections[0]; i++) {
        const char *s = strstr(prev, sections[i]);
        ck_assert_msg(s != NULL, "section %s missing or out of order", sections[i]);
        prev = s;
    }
    /* run information */
    ck_assert_ptr_nonnull(strstr(sq, fx.files[0].sha256));
    ck_assert_ptr_nonnull(strstr(sq, "4803 bytes"));
    ck_assert_ptr_nonnull(strstr(sq, "fenwick/../shared/day1.cfb [path contains '..']"));
    ck_assert_ptr_nonnull(strstr(sq, "2024-05-01 12:00:00 UTC"));
    /* verdict, warnings, contents */
    ck_assert_ptr_nonnull(strstr(sq, "REVIEW global test pass | 1 flagged, 1 rejected, 1 "
                                     "unchecked | tolerance FAIL"));
    ck_assert_ptr_nonnull(strstr(sq, "1 observation was REJECTED"));
    ck_assert_ptr_nonnull(strstr(sq, "1 observation is UNCHECKED"));
    ck_assert_ptr_nonnull(strstr(sq, "A-very-long-mark-identifier-of-40-chars."));
    ck_assert_ptr_nonnull(strstr(sq, "likely cause: transposed digits"));
    ck_assert_ptr_nonnull(strstr(sq, "estimated blunder -0.1369 m"));
    ck_assert_ptr_nonnull(strstr(sq, "day1.cfb:12"));
    ck_assert_ptr_nonnull(strstr(sq, "45-30-10.1"));      /* observed direction in dms */
    ck_assert_ptr_nonnull(strstr(sq, "118-30-00"));       /* ellipse azimuth */
    ck_assert_ptr_nonnull(strstr(sq, "Q1 held 5000.0000 10000.0000 12.3450 held held held"));
    /* "look here first": the largest |w| first */
    const char *look = strstr(sq, "look here first");
    ck_assert(strstr(look, "7 slope +75.95") < strstr(look, "4 direction +8.29"));
    free(sq);
    free(t.buf);
}
END_TEST

START_TEST(txt_failed_test_gon_and_long_words)
{
    report_fixture fx;
    fixture_init(&fx);
    char longpath[1500], longtitle[400];
    memset(longpath, 'p', sizeof longpath - 1);
    longpath[sizeof longpath - 1] = 0;
    memset(longtitle, 'T', sizeof longtitle - 1);
    longtitle[sizeof longtitle - 1] = 0;
    fx.files[0].path = longpath;
    fx.r.title = longtitle;
    fx.r.verdict.pass = 0;
    fx.r.verdict.statistic = 31.5;
    fx.r.angle_unit = CAIRN_ANGLE_GON;
    fx.r.length_unit = "usft";
    fx.r.length_factor = 1200.0 / 3937.0;
    fx.obs[3].file = longpath;
    text t = render(&fx.r, 0);
    size_t at, w = longest_line(t.buf, &at);
    ck_assert_msg(w <= CAIRN_REPORT_TXT_WIDTH, "line %zu has %zu columns", at, w);
    char *sq = squeeze(t.buf);
    ck_assert_ptr_nonnull(strstr(sq, "The GLOBAL TEST FAILED"));
    ck_assert_ptr_nonnull(strstr(sq, "global test FAIL"));
    ck_assert_ptr_nonnull(strstr(sq, "mgon"));
    ck_assert_ptr_nonnull(strstr(sq, "usft"));
    /* 45.5028° = 50.55867 gon */
    ck_assert_ptr_nonnull(strstr(sq, "50.55867"));
    free(sq);
    free(t.buf);
}
END_TEST

/* The expected number of chance failures, alpha x tests (the meaning of
 * the significance level), in the statistics of both reports; the
 * caution says so when the failures are no more than chance explains:
 * 5000 tests at alpha 0.001 give 5 expected, and 7 failures lie within
 * 5 + 3 sqrt(5) = 11.7, 23 do not. */
START_TEST(chance_failures_stated)
{
    report_fixture fx;
    fixture_init(&fx);
    text t = render(&fx.r, 0);
    char *sq = squeeze(t.buf);
    /* 12 observations, 1 unchecked: 11 tests, 0.011 expected, no caution */
    ck_assert_ptr_nonnull(strstr(sq, "failures expected by chance 0.011 (alpha 0.001 x 11 "
                                     "w-tests)"));
    ck_assert_ptr_null(strstr(sq, "BY CHANCE"));
    free(sq);
    free(t.buf);

    fx.r.verdict.nobs = 5001;
    fx.r.verdict.nflagged = 3;
    fx.r.verdict.nrejected = 4;
    t = render(&fx.r, 0);
    sq = squeeze(t.buf);
    ck_assert_ptr_nonnull(strstr(sq, "failures expected by chance 5 (alpha 0.001 x 5000 "
                                     "w-tests)"));
    ck_assert_ptr_nonnull(strstr(sq, "About 5 of the 5000 w-tests fail BY CHANCE alone at "
                                     "alpha 0.001, and 7 failed here"));
    ck_assert_ptr_nonnull(strstr(sq, "0.05 / 5000"));
    free(sq);
    free(t.buf);
    t = render(&fx.r, 1);
    ck_assert_ptr_nonnull(strstr(t.buf, "BY CHANCE"));
    ck_assert_ptr_nonnull(strstr(t.buf, "failures expected by chance"));
    free(t.buf);

    fx.r.verdict.nrejected = 20;
    t = render(&fx.r, 0);
    sq = squeeze(t.buf);
    ck_assert_ptr_null(strstr(sq, "BY CHANCE"));
    free(sq);
    free(t.buf);
}
END_TEST

START_TEST(txt_and_html_empty_report)
{
    cairn_report r;
    memset(&r, 0, sizeof r);
    text t = render(&r, 0);
    ck_assert(strncmp(t.buf, "CAUTION", 7) == 0);
    ck_assert_ptr_nonnull(strstr(t.buf, "NO GLOBAL TEST"));
    ck_assert_ptr_nonnull(strstr(t.buf, "tolerance none set"));
    ck_assert_ptr_nonnull(strstr(t.buf, "did NOT CONVERGE"));
    free(t.buf);
    t = render(&r, 1);
    xmlDocPtr doc = xmlReadMemory(t.buf, (int)t.len, "report.html", "UTF-8", XML_PARSE_NONET);
    ck_assert_ptr_nonnull(doc);
    xmlFreeDoc(doc);
    free(t.buf);
}
END_TEST

START_TEST(txt_free_datum_undetermined)
{
    report_fixture fx;
    fixture_init(&fx);
    fx.r.opt.datum = "free: minimal constraints chosen by the program";
    fx.r.opt.fixed = "N7.e N7.n N8.e";
    fx.marks[2].fixed = CAIRN_REPORT_E | CAIRN_REPORT_N;
    fx.marks[2].sd_e = fx.marks[2].sd_n = NAN;
    fx.marks[4].role = CAIRN_REPORT_UNDETERMINED;
    fx.r.verdict.converged = 0;
    text t = render(&fx.r, 0);
    char *sq = squeeze(t.buf);
    ck_assert_ptr_nonnull(strstr(sq, "fixed by datum N7.e N7.n N8.e"));
    ck_assert_ptr_nonnull(strstr(sq, "N7 adjusted 5085.4321 10091.8765 12.8774 fixed fixed "
                                     "0.0036"));
    ck_assert_ptr_nonnull(strstr(sq, "1 mark was left UNDETERMINED"));
    ck_assert_ptr_nonnull(strstr(sq, "N8 UNDETERMINED"));
    ck_assert_ptr_nonnull(strstr(sq, "did NOT CONVERGE"));
    ck_assert_ptr_nonnull(strstr(sq, "REVIEW"));
    free(sq);
    free(t.buf);
    t = render(&fx.r, 1);
    xmlDocPtr doc = parse_both(&t);
    ck_assert(xpath_count(doc, "count(//s:g[@class='cn-mk cn-mk-undetermined']"
                               "/s:path[@class='cn-sym-und'])") == 1);
    xmlFreeDoc(doc);
    free(t.buf);
}
END_TEST

/* Many observations: the text grows linearly (no table is quadratic). */
START_TEST(txt_linear_size)
{
    size_t len[2];
    for (int k = 0; k < 2; k++) {
        report_fixture fx;
        fixture_init(&fx);
        size_t n = k == 0 ? 2000 : 4000;
        cairn_report_obs *o = malloc(n * sizeof *o);
        ck_assert_ptr_nonnull(o);
        for (size_t i = 0; i < n; i++) {
            fx_obs(&o[i], i + 1, "horiz", 0, (int)(i % 5), -1, (int)((i + 1) % 5), 100.0,
                   0.001 * sin((double)i), 0.002, 0.5, CAIRN_REPORT_OK, "big.cfb", (int)i + 1);
        }
        fx.r.obs = o;
        fx.r.nobs = n;
        text t = render(&fx.r, 0);
        len[k] = t.len;
        free(t.buf);
        free(o);
    }
    ck_assert(len[1] < 2 * len[0] + 4000);
}
END_TEST

/* ---- report.html --------------------------------------------------- */

START_TEST(html_well_formed_self_contained)
{
    report_fixture fx;
    fixture_init(&fx);
    text t = render(&fx.r, 1);
    ck_assert(strncmp(t.buf, "<!DOCTYPE html>\n", 16) == 0);
    xmlDocPtr doc = parse_both(&t);
    only_namespace_uris(t.buf);
    /* no external resources: no src, no link elements, only #fragment hrefs */
    ck_assert(xpath_count(doc, "count(//@src)") == 0);
    ck_assert(xpath_count(doc, "count(//h:link)") == 0);
    ck_assert(xpath_count(doc, "count(//@href[not(starts-with(., '#'))])") == 0);
    ck_assert(xpath_count(doc, "count(//h:style)") >= 1);
    ck_assert(xpath_count(doc, "count(//h:script)") == 1);
    /* the caution is the first element of the body and holds the text */
    ck_assert(xpath_count(doc, "count(/h:html/h:body/*[1][@id='caution'])") == 1);
    char *sq = squeeze(t.buf);
    ck_assert_ptr_nonnull(strstr(sq, caution));
    ck_assert(strstr(sq, caution) < strstr(sq, "<h1>"));
    free(sq);
    /* sections */
    static const char *const ids[] = {"run", "verdict", "iterations", "statistics", "marks",
                                      "look", "observations", "suspects", "pairs"};
    for (size_t i = 0; i < sizeof ids / sizeof ids[0]; i++) {
        char q[128];
        snprintf(q, sizeof q, "count(//h:div[@class='cn-sec'][@id='%s']/h:h2)", ids[i]);
        ck_assert_msg(xpath_count(doc, q) == 1, "section %s", ids[i]);
    }
    /* sortable tables with one row per observation */
    ck_assert(xpath_count(doc, "count(//h:table[contains(@class,'cn-obs')]/h:tbody/h:tr)")
              == FX_NOBS);
    ck_assert(xpath_count(doc, "count(//h:table[contains(@class,'cn-sort')])") >= 4);
    /* the three figures */
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-plan'])") == 1);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-hist'])") == 1);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-conv'])") == 1);
    /* one ellipse per mark with an ellipse (every mark but the held Q1) */
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-plan']//s:ellipse[@class='cn-ell'])")
              == 4);
    /* each ellipse and mark has a hover title */
    ck_assert(xpath_count(doc, "count(//s:ellipse[@class='cn-ell'][s:title])") == 4);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-plan']/s:g[starts-with(@class,'cn-mk ')]"
                               "[s:title])") == 5);
    /* lines: distinct pairs; the rejected slope N7-long and flagged Q1-N7 drawn distinctly */
    ck_assert(xpath_count(doc, "count(//s:line[@class='cn-ln cn-ln-rej'][s:title])") == 1);
    ck_assert(xpath_count(doc, "count(//s:line[@class='cn-ln cn-ln-flag'][s:title])") == 1);
    /* held drawn with its own symbol; scale bar, north arrow, legend */
    ck_assert(xpath_count(doc, "count(//s:path[@class='cn-sym-held'])") >= 1);
    ck_assert(xpath_count(doc, "count(//s:g[@class='cn-scale'])") == 1);
    ck_assert(xpath_count(doc, "count(//s:g[@class='cn-north'])") == 1);
    ck_assert(xpath_count(doc, "count(//s:g[@class='cn-legend'])") == 1);
    /* histogram bars and one point per iteration */
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-hist']//s:rect[contains(@class,"
                               "'cn-bar')])") >= 3);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-conv']//s:circle)") == 4);
    /* the magnification is stated */
    ck_assert_ptr_nonnull(strstr(t.buf, "magnified \u00d71000"));
    ck_assert_ptr_nonnull(strstr(t.buf, "@media print"));
    xmlFreeDoc(doc);
    free(t.buf);
}
END_TEST

START_TEST(html_escapes_hostile_strings)
{
    report_fixture fx;
    fixture_init(&fx);
    fx.r.title = "</title><script>alert(1)</script> & \x01 \xff\xfe bad UTF-8 ]]>";
    fx.marks[2].id = "N<7>&\"'";
    fx.obs[3].diagnosis = "<b>bold</b> ]]> --> <!--";
    fx.r.command_line = "cairn adjust 'a b.xml' \"--x\" <in >out";
    text t = render(&fx.r, 1);
    xmlDocPtr doc = parse_both(&t);
    ck_assert(xpath_count(doc, "count(//h:script)") == 1);
    xmlFreeDoc(doc);
    free(t.buf);
}
END_TEST

START_TEST(html_plan_thinned_above_limit)
{
    report_fixture fx;
    fixture_init(&fx);
    size_t n = CAIRN_REPORT_PLAN_MAX_MARKS + 1;
    cairn_report_mark *m = calloc(n, sizeof *m);
    ck_assert_ptr_nonnull(m);
    for (size_t i = 0; i < n; i++)
        fx_mark(&m[i], "M", CAIRN_REPORT_ADJUSTED, (double)(i % 150) * 10.0,
                (double)(i / 150) * 10.0, 0, 0.002, 0.004, 0.003, 0.5);
    fx.r.marks = m;
    fx.r.nmarks = n;
    text t = render(&fx.r, 1);
    xmlDocPtr doc = parse_both(&t);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-plan']//s:line)") == 0);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-plan']//s:ellipse)") == 0);
    ck_assert(xpath_count(doc, "count(//s:svg[@id='cn-plan']//s:circle[@class='cn-dot'])")
              == (double)n);
    ck_assert_ptr_nonnull(strstr(t.buf, "the plan is thinned and shows the marks only"));
    xmlFreeDoc(doc);
    free(t.buf);
    free(m);
}
END_TEST

START_TEST(magnification_round_and_stated)
{
    report_fixture fx;
    fixture_init(&fx);
    /* extent 260.7 m (e 5000–5260.7), largest semi-axis 0.0090 m:
     * 0.05 · 260.7 / 0.009 = 1448 → the round number below, 1000 */
    ck_assert_double_eq_tol(cairn_report_magnification(&fx.r), 1000.0, 1e-9);
    fx.r.ellipse_magnification = 250;
    ck_assert_double_eq_tol(cairn_report_magnification(&fx.r), 250.0, 1e-12);
    text t = render(&fx.r, 1);
    ck_assert_ptr_nonnull(strstr(t.buf, "magnified \u00d7250"));
    free(t.buf);
    cairn_report r;
    memset(&r, 0, sizeof r);
    ck_assert(cairn_report_magnification(&r) == 1.0);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("report");
    TCase *tc = tcase_create("sha256");
    tcase_add_loop_test(tc, sha256_fips_vectors_memory, 0, 3);
    tcase_add_loop_test(tc, sha256_fips_vectors_file, 0, 3);
    tcase_add_test(tc, sha256_million_a);
    tcase_add_test(tc, sha256_missing_file);
    tcase_add_test(tc, dotdot_components);
    suite_add_tcase(s, tc);
    tc = tcase_create("txt");
    tcase_add_test(tc, txt_width_caution_sections);
    tcase_add_test(tc, txt_failed_test_gon_and_long_words);
    tcase_add_test(tc, txt_and_html_empty_report);
    tcase_add_test(tc, chance_failures_stated);
    tcase_add_test(tc, txt_free_datum_undetermined);
    tcase_add_test(tc, txt_linear_size);
    suite_add_tcase(s, tc);
    tc = tcase_create("html");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, html_well_formed_self_contained);
    tcase_add_test(tc, html_escapes_hostile_strings);
    tcase_add_test(tc, html_plan_thinned_above_limit);
    tcase_add_test(tc, magnification_round_and_stated);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
