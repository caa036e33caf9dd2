/* Starting plane positions for the parts of a network that the waves of
 * start_plane.c cannot enter from its marks with coordinates: a local
 * frame, then a similarity (four-parameter Helmert) transformation onto
 * those marks.
 *
 * Why. The waves need an oriented setup or two known marks in reach of the
 * mark being computed. Control that is spread out and not intervisible
 * (GNSS marks at the corners of a total-station network, each sighting
 * only new marks) gives neither: every held mark is a station with an
 * unknown orientation, and every new mark is seen from at most one of
 * them. The office practice is to compute the network in a frame of its
 * own, starting from one setup, and then transform it onto the control:
 * least squares over all common marks gives the four parameters in
 * closed form (Ghilani, "Adjustment Computations", 6th ed., chapter 18,
 * two-dimensional conformal coordinate transformation; from memory).
 *
 * How. For each plane-connected part that still has marks without a start
 * and holds at least two marks with coordinates (given, or computed by
 * the waves), a second start_ctx shares the first one's read-only lists
 * but has its own coordinates, orientations and report, ignores every
 * given coordinate (start_ctx.local), is seeded at the first setup in the
 * part (cairn_start_plane_seed_setup) and runs the same waves. The
 * transformation is fitted on the marks the part has coordinates for in
 * both frames; the other marks it reached are carried over, and the waves
 * run again in the real frame. Everything is linear in marks and
 * observations: all such parts share one local pass.
 *
 * What it checks. The common marks must fit: a misfit above max(0.05 m,
 * 100 ppm of their spread; 1000 ppm for a part of distances only), or a scale more than 1000 ppm from one where
 * the part has distances, is a warning that names the worst mark, since a
 * held mark with wrong coordinates would otherwise be smeared into the
 * network by the adjustment (both limits common practice, no source).
 * A part of distances only has no handedness: its local frame may be the
 * mirror image of the real one (start_plane.c settles an ambiguous
 * trilateration by a fixed rule), so for such a part the reflected
 * similarity is fitted too and the better of the two is taken; a frame
 * mirrored only in places still misses, and the misfit warning says that
 * it may be. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "start_int.h"

#define EN (CAIRN_E | CAIRN_N)

/* One part's fit. With x, y local and X, Y real coordinates taken from
 * their centroids, the least-squares [a −b; b a] has a = (Sxx + Syy)/S and
 * b = (Sxy − Syx)/S, S = Σ(x² + y²), where Sxy = Σ x·Y and so on; the
 * reflected [a b; b −a] has a = (Sxx − Syy)/S and b = (Sxy + Syx)/S. Each
 * leaves Σ(X² + Y²) − S(a² + b²) as its squared misfit, so the larger
 * a² + b² fits better (the derivation is that of the ordinary
 * four-parameter fit with y replaced by −y). */
typedef struct {
    size_t n;                   /* common marks */
    double le, ln, re, rn;      /* centroids: local, real */
    double S, Sxx, Syy, Sxy, Syx;
    double spread;              /* largest distance from the centroid, m */
    double a, b;                /* the fit */
    int mirror;                 /* 1: the reflected fit [a b; b −a] */
    int handed;                 /* the part has directions, angles or azimuths */
    int distances;              /* the part has plane distances */
    int ok;
    double worst;               /* largest misfit at a common mark, m */
    int worst_mark;
} part_fit;

/* Marks with coordinates in both frames (among those that need them). */
static int common(const start_ctx *c, const start_ctx *L, size_t m)
{
    return (c->need[m] & EN) && cairn_start_known_en(c, (int)m) && cairn_start_known_en(L, (int)m);
}

static void to_real(const part_fit *f, double el, double nl, double *pe, double *pn)
{
    double x = el - f->le, y = nl - f->ln;
    if (f->mirror)
        y = -y;
    *pe = f->re + f->a * x - f->b * y;
    *pn = f->rn + f->b * x + f->a * y;
}

