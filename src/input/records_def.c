/* Record handlers for definitions: units, options, instruments, marks,
 * title and description. Each checks the whole record before it changes
 * the net, so a bad line leaves no half-made entry behind. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "input_int.h"

#define SHOW(s) cairn_in_show((s), show, sizeof show)

int cairn_in_rec_units(in_ctx *c, const in_rec *r, int project)
{
    static const char *const keys[] = {"length", "angle", NULL};
    const in_field *f[2];
    char show[64];
    cairn_length_unit lu = CAIRN_LENGTH_M;
    cairn_angle_unit au = CAIRN_ANGLE_DMS;
    if (cairn_in_match(c, r, keys, f))
        return -1;
    if (f[0] && cairn_length_unit_parse(f[0]->val, &lu))
        return cairn_in_err(c, f[0]->line, f[0]->vcol, "'%s' is not a length unit (m, ft, usft)",
                            SHOW(f[0]->val));
    if (f[1] && cairn_angle_unit_parse(f[1]->val, &au))
        return cairn_in_err(c, f[1]->line, f[1]->vcol, "'%s' is not an angle unit (dms, deg, gon)",
                            SHOW(f[1]->val));
    c->lu = lu;
    c->au = au;
    if (project) {
        c->net->length_unit = lu;
        c->net->angle_unit = au;
    }
    return 0;
}

/* *p changes only when the value is good (a rejected option must not
 * leave its value behind). */
static int prob(in_ctx *c, const in_rec *r, const in_field *f, double *p)
{
    double x;
    if (cairn_in_val_number(c, r, f, &x))
        return -1;
    if (!(x > 0 && x < 1))
        return cairn_in_err(c, f->line, f->vcol, "%s: must lie strictly between 0 and 1",
                            f->key);
    *p = x;
    return 0;
}

int cairn_in_rec_option(in_ctx *c, const in_rec *r, const in_field *f)
{
    cairn_options *o = &c->net->opt;
    char show[64];
    double x;
    const char *k = f->key;
    if (!strcmp(k, "dimension")) {
        const char *v = f->val;
        if (!strcmp(v, "auto")) o->dimension = 0;
        else if (!strcmp(v, "1")) o->dimension = 1;
        else if (!strcmp(v, "2")) o->dimension = 2;
        else if (!strcmp(v, "3")) o->dimension = 3;
        else
            return cairn_in_err(c, f->line, f->vcol, "dimension: '%s' is not auto, 1, 2 or 3",
                                SHOW(v));
    } else if (!strcmp(k, "refraction")) {
        if (cairn_in_val_number(c, r, f, &x))
            return -1;
        if (x < -1 || x > 1)
            return cairn_in_err(c, f->line, f->vcol,
                                "refraction: coefficient %g is outside [-1, 1]", x);
        o->refraction = x;
    } else if (!strcmp(k, "scale")) {
        if (cairn_in_val_number(c, r, f, &x))
            return -1;
        if (!(x > 0))
            return cairn_in_err(c, f->line, f->vcol, "scale: must be positive");
        o->scale = x;
    } else if (!strcmp(k, "confidence")) {
        if (prob(c, r, f, &o->confidence)) return -1;
    } else if (!strcmp(k, "alpha")) {
        if (prob(c, r, f, &o->alpha)) return -1;
    } else if (!strcmp(k, "power")) {
        if (prob(c, r, f, &o->power)) return -1;
    } else if (!strcmp(k, "global-alpha")) {
        if (prob(c, r, f, &o->global_alpha)) return -1;
    } else if (!strcmp(k, "tolerance")) {
        cairn_sd sd;
        if (cairn_in_val_sd(c, r, f, CAIRN_SD_LENGTH | CAIRN_SD_PPM, &sd))
            return -1;
        if (!(sd.length > 0 || sd.ppm > 0))
            return cairn_in_err(c, f->line, f->vcol, "tolerance: must be positive");
        o->has_tolerance = 1;
        o->tolerance = sd;
    } else if (!strcmp(k, "max-iterations")) {
        if (cairn_in_val_int(c, r, f, 1, 10000, &o->max_iterations))
            return -1;
    } else if (!strcmp(k, "loop-allowance")) {
        cairn_sd sd;
        if (cairn_in_val_sd(c, r, f, CAIRN_SD_LENGTH, &sd))
            return -1;
        if (!(sd.length > 0))
            return cairn_in_err(c, f->line, f->vcol, "loop-allowance: must be positive");
        o->has_loop_allowance = 1;
        o->loop_allowance = sd.length;
    } else if (c->xml) {
        return cairn_in_err(c, f->line, f->kcol, "unknown attribute '%s' on <options>", SHOW(k));
    } else {
        return cairn_in_err(c, f->line, f->kcol, "unknown option '%s'", SHOW(k));
    }
    return 0;
}

/* XML <options>: every attribute is one option. Options are applied one
 * by one: the later value wins when a field book sets one again. */
