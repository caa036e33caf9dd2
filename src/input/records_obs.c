/* Record handlers for observations: setups and their sights, angles,
 * azimuths and rises. Values become SI here; instrument names are resolved
 * (and defaults chosen) by cairn_validate once everything is read, because
 * an XML project may define its instruments after the setups. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "input_int.h"

#define SHOW(s) cairn_in_show((s), show, sizeof show)

static int mark_ref(in_ctx *c, const in_rec *r, const in_field *f, int *pk)
{
    cairn_src src = {c->file, f->line, f->vcol};
    *pk = cairn_net_mark(c->net, f->val, src);
    return *pk < 0 ? cairn_in_err(c, r->line, r->col, "out of memory") : 0;
}

static int distance(in_ctx *c, const in_rec *r, const in_field *f, double *pm)
{
    char show[64];
    if (cairn_in_val_length(c, r, f, pm))
        return -1;
    if (!(*pm > 0))
        return cairn_in_err(c, f->line, f->vcol, "%s: distance must be positive, not '%s'",
                            f->key, SHOW(f->val));
    return 0;
}

/* An atmospheric (or other) distance correction in parts per million.
 * Real ones are tens of ppm; beyond 1 % it is a booking slip, and an
 * unbounded value could make a distance zero, negative or infinite (the
 * setup's and the sight's ppm are added). */
#define PPM_MAX 10000.0
static int ppm_val(in_ctx *c, const in_rec *r, const in_field *f, double *pppm)
{
    char show[64];
    double x;
    if (cairn_in_val_number(c, r, f, &x))
        return -1;
    if (!(fabs(x) <= PPM_MAX))
        return cairn_in_err(c, f->line, f->vcol, "ppm: '%s' is outside [-%g, %g]", SHOW(f->val),
                            PPM_MAX, PPM_MAX);
    *pppm = x;
    return 0;
}

static int obs_sd(in_ctx *c, const in_rec *r, const in_field *f, unsigned allowed,
                  cairn_sd *sd)
{
    if (cairn_in_val_sd(c, r, f, allowed, sd))
        return -1;
    if (!(sd->length > 0 || sd->angle > 0 || sd->ppm > 0))
        return cairn_in_err(c, f->line, f->vcol, "%s: standard deviation must be positive",
                            f->key);
    return 0;
}

static int require_id(in_ctx *c, const in_rec *r, const in_field *f, const char *key)
{
    if (!f)
        return cairn_in_err(c, r->line, r->col, "%s record needs '%s'", r->name, key);
    return cairn_in_val_id(c, r, f, "mark");
}

static void obs_init(cairn_obs *o, cairn_obs_kind kind, in_ctx *c, int line, int col)
{
    memset(o, 0, sizeof *o);
    o->kind = kind;
    o->at = o->from = o->to = -1;
    o->setup = o->sight = o->inst = -1;
    o->face = 1;
    o->src.file = c->file;
    o->src.line = line;
    o->src.col = col;
}

static int add_obs(in_ctx *c, const in_rec *r, const cairn_obs *o)
{
    return cairn_net_add_obs(c->net, o) < 0 ? cairn_in_err(c, r->line, r->col, "out of memory")
                                            : 0;
}

int cairn_in_rec_setup(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"at", "inst", "ih", "ppm", NULL};
    const in_field *f[4];
    cairn_setup s;
    memset(&s, 0, sizeof s);
    s.inst = -1;
    c->setup = -2; /* until this record proves good: its sights are checked, not kept */
    if (cairn_in_match(c, r, keys, f) || require_id(c, r, f[0], "at"))
        return -1;
    if (f[1] && cairn_in_val_id(c, r, f[1], "instrument"))
        return -1;
    if (f[2] && cairn_in_val_length(c, r, f[2], &s.ih))
        return -1;
    if (f[3] && ppm_val(c, r, f[3], &s.ppm))
        return -1;
    if (mark_ref(c, r, f[0], &s.at))
        return -1;
    if (f[1] && (s.inst = cairn_in_inst_ref(c, f[1]->val, f[1]->line, f[1]->vcol)) < 0)
        return cairn_in_err(c, r->line, r->col, "out of memory");
    s.src.file = c->file;
    s.src.line = r->line;
    s.src.col = r->col;
    int k = cairn_net_add_setup(c->net, &s);
    if (k < 0)
        return cairn_in_err(c, r->line, r->col, "out of memory");
    c->setup = k;
    return 0;
}

