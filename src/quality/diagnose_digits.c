/* Hypotheses about one booked reading: its digits (transposed, a doubled
 * digit booked once, a dropped 0, a digit written twice, the decimal
 * point moved), its unit, its face, a vertical angle for a zenith angle,
 * the sign of a rise.
 *
 * Each variant of the booked text is parsed in the text's own unit, put
 * through the same reduction the adjustment used (ppm; s·sin z in
 * dimension 2; the trigonometric height in dimension 1, FORMAT.md
 * "Models"), and the change of the adjustment observation it implies is
 * compared with the estimated blunder. The dropped-digit family is kept
 * narrow on purpose — a doubled digit written once, or a dropped 0, not
 * any digit anywhere — because every extra variant is one more chance for
 * a random blunder to match by accident. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "diagnose_int.h"

#define TWO_PI (2.0 * CAIRN_PI)

/* ---- units and formatting -------------------------------------------- */

static int parse_in(const char *s, int angular, int unit, double *psi)
{
    if (angular)
        return cairn_parse_angle(s, (cairn_angle_unit)unit, psi) ? -1 : 0;
    double v;
    if (cairn_parse_number(s, &v))
        return -1;
    *psi = v * cairn_length_factor((cairn_length_unit)unit);
    return 0;
}

int cairn_diag_text_unit(const char *text, int angular, double si, int project_unit,
                         int *punit)
{
    for (int k = -1; k < 3; k++) {
        int u = k < 0 ? project_unit : k;
        double v;
        if ((k >= 0 && k == project_unit) || parse_in(text, angular, u, &v))
            continue;
        /* The loader made si from this very text, so it matches exactly;
         * the tolerance only forgives a different rounding path. */
        if (fabs(v - si) <= 1e-12 * fmax(1.0, fabs(si))) {
            *punit = u;
            return 0;
        }
    }
    return -1;
}

int cairn_diag_decimals(const char *text)
{
    const char *dot = strrchr(text, '.');
    int d = 0;
    if (dot)
        for (const char *s = dot + 1; isdigit((unsigned char)*s); s++)
            d++;
    /* "123-45-30.5": the seconds' decimals come after four packed digits. */
    if (strchr(text + (text[0] == '-' || text[0] == '+'), '-'))
        d += 4;
    return d;
}

void cairn_dg_format_value(double si, int angular, int unit, int decimals, char *buf,
                       size_t n, double *pnum)
{
    if (decimals < 0) decimals = 0;
    if (decimals > 9) decimals = 9;
    double v;
    if (!angular) {
        v = si / cairn_length_factor((cairn_length_unit)unit);
    } else if (unit == CAIRN_ANGLE_DEG) {
        v = si * (180.0 / CAIRN_PI);
    } else if (unit == CAIRN_ANGLE_GON) {
        v = si * (200.0 / CAIRN_PI);
    } else {
        /* Packed DDD.MMSSs: round once in units of the last digit, then
         * split in integers, so 60" or 60' never appear. */
        int sd = decimals > 4 ? decimals - 4 : 0;
        long long per = 1;
        for (int i = 0; i < sd; i++)
            per *= 10;
        double deg = si * (180.0 / CAIRN_PI);
        long long t = llround(fabs(deg) * 3600.0 * (double)per);
        long long ss = t % (60 * per), mt = t / (60 * per);
        const char *sg = deg < 0 && t ? "-" : "";
        if (sd)
            cairn_dg_printf(buf, n, "%s%lld.%02lld%02lld%0*lld", sg, mt / 60, mt % 60, ss / per, sd,
                     ss % per);
        else
            cairn_dg_printf(buf, n, "%s%lld.%02lld%02lld", sg, mt / 60, mt % 60, ss / per);
        *pnum = strtod(buf, NULL);
        return;
    }
    cairn_dg_printf(buf, n, "%.*f", decimals, v);
    *pnum = v;
}

/* ---- the adjustment observation a changed reading gives ---------------- */