int cairn_in_rec_options(in_ctx *c, const in_rec *r)
{
    int rc = 0;
    for (int i = 0; i < r->nf; i++)
        if (cairn_in_rec_option(c, r, &r->f[i]))
            rc = -1;
    return rc;
}

int cairn_in_inst_ref(in_ctx *c, const char *id, int line, int col)
{
    int k = cairn_net_find_inst(c->net, id);
    if (k >= 0)
        return k;
    cairn_instrument in;
    memset(&in, 0, sizeof in);
    strcpy(in.id, id);
    in.src.file = c->file;
    in.src.line = line;
    in.src.col = col;
    return cairn_net_add_inst(c->net, &in);
}

static int positive_sd(in_ctx *c, const in_rec *r, const in_field *f, unsigned allowed,
                       cairn_sd *sd, int zero_ok)
{
    if (cairn_in_val_sd(c, r, f, allowed, sd))
        return -1;
    if (!zero_ok && !(sd->length > 0 || sd->angle > 0 || sd->ppm > 0))
        return cairn_in_err(c, f->line, f->vcol, "%s: standard deviation must be positive",
                            f->key);
    return 0;
}

int cairn_in_rec_instrument(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"id", "direction", "zenith", "distance",
                                       "centring", "height", "per-km", "per-setup",
                                       NULL};
    static const unsigned bit[] = {0, CAIRN_INST_DIRECTION, CAIRN_INST_ZENITH,
                                   CAIRN_INST_DISTANCE, CAIRN_INST_CENTRING,
                                   CAIRN_INST_HEIGHT, CAIRN_INST_PER_KM,
                                   CAIRN_INST_PER_SETUP};
    const in_field *f[8];
    cairn_instrument in;
    cairn_sd sd;
    char show[64];
    if (cairn_in_match(c, r, keys, f))
        return -1;
    if (!f[0])
        return cairn_in_err(c, r->line, r->col, "instrument needs an id");
    if (cairn_in_val_id(c, r, f[0], "instrument"))
        return -1;
    memset(&in, 0, sizeof in);
    strcpy(in.id, f[0]->val);
    in.src.file = c->file;
    in.src.line = f[0]->line;
    in.src.col = f[0]->vcol;
    const in_field *first_ts = NULL, *first_lv = NULL;
    for (int k = 1; k < 8; k++) {
        if (!f[k])
            continue;
        unsigned allowed = k <= 2 ? CAIRN_SD_ANGLE
                         : k == 3 ? CAIRN_SD_LENGTH | CAIRN_SD_PPM : CAIRN_SD_LENGTH;
        /* centring and height may be zero (forced centring, measured
         * heights); a zero reading precision would be an infinite weight. */
        if (positive_sd(c, r, f[k], allowed, &sd, k == 4 || k == 5))
            return -1;
        in.set |= bit[k];
        switch (k) {
        case 1: in.direction = sd.angle; break;
        case 2: in.zenith = sd.angle; break;
        case 3: in.dist_a = sd.length; in.dist_b = sd.ppm; break;
        case 4: in.centring = sd.length; break;
        case 5: in.height = sd.length; break;
        case 6: in.per_km = sd.length; break;
        case 7: in.per_setup = sd.length; break;
        }
        if (k <= 5 && !first_ts) first_ts = f[k];
        if (k >= 6 && !first_lv) first_lv = f[k];
    }
    if (first_ts && first_lv) {
        const in_field *late = first_ts->kcol > first_lv->kcol ? first_ts : first_lv;
        return cairn_in_err(c, late->line, late->kcol,
                            "instrument %s mixes total-station (direction, zenith, distance, "
                            "centring, height) and level (per-km, per-setup) precisions",
                            in.id);
    }
    if (!in.set)
        return cairn_in_err(c, f[0]->line, f[0]->vcol, "instrument %s gives no precision", in.id);
    in.kind = first_lv ? CAIRN_INST_LEVEL : CAIRN_INST_TOTAL_STATION;
    int k = cairn_net_find_inst(c->net, in.id);
    if (k >= 0) {
        cairn_instrument *old = &c->net->insts[k];
        if (old->set)
            return cairn_in_err(c, f[0]->line, f[0]->vcol,
                                "instrument %s is already defined at %s:%d", SHOW(in.id),
                                old->src.file, old->src.line);
        *old = in; /* it was named before its definition */
        return 0;
    }
    if (cairn_net_add_inst(c->net, &in) < 0)
        return cairn_in_err(c, r->line, r->col, "out of memory");
    return 0;
}

static int same_text(const char *a, const char *b)
{
    if (!a || !b)
        return a == b;
    return !strcmp(a, b);
}