int cairn_in_rec_sight(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"to", "hz", "zen", "slope", "horiz", "th", "face",
                                       "ppm", "hz-sd", "zen-sd", "dist-sd", NULL};
    enum { TO, HZ, ZEN, SLOPE, HORIZ, TH, FACE, PPM, HZSD, ZENSD, DISTSD };
    const in_field *f[11];
    double hz = 0, zen = 0, slope = 0, horiz = 0, th = 0, ppm = 0;
    int face = 1;
    cairn_sd hz_sd = {0, 0, 0, 0}, zen_sd = hz_sd, dist_sd = hz_sd;
    if (c->setup == -1)
        return cairn_in_err(c, r->line, r->col,
                            "sight before any setup (an 'at' line must open the setup)");
    if (cairn_in_match(c, r, keys, f) || require_id(c, r, f[TO], "to"))
        return -1;
    if (!f[HZ] && !f[ZEN] && !f[SLOPE] && !f[HORIZ])
        return cairn_in_err(c, r->line, r->col,
                            "sight to %s has no reading (hz, zen, slope or horiz)", f[TO]->val);
    if (f[HZ] && cairn_in_val_circle(c, r, f[HZ], &hz)) return -1;
    if (f[ZEN] && cairn_in_val_circle(c, r, f[ZEN], &zen)) return -1;
    if (f[SLOPE] && distance(c, r, f[SLOPE], &slope)) return -1;
    if (f[HORIZ] && distance(c, r, f[HORIZ], &horiz)) return -1;
    if (f[TH] && cairn_in_val_length(c, r, f[TH], &th)) return -1;
    if (f[FACE] && cairn_in_val_int(c, r, f[FACE], 1, 2, &face)) return -1;
    if (f[PPM] && ppm_val(c, r, f[PPM], &ppm)) return -1;
    if (f[HZSD] && obs_sd(c, r, f[HZSD], CAIRN_SD_ANGLE, &hz_sd)) return -1;
    if (f[ZENSD] && obs_sd(c, r, f[ZENSD], CAIRN_SD_ANGLE, &zen_sd)) return -1;
    if (f[DISTSD] && obs_sd(c, r, f[DISTSD], CAIRN_SD_LENGTH | CAIRN_SD_PPM, &dist_sd))
        return -1;
    if (f[HZSD] && !f[HZ])
        return cairn_in_err(c, f[HZSD]->line, f[HZSD]->kcol, "hz-sd without an hz reading");
    if (f[ZENSD] && !f[ZEN])
        return cairn_in_err(c, f[ZENSD]->line, f[ZENSD]->kcol, "zen-sd without a zen reading");
    if (f[DISTSD] && !f[SLOPE] && !f[HORIZ])
        return cairn_in_err(c, f[DISTSD]->line, f[DISTSD]->kcol,
                            "dist-sd without a slope or horiz reading");
    if (c->setup < 0)
        return 0; /* the setup line was bad and has been reported */

    cairn_net *net = c->net;
    const cairn_setup *s = &net->setups[c->setup];
    int to;
    if (!strcmp(net->marks[s->at].id, f[TO]->val))
        return cairn_in_err(c, f[TO]->line, f[TO]->vcol, "sight from %s to itself", f[TO]->val);
    if (mark_ref(c, r, f[TO], &to))
        return -1;
    s = &net->setups[c->setup];
    /* FORMAT.md: face two when booked so or when the zenith angle exceeds
     * half a circle. */
    if (f[ZEN] && zen > CAIRN_PI)
        face = 2;
    cairn_obs o;
    int sight = net->nsights++;
    const struct { int key; cairn_obs_kind kind; double value; const cairn_sd *sd; } rd[4] = {
        {HZ, CAIRN_OBS_DIRECTION, hz, &hz_sd},
        {ZEN, CAIRN_OBS_ZENITH, zen, &zen_sd},
        {SLOPE, CAIRN_OBS_SLOPE, slope, &dist_sd},
        {HORIZ, CAIRN_OBS_HORIZ, horiz, &dist_sd},
    };
    for (int i = 0; i < 4; i++) {
        if (!f[rd[i].key])
            continue;
        obs_init(&o, rd[i].kind, c, f[rd[i].key]->line, f[rd[i].key]->kcol);
        o.at = s->at;
        o.to = to;
        o.setup = c->setup;
        o.sight = sight;
        o.inst = s->inst;
        o.value = rd[i].value;
        o.ih = s->ih;
        o.th = th;
        o.ppm = s->ppm + ppm;
        o.face = face;
        o.sd = *rd[i].sd;
        if (add_obs(c, r, &o))
            return -1;
    }
    return 0;
}

static int distinct(in_ctx *c, const in_rec *r, const in_field *a, const in_field *b)
{
    if (strcmp(a->val, b->val))
        return 0;
    return cairn_in_err(c, b->line, b->vcol, "%s and %s are the same mark (%s)", a->key, b->key,
                        a->val);
}

