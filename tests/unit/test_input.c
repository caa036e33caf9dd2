/* The input stage: one network written as an XML project and as a field
 * book loads into identical models, plus field-book edge cases.
 * Run from the repository root (fixtures in tests/unit/data/). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/cairn.h"

#define FT 0.3048                       /* 85 FR 62698 (2020) */
#define GON (CAIRN_PI / 200.0)          /* IEEE/ASTM SI 10-2002 §3.3.3 */
#define SEC (CAIRN_PI / 648000.0)

static cairn_net *load(const char *path, int expect_rc)
{
    cairn_error err;
    cairn_net *net = NULL;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    int rc = cairn_load_project(path, &net, &err);
    char line[2048];
    for (int i = 0; i < err.ndiag; i++) {
        cairn_diag_format(&err.diag[i], line, sizeof line);
        if (expect_rc == 0)
            fprintf(stderr, "%s\n", line);
    }
    ck_assert_msg(rc == expect_rc, "%s: rc %d, %d errors", path, rc, err.nerrors);
    cairn_error_clear(&err);
    return net;
}

static cairn_net *parse(const char *text, cairn_error *err)
{
    cairn_net *net = cairn_net_new();
    ck_assert_ptr_nonnull(net);
    ck_assert_int_eq(cairn_error_init(err), 0);
    cairn_parse_fieldbook(net, "mem.cfb", text, strlen(text), 0, err);
    if (!err->nerrors)
        cairn_validate(net, err);
    return net;
}

static void same_sd(const cairn_sd *a, const cairn_sd *b)
{
    ck_assert(a->has == b->has);
    ck_assert(a->length == b->length && a->angle == b->angle && a->ppm == b->ppm);
}

/* Both syntaxes go through the same conversions, so equality is exact. */
START_TEST(xml_and_fieldbook_agree)
{
    cairn_net *x = load("tests/unit/data/equiv.xml", 0);
    cairn_net *f = load("tests/unit/data/equiv.cfb", 0);
    ck_assert_str_eq(x->title, f->title);
    ck_assert_str_eq(x->description, f->description);
    ck_assert_int_eq(x->length_unit, f->length_unit);
    ck_assert_int_eq(x->angle_unit, f->angle_unit);
    ck_assert_int_eq(x->length_unit, CAIRN_LENGTH_FT);
    ck_assert_int_eq(x->angle_unit, CAIRN_ANGLE_GON);
    const cairn_options *ox = &x->opt, *of = &f->opt;
    ck_assert_int_eq(ox->dimension, of->dimension);
    ck_assert(ox->refraction == of->refraction && ox->scale == of->scale);
    ck_assert(ox->confidence == of->confidence && ox->alpha == of->alpha);
    ck_assert(ox->power == of->power && ox->global_alpha == of->global_alpha);
    ck_assert_int_eq(ox->has_tolerance, of->has_tolerance);
    same_sd(&ox->tolerance, &of->tolerance);
    ck_assert_int_eq(ox->max_iterations, of->max_iterations);
    ck_assert_int_eq(ox->has_loop_allowance, of->has_loop_allowance);
    ck_assert(ox->loop_allowance == of->loop_allowance);

    ck_assert_uint_eq(x->nmarks, f->nmarks);
    for (size_t i = 0; i < x->nmarks; i++) {
        const cairn_mark *a = &x->marks[i], *b = &f->marks[i];
        ck_assert_str_eq(a->id, b->id);
        ck_assert(a->e == b->e && a->n == b->n && a->h == b->h);
        ck_assert_uint_eq(a->given, b->given);
        ck_assert_uint_eq(a->hold, b->hold);
        ck_assert(a->sd_en == b->sd_en && a->sd_h == b->sd_h);
        ck_assert((a->desc == NULL) == (b->desc == NULL));
        if (a->desc)
            ck_assert_str_eq(a->desc, b->desc);
        ck_assert((a->def.line == 0) == (b->def.line == 0));
    }
    ck_assert_uint_eq(x->ninsts, f->ninsts);
    for (size_t i = 0; i < x->ninsts; i++) {
        const cairn_instrument *a = &x->insts[i], *b = &f->insts[i];
        ck_assert_str_eq(a->id, b->id);
        ck_assert_int_eq(a->kind, b->kind);
        ck_assert_uint_eq(a->set, b->set);
        ck_assert(a->direction == b->direction && a->zenith == b->zenith);
        ck_assert(a->dist_a == b->dist_a && a->dist_b == b->dist_b);
        ck_assert(a->centring == b->centring && a->height == b->height);
        ck_assert(a->per_km == b->per_km && a->per_setup == b->per_setup);
    }
    ck_assert_uint_eq(x->nsetups, f->nsetups);
    for (size_t i = 0; i < x->nsetups; i++) {
        const cairn_setup *a = &x->setups[i], *b = &f->setups[i];
        ck_assert_int_eq(a->at, b->at);
        ck_assert_int_eq(a->inst, b->inst);
        ck_assert(a->ih == b->ih && a->ppm == b->ppm);
        ck_assert_int_eq(a->ndirections, b->ndirections);
    }
    ck_assert_int_eq(x->nsights, f->nsights);
    ck_assert_uint_eq(x->nobs, f->nobs);
    for (size_t i = 0; i < x->nobs; i++) {
        const cairn_obs *a = &x->obs[i], *b = &f->obs[i];
        ck_assert_int_eq(a->kind, b->kind);
        ck_assert_int_eq(a->at, b->at);
        ck_assert_int_eq(a->from, b->from);
        ck_assert_int_eq(a->to, b->to);
        ck_assert_int_eq(a->setup, b->setup);
        ck_assert_int_eq(a->sight, b->sight);
        ck_assert_int_eq(a->inst, b->inst);
        ck_assert_msg(a->value == b->value, "obs %zu value %.17g vs %.17g", i, a->value,
                      b->value);
        ck_assert(a->ih == b->ih && a->th == b->th && a->ppm == b->ppm);
        ck_assert_int_eq(a->face, b->face);
        ck_assert(a->km == b->km);
        ck_assert_int_eq(a->setups, b->setups);
        same_sd(&a->sd, &b->sd);
    }
    cairn_net_free(&x);
    cairn_net_free(&f);
    ck_assert_ptr_null(x);
}
END_TEST

