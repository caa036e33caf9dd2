/* Diagnosis of a flagged or rejected observation: gather the hypotheses
 * (diagnose_digits.c, diagnose_mark.c), keep the best of each kind, and
 * name one only when it fits and nothing else comes close (the rule is in
 * cairn/diagnose.h).
 *
 * Why compare implied blunders with ∇̂ rather than re-adjusting with each
 * corrected value: ∇̂ = −v/r is what a re-adjustment with the observation
 * corrected by b would remove, to first order (the observation's own
 * influence on the solution is exactly the 1 − r part), so |b − ∇̂| / sd
 * tests each hypothesis for the price of one subtraction. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "diagnose_int.h"

const char *cairn_diag_kind_name(cairn_diag_kind k)
{
    static const char *const names[CAIRN_DIAG_NKINDS] = {
        "none", "transposed-digits", "wrong-face", "zenith-as-vertical", "wrong-unit",
        "misplaced-decimal", "dropped-digit", "sign-slip", "target-height", "wrong-mark"};
    return (k >= 0 && k < CAIRN_DIAG_NKINDS) ? names[k] : "none";
}

void cairn_dg_printf(char *buf, size_t n, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, n, fmt, ap);
    va_end(ap);
}

double cairn_diag_fit(const cairn_diag_ctx *c, size_t j, double b)
{
    double nab = c->nabla[j], sd = c->sd[j];
    if (!isfinite(nab) || !(sd > 0) || !isfinite(b))
        return INFINITY;
    double d = b - nab;
    if (cairn_obs_kind_angular(c->p->obs[j].kind))
        d = cairn_wrap_pi(d);
    return fabs(d) / sd;
}

void cairn_diag_offer(cairn_diag_ctx *c, const cairn_diag_cand *k)
{
    if (!(k->fit < INFINITY) || k->kind <= CAIRN_DIAG_NONE || k->kind >= CAIRN_DIAG_NKINDS)
        return;
    cairn_diag_cand *b = &c->best[k->kind];
    if (k->fit + k->margin < b->fit) {
        /* Two marks are two explanations: keep the runner-up mark too. */
        if (k->kind == CAIRN_DIAG_WRONG_MARK && b->mark != k->mark)
            c->mark2 = *b;
        *b = *k;
    } else if (k->kind == CAIRN_DIAG_WRONG_MARK && k->mark != b->mark &&
               k->fit < c->mark2.fit) {
        c->mark2 = *k;
    }
}

static void unset(cairn_diag_cand *k)
{
    memset(k, 0, sizeof *k);
    k->fit = INFINITY;
    k->mark = -1;
    k->corr = NAN;
}

/* Reading rd for booked observation bo; its text when it can be read. */
static void add_reading(cairn_diag_ctx *c, const cairn_obs *bo)
{
    const cairn_net *net = c->p->net;
    cairn_diag_reading *rd = &c->rd[c->nrd++];
    memset(rd, 0, sizeof *rd);
    rd->bo = bo;
    rd->angular = cairn_obs_kind_angular(bo->kind);
    int pu = rd->angular ? (int)net->angle_unit : (int)net->length_unit;
    rd->unit = pu;
    switch (bo->kind) {
    case CAIRN_OBS_DIRECTION: rd->key = "hz"; break;
    case CAIRN_OBS_ZENITH: rd->key = "zen"; break;
    case CAIRN_OBS_SLOPE: rd->key = "slope"; break;
    case CAIRN_OBS_HORIZ: rd->key = "horiz"; break;
    default: rd->key = "value"; break;
    }
    rd->decimals = rd->angular && pu == CAIRN_ANGLE_DMS ? 4 : 3;
    if (!cairn_booked_text_cached(bo, rd->key, rd->text, sizeof rd->text, c->text) &&
        !cairn_diag_text_unit(rd->text, rd->angular, bo->value, pu, &rd->unit)) {
        rd->decimals = cairn_diag_decimals(rd->text);
    } else {
        rd->text[0] = '\0'; /* unreadable, or not the text of this value */
        rd->unit = pu;
    }
}

/* The booked readings behind problem observation o: itself, or the slope
 * and the zenith angle it was reduced from (they are neighbours in
 * net->obs: one sight's readings are stored together). */
static void find_readings(cairn_diag_ctx *c, int bi)
{
    const cairn_net *net = c->p->net;
    const cairn_obs *bo = &net->obs[bi];
    add_reading(c, bo);
    if (c->o->kind == bo->kind || bo->sight < 0)
        return;
    for (int j = bi - 3; j <= bi + 3; j++)
        if (j >= 0 && (size_t)j < net->nobs && net->obs[j].sight == bo->sight &&
            net->obs[j].kind == CAIRN_OBS_ZENITH) {
            add_reading(c, &net->obs[j]);
            break;
        }
}