int cairn_in_rec_angle(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"at", "from", "to", "value", "sd", "inst", NULL};
    const in_field *f[6];
    cairn_obs o;
    obs_init(&o, CAIRN_OBS_ANGLE, c, r->line, r->col);
    if (cairn_in_match(c, r, keys, f) || require_id(c, r, f[0], "at") ||
        require_id(c, r, f[1], "from") || require_id(c, r, f[2], "to"))
        return -1;
    if (!f[3])
        return cairn_in_err(c, r->line, r->col, "angle record needs 'value'");
    if (cairn_in_val_circle(c, r, f[3], &o.value))
        return -1;
    if (f[4] && obs_sd(c, r, f[4], CAIRN_SD_ANGLE, &o.sd))
        return -1;
    if (f[5] && cairn_in_val_id(c, r, f[5], "instrument"))
        return -1;
    if (distinct(c, r, f[0], f[1]) || distinct(c, r, f[0], f[2]) ||
        distinct(c, r, f[1], f[2]))
        return -1;
    if (mark_ref(c, r, f[0], &o.at) || mark_ref(c, r, f[1], &o.from) ||
        mark_ref(c, r, f[2], &o.to))
        return -1;
    if (f[5] && (o.inst = cairn_in_inst_ref(c, f[5]->val, f[5]->line, f[5]->vcol)) < 0)
        return cairn_in_err(c, r->line, r->col, "out of memory");
    return add_obs(c, r, &o);
}

int cairn_in_rec_azimuth(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"from", "to", "value", "sd", NULL};
    const in_field *f[4];
    cairn_obs o;
    obs_init(&o, CAIRN_OBS_AZIMUTH, c, r->line, r->col);
    if (cairn_in_match(c, r, keys, f) || require_id(c, r, f[0], "from") ||
        require_id(c, r, f[1], "to"))
        return -1;
    if (!f[2])
        return cairn_in_err(c, r->line, r->col, "azimuth record needs 'value'");
    if (cairn_in_val_circle(c, r, f[2], &o.value))
        return -1;
    if (!f[3])
        return cairn_in_err(c, r->line, r->col,
                            "azimuth needs its own sd (no instrument precision applies)");
    if (obs_sd(c, r, f[3], CAIRN_SD_ANGLE, &o.sd) || distinct(c, r, f[0], f[1]))
        return -1;
    if (mark_ref(c, r, f[0], &o.from) || mark_ref(c, r, f[1], &o.to))
        return -1;
    return add_obs(c, r, &o);
}

int cairn_in_rec_rise(in_ctx *c, const in_rec *r)
{
    static const char *const keys[] = {"from", "to", "value", "km", "setups", "sd", "inst",
                                       NULL};
    const in_field *f[7];
    cairn_obs o;
    obs_init(&o, CAIRN_OBS_RISE, c, r->line, r->col);
    if (cairn_in_match(c, r, keys, f) || require_id(c, r, f[0], "from") ||
        require_id(c, r, f[1], "to"))
        return -1;
    if (!f[2])
        return cairn_in_err(c, r->line, r->col, "rise record needs 'value'");
    if (cairn_in_val_length(c, r, f[2], &o.value))
        return -1;
    if (f[3]) {
        if (cairn_in_val_number(c, r, f[3], &o.km))
            return -1;
        if (!(o.km > 0))
            return cairn_in_err(c, f[3]->line, f[3]->vcol,
                                "km: length of the run must be positive");
    }
    if (f[4] && cairn_in_val_int(c, r, f[4], 1, 1000000, &o.setups))
        return -1;
    if (f[3] && f[4])
        return cairn_in_err(c, f[4]->line, f[4]->kcol, "give km or setups, not both");
    if (f[5] && obs_sd(c, r, f[5], CAIRN_SD_LENGTH, &o.sd))
        return -1;
    if (!f[3] && !f[4] && !f[5])
        return cairn_in_err(c, r->line, r->col, "rise needs km, setups or its own sd");
    if (f[6] && cairn_in_val_id(c, r, f[6], "instrument"))
        return -1;
    if (distinct(c, r, f[0], f[1]))
        return -1;
    if (mark_ref(c, r, f[0], &o.from) || mark_ref(c, r, f[1], &o.to))
        return -1;
    if (f[6] && (o.inst = cairn_in_inst_ref(c, f[6]->val, f[6]->line, f[6]->vcol)) < 0)
        return cairn_in_err(c, r->line, r->col, "out of memory");
    return add_obs(c, r, &o);
}
