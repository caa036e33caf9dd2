/* cairn — core: version, error values, units and angle formats.
 *
 * Ownership rule for the whole library: whoever calls a `_new` / `_init`
 * function owns the result and releases it with the matching `_free` /
 * `_clear`. `_free` functions take `T **`, accept NULL and set the pointer
 * to NULL.
 *
 * Parameter order: inputs, in/out, outputs (names start with `p`), then the
 * error list last.
 *
 * Internal units everywhere in the library: metres and radians. Project
 * units matter only when reading booked values and when writing results.
 */
#ifndef CAIRN_CORE_H
#define CAIRN_CORE_H

#include <stddef.h>
#include <stdarg.h>

#define CAIRN_VERSION_MAJOR 0
#define CAIRN_VERSION_MINOR 1
#define CAIRN_VERSION_PATCH 0
#define CAIRN_VERSION_STRING "0.1.0"

/** Runtime version string ("0.1.0"); compare with CAIRN_VERSION_STRING to
 *  catch a header/library mismatch. */
const char *cairn_version(void);

/** Exit status of the `cairn` program (mirrored in cairn(1) EXIT STATUS). */
enum cairn_exit {
    CAIRN_EXIT_OK = 0,       /**< adjusted, global test passed, nothing flagged */
    CAIRN_EXIT_FLAGGED = 1,  /**< adjusted, but a test failed or observations flagged */
    CAIRN_EXIT_INPUT = 2,    /**< usage or input error; nothing written */
    CAIRN_EXIT_ADJUST = 3    /**< adjustment impossible: datum defect, divergence ... */
};

/* ------------------------------------------------------------------ */
/* Errors                                                              */
/* ------------------------------------------------------------------ */

/** At most this many errors (and separately warnings) are kept; more are
 *  counted but not stored, and loading stops at the limit. */
#define CAIRN_MAX_ERRORS 50
#define CAIRN_MSG_MAX 512
#define CAIRN_PATH_MAX 1024

typedef enum { CAIRN_SEV_ERROR = 0, CAIRN_SEV_WARNING = 1 } cairn_severity;

/** One located diagnostic. `line`/`col` are 1-based; 0 means unknown
 *  (then the message is printed without that part). `file` may be empty
 *  for errors that belong to no input file. */
typedef struct {
    cairn_severity severity;
    int line;
    int col;
    char file[CAIRN_PATH_MAX];
    char message[CAIRN_MSG_MAX];
} cairn_diag;

/** A bounded list of diagnostics, in the order they were found. */
typedef struct cairn_error {
    cairn_diag *diag;   /**< ndiag entries */
    int ndiag;
    int nerrors;        /**< errors reported, including ones not stored */
    int nwarnings;      /**< warnings reported, including ones not stored */
} cairn_error;

/** Prepare an empty list. Returns 0, or -1 when out of memory. */
int cairn_error_init(cairn_error *err);
/** Release the list's storage; the struct may be re-initialised. */
void cairn_error_clear(cairn_error *err);
/** Forget every diagnostic, keeping the storage. */
void cairn_error_reset(cairn_error *err);

/** Add a diagnostic with a printf-style message. `file` may be NULL.
 *  Returns -1 for an error and 0 for a warning, so that
 *  `return cairn_error_add(err, CAIRN_SEV_ERROR, ...)` reads naturally. */
int cairn_error_add(cairn_error *err, cairn_severity sev, const char *file,
                    int line, int col, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 6, 7)))
#endif
    ;
int cairn_error_vadd(cairn_error *err, cairn_severity sev, const char *file,
                     int line, int col, const char *fmt, va_list ap);

/** True when CAIRN_MAX_ERRORS errors have been reported: stop loading. */
int cairn_error_full(const cairn_error *err);

/** Format one diagnostic GNU-style into buf:
 *  "FILE:LINE:COL: error: MESSAGE" (parts with 0/empty values omitted).
 *  Returns the length written (truncated to n-1). */
size_t cairn_diag_format(const cairn_diag *d, char *buf, size_t n);

/* ------------------------------------------------------------------ */
/* Memory helpers                                                      */
/* ------------------------------------------------------------------ */

/** Grow *pbuf (elements of `size` bytes, capacity *pcap) so that it holds
 *  at least `need` elements, doubling. Returns 0, or -1 when out of memory
 *  or on overflow (then *pbuf is unchanged). */
int cairn_grow(void **pbuf, size_t *pcap, size_t need, size_t size);

/** strdup that returns NULL on NULL input or out of memory. */
char *cairn_strdup(const char *s);

/* ------------------------------------------------------------------ */
/* Loops over observations on several cores (src/core/parallel.c)      */
/* ------------------------------------------------------------------ */

/** Largest number of parts cairn_parallel_for splits a loop into. */
#define CAIRN_PARALLEL_MAX 8

/** Observations per part below which the loops over observations stay on
 *  one thread (the min_items the stages pass to cairn_parallel_parts). */