static int by_fit(const cairn_diag_cand *a, const cairn_diag_cand *b)
{
    return a->fit < b->fit || (a->fit == b->fit && a->kind < b->kind);
}

/* Same correction of the same reading: not a competing explanation. */
static int same_correction(const cairn_diag_cand *a, const cairn_diag_cand *b)
{
    return a->rd && a->rd == b->rd && a->kind != CAIRN_DIAG_WRONG_MARK &&
           b->kind != CAIRN_DIAG_WRONG_MARK &&
           fabs(a->corr - b->corr) <= 1e-9 * fmax(1.0, fabs(a->corr));
}

static void describe(const cairn_diag_ctx *c, const cairn_diag_cand *k, char *buf,
                     size_t n)
{
    if (k->kind == CAIRN_DIAG_WRONG_MARK)
        cairn_dg_printf(buf, n, "wrong-mark %s", c->p->net->marks[k->mark].id);
    else if (k->kind == CAIRN_DIAG_NONE)
        cairn_dg_printf(buf, n, "the booked value");
    else
        cairn_dg_printf(buf, n, "%s", cairn_diag_kind_name(k->kind));
}

static void fill(const cairn_diag_ctx *c, const cairn_diag_cand *k, const cairn_diag_cand *next,
                 cairn_diagnosis *out)
{
    const cairn_net *net = c->p->net;
    char nx[64] = "", me[64];
    if (next)
    {
        describe(c, next, me, sizeof me);
        cairn_dg_printf(nx, sizeof nx, "; next: %s %.1f sd", me, next->fit);
    }
    out->kind = k->kind;
    out->fit_sigma = k->fit;
    out->next_sigma = next ? next->fit : NAN;
    out->mark = k->mark;
    if (k->kind == CAIRN_DIAG_WRONG_MARK) {
        cairn_dg_printf(out->note, sizeof out->note, "the readings fit %s (%s), fit %.1f sd%s",
                 net->marks[k->mark].id, k->what, k->fit, nx);
        return;
    }
    int angular = k->rd ? k->rd->angular : 0;
    int pu = angular ? (int)net->angle_unit : (int)net->length_unit;
    cairn_dg_format_value(k->corr, angular, pu, k->decimals, out->corrected_text,
                      sizeof out->corrected_text, &out->corrected);
    if (k->text[0])
        cairn_dg_printf(out->corrected_text, sizeof out->corrected_text, "%s", k->text);
    cairn_dg_printf(out->reading, sizeof out->reading, "%s", k->key ? k->key : "");
    cairn_dg_printf(out->booked_text, sizeof out->booked_text, "%s", k->rd ? k->rd->text : k->booked);
    cairn_dg_printf(out->note, sizeof out->note, "%s %s -> %s (%s), fit %.1f sd%s", out->reading,
             out->booked_text[0] ? out->booked_text : "as booked", out->corrected_text,
             k->what, k->fit, nx);
}

int cairn_diagnose(const cairn_problem *p, const cairn_state *x, const double *nabla,
                   const double *sd_nabla, size_t iobs, cairn_diagnosis *out)
{
    return cairn_diagnose_grid(p, x, nabla, sd_nabla, iobs, NULL, NULL, out);
}

