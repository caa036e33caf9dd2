/* The report (cairn/report.h) filled from an adjustment, its analysis and
 * the diagnoses, and the atomic writing of the whole result set.
 *
 * The report struct is deliberately independent of the solve and quality
 * structs (report.h); this file is the one place that translates: mark
 * indices of the net become indices into the report's marks (only marks in
 * the adjustment are shown), statuses and roles map one to one, and every
 * string the report points at is owned by the store below. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cairn/output.h"
#include "jobs.h"

#define WHERE_MAX (CAIRN_ID_MAX + 4)

struct cairn_report_store {
    int *map;                   /* net mark index -> report mark index, or -1 */
    cairn_report_file *files;
    cairn_report_iter *iters;
    char (*where)[WHERE_MAX];   /* per iteration: "N7.e" */
    cairn_report_mark *marks;
    cairn_report_obs *obs;
    char **dtext;               /* per observation: "likely cause" text or NULL */
    cairn_report_pair *pairs;
    cairn_report_control *controls;
    char **notes;
    size_t nnotes;
    char *command_line;
    char *fixed;
    char utc[40];
    char tolerance[96];
};

static void store_free(struct cairn_report_store *s, size_t nobs)
{
    if (!s)
        return;
    if (s->dtext)
        for (size_t i = 0; i < nobs; i++)
            free(s->dtext[i]);
    for (size_t i = 0; s->notes && i < s->nnotes; i++)
        free(s->notes[i]);
    free(s->map);
    free(s->files);
    free(s->iters);
    free(s->where);
    free(s->marks);
    free(s->obs);
    free(s->dtext);
    free(s->pairs);
    free(s->controls);
    free(s->notes);
    free(s->command_line);
    free(s->fixed);
    free(s);
}

void cairn_report_clear(cairn_report_built *b)
{
    if (!b)
        return;
    store_free(b->store, b->report.nobs);
    memset(b, 0, sizeof *b);
}

static const char *comp_name(unsigned c)
{
    return c == CAIRN_E ? "e" : c == CAIRN_N ? "n" : "h";
}

/* A word of the command line as a shell would need it: quoted in '...'
 * when it holds anything but plain path characters. */
static int shell_safe(const char *a)
{
    if (!*a)
        return 0;
    for (; *a; a++)
        if (!strchr("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789"
                    "_./,=:+-@%", *a))
            return 0;
    return 1;
}

static char *join_command_line(int argc, char *const *argv)
{
    size_t n = sizeof "cairn";
    for (int i = 0; i < argc; i++)
        n += 4 * strlen(argv[i]) + 3;
    char *s = malloc(n), *p = s;
    if (!s)
        return NULL;
    p += sprintf(p, "cairn");
    for (int i = 0; i < argc; i++) {
        *p++ = ' ';
        if (shell_safe(argv[i])) {
            p += sprintf(p, "%s", argv[i]);
            continue;
        }
        *p++ = '\'';
        for (const char *q = argv[i]; *q; q++) {
            if (*q == '\'') {
                memcpy(p, "'\\''", 4);
                p += 4;
            } else {
                *p++ = *q;
            }
        }
        *p++ = '\'';
    }
    *p = 0;
    return s;
}

/* "transposed digits: slope 190.5666 -> 190.6566 (digits ...), fit 0.3 sd"
 * or the note alone when nothing explains the blunder. */
static char *cause_text(const cairn_net *net, const cairn_diagnosis *d)
{
    char kind[40], buf[CAIRN_ID_MAX + 256];
    snprintf(kind, sizeof kind, "%s", cairn_diag_kind_name(d->kind));
    for (char *c = kind; *c; c++)
        if (*c == '-')
            *c = ' ';
    if (d->kind == CAIRN_DIAG_NONE)
        snprintf(buf, sizeof buf, "%s", d->note[0] ? d->note : "no simple explanation");
    else if (d->kind == CAIRN_DIAG_WRONG_MARK && d->mark >= 0 && (size_t)d->mark < net->nmarks)
        snprintf(buf, sizeof buf, "%s (%s meant): %s", kind, net->marks[d->mark].id, d->note);
    else
        snprintf(buf, sizeof buf, "%s: %s", kind, d->note);
    return cairn_strdup(buf);
}

