/* cairn command-line front end: shared declarations of src/cli/. Only this
 * directory prints or exits. */
#ifndef CAIRN_CLI_H
#define CAIRN_CLI_H

#include <stdio.h>
#include "cairn/core.h"

/* One entry per subcommand. `run` returns the process exit status. */
typedef struct {
    const char *name;
    const char *summary;
    int (*run)(int argc, char **argv);
    void (*help)(FILE *out);
} cairn_cli_command;

/* Print every diagnostic of err GNU-style on stderr, then a count line
 * when some were not stored. */
void cairn_cli_print_diags(const cairn_error *err);

int cairn_cli_adjust(int argc, char **argv);
void cairn_cli_adjust_help(FILE *out);

int cairn_cli_check(int argc, char **argv);
void cairn_cli_check_help(FILE *out);

#endif
