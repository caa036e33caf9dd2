/* test_quality.c — Check suite for the analysis of an adjustment
 * (src/quality/analysis*.c, pairs.c, snoop.c) and results.xml.
 *
 * Outside sources of the numeric checks:
 *  - Σ rᵢ = n − u (REFERENCES.md §2, Baarda 1968): the sum of the
 *    redundancy numbers is the degrees of freedom, on every network of
 *    tests/integration (networks/ and blunders/), to 1e-9·max(1, dof);
 *  - the planted blunders of tests/integration/blunders/ (make_blunders.py:
 *    truth + noise with fixed seeds, then a known mistake): iterative
 *    snooping removes exactly the observation on the line after
 *    "# planted", and the global test then passes (the numpy reference
 *    solver agrees: tests/integration/test-quality.sh);
 *  - the confidence factors of --scale-by-aposteriori are the F and t
 *    quantiles of REFERENCES.md §3.2 (computed here by cairn's own GSL
 *    quantiles, whose tests are in test_stats.c);
 *  - results.xml validates against share/cairn-results.xsd with libxml2's
 *    xmlSchemaValidateDoc (the schema is the outside contract);
 *  - the held-mark test of a levelling line between two bench marks is
 *    its misclosure over the misclosure's standard deviation, squared
 *    (closed form, see held_mark_test_levelling_line).
 * Run from the top of the source tree (make check-unit does). */
#include <check.h>
#include <libxml/parser.h>
#include <libxml/xmlschemas.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cairn/cairn.h"
#include "cairn/output.h"
#include "cairn/quality.h"
#include "cairn/solve.h"

static const char *const networks[] = {
    "tests/integration/networks/angles_azimuths.cfb",
    "tests/integration/networks/dim1_trigrise.cfb",
    "tests/integration/networks/dim2_reduced.cfb",
    "tests/integration/networks/dirs_dists.cfb",
    "tests/integration/networks/explicit_sd.cfb",
    "tests/integration/networks/grid_large.cfb",
    "tests/integration/networks/level_km.cfb",
    "tests/integration/networks/threed_zen.cfb",
    "tests/integration/networks/trilat_weighted.cfb",
    "tests/integration/networks/units_ft_deg.cfb",
    "tests/integration/networks/units_usft_gon.cfb",
    "tests/integration/networks/weighted_control.cfb",
    "tests/integration/blunders/blunder_distance.cfb",
    "tests/integration/blunders/blunder_direction.cfb",
    "tests/integration/blunders/blunder_th.cfb",
    "tests/integration/blunders/blunder_rise.cfb",
    "tests/integration/blunders/blunder_two.cfb",
};
#define NNET (sizeof networks / sizeof networks[0])

typedef struct {
    cairn_error err;
    cairn_net *net;
    cairn_problem *prob;
    cairn_adjustment *adj;
    cairn_analysis *an;
} run;

static void run_free(run *r)
{
    cairn_analysis_free(&r->an);
    cairn_adjustment_free(&r->adj);
    cairn_problem_free(&r->prob);
    cairn_net_free(&r->net);
    cairn_error_clear(&r->err);
}

static void show(const cairn_error *err)
{
    char buf[CAIRN_MSG_MAX + CAIRN_PATH_MAX + 64];
    for (int i = 0; i < err->ndiag; i++) {
        cairn_diag_format(&err->diag[i], buf, sizeof buf);
        fprintf(stderr, "%s\n", buf);
    }
}

static int run_network(run *r, const char *path, const cairn_analysis_options *opt)
{
    memset(r, 0, sizeof *r);
    ck_assert_int_eq(cairn_error_init(&r->err), 0);
    int rc = cairn_load_project(path, &r->net, &r->err);
    if (!rc)
        rc = cairn_problem_build(r->net, 0, &r->prob, &r->err);
    if (!rc)
        rc = cairn_adjust(r->net, r->prob, NULL, &r->adj, &r->err);
    if (!rc)
        rc = cairn_analyse(r->adj, opt, &r->an, &r->err);
    if (rc)
        show(&r->err);
    return rc;
}

