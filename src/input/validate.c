/* Cross-record checks, made once everything is read: instruments named
 * but never defined, the default instrument of setups and rises, the
 * precisions a reading takes from its instrument, and marks that nothing
 * observes. Default instruments are filled in here (FORMAT.md: "when a
 * setup or rise names no inst and exactly one instrument of that kind
 * exists, that one is used"). */
#include <stdlib.h>
#include <string.h>

#include "input_int.h"

static int err_at(cairn_error *err, const cairn_src *s, const char *fmt, const char *a,
                  const char *b)
{
    return cairn_error_add(err, CAIRN_SEV_ERROR, s->file, s->line, s->col, fmt, a, b);
}

/* The precision bit a booked reading takes from its instrument, or 0. */
static unsigned needed_bit(const cairn_obs *o)
{
    switch (o->kind) {
    case CAIRN_OBS_DIRECTION: case CAIRN_OBS_ANGLE: return CAIRN_INST_DIRECTION;
    case CAIRN_OBS_ZENITH: return CAIRN_INST_ZENITH;
    case CAIRN_OBS_SLOPE: case CAIRN_OBS_HORIZ: return CAIRN_INST_DISTANCE;
    case CAIRN_OBS_RISE:
        return o->km > 0 ? CAIRN_INST_PER_KM : o->setups > 0 ? CAIRN_INST_PER_SETUP : 0;
    default: return 0;
    }
}

static const char *bit_name(unsigned bit)
{
    switch (bit) {
    case CAIRN_INST_DIRECTION: return "direction";
    case CAIRN_INST_ZENITH: return "zenith";
    case CAIRN_INST_DISTANCE: return "distance";
    case CAIRN_INST_PER_KM: return "per-km";
    default: return "per-setup";
    }
}

static const char *own_sd_name(cairn_obs_kind k)
{
    switch (k) {
    case CAIRN_OBS_DIRECTION: return "hz-sd on the sight";
    case CAIRN_OBS_ZENITH: return "zen-sd on the sight";
    case CAIRN_OBS_SLOPE: case CAIRN_OBS_HORIZ: return "dist-sd on the sight";
    default: return "sd";
    }
}

int cairn_validate(cairn_net *net, cairn_error *err)
{
    int before = err->nerrors;
    int nts = 0, nlv = 0, ts = -1, lv = -1;
    for (size_t i = 0; i < net->ninsts; i++) {
        const cairn_instrument *in = &net->insts[i];
        if (!in->set) {
            err_at(err, &in->src, "undefined instrument '%s'%s", in->id, "");
        } else if (in->kind == CAIRN_INST_LEVEL) {
            nlv++;
            lv = (int)i;
        } else {
            nts++;
            ts = (int)i;
        }
    }
    unsigned char *needs = calloc(net->nsetups + 1, 1);
    unsigned *reported = calloc(net->ninsts + 1, sizeof *reported);
    unsigned char *touched = calloc(net->nmarks + 1, 1);
    if (!needs || !reported || !touched) {
        free(needs);
        free(reported);
        free(touched);
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    }
    for (size_t i = 0; i < net->nobs; i++) {
        const cairn_obs *o = &net->obs[i];
        if (o->setup >= 0)
            needs[o->setup] |= o->sd.has ? 2 : 3; /* 1: needs the instrument, 2: has a sight */
    }

    /* Setups: the instrument must be a total station; default it. */
    for (size_t i = 0; i < net->nsetups; i++) {
        cairn_setup *s = &net->setups[i];
        touched[s->at] = 1;
        if (s->inst >= 0) {
            const cairn_instrument *in = &net->insts[s->inst];
            if (in->set && in->kind != CAIRN_INST_TOTAL_STATION)
                err_at(err, &s->src, "instrument %s is a level; a setup needs a total station%s",
                       in->id, "");
        } else if (nts == 1) {
            s->inst = ts;
        } else if (needs[i] & 1) {
            err_at(err, &s->src,
                   nts ? "setup at %s names no instrument and there are several total "
                         "stations%s (name one with inst)"
                       : "setup at %s names no instrument and no total station is defined%s",
                   net->marks[s->at].id, "");
        }
    }

    for (size_t i = 0; i < net->nobs; i++) {
        cairn_obs *o = &net->obs[i];
        if (o->at >= 0) touched[o->at] = 1;
        if (o->from >= 0) touched[o->from] = 1;
        if (o->to >= 0) touched[o->to] = 1;
        if (o->setup >= 0)
            o->inst = net->setups[o->setup].inst;
        int level = o->kind == CAIRN_OBS_RISE;
        if (o->kind == CAIRN_OBS_ANGLE || level) {
            const char *what = level ? "rise" : "angle";
            if (o->inst >= 0) {
                const cairn_instrument *in = &net->insts[o->inst];
                if (in->set && (in->kind == CAIRN_INST_LEVEL) != level) {
                    err_at(err, &o->src,
                           level ? "instrument %s is a total station; a %s needs a level"
                                 : "instrument %s is a level; an %s needs a total station",
                           in->id, what);
                    continue;
                }
            } else if ((level ? nlv : nts) == 1) {
                o->inst = level ? lv : ts;
            } else if (!o->sd.has) {
                int n = level ? nlv : nts;
                err_at(err, &o->src,
                       n ? "%s has no sd and names no instrument, and there are several %s "
                           "(name one with inst)"
                         : "%s has no sd and there is no %s to take it from",
                       what, n ? (level ? "levels" : "total stations")
                               : (level ? "level" : "total station"));
                continue;
            }
        }
        unsigned bit = needed_bit(o);
        if (o->sd.has || !bit || o->inst < 0)
            continue;
        const cairn_instrument *in = &net->insts[o->inst];
        /* A wrong kind of instrument has been reported already. */
        if (!in->set || (in->kind == CAIRN_INST_LEVEL) != (o->kind == CAIRN_OBS_RISE) ||
            (in->set & bit) || (reported[o->inst] & bit))
            continue;
        reported[o->inst] |= bit;
        cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line, o->src.col,
                        "instrument %s gives no %s precision, which this %s reading needs "
                        "(add %s to the instrument or %s)",
                        in->id, bit_name(bit), cairn_obs_kind_name(o->kind), bit_name(bit),
                        own_sd_name(o->kind));
    }

    /* After an error a mark or setup may look unobserved only because its
     * observation lines were rejected: the warnings would mislead. */
    int quiet = before > 0;
    for (size_t i = 0; i < net->nmarks && !quiet; i++) {
        const cairn_mark *m = &net->marks[i];
        if (!touched[i]) {
            const cairn_src *s = m->def.line ? &m->def : &m->ref;
            cairn_error_add(err, CAIRN_SEV_WARNING, s->file, s->line, s->col,
                            "mark %s is not observed", m->id);
        }
    }
    for (size_t i = 0; i < net->nsetups && !quiet; i++) {
        const cairn_setup *s = &net->setups[i];
        /* A setup without any sight is harmless but worth a word. */
        if (!(needs[i] & 2))
            cairn_error_add(err, CAIRN_SEV_WARNING, s->src.file, s->src.line, s->src.col,
                            "setup at %s has no sights", net->marks[s->at].id);
    }
    free(needs);
    free(reported);
    free(touched);
    return err->nerrors > before ? -1 : 0;
}