int cairn_diagnose_grid(const cairn_problem *p, const cairn_state *x, const double *nabla,
                        const double *sd_nabla, size_t iobs, const cairn_mark_grid *grid,
                        cairn_text_cache *tc, cairn_diagnosis *out)
{
    if (!out)
        return -1;
    memset(out, 0, sizeof *out);
    out->kind = CAIRN_DIAG_NONE;
    out->corrected = out->fit_sigma = out->next_sigma = NAN;
    out->mark = -1;
    if (!p || !x || !nabla || !sd_nabla || iobs >= p->nobs || !isfinite(nabla[iobs]) ||
        !(sd_nabla[iobs] > 0) || !isfinite(sd_nabla[iobs])) {
        cairn_dg_printf(out->note, sizeof out->note, "no estimate of the blunder to explain");
        return -1;
    }
    cairn_diag_ctx c;
    memset(&c, 0, sizeof c);
    c.grid = grid;
    c.text = tc;
    c.p = p;
    c.x = x;
    c.nabla = nabla;
    c.sd = sd_nabla;
    c.iobs = iobs;
    c.o = &p->obs[iobs];
    c.nab = nabla[iobs];
    c.sdn = sd_nabla[iobs];
    c.angular = cairn_obs_kind_angular(c.o->kind);
    for (int k = 0; k < CAIRN_DIAG_NKINDS; k++)
        unset(&c.best[k]);
    unset(&c.mark2);

    int bi = p->booked ? p->booked[iobs] : -1;
    if (bi < 0 || (size_t)bi >= p->net->nobs) {
        cairn_dg_printf(out->note, sizeof out->note,
                 "control of a weighted mark: check its given coordinates");
        return 0;
    }
    find_readings(&c, bi);
    for (int r = 0; r < c.nrd; r++)
        cairn_diag_reading_hypotheses(&c, &c.rd[r]);
    cairn_diag_target_height(&c);
    cairn_diag_wrong_mark(&c);

    /* "The booked value is right" competes too: its fit is |∇̂| / sd. */
    cairn_diag_cand null;
    unset(&null);
    null.kind = CAIRN_DIAG_NONE;
    null.fit = cairn_diag_fit(&c, iobs, 0.0);

    /* One mistake explaining several bad readings of a sight beats one
     * explaining a single reading: when a target height or a wrong mark
     * fits, a hypothesis about this reading alone must also answer for
     * the sight's other readings, which it leaves as they are. */
    if (c.best[CAIRN_DIAG_TARGET_HEIGHT].fit <= CAIRN_DIAG_FIT_MAX ||
        c.best[CAIRN_DIAG_WRONG_MARK].fit <= CAIRN_DIAG_FIT_MAX) {
        size_t lo, hi;
        double left = 0.0;
        cairn_dg_sight_range(&c, &lo, &hi);
        for (size_t j = lo; j <= hi; j++)
            if (j != iobs && isfinite(nabla[j]) && sd_nabla[j] > 0)
                left = fmax(left, cairn_diag_fit(&c, j, 0.0));
        for (int k = 1; k < CAIRN_DIAG_NKINDS; k++)
            if (k != CAIRN_DIAG_TARGET_HEIGHT && k != CAIRN_DIAG_WRONG_MARK)
                c.best[k].fit = fmax(c.best[k].fit, left);
        null.fit = fmax(null.fit, left);
    }

    cairn_diag_cand g[CAIRN_DIAG_NKINDS + 2];
    int ng = 0;
    for (int k = 1; k < CAIRN_DIAG_NKINDS; k++)
        if (c.best[k].fit < INFINITY)
            g[ng++] = c.best[k];
    if (c.mark2.fit < INFINITY)
        g[ng++] = c.mark2;
    g[ng++] = null;
    for (int i = 1; i < ng; i++) /* insertion sort: a dozen entries */
        for (int j = i; j > 0 && by_fit(&g[j], &g[j - 1]); j--) {
            cairn_diag_cand t = g[j];
            g[j] = g[j - 1];
            g[j - 1] = t;
        }
    const cairn_diag_cand *best = &g[0], *next = NULL;
    for (int i = 1; i < ng && !next; i++)
        if (!same_correction(best, &g[i]))
            next = &g[i];
    double need = next ? fmax(CAIRN_DIAG_SEPARATION * best->fit, CAIRN_DIAG_FIT_MAX) : 0.0;
    /* A blunder barely past the w-test's critical value is as likely
     * noise as a mistake, and among a dozen hypotheses one fits such a
     * small error by chance; name none unless the booked value itself is
     * clearly wrong. */
    if (null.fit < CAIRN_DIAG_GROSS) {
        out->fit_sigma = NAN;
        out->next_sigma = NAN;
        cairn_dg_printf(out->note, sizeof out->note,
                        "no simple explanation: the estimated error is %.1f sd, too small "
                        "to tell a booking mistake from noise", null.fit);
        return 0;
    }
    if (best->kind != CAIRN_DIAG_NONE && best->fit <= CAIRN_DIAG_FIT_MAX &&
        (!next || next->fit >= need)) {
        fill(&c, best, next, out);
        return 0;
    }
    /* No simple explanation: say what came nearest, for the surveyor. */
    const cairn_diag_cand *near = best->kind != CAIRN_DIAG_NONE ? best : next;
    out->fit_sigma = near ? near->fit : NAN;
    out->next_sigma = near == best && next ? next->fit : NAN;
    if (near && near->fit <= CAIRN_DIAG_FIT_MAX) {
        char a[64], b[64] = "";
        describe(&c, near, a, sizeof a);
        const cairn_diag_cand *o2 = near == best ? next : best;
        if (o2)
            describe(&c, o2, b, sizeof b);
        cairn_dg_printf(out->note, sizeof out->note,
                 "no simple explanation: %s fits at %.1f sd but so does %s at %.1f sd", a,
                 near->fit, o2 ? b : "another", o2 ? o2->fit : NAN);
    } else {
        cairn_dg_printf(out->note, sizeof out->note,
                 "no simple explanation: no booking mistake tested fits within %.0f sd",
                 CAIRN_DIAG_FIT_MAX);
    }
    return 0;
}