static cairn_report_role role_of(cairn_role r)
{
    switch (r) {
    case CAIRN_ROLE_HELD: return CAIRN_REPORT_HELD;
    case CAIRN_ROLE_WEIGHTED: return CAIRN_REPORT_WEIGHTED;
    default: return CAIRN_REPORT_ADJUSTED;
    }
}

static cairn_report_status status_of(cairn_obs_status s)
{
    switch (s) {
    case CAIRN_OBS_FLAGGED: return CAIRN_REPORT_FLAGGED;
    case CAIRN_OBS_REJECTED: return CAIRN_REPORT_REJECTED;
    case CAIRN_OBS_UNCHECKED: return CAIRN_REPORT_UNCHECKED;
    default: return CAIRN_REPORT_OK;
    }
}

static int idx(const struct cairn_report_store *s, const cairn_net *net, int m)
{
    return m >= 0 && (size_t)m < net->nmarks ? s->map[m] : -1;
}

static int fill_marks(cairn_report *r, struct cairn_report_store *s,
                      const cairn_adjustment *adj, const cairn_analysis *an)
{
    const cairn_net *net = adj->net;
    s->map = malloc((net->nmarks ? net->nmarks : 1) * sizeof *s->map);
    s->marks = calloc(net->nmarks ? net->nmarks : 1, sizeof *s->marks);
    if (!s->map || !s->marks)
        return -1;
    size_t k = 0;
    for (size_t m = 0; m < net->nmarks; m++) {
        unsigned t = adj->in_adj[m];
        s->map[m] = -1;
        if (!t)
            continue;
        s->map[m] = (int)k;
        cairn_report_mark *rm = &s->marks[k++];
        rm->id = net->marks[m].id;
        rm->role = role_of(adj->role[m]);
        rm->has = t;
        rm->held = adj->datum_free ? 0 : net->marks[m].hold & t;
        rm->fixed = adj->fixed[m];
        rm->e = adj->e[m];
        rm->n = adj->n[m];
        rm->h = adj->h[m];
        rm->sd_e = an->sd_e[m];
        rm->sd_n = an->sd_n[m];
        rm->sd_h = an->sd_h[m];
        rm->major = an->major[m];
        rm->minor = an->minor[m];
        rm->azimuth = an->azimuth[m];
    }
    r->marks = s->marks;
    r->nmarks = k;
    return 0;
}

