/* cairn/diagnose.h — what went wrong in the field book: for a flagged or
 * rejected observation, test the usual booking mistakes as explicit
 * hypotheses and name the one that explains the estimated blunder.
 *
 * Each hypothesis implies a blunder b (booked − what should have been
 * booked, in the adjustment observation's own unit, m or rad). It fits when
 * b lies near the estimated blunder ∇̂ = −v/r:
 *
 *     fit = |b − ∇̂| / sd(∇̂)                       (in standard deviations)
 *
 * The hypotheses (cairn_diag_kind): two adjacent digits transposed in the
 * booked text; a reading booked in the other face (hz ± 180°, zen 360° − z);
 * a vertical angle booked as a zenith angle (z = 90° − v, or 270° + v in
 * face two); the value booked in another unit (m, ft, usft; dms, deg,
 * gon); the decimal point 1–3 places off; a doubled digit booked once, a
 * dropped 0, or a digit written twice; the sign of a rise slipped; a wrong
 * target height (dimension 3: one height change Δ explaining the zenith
 * angle and the slope distance of the sight together); the sight taken to
 * another mark. "No simple explanation" is kind NONE.
 *
 * Decision rule (common practice, no source): the best hypothesis is
 * reported when its fit is at most CAIRN_DIAG_FIT_MAX (3) and every
 * competing explanation — including "the booked value is right", whose fit
 * is |∇̂| / sd — fits at least CAIRN_DIAG_SEPARATION (2) times worse and
 * worse than CAIRN_DIAG_FIT_MAX, and the booked value misfits by at least
 * CAIRN_DIAG_GROSS (5) sd. Hypotheses of one kind (e.g. ft and US
 * ft, two transpositions) do not compete with each other: the best of the
 * kind stands for it. Two kinds that imply the very same corrected value
 * (a point moved two places and a value booked in cm) do not compete
 * either; the earlier kind in the enum is named. One mistake explaining
 * several bad readings of a sight beats one explaining a single reading:
 * when a target height or a wrong mark fits, a hypothesis about the
 * diagnosed reading alone is charged the worst misfit it leaves in the
 * sight's other readings. A put-back digit may not make a value finer
 * than it was booked, or than 4 decimals (0.1 mm, 1" in packed DMS) —
 * without that, random blunders were "explained" by 381.2906 → 381.02906.
 * A leading zero ("026.38") is never a corrected value: nobody books one.
 *
 * The digit hypotheses act on the booked TEXT of the value, which the net
 * does not keep: it is re-read from the source line (obs->src) of the
 * input file, so the input files must still be readable at the path they
 * were loaded from (relative paths: from the same working directory).
 * When the text cannot be read, only the value-level hypotheses (face,
 * vertical angle, sign, target height, wrong mark) are tested.
 *
 * Pure with respect to global state, thread-safe; reads files, never
 * prints. Cost per call: the bytes of the source file up to the line (the
 * whole file for an XML project) plus O(marks) for the wrong-mark search.
 */
#ifndef CAIRN_DIAGNOSE_H
#define CAIRN_DIAGNOSE_H

#include <stddef.h>

#include "cairn/model.h"

