/* Error values: a bounded, ordered list of located diagnostics. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/core.h"

/* Errors and warnings are capped separately, so the list never holds more
 * than this many entries. */
#define CAIRN_DIAG_CAP (2 * CAIRN_MAX_ERRORS)

const char *cairn_version(void)
{
    return CAIRN_VERSION_STRING;
}

int cairn_error_init(cairn_error *err)
{
    memset(err, 0, sizeof *err);
    err->diag = calloc(CAIRN_DIAG_CAP, sizeof *err->diag);
    return err->diag ? 0 : -1;
}

void cairn_error_clear(cairn_error *err)
{
    if (!err)
        return;
    free(err->diag);
    memset(err, 0, sizeof *err);
}

void cairn_error_reset(cairn_error *err)
{
    err->ndiag = 0;
    err->nerrors = 0;
    err->nwarnings = 0;
}

int cairn_error_vadd(cairn_error *err, cairn_severity sev, const char *file,
                     int line, int col, const char *fmt, va_list ap)
{
    int rc = sev == CAIRN_SEV_ERROR ? -1 : 0;
    int *count = sev == CAIRN_SEV_ERROR ? &err->nerrors : &err->nwarnings;

    if (*count >= CAIRN_MAX_ERRORS || !err->diag || err->ndiag >= CAIRN_DIAG_CAP) {
        (*count)++;
        return rc;
    }
    (*count)++;
    cairn_diag *d = &err->diag[err->ndiag++];
    d->severity = sev;
    d->line = line;
    d->col = col;
    snprintf(d->file, sizeof d->file, "%s", file ? file : "");
    vsnprintf(d->message, sizeof d->message, fmt, ap);
    return rc;
}

int cairn_error_add(cairn_error *err, cairn_severity sev, const char *file,
                    int line, int col, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int rc = cairn_error_vadd(err, sev, file, line, col, fmt, ap);
    va_end(ap);
    return rc;
}

int cairn_error_full(const cairn_error *err)
{
    return err->nerrors >= CAIRN_MAX_ERRORS;
}

size_t cairn_diag_format(const cairn_diag *d, char *buf, size_t n)
{
    const char *sev = d->severity == CAIRN_SEV_ERROR ? "error" : "warning";
    int len;
    if (d->file[0] && d->line > 0 && d->col > 0)
        len = snprintf(buf, n, "%s:%d:%d: %s: %s", d->file, d->line, d->col, sev,
                       d->message);
    else if (d->file[0] && d->line > 0)
        len = snprintf(buf, n, "%s:%d: %s: %s", d->file, d->line, sev, d->message);
    else if (d->file[0])
        len = snprintf(buf, n, "%s: %s: %s", d->file, sev, d->message);
    else
        len = snprintf(buf, n, "%s: %s", sev, d->message);
    if (len < 0)
        return 0;
    return (size_t)len < n ? (size_t)len : (n ? n - 1 : 0);
}