/* The twin fixture, checked against hand-converted values, so that the
 * agreement above is not an agreement in error. */
START_TEST(fixture_values)
{
    cairn_net *n = load("tests/unit/data/equiv.cfb", 0);
    ck_assert_uint_eq(n->nmarks, 5);
    /* mark order = first appearance; HM-C5 is only sighted */
    ck_assert_str_eq(n->marks[4].id, "HM-C5");
    ck_assert_uint_eq(n->marks[4].given, 0);
    ck_assert_double_eq_tol(n->marks[0].e, 16404.200 * FT, 1e-9);
    ck_assert_str_eq(n->marks[0].desc, "pillar, west abutment");
    ck_assert_uint_eq(n->marks[1].hold, CAIRN_E | CAIRN_N);
    ck_assert_double_eq_tol(n->marks[2].sd_en, 0.004, 1e-15);
    ck_assert_str_eq(n->title, "Hollin Moss dam monitoring, epoch 3");
    ck_assert_int_eq(n->opt.dimension, 3);
    ck_assert_double_eq_tol(n->opt.tolerance.length, 0.005, 1e-15);
    ck_assert_double_eq_tol(n->opt.tolerance.ppm, 10, 1e-12);
    ck_assert_double_eq_tol(n->opt.loop_allowance, 0.003, 1e-15);
    ck_assert_double_eq_tol(n->insts[0].zenith, 0.001 * GON, 1e-18);
    ck_assert_double_eq_tol(n->insts[0].direction, 0.5 * SEC, 1e-18);

    /* First sight: direction, zenith, slope in that order, one sight no. */
    const cairn_obs *o = n->obs;
    ck_assert_int_eq(o[0].kind, CAIRN_OBS_DIRECTION);
    ck_assert_int_eq(o[1].kind, CAIRN_OBS_ZENITH);
    ck_assert_int_eq(o[2].kind, CAIRN_OBS_SLOPE);
    ck_assert_int_eq(o[0].sight, 0);
    ck_assert_int_eq(o[2].sight, 0);
    ck_assert_int_eq(o[3].sight, 1);
    ck_assert_double_eq_tol(o[1].value, 100.2210 * GON, 1e-14);
    ck_assert_double_eq_tol(o[2].value, 665.3120 * FT, 1e-10);
    ck_assert_double_eq_tol(o[2].ih, 4.921 * FT, 1e-12);
    ck_assert_double_eq_tol(o[2].th, 5.249 * FT, 1e-12);
    ck_assert_double_eq_tol(o[2].ppm, 3.2, 1e-12);
    /* second sight: its own ppm adds to the setup's; hz-sd in cc */
    ck_assert_double_eq_tol(o[5].ppm, 3.2 - 0.4, 1e-12);
    ck_assert_double_eq_tol(o[3].sd.angle, 1.5e-4 * GON, 1e-18);
    ck_assert_uint_eq(o[4].sd.has, 0);
    /* third sight: face 2 booked, and zen > 200 gon */
    ck_assert_int_eq(o[6].face, 2);
    ck_assert_int_eq(o[0].face, 1);
    /* setup 2 names no instrument: the only total station is the default */
    ck_assert_int_eq(n->setups[1].inst, 0);
    ck_assert_int_eq(n->setups[0].ndirections, 3);
    /* rises: km and setups; the instrument-free one keeps its sd */
    const cairn_obs *r = &n->obs[n->nobs - 3];
    ck_assert_int_eq(r[0].kind, CAIRN_OBS_RISE);
    ck_assert_double_eq_tol(r[0].km, 0.180, 1e-15);
    ck_assert_int_eq(r[1].setups, 3);
    ck_assert_double_eq_tol(r[2].sd.length, 0.0015, 1e-15);
    ck_assert_double_eq_tol(r[0].value, -5.1051 * FT, 1e-12);
    cairn_net_free(&n);
}
END_TEST

