/* cairn — input stage, private declarations shared by the field-book
 * parser, the XML loader and validation.
 *
 * Both syntaxes reduce every record to the same shape — a record name and
 * a list of (key, value, column) fields — and hand it to one set of record
 * handlers (records_*.c). That is what makes an XML project and the same
 * data written as a field book load into identical networks. */
#ifndef CAIRN_INPUT_INT_H
#define CAIRN_INPUT_INT_H

#include <stddef.h>
#include <sys/types.h>

#include "cairn/core.h"
#include "cairn/model.h"
#include "cairn/input.h"

/* One open file in the chain of includes, for cycle detection. Files are
 * compared by device and inode, so "a.cfb" and "./a.cfb" are the same. */
typedef struct in_open {
    dev_t dev;
    ino_t ino;
    const struct in_open *parent;
} in_open;

/* Loader state for one file being read. */
typedef struct {
    cairn_net *net;
    cairn_error *err;
    const char *file;      /* the net's copy of the file name */
    int depth;             /* include depth, 0 for the top-level file */
    int top;               /* 1: a units line also sets the project units */
    int xml;               /* 1: messages speak of attributes and elements */
    cairn_length_unit lu;  /* units of the values in this file */
    cairn_angle_unit au;
    int setup;             /* current setup: index, -1 none, -2 a broken one */
    const in_open *open;   /* this file in the include chain (may be NULL) */
} in_ctx;

/* One field of a record: `key` (a keyword or attribute name, or a
 * positional role such as "id"), its value, its line and the 1-based byte
 * columns of the key and value (equal for positional and XML fields). */
typedef struct {
    const char *key;
    const char *val;
    int line;              /* an XML start tag may span lines */
    int kcol, vcol;
} in_field;

typedef struct {
    const char *name;      /* record keyword or element name */
    int line, col;         /* where the record starts */
    in_field *f;
    int nf;
} in_rec;

/* Report an error / warning at (line, col) of the current file. Always
 * returns -1 (error) or 0 (warning). */
int cairn_in_err(in_ctx *c, int line, int col, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 4, 5)))
#endif
    ;
int cairn_in_warn(in_ctx *c, int line, int col, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 4, 5)))
#endif
    ;

/* Copy s into buf for a message: at most 40 characters, bytes outside
 * printable ASCII shown as '?', "..." when cut. Returns buf. */
const char *cairn_in_show(const char *s, char *buf, size_t n);

/* True when the n bytes at s are valid UTF-8 (no overlongs, no
 * surrogates, nothing above U+10FFFF). */
int cairn_in_utf8_valid(const char *s, size_t n);

/* Read a whole file with one fread into a NUL-terminated malloc'd buffer.
 * Returns 0, or -1 with errno set. */
int cairn_in_read_file(const char *path, char **ptext, size_t *plen);

/* Join `rel` to the directory of `base` (unless rel is absolute) into buf.
 * Returns 0, or -1 when it does not fit. */
int cairn_in_join_path(const char *base, const char *rel, char *buf, size_t n);

/* --- values (values.c): convert one field, reporting errors at its column.
 * Each returns 0 or -1 (error already reported). */
int cairn_in_val_length(in_ctx *c, const in_rec *r, const in_field *f, double *pm);
int cairn_in_val_number(in_ctx *c, const in_rec *r, const in_field *f, double *px);
int cairn_in_val_angle(in_ctx *c, const in_rec *r, const in_field *f, double *prad);
int cairn_in_val_circle(in_ctx *c, const in_rec *r, const in_field *f, double *prad);
int cairn_in_val_int(in_ctx *c, const in_rec *r, const in_field *f, int lo, int hi, int *pv);
int cairn_in_val_sd(in_ctx *c, const in_rec *r, const in_field *f, unsigned allowed,
              cairn_sd *psd);
int cairn_in_val_id(in_ctx *c, const in_rec *r, const in_field *f, const char *what);
int cairn_in_val_text(in_ctx *c, const in_rec *r, const in_field *f);

/* Match the fields of r against `keys` (NULL-terminated): unknown and
 * repeated keys are errors. On success pf[i] is the field for keys[i] or
 * NULL. At most 32 keys. */
int cairn_in_match(in_ctx *c, const in_rec *r, const char *const *keys,
             const in_field **pf);

/* --- record handlers (records_def.c, records_obs.c). Each checks the
 * whole record first and changes the net only when it is valid. */
int cairn_in_rec_units(in_ctx *c, const in_rec *r, int project);
int cairn_in_rec_option(in_ctx *c, const in_rec *r, const in_field *f);
int cairn_in_rec_options(in_ctx *c, const in_rec *r);
int cairn_in_rec_instrument(in_ctx *c, const in_rec *r);
int cairn_in_rec_mark(in_ctx *c, const in_rec *r);
int cairn_in_rec_text(in_ctx *c, int line, int col, const char *what, const char *text);
int cairn_in_rec_setup(in_ctx *c, const in_rec *r);
int cairn_in_rec_sight(in_ctx *c, const in_rec *r);
int cairn_in_rec_angle(in_ctx *c, const in_rec *r);
int cairn_in_rec_azimuth(in_ctx *c, const in_rec *r);
int cairn_in_rec_rise(in_ctx *c, const in_rec *r);

/* Index of the instrument `id`, adding an undefined placeholder (set == 0,
 * src = where it was first named) when it is new; -1 out of memory. */
int cairn_in_inst_ref(in_ctx *c, const char *id, int line, int col);

/* Read the field book at `path` as a new file in the include chain:
 * `inc` is the including file's context (NULL for a top-level file) and
 * (line, col) the place of the include, where open errors are reported.
 * The file starts in units lu, au; `top` as in in_ctx. Returns 0 or -1. */
int cairn_in_fieldbook_load(cairn_net *net, cairn_error *err, const char *path, int depth,
                      int top, cairn_length_unit lu, cairn_angle_unit au,
                      const in_ctx *inc, int line, int col);
/* Parse an XML project; `me` is the file in the include chain (or NULL). */
int cairn_in_xml_parse(cairn_net *net, const char *name, const char *text, size_t len,
                 const in_open *me, cairn_error *err);

/* Parse field-book text with a prepared context. Returns 0 or -1. */
int cairn_in_fieldbook_text(in_ctx *c, const char *text, size_t len);

#endif
