/* Private to src/quality/misclosure*.c: the result builder and the booked
 * readings the checks share (direction means per setup and target,
 * horizontal lengths of distance readings, a priori σ). */
#ifndef CAIRN_MISCLOSURE_INT_H
#define CAIRN_MISCLOSURE_INT_H

#include "cairn/misclosure.h"

/* The mean of one setup's hz readings to one target, face two reduced by
 * π (FORMAT.md "Models": hz = t − ω, plus π in face two). */
typedef struct {
    int setup, to;
    double dir;      /* rad, in [0, 2π) */
    double var;      /* rad², reading/pointing variance of the mean: Σσᵢ²/n²
                        with σᵢ the hz-sd or the instrument's direction σ */
    int n;           /* readings averaged */
    int own;         /* 1 when any reading has its own hz-sd */
    int first;       /* net->obs index of the first reading */
} cairn_misc_dir;

/* One distance reading as a horizontal length where possible. */
typedef struct {
    int obs;         /* net->obs index */
    int at, to;
    int reduced;     /* 1: horizontal (horiz, or slope·sin z); 0: slope, no zenith */
    double len;      /* m, after ppm (horizontal when reduced) */
    double sigma;    /* m, FORMAT.md distance σ with the booked length */
} cairn_misc_dist;

typedef struct {
    const cairn_net *net;
    cairn_misclosures *res;
    cairn_misc_dir *dir;   size_t ndir;   /* by setup, then first reading */
    size_t *setup_dir;     /* nsetups + 1: dir[setup_dir[s] .. setup_dir[s+1]) */
    cairn_misc_dist *dist; size_t ndist;  /* in load order */
} cairn_misc_ctx;

/* The instrument a booked reading uses (its own, its setup's, else the only
 * one of that kind), as src/model/sigma.c; NULL when none fits. */
const cairn_instrument *cairn_misc_inst(const cairn_net *net, const cairn_obs *o,
                                        cairn_inst_kind kind);

/* A priori σ (m) of a booked rise or distance through cairn_obs_sigma;
 * `len` is the booked distance after ppm (ignored for rises). -1 if none. */
double cairn_misc_sigma(const cairn_net *net, const cairn_obs *o, double len);

/* The direction mean of setup s to mark `to`, or NULL. */
const cairn_misc_dir *cairn_misc_find_dir(const cairn_misc_ctx *c, int s, int to);

/* Centring c (m) of the instrument of setup s (0 when not given). */
double cairn_misc_centring(const cairn_net *net, int s);

/* Append a check with its route; sets ratio, fail and updates nfail from
 * misclosure, expected_sd and allowance. Returns 0, or -1 (out of memory). */
int cairn_misc_add(cairn_misclosures *r, cairn_misclosure *item,
                   const int *route, size_t nroute);

/* A check with every optional field NAN. */
void cairn_misc_init(cairn_misclosure *item, cairn_misc_kind kind);

/* The checks of each file. Return 0, or -1 when out of memory. */
int cairn_misc_levelling(cairn_misc_ctx *c);
int cairn_misc_traverses(cairn_misc_ctx *c);

#endif