/* Value of observation c->o when reading rd is booked as v (SI) instead. */
static double remodel(const cairn_diag_ctx *c, const cairn_diag_reading *rd, double v)
{
    const cairn_obs *o = c->o, *bo = rd->bo;
    const double ppmf = 1.0 + bo->ppm * 1e-6;
    if (o->kind == bo->kind)
        return (o->kind == CAIRN_OBS_SLOPE || o->kind == CAIRN_OBS_HORIZ) ? v * ppmf : v;
    /* Reduced (problem.c): aux_s is the slope after ppm, aux_z the
     * face-one zenith angle. */
    double s = o->aux_s, z1 = o->aux_z;
    if (bo->kind == CAIRN_OBS_SLOPE)
        s = v * ppmf;
    else if (bo->kind == CAIRN_OBS_ZENITH)
        z1 = o->face == 2 ? TWO_PI - v : v;
    if (o->kind == CAIRN_OBS_HORIZ)
        return s * sin(z1);
    const double k = c->p->net->opt.refraction, R = CAIRN_EARTH_RADIUS;
    double D = s * sin(z1);
    return s * cos(z1) + (1.0 - k) * D * D / (2.0 * R) + o->ih - o->th;
}

/* Offer "reading rd should have been booked as corr (SI)". `text` is the
 * corrected text when it is a variant of the booked one. */
static void offer_value_m(cairn_diag_ctx *c, const cairn_diag_reading *rd,
                          cairn_diag_kind kind, double corr, const char *text,
                          const char *what, double margin)
{
    const cairn_obs *bo = rd->bo;
    if (!isfinite(corr) || corr == bo->value)
        return;
    if (rd->angular && bo->kind != CAIRN_OBS_RISE && (corr < 0 || corr >= TWO_PI))
        return; /* outside one turn: the loader would have refused it */
    if (!rd->angular && bo->kind != CAIRN_OBS_RISE && !(corr > 0))
        return;
    double b = c->o->value - remodel(c, rd, corr);
    if (c->angular)
        b = cairn_wrap_pi(b);
    /* A change the adjustment cannot see (the face of a zenith angle in
     * dimension 1: cos z is the same) is "the booked value is right"
     * again, not a competing explanation. */
    if (fabs(b) <= 1e-12 * fmax(1.0, fabs(c->o->value)))
        return;
    cairn_diag_cand k;
    memset(&k, 0, sizeof k);
    k.kind = kind;
    k.mark = -1;
    k.fit = cairn_diag_fit(c, c->iobs, b);
    k.margin = margin;
    k.corr = corr;
    k.rd = rd;
    k.key = rd->key;
    k.decimals = rd->decimals;
    /* A variant is shown as written only when it is in the project unit. */
    int pu = rd->angular ? (int)c->p->net->angle_unit : (int)c->p->net->length_unit;
    if (text && rd->unit == pu)
        cairn_dg_printf(k.text, sizeof k.text, "%s", text);
    cairn_dg_printf(k.what, sizeof k.what, "%s", what);
    cairn_diag_offer(c, &k);
}

static void offer_value(cairn_diag_ctx *c, const cairn_diag_reading *rd,
                        cairn_diag_kind kind, double corr, const char *text,
                        const char *what)
{
    offer_value_m(c, rd, kind, corr, text, what, 0.0);
}

static void offer_text(cairn_diag_ctx *c, const cairn_diag_reading *rd,
                       cairn_diag_kind kind, const char *s, const char *what)
{
    double v;
    /* "026.3832" or "-05.2": nobody books a leading zero, so a variant
     * that needs one is no explanation (206.3832 transposed would
     * otherwise pass for the face error it really is). */
    const char *d = s + (s[0] == '-' || s[0] == '+');
    if (d[0] == '0' && isdigit((unsigned char)d[1]))
        return;
    if (!parse_in(s, rd->angular, rd->unit, &v))
        offer_value(c, rd, kind, v, s, what);
}

/* ---- variants of the text ---------------------------------------------- */

