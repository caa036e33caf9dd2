/* Converting one field of a record into SI, with a located message for
 * every way a value can be wrong. Values are in the current file's units;
 * standard deviations carry their own unit (FORMAT.md "Conventions"). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "input_int.h"

#define SHOW(s) cairn_in_show((s), show, sizeof show)

int cairn_in_val_number(in_ctx *c, const in_rec *r, const in_field *f, double *px)
{
    char show[64];
    if (cairn_parse_number(f->val, px))
        return cairn_in_err(c, f->line, f->vcol, "%s: '%s' is not a finite number", f->key,
                            SHOW(f->val));
    return 0;
}

int cairn_in_val_length(in_ctx *c, const in_rec *r, const in_field *f, double *pm)
{
    double v;
    if (cairn_in_val_number(c, r, f, &v))
        return -1;
    *pm = cairn_to_m(v, c->lu);
    return 0;
}

int cairn_in_val_angle(in_ctx *c, const in_rec *r, const in_field *f, double *prad)
{
    char show[64];
    int rc = cairn_parse_angle(f->val, c->au, prad);
    if (rc == -2)
        return cairn_in_err(c, f->line, f->vcol, "%s: minutes or seconds of 60 or more in '%s'",
                            f->key, SHOW(f->val));
    if (rc || !isfinite(*prad))
        return cairn_in_err(c, f->line, f->vcol, "%s: '%s' is not an angle in %s", f->key,
                            SHOW(f->val), cairn_angle_unit_name(c->au));
    return 0;
}

/* Circle readings, zenith angles, azimuths and angles lie in one turn:
 * [0, 360) degrees; anything else is a booking slip, not a convention. */
int cairn_in_val_circle(in_ctx *c, const in_rec *r, const in_field *f, double *prad)
{
    char show[64];
    if (cairn_in_val_angle(c, r, f, prad))
        return -1;
    if (*prad < 0 || *prad >= 2 * CAIRN_PI)
        return cairn_in_err(c, f->line, f->vcol, "%s: '%s' is outside [0, %s)", f->key,
                            SHOW(f->val), c->au == CAIRN_ANGLE_GON ? "400 gon" : "360 degrees");
    return 0;
}

int cairn_in_val_int(in_ctx *c, const in_rec *r, const in_field *f, int lo, int hi, int *pv)
{
    char show[64];
    const char *s = f->val;
    long v = 0;
    size_t i = 0;
    for (; s[i] >= '0' && s[i] <= '9' && i < 9; i++)
        v = v * 10 + (s[i] - '0');
    if (!i || s[i] || v < lo || v > hi)
        return cairn_in_err(c, f->line, f->vcol, "%s: '%s' is not a whole number from %d to %d",
                            f->key, SHOW(f->val), lo, hi);
    *pv = (int)v;
    return 0;
}

int cairn_in_val_sd(in_ctx *c, const in_rec *r, const in_field *f, unsigned allowed,
                    cairn_sd *psd)
{
    char msg[CAIRN_MSG_MAX - 64];
    if (!cairn_in_utf8_valid(f->val, strlen(f->val))) {
        char show[64];
        return cairn_in_err(c, f->line, f->vcol, "%s: '%s' is not a value with a unit", f->key,
                            SHOW(f->val));
    }
    if (cairn_parse_sd(f->val, allowed, psd, msg, sizeof msg))
        return cairn_in_err(c, f->line, f->vcol, "%s: %s", f->key, msg);
    return 0;
}

int cairn_in_val_id(in_ctx *c, const in_rec *r, const in_field *f, const char *what)
{
    char show[64];
    size_t n = strlen(f->val);
    if (cairn_id_valid(f->val))
        return 0;
    if (!n)
        return cairn_in_err(c, f->line, f->vcol, "%s: empty %s id", f->key, what);
    if (n > CAIRN_ID_MAX)
        return cairn_in_err(c, f->line, f->vcol, "%s: %s id '%s' is longer than %d characters",
                            f->key, what, SHOW(f->val), CAIRN_ID_MAX);
    return cairn_in_err(c, f->line, f->vcol,
                        "%s: %s id '%s' may only use A-Z a-z 0-9 _ . - /", f->key, what,
                        SHOW(f->val));
}

int cairn_in_val_text(in_ctx *c, const in_rec *r, const in_field *f)
{
    if (!cairn_in_utf8_valid(f->val, strlen(f->val)))
        return cairn_in_err(c, f->line, f->vcol, "%s: text is not valid UTF-8", f->key);
    return 0;
}

int cairn_in_match(in_ctx *c, const in_rec *r, const char *const *keys, const in_field **pf)
{
    char show[64];
    size_t nk = 0;
    while (keys[nk])
        pf[nk++] = NULL;
    for (int i = 0; i < r->nf; i++) {
        const in_field *f = &r->f[i];
        size_t k = 0;
        while (k < nk && (keys[k][0] != f->key[0] || strcmp(keys[k], f->key)))
            k++;
        if (k == nk) {
            if (c->xml)
                return cairn_in_err(c, f->line, f->kcol, "unknown attribute '%s' on <%s>",
                                    SHOW(f->key), r->name);
            return cairn_in_err(c, f->line, f->kcol, "unknown keyword '%s' in %s record",
                                SHOW(f->key), r->name);
        }
        if (pf[k])
            return cairn_in_err(c, f->line, f->kcol, "keyword '%s' given twice", f->key);
        if (!f->val)
            return cairn_in_err(c, f->line, f->kcol, "keyword '%s' needs a value", f->key);
        /* A number-valued keyword whose value is another keyword of the
         * record almost always means the value was left out
         * ("mark A e n 100"). Text, hold and instrument values may be
         * anything. */
        unsigned char v0 = (unsigned char)f->val[0];
        if (!c->xml && f->kcol != f->vcol && v0 >= 'a' && v0 <= 'z' && strcmp(f->key, "desc") &&
            strcmp(f->key, "hold") && strcmp(f->key, "inst"))
            for (size_t j = 0; j < nk; j++)
                if (!strcmp(keys[j], f->val))
                    return cairn_in_err(c, f->line, f->kcol, "keyword '%s' needs a value",
                                        f->key);
        pf[k] = f;
    }
    return 0;
}