/* Σr = dof before and after snooping (REFERENCES.md §2). */
START_TEST(sum_redundancy_is_dof)
{
    cairn_analysis_options opt;
    cairn_analysis_options_default(&opt);
    for (int mode = 0; mode < 2; mode++) {
        opt.snoop = mode ? CAIRN_SNOOP_ITERATE : CAIRN_SNOOP_OFF;
        run r;
        ck_assert_msg(run_network(&r, networks[_i], &opt) == 0, "%s", networks[_i]);
        double tol = 1e-9 * fmax(1.0, (double)r.an->dof);
        ck_assert_msg(fabs(r.an->sum_r - r.an->dof) <= tol, "%s: sum r %.12g, dof %d",
                      networks[_i], r.an->sum_r, r.an->dof);
        ck_assert_int_eq(r.an->dof, (int)r.an->nused - r.adj->nunknowns);
        ck_assert_int_eq(r.an->dof, r.adj->dof);
        for (size_t i = 0; i < r.an->nobs; i++) {
            if (r.an->status[i] == CAIRN_OBS_REJECTED) {
                ck_assert(isnan(r.an->r[i]) && isnan(r.an->w[i]));
                continue;
            }
            ck_assert_msg(r.an->r[i] > -1e-9 && r.an->r[i] < 1 + 1e-9, "r %g", r.an->r[i]);
        }
        run_free(&r);
    }
}
END_TEST

/* Line numbers of the observations after "# planted" comments. */
static int planted_lines(const char *path, int *lines, int max)
{
    FILE *f = fopen(path, "r");
    char buf[1024];
    int n = 0, ln = 0, next = 0;
    ck_assert_ptr_nonnull(f);
    while (fgets(buf, sizeof buf, f)) {
        ln++;
        if (next && n < max)
            lines[n++] = ln;
        next = !strncmp(buf, "# planted", 9);
    }
    fclose(f);
    return n;
}

START_TEST(iterate_removes_the_planted_blunders)
{
    const char *path = networks[_i];
    int want[4];
    int nwant = planted_lines(path, want, 4);
    ck_assert_int_gt(nwant, 0);
    run r;
    ck_assert_int_eq(run_network(&r, path, NULL), 0);
    ck_assert_uint_eq(r.an->nrejections, (size_t)nwant);
    for (int k = 0; k < nwant; k++) {
        const cairn_obs *o = &r.prob->obs[r.an->rejections[k].obs];
        ck_assert_int_eq(o->src.line, want[k]);
        ck_assert_int_eq(r.an->status[r.an->rejections[k].obs], CAIRN_OBS_REJECTED);
        ck_assert(fabs(r.an->rejections[k].w) > r.an->wcrit);
    }
    ck_assert(r.an->global.tested && r.an->global.pass);
    ck_assert_int_eq(r.an->nflagged, 0);
    ck_assert_int_eq(cairn_analysis_alarm(r.an), 1);   /* FORMAT.md: exit 1 */
    /* the reported tests use a factor at the final solution (snoop.c):
     * then Σr = dof to rounding; a factor of a round's starting point
     * would leave about 1e-6 (REFERENCES.md §2) */
    ck_assert_msg(fabs(r.an->sum_r - r.an->dof) < 1e-9 * r.an->dof, "sum r %.12g, dof %d",
                  r.an->sum_r, r.an->dof);
    run_free(&r);
}
END_TEST

/* Snooping "flag" flags the planted reading and leaves the solution alone. */
START_TEST(flag_mode_flags_only)
{
    cairn_analysis_options opt;
    cairn_analysis_options_default(&opt);
    opt.snoop = CAIRN_SNOOP_FLAG;
    run r;
    ck_assert_int_eq(run_network(&r, "tests/integration/blunders/blunder_distance.cfb", &opt), 0);
    int want;
    planted_lines("tests/integration/blunders/blunder_distance.cfb", &want, 1);
    ck_assert_uint_eq(r.an->nrejections, 0);
    int found = 0;
    for (size_t i = 0; i < r.an->nobs; i++)
        if (r.prob->obs[i].src.line == want && r.prob->obs[i].kind == CAIRN_OBS_HORIZ)
            found = r.an->status[i] == CAIRN_OBS_FLAGGED;
    ck_assert(found);
    ck_assert_int_eq(cairn_analysis_alarm(r.an), 1);
    run_free(&r);
}
END_TEST

/* The analysis uses up the adjustment's factor (the selected inverse is
 * computed over it) and releases it: a second analysis of the same
 * adjustment is refused, not computed from a stale factor. */
START_TEST(analysed_once)
{
    run r;
    ck_assert_int_eq(run_network(&r, "tests/integration/networks/dirs_dists.cfb", NULL), 0);
    ck_assert_ptr_null(cairn_adjustment_factor(r.adj));
    cairn_analysis *again = (cairn_analysis *)1;
    cairn_error err;
    cairn_error_init(&err);
    ck_assert_int_eq(cairn_analyse(r.adj, NULL, &again, &err), CAIRN_ANALYSIS_EINTERNAL);
    ck_assert_ptr_null(again);
    ck_assert_int_ge(err.ndiag, 1);
    ck_assert_ptr_nonnull(strstr(err.diag[0].message, "analysed once"));
    cairn_error_clear(&err);
    run_free(&r);
}
END_TEST

