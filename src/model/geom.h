/* Private to src/model: plane geometry between two marks at a state, shared
 * by the observation equations (equations.c) and the stochastic model
 * (sigma.c). Static inline so that nothing here is exported. */
#ifndef CAIRN_MODEL_GEOM_H
#define CAIRN_MODEL_GEOM_H

#include <math.h>

#include "cairn/model.h"

/* Coordinate differences from mark a to mark b: de, dn, their squared
 * plane length d2 and the plane distance d (FORMAT.md "Models":
 * d = sqrt(de^2 + dn^2)). */
typedef struct {
    double de, dn, d2, d;
} cairn_plane_geom;

static inline void cairn_geom_plane(const cairn_state *x, int a, int b,
                                    cairn_plane_geom *g)
{
    g->de = x->e[b] - x->e[a];
    g->dn = x->n[b] - x->n[a];
    g->d2 = g->de * g->de + g->dn * g->dn;
    g->d = sqrt(g->d2);
}

/* Height of mark m; a state without heights (a purely plane adjustment)
 * reads as 0, which the plane equations never use. */
static inline double cairn_geom_h(const cairn_state *x, int m)
{
    return x->h ? x->h[m] : 0.0;
}

#endif
