/* cairn — model: the network (marks, instruments, setups, observations).
 *
 * A cairn_net is what the input stage loads and every later stage reads.
 * All values are SI: metres and radians, coordinates in the project grid
 * (e east, n north, h height). Arrays are plain and public so that every
 * stage can walk them; add entries only through the functions below so the
 * mark index stays valid.
 *
 * Ownership: cairn_net_new / cairn_net_free. Strings in the net (file
 * names, descriptions, title) belong to the net.
 */
#ifndef CAIRN_MODEL_H
#define CAIRN_MODEL_H

#include <stddef.h>
#include "cairn/core.h"

/** Longest mark or instrument id (FORMAT.md: 1–40 characters). */
#define CAIRN_ID_MAX 40

/** Where something was read. `file` points into the net's file list. */
typedef struct {
    const char *file;
    int line;
    int col;
} cairn_src;

/** Coordinate component bits. */
enum { CAIRN_E = 1, CAIRN_N = 2, CAIRN_H = 4 };

typedef struct {
    char id[CAIRN_ID_MAX + 1];
    double e, n, h;     /**< metres; meaningful where `given` has the bit */
    unsigned given;     /**< CAIRN_E|CAIRN_N|CAIRN_H: components given */
    unsigned hold;      /**< components held fixed (subset of given) */
    unsigned computed;  /**< components whose starting value the solve stage
                             computed from observations (not given) */
    double sd_en;       /**< metres; > 0 when e and n are weighted control */
    double sd_h;        /**< metres; > 0 when h is weighted control */
    char *desc;         /**< free text or NULL */
    cairn_src def;      /**< where defined; def.line == 0 if never defined */
    cairn_src ref;      /**< first place it was named at all */
} cairn_mark;

typedef enum { CAIRN_INST_TOTAL_STATION = 0, CAIRN_INST_LEVEL = 1 } cairn_inst_kind;

/** Bits of cairn_instrument.set: which precisions were given. */
enum {
    CAIRN_INST_DIRECTION = 1, CAIRN_INST_ZENITH = 2, CAIRN_INST_DISTANCE = 4,
    CAIRN_INST_CENTRING = 8, CAIRN_INST_HEIGHT = 16,
    CAIRN_INST_PER_KM = 32, CAIRN_INST_PER_SETUP = 64
};

typedef struct {
    char id[CAIRN_ID_MAX + 1];
    cairn_inst_kind kind;
    unsigned set;        /**< CAIRN_INST_* bits given */
    double direction;    /**< rad, one direction reading */
    double zenith;       /**< rad, one zenith reading */
    double dist_a;       /**< m, constant part of the distance sd */
    double dist_b;       /**< ppm, proportional part */
    double centring;     /**< m, centring of instrument and of target */
    double height;       /**< m, measuring ih or th */
    double per_km;       /**< m per sqrt(km) of levelling */
    double per_setup;    /**< m per sqrt(setups) */
    cairn_src src;
} cairn_instrument;

typedef struct {
    int at;              /**< mark index */
    int inst;            /**< instrument index, or -1 */
    double ih;           /**< m, instrument height */
    double ppm;          /**< atmospheric correction for its distances */
    int ndirections;     /**< number of direction observations in this setup */
    cairn_src src;
} cairn_setup;

typedef enum {
    CAIRN_OBS_DIRECTION = 0,
    CAIRN_OBS_ANGLE,
    CAIRN_OBS_AZIMUTH,
    CAIRN_OBS_HORIZ,
    CAIRN_OBS_SLOPE,
    CAIRN_OBS_ZENITH,
    CAIRN_OBS_RISE,
    CAIRN_OBS_TRIG_RISE,
    CAIRN_OBS_CONTROL_E,
    CAIRN_OBS_CONTROL_N,
    CAIRN_OBS_CONTROL_H,
    CAIRN_OBS_NKINDS
} cairn_obs_kind;

/** The `kind` name used in observations.csv ("direction", "trig-rise" ...). */
const char *cairn_obs_kind_name(cairn_obs_kind k);

