/* Private to src/solve/start*.c: the state of one starting-coordinate
 * computation, shared by the plane part (start_plane.c), the height part
 * (start_height.c), the geometry (start_geom.c) and the driver (start.c).
 * Nothing here is API; the cross-file functions carry the cairn_start_
 * prefix only because C has no module-private linkage. */
#ifndef CAIRN_START_INT_H
#define CAIRN_START_INT_H

#include <stddef.h>

#include "cairn/start.h"

/* Most rays, distances or resection targets gathered for one mark, and
 * most candidate positions compared for it: a bound per mark keeps the
 * whole computation linear in the observations even around a hub mark
 * with thousands of readings (the first ones in load order are used). */
#define START_MAX_GATHER 64
#define START_MAX_CAND 32

/* Kinds of candidate, for the step's method name. */
enum {
    START_POLAR = 0,      /* ref1: the known mark the ray and distance start at */
    START_INTERSECT,      /* ref1, ref2: the two ray origins */
    START_TRILAT,         /* ref1, ref2: the two circle centres */
    START_RESECT,         /* ref1: the setup index */
    START_LEVELLED,       /* ref1: the mark the rise comes from */
    START_TRIG            /* ref1: the mark the trig height comes from */
};

/* One way to a mark: a position (plane) or a height, its rough standard
 * deviation (m) for the gross-disagreement test, and what it came from. */
typedef struct {
    double e, n, h;
    double sd;
    int obs1, obs2;
    int kind, ref1, ref2;
} start_cand;

struct cairn_start_report {
    cairn_start_step *steps;
    size_t nsteps, cap_steps;
    size_t *method_off;      /* offset of each step's method in pool */
    size_t cap_off;
    char *pool;
    size_t npool, cap_pool;
    size_t nwarnings;
};

typedef struct {
    cairn_net *net;
    int dim;                 /* resolved 1, 2 or 3 */
    int use_rises;           /* FORMAT.md `dimension`: rises count here */
    size_t nm, no, ns, nsight;

    /* Per mark, the observations that name it (at, from or to), in load
     * order: adj[adj_off[m] .. adj_off[m+1]). Built once, O(obs). */
    size_t *adj_off;
    int *adj;

    /* Per setup, its observations in load order:
     * set_obs[set_off[s] .. set_off[s+1]). Orienting a setup or listing
     * its targets walks only these, not the station's whole list: a
     * station with thousands of setups would otherwise cost setups ×
     * readings (issue #9, 10 000 setups at one mark). */
    size_t *set_off;
    int *set_obs;

    /* Per sight number: index of its zenith, slope and horiz reading (or
     * -1), and whether the sight is face two (DEVELOPERS.md "Face two"). */
    int *zen_of, *slope_of, *horiz_of;
    unsigned char *face2;

    unsigned *need;          /* per mark: components an observation touches */
    unsigned *known;         /* per mark: components with a value */
    double *e, *n, *h;       /* working coordinates, m */
    double *omega;           /* per setup: orientation, rad */
    unsigned char *oriented; /* per setup */
    int plane_seed;          /* free-network origin mark, or -1 */
    int local;               /* 1 in a local-frame pass (start_local.c):
                                given coordinates are ignored */

    cairn_start_report *rep;
    cairn_error *err;
    int oom;
} start_ctx;

/* ---- start.c: shared helpers ---- */

/* Mark m is a mark index and has both plane components. */
static inline int cairn_start_known_en(const start_ctx *c, int m)
{
    return m >= 0 && (size_t)m < c->nm &&
           (c->known[m] & (CAIRN_E | CAIRN_N)) == (CAIRN_E | CAIRN_N);
}

/* Face two for observation i: its own face, or its sight's. */
int cairn_start_face2(const start_ctx *c, int i);
/* Face-one zenith angle of sight `sight`, or -1 when it has none. */
double cairn_start_zenith1(const start_ctx *c, int sight);
/* Horizontal (plane) length d in metres that distance observation i
 * implies, by FORMAT.md "Models" inverted: horiz·scale, dimension 2
 * s·sin z·scale, dimension 3 the exact inverse of the slope and zenith
 * model. Returns 0, or -1 when it implies none (slope without zenith in
 * dimension 2). *papprox is set when the value is only approximate. */
int cairn_start_plane_length(const start_ctx *c, int i, double *pd, int *papprox);
/* Rough a priori sd of observation i (m or rad) at plane length d. */
double cairn_start_obs_sd(const start_ctx *c, int i, double d);
/* Append a step; method is printf-formatted. Returns 0 or -1 (oom). */
int cairn_start_add_step(start_ctx *c, int mark, unsigned comp, int obs1,
                         int obs2, int ncand, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 7, 8)))
#endif
    ;