#ifdef __cplusplus
extern "C" {
#endif

/** The field-book mistakes; names as in FORMAT.md results.xml. */
typedef enum {
    CAIRN_DIAG_NONE = 0,
    CAIRN_DIAG_TRANSPOSED_DIGITS,
    CAIRN_DIAG_WRONG_FACE,
    CAIRN_DIAG_ZENITH_AS_VERTICAL,
    CAIRN_DIAG_WRONG_UNIT,
    CAIRN_DIAG_MISPLACED_DECIMAL,
    CAIRN_DIAG_DROPPED_DIGIT,
    CAIRN_DIAG_SIGN_SLIP,
    CAIRN_DIAG_TARGET_HEIGHT,
    CAIRN_DIAG_WRONG_MARK,
    CAIRN_DIAG_NKINDS
} cairn_diag_kind;

/** Largest fit (in sd of ∇̂) at which a hypothesis explains the blunder:
 *  three sigma, common practice, no source. */
#define CAIRN_DIAG_FIT_MAX 3.0
/** How many times worse the next explanation must fit (common practice,
 *  no source). */
#define CAIRN_DIAG_SEPARATION 2.0
/** Smallest fit of "the booked value is right" (|∇̂| / sd) at which any
 *  mistake is named: below it the error is too small to tell a booking
 *  mistake from noise (common practice, no source). */
#define CAIRN_DIAG_GROSS 5.0

/** "transposed-digits", "wrong-face", ... "none" (FORMAT.md); "none" for a
 *  value out of range. */
const char *cairn_diag_kind_name(cairn_diag_kind k);

/** The outcome of cairn_diagnose. */
typedef struct {
    cairn_diag_kind kind;
    /** The value the hypothesis implies for the booked reading named in
     *  `reading`, in the project units (length unit; angle unit, dms as
     *  the packed number DDD.MMSSs, e.g. 47.2315); for target-height the
     *  corrected th. NAN for none and wrong-mark. */
    double corrected;
    /** The same as booked text: the transposed string itself for digit
     *  hypotheses booked in the project units, else `corrected` written
     *  with the booked number of decimals. "" when corrected is NAN. */
    char corrected_text[64];
    /** Which booked value `corrected` replaces: "hz", "zen", "slope",
     *  "horiz", "th", or "value" (angle, azimuth, rise); "" if none. In
     *  dimensions 1 and 2 a reduced observation may be explained by its
     *  sight's zenith angle: then this says "zen". */
    char reading[8];
    /** The booked text of that reading ("" when it could not be read). */
    char booked_text[64];
    int mark;          /**< wrong-mark: index of the mark meant; else -1 */
    char note[160];    /**< one line for the surveyor, e.g. "slope 190.5666
                            -> 190.6566 (digits 56 for 65), fit 0.3 sd;
                            next: none 41.2 sd" */
    double fit_sigma;  /**< fit of the best hypothesis (NAN if none could be
                            formed) */
    double next_sigma; /**< fit of its strongest competitor (NAN if none) */
} cairn_diagnosis;

/** Diagnose observation iobs of problem p (its index in p->obs, i.e.
 *  observations.csv seq − 1).
 *
 *  x: the adjusted state in FULL grid coordinates (metres) and
 *  orientations (radians), e.g. {adj->e, adj->n, adj->h, adj->omega} of a
 *  cairn_adjustment (solve.h). Marks whose coordinates are NAN are never
 *  proposed as the wrong mark.
 *
 *  nabla, sd_nabla: arrays of p->nobs entries, the estimated blunder
 *  ∇̂ = −v/r (observed − true, m or rad, v = adjusted − observed) of each
 *  observation and its standard deviation σ/√r; NAN where unknown (an
 *  unchecked observation). For an observation rejected by snooping pass
 *  its misfit to the final solution, observed − computed, and
 *  √(σ² + a Qxx aᵀ). Entry iobs must be finite with sd > 0. The other
 *  readings of the same sight are read too: they confirm a wrong mark (all
 *  readings must fit it) and a wrong target height (the zenith angle and
 *  the slope distance must agree on one Δ); pass them for every reading,
 *  flagged or not.
 *
 *  Returns 0 with *out filled (kind NONE when nothing fits clearly), or -1
 *  for bad arguments (out then says none). */
int cairn_diagnose(const cairn_problem *p, const cairn_state *x,
                   const double *nabla, const double *sd_nabla, size_t iobs,
                   cairn_diagnosis *out);

/** The booked text of a value of booked observation o (an entry of
 *  net->obs), re-read from o->src: `key` names the field ("hz", "zen",
 *  "slope", "horiz", "th", "value"; NULL: the observation's own value).
 *  Field books: the word after the keyword (the positional value of
 *  angle, azimuth and rise records), quotes and CRLF handled. XML: the
 *  attribute's value in the element at o->src. Returns 0 and the text in
 *  buf, or -1 when the file cannot be read, the field is absent, or the
 *  text does not fit (buf is then ""). */
int cairn_booked_text(const cairn_obs *o, const char *key, char *buf, size_t n);

#ifdef __cplusplus
}
#endif

#endif /* CAIRN_DIAGNOSE_H */