/* Largest misfit at the common marks of every part. */
static void misfit(const start_ctx *c, const start_ctx *L, const int *root,
                   const int *slot, part_fit *fit, size_t nfit)
{
    for (size_t k = 0; k < nfit; k++) {
        fit[k].worst = 0.0;
        fit[k].worst_mark = -1;
    }
    for (size_t m = 0; m < c->nm; m++) {
        int k = slot[root[m]];
        if (k < 0 || !fit[k].ok || !common(c, L, m))
            continue;
        double e, n;
        to_real(&fit[k], L->e[m], L->n[m], &e, &n);
        double d = hypot(e - c->e[m], n - c->n[m]);
        if (fit[k].worst_mark < 0 || d > fit[k].worst) {
            fit[k].worst = d;
            fit[k].worst_mark = (int)m;
        }
    }
}

/* Copy the local pass's diagnostics that the real one does not hold yet
 * (it recomputes marks the waves had already placed, and would repeat
 * their warnings). */
static void copy_diags(start_ctx *c, const cairn_error *from)
{
    for (int i = 0; i < from->ndiag; i++) {
        const cairn_diag *d = &from->diag[i];
        int dup = 0;
        for (int j = 0; j < c->err->ndiag && !dup; j++) {
            const cairn_diag *e = &c->err->diag[j];
            dup = e->line == d->line && e->col == d->col && !strcmp(e->file, d->file) &&
                  !strcmp(e->message, d->message);
        }
        if (dup)
            continue;
        if (d->severity == CAIRN_SEV_WARNING)
            c->rep->nwarnings++;
        cairn_error_add(c->err, d->severity, d->file[0] ? d->file : NULL, d->line, d->col,
                        "%s", d->message);
    }
}

static const cairn_src *mark_src(const start_ctx *c, int m)
{
    const cairn_src *s = &c->net->marks[m].def;
    return s->line ? s : &c->net->marks[m].ref;
}

/* Check each part's fit and say what is doubtful. */
static void judge(start_ctx *c, const start_ctx *L, const int *root, const int *slot,
                  part_fit *fit, size_t nfit)
{
    for (size_t k = 0; k < nfit; k++)
        if (fit[k].ok) {
            part_fit *f = &fit[k];
            f->a = (f->Sxx + f->Syy) / f->S;
            f->b = (f->Sxy - f->Syx) / f->S;
            /* reflected, written as the ordinary fit of (x, −y): with
             * y → −y, Syy → −Syy and Syx → −Syx */
            double am = (f->Sxx - f->Syy) / f->S, bm = (f->Sxy + f->Syx) / f->S;
            if (!f->handed && f->n >= 3 && am * am + bm * bm > f->a * f->a + f->b * f->b) {
                f->a = am;
                f->b = bm;
                f->mirror = 1;
            }
        }
    misfit(c, L, root, slot, fit, nfit);
    for (size_t k = 0; k < nfit; k++) {
        part_fit *f = &fit[k];
        if (!f->ok || f->worst_mark < 0)
            continue;
        const cairn_src *s = mark_src(c, f->worst_mark);
        const char *id = c->net->marks[f->worst_mark].id;
        /* chains of trilaterations carry more error than polar steps:
         * 1000 ppm for a part of distances only (common practice, no
         * source; a wrong held mark there is still found by the
         * adjustment's held-mark test) */
        double ppm = f->handed ? 1e-4 : 1e-3;
        double lim = ppm * f->spread > 0.05 ? ppm * f->spread : 0.05;
        double scale = hypot(f->a, f->b);
        if (f->worst > lim) {
            c->rep->nwarnings++;
            cairn_error_add(c->err, CAIRN_SEV_WARNING, s->file, s->line, s->col,
                            "starting positions computed in a local frame and fitted "
                            "to %zu marks with coordinates miss %s by %.3f m%s; check "
                            "the coordinates of those marks",
                            f->n, id, f->worst,
                            f->handed ? "" : " (with distances only, the local frame "
                                             "may also be a mirror image)");
        } else if (f->distances && fabs(scale - 1.0) > 1e-3) {
            c->rep->nwarnings++;
            cairn_error_add(c->err, CAIRN_SEV_WARNING, s->file, s->line, s->col,
                            "the %zu marks with coordinates that starting positions in "
                            "a local frame were fitted to (%s among them) lie %.0f ppm "
                            "%s apart than the observed distances put them; check "
                            "their coordinates, the scale and the units",
                            f->n, id, fabs(scale - 1.0) * 1e6,
                            scale > 1.0 ? "further" : "less far");
        }
    }
}

