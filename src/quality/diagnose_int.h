/* Private to src/quality/diagnose*.c: the hypotheses under test and the
 * helpers the files share. */
#ifndef CAIRN_DIAGNOSE_INT_H
#define CAIRN_DIAGNOSE_INT_H

#include <stddef.h>

#include "cairn/diagnose.h"

#define CAIRN_DIAG_TEXT 64

/* One booked reading whose text the digit hypotheses vary: the
 * observation diagnosed, or (dimensions 1 and 2) the slope distance or
 * zenith angle it was reduced from. */
typedef struct {
    const cairn_obs *bo;           /* entry of net->obs */
    const char *key;               /* "hz", "zen", "slope", "horiz", "value" */
    char text[CAIRN_DIAG_TEXT];    /* "" when unreadable */
    int angular;                   /* 1: angle (rad), 0: length (m) */
    int unit;                      /* cairn_angle_unit or cairn_length_unit of the text */
    int decimals;                  /* decimals as booked (packed-dms equivalent) */
} cairn_diag_reading;

/* One hypothesis and how well it fits. */
typedef struct {
    cairn_diag_kind kind;
    int mark;                      /* wrong-mark: the mark meant; else -1 */
    double fit;                    /* |b - nabla| / sd; +inf when unset */
    double margin;                 /* sd by which it must beat the best of its
                                      kind to replace it (a disfavoured variant) */
    double corr;                   /* corrected booked value, SI (NAN: none) */
    const cairn_diag_reading *rd;  /* the reading corrected, or NULL */
    const char *key;               /* its key ("th" for target-height) */
    int decimals;                  /* decimals for corrected_text */
    char text[CAIRN_DIAG_TEXT];    /* corrected text when it is a variant */
    char booked[CAIRN_DIAG_TEXT];  /* booked text when rd is NULL (th) */
    char what[64];                 /* how the mistake was made, for the note */
} cairn_diag_cand;

/* Marks bucketed by plane position on a uniform grid, built once for all
 * the diagnoses of an analysis so that the wrong-mark search visits only
 * the marks near a station, not all of them (diagnose_mark.c). */
typedef struct {
    double e0, n0, h;              /* origin and cell size, m */
    int nx, ny;
    size_t *start;                 /* nx·ny + 1: cell c holds marks[start[c] ..] */
    int *marks;                    /* in increasing number within a cell */
} cairn_mark_grid;

/* Build over the marks with finite e and n in x; 0, or -1 when out of
 * memory (g is then empty and the search scans every mark). */
int cairn_mark_grid_build(const cairn_state *x, size_t nmarks, cairn_mark_grid *g);
void cairn_mark_grid_clear(cairn_mark_grid *g);

/* Input files held in memory with their line starts, so that the booked
 * text of each diagnosed reading costs one line, not a re-read of the
 * file up to it (diagnose_text.c). Filled on demand; a file that cannot
 * be read is remembered as such. */
#define CAIRN_TEXT_CACHE_FILES 8
typedef struct {
    char *path;
    char *text;                    /* NULL: unreadable */
    size_t len;
    size_t *line;                  /* start of each line */
    size_t nline;
    int xml;
    size_t bom;
} cairn_text_file;
typedef struct {
    cairn_text_file f[CAIRN_TEXT_CACHE_FILES];
    int n, next;                   /* entries used; next to replace when full */
} cairn_text_cache;
void cairn_text_cache_clear(cairn_text_cache *tc);
/* cairn_booked_text through the cache (NULL: no cache). */
int cairn_booked_text_cached(const cairn_obs *o, const char *key, char *buf, size_t n,
                             cairn_text_cache *tc);

/* cairn_diagnose with a grid and a text cache (NULL: scan every mark,
 * read the files afresh). */
int cairn_diagnose_grid(const cairn_problem *p, const cairn_state *x, const double *nabla,
                        const double *sd_nabla, size_t iobs, const cairn_mark_grid *g,
                        cairn_text_cache *tc, cairn_diagnosis *out);

/* State of one diagnosis. */
typedef struct {
    const cairn_mark_grid *grid;   /* NULL or empty: scan every mark */
    cairn_text_cache *text;        /* NULL: read files afresh */
    const cairn_problem *p;
    const cairn_state *x;
    const double *nabla, *sd;
    size_t iobs;
    const cairn_obs *o;            /* p->obs[iobs] */
    double nab, sdn;               /* nabla[iobs], sd[iobs] */
    int angular;                   /* o's residual wraps */
    cairn_diag_reading rd[2];
    int nrd;
    cairn_diag_cand best[CAIRN_DIAG_NKINDS]; /* best of each kind */
    cairn_diag_cand mark2;         /* second-best wrong mark */
} cairn_diag_ctx;

/* Consider a hypothesis: keep it when it is the best of its kind. */
void cairn_diag_offer(cairn_diag_ctx *c, const cairn_diag_cand *cand);

/* The problem observations [*plo, *phi] of c->o's sight (just c->iobs
 * when it is no sight reading). */
void cairn_dg_sight_range(const cairn_diag_ctx *c, size_t *plo, size_t *phi);

/* Fit of a blunder b implied for observation j (m or rad). */
double cairn_diag_fit(const cairn_diag_ctx *c, size_t j, double b);

/* Hypotheses on the text and value of one reading (diagnose_digits.c). */
void cairn_diag_reading_hypotheses(cairn_diag_ctx *c, const cairn_diag_reading *rd);
/* Wrong target height and wrong mark (diagnose_mark.c). */
void cairn_diag_target_height(cairn_diag_ctx *c);
void cairn_diag_wrong_mark(cairn_diag_ctx *c);

/* Unit of the booked text: the unit in which it parses to the booked SI
 * value, the project unit first. Returns 0, or -1 when none does. */
int cairn_diag_text_unit(const char *text, int angular, double si, int project_unit,
                         int *punit);
/* Decimals of a booked number, for writing a correction like it; for
 * "D-M-S.s" the packed equivalent (4 + decimals of the seconds). */
int cairn_diag_decimals(const char *text);
/* Write an SI value in the project unit with `decimals` decimals (packed
 * DDD.MMSSs for dms); *pnum receives the numeric project-unit form. */
void cairn_dg_format_value(double si, int angular, int unit, int decimals, char *buf,
                       size_t n, double *pnum);

/* snprintf for notes, where cutting a long line short is intended (and so
 * not worth a -Wformat-truncation warning at each call). */
void cairn_dg_printf(char *buf, size_t n, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

#endif