static void transpositions(cairn_diag_ctx *c, const cairn_diag_reading *rd)
{
    const char *t = rd->text;
    size_t n = strlen(t);
    char s[CAIRN_DIAG_TEXT], what[64];
    for (size_t i = 0; i + 1 < n; i++) {
        size_t j = i + 1;
        if (t[j] == '.') /* digits either side of the point are adjacent too */
            j++;
        if (j >= n || !isdigit((unsigned char)t[i]) || !isdigit((unsigned char)t[j]) ||
            t[i] == t[j])
            continue;
        memcpy(s, t, n + 1);
        s[i] = t[j];
        s[j] = t[i];
        cairn_dg_printf(what, sizeof what, "digits %c%c booked for %c%c", t[i], t[j], t[j], t[i]);
        offer_text(c, rd, CAIRN_DIAG_TRANSPOSED_DIGITS, s, what);
    }
}

static void insert_at(const char *t, size_t i, char ch, char *s)
{
    size_t n = strlen(t);
    memcpy(s, t, i);
    s[i] = ch;
    memcpy(s + i + 1, t + i, n - i + 1);
}

/* Booking precision (common practice, no source): lengths to 0.1 mm (or
 * 0.0001 ft), angles to the second (0.0001 in deg and gon). A digit put
 * back into the decimals must not make the value finer than that, or than
 * the text as booked: "381.2906" is not "381.02906" with a 0 dropped. */
#define BOOKED_DECIMALS 4

static void dropped_and_repeated(cairn_diag_ctx *c, const cairn_diag_reading *rd)
{
    const char *t = rd->text;
    size_t n = strlen(t);
    char s[CAIRN_DIAG_TEXT + 1], what[64];
    if (n + 2 > sizeof s)
        return;
    const char *dot = strchr(t, '.');
    int dec = cairn_diag_decimals(t) - (strchr(t + 1, '-') ? 4 : 0);
    int may_lengthen = dec < BOOKED_DECIMALS;
    for (size_t i = 0; i < n; i++) {
        if (!isdigit((unsigned char)t[i]))
            continue;
        int in_fraction = dot && t + i > dot;
        /* A doubled digit booked once: "13.45" for "133.45". */
        if (!in_fraction || may_lengthen) {
            insert_at(t, i, t[i], s);
            cairn_dg_printf(what, sizeof what, "a doubled %c booked once", t[i]);
            offer_text(c, rd, CAIRN_DIAG_DROPPED_DIGIT, s, what);
        }
        /* A 0 left out: "85.43" for "85.043" (inserted after digit i). */
        if (t[i] != '0' && (!(dot && t + i + 1 > dot) || may_lengthen)) {
            insert_at(t, i + 1, '0', s);
            offer_text(c, rd, CAIRN_DIAG_DROPPED_DIGIT, s, "a 0 left out");
        }
        /* A digit written twice: "1900.6566" for "190.6566". */
        if (i + 1 < n && t[i + 1] == t[i]) {
            memcpy(s, t, i);
            memcpy(s + i, t + i + 1, n - i);
            cairn_dg_printf(what, sizeof what, "the %c written twice", t[i]);
            offer_text(c, rd, CAIRN_DIAG_DROPPED_DIGIT, s, what);
        }
    }
    /* A 0 left out right after the point: "120.334" for "120.0334". */
    if (may_lengthen && dot && isdigit((unsigned char)dot[1]) && dot[1] != '0') {
        insert_at(t, (size_t)(dot - t) + 1, '0', s);
        offer_text(c, rd, CAIRN_DIAG_DROPPED_DIGIT, s, "a 0 left out");
    }
}

