/* cairn — solve: starting coordinates computed from the observations.
 *
 * Before the first linearisation every mark component that an observation
 * touches needs a value. Marks given in the input (held, weighted or only a
 * starting value) keep theirs; every other component is computed here from
 * the booked observations, growing outward from the marks with coordinates
 * (polar points, intersection, resection, trilateration; levelled and
 * trigonometric heights), with the median of all the ways that reach a
 * mark, and a warning when those ways disagree grossly.
 *
 * Ownership: cairn_start_compute hands out a report that the caller frees
 * with cairn_start_report_free. Strings in the report belong to it.
 */
#ifndef CAIRN_START_H
#define CAIRN_START_H

#include <stddef.h>

#include "cairn/core.h"
#include "cairn/model.h"

/** One computed start: the components `comp` (CAIRN_E|CAIRN_N or CAIRN_H)
 *  of mark `mark`, from observation(s) obs1 and obs2 (indices into
 *  net->obs, -1 when not applicable), by `method`: "polar from Q1",
 *  "intersection from S1 and S2", "resection",
 *  "trilateration from A and B", "levelled from BM1", "trig height from
 *  Q1", "free-network origin", "free-network north", "free-network scale".
 *  When several ways reached the mark, the one nearest the median kept is
 *  named, and `ncand` says how many there were. */
typedef struct {
    int mark;
    unsigned comp;
    const char *method;
    int obs1, obs2;
    int ncand;
} cairn_start_step;

/** The steps of one computation, in the order they were made. */
typedef struct cairn_start_report cairn_start_report;

/** Compute starting values for every mark component that an observation
 *  touches but that has no given value; sets net->marks[i].e / n / h and
 *  the `computed` bits (given components are never changed).
 *
 *  dimension: 1, 2 or 3 as resolved for the adjustment; 0 resolves as
 *  FORMAT.md `auto` (3 when any zenith angle is booked, else 2). Which
 *  observations touch which components follows FORMAT.md "Models" (rises
 *  count in 1 and 3, and in 2 only when net->opt.dimension is auto).
 *
 *  A connected part that these ways cannot enter from its marks with
 *  coordinates (control marks that see no other control mark, each new
 *  mark seen from one of them at most) is computed in a local frame of its
 *  own and fitted to those marks by a similarity transformation when it
 *  holds two or more of them ("polar from S1 in a local frame, fitted to 4
 *  marks with coordinates"; a part of distances only takes the better of
 *  that fit and its mirror image, "... as its mirror image"); a misfit
 *  above max(0.05 m, 100 ppm of their spread; 1000 ppm for distances
 *  only), or a scale more than 1000 ppm from one where there are
 *  distances, is a CAIRN_SEV_WARNING naming the worst mark. Ambiguous
 *  trilaterations are settled one at a time, the longest waiting first.
 *
 *  With no mark of known position touched by a plane observation, the
 *  station of the first setup is put at e = 0, n = 0 and its first sight
 *  points north; with no known height, the first mark touched by a height
 *  observation (that same station when it is one) gets h = 0.
 *
 *  prep: when not NULL, receives the report (also on failure; NULL only
 *  when out of memory).
 *
 *  Returns 0; or -1 with one error naming every mark that cannot be
 *  reached and why ("cannot compute starting coordinates: N7 (only one
 *  distance, no direction), N9 (not connected to any mark with
 *  coordinates)"), located at the first such mark's first reference. The
 *  marks that could be reached still get their values. Redundant ways that
 *  disagree by more than max(0.05 m, 10 expected sd) are reported as
 *  CAIRN_SEV_WARNING naming both source lines. */
int cairn_start_compute(cairn_net *net, int dimension, cairn_start_report **prep,
                        cairn_error *err);

/** Number of steps; 0 for NULL. */
size_t cairn_start_report_count(const cairn_start_report *r);
/** Step i (0-based) or NULL when out of range. */
const cairn_start_step *cairn_start_report_step(const cairn_start_report *r,
                                                size_t i);
/** Number of warnings the computation produced (also those beyond the
 *  error list's limit). */
size_t cairn_start_report_nwarnings(const cairn_start_report *r);
void cairn_start_report_free(cairn_start_report **pr);

#endif