static int fill_obs(cairn_report *r, struct cairn_report_store *s,
                    const cairn_adjustment *adj, const cairn_analysis *an,
                    const cairn_diagnoses *dg)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    size_t n = p->nobs;
    s->obs = calloc(n ? n : 1, sizeof *s->obs);
    s->dtext = calloc(n ? n : 1, sizeof *s->dtext);
    if (!s->obs || !s->dtext)
        return -1;
    r->obs = s->obs;
    r->nobs = n;
    for (size_t i = 0; i < n; i++) {
        const cairn_obs *o = &p->obs[i];
        cairn_report_obs *ro = &s->obs[i];
        ro->seq = i + 1;
        ro->kind = cairn_obs_kind_name(o->kind);
        ro->angular = cairn_obs_kind_angular(o->kind);
        ro->at = idx(s, net, o->at);
        ro->from = idx(s, net, o->from);
        ro->to = idx(s, net, o->to);
        ro->observed = o->value;
        ro->residual = adj->residual[i];
        ro->adjusted = o->value + adj->residual[i];
        ro->sd = adj->sigma[i];
        ro->r = an->r[i];
        ro->w = an->w[i];
        ro->mdb = an->mdb[i];
        ro->nabla = an->nabla[i];
        ro->sd_nabla = an->r[i] >= CAIRN_R_MIN ? adj->sigma[i] / sqrt(an->r[i]) : NAN;
        ro->status = status_of(an->status[i]);
        ro->file = o->src.file;
        ro->line = o->src.line;
        if (dg && i < dg->n && dg->made[i]) {
            if (!(s->dtext[i] = cause_text(net, &dg->d[i])))
                return -1;
            ro->diagnosis = s->dtext[i];
        }
    }
    /* A rejected observation: its w and r when it was rejected (what made
     * it go), and its misfit to the final solution as the blunder, as the
     * diagnosis uses it. */
    for (size_t k = 0; k < an->nrejections; k++) {
        const cairn_rejection *rj = &an->rejections[k];
        if (rj->obs >= n)
            continue;
        cairn_report_obs *ro = &s->obs[rj->obs];
        ro->w = rj->w;
        ro->r = rj->r;
        ro->nabla = -adj->residual[rj->obs];
        ro->sd_nabla = rj->r >= CAIRN_R_MIN ? adj->sigma[rj->obs] / sqrt(rj->r) : NAN;
    }
    return 0;
}

static int fill_pairs(cairn_report *r, struct cairn_report_store *s,
                      const cairn_adjustment *adj, const cairn_analysis *an)
{
    s->pairs = calloc(an->npairs ? an->npairs : 1, sizeof *s->pairs);
    if (!s->pairs)
        return -1;
    size_t k = 0;
    for (size_t i = 0; i < an->npairs; i++) {
        const cairn_pair *pr = &an->pairs[i];
        int a = idx(s, adj->net, pr->from), b = idx(s, adj->net, pr->to);
        if (a < 0 || b < 0 || !pr->available || !pr->plane)
            continue;
        cairn_report_pair *rp = &s->pairs[k++];
        rp->from = a;
        rp->to = b;
        rp->distance = pr->distance;
        rp->major = pr->ellipse.a;
        rp->minor = pr->ellipse.b;
        rp->azimuth = pr->ellipse.azimuth;
        rp->allowed = pr->allowed;
        rp->pass = pr->pass;
    }
    r->pairs = s->pairs;
    r->npairs = k;
    return 0;
}

static int fill_iters(cairn_report *r, struct cairn_report_store *s,
                      const cairn_adjustment *adj)
{
    size_t n = adj->iterations > 0 ? (size_t)adj->iterations : 0;
    s->iters = calloc(n ? n : 1, sizeof *s->iters);
    s->where = calloc(n ? n : 1, sizeof *s->where);
    if (!s->iters || !s->where)
        return -1;
    for (size_t i = 0; i < n; i++) {
        const cairn_iter_log *it = &adj->log[i];
        cairn_report_iter *ri = &s->iters[i];
        ri->iteration = it->iteration;
        ri->vtpv = it->vtpv;
        ri->max_correction = it->max_length;
        ri->step = it->step;
        ri->mu = it->mu;
        if (it->max_length_mark >= 0 && (size_t)it->max_length_mark < adj->net->nmarks) {
            snprintf(s->where[i], WHERE_MAX, "%s.%s", adj->net->marks[it->max_length_mark].id,
                     comp_name(it->max_length_comp));
            ri->max_where = s->where[i];
        }
    }
    r->iters = s->iters;
    r->niters = n;
    return 0;
}