static void moved_point(cairn_diag_ctx *c, const cairn_diag_reading *rd)
{
    const char *t = rd->text;
    char dg[CAIRN_DIAG_TEXT], s[CAIRN_DIAG_TEXT + 8], what[64];
    int sign = t[0] == '-' || t[0] == '+';
    int nd = 0, p = -1;
    for (const char *q = t + sign; *q; q++) {
        if (*q == '.' && p < 0)
            p = nd;
        else if (isdigit((unsigned char)*q) && nd + 1 < (int)sizeof dg)
            dg[nd++] = *q;
        else
            return; /* "D-M-S" or anything else: no point to move */
    }
    if (p < 0)
        p = nd;
    for (int k = -3; k <= 3; k++) {
        int q = p + k, len = 0;
        if (!k || nd == 0)
            continue;
        if (sign)
            s[len++] = t[0];
        if (q <= 0) { /* "0." then -q zeros, then the digits */
            s[len++] = '0';
            s[len++] = '.';
            for (int i = 0; i < -q; i++)
                s[len++] = '0';
            memcpy(s + len, dg, (size_t)nd);
            s[len + nd] = '\0';
        } else {
            int lead = 0; /* no leading zeros before the point */
            while (lead < q - 1 && lead < nd && dg[lead] == '0')
                lead++;
            for (int i = lead; i < q; i++)
                s[len++] = i < nd ? dg[i] : '0';
            if (q < nd) {
                s[len++] = '.';
                for (int i = q; i < nd; i++)
                    s[len++] = dg[i];
            }
            s[len] = '\0';
        }
        cairn_dg_printf(what, sizeof what, "the point %d place%s too far %s", k < 0 ? -k : k,
                 (k == 1 || k == -1) ? "" : "s", k > 0 ? "left" : "right");
        offer_text(c, rd, CAIRN_DIAG_MISPLACED_DECIMAL, s, what);
    }
}

/* ---- the whole family for one reading ---------------------------------- */

static const char *unit_name(int angular, int u)
{
    return angular ? cairn_angle_unit_name((cairn_angle_unit)u)
                   : cairn_length_unit_name((cairn_length_unit)u);
}

void cairn_diag_reading_hypotheses(cairn_diag_ctx *c, const cairn_diag_reading *rd)
{
    const cairn_obs *bo = rd->bo;
    const double v = bo->value;
    char what[64];
    if (rd->text[0]) {
        transpositions(c, rd);
        dropped_and_repeated(c, rd);
        moved_point(c, rd);
        for (int u = 0; u < 3; u++) {
            double si;
            if (u == rd->unit || parse_in(rd->text, rd->angular, u, &si))
                continue;
            cairn_dg_printf(what, sizeof what, "booked in %s, not %s", unit_name(rd->angular, u),
                     unit_name(rd->angular, rd->unit));
            /* The US survey foot is 2 ppm from the international one, too
             * little to tell apart: it must fit clearly better (by half an
             * sd) to be named instead. */
            double margin = !rd->angular && u == CAIRN_LENGTH_USFT ? 0.5 : 0.0;
            offer_value_m(c, rd, CAIRN_DIAG_WRONG_UNIT, si, NULL, what, margin);
        }
    }
    switch (bo->kind) {
    case CAIRN_OBS_DIRECTION:
        offer_value(c, rd, CAIRN_DIAG_WRONG_FACE, cairn_wrap_2pi(v + CAIRN_PI), NULL,
                    "read in the other face");
        break;
    case CAIRN_OBS_ZENITH:
        offer_value(c, rd, CAIRN_DIAG_WRONG_FACE, TWO_PI - v, NULL, "read in the other face");
        /* A vertical angle v read for z: z = 90° − v in face one, and
         * 270° + v in face two (where z2 = 360° − z1). */
        offer_value(c, rd, CAIRN_DIAG_ZENITH_AS_VERTICAL,
                    cairn_wrap_2pi(bo->face == 2 ? 1.5 * CAIRN_PI + v : 0.5 * CAIRN_PI - v),
                    NULL, "a vertical angle booked as the zenith angle");
        break;
    case CAIRN_OBS_RISE: {
        char s[CAIRN_DIAG_TEXT + 1];
        const char *t = rd->text;
        if (t[0] == '-' || t[0] == '+')
            cairn_dg_printf(s, sizeof s, "%s%s", t[0] == '-' ? "" : "-", t + 1);
        else
            cairn_dg_printf(s, sizeof s, "-%s", t);
        offer_value(c, rd, CAIRN_DIAG_SIGN_SLIP, -v, t[0] ? s : NULL, "sign slipped");
        break;
    }
    default:
        break;
    }
}