int cairn_in_rec_mark(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"id", "e", "n", "h", "hold", "sd-en", "sd-h",
                                       "desc", NULL};
    const in_field *f[8];
    cairn_mark m;
    char show[64];
    if (cairn_in_match(c, r, keys, f))
        return -1;
    if (!f[0])
        return cairn_in_err(c, r->line, r->col, "mark needs an id");
    if (cairn_in_val_id(c, r, f[0], "mark"))
        return -1;
    memset(&m, 0, sizeof m);
    if (f[1] && cairn_in_val_length(c, r, f[1], &m.e)) return -1;
    if (f[2] && cairn_in_val_length(c, r, f[2], &m.n)) return -1;
    if (f[3] && cairn_in_val_length(c, r, f[3], &m.h)) return -1;
    m.given = (f[1] ? CAIRN_E : 0) | (f[2] ? CAIRN_N : 0) | (f[3] ? CAIRN_H : 0);
    /* A position is a pair: half of one is a booking slip. */
    if ((f[1] != NULL) != (f[2] != NULL)) {
        const in_field *g = f[1] ? f[1] : f[2];
        return cairn_in_err(c, g->line, g->kcol, "mark %s: e and n must be given together",
                            f[0]->val);
    }
    if (f[4]) {
        const char *v = f[4]->val;
        if (!strcmp(v, "en")) m.hold = CAIRN_E | CAIRN_N;
        else if (!strcmp(v, "h")) m.hold = CAIRN_H;
        else if (!strcmp(v, "enh")) m.hold = CAIRN_E | CAIRN_N | CAIRN_H;
        else
            return cairn_in_err(c, f[4]->line, f[4]->vcol, "hold: '%s' is not en, h or enh",
                                SHOW(v));
        if ((m.hold & CAIRN_E) && !(m.given & CAIRN_E))
            return cairn_in_err(c, f[4]->line, f[4]->vcol,
                                "hold: mark %s has no e and n to hold", f[0]->val);
        if ((m.hold & CAIRN_H) && !(m.given & CAIRN_H))
            return cairn_in_err(c, f[4]->line, f[4]->vcol, "hold: mark %s has no h to hold",
                                f[0]->val);
    }
    cairn_sd sd;
    if (f[5]) {
        if (positive_sd(c, r, f[5], CAIRN_SD_LENGTH, &sd, 0))
            return -1;
        if (!(m.given & CAIRN_E))
            return cairn_in_err(c, f[5]->line, f[5]->kcol,
                                "sd-en: mark %s has no e and n to weight",
                                f[0]->val);
        if (m.hold & CAIRN_E)
            return cairn_in_err(c, f[5]->line, f[5]->kcol,
                                "sd-en: mark %s holds e and n, so they cannot also be weighted",
                                f[0]->val);
        m.sd_en = sd.length;
    }
    if (f[6]) {
        if (positive_sd(c, r, f[6], CAIRN_SD_LENGTH, &sd, 0))
            return -1;
        if (!(m.given & CAIRN_H))
            return cairn_in_err(c, f[6]->line, f[6]->kcol, "sd-h: mark %s has no h to weight",
                                f[0]->val);
        if (m.hold & CAIRN_H)
            return cairn_in_err(c, f[6]->line, f[6]->kcol,
                                "sd-h: mark %s holds h, so it cannot also be weighted",
                                f[0]->val);
        m.sd_h = sd.length;
    }
    if (f[7] && cairn_in_val_text(c, r, f[7]))
        return -1;

    cairn_src src = {c->file, f[0]->line, f[0]->vcol};
    int k = cairn_net_mark(c->net, f[0]->val, src);
    if (k < 0)
        return cairn_in_err(c, r->line, r->col, "out of memory");
    cairn_mark *old = &c->net->marks[k];
    if (old->def.line) {
        /* Repeating a definition (a control list copied into each day's
         * book) is harmless; changing it is not. */
        if (old->given != m.given || old->hold != m.hold || old->e != m.e ||
            old->n != m.n || old->h != m.h || old->sd_en != m.sd_en ||
            old->sd_h != m.sd_h || !same_text(old->desc, f[7] ? f[7]->val : NULL))
            return cairn_in_err(c, f[0]->line, f[0]->vcol,
                                "mark %s is already defined differently at %s:%d", f[0]->val,
                                old->def.file, old->def.line);
        return 0;
    }
    char *desc = NULL;
    if (f[7] && !(desc = cairn_strdup(f[7]->val)))
        return cairn_in_err(c, r->line, r->col, "out of memory");
    old->e = m.e;
    old->n = m.n;
    old->h = m.h;
    old->given = m.given;
    old->hold = m.hold;
    old->sd_en = m.sd_en;
    old->sd_h = m.sd_h;
    old->desc = desc;
    old->def = src;
    return 0;
}

int cairn_in_rec_text(in_ctx *c, int line, int col, const char *what, const char *text)
{
    char **slot = !strcmp(what, "title") ? &c->net->title : &c->net->description;
    if (!cairn_in_utf8_valid(text, strlen(text)))
        return cairn_in_err(c, line, col, "%s: text is not valid UTF-8", what);
    if (*slot)
        return cairn_in_err(c, line, col, "%s is given more than once", what);
    if (!(*slot = cairn_strdup(text)))
        return cairn_in_err(c, line, col, "out of memory");
    return 0;
}