/** One observation. Booked observations (from input) are DIRECTION, ANGLE,
 *  AZIMUTH, HORIZ, SLOPE, ZENITH, RISE; the model stage derives TRIG_RISE,
 *  reduced HORIZ and CONTROL_* from them. Mark roles follow the columns of
 *  observations.csv:
 *    direction, horiz, slope, zenith, trig-rise: at → to
 *    angle: at, from (backsight), to (foresight)
 *    azimuth, rise: from → to (at = -1)
 *    control-*: at = the mark. */
typedef struct {
    /* the int-sized fields first, then the doubles: no padding between
     * them (144 bytes, not 152; a national network holds two arrays of
     * millions of these, the net's and the problem's) */
    cairn_obs_kind kind;
    int at, from, to;    /**< mark indices or -1 */
    int setup;           /**< setup index for sight readings, else -1 */
    int sight;           /**< sight number shared by one sight's readings, else -1 */
    int inst;            /**< instrument index (angle, rise, or the setup's), or -1 */
    int face;            /**< 1 or 2 */
    int setups;          /**< rise: number of level setups (0 if none) */
    double value;        /**< booked value: rad or m (distances before ppm) */
    double ih, th;       /**< m: instrument and target height of the sight */
    double ppm;          /**< setup ppm + sight ppm */
    double km;           /**< rise: length of the level run, km (0 if none) */
    double aux_s;        /**< reduced obs: the booked slope distance (after ppm), m */
    double aux_z;        /**< reduced obs: the booked face-one zenith angle, rad */
    cairn_sd sd;         /**< explicit sd (sd.has == 0: from the instrument) */
    cairn_src src;
} cairn_obs;

/** Adjustment options (FORMAT.md `options`), with their defaults set by
 *  cairn_options_default. */
typedef struct {
    int dimension;         /**< 0 = auto, 1, 2, 3 */
    double refraction;     /**< k, default 0.13 */
    double scale;          /**< default 1 */
    double confidence;     /**< default 0.95 */
    double alpha;          /**< default 0.001 */
    double power;          /**< default 0.80 */
    double global_alpha;   /**< default 0.05 */
    int has_tolerance;
    cairn_sd tolerance;    /**< length (m) + ppm */
    int max_iterations;    /**< default 25 */
    int has_loop_allowance;
    double loop_allowance; /**< m per sqrt(km) */
} cairn_options;

void cairn_options_default(cairn_options *opt);

/** Mean Earth radius of FORMAT.md "Models". */
#define CAIRN_EARTH_RADIUS 6371000.0

typedef struct cairn_idmap cairn_idmap;   /* private hash: id → index */

typedef struct cairn_net {
    char *title;
    char *description;
    cairn_length_unit length_unit;
    cairn_angle_unit angle_unit;
    cairn_options opt;

    cairn_mark *marks;        size_t nmarks, cap_marks;
    cairn_instrument *insts;  size_t ninsts, cap_insts;
    cairn_setup *setups;      size_t nsetups, cap_setups;
    cairn_obs *obs;           size_t nobs, cap_obs;
    int nsights;              /**< sight numbers handed out so far */

    char **files;             size_t nfiles, cap_files; /**< inputs read, in order */

    cairn_idmap *markmap;
    cairn_idmap *instmap;
} cairn_net;

/** A new empty network with default options and units m, dms; NULL when
 *  out of memory. */
cairn_net *cairn_net_new(void);
void cairn_net_free(cairn_net **pnet);

/** Index of the mark with this id, or -1. */
int cairn_net_find_mark(const cairn_net *net, const char *id);
/** Index of the mark with this id, adding an undefined mark (ref = src)
 *  when it is new. Returns -1 when out of memory. */
int cairn_net_mark(cairn_net *net, const char *id, cairn_src src);
/** Index of the instrument with this id, or -1. */
int cairn_net_find_inst(const cairn_net *net, const char *id);
/** Append an instrument (id must be new). Returns its index, or -1. */
int cairn_net_add_inst(cairn_net *net, const cairn_instrument *inst);
/** Append a setup. Returns its index, or -1 when out of memory. */
int cairn_net_add_setup(cairn_net *net, const cairn_setup *setup);
/** Append an observation. Returns its index, or -1 when out of memory. */
int cairn_net_add_obs(cairn_net *net, const cairn_obs *obs);
/** Remember an input file name; returns the net's own copy (stable for the
 *  net's lifetime), or NULL when out of memory. The same name is stored
 *  once. */
