/* The network container: marks, instruments, setups, observations, and an
 * id → index hash so that million-mark field books load in linear time. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/model.h"

/* Open-addressing hash of ids (FNV-1a), storing indices into an external
 * array of records whose first member is the id string. */
struct cairn_idmap {
    int *slot;     /* index + 1, 0 = empty */
    size_t cap;    /* power of two */
    size_t count;
};

static uint64_t fnv1a(const char *s)
{
    uint64_t h = 1469598103934665603ULL;
    for (; *s; s++) {
        h ^= (unsigned char)*s;
        h *= 1099511628211ULL;
    }
    return h;
}

typedef const char *(*id_of_fn)(const void *base, int idx);

static const char *mark_id(const void *base, int idx)
{
    return ((const cairn_mark *)base)[idx].id;
}

static const char *inst_id(const void *base, int idx)
{
    return ((const cairn_instrument *)base)[idx].id;
}

static int idmap_find(const cairn_idmap *m, const void *base, id_of_fn id_of,
                      const char *id)
{
    if (!m || !m->cap)
        return -1;
    size_t mask = m->cap - 1;
    for (size_t i = fnv1a(id) & mask;; i = (i + 1) & mask) {
        int v = m->slot[i];
        if (!v)
            return -1;
        if (!strcmp(id_of(base, v - 1), id))
            return v - 1;
    }
}

static void idmap_put_slot(int *slot, size_t cap, const char *id, int idx)
{
    size_t mask = cap - 1;
    size_t i = fnv1a(id) & mask;
    while (slot[i])
        i = (i + 1) & mask;
    slot[i] = idx + 1;
}

static int idmap_insert(cairn_idmap *m, const void *base, id_of_fn id_of, int idx)
{
    if ((m->count + 1) * 2 > m->cap) {
        size_t ncap = m->cap ? m->cap * 2 : 64;
        int *ns = calloc(ncap, sizeof *ns);
        if (!ns)
            return -1;
        for (size_t i = 0; i < m->cap; i++)
            if (m->slot[i])
                idmap_put_slot(ns, ncap, id_of(base, m->slot[i] - 1), m->slot[i] - 1);
        free(m->slot);
        m->slot = ns;
        m->cap = ncap;
    }
    idmap_put_slot(m->slot, m->cap, id_of(base, idx), idx);
    m->count++;
    return 0;
}

static void idmap_free(cairn_idmap *m)
{
    if (m) {
        free(m->slot);
        free(m);
    }
}

void cairn_options_default(cairn_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->dimension = 0;
    opt->refraction = 0.13;
    opt->scale = 1.0;
    opt->confidence = 0.95;
    opt->alpha = 0.001;
    opt->power = 0.80;
    opt->global_alpha = 0.05;
    opt->max_iterations = 25;
}

cairn_net *cairn_net_new(void)
{
    cairn_net *net = calloc(1, sizeof *net);
    if (!net)
        return NULL;
    net->length_unit = CAIRN_LENGTH_M;
    net->angle_unit = CAIRN_ANGLE_DMS;
    cairn_options_default(&net->opt);
    net->markmap = calloc(1, sizeof *net->markmap);
    net->instmap = calloc(1, sizeof *net->instmap);
    if (!net->markmap || !net->instmap)
        cairn_net_free(&net);
    return net;
}

void cairn_net_free(cairn_net **pnet)
{
    if (!pnet || !*pnet)
        return;
    cairn_net *net = *pnet;
    for (size_t i = 0; i < net->nmarks; i++)
        free(net->marks[i].desc);
    free(net->marks);
    free(net->insts);
    free(net->setups);
    free(net->obs);
    for (size_t i = 0; i < net->nfiles; i++)
        free(net->files[i]);
    free(net->files);
    free(net->title);
    free(net->description);
    idmap_free(net->markmap);
    idmap_free(net->instmap);
    free(net);
    *pnet = NULL;
}

int cairn_net_find_mark(const cairn_net *net, const char *id)
{
    return idmap_find(net->markmap, net->marks, mark_id, id);
}

int cairn_net_mark(cairn_net *net, const char *id, cairn_src src)
{
    int k = cairn_net_find_mark(net, id);
    if (k >= 0)
        return k;
    if (strlen(id) > CAIRN_ID_MAX || net->nmarks >= INT32_MAX - 1)
        return -1;
    if (cairn_grow((void **)&net->marks, &net->cap_marks, net->nmarks + 1,
                   sizeof *net->marks))
        return -1;
    cairn_mark *m = &net->marks[net->nmarks];
    memset(m, 0, sizeof *m);
    strcpy(m->id, id);
    m->ref = src;
    if (idmap_insert(net->markmap, net->marks, mark_id, (int)net->nmarks))
        return -1;
    return (int)net->nmarks++;
}

int cairn_net_find_inst(const cairn_net *net, const char *id)
{
    return idmap_find(net->instmap, net->insts, inst_id, id);
}

int cairn_net_add_inst(cairn_net *net, const cairn_instrument *inst)
{
    if (cairn_net_find_inst(net, inst->id) >= 0)
        return -1;
    if (cairn_grow((void **)&net->insts, &net->cap_insts, net->ninsts + 1,
                   sizeof *net->insts))
        return -1;
    net->insts[net->ninsts] = *inst;
    if (idmap_insert(net->instmap, net->insts, inst_id, (int)net->ninsts))
        return -1;
    return (int)net->ninsts++;
}

int cairn_net_add_setup(cairn_net *net, const cairn_setup *setup)
{
    if (cairn_grow((void **)&net->setups, &net->cap_setups, net->nsetups + 1,
                   sizeof *net->setups))
        return -1;
    net->setups[net->nsetups] = *setup;
    return (int)net->nsetups++;
}

int cairn_net_add_obs(cairn_net *net, const cairn_obs *obs)
{
    if (net->nobs >= INT32_MAX - 1 ||
        cairn_grow((void **)&net->obs, &net->cap_obs, net->nobs + 1, sizeof *net->obs))
        return -1;
    net->obs[net->nobs] = *obs;
    if (obs->kind == CAIRN_OBS_DIRECTION && obs->setup >= 0 &&
        (size_t)obs->setup < net->nsetups)
        net->setups[obs->setup].ndirections++;
    return (int)net->nobs++;
}

const char *cairn_net_file(cairn_net *net, const char *path)
{
    for (size_t i = 0; i < net->nfiles; i++)
        if (!strcmp(net->files[i], path))
            return net->files[i];
    if (cairn_grow((void **)&net->files, &net->cap_files, net->nfiles + 1,
                   sizeof *net->files))
        return NULL;
    char *copy = cairn_strdup(path);
    if (!copy)
        return NULL;
    net->files[net->nfiles++] = copy;
    return copy;
}

int cairn_id_valid(const char *id)
{
    size_t n = 0;
    for (const char *p = id; *p; p++, n++) {
        char c = *p;
        int ok = (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') ||
                 (c >= '0' && c <= '9') || c == '_' || c == '.' || c == '-' || c == '/';
        if (!ok)
            return 0;
    }
    return n >= 1 && n <= CAIRN_ID_MAX;
}

const char *cairn_obs_kind_name(cairn_obs_kind k)
{
    static const char *const names[CAIRN_OBS_NKINDS] = {
        "direction", "angle", "azimuth", "horiz", "slope", "zenith",
        "rise", "trig-rise", "control-e", "control-n", "control-h"};
    return (unsigned)k < CAIRN_OBS_NKINDS ? names[k] : "?";
}