/* The parts the local pass is for: a mark that needs a plane position has
 * none, and at least two marks have one. slot[root] numbers them, or -1.
 * Returns their count. */
static size_t choose_parts(const start_ctx *c, const int *root, int *slot)
{
    for (size_t m = 0; m < c->nm; m++)
        slot[m] = -1;
    size_t *known = calloc(c->nm, sizeof *known);
    unsigned char *missing = calloc(c->nm, 1);
    if (!known || !missing) {
        free(known);
        free(missing);
        return (size_t)-1;
    }
    for (size_t m = 0; m < c->nm; m++) {
        if (!(c->need[m] & EN))
            continue;
        if (cairn_start_known_en(c, (int)m))
            known[root[m]]++;
        else
            missing[root[m]] = 1;
    }
    size_t k = 0;
    for (size_t r = 0; r < c->nm; r++)
        if (missing[r] && known[r] >= 2)
            slot[r] = (int)k++;
    free(known);
    free(missing);
    return k;
}

static int local_pass(start_ctx *c, start_ctx *L, const int *root, const int *slot,
                      part_fit *fit, size_t nfit)
{
    /* Which parts have handedness and distances (for the seeds' scale). */
    for (size_t i = 0; i < c->no; i++) {
        const cairn_obs *o = &c->net->obs[i];
        if (!cairn_start_is_plane_obs(c, (int)i))
            continue;
        int m = o->at >= 0 ? o->at : o->from;
        if (m < 0 || (size_t)m >= c->nm || slot[root[m]] < 0)
            continue;
        part_fit *f = &fit[slot[root[m]]];
        if (o->kind == CAIRN_OBS_DIRECTION || o->kind == CAIRN_OBS_ANGLE ||
            o->kind == CAIRN_OBS_AZIMUTH)
            f->handed = 1;
        if (o->kind == CAIRN_OBS_HORIZ || o->kind == CAIRN_OBS_SLOPE)
            f->distances = 1;
    }
    unsigned char *seeded = calloc(nfit ? nfit : 1, 1);
    if (!seeded)
        return -1;
    for (size_t s = 0; s < c->ns; s++) {
        int A = c->net->setups[s].at;
        if (A < 0 || (size_t)A >= c->nm || slot[root[A]] < 0)
            continue;
        int k = slot[root[A]];
        if (!seeded[k] && cairn_start_plane_seed_setup(L, s, !fit[k].distances))
            seeded[k] = 1;
    }
    free(seeded);
    return cairn_start_plane_waves(L);
}

static void accumulate(const start_ctx *c, const start_ctx *L, const int *root,
                       const int *slot, part_fit *fit, size_t nfit)
{
    for (size_t m = 0; m < c->nm; m++) {
        int k = slot[root[m]];
        if (k < 0 || !common(c, L, m))
            continue;
        part_fit *f = &fit[k];
        f->n++;
        f->le += L->e[m];
        f->ln += L->n[m];
        f->re += c->e[m];
        f->rn += c->n[m];
    }
    for (size_t k = 0; k < nfit; k++)
        if (fit[k].n) {
            double w = 1.0 / (double)fit[k].n;
            fit[k].le *= w;
            fit[k].ln *= w;
            fit[k].re *= w;
            fit[k].rn *= w;
        }
    for (size_t m = 0; m < c->nm; m++) {
        int k = slot[root[m]];
        if (k < 0 || !common(c, L, m))
            continue;
        part_fit *f = &fit[k];
        double x = L->e[m] - f->le, y = L->n[m] - f->ln;
        double X = c->e[m] - f->re, Y = c->n[m] - f->rn;
        f->S += x * x + y * y;
        f->Sxx += x * X;
        f->Syy += y * Y;
        f->Sxy += x * Y;
        f->Syx += y * X;
        double d = hypot(X, Y);
        if (d > f->spread)
            f->spread = d;
    }
    /* Usable: two or more common marks that are not all one point in the
     * local frame (a millimetre; common practice, no source). */
    for (size_t k = 0; k < nfit; k++)
        fit[k].ok = fit[k].n >= 2 && fit[k].S > 1e-6;
}