const char *cairn_net_file(cairn_net *net, const char *path);

/** True when an id follows FORMAT.md's rule: 1–40 of A–Z a–z 0–9 _ . - / */
int cairn_id_valid(const char *id);


/* ------------------------------------------------------------------ */
/* The adjustment problem and its observation equations                */
/* ------------------------------------------------------------------ */

/** The observations of one adjustment: the booked observations reduced for
 *  the dimension (FORMAT.md "Models": slope+zenith → horiz in 2, → trig-rise
 *  in 1; readings a dimension does not use are dropped), followed by the
 *  control pseudo-observations of weighted marks (e, n, h in mark order;
 *  none when datum_free). Order = the rows of observations.csv. For these
 *  observations `value` is the observed value as adjusted: distances
 *  already multiplied by (1 + ppm·1e-6), reductions applied. */
typedef struct cairn_problem {
    const cairn_net *net;
    int dimension;        /**< resolved: 1, 2 or 3 */
    int heights;          /**< 1 when any observation involves heights */
    int plane;            /**< 1 when any observation involves e, n */
    int datum_free;       /**< 1: holds and weights ignored */
    cairn_obs *obs;       /**< nobs adjustment observations */
    size_t nobs;
    int *booked;          /**< index into net->obs, or -1 for control obs */
    unsigned *touch;      /**< per mark: CAIRN_E|N|H components observed */
} cairn_problem;

/** Build the adjustment's observations from a loaded, valid net.
 *  Returns 0, or -1 with errors (e.g. a slope distance without zenith in
 *  dimension 2). */
int cairn_problem_build(const cairn_net *net, int datum_free,
                        cairn_problem **pprob, cairn_error *err);
void cairn_problem_free(cairn_problem **pprob);

/** Current values of all parameters: coordinates per mark (metres, after
 *  any origin reduction the caller applied consistently), orientation per
 *  setup (radians). */
typedef struct {
    const double *e, *n, *h;   /**< indexed by mark */
    const double *omega;       /**< indexed by setup */
} cairn_state;

/** Local parameters an observation can touch. */
enum {
    CAIRN_PAR_E_AT = 0, CAIRN_PAR_N_AT, CAIRN_PAR_H_AT,
    CAIRN_PAR_E_FROM, CAIRN_PAR_N_FROM, CAIRN_PAR_H_FROM,
    CAIRN_PAR_E_TO, CAIRN_PAR_N_TO, CAIRN_PAR_H_TO,
    CAIRN_PAR_OMEGA,
    CAIRN_NPAR
};

/** Computed value of an observation and its partial derivatives. */
typedef struct {
    double value;             /**< rad or m, same convention as obs value */
    double d[CAIRN_NPAR];     /**< ∂value/∂parameter; 0 for untouched ones */
} cairn_lin;

/** Evaluate observation o of problem p at state x (FORMAT.md "Models").
 *  Angular values are wrapped into [0, 2π). Returns 0, or -1 when the
 *  geometry makes it undefined (coincident marks). */
int cairn_obs_linearise(const cairn_problem *p, const cairn_obs *o,
                        const cairn_state *x, cairn_lin *plin);

/** True for kinds whose value is an angle (residuals wrap into (−π, π]). */
int cairn_obs_kind_angular(cairn_obs_kind k);

/** Residual v = computed − observed (wrapped for angles). */
double cairn_obs_residual(const cairn_obs *o, double computed);

/** A priori standard deviation (m or rad) of observation o at state x, by
 *  FORMAT.md "Models" (or its own sd). Returns a value > 0, or -1 when no
 *  precision can be found (the input stage should have rejected that). */
double cairn_obs_sigma(const cairn_problem *p, const cairn_obs *o,
                       const cairn_state *x);

#endif