static int fill_run(cairn_report *r, struct cairn_report_store *s,
                    const cairn_adjustment *adj, const cairn_report_run *run)
{
    const cairn_net *net = adj->net;
    s->files = calloc(net->nfiles ? net->nfiles : 1, sizeof *s->files);
    if (!s->files)
        return -1;
    for (size_t i = 0; i < net->nfiles; i++)
        (void)cairn_report_file_fill(&s->files[i], net->files[i]);  /* unreadable: shown */
    r->files = s->files;
    r->nfiles = net->nfiles;
    r->program_version = CAIRN_VERSION_STRING;
    if (run && run->utc)
        snprintf(s->utc, sizeof s->utc, "%s", run->utc);
    else
        cairn_report_utc_now(s->utc, sizeof s->utc);
    r->utc = s->utc;
    if (run && run->argv) {
        if (!(s->command_line = join_command_line(run->argc, run->argv)))
            return -1;
        r->command_line = s->command_line;
    }
    if (run && run->notes && run->notes->ndiag > 0) {
        const cairn_error *e = run->notes;
        s->notes = calloc((size_t)e->ndiag, sizeof *s->notes);
        if (!s->notes)
            return -1;
        for (int i = 0; i < e->ndiag; i++) {
            char buf[CAIRN_PATH_MAX + CAIRN_MSG_MAX + 64];
            cairn_diag_format(&e->diag[i], buf, sizeof buf);
            if (!(s->notes[s->nnotes] = cairn_strdup(buf)))
                return -1;
            s->nnotes++;
        }
        r->notes = (const char *const *)s->notes;
        r->nnotes = s->nnotes;
    }
    return 0;
}

static int fill_options(cairn_report *r, struct cairn_report_store *s,
                        const cairn_adjustment *adj, const cairn_analysis *an)
{
    const cairn_net *net = adj->net;
    const cairn_options *o = &net->opt;
    cairn_report_options *ro = &r->opt;
    ro->dimension = adj->prob->dimension;
    ro->heights = adj->prob->dimension == 2 && adj->prob->heights;
    ro->refraction = o->refraction;
    ro->scale = o->scale;
    ro->confidence = an->confidence;
    ro->alpha = an->alpha;
    ro->power = an->power;
    ro->global_alpha = an->global_alpha;
    ro->max_iterations = o->max_iterations;
    if (o->has_tolerance) {
        snprintf(s->tolerance, sizeof s->tolerance, "%.6g mm + %.6g ppm",
                 o->tolerance.length * 1000.0, o->tolerance.ppm);
        ro->tolerance = s->tolerance;
    }
    ro->snoop = an->snoop == CAIRN_SNOOP_ITERATE ? "iterate"
              : an->snoop == CAIRN_SNOOP_FLAG ? "flag" : "off";
    if (!adj->datum_free) {
        ro->datum = "held and weighted control as given";
        return 0;
    }
    ro->datum = "free: minimal constraints chosen by cairn, at the starting values";
    size_t len = 1;
    for (size_t m = 0; m < net->nmarks; m++)
        if (adj->fixed[m])
            len += 3 * (strlen(net->marks[m].id) + 3);
    if (!(s->fixed = malloc(len)))
        return -1;
    char *p = s->fixed;
    *p = 0;
    for (size_t m = 0; m < net->nmarks; m++)
        for (unsigned c = CAIRN_E; c <= CAIRN_H; c <<= 1)
            if (adj->fixed[m] & c)
                p += sprintf(p, "%s%s.%s", p == s->fixed ? "" : " ", net->marks[m].id,
                             comp_name(c));
    ro->fixed = s->fixed;
    return 0;
}

/* The held-mark tests, with how many of each mark's observations
 * snooping rejected. */