/* Median of the candidates (component-wise: e and n when plane, else h)
 * into *pc; the candidate nearest the median in *pbest. Warns when the
 * farthest and nearest candidates disagree grossly. */
void cairn_start_choose(start_ctx *c, int mark, int plane, const start_cand *cand,
                        size_t k, start_cand *pc, size_t *pbest);
/* Add a warning located at observation i. */
void cairn_start_warn(start_ctx *c, int i, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
/* "FILE:LINE" of observation i into buf. */
void cairn_start_where(const start_ctx *c, int i, char *buf, size_t n);
/* Connected parts (union-find roots, per mark) over plane (plane = 1) or
 * height observations; *phas[root] = 1 when the part holds a known mark.
 * Returns 0 or -1 (oom). Caller frees both arrays. */
int cairn_start_parts(const start_ctx *c, int plane, int **proot,
                      unsigned char **phas);

/* ---- start_plane.c / start_height.c ---- */

/* Compute every reachable plane position. Returns 0 or -1 (oom). */
int cairn_start_plane_int(start_ctx *c);
/* The waves alone: orient what can be oriented and grow outward from the
 * marks known now until nothing moves. Returns 0 or -1 (oom). */
int cairn_start_plane_waves(start_ctx *c);
/* Make setup s's station a free-network origin (e = n = 0, its first
 * sight pointing north, and with with_scale that target 100 m away).
 * Returns 1 when seeded, 0 when the setup has no plane sight. */
int cairn_start_plane_seed_setup(start_ctx *c, size_t s, int with_scale);
/* start_local.c: the parts the waves left unreached, computed in a local
 * frame of their own and fitted to their marks with coordinates by a
 * similarity transformation. Returns 0 or -1 (oom). */
int cairn_start_plane_local(start_ctx *c);
/* Why mark m (plane) could not be reached, given its part has a known
 * mark; written into buf. */
void cairn_start_plane_reason(const start_ctx *c, int m, char *buf, size_t n);
/* True when observation i gives e, n to its marks in this dimension. */
int cairn_start_is_plane_obs(const start_ctx *c, int i);

int cairn_start_height_int(start_ctx *c);
/* Why mark m (height) could not be reached; connected: its part holds a
 * mark with a height. */
void cairn_start_height_reason(const start_ctx *c, int m, int connected, char *buf,
                               size_t n);
/* Height difference *pdh = h(*pother) − h(m) carried by observation i
 * between m and another mark, its rough sd and the sight's distance
 * reading (*pobs2, or -1). Returns 0 when it carries one, -1 when not.
 * With pdh == NULL only *pother is found (psd, pobs2 may be NULL too). */
int cairn_start_height_edge(const start_ctx *c, int i, int m, int *pother,
                            double *pdh, double *psd, int *pobs2);

/* ---- start_geom.c: plane geometry (metres, radians) ---- */

/* Grid azimuth from (e1, n1) to (e2, n2), clockwise from north, [0, 2π). */
double cairn_start_azimuth(double e1, double n1, double e2, double n2);
/* Median of a[0..k) (reorders a); k ≥ 1. */
double cairn_start_median(double *a, size_t k);
/* Circular median of angles a[0..k) (reorders a), in [0, 2π). */
double cairn_start_circ_median(double *a, size_t k);
/* Intersection of the rays from (e1,n1) at azimuth t1 and (e2,n2) at t2.
 * Returns 0 with the point and |sin| of the cut angle and the two ray
 * lengths; -1 when parallel or behind either origin. */
int cairn_start_intersect(double e1, double n1, double t1, double e2, double n2,
                          double t2, double *pe, double *pn, double *psin,
                          double *pu1, double *pu2);
/* The two points at r1 from A and r2 from B: x[0] right of A→B, x[1] left
 * (each {e, n}). Circles that miss each other by at most `slack` metres
 * are taken to touch. Returns 0 with |sin| of the cut angle, or -1. */
int cairn_start_trilat(double ea, double na, double r1, double eb, double nb,
                       double r2, double slack, double x[2][2], double *psin);
/* Position and orientation of a setup from directions hz[i] (face one) to
 * k ≥ 3 known marks (E[i], N[i]). Returns 0, or -1 when the geometry
 * fixes no unique point (danger circle, collinear, coincident). */
int cairn_start_resect(const double *E, const double *N, const double *hz,
                       size_t k, double *pe, double *pn, double *pomega);
/* Invert FORMAT.md's dimension-3 slope and zenith model: from a slope
 * distance s (after ppm) and face-one zenith z1 find the plane length d
 * and Δz = (h_B + th) − (h_A + ih). */
void cairn_start_invert3(double s, double z1, double k, double scale,
                         double *pd, double *pdz);

#endif