START_TEST(clean_network_no_alarm)
{
    run r;
    ck_assert_int_eq(run_network(&r, "tests/integration/networks/dirs_dists.cfb", NULL), 0);
    ck_assert_uint_eq(r.an->nrejections, 0);
    ck_assert_int_eq(r.an->nflagged, 0);
    ck_assert_int_eq(cairn_analysis_alarm(r.an), 0);   /* FORMAT.md: exit 0 */
    /* REFERENCES.md §3.1: 2.4477 at 95 %, 1.960 for 1-D */
    ck_assert_double_eq_tol(r.an->k2, 2.4477, 1e-4);
    ck_assert_double_eq_tol(r.an->k1, 1.9600, 1e-4);
    run_free(&r);
}
END_TEST

START_TEST(aposteriori_factors)
{
    cairn_analysis_options opt;
    cairn_analysis_options_default(&opt);
    opt.scale_aposteriori = 1;
    run r;
    ck_assert_int_eq(run_network(&r, "tests/integration/networks/dirs_dists.cfb", &opt), 0);
    int dof = r.an->dof;
    /* REFERENCES.md §3.2: √(2 F(0.95; 2, r)); t for 1-D; Pope's τ */
    ck_assert_double_eq_tol(r.an->k2, sqrt(2.0 * cairn_f_quantile(0.95, 2, dof)), 1e-12);
    ck_assert_double_eq_tol(r.an->k1, cairn_t_quantile(0.975, dof), 1e-12);
    ck_assert_double_eq_tol(r.an->taucrit, cairn_tau_critical(r.an->alpha, dof), 1e-12);
    ck_assert_double_eq_tol(r.an->variance_factor, r.an->vtpv / dof, 1e-12);
    /* sd scale with √σ0² exactly: compare with an a priori run */
    run q;
    ck_assert_int_eq(run_network(&q, "tests/integration/networks/dirs_dists.cfb", NULL), 0);
    for (size_t m = 0; m < r.net->nmarks; m++)
        if (isfinite(q.an->sd_e[m]))
            ck_assert_double_eq_tol(r.an->sd_e[m], q.an->sd_e[m] * sqrt(r.an->variance_factor),
                                    1e-12);
    run_free(&q);
    run_free(&r);
}
END_TEST

/* results.xml against share/cairn-results.xsd (xmlSchemaValidateDoc). */
START_TEST(results_xml_validates)
{
    run r;
    ck_assert_int_eq(run_network(&r, networks[_i], NULL), 0);
    char dir[] = "/tmp/cairn-test-quality-XXXXXX";
    ck_assert_ptr_nonnull(mkdtemp(dir));
    ck_assert_int_eq(cairn_write_results(dir, r.adj, r.an, CAIRN_FORMAT_XML | CAIRN_FORMAT_CSV,
                                         &r.err), 0);
    char path[sizeof dir + 32];
    snprintf(path, sizeof path, "%s/results.xml", dir);
    xmlSchemaParserCtxtPtr pc = xmlSchemaNewParserCtxt("share/cairn-results.xsd");
    ck_assert_ptr_nonnull(pc);
    xmlSchemaPtr schema = xmlSchemaParse(pc);
    ck_assert_ptr_nonnull(schema);
    xmlSchemaValidCtxtPtr vc = xmlSchemaNewValidCtxt(schema);
    xmlDocPtr doc = xmlReadFile(path, NULL, XML_PARSE_NONET);
    ck_assert_ptr_nonnull(doc);
    ck_assert_msg(xmlSchemaValidateDoc(vc, doc) == 0, "%s does not validate", networks[_i]);
    xmlFreeDoc(doc);
    xmlSchemaFreeValidCtxt(vc);
    xmlSchemaFree(schema);
    xmlSchemaFreeParserCtxt(pc);
    const char *names[] = {"results.xml", "marks.csv", "observations.csv"};
    for (int k = 0; k < 3; k++) {
        snprintf(path, sizeof path, "%s/%s", dir, names[k]);
        ck_assert_int_eq(unlink(path), 0);
    }
    rmdir(dir);
    run_free(&r);
}
END_TEST

/* results.xml escapes what a file name may hold (& < > ", a tab, a
 * carriage return) and reads back to the same text (XML 1.0 §2.4, §3.3.3:
 * attribute values); a control character and a byte that is not UTF-8,
 * which XML 1.0 cannot hold (§2.2), come back as '?' and the file still
 * parses. */