static int fill_controls(cairn_report *r, struct cairn_report_store *s,
                         const cairn_adjustment *adj, const cairn_analysis *an)
{
    if (an->ncontrol == 0)
        return 0;
    if (!(s->controls = calloc(an->ncontrol, sizeof *s->controls)))
        return -1;
    for (size_t k = 0; k < an->ncontrol; k++) {
        const cairn_control_test *t = &an->control[k], *t0 = &an->control_first[k];
        cairn_report_control *c = &s->controls[k];
        c->mark = idx(s, adj->net, t->mark);
        c->held = t->held;   /* CAIRN_E|N|H = CAIRN_REPORT_E|N|H */
        c->nobs = t->nobs;
        c->nobs_first = t0->nobs;
        c->q = t->q;
        c->q_first = t0->q;
        c->statistic = t->statistic;
        c->critical = t->critical;
        c->statistic_first = t0->statistic;
        c->critical_first = t0->critical;
        memcpy(c->shift, t->shift, sizeof c->shift);
        memcpy(c->shift_first, t0->shift, sizeof c->shift_first);
        c->pass = t->pass;
        c->pass_first = t0->pass;
        c->nrejected = t->nrejected;
        c->suspect = t->suspect;
        c->single = t->single;
        c->wnet = t->wnet;
        c->wnet_seq = t->wnet_obs + 1;
        c->alike = idx(s, adj->net, t->alike);
        c->alike_first = idx(s, adj->net, t0->alike);
    }
    r->controls = s->controls;
    r->ncontrols = an->ncontrol;
    return 0;
}

static void fill_verdict(cairn_report *r, const cairn_adjustment *adj,
                         const cairn_analysis *an)
{
    cairn_report_verdict *v = &r->verdict;
    size_t norient = 0;
    for (size_t k = 0; k < adj->net->nsetups; k++)
        norient += adj->unk_setup[k] >= 0;
    v->tested = an->global.tested;
    v->statistic = an->global.statistic;
    v->lower = an->global.lower;
    v->upper = an->global.upper;
    v->pass = an->global.pass;
    v->dof = an->dof;
    v->vtpv = an->vtpv;
    v->sigma0_sq = an->global.sigma0_sq;
    v->nobs = an->nobs;
    v->nunknowns = adj->nunknowns > 0 ? (size_t)adj->nunknowns : 0;
    v->norientations = norient;
    v->nflagged = an->nflagged > 0 ? (size_t)an->nflagged : 0;
    v->nrejected = an->nrejections;
    v->snoop_rounds = an->snoop_rounds;
    v->nrestored = an->snoop_restored > 0 ? an->snoop_restored : 0;
    v->nunchecked = an->nunchecked > 0 ? (size_t)an->nunchecked : 0;
    v->tolerance = an->tolerance_pass;
    v->wcrit = isfinite(an->taucrit) ? an->taucrit : an->wcrit;
    v->converged = 1;   /* cairn_adjust fails with ENOCONV otherwise */
}

int cairn_report_build(const cairn_adjustment *adj, const cairn_analysis *an,
                       const cairn_diagnoses *dg, const cairn_report_run *run,
                       cairn_report_built *out, cairn_error *err)
{
    memset(out, 0, sizeof *out);
    struct cairn_report_store *s = calloc(1, sizeof *s);
    if (!s)
        goto nomem;
    out->store = s;
    cairn_report *r = &out->report;
    const cairn_net *net = adj->net;
    r->title = net->title;
    r->description = net->description;
    r->length_unit = cairn_length_unit_name(net->length_unit);
    r->length_factor = cairn_length_factor(net->length_unit);
    r->angle_unit = net->angle_unit;
    fill_verdict(r, adj, an);
    if (fill_marks(r, s, adj, an) || fill_obs(r, s, adj, an, dg) ||
        fill_pairs(r, s, adj, an) || fill_iters(r, s, adj) ||
        fill_run(r, s, adj, run) || fill_options(r, s, adj, an) ||
        fill_controls(r, s, adj, an))
        goto nomem;
    return 0;
nomem:
    cairn_report_clear(out);
    cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
    return -1;
}

/* ---- the result set ----------------------------------------------- */

/* What the writers of one result set read. */
typedef struct {
    const cairn_adjustment *adj;
    const cairn_analysis *an;
    const cairn_diagnoses *dg;
    const cairn_report *rep;
    cairn_mark_quality mq;
    cairn_obs_quality oq;
} set_ctx;

