/* cairn/misclosure.h — field-book misclosure checks (`cairn check`).
 *
 * No adjustment is made: every check closes booked observations against
 * each other or against held control, and compares the misclosure with its
 * expected standard deviation from the instruments (FORMAT.md "Models").
 * A check fails when |misclosure| exceeds CAIRN_MISC_SIGMAS times that
 * (common practice, no source), or, for levelling, the `loop-allowance`
 * m·√km when the option is set.
 *
 * To be folded into quality.h (section "Field-book misclosures") and, for
 * the two writers at the end, output.h.
 *
 * Ownership: cairn_misclosures_compute allocates *pres; release it with
 * cairn_misclosures_free. Units: metres and radians, as everywhere in the
 * library; the writers convert to the project units.
 *
 * The checks and their sign conventions (route = mark ids, in order):
 *   level-loop        one per independent loop of rises (a cycle basis: a
 *                     breadth-first spanning forest of the rise graph, each
 *                     rise outside it closes one loop; two rises between
 *                     the same marks close a two-rise loop). The route
 *                     starts with the loop's first rise in load order, in
 *                     its booked direction, and returns to its start mark.
 *                     misclosure = Σ rises along the route (ideally 0).
 *   level-line        between consecutive held heights (hold h or enh, in
 *                     mark order) of one connected part of the rise graph,
 *                     along the spanning forest. misclosure = Σ rises −
 *                     (h_end − h_start): computed − known.
 *   traverse-angular  a chain of setups from a held mark (position held)
 *                     oriented on another held mark, through unheld marks
 *                     that each have exactly two traverse legs, to a held
 *                     mark oriented on a held mark (or back to the start,
 *                     oriented on the first backsight). Route: start
 *                     reference, stations, closing reference.
 *                     misclosure = carried − known azimuth of the closing
 *                     reference, wrapped into (−π, π].
 *   traverse-linear   the same chain: misclosure = √(Δe² + Δn²) of the
 *                     carried end position − the held one (angles not
 *                     balanced first); de, dn and precision give more.
 *                     Route: the stations.
 *   face-pair         a face-one and a face-two sight of one setup to one
 *                     target (the k-th face-one sight paired with the k-th
 *                     face-two sight). Up to two rows per pair, always the
 *                     hz row before the zen row (`reading` tells them
 *                     apart): hz: hz1 − (hz2 − π), wrapped (= 2c, twice
 *                     the collimation error); zen: z1 + z2 − 2π (= 2i,
 *                     twice the vertical index error). Route: AT TO.
 *   set-agreement     two or more setups at one mark (direction sets):
 *                     every later set against the first, directions reduced
 *                     to the first target both observe (R). misclosure =
 *                     (d(T) − d(R)) of the later set − the same in the first
 *                     set, wrapped. Route: AT R T.
 *   repeat-distance   a line measured more than once (either direction):
 *                     horizontal distances (horiz, or slope·sin z with the
 *                     sight's zenith) together; slopes without a zenith
 *                     only with slopes of the same ih and th. misclosure =
 *                     max − min. Route: the first reading's AT TO.
 */
#ifndef CAIRN_MISCLOSURE_H
#define CAIRN_MISCLOSURE_H

#include <stddef.h>
#include <stdio.h>

#include "cairn/core.h"
#include "cairn/model.h"

/** A misclosure fails above this many expected standard deviations.
 *  The three-sigma rule is common practice, no source. */
#define CAIRN_MISC_SIGMAS 3.0

typedef enum {
    CAIRN_MISC_LEVEL_LOOP = 0,
    CAIRN_MISC_LEVEL_LINE,
    CAIRN_MISC_TRAVERSE_ANGULAR,
    CAIRN_MISC_TRAVERSE_LINEAR,
    CAIRN_MISC_FACE_PAIR,
    CAIRN_MISC_REPEAT_DISTANCE,
    CAIRN_MISC_SET_AGREEMENT,
    CAIRN_MISC_NKINDS
} cairn_misc_kind;

/** Which reading a face-pair row compares. */
enum { CAIRN_MISC_HZ = 1, CAIRN_MISC_ZEN = 2 };

/** One misclosure check. */
typedef struct {
    cairn_misc_kind kind;
    int reading;          /**< face-pair: CAIRN_MISC_HZ or CAIRN_MISC_ZEN; else 0 */
    size_t route;         /**< offset of the route in cairn_misclosures.route */
    size_t nroute;        /**< marks on the route */
    double misclosure;    /**< m, or rad for angular kinds (see the top) */
    double length;        /**< m, length of the route; NAN when unknown (a rise
                               with setups only) or not meaningful (face-pair,
                               set-agreement) */
    double expected_sd;   /**< m or rad; NAN when no precision is known */
    double ratio;         /**< |misclosure| / expected_sd; NAN with it */
    double allowance;     /**< m, loop-allowance·√km for levelling; else NAN */
    double de, dn;        /**< traverse-linear: carried − held end, m; else NAN */
    double precision;     /**< traverse-linear: N of 1 : N (length / misclosure,
                               INFINITY when it closes exactly); else NAN */
    int fail;             /**< 1: ratio above CAIRN_MISC_SIGMAS or above the
                               allowance */
    cairn_src src;        /**< the first observation involved (load order) */
} cairn_misclosure;

/** Instrument errors estimated from the face pairs of one setup. */
typedef struct {
    int setup;            /**< setup index */
    int npairs_hz;        /**< hz pairs averaged */
    double collimation;   /**< rad, mean of (hz1 − (hz2 − π))/2; NAN if none */
    int npairs_zen;       /**< zen pairs averaged */
    double index_error;   /**< rad, mean of (z1 + z2 − 2π)/2; NAN if none */
} cairn_face_error;

typedef struct cairn_misclosures {
    cairn_misclosure *item;   size_t n, cap;    /**< in the order of the top list */
    int *route;               size_t nroute_used, cap_route; /**< mark indices */
    cairn_face_error *face;   size_t nface, cap_face; /**< setups with face pairs */
    size_t nfail;             /**< items with fail = 1 */
} cairn_misclosures;

/** Every misclosure check of a loaded, valid net (cairn_validate passed).
 *  Returns 0 (possibly with no checks, (*pres)->n == 0), or -1 when out of
 *  memory (message in err; *pres NULL). */
int cairn_misclosures_compute(const cairn_net *net, cairn_misclosures **pres,
                              cairn_error *err);
void cairn_misclosures_free(cairn_misclosures **pres);

/** The `kind` name of misclosures.csv ("level-loop" ...); "?" otherwise. */
const char *cairn_misc_kind_name(cairn_misc_kind k);
/** True for kinds whose misclosure is an angle (written in arc-seconds). */
int cairn_misc_kind_angular(cairn_misc_kind k);

/* --- output stage (src/output/misclosures_csv.c) ----------------------- */

/** Write misclosures.csv (FORMAT.md: header
 *  kind,route,misclosure,length,expected_sd,ratio,status,source and one row
 *  per check, in order) to f: lengths in net->length_unit, angular
 *  misclosures and their sd in arc-seconds. Returns 0, or -1 on a write
 *  error. */
int cairn_write_misclosures_csv(FILE *f, const cairn_net *net,
                                const cairn_misclosures *m);

/** Write DIR/misclosures.csv atomically (temporary file in dir, renamed
 *  into place), creating dir (one level) when missing. Returns 0, or -1
 *  with a message. */
int cairn_write_misclosures(const char *dir, const cairn_net *net,
                            const cairn_misclosures *m, cairn_error *err);

#endif