/* Carry the marks only the local frame reached over into the real one. */
static size_t carry(start_ctx *c, const start_ctx *L, const int *root, const int *slot,
                    const part_fit *fit)
{
    const cairn_start_report *lr = L->rep;
    int *step = malloc(c->nm * sizeof *step);
    if (!step) {
        c->oom = 1;
        return 0;
    }
    for (size_t m = 0; m < c->nm; m++)
        step[m] = -1;
    for (size_t i = 0; i < lr->nsteps; i++)
        if (lr->steps[i].mark >= 0 && (lr->steps[i].comp & EN))
            step[lr->steps[i].mark] = (int)i;
    size_t moved = 0;
    for (size_t m = 0; m < c->nm && !c->oom; m++) {
        int k = slot[root[m]];
        if (k < 0 || !fit[k].ok || !(c->need[m] & EN) || cairn_start_known_en(c, (int)m) ||
            !cairn_start_known_en(L, (int)m))
            continue;
        const cairn_mark *mk = &c->net->marks[m];
        double e, n;
        to_real(&fit[k], L->e[m], L->n[m], &e, &n);
        if (!(mk->given & CAIRN_E))
            c->e[m] = e;
        if (!(mk->given & CAIRN_N))
            c->n[m] = n;
        c->known[m] |= EN;
        int i = step[m];
        const char *how = i >= 0 ? lr->pool + lr->method_off[i] : "local frame";
        cairn_start_add_step(c, (int)m, EN & ~mk->given, i >= 0 ? lr->steps[i].obs1 : -1,
                             i >= 0 ? lr->steps[i].obs2 : -1, i >= 0 ? lr->steps[i].ncand : 1,
                             "%s in a local frame, fitted to %zu marks with coordinates%s",
                             how, fit[k].n, fit[k].mirror ? " as its mirror image" : "");
        moved++;
    }
    free(step);
    return moved;
}

int cairn_start_plane_local(start_ctx *c)
{
    int *root = NULL;
    unsigned char *has = NULL;
    if (cairn_start_parts(c, 1, &root, &has)) {
        c->oom = 1;
        return -1;
    }
    free(has);
    int *slot = malloc((c->nm ? c->nm : 1) * sizeof *slot);
    size_t nfit = slot ? choose_parts(c, root, slot) : (size_t)-1;
    if (nfit == (size_t)-1 || nfit == 0) {
        free(root);
        free(slot);
        if (nfit == (size_t)-1)
            c->oom = 1;
        return c->oom ? -1 : 0;
    }
    part_fit *fit = calloc(nfit, sizeof *fit);
    start_ctx L = *c;
    L.local = 1;
    L.plane_seed = -1;
    L.known = calloc(c->nm, sizeof *L.known);
    L.e = calloc(3 * c->nm, sizeof *L.e);
    L.omega = calloc(c->ns ? c->ns : 1, sizeof *L.omega);
    L.oriented = calloc(c->ns ? c->ns : 1, 1);
    L.rep = calloc(1, sizeof *L.rep);
    cairn_error scratch;
    int have_scratch = cairn_error_init(&scratch) == 0;
    L.err = &scratch;
    size_t moved = 0;
    if (!fit || !L.known || !L.e || !L.omega || !L.oriented || !L.rep || !have_scratch) {
        c->oom = 1;
    } else {
        L.n = L.e + c->nm;
        L.h = L.e + 2 * c->nm;
        if (local_pass(c, &L, root, slot, fit, nfit))
            c->oom = 1;
        else {
            copy_diags(c, &scratch);
            accumulate(c, &L, root, slot, fit, nfit);
            judge(c, &L, root, slot, fit, nfit);
            if (!c->oom)
                moved = carry(c, &L, root, slot, fit);
        }
    }
    if (have_scratch)
        cairn_error_clear(&scratch);
    cairn_start_report_free(&L.rep);
    free(L.known);
    free(L.e);
    free(L.omega);
    free(L.oriented);
    free(fit);
    free(slot);
    free(root);
    if (c->oom)
        return -1;
    /* Setups at the carried marks can now be oriented, and marks next to
     * them reached the usual way. */
    return moved ? cairn_start_plane_waves(c) : 0;
}