static int job_txt(FILE *f, void *c) { return cairn_report_write_txt(((set_ctx *)c)->rep, f); }
static int job_html(FILE *f, void *c) { return cairn_report_write_html(((set_ctx *)c)->rep, f); }
static int job_marks(FILE *f, void *c)
{
    return cairn_write_marks_csv(f, ((set_ctx *)c)->adj, &((set_ctx *)c)->mq);
}
static int job_obs(FILE *f, void *c)
{
    return cairn_write_observations_csv(f, ((set_ctx *)c)->adj, &((set_ctx *)c)->oq);
}
static int job_xml(FILE *f, void *c)
{
    const set_ctx *x = c;
    return cairn_write_results_xml_diag(f, x->adj, x->an, x->dg);
}


int cairn_write_result_set(const char *dir, const cairn_adjustment *adj,
                           const cairn_analysis *an, const cairn_diagnoses *dg,
                           const cairn_report *rep, unsigned formats, unsigned flags,
                           cairn_error *err)
{
    struct stat st;
    if (!(flags & CAIRN_WRITE_FORCE) && lstat(dir, &st) == 0 && S_ISLNK(st.st_mode)) {
        char target[CAIRN_PATH_MAX];
        ssize_t len = readlink(dir, target, sizeof target - 1);
        target[len > 0 ? len : 0] = 0;
        return cairn_error_add(err, CAIRN_SEV_ERROR, dir, 0, 0,
                               "the results directory is a symbolic link%s%s; refusing to "
                               "write through it (use --force to write there anyway)",
                               target[0] ? " to " : "", target);
    }
    if ((formats & (CAIRN_FORMAT_TXT | CAIRN_FORMAT_HTML)) && !rep)
        return cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                               "internal error: no report to write");
    /* A result name taken by a directory (or anything but a file or a
     * link) would fail at its rename, after the files before it in the set
     * were already replaced: refuse before anything is written. */
    static const struct { unsigned fmt; const char *name; } names[] = {
        {CAIRN_FORMAT_TXT, "report.txt"}, {CAIRN_FORMAT_HTML, "report.html"},
        {CAIRN_FORMAT_CSV, "marks.csv"}, {CAIRN_FORMAT_CSV, "observations.csv"},
        {CAIRN_FORMAT_XML, "results.xml"}};
    for (size_t k = 0; k < sizeof names / sizeof names[0]; k++) {
        char path[CAIRN_PATH_MAX + 32];
        if (!(formats & names[k].fmt))
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, names[k].name);
        if (lstat(path, &st) == 0 && !S_ISREG(st.st_mode) && !S_ISLNK(st.st_mode))
            return cairn_error_add(err, CAIRN_SEV_ERROR, path, 0, 0,
                                   "exists and is not a regular file; cannot replace it");
    }
    set_ctx ctx = {adj, an, dg, rep, {0}, {0}};
    cairn_analysis_quality(an, &ctx.mq, &ctx.oq);
    cairn_outset *set = cairn_outset_new(dir, err);
    if (!set)
        return -1;
    /* results.xml first: the largest, it gets the second thread (jobs.c) */
    static const cairn_write_spec spec[] = {{CAIRN_FORMAT_XML, "results.xml", job_xml},
                                            {CAIRN_FORMAT_TXT, "report.txt", job_txt},
                                            {CAIRN_FORMAT_HTML, "report.html", job_html},
                                            {CAIRN_FORMAT_CSV, "marks.csv", job_marks},
                                            {CAIRN_FORMAT_CSV, "observations.csv", job_obs}};
    int rc = cairn_output_write_files(set, spec, sizeof spec / sizeof spec[0], formats, &ctx,
                                      dir, err);
    if (rc == 0)
        rc = cairn_outset_commit(set, err);
    cairn_outset_free(&set);
    return rc;
}