START_TEST(quotes_comments_tabs)
{
    cairn_error err;
    cairn_net *n = parse(
        "instrument T1 direction 2\" distance 1 mm + 2 ppm # sum with blanks, no quotes\n"
        "mark A\te 10\tn 20 desc \"nail # in kerb\"   # a comment after a record\n"
        "   # an indented comment line\n"
        "\n"
        "at A ih 1.5\n"
        "to B hz 0.0000 horiz 12.5#comment glued to a value\n",
        &err);
    ck_assert_int_eq(err.nerrors, 0);
    ck_assert_str_eq(n->marks[0].desc, "nail # in kerb");
    ck_assert_double_eq_tol(n->insts[0].direction, 2 * SEC, 1e-18);
    ck_assert_double_eq_tol(n->insts[0].dist_a, 0.001, 1e-15);
    ck_assert_double_eq_tol(n->insts[0].dist_b, 2, 1e-15);
    ck_assert_uint_eq(n->nobs, 2);
    ck_assert_double_eq_tol(n->obs[1].value, 12.5, 1e-15);
    ck_assert_int_eq(n->obs[1].src.line, 6);
    ck_assert_int_eq(n->obs[1].src.col, 16);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

START_TEST(crlf_and_bom)
{
    cairn_error err;
    cairn_net *n = parse("\xef\xbb\xbfmark A e 1 n 2\r\nmark B e 3 n 4\r\n"
                         "rise A B 0.25 sd 1mm\r\n", &err);
    ck_assert_int_eq(err.nerrors, 0);
    ck_assert_uint_eq(n->nmarks, 2);
    ck_assert(n->marks[1].n == 4);
    ck_assert_int_eq(n->marks[0].def.col, 6); /* columns count after the BOM */
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

START_TEST(errors_are_located)
{
    cairn_error err;
    cairn_net *n = parse("mark A e 1 n 2\n"
                         "mark B e 1,5 n 2\n"
                         "to A hz 1\n"
                         "mark A e 1 n 2\n"      /* the same again is fine */
                         "mark A e 1 n 3\n",
                         &err);
    ck_assert_int_eq(err.nerrors, 3);
    ck_assert_int_eq(err.diag[0].line, 2);
    ck_assert_int_eq(err.diag[0].col, 10);
    ck_assert_str_eq(err.diag[0].file, "mem.cfb");
    ck_assert_int_eq(err.diag[1].line, 3);
    ck_assert_int_eq(err.diag[2].line, 5);
    ck_assert_int_eq(err.diag[2].col, 6);
    ck_assert_ptr_nonnull(strstr(err.diag[2].message, "already defined differently"));
    /* the bad mark B was not added */
    ck_assert_int_eq(cairn_net_find_mark(n, "B"), -1);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

START_TEST(units_per_file)
{
    cairn_error err;
    cairn_net *n = parse("units usft deg\n"
                         "mark A e 1000 n 2000\n"
                         "units m gon\n"
                         "mark B e 1000 n 2000\n"
                         "azimuth A B 50 sd 1mgon\n",
                         &err);
    ck_assert_int_eq(err.nerrors, 0);
    ck_assert_double_eq_tol(n->marks[0].e, 1000 * 1200.0 / 3937.0, 1e-9); /* Mendenhall 1893 */
    ck_assert(n->marks[1].e == 1000);
    ck_assert_double_eq_tol(n->obs[0].value, CAIRN_PI / 4, 1e-15);       /* 50 gon */
    /* top-level file: the last units line is the project's */
    ck_assert_int_eq(n->length_unit, CAIRN_LENGTH_M);
    ck_assert_int_eq(n->angle_unit, CAIRN_ANGLE_GON);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

START_TEST(error_limit)
{
    cairn_error err;
    char *text = malloc(60 * 32 + 1);
    ck_assert_ptr_nonnull(text);
    text[0] = '\0';
    for (int i = 0; i < 60; i++)
        strcat(text, "bogus record\n");
    cairn_net *n = parse(text, &err);
    ck_assert_int_eq(err.nerrors, 60);    /* all counted */
    ck_assert_int_eq(err.ndiag, CAIRN_MAX_ERRORS); /* 50 kept */
    ck_assert(cairn_error_full(&err));
    free(text);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

START_TEST(include_depth_limit)
{
    cairn_error err;
    cairn_net *n = cairn_net_new();
    ck_assert_int_eq(cairn_error_init(&err), 0);
    const char *t = "fieldbook next.cfb\n";
    ck_assert_int_eq(cairn_parse_fieldbook(n, "deep.cfb", t, strlen(t), CAIRN_INCLUDE_MAX,
                                           &err), -1);
    ck_assert_int_eq(err.nerrors, 1);
    ck_assert_ptr_nonnull(strstr(err.diag[0].message, "nested more than 16 deep"));
    ck_assert_int_eq(err.diag[0].col, 11);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

static cairn_net *parse_xml(const char *text, cairn_error *err)
{
    cairn_net *net = cairn_net_new();
    ck_assert_ptr_nonnull(net);
    ck_assert_int_eq(cairn_error_init(err), 0);
    cairn_parse_project_xml(net, "mem.xml", text, strlen(text), err);
    if (!err->nerrors)
        cairn_validate(net, err);
    return net;
}

START_TEST(xml_positions_and_late_instrument)
{
    cairn_error err;
    /* The instrument is defined after the setup that names it. */
    cairn_net *n = parse_xml("<cairn-project format=\"1\">\n"
                             "  <setup at=\"A\" inst=\"T1\">\n"
                             "    <sight to=\"B\" hz=\"0\" horiz=\"10\"/>\n"
                             "  </setup>\n"
                             "  <instrument id=\"T1\" direction=\"1sec\" distance=\"2mm\"/>\n"
                             "</cairn-project>\n", &err);
    ck_assert_int_eq(err.nerrors, 0);
    ck_assert_uint_eq(n->ninsts, 1);
    ck_assert_uint_eq(n->insts[0].set, CAIRN_INST_DIRECTION | CAIRN_INST_DISTANCE);
    ck_assert_int_eq(n->obs[0].inst, 0);
    ck_assert_int_eq(n->obs[1].src.line, 3);
    ck_assert_int_eq(n->obs[1].src.col, 26); /* the horiz attribute */
    cairn_net_free(&n);
    cairn_error_clear(&err);

    /* An attribute on a continuation line is located on its own line. */
    n = parse_xml("<cairn-project format=\"1\">\n"
                  "  <mark id=\"A\" e=\"1\"\n"
                  "        n=\"x\"/>\n"
                  "</cairn-project>\n", &err);
    ck_assert_int_eq(err.nerrors, 1);
    ck_assert_int_eq(err.diag[0].line, 3);
    ck_assert_int_eq(err.diag[0].col, 9);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

START_TEST(xml_entities_refused)
{
    cairn_error err;
    cairn_net *n = parse_xml("<?xml version=\"1.0\"?>\n"
                             "<!DOCTYPE cairn-project [\n"
                             "<!-- <!ENTITY in a comment is only text -->\n"
                             "  <!ENTITY x \"y\">\n"
                             "]>\n"
                             "<cairn-project format=\"1\"><title>&x;</title></cairn-project>\n",
                             &err);
    ck_assert_int_eq(err.nerrors, 1);
    ck_assert_int_eq(err.diag[0].line, 4);
    ck_assert_int_eq(err.diag[0].col, 3);
    ck_assert_str_eq(err.diag[0].message, "entity declarations are not allowed");
    ck_assert_ptr_null(n->title);
    cairn_net_free(&n);
    cairn_error_clear(&err);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("input");
    TCase *tc = tcase_create("load");
    tcase_add_test(tc, xml_and_fieldbook_agree);
    tcase_add_test(tc, fixture_values);
    tcase_add_test(tc, quotes_comments_tabs);
    tcase_add_test(tc, crlf_and_bom);
    tcase_add_test(tc, errors_are_located);
    tcase_add_test(tc, units_per_file);
    tcase_add_test(tc, error_limit);
    tcase_add_test(tc, include_depth_limit);
    tcase_add_test(tc, xml_positions_and_late_instrument);
    tcase_add_test(tc, xml_entities_refused);
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