START_TEST(results_xml_escapes_source)
{
    run r;
    ck_assert_int_eq(run_network(&r, networks[0], NULL), 0);
    const char *hostile = "a&b<c>\"d\te'f\rg\x01h\xffi\xc3\xa9.cfb";
    const char *readback = "a&b<c>\"d\te'f\rg?h?i\xc3\xa9.cfb";
    r.prob->obs[0].src.file = hostile;
    char dir[] = "/tmp/cairn-test-quality-XXXXXX";
    ck_assert_ptr_nonnull(mkdtemp(dir));
    ck_assert_int_eq(cairn_write_results(dir, r.adj, r.an, CAIRN_FORMAT_XML, &r.err), 0);
    char path[sizeof dir + 32];
    snprintf(path, sizeof path, "%s/results.xml", dir);
    xmlDocPtr doc = xmlReadFile(path, NULL, XML_PARSE_NONET);
    ck_assert_ptr_nonnull(doc);
    xmlNodePtr root = xmlDocGetRootElement(doc), n;
    xmlChar *got = NULL;
    for (n = root->children; n && !got; n = n->next)
        if (n->type == XML_ELEMENT_NODE && !xmlStrcmp(n->name, BAD_CAST "observation"))
            got = xmlGetProp(n, BAD_CAST "source");
    ck_assert_ptr_nonnull(got);
    char want[128];
    snprintf(want, sizeof want, "%s:%d", readback, r.prob->obs[0].src.line);
    ck_assert_str_eq((const char *)got, want);
    xmlFree(got);
    xmlFreeDoc(doc);
    ck_assert_int_eq(unlink(path), 0);
    rmdir(dir);
    run_free(&r);
}
END_TEST

/* The held-mark test on a levelling line between two held bench marks,
 * A - P - B, one rise each way of 1 km at 1 mm/km: the only thing the
 * observations test is the line's misclosure w = dh1 + dh2 − (HB − HA),
 * whose variance is σ1² + σ2²; so the test of either bench mark is
 * T = w² / (σ1² + σ2²), χ²(1), and its shift is w for B and −w for A
 * (the misclosure test of a levelling line between bench marks, the
 * textbook check of a line's fit to its control: common practice; the
 * closed form follows from Teunissen's q = 1 test with C the column of
 * the held height, dof = 1). Both fail alike. */
START_TEST(held_mark_test_levelling_line)
{
    char dir[] = "/tmp/cairn-held-XXXXXX", path[64];
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(path, sizeof path, "%s/line.cfb", dir);
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs("units m dms\n"
          "instrument LV1 per-km 1mm\n"
          "mark A h 100.000 hold h\n"
          "mark B h 105.000 hold h\n"
          "mark P h 102.0\n"
          "rise A P 2.0123 km 1.0 inst LV1\n"
          "rise P B 2.9957 km 1.0 inst LV1\n", f);
    ck_assert_int_eq(fclose(f), 0);
    cairn_analysis_options opt;
    cairn_analysis_options_default(&opt);
    opt.snoop = CAIRN_SNOOP_FLAG;
    run r;
    ck_assert_int_eq(run_network(&r, path, &opt), 0);
    const double w = 2.0123 + 2.9957 - 5.0, var = 2e-6, T = w * w / var;
    ck_assert_uint_eq(r.an->ncontrol, 2);
    for (size_t k = 0; k < 2; k++) {
        const cairn_control_test *t = &r.an->control[k];
        const char *id = r.net->marks[t->mark].id;
        ck_assert_int_eq(t->q, 1);
        ck_assert_int_eq(t->nobs, 1);
        ck_assert_double_eq_tol(t->statistic, T, 1e-9 * T);
        ck_assert_double_eq_tol(t->critical, pow(cairn_w_critical(0.001), 2), 1e-9);
        ck_assert_int_eq(t->pass, 0);
        ck_assert_double_eq_tol(t->shift[2], strcmp(id, "B") ? -w : w, 1e-9);
        ck_assert(isnan(t->shift[0]) && isnan(t->shift[1]));
        ck_assert_int_ge(t->alike, 0);
        ck_assert_int_ne(t->alike, t->mark);
    }
    run_free(&r);
    ck_assert_int_eq(unlink(path), 0);
    ck_assert_int_eq(rmdir(dir), 0);
}
END_TEST

static Suite *quality_suite(void)
{
    Suite *s = suite_create("quality");
    TCase *t = tcase_create("analysis");
    tcase_set_timeout(t, 60);
    tcase_add_loop_test(t, sum_redundancy_is_dof, 0, (int)NNET);
    tcase_add_loop_test(t, iterate_removes_the_planted_blunders, 12, (int)NNET);
    tcase_add_test(t, flag_mode_flags_only);
    tcase_add_test(t, clean_network_no_alarm);
    tcase_add_test(t, analysed_once);
    tcase_add_test(t, aposteriori_factors);
    tcase_add_loop_test(t, results_xml_validates, 0, (int)NNET);
    tcase_add_test(t, results_xml_escapes_source);
    tcase_add_test(t, held_mark_test_levelling_line);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(quality_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