#define CAIRN_PARALLEL_MIN_OBS 20000

/** How many parts a loop of n independent items should use: one per
 *  online processor (at most CAIRN_PARALLEL_MAX), but none smaller than
 *  min_items, so that small networks run on one thread exactly as
 *  before (the same sums in the same order). At least 1. */
int cairn_parallel_parts(size_t n, size_t min_items);

/** Run body(ctx, part, lo, hi) for part = 0 .. parts-1 over the
 *  contiguous ranges lo = n·part/parts .. hi = n·(part+1)/parts: parts
 *  1.. on threads of their own, part 0 on the caller's, and return when
 *  all are done. The bodies must only write what belongs to their range
 *  or to their part (per-part sums, combined by the caller in part order,
 *  keep a result independent of the timing). When a thread cannot be
 *  started its part runs on the caller's thread. */
void cairn_parallel_for(size_t n, int parts,
                        void (*body)(void *ctx, int part, size_t lo, size_t hi), void *ctx);

/* ------------------------------------------------------------------ */
/* Units                                                               */
/* ------------------------------------------------------------------ */

typedef enum {
    CAIRN_LENGTH_M = 0,
    CAIRN_LENGTH_FT,    /* international foot, 0.3048 m exactly */
    CAIRN_LENGTH_USFT   /* US survey foot, 1200/3937 m exactly */
} cairn_length_unit;

typedef enum {
    CAIRN_ANGLE_DMS = 0, /* packed DDD.MMSSs..., or D-M-S.s */
    CAIRN_ANGLE_DEG,     /* decimal degrees */
    CAIRN_ANGLE_GON      /* 400 gon per circle */
} cairn_angle_unit;

#define CAIRN_PI 3.14159265358979323846
#define CAIRN_RHO_SEC (180.0 * 3600.0 / CAIRN_PI) /* arc-seconds per radian */

/** Metres per unit (exact definitions). */
double cairn_length_factor(cairn_length_unit u);
/** Parse "m", "ft", "usft". Returns 0, or -1 if unknown. */
int cairn_length_unit_parse(const char *s, cairn_length_unit *pu);
/** Parse "dms", "deg", "gon". Returns 0, or -1 if unknown. */
int cairn_angle_unit_parse(const char *s, cairn_angle_unit *pu);
const char *cairn_length_unit_name(cairn_length_unit u);
const char *cairn_angle_unit_name(cairn_angle_unit u);

/** Strictly parse a finite decimal number (optional sign, digits, point,
 *  exponent; nothing else, no blanks). Returns 0, or -1. */
int cairn_parse_number(const char *s, double *px);

/** Parse an angle in unit u into radians. DMS accepts packed
 *  `DDD.MMSSs` (123.4530 = 123°45'30") and `D-M-S.s` (123-45-30.5); a
 *  leading '-' negates the whole angle. Returns 0; -1 not a number;
 *  -2 minutes or seconds of 60 or more. */
int cairn_parse_angle(const char *s, cairn_angle_unit u, double *prad);

/** Format radians in unit u with `decimals` decimals of the last field
 *  (seconds for DMS, else the unit). DMS is written `D-MM-SS.ss`; rounding
 *  carries so that 60 seconds or 60 minutes are never printed.
 *  Returns the length written (truncated to n-1). */
size_t cairn_format_angle(double rad, cairn_angle_unit u, int decimals,
                          char *buf, size_t n);

/* ------------------------------------------------------------------ */
/* Standard deviations with mandatory units                            */
/* ------------------------------------------------------------------ */

/** Kinds of term a standard-deviation value may contain. */
enum {
    CAIRN_SD_LENGTH = 1, /* mm cm m ft usft */
    CAIRN_SD_ANGLE = 2,  /* sec " mgon cc */
    CAIRN_SD_PPM = 4     /* ppm */
};

/** A parsed standard deviation or tolerance: a sum of terms. */
typedef struct {
    double length;  /**< metres */
    double angle;   /**< radians */
    double ppm;     /**< parts per million */
    unsigned has;   /**< CAIRN_SD_* bits of the terms present */
} cairn_sd;

/** Parse "1 mm + 1.5 ppm", "1mm+1.5ppm", "2sec", "2 \"", "0.5 mgon" ...
 *  `allowed` is a mask of CAIRN_SD_* kinds. Every term needs a unit; a term
 *  of a kind not allowed, a negative or non-finite value, or a repeated
 *  kind is an error. Returns 0, or -1 with a message (no location) in msg. */
int cairn_parse_sd(const char *s, unsigned allowed, cairn_sd *psd, char *msg,
                   size_t msglen);

/** Length in metres from a value in unit u. */
static inline double cairn_to_m(double v, cairn_length_unit u)
{
    return v * cairn_length_factor(u);
}

/** Wrap an angle into [0, 2π). */
double cairn_wrap_2pi(double a);
/** Wrap an angle into (−π, π]. */
double cairn_wrap_pi(double a);

#endif
