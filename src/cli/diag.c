/* Printing diagnostics: GNU-style lines on stderr. */
#include <stdio.h>

#include "cli.h"

void cairn_cli_print_diags(const cairn_error *err)
{
    char line[CAIRN_PATH_MAX + CAIRN_MSG_MAX + 64];
    for (int i = 0; i < err->ndiag; i++) {
        cairn_diag_format(&err->diag[i], line, sizeof line);
        fprintf(stderr, "%s\n", line);
    }
    int shown_err = 0, shown_warn = 0;
    for (int i = 0; i < err->ndiag; i++) {
        if (err->diag[i].severity == CAIRN_SEV_ERROR) shown_err++;
        else shown_warn++;
    }
    if (err->nerrors > shown_err)
        fprintf(stderr, "cairn: %d more errors not shown (limit %d); stopped reading\n",
                err->nerrors - shown_err, CAIRN_MAX_ERRORS);
    if (err->nwarnings > shown_warn)
        fprintf(stderr, "cairn: %d more warnings not shown\n", err->nwarnings - shown_warn);
}
